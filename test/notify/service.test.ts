// The notification service end to end with real receivers on loopback: escalation by e-mail on a
// simulated core clock, Web Push to each subscribed browser, a restart with undelivered entries
// (each delivered exactly once), and no secret in any log line, error text, health or the file.
import { createHash } from "node:crypto";
import { existsSync, readFileSync } from "node:fs";
import net from "node:net";
import { join } from "node:path";
import { Aedes } from "aedes";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import type { MillwardenConfig } from "../../src/config/schema.js";
import type { AdvisoryView } from "../../src/core/types.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { NotifyService, seededRandom, type NotifyServiceOptions } from "../../src/notify/service.js";
import { Historian } from "../../src/store/historian.js";
import { SITE_AND_SOURCE } from "../config/helpers.js";
import { tempDir } from "../store/helpers.js";
import { tr } from "./helpers.js";
import { browserKeys, decryptAes128gcm, parseMail, startPushService, startSmtp, startWebhookReceiver, TEST_CERT_FILE } from "./receivers.js";

const T0 = Date.UTC(2026, 0, 6, 9); // Tuesday 10:00 CET: Anna primary, Jonas secondary, Mira supervisor
const S = 1000;

const PLANT = `${SITE_AND_SOURCE}signals:
  - { id: vm2.o2, name: Mill outlet O2, tag: VM2-AT-113, source: m, topic: t/o2, unit: pctVol, expectedPeriodS: 1 }
units:
  - { id: vm2, name: Vertical roller mill 2, kind: mill }
rules:
  - { id: o2-high-vm2, title: O2 high at the mill outlet, unit: vm2, quantity: vm2.o2, direction: high, tiers: { caution: 9, warning: 10 }, cause: c, consequence: c, check: c, origin: demo value }
`;

function config(channels: string, extra = ""): MillwardenConfig {
  const text = `${PLANT}notifications:
  timeZone: Europe/Berlin
  linkBase: https://millwarden.tarnholm.example
  channels:
${channels}
  people:
    - { id: anna, name: Anna Berg, contacts: [{ channel: mail, address: anna.berg@tarnholm.example }, { channel: push }] }
    - { id: jonas, name: Jonas Lind, contacts: [{ channel: mail, address: jonas.lind@tarnholm.example }] }
    - { id: mira, name: Mira Holt, contacts: [{ channel: mail, address: mira.holt@tarnholm.example }] }
  rosters:
    - { id: process, rotation: { startsAt: "2026-01-05T07:00", weeks: [{ primary: anna, secondary: jonas }] }, supervisor: mira }
  routes:
    - { tiers: [caution, warning], roster: process, channels: [hook] }
  escalation: { afterS: 600 }
  reminders: { everyS: 1800, max: 2 }
  delivery: { maxAttempts: 5, backoffBaseS: 5, backoffMaxS: 60, giveUpAfterS: 86400 }
${extra}`;
  return parseConfig(text, "plant.yaml");
}

const channelsFor = (o: { smtpPort: number; hookUrl: string; smtpLogin?: boolean; mqttUrl?: string }) => `    - { id: mail, kind: email, host: 127.0.0.1, port: ${o.smtpPort}, tls: ${o.smtpLogin ? "starttls" : "none"}, ${o.smtpLogin ? `caFile: "${TEST_CERT_FILE}", username: millwarden, passwordEnv: MW_SMTP_PASSWORD, ` : ""}from: "millwarden <millwarden@tarnholm.example>", timeoutS: 5 }
    - { id: hook, kind: webhook, url: "${o.hookUrl}", secretEnv: MW_HOOK_KEY, timeoutS: 3 }
    - { id: push, kind: webpush, subject: "mailto:ops@tarnholm.example" }${o.mqttUrl ? `\n    - { id: broker, kind: mqtt, url: "${o.mqttUrl}", topic: tarnholm/cg2/millwarden/notifications, username: notifier, passwordEnv: MW_MQTT_PASSWORD, timeoutS: 1 }` : ""}`;

const SECRETS = { MW_SMTP_PASSWORD: "smtp-secret-Q7v3pLx9", MW_HOOK_KEY: "hook-secret-Zr81mWq2", MW_MQTT_PASSWORD: "mqtt-secret-Hn4kTe6u" };

describe("NotifyService", () => {
  let dir: string;
  let cleanup: () => void;
  let historian: Historian;
  let wall: number;
  const services: NotifyService[] = [];
  beforeEach(() => {
    ({ dir, cleanup } = tempDir());
    historian = Historian.open({ path: join(dir, "millwarden.db") });
    wall = Date.UTC(2026, 0, 6, 9, 0, 5);
  });
  afterEach(async () => {
    for (const s of services.splice(0)) await s.stop().catch(() => undefined);
    historian.close();
    cleanup();
  });

  function service(cfg: MillwardenConfig, o: Partial<NotifyServiceOptions> = {}) {
    const log = memoryLogger();
    const views: AdvisoryView[] = [];
    const s = NotifyService.create({ config: cfg, historianPath: historian.path, log, now: () => wall, advisories: () => views, env: SECRETS, random: seededRandom(3), ...o });
    services.push(s);
    return { s, log, views };
  }

  it("escalation by e-mail on the simulated core clock: the primary at once, the secondary after 10 min, then the supervisor", async () => {
    const smtp = await startSmtp();
    const hook = await startWebhookReceiver(SECRETS.MW_HOOK_KEY);
    try {
      const { s } = service(config(channelsFor({ smtpPort: smtp.port, hookUrl: hook.url })));
      s.record([tr("o2-high-vm2", "raise", T0, { tier: "warning", value: 10.4, limit: 10 })], T0);
      await s.deliverNow();
      expect(smtp.mails.map((m) => m.to)).toEqual([["anna.berg@tarnholm.example"]]);
      const first = parseMail(smtp.mails[0]!.raw);
      expect(first.headers.subject).toBe("[millwarden] WARNING vm2 O2 high at the mill outlet (advisory only)");
      expect(first.body).toContain("Value:      10.4 % vol");
      expect(first.body).toContain("Limit:      10.0 % vol (warning, high limit)");
      expect(first.body).toContain("Time:       2026-01-06 09:00:00 UTC / 2026-01-06 10:00:00 CET (Europe/Berlin)");
      expect(hook.received.map((h) => h.verified)).toEqual([true]);

      s.tick(T0 + 599 * S);
      await s.deliverNow();
      expect(smtp.mails).toHaveLength(1);
      s.tick(T0 + 600 * S);
      await s.deliverNow();
      expect(smtp.mails.map((m) => m.to[0])).toEqual(["anna.berg@tarnholm.example", "jonas.lind@tarnholm.example"]);
      expect(parseMail(smtp.mails[1]!.raw).headers.subject).toBe("[millwarden] ESCALATED WARNING vm2 O2 high at the mill outlet: not acknowledged after 10 min (advisory only)");
      s.tick(T0 + 1200 * S);
      await s.deliverNow();
      expect(smtp.mails.at(-1)!.to).toEqual(["mira.holt@tarnholm.example"]);
      // Mira acknowledges: Anna and Jonas stand down, and so does the webhook.
      s.record([tr("o2-high-vm2", "ack", T0 + 1300 * S, { tier: "warning", by: "mira" })], T0 + 1300 * S);
      await s.deliverNow();
      expect(smtp.mails.slice(3).map((m) => m.to[0]).sort()).toEqual(["anna.berg@tarnholm.example", "jonas.lind@tarnholm.example"]);
      expect(parseMail(smtp.mails[3]!.raw).headers.subject).toContain("STAND DOWN");
      expect(s.health().channels.find((c) => c.id === "mail")).toMatchObject({ state: "ok", pending: 0, dead: 0 });
    } finally {
      await smtp.close();
      await hook.close();
    }
  });

  it("Web Push: one entry per subscribed browser, each payload readable with its own keys; a gone subscription is removed", async () => {
    const push = await startPushService();
    const smtp = await startSmtp();
    const hook = await startWebhookReceiver(SECRETS.MW_HOOK_KEY);
    try {
      const { s } = service(config(channelsFor({ smtpPort: smtp.port, hookUrl: hook.url })), { webPushAgent: push.agent });
      const phone = browserKeys();
      const laptop = browserKeys();
      s.outbox.addSubscription({ endpoint: `${push.origin}/p/phone`, personId: "anna", p256dh: phone.p256dh, auth: phone.auth, createdAtMs: wall });
      s.outbox.addSubscription({ endpoint: `${push.origin}/p/laptop`, personId: "anna", p256dh: laptop.p256dh, auth: laptop.auth, createdAtMs: wall });
      s.record([tr("o2-high-vm2", "raise", T0, { tier: "warning", value: 10.4, limit: 10 })], T0);
      await s.deliverNow();
      expect(push.requests.map((r) => r.path).sort()).toEqual(["/p/laptop", "/p/phone"]);
      for (const [path, keys] of [
        ["/p/phone", phone],
        ["/p/laptop", laptop],
      ] as const) {
        const req = push.requests.find((r) => r.path === path)!;
        const payload = JSON.parse(decryptAes128gcm(req.body, keys.privateKey, Buffer.from(keys.auth, "base64url")).toString("utf8")) as { title: string };
        expect(payload.title).toBe("[millwarden] WARNING vm2 O2 high at the mill outlet (advisory only)");
      }
      expect(s.vapidPublicKey).toBe(JSON.parse(readFileSync(join(dir, "vapid.json"), "utf8")).publicKey);
      // The laptop's subscription expired at the push service.
      push.setStatus(410);
      s.tick(T0 + 1800 * S);
      await s.deliverNow();
      expect(s.outbox.subscriptionsOf("anna")).toEqual([]);
      expect(s.outbox.entries({ channel: "push", state: "dead" })).toHaveLength(2);
    } finally {
      await push.close();
      await smtp.close();
      await hook.close();
    }
  });

  it("a restart with undelivered entries delivers each exactly once, and the same events handed in again add nothing", async () => {
    const smtp = await startSmtp();
    // The webhook receiver is down at first: its port is taken and released.
    const port = await new Promise<number>((ok) => {
      const srv = net.createServer().listen(0, "127.0.0.1", () => {
        const p = (srv.address() as net.AddressInfo).port;
        srv.close(() => ok(p));
      });
    });
    const cfg = config(channelsFor({ smtpPort: smtp.port, hookUrl: `http://127.0.0.1:${port}/millwarden` }));
    const raise = tr("o2-high-vm2", "raise", T0, { tier: "warning" });
    const caution = tr("o2-high-vm2", "de-escalate", T0 + 60 * S, { tier: "caution" });
    const first = service(cfg);
    first.s.record([raise], T0);
    first.s.tick(T0 + 30 * S);
    first.s.record([caution, tr("o2-high-vm2", "escalate", T0 + 90 * S, { tier: "warning" })], T0 + 90 * S);
    await first.s.deliverNow();
    const waiting = first.s.outbox.entries({ channel: "hook" });
    expect(waiting.map((e) => e.state)).toEqual(["failed", "failed"]);
    expect(first.s.health().channels.find((c) => c.id === "hook")).toMatchObject({ state: "failing", pending: 2 });
    await first.s.stop();

    // Now the receiver is up, on the same port.
    const hook = await startWebhookReceiver(SECRETS.MW_HOOK_KEY, { port });
    try {
      wall += 3600 * S; // well past every backoff
      const second = service(cfg);
      // A replay of the same events (say the core re-emitted them): deduplicated.
      second.s.record([raise], T0);
      await second.s.deliverNow();
      const got = () => hook.received.map((h) => String(h.headers["x-millwarden-delivery"]));
      expect(hook.received.every((h) => h.verified)).toBe(true);
      expect(got().sort()).toEqual(waiting.map((e) => shortId(e.dedupKey)).sort());
      await second.s.deliverNow();
      await second.s.stop();
      const third = service(cfg);
      await third.s.deliverNow();
      expect(got()).toHaveLength(2);
      expect(third.s.outbox.entries().every((e) => e.state === "sent" || e.channel === "push")).toBe(true);
      // The e-mail went once too, in the first run.
      expect(smtp.mails.map((m) => m.to[0])).toEqual(["anna.berg@tarnholm.example", "anna.berg@tarnholm.example"]);
    } finally {
      await hook.close();
      await smtp.close();
    }
  });

  it("no secret (SMTP password, webhook key, MQTT password, VAPID private key) in a log line, an error text, health or the database file", async () => {
    // An SMTP server that echoes the password it was given in its refusal: the text must be redacted.
    const smtp = await startSmtp({ tls: true, login: { user: "millwarden", pass: "something-else" }, authFailureText: (a) => `no, "${a.password}" is wrong` });
    const push = await startPushService();
    push.setStatus(400);
    const broker = await Aedes.createBroker({ authenticate: (_c, _u, _p, done) => done(Object.assign(new Error("bad"), { returnCode: 4 }), false) });
    const mqttServer = net.createServer(broker.handle);
    await new Promise<void>((ok) => mqttServer.listen(0, "127.0.0.1", () => ok()));
    const mqttUrl = `mqtt://127.0.0.1:${(mqttServer.address() as net.AddressInfo).port}`;
    const hookPort = await new Promise<number>((ok) => {
      const srv = net.createServer().listen(0, "127.0.0.1", () => {
        const p = (srv.address() as net.AddressInfo).port;
        srv.close(() => ok(p));
      });
    });
    try {
      const cfg = config(channelsFor({ smtpPort: smtp.port, smtpLogin: true, hookUrl: `http://127.0.0.1:${hookPort}/h?token=${SECRETS.MW_HOOK_KEY}`, mqttUrl }), "");
      const withBroker = { ...cfg, notifications: { ...cfg.notifications!, routes: [{ ...cfg.notifications!.routes[0]!, channels: ["hook", "broker"] }] } };
      const { s, log } = service(withBroker, { webPushAgent: push.agent });
      const keys = browserKeys();
      s.outbox.addSubscription({ endpoint: `${push.origin}/p/phone`, personId: "anna", p256dh: keys.p256dh, auth: keys.auth, createdAtMs: wall });
      s.record([tr("o2-high-vm2", "raise", T0, { tier: "warning" })], T0);
      await s.deliverNow();
      const vapidPrivate = (JSON.parse(readFileSync(join(dir, "vapid.json"), "utf8")) as { privateKey: string }).privateKey;
      const secrets = [...Object.values(SECRETS), vapidPrivate];
      const errors = [...s.outbox.entries().map((e) => e.lastError ?? ""), ...s.outbox.deliveries().map((d) => d.error ?? "")];
      // Every channel failed, so there is something to look at; the echoing server's text was redacted.
      expect(s.outbox.entries().every((e) => e.state === "failed" || e.state === "dead")).toBe(true);
      expect(errors.some((e) => e.includes('no, "[redacted]" is wrong'))).toBe(true);
      const places = {
        log: log.lines.join("\n"),
        errors: errors.join("\n"),
        health: JSON.stringify(s.health()),
        bodies: JSON.stringify(s.outbox.entries()),
      };
      await s.stop();
      historian.close();
      const file = [join(dir, "millwarden.db"), join(dir, "millwarden.db-wal")].filter(existsSync).map((f) => readFileSync(f).toString("latin1")).join("");
      for (const secret of secrets) {
        for (const form of [secret, Buffer.from(secret).toString("base64")]) {
          for (const [where, text] of Object.entries({ ...places, file })) expect(text.includes(form), `${where} holds a secret`).toBe(false);
        }
      }
      historian = Historian.open({ path: join(dir, "millwarden.db") });
    } finally {
      await smtp.close();
      await push.close();
      await new Promise<void>((ok) => broker.close(() => mqttServer.close(() => ok())));
    }
  });

  it("a receiver that hangs holds back only its own channel: the webhook delivers while the e-mail waits for its timeout", async () => {
    // An SMTP "server" that accepts the connection and never greets.
    const hanging = net.createServer(() => undefined);
    await new Promise<void>((ok) => hanging.listen(0, "127.0.0.1", () => ok()));
    const hook = await startWebhookReceiver(SECRETS.MW_HOOK_KEY);
    try {
      const port = (hanging.address() as net.AddressInfo).port;
      const cfg = config(channelsFor({ smtpPort: port, hookUrl: hook.url }).replace("timeoutS: 5", "timeoutS: 2"));
      const { s } = service(cfg);
      s.record([tr("o2-high-vm2", "raise", T0, { tier: "warning" })], T0);
      const t0 = Date.now();
      while (hook.received.length === 0 && Date.now() - t0 < 1500) await new Promise((r) => setTimeout(r, 20));
      expect(hook.received).toHaveLength(1);
      expect(s.outbox.entries({ channel: "mail" })[0]!.state).toBe("pending");
      await s.deliverNow();
      expect(s.outbox.entries({ channel: "mail" })[0]).toMatchObject({ state: "failed", attempts: 1 });
    } finally {
      await hook.close();
      await new Promise<void>((ok) => hanging.close(() => ok()));
    }
  });

  it("refuses a config whose routes name a unit that does not exist, saying where", () => {
    const cfg = config(channelsFor({ smtpPort: 2525, hookUrl: "http://127.0.0.1:9/h" }));
    const bad = { ...cfg, notifications: { ...cfg.notifications!, routes: [{ ...cfg.notifications!.routes[0]!, units: ["vm9"] }] } };
    expect(() => service(bad)).toThrow('notifications config: notifications.routes[0].units[0]: unknown unit "vm9": expected one of vm2');
  });

  it("a channel whose secret is not in the environment shows as failing with the reason; its messages wait", async () => {
    const smtp = await startSmtp();
    try {
      const cfg = config(channelsFor({ smtpPort: smtp.port, hookUrl: "http://127.0.0.1:9/h" }));
      const { s, log } = service(cfg, { env: {} });
      expect(log.lines.some((l) => l.startsWith('warn notifications: channel "hook" (webhook) cannot be used: notification channel "hook": environment variable MW_HOOK_KEY (secretEnv) is not set'))).toBe(true);
      expect(s.health().channels.find((c) => c.id === "hook")).toMatchObject({ state: "failing", lastError: expect.stringContaining("MW_HOOK_KEY") });
      s.record([tr("o2-high-vm2", "raise", T0, { tier: "warning" })], T0);
      await s.deliverNow();
      expect(s.outbox.entries({ channel: "hook" })[0]).toMatchObject({ state: "failed", attempts: 1 });
      expect(smtp.mails).toHaveLength(1);
    } finally {
      await smtp.close();
    }
  });
});

/** The webhook's X-Millwarden-Delivery: the first 32 hex digits of SHA-256 of the dedup key. */
function shortId(dedupKey: string): string {
  return createHash("sha256").update(dedupKey).digest("hex").slice(0, 32);
}
