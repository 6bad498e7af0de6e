// The HTTP API through fastify's inject() (no sockets). The contract checked here is
// the route list of DESIGN.md §6 and the error body { error, message } of src/server/errors.ts.
import type { FastifyInstance } from "fastify";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { ADVISORY_ONLY, type LiveMessage } from "../../src/core/types.js";
import { buildApp } from "../../src/server/app.js";
import { API_ERRORS } from "../../src/server/errors.js";
import { FakeDeps, FAKE_NOW_MS } from "./fake-deps.js";

const HOUR = 3_600_000;
let deps: FakeDeps;
let app: FastifyInstance;

/** A logged-in browser: its cookie and its CSRF token. */
interface Login {
  cookie: string;
  csrf: string;
}
const PASSWORD = "tarnholm-line2-shift";
let operator: Login;
let engineer: Login;

async function login(user: string): Promise<Login> {
  const res = await app.inject({ method: "POST", url: "/api/login", payload: { user, password: PASSWORD } });
  expect(res.statusCode).toBe(200);
  const cookie = res.cookies.find((c) => c.name === "millwarden_session");
  return { cookie: `millwarden_session=${cookie!.value}`, csrf: res.json().csrfToken };
}

beforeEach(async () => {
  deps = new FakeDeps();
  await deps.addUser("a.operator", "operator", PASSWORD);
  await deps.addUser("a.engineer", "engineer", PASSWORD);
  app = await buildApp(deps);
  operator = await login("a.operator");
  engineer = await login("a.engineer");
});

afterEach(async () => {
  await app.close();
});

/** Every error answer has the registry's status for its code and a non-empty message. */
function expectError(res: { statusCode: number; json(): unknown }, code: keyof typeof API_ERRORS): string {
  const body = res.json() as { error: string; message: string };
  expect(body.error).toBe(code);
  expect(res.statusCode).toBe(API_ERRORS[code].status);
  expect(body.message.length).toBeGreaterThan(10);
  return body.message;
}

describe("GET /api/health", () => {
  it("answers 200 while ok", async () => {
    const res = await app.inject({ method: "GET", url: "/api/health" });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toEqual(deps.health());
  });

  it("answers 503 when degraded, with the same body", async () => {
    deps.healthStatus = "degraded";
    const res = await app.inject({ method: "GET", url: "/api/health" });
    expect(res.statusCode).toBe(503);
    expect(res.json().status).toBe("degraded");
    expect(res.json().sources[0].connected).toBe(false);
  });
});

describe("GET /api/state", () => {
  it("returns the daemon's state as JSON, uncached", async () => {
    const res = await app.inject({ method: "GET", url: "/api/state" });
    expect(res.statusCode).toBe(200);
    expect(res.headers["content-type"]).toMatch(/^application\/json/);
    expect(res.headers["cache-control"]).toBe("no-store");
    expect(res.json()).toEqual(JSON.parse(JSON.stringify(deps.state)));
    expect(res.json().advisoryOnly).toBe(ADVISORY_ONLY);
  });

  it("refuses query parameters it does not know", async () => {
    const res = await app.inject({ method: "GET", url: "/api/state?verbose=1" });
    expect(expectError(res, "BAD_QUERY")).toContain('"verbose"');
  });
});

describe("GET /api/advisories", () => {
  it("passes the default limit of 100 and returns active and history, newest first", async () => {
    const before = deps.transitions.length;
    deps.command("co-rate-bf2-outlet", "ack", { by: "a.operator", role: "operator" });
    const res = await app.inject({ method: "GET", url: "/api/advisories" });
    expect(res.statusCode).toBe(200);
    expect(deps.calls.advisories.at(-1)).toEqual({ limit: 100 });
    const body = res.json();
    expect(body.active.map((a: { id: string }) => a.id)).toEqual(deps.state.advisories.map((a) => a.id));
    expect(body.history).toHaveLength(before + 1);
    expect(body.history[0]).toMatchObject({ advisoryId: "co-rate-bf2-outlet", transition: "ack", by: "a.operator" });
  });

  it("passes limit=1 and limit=1000 through", async () => {
    for (const limit of [1, 1000]) {
      const res = await app.inject({ method: "GET", url: `/api/advisories?limit=${limit}` });
      expect(res.statusCode).toBe(200);
      expect(deps.calls.advisories.at(-1)).toEqual({ limit });
    }
  });

  it.each(["0", "1001", "abc", "2.5", "-3"])("refuses limit=%s with a message naming it", async (limit) => {
    const res = await app.inject({ method: "GET", url: `/api/advisories?limit=${limit}` });
    expect(expectError(res, "BAD_QUERY")).toBe(`query parameter "limit": expected an integer from 1 to 1000, found "${limit}"`);
    expect(deps.calls.advisories).toHaveLength(0);
  });

  it("refuses a repeated limit", async () => {
    const res = await app.inject({ method: "GET", url: "/api/advisories?limit=5&limit=6" });
    expect(expectError(res, "BAD_QUERY")).toContain("found it 2 times");
  });
});

/**
 * POST a command as a logged-in person (the operator unless told); a string payload is sent as
 * it is (to test what does not parse). Out of service and return to service need the engineer.
 */
function postCommand(id: string, command: string, payload: unknown, contentType = "application/json", as?: Login) {
  const who = as ?? (command === "out-of-service" || command === "return-to-service" ? engineer : operator);
  return app.inject({
    method: "POST",
    url: `/api/advisories/${encodeURIComponent(id)}/${command}`,
    headers: { "content-type": contentType, cookie: who.cookie, "x-csrf-token": who.csrf },
    payload: typeof payload === "string" ? payload : JSON.stringify(payload),
  });
}

describe("POST /api/advisories/:id/ack", () => {
  const post = (id: string, payload: unknown, contentType = "application/json") => postCommand(id, "ack", payload, contentType);

  it("acknowledges, passes who (the session's) and why, and the daemon's delta follows", async () => {
    const seen: LiveMessage[] = [];
    deps.subscribe((m) => seen.push(m));
    const res = await post("co-rate-bf2-outlet", { note: "hopper checked" });
    expect(res.statusCode).toBe(200);
    expect(res.json().advisory).toMatchObject({ id: "co-rate-bf2-outlet", state: "ack", ackedBy: "a.operator", ackedAtMs: FAKE_NOW_MS });
    expect(deps.calls.command).toEqual([{ id: "co-rate-bf2-outlet", kind: "ack", body: { by: "a.operator", role: "operator", note: "hopper checked" } }]);
    expect(seen).toHaveLength(1);
    expect(seen[0]?.type).toBe("delta");
    expect(deps.transitions[0]).toMatchObject({ transition: "ack", by: "a.operator", why: "hopper checked" });
  });

  it("answers advisory null once an acknowledgement returns it to normal (rtn-unack)", async () => {
    const res = await post("dew-margin-vm2-outlet", {});
    expect(res.statusCode).toBe(200);
    expect(res.json()).toEqual({ advisory: null });
    expect(deps.state.advisories.map((a) => a.id)).not.toContain("dew-margin-vm2-outlet");
  });

  it("passes the daemon's 404 through", async () => {
    const res = await post("no-such-rule", {});
    expect(expectError(res, "ADVISORY_NOT_FOUND")).toBe('no advisory "no-such-rule": expected the id of an advisory in GET /api/advisories');
  });

  it("passes the daemon's 409 through (already acknowledged, suppressed)", async () => {
    const acked = await post("o2-margin-bf2", {});
    expect(expectError(acked, "ADVISORY_CONFLICT")).toBe('advisory "o2-margin-bf2" is already acknowledged by J. Ferris');
    const suppressed = await post("co-rate-s21-top", {});
    expect(expectError(suppressed, "ADVISORY_CONFLICT")).toBe('advisory "co-rate-s21-top" is suppressed: nothing to acknowledge');
  });

  it.each([
    // Who gives the command is the session's user: a body that names someone is refused.
    [{ by: "A. Operator" }, /field "by": not accepted; who gives a command and in what role come from the login session/],
    [{ role: "engineer" }, /field "role": not accepted/],
    [{ note: "n".repeat(501) }, /field "note": expected at most 500 characters, found 501/],
    [{ extra: true }, /found "extra"/],
    [{ reason: "checked" }, /request body for ack: expected only the field "note", found "reason"/],
    [[{ note: "A" }], /found an array of 1/],
    ["{not json", /expected valid JSON/],
    ["", /found an empty body/],
  ])("400 on body %j, nothing reaches the daemon", async (payload, why) => {
    const res = await post("co-rate-bf2-outlet", payload);
    expect(expectError(res, "BAD_BODY")).toMatch(why);
    expect(deps.calls.command).toHaveLength(0);
  });

  it("refuses a body that is not JSON (415), also text/plain", async () => {
    for (const type of ["text/plain", "application/x-www-form-urlencoded"]) {
      const res = await post("co-rate-bf2-outlet", "by=A", type);
      expect(expectError(res, "UNSUPPORTED_MEDIA_TYPE")).toContain("expected Content-Type application/json");
    }
    expect(deps.calls.command).toHaveLength(0);
  });

  it("refuses an oversized body (413)", async () => {
    const res = await post("co-rate-bf2-outlet", { note: "n".repeat(20_000) });
    expectError(res, "BODY_TOO_LARGE");
  });

  it("refuses an over-long id (400), also one the router itself rejects", async () => {
    const res = await post("x".repeat(201), {});
    expect(expectError(res, "BAD_PARAM")).toContain('path parameter "id": expected an advisory id of 1 to 200');
    const longer = await post("x".repeat(300), {});
    expect(expectError(longer, "BAD_PARAM")).toContain("expected at most 200 characters");
    expect(longer.headers["x-content-type-options"]).toBe("nosniff");
    expect(deps.calls.command).toHaveLength(0);
  });

  it("refuses a malformed URL encoding with the JSON error body", async () => {
    const res = await app.inject({ method: "POST", url: "/api/advisories/%E0%A4%A/ack", payload: {} });
    expect(expectError(res, "BAD_REQUEST")).toContain("percent-encoding");
  });
});

describe("POST /api/advisories/:id/<command>: each command's success", () => {
  // The fake's advisories come from the real board (fake-deps.ts): what each starts as is
  // stated beside it; the expected results follow the lifecycle of src/advisories/advisory.ts.
  it.each([
    // latched, condition gone: a reset returns it to normal
    ["reset", "co-peak-vm2-outlet", { note: "table inspected" }, null, "reset", "table inspected"],
    // unack caution, condition present
    ["shelve", "co-rate-bf2-outlet", { reason: "analyser purge", durationS: 900 }, "shelved", "shelve", "analyser purge — shelved for 15 min"],
    // unack notice, one-shot: bounded by the site's longest shelve (8 h by default)
    ["shelve", "dew-margin-bf2-outlet", { reason: "cold start", oneShot: true }, "shelved", "shelve", "cold start — shelved one-shot (until it clears, at most 480 min)"],
    // shelved while its condition cleared: unshelving leaves it normal
    ["unshelve", "o2-time-vm2", {}, null, "unshelve", "unshelved"],
    // unack caution, an engineer takes it out of service
    ["out-of-service", "co-rate-bf2-outlet", { reason: "analyser replaced" }, "out-of-service", "out-of-service", "analyser replaced"],
    // out of service with its condition still present: back in service it is unacknowledged
    ["return-to-service", "dew-margin-bf2-hopper", { reason: "thermocouple replaced" }, "unack", "return-to-service", "thermocouple replaced"],
  ] as const)("%s %s", async (command, id, body, state, transition, why) => {
    const seen: LiveMessage[] = [];
    deps.subscribe((m) => seen.push(m));
    const res = await postCommand(id, command, body);
    expect(res.statusCode).toBe(200);
    const advisory = res.json().advisory;
    if (state === null) expect(advisory).toBeNull();
    else expect(advisory).toMatchObject({ id, state });
    const [by, role] = command === "out-of-service" || command === "return-to-service" ? ["a.engineer", "engineer"] : ["a.operator", "operator"];
    expect(deps.calls.command).toEqual([{ id, kind: command, body: { ...body, by, role } }]);
    expect(deps.transitions[0]).toMatchObject({ advisoryId: id, transition, by, why, atMs: FAKE_NOW_MS });
    expect(seen).toHaveLength(1);
    const delta = seen[0];
    expect(delta?.type === "delta" && delta.advisories?.find((a) => a.id === id)?.state).toBe(state ?? undefined);
  });

  it("shelve answers who, why and until when", async () => {
    const res = await postCommand("co-rate-bf2-outlet", "shelve", { reason: "analyser purge", durationS: 3600 });
    expect(res.json().advisory).toMatchObject({
      state: "shelved",
      heldBy: "a.operator",
      heldReason: "analyser purge",
      shelvedUntilMs: FAKE_NOW_MS + 3_600_000,
      oneShot: false,
    });
  });

  it("a shelved advisory whose condition is present comes back unacknowledged on unshelve", async () => {
    await postCommand("co-rate-bf2-outlet", "shelve", { reason: "analyser purge", durationS: 900 });
    const res = await postCommand("co-rate-bf2-outlet", "unshelve", { reason: "purge done" });
    expect(res.statusCode).toBe(200);
    expect(res.json().advisory).toMatchObject({ state: "unack", heldBy: null, shelvedUntilMs: null });
    expect(deps.transitions[0]).toMatchObject({ transition: "unshelve", from: "shelved", to: "unack", why: "purge done" });
  });
});

describe("POST /api/advisories/:id/<command>: the daemon's refusals", () => {
  it.each([
    // 400: beyond the site's longest shelve (advisoryPolicy.maxShelveS, 8 h by default)
    ["shelve", "co-rate-bf2-outlet", { reason: "r", durationS: 8 * 3600 + 1 }, "BAD_COMMAND", /expected "durationS" between 1 and 28800 s \(advisoryPolicy.maxShelveS\); found 28801/],
    // (403 by role is the server's own refusal, before the daemon: see auth.test.ts)
    // 404: no such advisory, for every command
    ["reset", "no-such-rule", {}, "ADVISORY_NOT_FOUND", /no advisory "no-such-rule"/],
    ["shelve", "no-such-rule", { reason: "r", oneShot: true }, "ADVISORY_NOT_FOUND", /no advisory "no-such-rule"/],
    ["unshelve", "no-such-rule", {}, "ADVISORY_NOT_FOUND", /no advisory "no-such-rule"/],
    ["out-of-service", "no-such-rule", { reason: "r" }, "ADVISORY_NOT_FOUND", /no advisory "no-such-rule"/],
    ["return-to-service", "no-such-rule", {}, "ADVISORY_NOT_FOUND", /no advisory "no-such-rule"/],
    // 409: the state does not accept the command
    ["reset", "co-rate-bf2-outlet", {}, "ADVISORY_CONFLICT", /cannot be reset: it is unack, not latched/],
    ["shelve", "co-rise-bf2-outlet", { reason: "r", durationS: 900 }, "ADVISORY_CONFLICT", /at warning tier, which this site does not allow to be shelved/],
    ["shelve", "o2-time-vm2", { reason: "r", durationS: 900 }, "ADVISORY_CONFLICT", /already shelved by P. Lindqvist until 2024-11-14T06:22:10.000Z/],
    ["shelve", "dew-margin-bf2-hopper", { reason: "r", durationS: 900 }, "ADVISORY_CONFLICT", /is out of service/],
    ["unshelve", "co-rate-bf2-outlet", {}, "ADVISORY_CONFLICT", /is not shelved/],
    ["out-of-service", "dew-margin-bf2-hopper", { reason: "r" }, "ADVISORY_CONFLICT", /already out of service \(by M. Okafor\)/],
    ["return-to-service", "co-rate-bf2-outlet", {}, "ADVISORY_CONFLICT", /is not out of service/],
  ] as const)("%s %s %j: %s", async (command, id, body, code, why) => {
    const before = JSON.stringify(deps.state.advisories);
    const res = await postCommand(id, command, body);
    expect(expectError(res, code)).toMatch(why);
    expect(deps.calls.command).toHaveLength(1);
    expect(JSON.stringify(deps.state.advisories)).toBe(before);
  });
});

describe("POST /api/advisories/:id/<command>: bodies", () => {
  it.each([
    ["shelve", { durationS: 900 }, /field "reason": expected why the advisory is shelved \(a string of 1 to 500 characters\), found nothing/],
    ["shelve", { reason: "   ", durationS: 900 }, /field "reason": expected why the advisory is shelved \(1 to 500 characters\), found only spaces/],
    ["shelve", { reason: 5, durationS: 900 }, /field "reason": .* found number 5/],
    ["shelve", { reason: "a\nb", durationS: 900 }, /field "reason": expected printable characters on one line, found a control character/],
    ["shelve", { reason: "r".repeat(501), durationS: 900 }, /field "reason": expected at most 500 characters, found 501/],
    ["shelve", { reason: "r" }, /request body for shelve: expected "durationS" \(whole seconds\) or "oneShot": true, found neither/],
    ["shelve", { reason: "r", oneShot: false }, /found "oneShot": false and no "durationS"/],
    ["shelve", { reason: "r", durationS: "3600" }, /field "durationS": expected a whole number of seconds, at least 1 .* found "3600"/],
    ["shelve", { reason: "r", durationS: 1.5 }, /field "durationS": .* found number 1.5/],
    ["shelve", { reason: "r", durationS: 0 }, /field "durationS": .* found number 0/],
    ["shelve", { reason: "r", durationS: null }, /field "durationS": .* found null/],
    ["shelve", { reason: "r", oneShot: "yes" }, /field "oneShot": expected true or false, found "yes"/],
    ["shelve", { reason: "r", durationS: 900, note: "n" }, /request body for shelve: expected only the fields "reason", "durationS" and "oneShot", found "note"/],
    ["shelve", { by: "A. Operator", reason: "r", durationS: 900 }, /field "by": not accepted; who gives a command and in what role come from the login session \(POST \/api\/login\)/],
    ["unshelve", { durationS: 900 }, /expected only the field "reason", found "durationS"/],
    ["reset", { reason: "r" }, /request body for reset: expected only the field "note", found "reason"/],
    ["out-of-service", {}, /field "reason": expected why the advisory is taken out of service/],
    ["out-of-service", { reason: "r", role: "admin" }, /field "role": not accepted/],
    ["return-to-service", { reason: "r", note: "n" }, /expected only the field "reason", found "note"/],
    ["shelve", null, /request body for shelve: expected a JSON object such as \{"reason": "...", "durationS": 3600\}, found null/],
  ])("%s %j: 400, nothing reaches the daemon", async (command, payload, why) => {
    const res = await postCommand("co-rate-bf2-outlet", command, payload);
    expect(expectError(res, "BAD_BODY")).toMatch(why);
    expect(deps.calls.command).toHaveLength(0);
  });

  it("trims texts and drops an empty optional reason", async () => {
    await postCommand("o2-time-vm2", "unshelve", { reason: "  " });
    expect(deps.calls.command[0]?.body).toEqual({ by: "a.operator", role: "operator" });
    await postCommand("co-rate-bf2-outlet", "shelve", { reason: "  purge ", durationS: 60, oneShot: false });
    expect(deps.calls.command[1]?.body).toEqual({ by: "a.operator", role: "operator", reason: "purge", durationS: 60, oneShot: false });
  });

  it("refuses non-JSON bodies on every command (415)", async () => {
    for (const command of ["reset", "shelve", "unshelve", "out-of-service", "return-to-service"]) {
      const res = await postCommand("co-rate-bf2-outlet", command, "by=A", "text/plain");
      expect(expectError(res, "UNSUPPORTED_MEDIA_TYPE")).toContain("expected Content-Type application/json");
    }
    expect(deps.calls.command).toHaveLength(0);
  });

  it("answers an unknown command with 404 naming the six, before looking at the body", async () => {
    for (const [command, type] of [
      ["silence", "application/json"],
      ["ACK", "application/json"],
      ["suppress", "text/plain"],
    ] as const) {
      const res = await postCommand("co-rate-bf2-outlet", command, "by=A", type);
      const message = expectError(res, "UNKNOWN_COMMAND");
      expect(message).toBe(
        `path /api/advisories/:id/<command>: expected one of the commands ack, reset, shelve, unshelve, out-of-service, return-to-service, found "${command}"`,
      );
    }
    expect(deps.calls.command).toHaveLength(0);
  });
});

describe("GET /api/trend", () => {
  const series = (id: string) => deps.series.get(id) ?? [];

  it("defaults to the last hour before the daemon's now (not the wall clock)", async () => {
    const res = await app.inject({ method: "GET", url: "/api/trend?signal=bf2-co" });
    expect(res.statusCode).toBe(200);
    const body = res.json();
    expect(body).toMatchObject({ signal: "bf2-co", fromMs: FAKE_NOW_MS - HOUR, toMs: FAKE_NOW_MS });
    expect(deps.calls.trend).toEqual([{ series: "bf2-co", fromMs: FAKE_NOW_MS - HOUR, toMs: FAKE_NOW_MS }]);
    const expected = series("bf2-co")
      .filter((p) => p.tMs >= FAKE_NOW_MS - HOUR && p.tMs <= FAKE_NOW_MS)
      .map((p) => [p.tMs, p.value, p.quality]);
    expect(body.points).toEqual(expected);
    expect(body.points.length).toBeGreaterThan(50);
  });

  it("answers points as [tMs, value, quality] tuples, null values included", async () => {
    const res = await app.inject({ method: "GET", url: "/api/trend?signal=dewpoint.bf2-outlet.marginK" });
    expect(res.json().points).toEqual(series("dewpoint.bf2-outlet.marginK").map((p) => [p.tMs, p.value, p.quality]));
    expect(res.json().points.some((p: unknown[]) => p[1] === null && p[2] === "unknown")).toBe(true);
  });

  it("accepts RFC 3339 bounds with offsets", async () => {
    const res = await app.inject({
      method: "GET",
      url: `/api/trend?signal=vm2-co&from=${encodeURIComponent("2024-11-14T05:00:00+01:00")}&to=2024-11-14T05:30:00Z`,
    });
    expect(res.statusCode).toBe(200);
    expect(res.json()).toMatchObject({ fromMs: Date.UTC(2024, 10, 14, 4), toMs: Date.UTC(2024, 10, 14, 5, 30) });
  });

  it("passes the 31-day bound and refuses beyond it", async () => {
    const span = 31 * 24 * HOUR;
    const ok = await app.inject({ method: "GET", url: `/api/trend?signal=vm2-co&from=${FAKE_NOW_MS - span}&to=${FAKE_NOW_MS}` });
    expect(ok.statusCode).toBe(200);
    const bad = await app.inject({ method: "GET", url: `/api/trend?signal=vm2-co&from=${FAKE_NOW_MS - span - 1}&to=${FAKE_NOW_MS}` });
    expect(expectError(bad, "BAD_QUERY")).toContain("at most 31 days");
  });

  it.each([
    ["", /"signal": expected a signal id/],
    ["signal=vm2-co&from=soon", /query parameter "from": expected epoch milliseconds .* found "soon"/],
    ["signal=vm2-co&to=2024-02-30T00:00:00Z", /query parameter "to": .*day 30 of month 2/],
    [`signal=vm2-co&from=${FAKE_NOW_MS}&to=${FAKE_NOW_MS - 1}`, /expected from earlier than to/],
    ["signal=vm2-co&since=1", /found "since"/],
  ])("400 on %s", async (query, why) => {
    const res = await app.inject({ method: "GET", url: `/api/trend?${query}` });
    expect(expectError(res, "BAD_QUERY")).toMatch(why);
    expect(deps.calls.trend).toHaveLength(0);
  });

  it("maps UnknownSeriesError to 404 with its message", async () => {
    const res = await app.inject({ method: "GET", url: "/api/trend?signal=nope" });
    expect(expectError(res, "UNKNOWN_SERIES")).toBe(
      'unknown series "nope": expected a signal id or a derived key listed in GET /api/state',
    );
  });

  it("hides other failures behind a 500 without internals", async () => {
    deps.trend = () => {
      throw new Error("disk I/O error at /var/lib/secret.db");
    };
    const res = await app.inject({ method: "GET", url: "/api/trend?signal=vm2-co" });
    expect(expectError(res, "INTERNAL")).not.toContain("secret");
  });
});

describe("dashboard files and headers", () => {
  it("serves index.html at / with the advisory-only text", async () => {
    const res = await app.inject({ method: "GET", url: "/" });
    expect(res.statusCode).toBe(200);
    expect(res.headers["content-type"]).toMatch(/^text\/html/);
    expect(res.body).toContain(ADVISORY_ONLY);
    expect(res.body).toContain('src="glance.js"');
  });

  it("serves the scripts as JavaScript modules", async () => {
    for (const file of ["glance.js", "live-state.js", "glance-model.js"]) {
      const res = await app.inject({ method: "GET", url: `/${file}` });
      expect(res.statusCode).toBe(200);
      expect(res.headers["content-type"]).toMatch(/javascript/);
    }
  });

  it("loads nothing from outside the box", async () => {
    for (const file of ["", "glance.js", "glance.css", "live-state.js", "glance-model.js"]) {
      const res = await app.inject({ method: "GET", url: `/${file}` });
      // Any absolute URL other than the SVG namespace name (an identifier, never fetched).
      const external = res.body.match(/(?:https?:)?\/\/[a-z0-9.-]+\.[a-z]{2,}/gi) ?? [];
      expect(external.filter((u) => u !== "http://www.w3.org")).toEqual([]);
    }
  });

  it("sets the basic security headers on pages, API answers and errors", async () => {
    for (const url of ["/", "/api/state", "/api/advisories?limit=0", "/missing.html"]) {
      const res = await app.inject({ method: "GET", url });
      expect(res.headers["x-content-type-options"]).toBe("nosniff");
      expect(res.headers["x-frame-options"]).toBe("DENY");
      expect(String(res.headers["content-security-policy"])).toContain("frame-ancestors 'none'");
    }
  });

  it("answers unknown paths with a JSON 404", async () => {
    const page = await app.inject({ method: "GET", url: "/missing.html" });
    expect(expectError(page, "NOT_FOUND")).toContain("GET /missing.html");
    const api = await app.inject({ method: "GET", url: "/api/nothing?x=1" });
    const message = expectError(api, "NOT_FOUND");
    expect(message).toContain("expected one of /api/health");
    expect(message).toContain("/api/advisories/:id/<command> (POST; command: ack, reset, shelve, unshelve, out-of-service, return-to-service)");
  });

  it("refuses plain HTTP on the WebSocket path (426)", async () => {
    const res = await app.inject({ method: "GET", url: "/api/live" });
    expectError(res, "UPGRADE_REQUIRED");
  });
});

describe("error registry", () => {
  // Codes are API (src/server/errors.ts): each documented and with an HTTP error status.
  it("documents every code with a 4xx/5xx status", () => {
    for (const [code, entry] of Object.entries(API_ERRORS)) {
      expect(code).toMatch(/^[A-Z][A-Z_]+$/);
      expect(entry.status).toBeGreaterThanOrEqual(400);
      expect(entry.status).toBeLessThan(600);
      expect(entry.doc.length).toBeGreaterThan(20);
    }
  });
});
