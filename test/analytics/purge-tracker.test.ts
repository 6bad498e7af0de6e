// Purge progress: the count and the well-mixed prediction against the check values of
// DESIGN.md §4 (21 → 1 % O2 with pure N2 needs ln 21 = 3.04 volume changes; Crowl & Louvar,
// Chemical Process Safety, sweep-through purging example, from memory: 1000 ft³ from 21 % to
// 1.25 % O2 with N2 at 0.01 % needs Q t = 1000 ln(20.99/1.24) ≈ 2829 ft³), and the fitted
// time-to-target on a synthetic exponential decay, which it must recover exactly.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { PurgeTracker } from "../../src/analytics/purge-tracker.js";

const T0 = 1_700_000_000_000;

describe("PurgeTracker", () => {
  it("21 → 1 % O2 with pure N2: the prediction reaches 1 % after 3.04 counted volume changes", () => {
    // DESIGN.md §4: N = ln(21/1) = 3.0445. 1000 m³ purged with 1000 Nm³/h: one change per hour.
    const p = new PurgeTracker({ volumeM3: 1000, inertO2PctVol: 0, targetO2PctVol: 1 });
    p.start(T0, 21);
    let reachedAt: number | null = null;
    for (let t = 0; t <= 4 * 3600; t += 10) {
      p.update(T0 + t * 1000, 1000, null);
      const v = p.view();
      expect(v.volumeChanges).toBeCloseTo(t / 3600, 10);
      if (reachedAt === null && v.predictedO2PctVol! <= 1) reachedAt = v.volumeChanges;
    }
    expect(reachedAt).not.toBeNull();
    expect(reachedAt!).toBeGreaterThanOrEqual(3.04);
    expect(reachedAt!).toBeLessThan(3.05);
    expect(p.view().reason).toMatch(/volume changes counted of 3\.045 a well-mixed unit needs for 1 %/);
  });

  it("Crowl & Louvar sweep-through: after Q t = 2829 ft³ into 1000 ft³ the prediction is 1.25 % O2", () => {
    // The tracker works in any one volume unit: here ft³ and ft³/h, 2829 ft³/h for one hour.
    const p = new PurgeTracker({ volumeM3: 1000, inertO2PctVol: 0.01, targetO2PctVol: 1.25 });
    p.start(T0, 21);
    for (let t = 0; t <= 3600; t += 60) p.update(T0 + t * 1000, 2829, null);
    const v = p.view();
    expect(v.volumeChanges).toBeCloseTo(2.829, 10);
    expect(v.predictedO2PctVol!).toBeCloseTo(1.25, 3);
  });

  it("counts only flow it saw: unknown flow and long gaps are not counted, steps count the lower side", () => {
    const p = new PurgeTracker({ volumeM3: 100, inertO2PctVol: 0, targetO2PctVol: 2, maxGapS: 120 });
    p.start(T0, 21);
    p.update(T0, 600, null);
    p.update(T0 + 60_000, 600, null); // 600 Nm³/h for 60 s = 10 Nm³ = 0.1 changes
    p.update(T0 + 120_000, null, null); // flow unknown: not counted
    p.update(T0 + 180_000, 600, null); // the interval after an unknown end: not counted
    p.update(T0 + 480_000, 600, null); // 300 s gap > maxGapS: not counted
    p.update(T0 + 540_000, 1200, null); // step 600 → 1200: counts 600 for 60 s = 0.1
    p.update(T0 + 600_000, -3, null); // a meter reading just below zero counts as 0
    const v = p.view();
    expect(v.volumeChanges).toBeCloseTo(0.2, 12);
    expect(v.reason).toMatch(/420 s not counted \(flow unknown or a gap\)/);
  });

  it("recovers the time to target exactly from a synthetic exponential decay", () => {
    // C(t) = C0 + (C1 − C0) e^(−t/τ); the time from C to the target C2 is τ ln[(C − C0)/(C2 − C0)].
    fc.assert(
      fc.property(
        fc.double({ min: 120, max: 5000, noNaN: true }),
        fc.double({ min: 0, max: 0.5, noNaN: true }),
        fc.constantFrom(2, 5, 10, 30),
        (tauS, c0, stepS) => {
          const target = 4;
          const p = new PurgeTracker({ volumeM3: 500, inertO2PctVol: c0, targetO2PctVol: target, fitWindowS: 600, fitPoints: 60, minDecayLn: 0.01 });
          p.start(T0, 21);
          const c = (t: number): number => c0 + (21 - c0) * Math.exp(-t / tauS);
          let checked = false;
          for (let t = 0; c(t) > target; t += stepS) {
            p.update(T0 + t * 1000, 800, c(t));
            if (t % 60 !== 0) continue; // look once a minute
            const v = p.view();
            if (v.fittedTimeToTargetS !== null) {
              const expected = tauS * Math.log((c(t) - c0) / (target - c0));
              expect(Math.abs(v.fittedTimeToTargetS - expected)).toBeLessThanOrEqual(1e-6 * Math.max(1, expected));
              checked = true;
            }
          }
          expect(checked).toBe(true);
        },
      ),
      { numRuns: 100 },
    );
  });

  it("gives no fitted time until enough decay is seen, none without a measurement, 0 at the target", () => {
    const p = new PurgeTracker({ volumeM3: 500, inertO2PctVol: 0.01, targetO2PctVol: 4 });
    p.start(T0, 21);
    p.update(T0, 800, 21);
    expect(p.view().fittedTimeToTargetS).toBeNull();
    expect(p.view().reason).toMatch(/fit waiting for 5 points/);
    // five points ten seconds apart with hardly any decay: a 1 % fall is below the ln 1.2 needed
    for (let t = 10; t <= 50; t += 10) p.update(T0 + t * 1000, 800, 21 - t * 0.004);
    expect(p.view().fittedTimeToTargetS).toBeNull();
    expect(p.view().reason).toMatch(/not enough decay seen yet over 50 s/);
    p.update(T0 + 60_000, 800, null);
    expect(p.view()).toMatchObject({ measuredO2PctVol: null, fittedTimeToTargetS: null });
    p.update(T0 + 70_000, 800, 3.9);
    expect(p.view().fittedTimeToTargetS).toBe(0);
    expect(p.view().reason).toMatch(/the measured O2, not the count, decides whether the unit is inert/);
  });

  it("is inactive before start and after stop, and ignores updates then", () => {
    const p = new PurgeTracker({ volumeM3: 500, inertO2PctVol: 0.01, targetO2PctVol: 4 });
    expect(p.view()).toEqual({
      active: false,
      volumeChanges: 0,
      predictedO2PctVol: null,
      measuredO2PctVol: null,
      fittedTimeToTargetS: null,
      reason: "no purge started",
    });
    p.update(T0, 800, 20);
    expect(p.view().active).toBe(false);
    p.start(T0, 21);
    for (let t = 0; t <= 360; t += 60) p.update(T0 + t * 1000, 500, 21 - t / 120); // 6 min at 500 Nm³/h = 50 Nm³ = 0.1 changes
    p.stop();
    p.update(T0 + 3_600_000, 500, 5);
    const v = p.view();
    expect(v.active).toBe(false);
    expect(v.volumeChanges).toBeCloseTo(0.1, 12);
    expect(v.measuredO2PctVol).toBe(18);
  });

  it("refuses bad configuration and input with what was expected and what was found", () => {
    expect(() => new PurgeTracker({ volumeM3: 0, inertO2PctVol: 0, targetO2PctVol: 1 })).toThrow(/volumeM3 must be a finite number > 0 m³; got 0/);
    expect(() => new PurgeTracker({ volumeM3: 10, inertO2PctVol: 2, targetO2PctVol: 1 })).toThrow(
      /targetO2PctVol 1 must be above inertO2PctVol 2: purging only approaches the inert gas's O2/,
    );
    const p = new PurgeTracker({ volumeM3: 10, inertO2PctVol: 0, targetO2PctVol: 1 });
    expect(() => p.start(T0, 120)).toThrow(/o2PctVol must be a finite number in \[0, 100\] % vol; got 120/);
    p.start(T0, 21);
    expect(() => p.update(T0 - 1, 10, 20)).toThrow(/nowMs must not decrease/);
    expect(() => p.update(T0, Number.NaN, 20)).toThrow(/inertFlowNm3PerH must be a finite number \(Nm³\/h\); got NaN/);
  });
});
