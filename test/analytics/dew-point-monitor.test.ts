// The condensation monitor driven through a small fake TickContext. Expected numbers
// come from outside sources named beside each check.
import fc from "fast-check";
import psychrolib from "psychrolib";
import { describe, expect, it } from "vitest";
import { acidDewPointSchema } from "../../src/config/sections/acid-dew-point.js";
import { dewPointSchema, type DewPointFamilyConfig } from "../../src/config/sections/dew-point.js";
import { moistureSourceSchema } from "../../src/config/sections/moisture-source.js";
import { parseConfig } from "../../src/config/load.js";
import type { TickContext } from "../../src/core/calculator.js";
import { DewPointMonitor } from "../../src/analytics/dew-point-monitor.js";
import type { Trust } from "../../src/analytics/signal-state.js";

const P_ATM = 101_325;
const T0 = Date.UTC(2026, 2, 1, 6, 0, 0);

type Inputs = Record<string, number | Trust>;

/** A TickContext over fixed inputs: a number is a trusted value, a Trust is taken as given. */
function fakeCtx(nowMs: number, inputs: Inputs) {
  const emitted = new Map<string, { value: number | null; reason: string }>();
  const ctx: TickContext = {
    nowMs,
    trust: (id) => {
      const v = inputs[id];
      if (v === undefined) return { ok: false, value: null, reason: `${id}: no data yet` };
      return typeof v === "number" ? { ok: true, value: v, reason: "" } : v;
    },
    phase: () => null,
    emit: (key, value, reason) => void emitted.set(key, { value, reason }),
    derived: (key) => emitted.get(key)?.value,
  };
  return { ctx, emitted };
}

const stale = (id: string): Trust => ({ ok: false, value: null, reason: `${id}: no data for 12 s` });
const functionCheck = (id: string): Trust => ({ ok: false, value: null, reason: `${id}: analyser in function check` });
const uncertain = (id: string, v: number): Trust => ({ ok: false, value: v, reason: `${id}: uncertain (sensor drift)` });

function family(parts: { moistureSources?: unknown[]; dewPoints?: unknown[]; acidDewPoints?: unknown[] }): DewPointFamilyConfig {
  return {
    moistureSources: (parts.moistureSources ?? []).map((m) => moistureSourceSchema.parse(m)),
    dewPoints: (parts.dewPoints ?? []).map((d) => dewPointSchema.parse(d)),
    acidDewPoints: (parts.acidDewPoints ?? []).map((a) => acidDewPointSchema.parse(a)),
  };
}

const analyser = { id: "h2o", name: "H2O analyser", kind: "analyser", signal: "h2o.sig" };
const location = (extra: Record<string, unknown> = {}) => ({ id: "out", name: "Filter outlet", unit: "bf", gasTemperature: "gas.temp", moisture: "h2o", ...extra });
const atm = { fallbackPa: P_ATM };

function run(cfg: DewPointFamilyConfig, inputs: Inputs, baro: { signal?: string; fallbackPa: number } = atm, nowMs = T0) {
  const m = new DewPointMonitor(cfg, baro);
  const { ctx, emitted } = fakeCtx(nowMs, inputs);
  m.tick(ctx);
  return { view: m.view(), emitted, monitor: m };
}

describe("water dew point from an H2O analyser", () => {
  // DESIGN.md §4 check values at 101.325 kPa and 96 kPa (computed with python3-iapws), to 0.01 K.
  it.each([
    [10, P_ATM, 0, 46.07],
    [15, P_ATM, 0, 54.24],
    [20, P_ATM, 0, 60.34],
    [25, P_ATM, 0, 65.26],
    [10, 100_000, -4_000, 45.01],
  ])("%d vol %% at barometric %d Pa, gauge %d Pa -> %f °C (DESIGN.md §4, python3-iapws)", (h2o, baroPa, gaugePa, expectedC) => {
    const cfg = family({ moistureSources: [analyser], dewPoints: [location({ gaugePressure: "gauge" })] });
    const { view, emitted } = run(cfg, { "h2o.sig": h2o, "gas.temp": 80, gauge: gaugePa }, { fallbackPa: baroPa });
    const d = view.dewPoints[0]!;
    expect(d.status).toBe("ok");
    expect(d.absPressurePa).toBe(baroPa + gaugePa);
    expect(d.moistureSourceId).toBe("h2o");
    expect(d.moistureSourceKind).toBe("analyser");
    expect(Math.abs(d.dewPointC! - expectedC)).toBeLessThanOrEqual(0.01);
    // DESIGN.md §4: margin = gas temperature − dew point.
    expect(d.marginK).toBeCloseTo(80 - d.dewPointC!, 12);
    expect(emitted.get("dewpoint.out.marginK")!.value).toBe(d.marginK);
    expect(emitted.get("moisture.h2o.h2oPctVol")!.value).toBe(h2o);
  });

  it("uses the measured barometric pressure while it is trusted, else the configured one, and says which", () => {
    // DESIGN.md §4: 10 vol % at 96 kPa -> 45.01 °C; at 101.325 kPa -> 46.07 °C (python3-iapws).
    const cfg = family({ moistureSources: [analyser], dewPoints: [location()] });
    const measured = run(cfg, { "h2o.sig": 10, "gas.temp": 80, baro: 96_000 }, { signal: "baro", fallbackPa: P_ATM });
    expect(Math.abs(measured.view.dewPoints[0]!.dewPointC! - 45.01)).toBeLessThanOrEqual(0.01);
    expect(measured.view.dewPointSummary[0]).toMatchObject({ barometricPa: 96_000, barometricSource: "measured" });
    const fallback = run(cfg, { "h2o.sig": 10, "gas.temp": 80, baro: stale("baro") }, { signal: "baro", fallbackPa: P_ATM });
    expect(Math.abs(fallback.view.dewPointSummary[0]!.barometricPa - P_ATM)).toBe(0);
    expect(fallback.view.dewPointSummary[0]!.barometricSource).toBe("configured");
    expect(fallback.view.dewPointSummary[0]!.barometricReason).toMatch(/configured 1013\.3 hPa \(baro: no data for 12 s\)/);
    expect(Math.abs(fallback.view.dewPoints[0]!.dewPointC! - 46.07)).toBeLessThanOrEqual(0.01);
  });
});

describe("water dew point from a mass balance", () => {
  // DESIGN.md §4 worked figure (checked there with python3-iapws): 3.3 t/h of water into
  // 70,000 Nm³/h (wet) of gas at 8 % H2O -> 13.10 % H2O, dew point 51.45 °C at 101.325 kPa.
  // 33 t/h of coal dried from 10 % to 0 % gives 33·1000·(0.10 − 0)/(1 − 0) = 3,300 kg/h.
  const balance = (over: Record<string, unknown> = {}) => ({
    id: "bal",
    name: "Mill moisture balance",
    kind: "mass-balance",
    coalFeed: "feed",
    rawMoisture: { pctMass: 10 },
    productMoisture: { massFraction: 0 },
    gasFlowNm3PerH: { value: 70_000 },
    incomingGasH2o: { pctVol: 8 },
    ...over,
  });

  it("constants in the config: 13.10 %, 51.45 °C", () => {
    const cfg = family({ moistureSources: [balance()], dewPoints: [location({ moisture: "bal" })] });
    const { view } = run(cfg, { feed: 33, "gas.temp": 70 });
    const s = view.moistureSources[0]!;
    expect(s.status).toBe("ok");
    expect(s.evaporatedWaterKgPerH).toBeCloseTo(3300, 9);
    expect(Math.abs(s.h2oPctVol! - 13.1)).toBeLessThan(0.005);
    expect(Math.abs(view.dewPoints[0]!.dewPointC! - 51.45)).toBeLessThanOrEqual(0.01);
    expect(view.dewPoints[0]!.moistureSourceKind).toBe("mass-balance");
  });

  it("signals for every input give the same figure", () => {
    const cfg = family({
      moistureSources: [
        balance({ rawMoisture: { signal: "raw" }, productMoisture: { signal: "prod" }, gasFlowNm3PerH: { signal: "flow" }, incomingGasH2o: { signal: "hgg.h2o" } }),
      ],
      dewPoints: [location({ moisture: "bal" })],
    });
    const { view } = run(cfg, { feed: 33, raw: 10, prod: 0, flow: 70_000, "hgg.h2o": 8, "gas.temp": 70 });
    expect(Math.abs(view.moistureSources[0]!.h2oPctVol! - 13.1)).toBeLessThan(0.005);
    expect(Math.abs(view.dewPoints[0]!.dewPointC! - 51.45)).toBeLessThanOrEqual(0.01);
  });

  it("a flow metered after the mill (evaporated water included) gives the same figure", () => {
    // Same worked figure: 3,300 kg/h is 3300/18.015·22.414 = 4,105.81 Nm³/h of vapour, so the
    // outlet carries 74,105.81 Nm³/h (ideal gas, 22.414 Nm³/kmol, 18.015 kg/kmol).
    const cfg = family({ moistureSources: [balance({ gasFlowNm3PerH: { value: 74_105.81182, measuredAt: "mill-outlet" } })], dewPoints: [location({ moisture: "bal" })] });
    const { view } = run(cfg, { feed: 33, "gas.temp": 70 });
    expect(Math.abs(view.moistureSources[0]!.h2oPctVol! - 13.1)).toBeLessThan(0.005);
    expect(Math.abs(view.dewPoints[0]!.dewPointC! - 51.45)).toBeLessThanOrEqual(0.01);
  });

  it("shows the analyser and the balance side by side with their disagreement", () => {
    // Analyser 15 % -> 54.24 °C (DESIGN.md check value); balance 13.10 % -> 51.45 °C (worked figure):
    // the balance reads 1.90 %-pt and 2.79 K lower.
    const cfg = family({ moistureSources: [analyser, balance()], dewPoints: [location({ compareWith: ["bal"] })] });
    const { view, emitted } = run(cfg, { "h2o.sig": 15, feed: 33, "gas.temp": 70 });
    const d = view.dewPoints[0]!;
    expect(d.moistureSourceId).toBe("h2o");
    expect(Math.abs(d.dewPointC! - 54.24)).toBeLessThanOrEqual(0.01);
    const c = d.comparisons[0]!;
    expect(c).toMatchObject({ id: "bal", kind: "mass-balance", status: "ok" });
    expect(Math.abs(c.dewPointC! - 51.45)).toBeLessThanOrEqual(0.01);
    expect(Math.abs(c.h2oDifferencePctVol! - (13.1 - 15))).toBeLessThan(0.005);
    expect(Math.abs(c.dewPointDifferenceK! - (51.45 - 54.24))).toBeLessThanOrEqual(0.02);
    expect(emitted.get("dewpoint.out.h2oDisagreementPctVol")!.value).toBeCloseTo(Math.abs(c.h2oDifferencePctVol!), 12);
    expect(emitted.get("dewpoint.out.dewPointDisagreementK")!.value).toBeCloseTo(Math.abs(c.dewPointDifferenceK!), 12);
  });

  it("the disagreement is unknown when the compared source is", () => {
    const cfg = family({ moistureSources: [analyser, balance()], dewPoints: [location({ compareWith: ["bal"] })] });
    const { view, emitted } = run(cfg, { "h2o.sig": 15, feed: stale("feed"), "gas.temp": 70 });
    expect(view.dewPoints[0]!.status).toBe("ok");
    expect(view.dewPoints[0]!.comparisons[0]!.status).toBe("unknown");
    expect(emitted.get("dewpoint.out.dewPointDisagreementK")).toEqual({ value: null, reason: expect.stringMatching(/feed: no data for 12 s/) });
  });
});

describe("water dew point from a humidity sensor, against psychrolib", () => {
  const p = psychrolib;
  p.SetUnitSystem(p.SI);
  const humidity = { id: "rh", name: "Humidity probe", kind: "humidity", relativeHumidity: "rh.sig", temperature: "rh.temp", gaugePressure: "rh.gauge" };

  it("vol % and dew point match psychrolib GetVapPresFromRelHum / GetTDewPointFromRelHum (SI)", () => {
    // Oracle: psychrolib (ASHRAE Handbook Fundamentals 2017 ch. 1); tolerances as in test/physics
    // (saturation pressures agree within 0.025 %, dew points within 0.01 K).
    for (const [tempC, rhPct] of [[40, 80], [65, 55], [90, 30]] as const) {
      const cfg = family({ moistureSources: [humidity], dewPoints: [location({ moisture: "rh" })] });
      const { view } = run(cfg, { "rh.sig": rhPct, "rh.temp": tempC, "rh.gauge": 0, "gas.temp": 95 });
      const oraclePct = ((p.GetVapPresFromRelHum(tempC, rhPct / 100) as number) / P_ATM) * 100;
      expect(Math.abs(view.moistureSources[0]!.h2oPctVol! / oraclePct - 1)).toBeLessThan(2.5e-4);
      expect(Math.abs(view.dewPoints[0]!.dewPointC! - (p.GetTDewPointFromRelHum(tempC, rhPct / 100) as number))).toBeLessThan(0.01);
    }
  });

  it("a sensor at another pressure than the location: the vapour scales with the absolute pressure", () => {
    // Sensor at −50 mbar gauge, location at −5 mbar: p_w(location) = p_w(sensor)·p_loc/p_sensor
    // (ideal gas, same mole fraction); oracle psychrolib GetVapPresFromRelHum + GetTDewPointFromVapPres.
    const cfg = family({ moistureSources: [humidity], dewPoints: [location({ moisture: "rh", gaugePressure: "loc.gauge" })] });
    const { view } = run(cfg, { "rh.sig": 60, "rh.temp": 70, "rh.gauge": -5_000, "loc.gauge": -500, "gas.temp": 95 });
    const pSensor = P_ATM - 5_000;
    const pLoc = P_ATM - 500;
    const pwLoc = ((p.GetVapPresFromRelHum(70, 0.6) as number) * pLoc) / pSensor;
    expect(view.moistureSources[0]!.sensorAbsPressurePa).toBe(pSensor);
    expect(Math.abs(view.dewPoints[0]!.dewPointC! - (p.GetTDewPointFromVapPres(95, pwLoc) as number))).toBeLessThan(0.01);
  });

  it("is unknown when the reading is out of the physics' range (RH over 100 %)", () => {
    const cfg = family({ moistureSources: [humidity], dewPoints: [location({ moisture: "rh" })] });
    const { view } = run(cfg, { "rh.sig": 102, "rh.temp": 60, "rh.gauge": 0, "gas.temp": 95 });
    expect(view.moistureSources[0]!.status).toBe("unknown");
    expect(view.moistureSources[0]!.reason).toMatch(/rhPct .*got 102/);
    expect(view.dewPoints[0]!.marginK).toBeNull();
  });
});

describe("margin trend and time to condensation", () => {
  const cfg = () => family({ moistureSources: [analyser], dewPoints: [location({ trendWindowS: 600 })] });

  /** Ticks once a second for `seconds`, gas temperature from `gasAt(t)`; returns the monitor and the last emits. */
  function drive(monitor: DewPointMonitor, fromS: number, seconds: number, gasAt: (tS: number) => number | Trust, h2o = 10) {
    let last = fakeCtx(T0, {});
    for (let k = 0; k <= seconds; k++) {
      const tS = fromS + k;
      last = fakeCtx(T0 + tS * 1000, { "h2o.sig": h2o, "gas.temp": gasAt(tS) });
      monitor.tick(last.ctx);
    }
    return last.emitted;
  }

  it("a linear decline of 0.5 K/min: trend −0.5 K/min, time to condensation margin / (0.5/60) s", () => {
    // Exact: least squares through points on a straight line returns that line's slope.
    const m = new DewPointMonitor(cfg(), atm);
    const emitted = drive(m, 0, 900, (t) => 90 - (0.5 / 60) * t);
    const d = m.view().dewPoints[0]!;
    expect(d.marginTrendKPerMin!).toBeCloseTo(-0.5, 9);
    const marginNow = 90 - (0.5 / 60) * 900 - d.dewPointC!;
    expect(d.marginK!).toBeCloseTo(marginNow, 9);
    expect(d.timeToCondensationS!).toBeCloseTo(marginNow / (0.5 / 60), 6);
    expect(emitted.get("dewpoint.out.marginTrendKPerMin")!.value).toBeCloseTo(-0.5, 9);
    expect(emitted.get("dewpoint.out.timeToCondensationS")!.value).toBeCloseTo(marginNow / (0.5 / 60), 6);
    expect(emitted.get("dewpoint.lowest.timeToCondensationS")!.value).toBeCloseTo(marginNow / (0.5 / 60), 6);
    expect(m.view().dewPointSummary[0]).toMatchObject({ shortestTimeLocationId: "out", lowestMarginTrendKPerMin: d.marginTrendKPerMin });
  });

  it("waits for half the window before showing a trend, and starts again after an unknown margin", () => {
    const m = new DewPointMonitor(cfg(), atm);
    let emitted = drive(m, 0, 299, (t) => 80 - 0.01 * t);
    expect(emitted.get("dewpoint.out.marginTrendKPerMin")).toEqual({ value: null, reason: expect.stringMatching(/needs 300 s of known margin .*has 299 s/) });
    emitted = drive(m, 300, 0, (t) => 80 - 0.01 * t);
    expect(emitted.get("dewpoint.out.marginTrendKPerMin")!.value).toBeCloseTo(-0.6, 9);
    // One tick with the gas temperature stale: unknown, then the window starts again.
    emitted = drive(m, 301, 0, () => stale("gas.temp"));
    expect(emitted.get("dewpoint.out.marginTrendKPerMin")).toEqual({ value: null, reason: expect.stringMatching(/margin unknown: gas.temp: no data for 12 s/) });
    emitted = drive(m, 302, 10, (t) => 80 - 0.01 * t);
    expect(emitted.get("dewpoint.out.marginTrendKPerMin")!.reason).toMatch(/after the margin was unknown; has 10 s/);
  });

  it("a margin that holds or grows predicts no condensation; at or below the dew point it is now", () => {
    const m = new DewPointMonitor(cfg(), atm);
    let emitted = drive(m, 0, 600, (t) => 70 + 0.001 * t);
    expect(emitted.get("dewpoint.out.marginTrendKPerMin")!.value).toBeGreaterThan(0);
    // Known trend, not shrinking: +Infinity ("not approaching"), so a rule on it clears; null is only "unknown".
    expect(emitted.get("dewpoint.out.timeToCondensationS")).toEqual({ value: Number.POSITIVE_INFINITY, reason: expect.stringMatching(/not shrinking/) });
    expect(emitted.get("dewpoint.lowest.timeToCondensationS")).toEqual({ value: Number.POSITIVE_INFINITY, reason: "no margin is shrinking" });
    // 10 vol % at 1 atm condenses at 46.07 °C (DESIGN.md §4): gas at 45 °C is below it.
    const m2 = new DewPointMonitor(cfg(), atm);
    emitted = drive(m2, 0, 600, () => 45);
    expect(emitted.get("dewpoint.out.marginK")!.value!).toBeLessThan(0);
    expect(emitted.get("dewpoint.out.timeToCondensationS")!.value).toBe(0);
  });
});

describe("plant-wide summary", () => {
  const cfg = family({
    moistureSources: [analyser],
    dewPoints: [
      location({ id: "mill", name: "Mill outlet", gasTemperature: "t.mill" }),
      location({ id: "out", name: "Filter outlet", gasTemperature: "t.out" }),
      location({ id: "hop", name: "Hopper", gasTemperature: "t.hop" }),
    ],
  });

  it("names the lowest margin and where it is", () => {
    // 10 vol % at 1 atm: dew point 46.07 °C (DESIGN.md §4, python3-iapws); lowest is the hopper at 62 °C.
    const { view, emitted } = run(cfg, { "h2o.sig": 10, "t.mill": 90, "t.out": 70, "t.hop": 62 });
    const s = view.dewPointSummary[0]!;
    expect(s).toMatchObject({ id: "plant", status: "ok", locationId: "hop", locationName: "Hopper", knownLocations: 3, totalLocations: 3 });
    expect(Math.abs(s.lowestMarginK! - (62 - 46.07))).toBeLessThanOrEqual(0.01);
    expect(emitted.get("dewpoint.lowest.marginK")!.value).toBe(s.lowestMarginK);
  });

  it("with one location unknown: the lowest known is shown as partial, the plant-wide key is unknown", () => {
    const { view, emitted } = run(cfg, { "h2o.sig": 10, "t.mill": 90, "t.out": 70, "t.hop": stale("t.hop") });
    const s = view.dewPointSummary[0]!;
    expect(s).toMatchObject({ status: "partial", locationId: "out", knownLocations: 2, unknownLocations: [{ id: "hop", reason: "t.hop: no data for 12 s" }] });
    expect(emitted.get("dewpoint.lowest.marginK")).toEqual({ value: null, reason: expect.stringMatching(/unknown at hop: t.hop: no data for 12 s; the lowest known is 23\.9 K at out/) });
  });
});

describe("unknown whenever an input cannot be trusted", () => {
  const balanceCfg = () =>
    family({
      moistureSources: [
        {
          id: "bal",
          name: "Balance",
          kind: "mass-balance",
          coalFeed: "feed",
          rawMoisture: { signal: "raw" },
          productMoisture: { signal: "prod" },
          gasFlowNm3PerH: { signal: "flow" },
          incomingGasH2o: { signal: "inc" },
        },
      ],
      dewPoints: [location({ moisture: "bal", gaugePressure: "gauge" })],
    });
  const good: Record<string, number> = { feed: 30, raw: 12, prod: 1.5, flow: 70_000, inc: 7, gauge: -300, "gas.temp": 75 };
  const broken = [stale, functionCheck, (id: string) => uncertain(id, good[id]!)];

  it("any subset of untrusted inputs makes the margin, its trend and the plant-wide keys unknown, naming each", () => {
    fc.assert(
      fc.property(
        fc.subarray(Object.keys(good), { minLength: 1 }),
        fc.integer({ min: 0, max: broken.length - 1 }),
        (bad, how) => {
          const inputs: Inputs = { ...good };
          for (const id of bad) inputs[id] = broken[how]!(id);
          const { view, emitted } = run(balanceCfg(), inputs);
          const d = view.dewPoints[0]!;
          const reason = emitted.get("dewpoint.out.marginK")!.reason;
          return (
            d.status === "unknown" &&
            d.marginK === null &&
            emitted.get("dewpoint.out.marginK")!.value === null &&
            emitted.get("dewpoint.out.marginTrendKPerMin")!.value === null &&
            emitted.get("dewpoint.out.timeToCondensationS")!.value === null &&
            emitted.get("dewpoint.lowest.marginK")!.value === null &&
            bad.every((id) => reason.includes(`${id}:`))
          );
        },
      ),
    );
  });

  it("with every input trusted the same location is known", () => {
    const { view } = run(balanceCfg(), good);
    expect(view.dewPoints[0]!.status).toBe("ok");
    expect(view.dewPoints[0]!.marginK).not.toBeNull();
  });
});

describe("dew point rises with moisture and with pressure at a location", () => {
  // Physics (DESIGN.md §4): T_dew = Ts(x·p_abs) and the saturation line rises monotonically (IAPWS-IF97 Region 4).
  it("more water, same pressure -> higher dew point; same water, higher pressure -> higher dew point", () => {
    const cfg = family({ moistureSources: [analyser], dewPoints: [location({ gaugePressure: "gauge" })] });
    const dewAt = (h2o: number, gauge: number) => run(cfg, { "h2o.sig": h2o, gauge, "gas.temp": 120 }).view.dewPoints[0]!.dewPointC!;
    fc.assert(
      fc.property(
        fc.double({ min: 1, max: 60, noNaN: true }),
        fc.double({ min: 1, max: 60, noNaN: true }),
        fc.double({ min: -20_000, max: 20_000, noNaN: true }),
        fc.double({ min: -20_000, max: 20_000, noNaN: true }),
        (x1, x2, g1, g2) => {
          fc.pre(Math.abs(x1 - x2) > 1e-6 && Math.abs(g1 - g2) > 1e-3);
          const [xl, xh] = x1 < x2 ? [x1, x2] : [x2, x1];
          const [gl, gh] = g1 < g2 ? [g1, g2] : [g2, g1];
          return dewAt(xh, gl) > dewAt(xl, gl) && dewAt(xl, gh) > dewAt(xl, gl);
        },
      ),
    );
  });
});

describe("sulfuric acid dew point", () => {
  const acid = (so3: unknown, method = "verhoff-banchero") => ({
    id: "bfa",
    name: "Filter acid dew point",
    unit: "bf",
    method,
    moisture: "h2o",
    so3,
    coldestTemperatures: ["t.in", "t.wall", "t.out"],
  });
  const temps = { "t.in": 150, "t.wall": 128, "t.out": 140 };

  it.each([
    ["verhoff-banchero", 137.3, "Verhoff & Banchero (1974)"],
    ["okkes", 133.3, "Okkes (1987)"],
  ])("%s at 1 atm, 10 %% H2O, 10 ppm SO3 measured -> %f °C (DESIGN.md §4 check value, ±0.1 K)", (method, expectedC, methodName) => {
    const cfg = family({ moistureSources: [analyser], acidDewPoints: [acid({ from: "measured", signal: "so3" }, method)] });
    const { view, emitted } = run(cfg, { "h2o.sig": 10, so3: 10, ...temps });
    const a = view.acidDewPoints[0]!;
    expect(a).toMatchObject({ status: "ok", method, methodName, so3From: "measured", coldestSignalId: "t.wall", coldestTempC: 128 });
    expect(Math.abs(a.acidDewPointC! - expectedC)).toBeLessThanOrEqual(0.1);
    expect(a.marginK).toBeCloseTo(128 - a.acidDewPointC!, 12);
    expect(emitted.get("aciddewpoint.bfa.marginK")!.value).toBe(a.marginK);
    expect(view.dewPointSummary[0]).toMatchObject({ acidLocationId: "bfa", lowestAcidMarginK: a.marginK });
  });

  it("from SO2 with a conversion: 500 ppm at 2 % is 10 ppm SO3 -> the same check value", () => {
    // DESIGN.md §4: SO3 = SO2 · conversion fraction; 10 ppm SO3, 10 % H2O, 1 atm -> V&B 137.3 °C.
    const cfg = family({ moistureSources: [analyser], acidDewPoints: [acid({ from: "so2", signal: "so2", conversionPct: 2 })] });
    const a = run(cfg, { "h2o.sig": 10, so2: 500, ...temps }).view.acidDewPoints[0]!;
    expect(a.so3Ppm).toBeCloseTo(10, 12);
    expect(Math.abs(a.acidDewPointC! - 137.3)).toBeLessThanOrEqual(0.1);
  });

  it("from the fuel's sulfur: 0.5 t/h at 1 % S into 20,000 Nm³/h -> 174.78 ppm SO2", () => {
    // Hand-computed: S = 0.5·1000·0.01 = 5 kg/h = 5/32.06 = 0.155958 kmol/h SO2; gas 20,000/22.414
    // = 892.299 kmol/h; SO2 = 1e6·0.155958/892.299 = 174.78 ppm. At 2 % conversion: 3.4956 ppm SO3.
    const cfg = family({
      moistureSources: [analyser],
      acidDewPoints: [acid({ from: "fuel-sulfur", fuelFeed: "fuel", sulfurPctMass: 1, gasFlowNm3PerH: { value: 20_000 }, conversionPct: 2 })],
    });
    const a = run(cfg, { "h2o.sig": 10, fuel: 0.5, ...temps }).view.acidDewPoints[0]!;
    expect(a.so2Ppm!).toBeCloseTo(174.78, 2);
    expect(a.so3Ppm!).toBeCloseTo(3.4956, 4);
    expect(a.so3From).toBe("fuel-sulfur");
    // Less SO3 than the 10 ppm check point: a lower acid dew point than 137.3 °C (V&B rises with p_SO3).
    expect(a.acidDewPointC!).toBeLessThan(137.3);
  });

  it("the margin is unknown when any listed temperature is untrusted, the acid dew point stays known", () => {
    const cfg = family({ moistureSources: [analyser], acidDewPoints: [acid({ from: "measured", signal: "so3" })] });
    const { view, emitted } = run(cfg, { "h2o.sig": 10, so3: 10, ...temps, "t.out": stale("t.out") });
    const a = view.acidDewPoints[0]!;
    expect(a.status).toBe("unknown");
    expect(a.marginK).toBeNull();
    expect(a.coldestSignalId).toBeNull();
    expect(Math.abs(a.acidDewPointC! - 137.3)).toBeLessThanOrEqual(0.1);
    expect(emitted.get("aciddewpoint.bfa.marginK")).toEqual({ value: null, reason: "t.out: no data for 12 s" });
  });

  it("is unknown with the reason when SO3, SO2, fuel feed or moisture cannot be trusted, or there is no SO3", () => {
    const so2Cfg = family({ moistureSources: [analyser], acidDewPoints: [acid({ from: "so2", signal: "so2", conversionPct: 2 })] });
    for (const [inputs, why] of [
      [{ "h2o.sig": 10, so2: functionCheck("so2"), ...temps }, /so2: analyser in function check/],
      [{ "h2o.sig": stale("h2o.sig"), so2: 500, ...temps }, /moisture source h2o: h2o.sig: no data for 12 s/],
      [{ "h2o.sig": 10, so2: 0, ...temps }, /no SO3 in the gas/],
    ] as const) {
      const a = run(so2Cfg, inputs).view.acidDewPoints[0]!;
      expect(a.acidDewPointC).toBeNull();
      expect(a.marginK).toBeNull();
      expect(a.reason).toMatch(why);
    }
  });
});

describe("building the monitor", () => {
  it("from a parsed config, as the engine builds it", () => {
    const cfg = parseConfig(
      `site: { name: Testfield, plant: Line 1, barometricPressureHPa: 1013.25 }
sources: [{ id: m, kind: mqtt, url: "mqtt://127.0.0.1:18831" }]
signals:
  - { id: a.temp, name: Gas temperature, tag: TT-1, source: m, topic: t/1, unit: degC, expectedPeriodS: 1 }
  - { id: a.h2o, name: Moisture, tag: AT-2, source: m, topic: t/2, unit: pctVol, expectedPeriodS: 1 }
units: [{ id: u1, name: Filter, kind: bag-filter }]
moistureSources: [{ id: m1, name: Analyser, kind: analyser, signal: a.h2o }]
dewPoints: [{ id: d1, name: Outlet, unit: u1, gasTemperature: a.temp, moisture: m1 }]
`,
      "plant.yaml",
    );
    const m = new DewPointMonitor(cfg, { fallbackPa: P_ATM });
    const { ctx } = fakeCtx(T0, { "a.h2o": 20, "a.temp": 75 });
    m.tick(ctx);
    // DESIGN.md §4: 20 vol % at 101.325 kPa -> 60.34 °C.
    expect(Math.abs(m.view().dewPoints[0]!.dewPointC! - 60.34)).toBeLessThanOrEqual(0.01);
  });

});
