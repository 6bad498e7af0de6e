// The core through its three inputs (Sample, Command, Tick) with the demo config.
// Expected numbers come from outside sources named beside each check.
import { join } from "node:path";
import { beforeEach, describe, expect, it } from "vitest";
import { loadConfig } from "../../src/config/load.js";
import { DataClock, Engine } from "../../src/core/engine.js";
import type { AdvisoryTransition, CoreEvent, Sample } from "../../src/core/types.js";

const cfg = loadConfig(join(import.meta.dirname, "../../config/demo.yaml"));
const T0 = Date.UTC(2026, 10, 30, 6, 0, 0);

const sample = (signal: string, value: number, tMs: number, extra: Partial<Sample> = {}): Sample => ({
  signal, value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs, ...extra,
});

/**
 * Jitter of a running plant's instruments: 0, +1, 0, -1 (times an amplitude) at successive
 * seconds from T0. The analysers of a running mill are never perfectly still, and with analyser
 * health a value that does not move for the frozen window (demo: 600 s) is frozen, not steady.
 * Zero at T0, so single-sample checks stay exact; its least-squares slope over a 300 s window
 * is below 6·amplitude/300² per s (negligible beside the ramps below).
 */
const jitter = (t: number, amplitude: number): number => amplitude * [0, 1, 0, -1][((Math.round((t - T0) / 1000) % 4) + 4) % 4]!;

/** Grinding-like steady values for every demo signal at time t, with instrument jitter (±0.05) on those not overridden. */
function steady(t: number, over: Record<string, number> = {}): Sample[] {
  const base: Record<string, number> = {
    "hg2.outlet.temp": 320, "vm2.inlet.temp": 240, "vm2.outlet.temp": 90, "vm2.outlet.press": -1500,
    "vm2.outlet.o2": 9, "vm2.outlet.co": 35, "vm2.drive.power": 1800, "vm2.feed": 30,
    "bf2.inlet.temp": 86, "bf2.outlet.temp": 80, "bf2.outlet.press": -2500, "bf2.outlet.o2": 10,
    "bf2.outlet.co": 40, "bf2.outlet.h2o": 10, "fs2.temp": 45, "fs2.o2": 6, "fs2.co": 15, "ig2.flow": 300,
  };
  for (const k of Object.keys(base)) base[k]! += jitter(t, 0.05);
  // Status contacts: off (no trip, the analyser not in function check), without jitter.
  const status = { "vm2.trip": 0, "bf2.a213.status": 0 };
  return Object.entries({ ...base, ...status, ...over }).map(([k, v]) => sample(k, v, t));
}

let engine: Engine;
beforeEach(() => {
  engine = new Engine(cfg);
});

const advisories = (events: CoreEvent[]) => events.filter((e): e is AdvisoryTransition => e.kind === "advisory");

describe("dew point margin", () => {
  it("matches the check value: 10 vol % H2O at 101.325 kPa gives a dew point of 46.07 °C (DESIGN check values, computed with python3-iapws)", () => {
    // Barometric 1002 hPa from the demo config; gauge pressure chosen to make 101.325 kPa absolute.
    for (const s of steady(T0, { "bf2.outlet.press": 101325 - 100200, "bf2.outlet.h2o": 10, "bf2.outlet.temp": 66.07 })) engine.ingest(s);
    engine.tick(T0 + 500);
    const d = engine.snapshot().dewPoints.find((x) => x.id === "bf2-outlet")!;
    expect(d.status).toBe("ok");
    expect(d.absPressurePa).toBeCloseTo(101325, 6);
    expect(d.dewPointC!).toBeCloseTo(46.07, 2);
    expect(d.marginK!).toBeCloseTo(20, 2);
  });

  it("is unknown, with the reason, when an input is stale", () => {
    for (const s of steady(T0)) engine.ingest(s);
    engine.tick(T0 + 10_000); // 10 s without data, expected period 1 s
    const d = engine.snapshot().dewPoints[0]!;
    expect(d.status).toBe("unknown");
    expect(d.marginK).toBeNull();
    expect(d.reason).toMatch(/no data for 10 s/);
  });
});

describe("inerting state", () => {
  it("compares O2 on each limit's own basis and names the governing limit", () => {
    // vm2: O2 9.5 % wet, H2O 10 %. Site maximum 12 % wet -> margin 2.5 %-pt.
    // LOC 15 % dry, continuous -> 13 % dry (NFPA 69: LOC - 2 when LOC >= 5 %);
    // 9.5 % wet = 9.5 / 0.9 = 10.556 % dry (O2_dry = O2_wet / (1 - x_H2O)) -> margin 2.444 %-pt: governs.
    for (const s of steady(T0, { "vm2.outlet.o2": 9.5 })) engine.ingest(s);
    engine.tick(T0 + 500);
    const u = engine.snapshot().units.find((x) => x.id === "vm2")!.inerting!;
    expect(u.state).toBe("inert");
    expect(u.basis).toBe("dry");
    expect(u.limitPctVol).toBeCloseTo(13, 9);
    expect(u.o2PctVol!).toBeCloseTo(9.5 / 0.9, 9);
    expect(u.marginPctPt!).toBeCloseTo(13 - 9.5 / 0.9, 9);
    expect(u.limitSource).toMatch(/NFPA 69/);
  });

  it("is marginal within the band, not inert above the limit", () => {
    for (const s of steady(T0, { "vm2.outlet.o2": 11.2 })) engine.ingest(s); // 12.444 % dry: margin 0.556 < band 1.5
    engine.tick(T0 + 500);
    expect(engine.snapshot().units.find((x) => x.id === "vm2")!.inerting!.state).toBe("marginal");
    for (const s of steady(T0 + 1000, { "vm2.outlet.o2": 15 })) engine.ingest(s);
    engine.tick(T0 + 1500);
    expect(engine.snapshot().units.find((x) => x.id === "vm2")!.inerting!.state).toBe("not-inert");
  });

  it("is never better than unknown when the O2 or the H2O behind it cannot be trusted", () => {
    const bads: Partial<Sample>[] = [{ quality: "bad", qualityReason: "sensor failure" }, { quality: "uncertain" }, { functionCheck: true }];
    for (const [i, bad] of bads.entries()) {
      const e = new Engine(cfg);
      for (const s of steady(T0 + i)) e.ingest(s.signal === "vm2.outlet.o2" ? { ...s, ...bad } : s);
      e.tick(T0 + i + 500);
      expect(e.snapshot().units.find((x) => x.id === "vm2")!.inerting!.state).toBe("unknown");
      const e2 = new Engine(cfg);
      for (const s of steady(T0 + i)) e2.ingest(s.signal === "bf2.outlet.h2o" ? { ...s, ...bad } : s);
      e2.tick(T0 + i + 500);
      expect(e2.snapshot().units.find((x) => x.id === "vm2")!.inerting!.state).toBe("unknown");
    }
  });
});

describe("CO gradient and advisories", () => {
  function runRamp(e: Engine, ppmPerMin: number, seconds: number, start = T0, noisePpm = 0) {
    const events: CoreEvent[] = [];
    for (let k = 0; k <= seconds; k++) {
      const t = start + k * 1000;
      events.push(...e.tick(t));
      for (const s of steady(t, { "bf2.outlet.co": 40 + (ppmPerMin / 60) * k + jitter(t, noisePpm) })) e.ingest(s);
    }
    return events;
  }

  it("computes the slope in ppm/min and raises the tier that the rule names after its on-delay", () => {
    const events = runRamp(engine, 8, 600);
    const co = engine.snapshot().coPoints.find((p) => p.id === "bf2-outlet")!;
    expect(co.status).toBe("ok");
    expect(co.gradientPpmPerMin!).toBeCloseTo(8, 6);
    const raised = advisories(events).filter((a) => a.advisoryId === "co-gradient-bf2");
    expect(raised[0]).toMatchObject({ transition: "raise", tier: "caution" });
    // window 300 s must be half full (150 s) before any gradient; on-delay 30 s.
    expect(raised[0]!.atMs - T0).toBeGreaterThanOrEqual(180_000);
    expect(raised[0]!.atMs - T0).toBeLessThanOrEqual(182_000);
  });

  it("raises nothing on a flat CO", () => {
    // CO flat but alive (±0.4 ppm, the simulator's CO noise): a flat, unmoving CO would read
    // frozen after 600 s and prove nothing about the gradient.
    const events = runRamp(engine, 0, 900, T0, 0.4);
    const co = engine.snapshot().coPoints.find((p) => p.id === "bf2-outlet")!;
    expect(co.status).toBe("ok");
    expect(Math.abs(co.gradientPpmPerMin!)).toBeLessThan(0.1);
    expect(advisories(events).filter((a) => a.advisoryId.startsWith("co-") && a.to === "unack")).toEqual([]);
  });

  it("computes no gradient across a gap or a function check", () => {
    runRamp(engine, 8, 400);
    // 30 s gap (maxGapS 20) restarts the window
    runRamp(engine, 8, 60, T0 + 430_000);
    const co = engine.snapshot().coPoints.find((p) => p.id === "bf2-outlet")!;
    expect(co.status).toBe("unknown");
    expect(co.reason).toMatch(/gap of 30 s/);
    engine.ingest(sample("bf2.outlet.co", 50, T0 + 491_000, { functionCheck: true }));
    engine.tick(T0 + 491_500);
    expect(engine.snapshot().coPoints.find((p) => p.id === "bf2-outlet")!.reason).toMatch(/function check/);
  });

  it("acknowledge command: 404 for an unknown id, then ack with who and when", () => {
    const events = runRamp(engine, 20, 600);
    expect(advisories(events).some((a) => a.advisoryId === "co-gradient-bf2" && a.tier === "warning")).toBe(true);
    expect(engine.command({ kind: "ack", advisoryId: "nope", by: "op", atMs: T0 })).toMatchObject({ ok: false, status: 404 });
    const r = engine.command({ kind: "ack", advisoryId: "co-gradient-bf2", by: "a.shiftlead", atMs: T0 + 601_000 });
    expect(r).toMatchObject({ ok: true, advisory: { state: "ack", ackedBy: "a.shiftlead" } });
  });

  it("duplicates and out-of-order samples change nothing", () => {
    expect(engine.ingest(sample("bf2.outlet.co", 40, T0))).toBe("accepted");
    expect(engine.ingest(sample("bf2.outlet.co", 99, T0))).toBe("duplicate");
    expect(engine.ingest(sample("bf2.outlet.co", 99, T0 - 1000))).toBe("out-of-order");
    expect(engine.ingest(sample("no.such.signal", 1, T0))).toBe("unknown-signal");
    engine.tick(T0 + 100);
    expect(engine.snapshot().signals.find((s) => s.id === "bf2.outlet.co")!.value).toBe(40);
  });

  it("values outside the configured range are bad, not used", () => {
    engine.ingest(sample("bf2.outlet.h2o", 75, T0)); // range 0..50 % vol
    engine.tick(T0 + 100);
    const s = engine.snapshot().signals.find((x) => x.id === "bf2.outlet.h2o")!;
    expect(s.quality).toBe("bad");
    expect(s.qualityReason).toMatch(/out of range 0\.\.50/);
  });

  it("is deterministic: the same inputs give the same events", () => {
    const a = runRamp(new Engine(cfg), 12, 500);
    const b = runRamp(new Engine(cfg), 12, 500);
    expect(JSON.stringify(a)).toBe(JSON.stringify(b));
  });
});

describe("DataClock", () => {
  it("ticks every whole second of data time, none twice", () => {
    const c = new DataClock();
    expect(c.due(T0 + 250)).toEqual([]);
    expect(c.due(T0 + 900)).toEqual([]);
    expect(c.due(T0 + 3100)).toEqual([T0 + 1000, T0 + 2000, T0 + 3000]);
    expect(c.due(T0 + 3500)).toEqual([]);
    expect(c.due(T0 + 1000)).toEqual([]); // late sample: no tick back in time
  });
});
