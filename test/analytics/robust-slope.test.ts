// The rolling Theil–Sen slope against its definition (Sen 1968: the median of the slopes
// of all pairs of points with distinct times), computed here by brute force, and against
// the robustness bounds proved in the comments below.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { RollingLinearFit } from "../../src/analytics/rolling-fit.js";
import { RollingRobustSlope } from "../../src/analytics/robust-slope.js";

/** Epoch seconds near 2023; steps are multiples of 1/64 s, so every time is exact in binary. */
const T0 = 1_700_000_000;
const TICK = 1 / 64;

function median(xs: number[]): number {
  const a = [...xs].sort((p, q) => p - q);
  const mid = Math.floor(a.length / 2);
  return a.length % 2 ? a[mid]! : (a[mid - 1]! + a[mid]!) / 2;
}

/** Definition (Sen 1968): median over all pairs i < j with t_i != t_j of (v_j − v_i)/(t_j − t_i). */
function theilSen(pts: [number, number][]): number | null {
  const slopes: number[] = [];
  for (let i = 0; i < pts.length; i++) {
    for (let j = i + 1; j < pts.length; j++) {
      const [ti, vi] = pts[i]!;
      const [tj, vj] = pts[j]!;
      if (tj !== ti) slopes.push((vj - vi) / (tj - ti));
    }
  }
  return slopes.length ? median(slopes) : null;
}

/** The bucketing as specified: maxPoints buckets of equal width over the held span, (median t, median v) each. */
function bucketReps(pts: [number, number][], maxPoints: number): [number, number][] {
  const t0 = pts[0]![0];
  const w = (pts[pts.length - 1]![0] - t0) / maxPoints;
  const buckets = new Map<number, [number, number][]>();
  for (const p of pts) {
    const b = Math.min(maxPoints - 1, Math.floor((p[0] - t0) / w));
    if (!buckets.has(b)) buckets.set(b, []);
    buckets.get(b)!.push(p);
  }
  return [...buckets.keys()]
    .sort((a, b) => a - b)
    .map((b) => {
      const ps = buckets.get(b)!;
      return [median(ps.map((p) => p[0] - t0)), median(ps.map((p) => p[1]))];
    });
}

function inWindow(pts: [number, number][], windowS: number): [number, number][] {
  const newest = pts[pts.length - 1]![0];
  return pts.filter(([t]) => t >= newest - windowS);
}

const tol = (b: number): number => 1e-9 * Math.max(1, Math.abs(b));

describe("RollingRobustSlope", () => {
  it("is exact on noiseless lines, any slope, offset and irregular sampling, with and without bucketing", () => {
    // On v = a + b·t every pairwise slope is b; with bucketing each bucket's (median t, median v)
    // lies on the line too, because v is monotone in t (for an even count both medians average the
    // same two points). Tolerance: floating rounding of v only.
    fc.assert(
      fc.property(
        fc.double({ min: -50, max: 50, noNaN: true }),
        fc.double({ min: -1e3, max: 1e3, noNaN: true }),
        fc.array(fc.integer({ min: 1, max: 64 }), { minLength: 1, maxLength: 400 }),
        fc.integer({ min: 2, max: 60 }),
        (b, a, steps, maxPoints) => {
          const f = new RollingRobustSlope(1e6, maxPoints);
          let x = 0;
          f.push(T0, a);
          for (const s of steps) {
            x += s * TICK;
            f.push(T0 + x, a + b * x);
          }
          const got = f.slopePerS();
          expect(got).not.toBeNull();
          expect(Math.abs(got! - b)).toBeLessThanOrEqual(tol(b));
        },
      ),
      { numRuns: 300 },
    );
  });

  it("equals the brute-force Theil–Sen of the points in the window while count <= maxPoints", () => {
    // Definition (Sen 1968), computed over exactly the points the window holds (t >= newest − windowS).
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.integer({ min: 1, max: 640 }), fc.double({ min: -1e4, max: 1e4, noNaN: true })), {
          minLength: 2,
          maxLength: 300,
        }),
        fc.integer({ min: 1, max: 60 }),
        (steps, windowS) => {
          const f = new RollingRobustSlope(windowS, 60);
          const pts: [number, number][] = [];
          let x = 0;
          for (const [s, v] of steps) {
            x += s * TICK;
            pts.push([T0 + x, v]);
            f.push(T0 + x, v);
            const held = inWindow(pts, windowS);
            expect(f.count).toBe(held.length);
            if (held.length > 60) continue;
            const ref = theilSen(held);
            const got = f.slopePerS();
            if (ref === null) expect(got).toBeNull();
            else expect(Math.abs(got! - ref)).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(ref)));
          }
        },
      ),
      { numRuns: 50 },
    );
  });

  it("with more than maxPoints points equals Theil–Sen of the bucket medians (the specified reduction)", () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.integer({ min: 1, max: 200 }), fc.double({ min: -1e4, max: 1e4, noNaN: true })), {
          minLength: 30,
          maxLength: 500,
        }),
        fc.integer({ min: 2, max: 25 }),
        (steps, maxPoints) => {
          const f = new RollingRobustSlope(1e6, maxPoints);
          const pts: [number, number][] = [];
          let x = 0;
          for (const [s, v] of steps) {
            x += s * TICK;
            pts.push([T0 + x, v]);
            f.push(T0 + x, v);
          }
          const ref = theilSen(bucketReps(pts, maxPoints));
          expect(ref).not.toBeNull();
          expect(Math.abs(f.slopePerS()! - ref!)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(ref!)));
        },
      ),
      { numRuns: 100 },
    );
  });

  it("ignores spikes of any magnitude at up to a quarter of the points (no bucketing, count >= 5)", () => {
    // Proof: n points, k <= n/4 spiked. The C(n−k, 2) clean pairs all have slope b, and
    // (n−k)(n−k−1) > n(n−1)/2 whenever k <= n/4 and n >= 5 (at k = n/4 the difference is n²/16 − n/4 > 0).
    // More than half of the sorted slopes are then exactly b, a contiguous block that covers the
    // middle element(s): the median is b.
    fc.assert(
      fc.property(
        fc.integer({ min: 5, max: 60 }),
        fc.double({ min: -50, max: 50, noNaN: true }),
        fc.double({ min: -1e3, max: 1e3, noNaN: true }),
        fc.array(fc.integer({ min: 1, max: 64 }), { minLength: 60, maxLength: 60 }),
        fc.array(fc.tuple(fc.nat(), fc.double({ min: -1e300, max: 1e300, noNaN: true })), { minLength: 15, maxLength: 15 }),
        (n, b, a, steps, spikes) => {
          const k = Math.floor(n / 4);
          const spiked = new Map<number, number>();
          for (const [i, s] of spikes) if (spiked.size < k) spiked.set(i % n, s);
          const f = new RollingRobustSlope(1e6, 60);
          let x = 0;
          for (let i = 0; i < n; i++) {
            x += steps[i]! * TICK;
            f.push(T0 + x, spiked.get(i) ?? a + b * x);
          }
          expect(Math.abs(f.slopePerS()! - b)).toBeLessThanOrEqual(tol(b));
        },
      ),
      { numRuns: 300 },
    );
  });

  it("with bucketing, is exact when the spikes sit in at most a quarter of the buckets", () => {
    // 600 regularly spaced points, 60 buckets of width 599/60 steps: point i is in bucket
    // floor(60 i / 599) (never on a boundary, since 599 is prime). Clean buckets' representatives
    // lie exactly on the line; with at most 15 of 60 representatives spiked, the count argument of
    // the previous test applies to the representatives. Every point of a chosen bucket may be a
    // spike (here about a quarter of all points).
    fc.assert(
      fc.property(
        fc.double({ min: -50, max: 50, noNaN: true }),
        fc.double({ min: -1e3, max: 1e3, noNaN: true }),
        fc.constantFrom(0.25, 0.5, 1, 2),
        fc.uniqueArray(fc.integer({ min: 0, max: 59 }), { minLength: 8, maxLength: 15 }),
        fc.array(fc.double({ min: -1e300, max: 1e300, noNaN: true }), { minLength: 600, maxLength: 600 }),
        (b, a, dtS, spikyBuckets, spikeValues) => {
          const spiky = new Set(spikyBuckets);
          const f = new RollingRobustSlope(1e6, 60);
          let spikes = 0;
          for (let i = 0; i < 600; i++) {
            const x = i * dtS;
            const bucket = Math.min(59, Math.floor((60 * i) / 599));
            const isSpike = spiky.has(bucket);
            if (isSpike) spikes++;
            f.push(T0 + x, isSpike ? spikeValues[i]! : a + b * x);
          }
          expect(spikes).toBeLessThanOrEqual(0.26 * 600);
          expect(Math.abs(f.slopePerS()! - b)).toBeLessThanOrEqual(tol(b));
        },
      ),
      { numRuns: 200 },
    );
  });

  it("with bucketing and spikes in a minority of every bucket, stays within 2/17 of |slope|", () => {
    // Bound for 60 buckets, all non-empty, spikes a strict minority of each bucket's points:
    //  - a bucket's median v lies within the range of its clean values (more than half are clean),
    //    so its representative is off the line by less than |b|·w (w the bucket width);
    //  - representatives g >= 2 buckets apart are more than (g−1)·w apart in time, so their pairwise
    //    slope errs by less than 2|b|/(g−1);
    //  - pairs at least G buckets apart number (60−G)(61−G)/2, more than half of the 1770 pairs
    //    for G <= 18 (42·43/2 = 903 > 885); the median lies among them: error < 2|b|/17.
    // G is recomputed below from the formula so the bound is not typed in by hand.
    const M = 60;
    let G = 1; // the largest G with (M−G)(M−G+1) > M(M−1)/2
    while ((M - (G + 1)) * (M - (G + 1) + 1) > (M * (M - 1)) / 2) G++;
    expect(G).toBe(18);
    const bound = 2 / (G - 1);
    fc.assert(
      fc.property(
        fc.double({ min: -50, max: 50, noNaN: true }).filter((b) => Math.abs(b) > 1e-6),
        fc.double({ min: -1e3, max: 1e3, noNaN: true }),
        // per bucket: up to two spike positions and their values
        fc.array(fc.array(fc.tuple(fc.nat(), fc.double({ min: -1e300, max: 1e300, noNaN: true })), { maxLength: 2 }), {
          minLength: M,
          maxLength: M,
        }),
        (b, a, picks) => {
          // bucket of point i = floor(60 i / 599); each bucket has 9 or 10 points, at most 2 spiked
          const members: number[][] = Array.from({ length: M }, () => []);
          for (let i = 0; i < 600; i++) members[Math.min(M - 1, Math.floor((60 * i) / 599))]!.push(i);
          const spike = new Map<number, number>();
          picks.forEach((bucketPicks, bucket) => {
            for (const [pos, val] of bucketPicks) spike.set(members[bucket]![pos % members[bucket]!.length]!, val);
          });
          const f = new RollingRobustSlope(1e6, M);
          for (let i = 0; i < 600; i++) f.push(T0 + i, spike.get(i) ?? a + b * i);
          expect(Math.abs(f.slopePerS()! - b)).toBeLessThan(bound * Math.abs(b));
        },
      ),
      { numRuns: 200 },
    );
  });

  it("a single 2000 ppm spike bends least squares but not the robust slope (CO ramp of 5 ppm/min)", () => {
    // Illustration on the CO use: 0.0833 ppm/s ramp, 1 Hz for 5 min, one blowback transient.
    // Least squares moves by 2000·(290 − 150)/Σ(t − 150)² = 0.123 ppm/s, more than the slope itself.
    const f = new RollingRobustSlope(300);
    const ls = new RollingLinearFit(300);
    const m = 5 / 60;
    for (let t = 0; t <= 300; t++) {
      const v = 20 + m * t + (t === 290 ? 2000 : 0);
      f.push(t, v);
      ls.push(t, v);
    }
    expect(Math.abs(ls.slopePerS()! - m)).toBeGreaterThan(m);
    expect(Math.abs(f.slopePerS()! - m)).toBeLessThan(1e-9);
  });

  it("holds only the window: count and span stay bounded over a long run", () => {
    const f = new RollingRobustSlope(300, 60);
    for (let t = 0; t < 200_000; t++) f.push(T0 + t, Math.sin(t / 100));
    expect(f.count).toBe(301);
    expect(f.spanS).toBe(300);
    f.clear();
    expect(f.count).toBe(0);
    expect(f.slopePerS()).toBeNull();
    f.push(T0, 1);
    expect(f.slopePerS()).toBeNull();
  });

  it("refuses bad input with what was expected and what was found", () => {
    expect(() => new RollingRobustSlope(0)).toThrow(/windowS must be a finite number > 0 s; got 0/);
    expect(() => new RollingRobustSlope(60, 1)).toThrow(/maxPoints must be an integer >= 2; got 1/);
    const f = new RollingRobustSlope(60);
    f.push(10, 1);
    expect(() => f.push(10, 2)).toThrow(/tS must increase; got 10 s after 10 s/);
    expect(() => f.push(11, Number.NaN)).toThrow(/must be finite numbers; got tS 11, v NaN/);
  });
});
