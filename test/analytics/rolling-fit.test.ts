// The rolling least-squares slope against an independent implementation: the npm
// package simple-statistics (linearRegression, the textbook closed form), over the
// same window of points.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { linearRegression } from "simple-statistics";
import { RollingLinearFit } from "../../src/analytics/rolling-fit.js";

function reference(points: [number, number][], windowS: number): number | null {
  const newest = points[points.length - 1]![0];
  const inWindow = points.filter(([t]) => t >= newest - windowS);
  if (inWindow.length < 2) return null;
  return linearRegression(inWindow).m;
}

describe("RollingLinearFit", () => {
  it("is exact on a noiseless line (any slope, any offset)", () => {
    fc.assert(
      fc.property(fc.double({ min: -50, max: 50, noNaN: true }), fc.double({ min: -1e4, max: 1e4, noNaN: true }), (m, b) => {
        const f = new RollingLinearFit(300);
        for (let t = 0; t < 600; t++) f.push(t, m * t + b);
        expect(f.slopePerS()!).toBeCloseTo(m, 9);
      }),
      { numRuns: 50 },
    );
  });

  it("matches simple-statistics on noisy irregular data as the window rolls", () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.double({ min: 0.05, max: 5, noNaN: true }), fc.double({ min: -100, max: 100, noNaN: true })), { minLength: 20, maxLength: 400 }),
        fc.integer({ min: 10, max: 200 }),
        (steps, windowS) => {
          const f = new RollingLinearFit(windowS, 4);
          const pts: [number, number][] = [];
          let t = 1_700_000_000; // epoch seconds: large times must not cost precision
          for (const [dt, v] of steps) {
            t += dt;
            pts.push([t, v]);
            f.push(t, v);
          }
          const ref = reference(pts, windowS);
          const got = f.slopePerS();
          if (ref === null || !Number.isFinite(ref)) return;
          expect(got).not.toBeNull();
          expect(Math.abs(got! - ref)).toBeLessThanOrEqual(1e-6 * Math.max(1, Math.abs(ref)));
        },
      ),
      { numRuns: 200 },
    );
  });

  it("keeps its precision over a year of 1 Hz data (rebasing the time origin)", () => {
    const f = new RollingLinearFit(300, 512, 1000);
    const m = 0.25;
    for (let t = 0; t < 365 * 86400; t += 1) f.push(t, 40 + m * (t % 3600));
    // the last hour-cycle is a clean ramp at the end
    expect(f.slopePerS()!).toBeCloseTo(m, 8);
    expect(f.count).toBe(301);
  }, 20_000);

  it("holds only the window: memory does not grow with run time", () => {
    const f = new RollingLinearFit(60, 8);
    for (let t = 0; t < 100_000; t++) f.push(t, t);
    expect(f.count).toBe(61);
    expect(f.spanS).toBe(60);
  });

  it("clear() starts again", () => {
    const f = new RollingLinearFit(60);
    f.push(1, 1);
    f.push(2, 2);
    f.clear();
    expect(f.count).toBe(0);
    expect(f.slopePerS()).toBeNull();
  });
});
