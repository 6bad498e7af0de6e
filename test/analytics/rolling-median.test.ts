// The rolling median baseline against a brute-force median (sort everything kept, take the
// middle; the mean of the two middle values for an even count: the textbook definition of
// the sample median), with the decimation rule restated here: the first sample of each
// decimateS slot (slot = floor(t / decimateS)) is kept, and values older than newest − windowS drop out.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { RollingMedianBaseline } from "../../src/analytics/rolling-median.js";

function bruteMedian(xs: number[]): number | null {
  if (!xs.length) return null;
  const a = [...xs].sort((p, q) => p - q);
  const mid = Math.floor(a.length / 2);
  return a.length % 2 ? a[mid]! : (a[mid - 1]! + a[mid]!) / 2;
}

/** Reference model: all kept (t, v) and the window filter applied at the newest push. */
class Reference {
  kept: [number, number][] = [];
  lastSlot: number | null = null;
  newest: number | null = null;
  constructor(
    readonly windowS: number,
    readonly decimateS: number,
  ) {}
  push(t: number, v: number): void {
    this.newest = t;
    const slot = Math.floor(t / this.decimateS);
    if (this.lastSlot === null || slot > this.lastSlot) {
      this.lastSlot = slot;
      this.kept.push([t, v]);
    }
  }
  held(): number[] {
    if (this.newest === null) return [];
    return this.kept.filter(([t]) => t >= this.newest! - this.windowS).map(([, v]) => v);
  }
}

describe("RollingMedianBaseline", () => {
  it("equals a brute-force median of the decimated window after every push", () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.integer({ min: 1, max: 40 }), fc.integer({ min: -50, max: 500 })), { minLength: 1, maxLength: 400 }),
        fc.integer({ min: 5, max: 600 }),
        fc.constantFrom(1, 2.5, 10, 30),
        (steps, windowS, decimateS) => {
          const b = new RollingMedianBaseline(windowS, decimateS);
          const ref = new Reference(windowS, decimateS);
          let t = 1_700_000_000; // epoch seconds
          for (const [dt, v] of steps) {
            t += dt / 4;
            b.push(t, v);
            ref.push(t, v);
            const held = ref.held();
            expect(b.count).toBe(held.length);
            expect(b.value()).toBe(bruteMedian(held));
          }
        },
      ),
      { numRuns: 200 },
    );
  });

  it("is not moved by spikes shorter than half the window (CO baseline over one hour, 10 s decimation)", () => {
    // A 10-minute excursion to 900 ppm in an hour of 40 ppm: 60 of 361 kept values; the median stays 40.
    const b = new RollingMedianBaseline(3600, 10);
    for (let t = 0; t <= 3600; t++) b.push(t, t >= 1000 && t < 1600 ? 900 : 40);
    expect(b.count).toBe(361);
    expect(b.value()).toBe(40);
  });

  it("while frozen ignores pushes and keeps the last baseline; after unfreeze it follows again", () => {
    const b = new RollingMedianBaseline(600, 10);
    for (let t = 0; t < 600; t++) b.push(t, 30);
    expect(b.value()).toBe(30);
    b.freeze("mill start-up");
    expect(b.frozen).toBe("mill start-up");
    for (let t = 600; t < 1800; t++) b.push(t, 150 + t);
    expect(b.value()).toBe(30);
    expect(b.count).toBe(60);
    b.unfreeze();
    expect(b.frozen).toBeNull();
    for (let t = 1800; t < 2400; t++) b.push(t, 80);
    // the values kept before the freeze have aged out of the 600 s window
    expect(b.value()).toBe(80);
    expect(b.count).toBe(60);
  });

  it("memory is bounded by the window over a long run", () => {
    const b = new RollingMedianBaseline(3600, 10);
    for (let t = 0; t < 10 * 86400; t += 0.5) b.push(t, Math.sin(t / 500) * 10 + 40);
    // newest 863999.5 s: kept 860400, 860410, ... 863990 s
    expect(b.count).toBe(360);
  });

  it("refuses bad input with what was expected and what was found", () => {
    expect(() => new RollingMedianBaseline(0, 10)).toThrow(/windowS must be a finite number > 0 s; got 0/);
    expect(() => new RollingMedianBaseline(60, -1)).toThrow(/decimateS must be a finite number > 0 s; got -1/);
    const b = new RollingMedianBaseline(60, 10);
    expect(b.value()).toBeNull();
    b.push(5, 1);
    expect(() => b.push(5, 2)).toThrow(/tS must increase; got 5 s after 5 s/);
    expect(() => b.push(6, Number.POSITIVE_INFINITY)).toThrow(/finite numbers; got tS 6, v Infinity/);
    expect(() => b.freeze("")).toThrow(/reason must be a non-empty string/);
  });
});
