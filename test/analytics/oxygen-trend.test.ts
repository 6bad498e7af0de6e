// O2 trend (least squares) and time to limit. A straight line is fitted exactly by least
// squares (Gauss; any statistics text), so on a linear rise the slope and the time to the limit
// (margin / slope) must come out exact.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { O2Trend, timeToLimitS } from "../../src/analytics/oxygen-trend.js";

const T0 = 1_800_000_000_000;

describe("timeToLimitS", () => {
  it("is margin / rate for a rise, null for flat or falling or unknown, 0 when rising above the limit", () => {
    // 4 %-pt at 0.2 %-pt/min: 20 min = 1200 s (arithmetic of a linear rise).
    expect(timeToLimitS(4, 0.2)).toBeCloseTo(1200, 9);
    expect(timeToLimitS(4, 0)).toBeNull();
    expect(timeToLimitS(4, -0.1)).toBeNull();
    expect(timeToLimitS(4, null)).toBeNull();
    expect(timeToLimitS(0, 0.1)).toBe(0);
    expect(timeToLimitS(-1, 0.1)).toBe(0);
    expect(timeToLimitS(-1, -0.1)).toBeNull();
    expect(() => timeToLimitS(Number.NaN, 0.1)).toThrow(/marginPctPt must be a finite number; got NaN/);
  });
});

describe("O2Trend", () => {
  it("recovers a linear rise exactly, and the time to the limit with it", () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.5, max: 12, noNaN: true }),
        fc.double({ min: 0.01, max: 2, noNaN: true }),
        fc.integer({ min: 1, max: 5 }),
        (o2StartPctVol, ratePctPtPerMin, stepS) => {
          const tr = new O2Trend(300, 30);
          let o2 = o2StartPctVol;
          for (let t = 0; t <= 400; t += stepS) {
            o2 = o2StartPctVol + (ratePctPtPerMin * t) / 60;
            tr.add(T0 + t * 1000, o2);
          }
          const r = tr.trend().pctPtPerMin!;
          expect(r).toBeCloseTo(ratePctPtPerMin, 8);
          const limit = o2 + 3;
          // Exact: 3 %-pt at the rate takes 3 / rate minutes.
          expect(timeToLimitS(limit - o2, r)!).toBeCloseTo((3 / ratePctPtPerMin) * 60, 4);
        },
      ),
      { numRuns: 50 },
    );
  });

  it("is unknown until the points span half the window", () => {
    const tr = new O2Trend(300, 30);
    for (let t = 0; t < 150; t++) tr.add(T0 + t * 1000, 5 + t / 600);
    expect(tr.trend().pctPtPerMin).toBeNull();
    expect(tr.trend().reason).toMatch(/needs 150 s of trusted O2 without a break; has 149 s/);
    tr.add(T0 + 150_000, 5 + 150 / 600);
    expect(tr.trend().pctPtPerMin).toBeCloseTo(0.1, 9);
  });

  it("restarts after a gap longer than maxGapS, after a reset, and when the analysers used change", () => {
    const fill = (tr: O2Trend, from: number, key = "") => {
      for (let t = from; t <= from + 200; t++) tr.add(T0 + t * 1000, 5 + t / 600, key);
    };
    const gap = new O2Trend(300, 30);
    fill(gap, 0);
    expect(gap.trend().pctPtPerMin).not.toBeNull();
    gap.add(T0 + 240_000, 9); // 39 s after the last point: a gap
    expect(gap.trend().pctPtPerMin).toBeNull();

    const reset = new O2Trend(300, 30);
    fill(reset, 0);
    reset.reset();
    reset.add(T0 + 201_000, 5);
    expect(reset.trend().pctPtPerMin).toBeNull();

    const key = new O2Trend(300, 30);
    fill(key, 0, "a,b");
    key.add(T0 + 201_000, 6, "b,c");
    expect(key.trend().pctPtPerMin).toBeNull();
  });

  it("forgets points older than the window, and ignores points not newer than the last", () => {
    const tr = new O2Trend(300, 30);
    // A fall for 600 s, then a rise for 300 s: the window sees only the rise.
    for (let t = 0; t <= 600; t++) tr.add(T0 + t * 1000, 15 - t / 60);
    for (let t = 601; t <= 900; t++) tr.add(T0 + t * 1000, 5 + (t - 600) / 120);
    tr.add(T0 + 900_000, 99); // same time as the last: ignored
    expect(tr.trend().pctPtPerMin).toBeCloseTo(0.5, 9);
  });
});
