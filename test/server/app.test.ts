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

beforeEach(async () => {
  deps = new FakeDeps();
  app = await buildApp(deps);
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
  it("passes the default limit of 100 and returns active and history", async () => {
    deps.acknowledge("co-rate-bf2-outlet", "A. Operator");
    const res = await app.inject({ method: "GET", url: "/api/advisories" });
    expect(res.statusCode).toBe(200);
    expect(deps.calls.advisories.at(-1)).toEqual({ limit: 100 });
    const body = res.json();
    expect(body.active.map((a: { id: string }) => a.id)).toEqual(deps.state.advisories.map((a) => a.id));
    expect(body.history).toHaveLength(1);
    expect(body.history[0]).toMatchObject({ advisoryId: "co-rate-bf2-outlet", transition: "ack", by: "A. Operator" });
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

describe("POST /api/advisories/:id/ack", () => {
  const post = (id: string, payload: unknown, contentType = "application/json") =>
    app.inject({
      method: "POST",
      url: `/api/advisories/${encodeURIComponent(id)}/ack`,
      headers: { "content-type": contentType },
      payload: typeof payload === "string" ? payload : JSON.stringify(payload),
    });

  it("acknowledges, passes who and why, and the daemon's delta follows", async () => {
    const seen: LiveMessage[] = [];
    deps.subscribe((m) => seen.push(m));
    const res = await post("co-rate-bf2-outlet", { by: " A. Operator ", note: "hopper checked" });
    expect(res.statusCode).toBe(200);
    expect(res.json().advisory).toMatchObject({ id: "co-rate-bf2-outlet", state: "ack", ackedBy: "A. Operator", ackedAtMs: FAKE_NOW_MS });
    expect(deps.calls.acknowledge).toEqual([{ id: "co-rate-bf2-outlet", by: "A. Operator", note: "hopper checked" }]);
    expect(seen).toHaveLength(1);
    expect(seen[0]?.type).toBe("delta");
  });

  it("passes the daemon's 404 through", async () => {
    const res = await post("no-such-rule", { by: "A. Operator" });
    expect(expectError(res, "ADVISORY_NOT_FOUND")).toBe('no current advisory with id "no-such-rule"');
  });

  it("passes the daemon's 409 through (already acknowledged)", async () => {
    const res = await post("o2-margin-bf2", { by: "A. Operator" });
    expect(expectError(res, "ADVISORY_CONFLICT")).toContain("already acknowledged (by J. Ferris)");
  });

  it.each([
    [{}, /field "by"/],
    [{ by: "" }, /field "by": expected 1 to 64 printable characters/],
    [{ by: "x".repeat(65) }, /found 65 characters/],
    [{ by: "A", note: "n".repeat(501) }, /field "note": expected at most 500 characters, found 501/],
    [{ by: "A", extra: true }, /found "extra"/],
    [[{ by: "A" }], /found an array of 1/],
    ["{not json", /expected valid JSON/],
    ["", /found an empty body/],
  ])("400 on body %j, nothing reaches the daemon", async (payload, why) => {
    const res = await post("co-rate-bf2-outlet", payload);
    expect(expectError(res, "BAD_BODY")).toMatch(why);
    expect(deps.calls.acknowledge).toHaveLength(0);
  });

  it("refuses a body that is not JSON (415), also text/plain", async () => {
    for (const type of ["text/plain", "application/x-www-form-urlencoded"]) {
      const res = await post("co-rate-bf2-outlet", "by=A", type);
      expect(expectError(res, "UNSUPPORTED_MEDIA_TYPE")).toContain("expected Content-Type application/json");
    }
    expect(deps.calls.acknowledge).toHaveLength(0);
  });

  it("refuses an oversized body (413)", async () => {
    const res = await post("co-rate-bf2-outlet", { by: "A", note: "n".repeat(20_000) });
    expectError(res, "BODY_TOO_LARGE");
  });

  it("refuses an over-long id (400), also one the router itself rejects", async () => {
    const res = await post("x".repeat(201), { by: "A" });
    expect(expectError(res, "BAD_PARAM")).toContain('path parameter "id": expected an advisory id of 1 to 200');
    const longer = await post("x".repeat(300), { by: "A" });
    expect(expectError(longer, "BAD_PARAM")).toContain("expected at most 200 characters");
    expect(longer.headers["x-content-type-options"]).toBe("nosniff");
    expect(deps.calls.acknowledge).toHaveLength(0);
  });

  it("refuses a malformed URL encoding with the JSON error body", async () => {
    const res = await app.inject({ method: "POST", url: "/api/advisories/%E0%A4%A/ack", payload: { by: "A" } });
    expect(expectError(res, "BAD_REQUEST")).toContain("percent-encoding");
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
    expect(expectError(api, "NOT_FOUND")).toContain("expected one of /api/health");
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
