// Analyser health: NAMUR NE 43 current bands (from memory: measuring 3.8–20.5 mA, failure
// at or below 3.6 mA and at or above 21 mA), NAMUR NE 107 category C for function check,
// staleness after 3 expected periods (DESIGN.md §3 / SignalState), and the frozen test
// against a brute-force reading of its definition.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { AnalyserHealth, HEALTH_ORDER, NE43, type AnalyserHealthSample } from "../../src/analytics/analyser-health.js";

const T = 1_700_000_000_000; // epoch ms

function sample(tMs: number, value: number, extra: Partial<AnalyserHealthSample> = {}): AnalyserHealthSample {
  return { value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs, ...extra };
}

const basic = { expectedPeriodS: 10, frozenWindowS: 300, frozenEpsilon: 0.5 };

describe("AnalyserHealth", () => {
  it("reports no-data until the first sample, then ok", () => {
    const h = new AnalyserHealth(basic);
    expect(h.evaluate(T, true)).toEqual({ state: "no-data", reasons: ["no sample received yet"], sinceMs: null });
    h.update(sample(T, 40));
    expect(h.evaluate(T + 1000, true)).toEqual({ state: "ok", reasons: [], sinceMs: T + 1000 });
    h.update(sample(T + 10_000, 42));
    expect(h.evaluate(T + 11_000, true).sinceMs).toBe(T + 1000);
  });

  it("is stale after more than 3 expected periods without an update (receive time)", () => {
    // DESIGN.md §3: stale = no update within its period; the project uses 3 periods like SignalState.
    const h = new AnalyserHealth(basic);
    h.update(sample(T, 40, { sourceTimeMs: T - 3_600_000 })); // source clock an hour off: irrelevant
    expect(h.evaluate(T + 30_000, true).state).toBe("ok");
    const r = h.evaluate(T + 30_001, true);
    expect(r.state).toBe("stale");
    expect(r.reasons[0]).toMatch(/no update for 30 s \(expected every 10 s, stale after 3 periods\)/);
    expect(r.sinceMs).toBe(T + 30_001);
  });

  it("classifies the loop current by the NAMUR NE 43 bands", () => {
    // NAMUR NE 43 (from memory): 3.8–20.5 mA measurement information; <= 3.6 mA or >= 21 mA failure;
    // 3.6–3.8 and 20.5–21 mA: measurement saturated beyond the range.
    const cases: [number, string][] = [
      [0, "loop-fault"],
      [3.5, "loop-fault"],
      [3.6, "loop-fault"],
      [3.7, "uncertain"],
      [3.8, "ok"],
      [12, "ok"],
      [20.5, "ok"],
      [20.8, "uncertain"],
      [21.0, "loop-fault"],
      [23, "loop-fault"],
    ];
    expect([NE43.failureLowMa, NE43.measureLowMa, NE43.measureHighMa, NE43.failureHighMa]).toEqual([3.6, 3.8, 20.5, 21]);
    for (const [ma, state] of cases) {
      const h = new AnalyserHealth({ ...basic, loopMa: true });
      h.update(sample(T, 5, { loopCurrentMa: ma }));
      const r = h.evaluate(T, false);
      expect([ma, r.state]).toEqual([ma, state]);
      if (state === "loop-fault") expect(r.reasons[0]).toMatch(/NAMUR NE 43 failure level/);
      if (state === "uncertain") expect(r.reasons[0]).toMatch(/saturated (low|high)/);
    }
    // without loopMa the loop current is not this signal's business
    const h = new AnalyserHealth(basic);
    h.update(sample(T, 5, { loopCurrentMa: 2 }));
    expect(h.evaluate(T, false).state).toBe("ok");
  });

  it("function check is NE 107 category C; bad quality outranks it and both reasons are listed worst first", () => {
    const h = new AnalyserHealth(basic);
    h.update(sample(T, 40, { functionCheck: true }));
    let r = h.evaluate(T, true);
    expect(r.state).toBe("function-check");
    expect(r.reasons).toEqual([
      "analyser in function check (NAMUR NE 107 category C: calibration, blowback or multiplexer switching)",
    ]);
    h.update(sample(T + 1000, Number.NaN, { quality: "bad", qualityReason: "BadSensorFailure", functionCheck: true }));
    r = h.evaluate(T + 1000, true);
    expect(r.state).toBe("bad");
    expect(r.reasons).toEqual([
      "quality bad (BadSensorFailure)",
      "analyser in function check (NAMUR NE 107 category C: calibration, blowback or multiplexer switching)",
    ]);
  });

  it("flags values outside the valid range and uncertain quality", () => {
    const h = new AnalyserHealth({ ...basic, range: [0, 25] });
    h.update(sample(T, 26.5, { quality: "uncertain", qualityReason: "UncertainSensorCal" }));
    const r = h.evaluate(T, false);
    expect(r.state).toBe("out-of-range");
    expect(r.reasons).toEqual(["value 26.5 outside the valid range 0..25", "quality uncertain (UncertainSensorCal)"]);
    h.update(sample(T + 1000, 20.9));
    expect(h.evaluate(T + 1000, false).state).toBe("ok");
  });

  it("a time-shared analyser holding a point at its last value is frozen while the plant runs, not calm", () => {
    // The multiplexed analyser measures another point; this point's value is repeated every 10 s.
    const h = new AnalyserHealth({ expectedPeriodS: 10, frozenWindowS: 300, frozenEpsilon: 0.5 });
    let t = T;
    for (let i = 0; i < 30; i++, t += 10_000) h.update(sample(t, 35 + (i % 2) * 3)); // live: 35/38 ppm
    for (let i = 0; i <= 31; i++, t += 10_000) h.update(sample(t, 38)); // held from here on
    const last = t - 10_000;
    expect(h.evaluate(last, false).state).toBe("ok"); // a stopped plant may well be calm
    const r = h.evaluate(last, true);
    expect(r.state).toBe("frozen");
    expect(r.reasons[0]).toMatch(/no change larger than 0\.5 within 300 s while the plant runs/);
    // one real change ends it
    h.update(sample(last + 10_000, 39));
    expect(h.evaluate(last + 10_000, true).state).toBe("ok");
  });

  it("the frozen test matches its definition on the held signal (brute force)", () => {
    // Definition: over [now − W, now] the held signal (each sample holds until the next) spans
    // no more than epsilon, and the history reaches back to now − W.
    const W = 60_000;
    const eps = 0.1;
    fc.assert(
      fc.property(
        // whole seconds, so samples land exactly on the window's start now and then
        fc.array(fc.tuple(fc.integer({ min: 1, max: 30 }).map((s) => s * 1000), fc.constantFrom(0, 0.05, 0.1, 0.1, 0.1, 0.3), fc.double({ min: 0, max: 1, noNaN: true })), {
          minLength: 1,
          maxLength: 120,
        }),
        (steps) => {
          const h = new AnalyserHealth({ expectedPeriodS: 10, frozenWindowS: W / 1000, frozenEpsilon: eps });
          const seen: [number, number][] = [];
          let t = T;
          for (let i = 0; i < steps.length; i++) {
            const [dt, v, frac] = steps[i]!;
            t += dt;
            h.update(sample(t, v));
            seen.push([t, v]);
            const nextDt = steps[i + 1]?.[0] ?? 30_000;
            const now = t + 1000 * Math.floor(frac * (nextDt / 1000 - 1));
            const start = now - W;
            let expected = false;
            if (seen[0]![0] <= start) {
              const held = seen.filter(([ts], k) => ts <= now && (k + 1 >= seen.length || seen[k + 1]![0] > start)).map(([, x]) => x);
              expected = Math.max(...held) - Math.min(...held) <= eps;
            }
            expect(h.evaluate(now, true).state).toBe(expected ? "frozen" : "ok");
          }
        },
      ),
      { numRuns: 800 },
    );
  });

  it("a gap, a bad value or a function check restarts the frozen window", () => {
    const mk = (): AnalyserHealth => new AnalyserHealth({ expectedPeriodS: 10, frozenWindowS: 60, frozenEpsilon: 0 });
    for (const interrupt of ["function-check", "bad", "gap"] as const) {
      const h = mk();
      let t = T;
      for (let i = 0; i < 5; i++, t += 10_000) h.update(sample(t, 7));
      if (interrupt === "function-check") h.update(sample(t, 7, { functionCheck: true }));
      if (interrupt === "bad") h.update(sample(t, 7, { quality: "bad" }));
      t += interrupt === "gap" ? 40_000 : 10_000;
      for (let i = 0; i < 6; i++, t += 10_000) h.update(sample(t, 7));
      // 50 s of flat history after the interruption: not yet the 60 s window
      expect([interrupt, h.evaluate(t - 10_000, true).state]).toEqual([interrupt, "ok"]);
      h.update(sample(t, 7));
      expect([interrupt, h.evaluate(t, true).state]).toEqual([interrupt, "frozen"]);
    }
  });

  it("the worst state wins in the documented order; stale leads and older diagnoses are marked", () => {
    expect(HEALTH_ORDER).toEqual(["no-data", "stale", "loop-fault", "bad", "function-check", "out-of-range", "frozen", "uncertain", "ok"]);
    const h = new AnalyserHealth({ ...basic, loopMa: true, range: [0, 100] });
    h.update(sample(T, 150, { loopCurrentMa: 2.1, quality: "bad" }));
    const r = h.evaluate(T + 60_000, true);
    expect(r.state).toBe("stale");
    expect(r.reasons).toHaveLength(4);
    expect(r.reasons[1]).toMatch(/^last sample: loop current 2\.1 mA at or below the NAMUR NE 43 failure level 3\.6 mA/);
    expect(r.reasons[2]).toBe("last sample: quality bad");
    expect(r.reasons[3]).toBe("last sample: value 150 outside the valid range 0..100");
  });

  it("refuses bad options and samples with what was expected and what was found", () => {
    expect(() => new AnalyserHealth({ ...basic, expectedPeriodS: 0 })).toThrow(/expectedPeriodS must be a finite number > 0 s; got 0/);
    expect(() => new AnalyserHealth({ ...basic, frozenEpsilon: -1 })).toThrow(/frozenEpsilon must be a finite number >= 0; got -1/);
    expect(() => new AnalyserHealth({ ...basic, range: [5, 5] })).toThrow(/low < high; got \[5, 5\]/);
    const h = new AnalyserHealth(basic);
    expect(() => h.update(sample(Number.NaN, 1))).toThrow(/sourceTimeMs must be a finite number/);
    expect(() => h.evaluate(Number.NaN, true)).toThrow(/nowMs must be a finite number/);
  });
});
