// GET /api/rules and GET /api/handover through fastify's inject(): the rules of the shipped demo
// config (config/demo.yaml) as the dashboard receives them, the handover's query, and the login
// rule they share with the other views.
import { fileURLToPath } from "node:url";
import type { FastifyInstance } from "fastify";
import { afterEach, describe, expect, it } from "vitest";
import { loadConfig } from "../../src/config/load.js";
import { buildApp, type BuildAppOptions } from "../../src/server/app.js";
import type { AppDeps } from "../../src/server/deps.js";
import { computeHandover } from "../../src/server/handover.js";
import { ruleViews } from "../../src/server/rules.js";
import { FakeDeps, FAKE_NOW_MS, TEST_SCRYPT } from "./fake-deps.js";

const DEMO = loadConfig(fileURLToPath(new URL("../../config/demo.yaml", import.meta.url)));
const PASSWORD = "tarnholm-line2-handover";
let app: FastifyInstance;
let handoverCalls: number[];

async function setup(withViews: boolean, opts: BuildAppOptions = {}): Promise<FakeDeps> {
  const deps = new FakeDeps();
  await deps.addUser("v.viewer", "viewer", PASSWORD);
  handoverCalls = [];
  const extra: Partial<AppDeps> = withViews
    ? {
        rules: () => ruleViews(DEMO),
        handover: (hours) => {
          handoverCalls.push(hours);
          return computeHandover({ fromMs: FAKE_NOW_MS - hours * 3_600_000, toMs: FAKE_NOW_MS, plant: { units: [], dewPoints: [], coPoints: [] }, transitions: [], states: [], series: () => [] });
        },
      }
    : {};
  app = await buildApp(Object.assign(deps, extra), { ...opts, auth: { dummyScrypt: TEST_SCRYPT, ...opts.auth } });
  return deps;
}

afterEach(async () => {
  await app?.close();
});

describe("GET /api/rules", () => {
  it("lists every rule of the config with all its tiers' limits, the quantity's unit and the texts", async () => {
    await setup(true);
    const res = await app.inject({ method: "GET", url: "/api/rules" });
    expect(res.statusCode).toBe(200);
    expect(res.headers["cache-control"]).toBe("no-store");
    const { rules } = res.json() as { rules: ReturnType<typeof ruleViews> };
    expect(rules.map((r) => r.id)).toEqual(DEMO.rules.map((r) => r.id));
    // config/demo.yaml: co-gradient-bf2 on co.bf2-outlet.gradientPpmPerMin, caution 5, warning 15 (ppm/min).
    const g = rules.find((r) => r.id === "co-gradient-bf2")!;
    expect(g).toMatchObject({ quantity: "co.bf2-outlet.gradientPpmPerMin", quantityUnit: "ppm/min", direction: "high", tiers: { caution: 5, warning: 15 }, states: null, tier: null, unitId: "bf2" });
    expect(g.origin.length).toBeGreaterThan(0);
    // A raw signal's rule takes the signal's canonical unit: bf2.outlet.co is in ppm.
    expect(rules.find((r) => r.id === "co-level-bf2")).toMatchObject({ quantity: "bf2.outlet.co", quantityUnit: "ppm", tiers: { caution: 150, warning: 400 } });
    // Each rule is either a threshold rule or a state rule.
    for (const r of rules) expect((r.tiers === null) !== (r.states === null), r.id).toBe(true);
  });

  it("refuses query parameters, and answers 404 when the daemon does not offer it", async () => {
    await setup(true);
    expect((await app.inject({ method: "GET", url: "/api/rules?unit=bf2" })).json().error).toBe("BAD_QUERY");
    await app.close();
    await setup(false);
    expect((await app.inject({ method: "GET", url: "/api/rules" })).statusCode).toBe(404);
  });
});

describe("GET /api/handover", () => {
  it("takes hours=8 (default) or 12 and refuses anything else", async () => {
    await setup(true);
    const def = await app.inject({ method: "GET", url: "/api/handover" });
    expect(def.statusCode).toBe(200);
    expect(def.json()).toMatchObject({ hours: 8, toMs: FAKE_NOW_MS });
    expect((await app.inject({ method: "GET", url: "/api/handover?hours=12" })).json().hours).toBe(12);
    for (const bad of ["hours=24", "hours=8.0", "hours=", "hours=8&hours=12", "span=8"]) {
      const res = await app.inject({ method: "GET", url: `/api/handover?${bad}` });
      expect(res.statusCode, bad).toBe(400);
      expect(res.json().error, bad).toBe("BAD_QUERY");
    }
    expect(handoverCalls).toEqual([8, 12]);
  });

  it("follows server.requireLoginForViews like the other views", async () => {
    await setup(true, { auth: { requireLoginForViews: true } });
    for (const url of ["/api/rules", "/api/handover"]) expect((await app.inject({ method: "GET", url })).statusCode, url).toBe(401);
    const login = await app.inject({ method: "POST", url: "/api/login", payload: { user: "v.viewer", password: PASSWORD } });
    const cookie = `millwarden_session=${login.cookies.find((c) => c.name === "millwarden_session")!.value}`;
    for (const url of ["/api/rules", "/api/handover?hours=12"]) expect((await app.inject({ method: "GET", url, headers: { cookie } })).statusCode, url).toBe(200);
  });
});
