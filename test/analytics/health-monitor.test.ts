// The health monitor through its Monitor interface, with a fake tick context for the phase.
// Sources: DESIGN.md §3 for the states (frozen while the plant runs; a time-shared analyser
// holding a point is frozen, not calm); NAMUR NE 43 current bands (from memory: failure at or
// below 3.6 mA or at or above 21 mA, measuring band 3.8–20.5 mA); NAMUR NE 107 category C
// "function check" for calibration, blowback and multiplexer switching.
import { describe, expect, it } from "vitest";
import type { SignalConfig } from "../../src/config/schema.js";
import type { AnalyserConfig } from "../../src/config/sections/analysers.js";
import type { TickContext } from "../../src/core/calculator.js";
import type { Sample } from "../../src/core/types.js";
import type { MillPhase } from "../../src/analytics/phase.js";
import { HealthMonitor } from "../../src/analytics/health-monitor.js";

const T0 = Date.UTC(2026, 2, 2, 4, 0, 0);

const sig = (id: string, unit: string, extra: Partial<SignalConfig> = {}): SignalConfig => ({
  id,
  name: id,
  tag: id.toUpperCase(),
  source: "m",
  topic: `t/${id}`,
  unit,
  scale: 1,
  offset: 0,
  expectedPeriodS: 1,
  ...extra,
});

const signals: SignalConfig[] = [
  sig("o2", "pctVol", { analyser: "a1", range: [0, 25] }),
  sig("co", "ppm", { analyser: "a1" }),
  sig("h2o", "pctVol", { analyser: "a2" }),
  sig("a2.loop", "mA"),
  sig("a2.status", "state"),
  sig("other", "degC"),
];
const analysers: AnalyserConfig[] = [
  { id: "a1", name: "Filter O2/CO analyser", frozenWindowS: 300, frozenEpsilon: 0.005, phaseUnit: "vm1", settleS: 0 },
  { id: "a2", name: "Filter H2O analyser", frozenWindowS: 300, frozenEpsilon: 0.005, loopCurrentSignal: "a2.loop", functionCheckSignal: "a2.status", settleS: 0 },
];

const good = (signal: string, value: number, tMs: number, extra: Partial<Sample> = {}): Sample => ({
  signal,
  value,
  quality: "good",
  sourceTimeMs: tMs,
  receiveTimeMs: tMs,
  ...extra,
});

function ctx(nowMs: number, phase: MillPhase | null): TickContext {
  return {
    nowMs,
    trust: () => {
      throw new Error("the health monitor reads samples, not trust");
    },
    phase: (u) => (u === "vm1" ? phase : null),
    emit: () => {
      throw new Error("the health monitor emits nothing");
    },
    derived: () => undefined,
  };
}

/** Feed 1 Hz samples for `seconds` (values from `at(k)`), ticking after each, with the phase given. */
function run(m: HealthMonitor, seconds: number, phase: MillPhase | null, at: (k: number) => Record<string, number>, startS = 0) {
  for (let k = startS; k <= startS + seconds; k++) {
    const t = T0 + k * 1000;
    for (const [s, v] of Object.entries(at(k))) m.ingest(good(s, v, t));
    m.tick(ctx(t, phase));
  }
  return m.view().analysers;
}

const alive = (k: number) => 0.02 * (k % 3); // a few hundredths of movement, like a live analyser's noise

describe("HealthMonitor", () => {
  it("a flat value is frozen while the mill runs, not while it stands still; the analyser takes its worst signal", () => {
    // O2 held at 9.00 (a time-shared analyser holding the point), CO alive.
    const flat = (k: number) => ({ o2: 9, co: 40 + alive(k) });
    const running = run(new HealthMonitor(analysers, signals), 400, "grinding", flat);
    const a1 = running.find((a) => a.id === "a1")!;
    expect(a1.state).toBe("frozen");
    expect(a1.plantRunning).toBe(true);
    expect(a1.signals.map((s) => [s.signal, s.role, s.state])).toEqual([
      ["o2", "value", "frozen"],
      ["co", "value", "ok"],
    ]);
    expect(a1.reasons[0]).toMatch(/^o2: no change larger than 0\.005 within 300 s while the plant runs/);
    // Frozen once the unbroken flat history covers the window: 300 s after the first sample.
    const m2 = new HealthMonitor(analysers, signals);
    run(m2, 299, "grinding", flat);
    expect(m2.view().analysers[0]!.state).toBe("ok");
    run(m2, 0, "grinding", flat, 300);
    expect(m2.view().analysers[0]).toMatchObject({ state: "frozen", sinceMs: T0 + 300_000 });

    for (const stopped of ["standstill-empty", "standstill-loaded", "warm-up", "inerting", "maintenance"] as const) {
      const v = run(new HealthMonitor(analysers, signals), 400, stopped, flat).find((a) => a.id === "a1")!;
      expect(v, stopped).toMatchObject({ state: "ok", plantRunning: false });
    }
    // The phase not known, or no phaseUnit configured: taken as running (the cautious side).
    expect(run(new HealthMonitor(analysers, signals), 400, "unknown", flat)[0]!.state).toBe("frozen");
    const a2 = run(new HealthMonitor(analysers, signals), 400, "standstill-empty", () => ({ h2o: 10, "a2.loop": 12, "a2.status": 0 }))[1]!;
    expect(a2).toMatchObject({ id: "a2", state: "frozen", plantRunning: true });
    // Only the values are tested for frozen: the loop current and the status held steady are fine.
    expect(a2.signals.map((s) => [s.signal, s.role, s.state])).toEqual([
      ["h2o", "value", "frozen"],
      ["a2.loop", "loop-current", "ok"],
      ["a2.status", "function-check", "ok"],
    ]);
  });

  it("a loop current in the NAMUR NE 43 failure bands is a loop fault of the whole analyser", () => {
    const m = new HealthMonitor(analysers, signals);
    const at = (ma: number) => (k: number) => ({ h2o: 10 + alive(k), "a2.loop": ma, "a2.status": 0 });
    const state = () => m.view().analysers.find((a) => a.id === "a2")!;
    run(m, 5, null, at(12));
    expect(state().state).toBe("ok");
    run(m, 5, null, at(3.6), 10); // at the failure level: fault (NE 43: <= 3.6 mA)
    expect(state().state).toBe("loop-fault");
    expect(state().reasons[0]).toMatch(/^a2\.loop: loop current 3\.6 mA at or below the NAMUR NE 43 failure level 3\.6 mA/);
    expect(state().signals.find((s) => s.signal === "h2o")!.state).toBe("ok");
    run(m, 5, null, at(3.7), 20); // between failure and measuring band: saturated low, uncertain, still not ok
    expect(state().state).toBe("uncertain");
    run(m, 5, null, at(20.5), 30); // top of the measuring band: ok
    expect(state().state).toBe("ok");
    run(m, 5, null, at(21), 40); // NE 43: >= 21 mA failure
    expect(state().state).toBe("loop-fault");
    expect(m.distrust("h2o")).toMatch(/^h2o: analyser a2 loop-fault \(a2\.loop: loop current 21 mA at or above the NAMUR NE 43 failure level 21 mA/);
  });

  it("function check from the status signal (non-zero) and from the sample flag", () => {
    const m = new HealthMonitor(analysers, signals);
    const state = (id: string) => m.view().analysers.find((a) => a.id === id)!;
    run(m, 5, "grinding", (k) => ({ h2o: 10 + alive(k), "a2.loop": 12, "a2.status": 0, o2: 9 + alive(k), co: 40 + alive(k) }));
    expect([state("a1").state, state("a2").state]).toEqual(["ok", "ok"]);
    expect(m.distrust("h2o")).toBeNull();
    run(m, 5, "grinding", (k) => ({ h2o: 10 + alive(k), "a2.loop": 12, "a2.status": 2, o2: 9 + alive(k), co: 40 + alive(k) }), 10);
    expect(state("a2").state).toBe("function-check");
    // The values sampled during the check are flagged too: held or test gas.
    expect(state("a2").signals.map((s) => s.state)).toEqual(["function-check", "ok", "function-check"]);
    expect(m.distrust("h2o")).toMatch(/^h2o: analyser a2 function-check \(h2o: analyser in function check \(NAMUR NE 107 category C/);
    run(m, 5, "grinding", (k) => ({ h2o: 10 + alive(k), "a2.status": 0, "a2.loop": 12 }), 20);
    expect(state("a2").state).toBe("ok");

    // The sample's own flag (a multiplexer switching on the O2 point) puts the analyser's CO out too.
    m.ingest(good("o2", 9.1, T0 + 30_000, { functionCheck: true }));
    m.ingest(good("co", 40.2, T0 + 30_000));
    m.tick(ctx(T0 + 30_000, "grinding"));
    expect(state("a1").state).toBe("function-check");
    expect(m.distrust("co")).toMatch(/^co: analyser a1 function-check \(o2: analyser in function check/);
    expect(m.distrust("other")).toBeNull(); // not an analyser's signal
  });

  it("out of range, bad and stale samples make the analyser not ok", () => {
    const m = new HealthMonitor(analysers, signals);
    m.ingest(good("o2", 30, T0)); // range 0..25 % vol
    m.ingest(good("co", 40, T0, { quality: "bad", qualityReason: "BadSensorFailure" }));
    m.tick(ctx(T0, "grinding"));
    const a1 = m.view().analysers[0]!;
    expect(a1.state).toBe("bad");
    expect(a1.reasons).toEqual(["co: quality bad (BadSensorFailure)", "o2: value 30 outside the valid range 0..25"]);
    m.tick(ctx(T0 + 3001, "grinding")); // more than 3 expected periods (1 s) without an update
    expect(m.view().analysers[0]!.state).toBe("stale");
  });
});
