// The notification routes through inject(): acknowledge by link (PIN or password, no session),
// single use, expiry, lockout per link and per user, the audit entry with source "link" and the
// channel; Web Push sign-up with session and CSRF; the delivery log; the service worker and the
// manifest. A real NotifyService (in-memory outbox) behind FakeDeps' real advisory board.
// Invented people of Tarnholm Works, line 2; every password and PIN here is invented.
import { Writable } from "node:stream";
import type { FastifyInstance } from "fastify";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { NotifyService, seededRandom } from "../../src/notify/service.js";
import { buildApp, type BuildAppOptions } from "../../src/server/app.js";
import type { NotifyPort } from "../../src/server/deps.js";
import { hashPassword } from "../../src/server/passwords.js";
import { SITE_AND_SOURCE } from "../config/helpers.js";
import { tempDir } from "../store/helpers.js";
import { tr } from "../notify/helpers.js";
import { FakeDeps, TEST_SCRYPT } from "./fake-deps.js";

const ADVISORY = "co-rise-bf2-outlet"; // unacknowledged warning on the fake board
const PIN = "246813";
const PASSWORD = "pw-anna-Tarnholm-2026!";
const T0 = Date.UTC(2026, 0, 6, 9);

const CONFIG = `${SITE_AND_SOURCE}signals:
  - { id: bf2.co, name: Filter outlet CO, tag: BF2-AT-301, source: m, topic: t/co, unit: ppm, expectedPeriodS: 1 }
units:
  - { id: bf2, name: Bag filter 2, kind: bag-filter }
rules:
  - { id: ${ADVISORY}, title: CO far above baseline at filter outlet, unit: bf2, quantity: bf2.co, direction: high, tiers: { caution: 75, warning: 300 }, cause: c, consequence: c, check: c, origin: demo value }
notifications:
  timeZone: Europe/Berlin
  linkBase: https://millwarden.tarnholm.example
  channels:
    - { id: hook, kind: webhook, url: "http://127.0.0.1:9/hook", secretEnv: MW_HOOK_KEY, timeoutS: 1 }
    - { id: push, kind: webpush, subject: "mailto:ops@tarnholm.example" }
  people:
    - { id: anna, name: Anna Berg, contacts: [{ channel: hook }, { channel: push }] }
    - { id: jonas, name: Jonas Lind, contacts: [{ channel: hook }] }
  rosters:
    - { id: process, rotation: { startsAt: "2026-01-05T07:00", weeks: [{ primary: anna, secondary: jonas }] } }
  routes:
    - { tiers: [caution, warning], roster: process, channels: [hook] }
  escalation: { afterS: 600 }
`;

let app: FastifyInstance;
let deps: FakeDeps;
let service: NotifyService;
let nowMs: number;
let wall: number;
let logged: string[];
let cleanup: () => void;

async function setup(opts: BuildAppOptions = {}): Promise<void> {
  const t = tempDir();
  cleanup = t.cleanup;
  deps = new FakeDeps();
  await deps.addUser("anna", "operator", PASSWORD);
  await deps.addUser("v.viewer", "viewer", "pw-viewer-Tarnholm-2026!");
  await deps.addUser("a.engineer", "engineer", "pw-engineer-Tarnholm-2026!");
  deps.accounts.setPinHash("anna", await hashPassword(PIN, TEST_SCRYPT), T0);
  wall = T0 + 5000;
  nowMs = T0 + 5000;
  service = NotifyService.create({
    config: parseConfig(CONFIG, "plant.yaml"),
    historianPath: ":memory:",
    baseDir: t.dir,
    log: memoryLogger(),
    now: () => wall,
    advisories: () => [],
    env: { MW_HOOK_KEY: "hook-secret-Zr81mWq2" },
    random: seededRandom(5),
  });
  const s = service;
  const port: NotifyPort = {
    inspectAckLink: (token) => s.inspectAckLink(token),
    useAckLink: (token, by) => s.useAckLink(token, by),
    acknowledged: (advisoryId, by) => s.acknowledge({ advisoryId, by, atMs: wall }),
    pinHash: (user) => deps.accounts.findPinHash(user),
    deliveries: (limit) => s.deliveries(limit),
    vapidPublicKey: () => s.vapidPublicKey,
    personOf: (user) => s.personOf(user),
    subscribe: (personId, sub) => s.subscribe(personId, sub),
    unsubscribe: (personId, endpoint) => s.unsubscribe(personId, endpoint),
  };
  const appDeps = Object.assign(deps, { notify: port });
  logged = [];
  const stream = new Writable({
    write(chunk: Buffer, _enc, done) {
      logged.push(chunk.toString());
      done();
    },
  });
  app = await buildApp(appDeps, {
    logger: { level: "debug", stream },
    ...opts,
    auth: { now: () => nowMs, dummyScrypt: TEST_SCRYPT, ...opts.auth },
    notify: { dummyScrypt: TEST_SCRYPT, ...opts.notify },
  });
  service.record([tr(ADVISORY, "raise", T0, { tier: "warning", value: 412, limit: 300 })], T0);
}

afterEach(async () => {
  await app?.close();
  await service?.stop();
  cleanup?.();
});

/** The links of the raise: Anna's (hook, person) and the channel's own. */
function links(): { anna: string; channel: string } {
  const entries = service.outbox.entries({ channel: "hook" });
  const of = (pred: (k: string) => boolean) => {
    const e = entries.find((x) => pred(x.recipientKey))!;
    return /#t=(\S+)$/.exec(service.ackLinkOf(e)!)![1]!;
  };
  return { anna: of((k) => k.includes("anna")), channel: of((k) => !k.includes("anna") && !k.includes("jonas")) };
}

const post = (body: unknown, contentType = "application/json") =>
  app.inject({ method: "POST", url: "/api/ack-link", headers: { "content-type": contentType }, payload: typeof body === "string" ? body : JSON.stringify(body) });

async function login(user: string, password: string): Promise<{ cookie: string; csrf: string }> {
  const r = await app.inject({ method: "POST", url: "/api/login", payload: { user, password } });
  expect(r.statusCode).toBe(200);
  const c = r.cookies.find((x) => x.name === "millwarden_session")!;
  return { cookie: `millwarden_session=${c.value}`, csrf: (r.json() as { csrfToken: string }).csrfToken };
}

describe("acknowledge by link", () => {
  beforeEach(async () => setup());

  it("GET shows the advisory without changing anything; a bad or missing token is refused", async () => {
    const { anna } = links();
    const r = await app.inject({ method: "GET", url: "/api/ack-link", headers: { "x-ack-token": anna } });
    expect(r.statusCode).toBe(200);
    expect(r.json()).toMatchObject({ advisoryId: ADVISORY, channel: "hook", channelKind: "webhook", advisory: { id: ADVISORY, state: "unack", tier: "warning" } });
    expect(r.headers["cache-control"]).toBe("no-store");
    expect(deps.calls.command).toEqual([]);
    expect((await app.inject({ method: "GET", url: "/api/ack-link" })).json()).toMatchObject({ error: "BAD_REQUEST" });
    const forged = `${anna.slice(0, -2)}${anna.endsWith("AA") ? "BB" : "AA"}`;
    const bad = await app.inject({ method: "GET", url: "/api/ack-link", headers: { "x-ack-token": forged } });
    expect(bad.statusCode).toBe(404);
    expect(bad.json()).toMatchObject({ error: "ACK_LINK_INVALID" });
  });

  it("a PIN acknowledges without a session: the board acknowledges, the escalation stops, the audit says link and channel; the link works once", async () => {
    const { anna } = links();
    expect(service.notifier.activeEpisodes()).toHaveLength(1);
    const r = await post({ token: anna, user: "anna", secret: PIN });
    expect(r.statusCode).toBe(200);
    expect(r.json()).toMatchObject({ acknowledged: true, by: "anna", advisory: { id: ADVISORY, state: "ack" } });
    expect(deps.calls.command).toEqual([{ id: ADVISORY, kind: "ack", body: { by: "anna", role: "operator", note: 'acknowledged from a notification (webhook "hook")' } }]);
    expect(service.notifier.activeEpisodes()).toHaveLength(0);
    const entry = deps.accounts.auditLog(5).find((e) => e.action === "advisory.ack")!;
    expect(entry).toMatchObject({ actor: "anna", target: ADVISORY, source: "link", detail: { channel: "hook", channelKind: "webhook", outcome: "ok", role: "operator" } });

    const again = await post({ token: anna, user: "anna", secret: PIN });
    expect(again.statusCode).toBe(409);
    expect(again.json()).toMatchObject({ error: "ACK_LINK_USED" });
    expect((again.json() as { message: string }).message).toMatch(/used already, by anna at .*; each link works once/);
    // Neither the token nor the PIN reached the log or the audit trail.
    const sig = anna.split(".")[2]!;
    const everything = logged.join("") + JSON.stringify(deps.accounts.auditLog(100));
    expect(everything).not.toContain(sig);
    expect(everything).not.toContain(PIN);
  });

  it("the password works too; a viewer is refused (403) and the link stays usable", async () => {
    const { anna, channel } = links();
    const viewer = await post({ token: channel, user: "v.viewer", secret: "pw-viewer-Tarnholm-2026!" });
    expect(viewer.statusCode).toBe(403);
    expect(viewer.json()).toMatchObject({ error: "FORBIDDEN" });
    expect(service.inspectAckLink(channel).ok).toBe(true);
    const r = await post({ token: anna, user: "anna", secret: PASSWORD });
    expect(r.json()).toMatchObject({ acknowledged: true });
    // The other link of the same advisory, used after: it was not used before, the board says acknowledged already.
    const late = await post({ token: channel, user: "anna", secret: PIN });
    expect(late.statusCode).toBe(200);
    expect(late.json()).toMatchObject({ acknowledged: false });
  });

  it("only JSON (a form post from another site is not accepted), and no unknown fields", async () => {
    const { anna } = links();
    expect((await post(`token=${anna}&user=anna&secret=${PIN}`, "application/x-www-form-urlencoded")).statusCode).toBe(415);
    expect((await post({ token: anna, user: "anna", secret: PIN, by: "mira" })).json()).toMatchObject({ error: "BAD_BODY" });
    expect(service.inspectAckLink(anna).ok).toBe(true);
  });

  it("an expired link answers 410", async () => {
    const { anna } = links();
    // The link lives 12 h from the entry's creation (T0 + 5 s, the box's clock).
    wall = T0 + 5000 + 12 * 3600_000;
    const r = await post({ token: anna, user: "anna", secret: PIN });
    expect(r.statusCode).toBe(410);
    expect(r.json()).toMatchObject({ error: "ACK_LINK_EXPIRED" });
  });

  it("five wrong PINs lock the link for 15 min, even for the right PIN; then it works", async () => {
    const { anna } = links();
    for (let i = 0; i < 5; i++) expect((await post({ token: anna, user: "anna", secret: `00000${i}` })).json()).toMatchObject({ error: "ACK_LINK_REFUSED" });
    const locked = await post({ token: anna, user: "anna", secret: PIN });
    expect(locked.statusCode).toBe(429);
    expect(locked.headers["retry-after"]).toBe("900");
    expect(deps.accounts.auditLog(20).map((e) => e.action)).toContain("advisory.ack-link-locked");
    nowMs += 15 * 60_000;
    expect((await post({ token: anna, user: "anna", secret: PIN })).json()).toMatchObject({ acknowledged: true });
  });
});

describe("lockout per user across links", () => {
  beforeEach(async () => setup({ notify: { lockout: { userFailures: 3, addressFailures: 10 } } }));

  it("wrong PINs on two links add up for the user", async () => {
    const { anna, channel } = links();
    await post({ token: anna, user: "anna", secret: "111111" });
    await post({ token: channel, user: "anna", secret: "222222" });
    await post({ token: anna, user: "anna", secret: "333333" });
    const r = await post({ token: channel, user: "anna", secret: PIN });
    expect(r.statusCode).toBe(429);
    expect(r.json()).toMatchObject({ error: "ACK_LINK_LOCKED" });
  });
});

describe("Web Push sign-up and the delivery log", () => {
  beforeEach(async () => setup());
  const SUB = { endpoint: "https://push.tarnholm.example/p/anna-phone", keys: { p256dh: "BPhone-p256dh-invented", auth: "auth-invented" } };

  it("GET /api/push/key gives the VAPID public key", async () => {
    const r = await app.inject({ method: "GET", url: "/api/push/key" });
    expect(r.json()).toEqual({ publicKey: service.vapidPublicKey });
  });

  it("subscribe needs a session (401) and its CSRF token (403); an account maps to the person of the same name", async () => {
    expect((await app.inject({ method: "POST", url: "/api/push/subscribe", payload: SUB })).statusCode).toBe(401);
    const s = await login("anna", PASSWORD);
    expect((await app.inject({ method: "POST", url: "/api/push/subscribe", headers: { cookie: s.cookie }, payload: SUB })).statusCode).toBe(403);
    const ok = await app.inject({ method: "POST", url: "/api/push/subscribe", headers: { cookie: s.cookie, "x-csrf-token": s.csrf }, payload: SUB });
    expect(ok.json()).toEqual({ subscribed: true, person: "anna" });
    expect(service.outbox.subscriptionsOf("anna").map((x) => x.endpoint)).toEqual([SUB.endpoint]);

    const v = await login("v.viewer", "pw-viewer-Tarnholm-2026!");
    const nobody = await app.inject({ method: "POST", url: "/api/push/subscribe", headers: { cookie: v.cookie, "x-csrf-token": v.csrf }, payload: SUB });
    expect(nobody.statusCode).toBe(409);
    expect(nobody.json()).toMatchObject({ error: "PUSH_NO_PERSON" });

    expect((await app.inject({ method: "DELETE", url: "/api/push/subscribe", headers: { cookie: s.cookie }, payload: { endpoint: SUB.endpoint } })).statusCode).toBe(403);
    const del = await app.inject({ method: "DELETE", url: "/api/push/subscribe", headers: { cookie: s.cookie, "x-csrf-token": s.csrf }, payload: { endpoint: SUB.endpoint } });
    expect(del.json()).toEqual({ removed: true });
    expect(service.outbox.subscriptionsOf("anna")).toEqual([]);
  });

  it("the delivery log is for engineers and admins", async () => {
    await service.deliverNow();
    const op = await login("anna", PASSWORD);
    expect((await app.inject({ method: "GET", url: "/api/notifications/deliveries", headers: { cookie: op.cookie } })).statusCode).toBe(403);
    const eng = await login("a.engineer", "pw-engineer-Tarnholm-2026!");
    const r = await app.inject({ method: "GET", url: "/api/notifications/deliveries?limit=5", headers: { cookie: eng.cookie } });
    expect(r.statusCode).toBe(200);
    const rows = (r.json() as { deliveries: { channel: string; outcome: string; advisoryId: string }[] }).deliveries;
    expect(rows.length).toBeGreaterThan(0);
    expect(rows[0]).toMatchObject({ channel: "hook", outcome: "retry", advisoryId: ADVISORY });
  });

  it("the service worker and the manifest are served with their types, the worker at the root (scope /)", async () => {
    const sw = await app.inject({ method: "GET", url: "/sw.js" });
    expect(sw.statusCode).toBe(200);
    expect(sw.headers["content-type"]).toMatch(/^(application|text)\/javascript/);
    // At the root, its default scope is / already: no Service-Worker-Allowed header is needed.
    expect(sw.headers["service-worker-allowed"]).toBeUndefined();
    const m = await app.inject({ method: "GET", url: "/manifest.webmanifest" });
    expect(m.statusCode).toBe(200);
    expect(m.headers["content-type"]).toMatch(/^application\/manifest\+json/);
    expect(m.json()).toMatchObject({ name: expect.stringContaining("millwarden"), start_url: "/", icons: expect.any(Array) });
  });
});
