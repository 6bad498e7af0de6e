// Every HTTP endpoint's parameters (src/server/params.ts, app.ts, auth.ts, notify-routes.ts):
// random query strings, path parameters, JSON bodies and content types against buildApp with
// the fake deps (test/server/fake-deps.ts), through inject(). The property is the API's
// contract (src/server/errors.ts): never a 500, and every 4xx carries the JSON body
// { error: <a registered code with that status>, message: <non-empty> }.
import type { FastifyInstance } from "fastify";
import fc from "fast-check";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { buildApp } from "../../src/server/app.js";
import { API_ERRORS } from "../../src/server/errors.js";
import { FakeDeps } from "../server/fake-deps.js";
import { assertCountedAsync, runs } from "./budget.js";

const PASSWORD = "tarnholm-line2-shift";
let app: FastifyInstance;
let deps: FakeDeps;
let session: { cookie: string; csrf: string };

beforeAll(async () => {
  deps = new FakeDeps();
  await deps.addUser("a.engineer", "engineer", PASSWORD);
  app = await buildApp(deps);
  const res = await app.inject({ method: "POST", url: "/api/login", payload: { user: "a.engineer", password: PASSWORD } });
  expect(res.statusCode).toBe(200);
  const c = res.cookies.find((k) => k.name === "millwarden_session")!;
  session = { cookie: `millwarden_session=${c.value}`, csrf: res.json().csrfToken };
});
afterAll(async () => {
  await app.close();
});

const GET_PATHS = ["/api/health", "/metrics", "/api/state", "/api/advisories", "/api/trend", "/api/rules", "/api/handover", "/api/live", "/api/session", "/api/audit", "/api/ack-link", "/api/notifications/deliveries", "/api/push/key", "/", "/index.html", "/vendor/uplot/uPlot.esm.js", "/vendor/uplot/package.json", "/api/nothing"];
const POST_PATHS = ["/api/login", "/api/ack-link", "/api/push/subscribe", "/api/advisories/{id}/{cmd}"];
const KEYS = ["limit", "hours", "signal", "from", "to", "points", "x", "", "limit[]", "__proto__", "constructor"];
const ADVISORY_IDS = ["co-rate-bf2-outlet", "o2-margin-bf2", "co-rise-bf2-outlet", "dew-margin-bf2-outlet", "nope", "", "a/b", "x".repeat(201), "%00", "%zz", "é"];
const COMMANDS = ["ack", "reset", "shelve", "unshelve", "out-of-service", "return-to-service", "Ack", "", "delete"];

/** Values where a number, a time or an id is expected, as a client might send them. */
const oddText = fc.oneof(
  fc.constantFrom("", "0", "1", "8", "12", "1000", "1001", "-1", "3", "10000", "10001", "1e3", "0x10", " 5", "NaN", "Infinity", "8640000000000001", "9999999999999999",
    "2024-11-14T05:00:00Z", "2024-11-14 05:00:00+01:00", "2024-02-30T00:00:00Z", "1969-12-31T23:59:59Z", "2024-11-14T05:00:60Z", "+275760-09-13T00:00:00Z", "vm2.outlet.temp", "dewpoint.bf2-outlet.marginK", "no.such.series", "x".repeat(201)),
  fc.integer({ min: -1e6, max: 9e15 }).map(String),
  fc.date({ noInvalidDate: true }).map((d) => d.toISOString()),
  fc.string({ maxLength: 30 }),
);
/** A query string: known and unknown keys, repeated keys, encoded and raw (sometimes broken) escapes. */
const query = fc.array(fc.tuple(fc.constantFrom(...KEYS), oddText, fc.constantFrom("enc", "enc", "raw")), { maxLength: 5 }).map((pairs) =>
  pairs.map(([k, v, how]) => `${encodeURIComponent(k)}=${how === "enc" ? encodeURIComponent(v) : v.replace(/[^\x21-\x7e]/g, "").replace(/[#&]/g, "")}`).join("&"),
);

/** JSON bodies: the fields the routes know with odd values, unknown fields, and non-objects. */
const oddJson = fc.oneof(fc.jsonValue({ maxDepth: 2 }), fc.string({ maxLength: 600 }), fc.integer(), fc.constantFrom(null, true, 0, 1, 3600, -1, 1.5, 2 ** 53, "", " ", "\u0000", "a\nb"));
const bodyObject = fc.dictionary(fc.constantFrom("note", "reason", "durationS", "oneShot", "by", "role", "user", "password", "token", "secret", "endpoint", "keys", "notes", "__proto__"), oddJson, { maxKeys: 4 });
const rawBody = fc.oneof(
  { weight: 6, arbitrary: bodyObject.map((o) => JSON.stringify(o)) },
  { weight: 2, arbitrary: fc.json({ maxDepth: 3 }) },
  { weight: 1, arbitrary: fc.string({ maxLength: 100 }) },
  { weight: 1, arbitrary: fc.constantFrom("", "{", '{"note":', "null", "[]", '{"__proto__":{"x":1}}', "x".repeat(17 * 1024)) },
);
const contentType = fc.constantFrom("application/json", "application/json; charset=utf-8", "APPLICATION/JSON", "text/plain", "application/x-www-form-urlencoded", "application/jsonx", undefined);

const request = fc.oneof(
  { weight: 3, arbitrary: fc.record({ method: fc.constant("GET" as const), path: fc.constantFrom(...GET_PATHS), query, auth: fc.boolean(), ackToken: fc.option(fc.string({ maxLength: 40 }).map((s) => s.replace(/[^\x21-\x7e]/g, ""))) }) },
  {
    weight: 4,
    arbitrary: fc.record({
      method: fc.constantFrom("POST" as const, "POST" as const, "DELETE" as const),
      path: fc.constantFrom(...POST_PATHS),
      id: fc.constantFrom(...ADVISORY_IDS),
      cmd: fc.constantFrom(...COMMANDS),
      query,
      auth: fc.constantFrom(true, true, false),
      csrf: fc.constantFrom("good", "good", "bad", "none"),
      contentType,
      body: rawBody,
    }),
  },
);
type Req = typeof request extends fc.Arbitrary<infer T> ? T : never;

async function send(r: Req) {
  const headers: Record<string, string> = {};
  if (r.auth) headers["cookie"] = session.cookie;
  if (r.method === "GET") {
    if (r.ackToken) headers["x-ack-token"] = r.ackToken;
    return app.inject({ method: "GET", url: `${r.path}${r.query ? `?${r.query}` : ""}`, headers });
  }
  if (r.csrf !== "none") headers["x-csrf-token"] = r.csrf === "good" ? session.csrf : "not-the-token";
  if (r.contentType !== undefined) headers["content-type"] = r.contentType;
  const path = r.path.replace("{id}", encodeURIComponent(r.id).replace(/%25/g, "%")).replace("{cmd}", r.cmd);
  return app.inject({ method: r.method, url: `${path}${r.query ? `?${r.query}` : ""}`, headers, payload: r.body });
}

function check(res: Awaited<ReturnType<typeof send>>, r: Req): void {
  const status = res.statusCode;
  const where = `${r.method} ${r.path}: ${status} ${res.body.slice(0, 200)}`;
  expect(status, where).not.toBe(500);
  expect(status < 500 || (status === 503 && r.path === "/api/health"), where).toBe(true);
  if (status >= 400) {
    expect(res.headers["content-type"], where).toMatch(/^application\/json/);
    const body = res.json() as { error?: unknown; message?: unknown };
    expect(typeof body.error, where).toBe("string");
    const reg = API_ERRORS[body.error as keyof typeof API_ERRORS];
    expect(reg, where).toBeDefined();
    expect(reg.status, where).toBe(status);
    expect(typeof body.message === "string" && body.message.trim().length > 0, where).toBe(true);
  }
}

const FULL = 60_000;

describe("fuzz: HTTP endpoints' parameters (app.ts with the fake deps)", () => {
  it("random queries, paths, bodies and content types: never a 500, every 4xx a JSON {error, message}", async () => {
    const seen = new Map<string, number>();
    await assertCountedAsync("http: requests", request, async (r) => {
      const res = await send(r);
      const key = `${res.statusCode} ${res.statusCode >= 400 ? (res.json() as { error: string }).error : "ok"}`;
      seen.set(key, (seen.get(key) ?? 0) + 1);
      check(res, r);
    }, runs(FULL, 400));
    // The requests reach past the gate: answers that took the routes' own paths, not only 401/404.
    const keys = [...seen.keys()];
    expect(keys.some((k) => k.startsWith("200"))).toBe(true);
    for (const code of ["BAD_QUERY", "BAD_BODY", "UNSUPPORTED_MEDIA_TYPE", "UNAUTHENTICATED"]) expect(keys.some((k) => k.endsWith(code)), `${code} among ${keys.join(", ")}`).toBe(true);
    if (process.env["FUZZ_RUNS_SCALE"]) console.log(`http answers: ${[...seen].sort().map(([k, n]) => `${k}×${n}`).join(", ")}`);
  });
});
