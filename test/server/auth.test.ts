// Logins, sessions, CSRF, roles, the audit log and the security headers, through inject().
// Invented people of Tarnholm Works, line 2; every password here is invented for the test.
import { Writable } from "node:stream";
import type { FastifyInstance } from "fastify";
import { afterEach, describe, expect, it } from "vitest";
import WebSocket from "ws";
import { buildApp, type BuildAppOptions } from "../../src/server/app.js";
import { SESSION_TTL_MS } from "../../src/server/auth.js";
import { API_ERRORS } from "../../src/server/errors.js";
import { startServer } from "../../src/server/listen.js";
import { hashPassword } from "../../src/server/passwords.js";
import type { AccountRole } from "../../src/store/accounts.js";
import { FakeDeps, TEST_SCRYPT } from "./fake-deps.js";

const MIN = 60_000;
const USERS: [string, AccountRole][] = [
  ["v.viewer", "viewer"],
  ["a.operator", "operator"],
  ["a.engineer", "engineer"],
  ["s.admin", "admin"],
];
/** Each person's own invented password: none may turn up in an answer, a log line or the audit log. */
const passwordOf = (user: string): string => `pw-${user}-Tarnholm-2024!`;

interface Login {
  cookie: string;
  csrf: string;
}

let app: FastifyInstance;
let deps: FakeDeps;
let nowMs: number;
/** Everything the server logged (fastify's pino, at debug level). */
let logged: string[];

async function setup(opts: BuildAppOptions = {}): Promise<void> {
  deps = new FakeDeps();
  for (const [name, role] of USERS) await deps.addUser(name, role, passwordOf(name));
  nowMs = Date.UTC(2024, 10, 14, 5, 0, 0);
  logged = [];
  const stream = new Writable({
    write(chunk: Buffer, _enc, done) {
      logged.push(chunk.toString());
      done();
    },
  });
  app = await buildApp(deps, {
    logger: { level: "debug", stream },
    ...opts,
    auth: { now: () => nowMs, dummyScrypt: TEST_SCRYPT, ...opts.auth },
  });
}

afterEach(async () => {
  await app?.close();
});

function loginRequest(user: string, password: string, remoteAddress = "127.0.0.1") {
  return app.inject({ method: "POST", url: "/api/login", payload: { user, password }, remoteAddress });
}

async function login(user: string): Promise<Login> {
  const res = await loginRequest(user, passwordOf(user));
  expect(res.statusCode).toBe(200);
  const c = res.cookies.find((x) => x.name === "millwarden_session")!;
  return { cookie: `millwarden_session=${c.value}`, csrf: res.json().csrfToken };
}

function expectError(res: { statusCode: number; json(): unknown }, code: keyof typeof API_ERRORS): string {
  const body = res.json() as { error: string; message: string };
  expect(body.error).toBe(code);
  expect(res.statusCode).toBe(API_ERRORS[code].status);
  return body.message;
}

/** Every state-changing route, with a body it accepts from an engineer. */
const STATE_CHANGING: [string, string, object][] = [
  ["POST", "/api/logout", {}],
  ["POST", "/api/advisories/co-rate-bf2-outlet/ack", {}],
  ["POST", "/api/advisories/co-peak-vm2-outlet/reset", {}],
  ["POST", "/api/advisories/co-rate-bf2-outlet/shelve", { reason: "analyser purge", durationS: 900 }],
  ["POST", "/api/advisories/o2-time-vm2/unshelve", {}],
  ["POST", "/api/advisories/co-rate-bf2-outlet/out-of-service", { reason: "analyser replaced" }],
  ["POST", "/api/advisories/dew-margin-bf2-hopper/return-to-service", {}],
];

describe("POST /api/login", () => {
  it("opens a session: the cookie is HttpOnly, SameSite=Strict, path /, with an expiry; the answer has user, role and CSRF token", async () => {
    await setup();
    const res = await loginRequest("a.operator", passwordOf("a.operator"));
    expect(res.statusCode).toBe(200);
    const body = res.json();
    expect(body).toEqual({ user: "a.operator", role: "operator", csrfToken: expect.stringMatching(/^[A-Za-z0-9_-]{43}$/), expiresAtMs: nowMs + SESSION_TTL_MS, requireLoginForViews: false });
    const setCookie = String(res.headers["set-cookie"]);
    expect(setCookie).toMatch(/^millwarden_session=[A-Za-z0-9_-]{43};/);
    expect(setCookie).toContain("HttpOnly");
    expect(setCookie).toContain("SameSite=Strict");
    expect(setCookie).toContain("Path=/");
    expect(setCookie).toContain(`Max-Age=${SESSION_TTL_MS / 1000}`);
    expect(setCookie).toContain(`Expires=${new Date(nowMs + SESSION_TTL_MS).toUTCString()}`);
    // Served over plain HTTP: a Secure cookie would never come back.
    expect(setCookie).not.toContain("Secure");
    const token = res.cookies[0]!.value;
    expect(token).not.toBe(body.csrfToken);
    // The session answers with the same token.
    const session = await app.inject({ method: "GET", url: "/api/session", headers: { cookie: `millwarden_session=${token}` } });
    expect(session.json()).toEqual(body);
  });

  it("sets the cookie Secure when the request came over HTTPS (through a trusted TLS proxy)", async () => {
    await setup({ trustProxy: true });
    const res = await app.inject({ method: "POST", url: "/api/login", headers: { "x-forwarded-proto": "https" }, payload: { user: "a.operator", password: passwordOf("a.operator") } });
    expect(res.statusCode).toBe(200);
    expect(String(res.headers["set-cookie"])).toMatch(/; Secure/);
  });

  it("takes the account name in any case and answers with the account's own spelling", async () => {
    await setup();
    const res = await loginRequest("A.Engineer", passwordOf("a.engineer"));
    expect(res.json()).toMatchObject({ user: "a.engineer", role: "engineer" });
  });

  it("answers a wrong password and an unknown name alike (401), and records both without the name typed for the unknown one", async () => {
    await setup();
    const wrong = await loginRequest("a.operator", "not-the-password-at-all");
    const unknown = await loginRequest("pw-a.operator-typed-as-name", "anything-at-all-here");
    expect(expectError(wrong, "LOGIN_FAILED")).toBe("login: the user name or the password was not accepted");
    expect(expectError(unknown, "LOGIN_FAILED")).toBe("login: the user name or the password was not accepted");
    expect(wrong.headers["set-cookie"]).toBeUndefined();
    const [second, first] = deps.accounts.auditLog(10);
    expect(first).toMatchObject({ action: "login.failed", actor: "a.operator", target: "a.operator", source: "http", detail: { address: "127.0.0.1", reason: "wrong password" } });
    expect(second).toMatchObject({ action: "login.failed", actor: "(unknown user)", target: null, detail: { reason: "unknown user" } });
    expect(JSON.stringify(deps.accounts.auditLog(10))).not.toContain("typed-as-name");
  });

  it.each([
    [{ user: "a.operator" }, /field "password": expected a string of 1 to 1024 characters, found nothing/],
    [{ password: "x" }, /field "user": expected an account name of 1 to 64 characters, found nothing/],
    [{ user: "a.operator", password: "x", remember: true }, /expected only the fields "user" and "password", found 1 other field/],
    [[], /expected a JSON object/],
  ])("refuses the body %j (400)", async (payload, why) => {
    await setup();
    const res = await app.inject({ method: "POST", url: "/api/login", payload });
    expect(expectError(res, "BAD_BODY")).toMatch(why);
  });

  it("takes JSON only (a form post is a cross-site request a browser sends unasked)", async () => {
    await setup();
    const res = await app.inject({ method: "POST", url: "/api/login", headers: { "content-type": "application/x-www-form-urlencoded" }, payload: "user=a.operator&password=x" });
    expectError(res, "UNSUPPORTED_MEDIA_TYPE");
  });

  it("locks an account after 5 failures within 15 min, even for the right password, until the lock has passed", async () => {
    await setup();
    for (let i = 0; i < 4; i++) expectError(await loginRequest("a.operator", `wrong-password-${i}`, `10.2.0.${i}`), "LOGIN_FAILED");
    nowMs += 5 * MIN;
    expectError(await loginRequest("a.operator", "wrong-password-5", "10.2.0.9"), "LOGIN_FAILED");
    const locked = await loginRequest("a.operator", passwordOf("a.operator"), "10.2.0.10");
    expect(expectError(locked, "LOGIN_LOCKED")).toMatch(/refused for 900 s more .* the password was not checked/);
    expect(locked.headers["retry-after"]).toBe("900");
    // Other accounts are not locked.
    expect((await loginRequest("a.engineer", passwordOf("a.engineer"), "10.2.0.11")).statusCode).toBe(200);
    nowMs += 15 * MIN - 1000;
    expect((await loginRequest("a.operator", passwordOf("a.operator"), "10.2.0.12")).headers["retry-after"]).toBe("1");
    nowMs += 1000;
    expect((await loginRequest("a.operator", passwordOf("a.operator"), "10.2.0.12")).statusCode).toBe(200);
    const actions = deps.accounts.auditLog(100).map((e) => e.action);
    expect(actions.filter((a) => a === "login.failed")).toHaveLength(5);
    expect(deps.accounts.auditLog(100).find((e) => e.action === "login.locked")).toMatchObject({ target: "a.operator", detail: { scope: "user", lockedForS: 900, address: "10.2.0.9" } });
  });

  it("counts failures within the window only: 4 an hour ago and 4 now lock nothing", async () => {
    await setup();
    for (let i = 0; i < 4; i++) await loginRequest("a.operator", "wrong-password-x");
    nowMs += 60 * MIN;
    for (let i = 0; i < 4; i++) await loginRequest("a.operator", "wrong-password-x");
    expect((await loginRequest("a.operator", passwordOf("a.operator"))).statusCode).toBe(200);
  });

  it("locks an address after 20 failures, whatever the names, and only that address", async () => {
    await setup();
    for (let i = 0; i < 20; i++) await loginRequest(`guess${i}`, "wrong-password-x", "10.9.9.9");
    const locked = await loginRequest("a.operator", passwordOf("a.operator"), "10.9.9.9");
    expectError(locked, "LOGIN_LOCKED");
    expect((await loginRequest("a.operator", passwordOf("a.operator"), "10.9.9.10")).statusCode).toBe(200);
    expect(deps.accounts.auditLog(100).find((e) => e.action === "login.locked")).toMatchObject({ actor: "(unknown user)", detail: { scope: "address", address: "10.9.9.9" } });
  });

  it("checks at most the configured number of passwords at once (503 beyond)", async () => {
    await setup({ auth: { maxConcurrentChecks: 1 } });
    const answers = await Promise.all([loginRequest("a.operator", passwordOf("a.operator")), loginRequest("a.engineer", passwordOf("a.engineer"))]);
    expect(answers.map((r) => r.statusCode).sort()).toEqual([200, 503]);
    expect(answers.find((r) => r.statusCode === 503)!.headers["retry-after"]).toBe("1");
  });

  it("gives a new token at every login and ends the one the browser had", async () => {
    await setup();
    const first = await login("a.operator");
    const res = await app.inject({ method: "POST", url: "/api/login", headers: { cookie: first.cookie }, payload: { user: "a.operator", password: passwordOf("a.operator") } });
    expect(res.cookies[0]!.value).not.toBe(first.cookie.split("=")[1]);
    const old = await app.inject({ method: "GET", url: "/api/session", headers: { cookie: first.cookie } });
    expect(old.json().user).toBeNull();
  });
});

describe("sessions", () => {
  it("GET /api/session without a session answers who is logged in: nobody", async () => {
    await setup();
    const res = await app.inject({ method: "GET", url: "/api/session" });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toEqual({ user: null, role: null, csrfToken: null, expiresAtMs: null, requireLoginForViews: false });
  });

  it("logout ends the session, clears the cookie and is recorded", async () => {
    await setup();
    const s = await login("a.operator");
    const res = await app.inject({ method: "POST", url: "/api/logout", headers: { cookie: s.cookie, "x-csrf-token": s.csrf } });
    expect(res.statusCode).toBe(200);
    expect(res.json().user).toBeNull();
    expect(String(res.headers["set-cookie"])).toMatch(/^millwarden_session=;.*Expires=Thu, 01 Jan 1970/);
    const after = await app.inject({ method: "POST", url: "/api/advisories/co-rate-bf2-outlet/ack", headers: { cookie: s.cookie, "x-csrf-token": s.csrf, "content-type": "application/json" }, payload: {} });
    expect(expectError(after, "UNAUTHENTICATED")).toContain("a session that has ended");
    expect(deps.accounts.auditLog(1)[0]).toMatchObject({ action: "logout", actor: "a.operator" });
  });

  it("expires after its lifetime (12 h)", async () => {
    await setup();
    const s = await login("a.operator");
    nowMs += SESSION_TTL_MS - 1;
    expect((await app.inject({ method: "GET", url: "/api/session", headers: { cookie: s.cookie } })).json().user).toBe("a.operator");
    nowMs += 1;
    expect((await app.inject({ method: "GET", url: "/api/session", headers: { cookie: s.cookie } })).json().user).toBeNull();
  });

  it("ends when the account is removed or its password changed (by the CLI, another process)", async () => {
    await setup();
    const op = await login("a.operator");
    const eng = await login("a.engineer");
    deps.accounts.removeUser("a.operator");
    deps.accounts.setPasswordHash("a.engineer", await hashPassword("a-new-password-for-eng", TEST_SCRYPT), nowMs);
    for (const s of [op, eng]) expect((await app.inject({ method: "GET", url: "/api/session", headers: { cookie: s.cookie } })).json().user).toBeNull();
  });

  it("ends when the name is removed and added again: a new account, not the old one", async () => {
    await setup();
    const op = await login("a.operator");
    deps.accounts.removeUser("a.operator");
    await deps.addUser("a.operator", "admin", passwordOf("a.operator"));
    expect((await app.inject({ method: "GET", url: "/api/session", headers: { cookie: op.cookie } })).json().user).toBeNull();
  });
});

describe("CSRF: every state-changing request needs the session and its token", () => {
  it.each(STATE_CHANGING)("%s %s: 401 without a session, 403 without or with a wrong token, 200 with both", async (method, url, payload) => {
    await setup();
    const own = await login("s.admin");
    const other = await login("a.engineer");
    const send = (headers: Record<string, string>) => app.inject({ method: method as "POST", url, headers: { "content-type": "application/json", ...headers }, payload });
    expect(expectError(await send({}), "UNAUTHENTICATED")).toContain("expected a login session");
    expect(expectError(await send({ cookie: "millwarden_session=forged-token" }), "UNAUTHENTICATED")).toContain("a session that has ended");
    expect(expectError(await send({ "x-csrf-token": own.csrf }), "UNAUTHENTICATED")).toContain("no session cookie");
    expect(expectError(await send({ cookie: own.cookie }), "CSRF_REJECTED")).toContain("X-CSRF-Token");
    expect(expectError(await send({ cookie: own.cookie, "x-csrf-token": "" }), "CSRF_REJECTED")).toContain("found a different token");
    // Another session's token does not do.
    expect(expectError(await send({ cookie: own.cookie, "x-csrf-token": other.csrf }), "CSRF_REJECTED")).toContain("found a different token");
    expect(deps.calls.command).toHaveLength(0);
    const ok = await send({ cookie: own.cookie, "x-csrf-token": own.csrf });
    expect(ok.statusCode).toBe(200);
  });

  it("refuses other methods and unknown paths without a session (401 before 404)", async () => {
    await setup();
    for (const method of ["PUT", "DELETE", "PATCH"] as const) {
      expectError(await app.inject({ method, url: "/api/advisories/co-rate-bf2-outlet/ack" }), "UNAUTHENTICATED");
    }
    expectError(await app.inject({ method: "POST", url: "/api/nothing" }), "UNAUTHENTICATED");
  });
});

describe("roles", () => {
  const COMMANDS = STATE_CHANGING.filter(([, url]) => url.startsWith("/api/advisories/"));
  const ALLOWED: Record<AccountRole, string[]> = {
    viewer: [],
    operator: ["ack", "reset", "shelve", "unshelve"],
    engineer: ["ack", "reset", "shelve", "unshelve", "out-of-service", "return-to-service"],
    admin: ["ack", "reset", "shelve", "unshelve", "out-of-service", "return-to-service"],
  };

  it.each(USERS)("%s (%s) may give exactly its role's commands; the rest are 403 before the daemon, and recorded", async (user, role) => {
    await setup();
    const s = await login(user);
    for (const [, url, payload] of COMMANDS) {
      const kind = url.split("/").at(-1)!;
      const res = await app.inject({ method: "POST", url, headers: { cookie: s.cookie, "x-csrf-token": s.csrf, "content-type": "application/json" }, payload });
      if (ALLOWED[role].includes(kind)) {
        expect(res.statusCode, `${user} ${kind}`).toBe(200);
        expect(deps.calls.command.at(-1)).toMatchObject({ kind, body: { by: user, role } });
      } else {
        const needed = kind === "out-of-service" || kind === "return-to-service" ? "engineer" : "operator";
        expect(expectError(res, "FORBIDDEN")).toBe(`${kind} of advisory "${url.split("/")[3]}" needs the ${needed} role or above; "${user}" is logged in as ${role}`);
      }
    }
    expect(deps.calls.command).toHaveLength(ALLOWED[role].length);
    const recorded = deps.accounts.auditLog(100).filter((e) => e.action.startsWith("advisory."));
    expect(recorded).toHaveLength(COMMANDS.length);
    expect(recorded.filter((e) => e.detail["outcome"] === "forbidden")).toHaveLength(COMMANDS.length - ALLOWED[role].length);
  });

  it("an admin acts as engineer in the core: the advisory goes out of service by the admin", async () => {
    await setup();
    const s = await login("s.admin");
    const res = await app.inject({
      method: "POST",
      url: "/api/advisories/co-rate-bf2-outlet/out-of-service",
      headers: { cookie: s.cookie, "x-csrf-token": s.csrf, "content-type": "application/json" },
      payload: { reason: "analyser replaced" },
    });
    expect(res.json().advisory).toMatchObject({ state: "out-of-service", heldBy: "s.admin" });
    expect(deps.accounts.auditLog(1)[0]).toMatchObject({
      actor: "s.admin",
      action: "advisory.out-of-service",
      target: "co-rate-bf2-outlet",
      detail: { role: "admin", reason: "analyser replaced", outcome: "ok" },
    });
  });

  it("records a command the daemon refused, with its status and reason", async () => {
    await setup();
    const s = await login("a.operator");
    await app.inject({ method: "POST", url: "/api/advisories/co-rate-bf2-outlet/reset", headers: { cookie: s.cookie, "x-csrf-token": s.csrf, "content-type": "application/json" }, payload: { note: "tried" } });
    expect(deps.accounts.auditLog(1)[0]).toMatchObject({ action: "advisory.reset", detail: { outcome: "refused", status: 409, note: "tried", error: expect.stringContaining("not latched") } });
  });
});

describe("GET /api/audit", () => {
  it("needs a session (401) and the engineer role or above (403); answers the newest entries first", async () => {
    await setup();
    expectError(await app.inject({ method: "GET", url: "/api/audit" }), "UNAUTHENTICATED");
    const op = await login("a.operator");
    expect(expectError(await app.inject({ method: "GET", url: "/api/audit", headers: { cookie: op.cookie } }), "FORBIDDEN")).toBe(
      'reading the audit log needs the engineer role or above; "a.operator" is logged in as operator',
    );
    for (const user of ["a.engineer", "s.admin"]) {
      const s = await login(user);
      const res = await app.inject({ method: "GET", url: "/api/audit?limit=2", headers: { cookie: s.cookie } });
      expect(res.statusCode).toBe(200);
      const entries = res.json().entries;
      expect(entries).toHaveLength(2);
      expect(entries[0]).toMatchObject({ action: "login.ok", actor: user, source: "http" });
      expect(entries[0].id).toBeGreaterThan(entries[1].id);
    }
    const s = await login("a.engineer");
    expectError(await app.inject({ method: "GET", url: "/api/audit?limit=0", headers: { cookie: s.cookie } }), "BAD_QUERY");
  });
});

describe("server.requireLoginForViews", () => {
  const VIEWS = ["/api/state", "/api/advisories", "/api/trend?signal=bf2-co", "/api/health"];

  it("off (the default): the views answer without a login", async () => {
    await setup();
    for (const url of VIEWS) expect((await app.inject({ method: "GET", url })).statusCode, url).toBe(200);
  });

  it("on: the views need a session (any role); the page and its scripts still load, to show the login form", async () => {
    await setup({ auth: { requireLoginForViews: true } });
    for (const url of VIEWS) expectError(await app.inject({ method: "GET", url }), "UNAUTHENTICATED");
    expectError(await app.inject({ method: "GET", url: "/api/live" }), "UNAUTHENTICATED");
    for (const url of ["/", "/glance.js", "/api/session"]) expect((await app.inject({ method: "GET", url })).statusCode, url).toBe(200);
    expect((await app.inject({ method: "GET", url: "/api/session" })).json().requireLoginForViews).toBe(true);
    const s = await login("v.viewer");
    for (const url of VIEWS) expect((await app.inject({ method: "GET", url, headers: { cookie: s.cookie } })).statusCode, url).toBe(200);
  });

  it("on: the live feed of a session closes when it logs out", async () => {
    deps = new FakeDeps();
    await deps.addUser("v.viewer", "viewer", passwordOf("v.viewer"));
    const srv = await startServer(deps, { port: 0, auth: { requireLoginForViews: true, dummyScrypt: TEST_SCRYPT } });
    try {
      const res = await fetch(`${srv.url}/api/login`, { method: "POST", headers: { "content-type": "application/json" }, body: JSON.stringify({ user: "v.viewer", password: passwordOf("v.viewer") }) });
      const cookie = res.headers.get("set-cookie")!.split(";")[0]!;
      const { csrfToken } = (await res.json()) as { csrfToken: string };
      const refused = new WebSocket(`${srv.url.replace("http", "ws")}/api/live`);
      const refusedStatus = await new Promise<number>((ok) =>
        refused.on("unexpected-response", (req, r) => {
          // ws leaves a refused handshake to the listener: end it, or the connection stays open.
          req.destroy();
          ok(r.statusCode ?? 0);
        }),
      );
      expect(refusedStatus).toBe(401);
      const ws = new WebSocket(`${srv.url.replace("http", "ws")}/api/live`, { headers: { cookie } });
      await new Promise((ok) => ws.once("message", ok));
      const closed = new Promise<number>((ok) => ws.on("close", (code) => ok(code)));
      await fetch(`${srv.url}/api/logout`, { method: "POST", headers: { cookie, "x-csrf-token": csrfToken } });
      expect(await closed).toBe(4401);
    } finally {
      await srv.close();
    }
  });
});

describe("security headers (helmet)", () => {
  it("sends the policy the dashboard works under, on pages, API answers and refusals alike", async () => {
    await setup();
    const responses = [
      await app.inject({ method: "GET", url: "/" }),
      await app.inject({ method: "GET", url: "/api/state" }),
      await app.inject({ method: "POST", url: "/api/logout" }),
      await loginRequest("a.operator", "wrong-password-x"),
      await app.inject({ method: "GET", url: "/missing.html" }),
    ];
    for (const res of responses) {
      const csp = String(res.headers["content-security-policy"]);
      expect(csp).toContain("default-src 'self'");
      expect(csp).toContain("script-src 'self'");
      expect(csp).toContain("script-src-attr 'none'");
      expect(csp).toContain("style-src 'self'");
      expect(csp).toContain("frame-ancestors 'none'");
      expect(csp).toContain("object-src 'none'");
      // Nothing inline, nothing upgraded: the box is often served over plain HTTP on a plant network.
      expect(csp).not.toContain("unsafe-inline");
      expect(csp).not.toContain("upgrade-insecure-requests");
      expect(res.headers["x-content-type-options"]).toBe("nosniff");
      expect(res.headers["x-frame-options"]).toBe("DENY");
      expect(res.headers["referrer-policy"]).toBe("no-referrer");
      expect(res.headers["cross-origin-opener-policy"]).toBe("same-origin");
      expect(res.headers["cross-origin-resource-policy"]).toBe("same-origin");
      expect(res.headers["strict-transport-security"]).toBeUndefined();
    }
  });

  it("the dashboard has nothing that policy would block: no inline script, no style or event attributes", async () => {
    await setup();
    const html = (await app.inject({ method: "GET", url: "/" })).body;
    for (const tag of html.match(/<script\b[^>]*>/gi) ?? []) expect(tag).toMatch(/\bsrc="[^":]+"/);
    expect(html).not.toMatch(/<script\b[^>]*>\s*[^<\s]/i);
    expect(html).not.toMatch(/\sstyle=/i);
    expect(html).not.toMatch(/\son[a-z]+=/i);
    expect(html).not.toMatch(/<style\b/i);
  });
});

describe("no secret reaches a log line, an error text or the audit log", () => {
  it("after logins that fail, succeed, lock, and a password typed as the user name", async () => {
    await setup();
    const bodies: string[] = [];
    const keep = (r: { body: string }) => bodies.push(r.body);
    keep(await loginRequest("a.operator", "a-wrong-secret-pass-1"));
    keep(await loginRequest(passwordOf("a.engineer"), passwordOf("a.engineer")));
    for (let i = 0; i < 6; i++) keep(await loginRequest("v.viewer", `viewer-guess-${i}-secret`));
    const ok = await loginRequest("s.admin", passwordOf("s.admin"));
    const token = ok.cookies[0]!.value;
    const csrf = ok.json().csrfToken as string;
    keep(await app.inject({ method: "POST", url: "/api/login", payload: { user: "s.admin", password: passwordOf("s.admin"), extra: passwordOf("s.admin") } }));
    keep(await app.inject({ method: "POST", url: "/api/login", payload: `{"user": "s.admin", "password": "${passwordOf("s.admin")}"` , headers: { "content-type": "application/json" } }));
    keep(await app.inject({ method: "POST", url: "/api/logout", headers: { cookie: `millwarden_session=${token}`, "x-csrf-token": "wrong" } }));
    keep(await app.inject({ method: "POST", url: "/api/logout", headers: { cookie: `millwarden_session=${token}`, "x-csrf-token": csrf } }));
    const secrets = [
      "a-wrong-secret-pass-1",
      ...USERS.map(([u]) => passwordOf(u)),
      ...Array.from({ length: 6 }, (_, i) => `viewer-guess-${i}-secret`),
      token,
      csrf,
    ];
    const audit = JSON.stringify(deps.accounts.auditLog(1000));
    const log = logged.join("");
    expect(log.length).toBeGreaterThan(100);
    for (const secret of secrets) {
      expect(log, "log").not.toContain(secret);
      expect(audit, "audit").not.toContain(secret);
      // The answers (the CSRF token is the login's own answer, the token only in its cookie).
      for (const b of bodies) expect(b, "answer").not.toContain(secret);
    }
    // The stored hashes are not in the audit or the log either.
    for (const [u] of USERS) {
      const hash = deps.accounts.findUser(u)?.passwordHash;
      if (hash !== undefined) expect(log + audit).not.toContain(hash.split("$")[5]);
    }
  });
});
