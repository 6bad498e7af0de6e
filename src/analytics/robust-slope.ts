// Robust slope over a rolling time window: the Theil–Sen estimator, the median of the
// slopes of all point pairs (Sen 1968). Least squares follows a spike (one blowback
// transient of 2000 ppm bends a CO gradient for a whole window); the median of pairwise
// slopes ignores up to ~29 % of bad points.
//
// Cost is bounded: with more than `maxPoints` points in the window, the held span is cut
// into `maxPoints` buckets of equal time width and each non-empty bucket is represented by
// (median t, median v) of its points. Medians, not means, so a spike cannot leak into the
// representative. What this guarantees (proofs in test/analytics/robust-slope.test.ts):
//  - noiseless line: exact (each bucket median lies on the line, because v is monotone in t);
//  - no bucketing (count <= maxPoints), at most a quarter of the points spiked, count >= 5:
//    exact, since more than half of all pairs are then clean and all clean pairs have the true slope;
//  - with bucketing, spikes confined to at most a quarter of the non-empty buckets (>= 5 buckets):
//    exact, by the same argument on the bucket representatives;
//  - with bucketing, spikes anywhere but a strict minority of every bucket's points: each
//    representative lies within |slope| · bucket width of the line, which bounds the error
//    (for 60 buckets, all non-empty: within 2/17 of |slope|) but does not make it exact.
//
// Units: t in seconds (any origin, epoch seconds are fine), v in the signal's unit;
// slopePerS() in v-units per second. Memory is the points inside the window (a ring buffer
// that grows to the window's point count and no further), independent of run time.
import { checkNumber } from "../physics/validate.js";
import { grownRing } from "./ring.js";

export class RollingRobustSlope {
  private t: Float64Array;
  private v: Float64Array;
  private head = 0; // index of the oldest point in the ring
  private n = 0;
  // Scratch space for slopePerS(), reused between calls.
  private readonly xs: Float64Array;
  private readonly ys: Float64Array;
  private readonly slopes: Float64Array;
  private bucketV = new Float64Array(0);

  constructor(
    readonly windowS: number,
    readonly maxPoints = 60,
  ) {
    checkNumber("RollingRobustSlope", "windowS", windowS, { min: 0, minExclusive: true, unit: "s" });
    if (!Number.isInteger(maxPoints) || maxPoints < 2) {
      throw new RangeError(`RollingRobustSlope: maxPoints must be an integer >= 2; got ${String(maxPoints)}`);
    }
    this.t = new Float64Array(64);
    this.v = new Float64Array(64);
    this.xs = new Float64Array(maxPoints);
    this.ys = new Float64Array(maxPoints);
    this.slopes = new Float64Array((maxPoints * (maxPoints - 1)) / 2);
  }

  /** Number of raw points inside the window. */
  get count(): number {
    return this.n;
  }

  /** Time from the oldest to the newest point held, in seconds. */
  get spanS(): number {
    return this.n < 2 ? 0 : this.at(this.n - 1) - this.at(0);
  }

  clear(): void {
    this.head = 0;
    this.n = 0;
  }

  /**
   * Add a point (t in s, v in the signal's unit). Times must strictly increase: the caller
   * drops duplicates and out-of-order samples. Amortised O(1).
   */
  push(tS: number, v: number): void {
    if (!Number.isFinite(tS) || !Number.isFinite(v)) {
      throw new RangeError(`RollingRobustSlope.push: tS and v must be finite numbers; got tS ${tS}, v ${v}`);
    }
    if (this.n > 0) {
      const newest = this.at(this.n - 1);
      if (!(tS > newest)) {
        throw new RangeError(`RollingRobustSlope.push: tS must increase; got ${tS} s after ${newest} s`);
      }
    }
    if (this.n === this.t.length) this.grow();
    const idx = (this.head + this.n) % this.t.length;
    this.t[idx] = tS;
    this.v[idx] = v;
    this.n++;
    const oldestAllowed = tS - this.windowS;
    while (this.n > 0 && this.t[this.head]! < oldestAllowed) {
      this.head = (this.head + 1) % this.t.length;
      this.n--;
    }
  }

  /**
   * Theil–Sen slope in v-units per second, or null with fewer than two points.
   * O(n log n) for the bucketing plus O(m² log m) for the m <= maxPoints representatives;
   * meant to be called once per tick, not per sample.
   */
  slopePerS(): number | null {
    if (this.n < 2) return null;
    const m = this.n <= this.maxPoints ? this.copyPoints() : this.bucketPoints();
    if (m < 2) return null;
    const xs = this.xs;
    const ys = this.ys;
    let k = 0;
    for (let i = 0; i < m; i++) {
      for (let j = i + 1; j < m; j++) this.slopes[k++] = (ys[j]! - ys[i]!) / (xs[j]! - xs[i]!);
    }
    const slope = medianSortedInPlace(this.slopes.subarray(0, k));
    // Only absurd inputs (values near the float limit) overflow; no slope is better than ±Infinity.
    return Number.isFinite(slope) ? slope : null;
  }

  /** Times relative to the oldest point: exact for nearby epoch seconds, and keeps precision. */
  private copyPoints(): number {
    const origin = this.at(0);
    for (let i = 0; i < this.n; i++) {
      const idx = (this.head + i) % this.t.length;
      this.xs[i] = this.t[idx]! - origin;
      this.ys[i] = this.v[idx]!;
    }
    return this.n;
  }

  /**
   * Cut the held span into maxPoints buckets of equal width; each non-empty bucket gives
   * (median t, median v). Points are in time order, so a bucket is a contiguous run, its
   * times are already sorted, and the representatives' times strictly increase.
   */
  private bucketPoints(): number {
    const origin = this.at(0);
    const widthS = (this.at(this.n - 1) - origin) / this.maxPoints;
    if (this.bucketV.length < this.n) this.bucketV = new Float64Array(this.t.length);
    let m = 0;
    let runStart = 0; // index (0..n) of the current run's first point
    let runBucket = -1;
    const flush = (endExclusive: number): void => {
      const len = endExclusive - runStart;
      if (len <= 0) return;
      // median time: the times are sorted already
      const mid = runStart + (len >> 1);
      const tMid = len % 2 ? this.at(mid) - origin : (this.at(mid - 1) - origin) / 2 + (this.at(mid) - origin) / 2;
      for (let i = 0; i < len; i++) this.bucketV[i] = this.v[(this.head + runStart + i) % this.t.length]!;
      this.xs[m] = tMid;
      this.ys[m] = medianSortedInPlace(this.bucketV.subarray(0, len));
      m++;
    };
    for (let i = 0; i < this.n; i++) {
      const b = Math.min(this.maxPoints - 1, Math.floor((this.at(i) - origin) / widthS));
      if (b !== runBucket) {
        flush(i);
        runStart = i;
        runBucket = b;
      }
    }
    flush(this.n);
    return m;
  }

  private at(i: number): number {
    return this.t[(this.head + i) % this.t.length]!;
  }

  private grow(): void {
    ({ t: this.t, v: this.v } = grownRing(this.t, this.v, this.head, this.n));
    this.head = 0;
  }
}

/** Median of a non-empty array, sorting it in place (typed arrays sort numerically). */
function medianSortedInPlace(a: Float64Array): number {
  a.sort();
  const len = a.length;
  const mid = len >> 1;
  // halves first: no overflow for values near the float limit
  return len % 2 ? a[mid]! : a[mid - 1]! / 2 + a[mid]! / 2;
}
