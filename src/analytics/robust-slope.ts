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
  private relT = new Float64Array(0);
  private linV = new Float64Array(0);
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
    // Wrapping by comparison, not %: push runs for every sample.
    const cap = this.t.length;
    let idx = this.head + this.n;
    if (idx >= cap) idx -= cap;
    this.t[idx] = tS;
    this.v[idx] = v;
    this.n++;
    const oldestAllowed = tS - this.windowS;
    while (this.n > 0 && this.t[this.head]! < oldestAllowed) {
      if (++this.head === cap) this.head = 0;
      this.n--;
    }
  }

  /**
   * Theil–Sen slope in v-units per second, or null with fewer than two points.
   * O(n) for the bucketing plus O(m²) for the m <= maxPoints representatives (medians by selection);
   * meant to be called once per tick, not per sample.
   */
  slopePerS(): number | null {
    if (this.n < 2) return null;
    const m = this.n <= this.maxPoints ? this.copyPoints() : this.bucketPoints();
    if (m < 2) return null;
    const xs = this.xs;
    const ys = this.ys;
    const slopes = this.slopes;
    let k = 0;
    for (let i = 0; i < m; i++) {
      const xi = xs[i]!;
      const yi = ys[i]!;
      for (let j = i + 1; j < m; j++) slopes[k++] = (ys[j]! - yi) / (xs[j]! - xi);
    }
    const slope = medianInPlace(slopes, k);
    // Only absurd inputs (values near the float limit) overflow; no slope is better than ±Infinity.
    return Number.isFinite(slope) ? slope : null;
  }

  /** Times relative to the oldest point: exact for nearby epoch seconds, and keeps precision. */
  private copyPoints(): number {
    const { t, v, n } = this;
    const origin = t[this.head]!;
    let idx = this.head;
    for (let i = 0; i < n; i++) {
      this.xs[i] = t[idx]! - origin;
      this.ys[i] = v[idx]!;
      if (++idx === t.length) idx = 0;
    }
    return n;
  }

  /**
   * Cut the held span into maxPoints buckets of equal width; each non-empty bucket gives
   * (median t, median v). Points are in time order, so a bucket is a contiguous run, its
   * times are already sorted, and the representatives' times strictly increase.
   */
  private bucketPoints(): number {
    const n = this.n;
    if (this.relT.length < n) {
      this.relT = new Float64Array(this.t.length);
      this.linV = new Float64Array(this.t.length);
      this.bucketV = new Float64Array(this.t.length);
    }
    // The ring unrolled, oldest first, times relative to the oldest point.
    const { t, v, relT, linV, bucketV, xs, ys } = this;
    const origin = t[this.head]!;
    let idx = this.head;
    for (let i = 0; i < n; i++) {
      relT[i] = t[idx]! - origin;
      linV[i] = v[idx]!;
      if (++idx === t.length) idx = 0;
    }
    const last = this.maxPoints - 1;
    const widthS = relT[n - 1]! / this.maxPoints;
    let m = 0;
    let runStart = 0; // index of the current run's first point
    let runBucket = Math.min(last, Math.floor(relT[0]! / widthS));
    for (let i = 1; i <= n; i++) {
      const b = i < n ? Math.min(last, Math.floor(relT[i]! / widthS)) : -1;
      if (b === runBucket) continue;
      // the run [runStart, i) is one bucket; its times are sorted already
      const len = i - runStart;
      const mid = runStart + (len >> 1);
      xs[m] = len % 2 ? relT[mid]! : relT[mid - 1]! / 2 + relT[mid]! / 2;
      if (len <= 32) ys[m] = smallMedianInPlace(linV, runStart, len);
      else {
        for (let j = 0; j < len; j++) bucketV[j] = linV[runStart + j]!;
        ys[m] = medianInPlace(bucketV, len);
      }
      m++;
      runStart = i;
      runBucket = b;
    }
    return m;
  }

  /** The i-th oldest time (0 <= i < n). */
  private at(i: number): number {
    const idx = this.head + i;
    return this.t[idx < this.t.length ? idx : idx - this.t.length]!;
  }

  private grow(): void {
    ({ t: this.t, v: this.v } = grownRing(this.t, this.v, this.head, this.n));
    this.head = 0;
  }
}

/**
 * Median of a[0..len) (len >= 1), reordering them in place. The value is the one a full
 * numeric sort would give (as Float64Array.prototype.sort: −0 before +0), found by selection
 * in O(len) instead of O(len log len): the sort of the pairwise slopes was most of a tick.
 */
export function medianInPlace(a: Float64Array, len: number): number {
  const mid = len >> 1;
  const odd = len % 2 === 1;
  let hi: number;
  let lo: number;
  // How many of a[0..len) are negative or −0, when the middle is zero (the comparisons below
  // take −0 and +0 as equal; the sort puts every −0 first).
  let negatives = -1;
  if (len <= 16) {
    insertionSort(a, len);
    hi = a[mid]!;
    lo = odd ? hi : a[mid - 1]!;
  } else if (len >= BRACKET_MIN && bracketMiddle(a, len, mid)) {
    ({ lo, hi, negatives } = bracket);
  } else {
    hi = selectInPlace(a, len, mid);
    lo = odd ? hi : maxOf(a, 0, mid);
  }
  if (lo === 0 || hi === 0) {
    if (negatives < 0) negatives = countNegatives(a, 0, len);
    if (lo === 0) lo = (odd ? mid : mid - 1) < negatives ? -0 : 0;
    if (hi === 0) hi = mid < negatives ? -0 : 0;
  }
  if (odd) return hi;
  // halves first: no overflow for values near the float limit
  return lo / 2 + hi / 2;
}

/** medianInPlace for a short run a[from..from + len), sorting it in place. */
function smallMedianInPlace(a: Float64Array, from: number, len: number): number {
  const end = from + len;
  for (let i = from + 1; i < end; i++) {
    const x = a[i]!;
    let j = i - 1;
    while (j >= from && a[j]! > x) {
      a[j + 1] = a[j]!;
      j--;
    }
    a[j + 1] = x;
  }
  const mid = len >> 1;
  const odd = len % 2 === 1;
  let hi = a[from + mid]!;
  let lo = odd ? hi : a[from + mid - 1]!;
  if (lo === 0 || hi === 0) {
    const negatives = countNegatives(a, from, end);
    if (lo === 0) lo = (odd ? mid : mid - 1) < negatives ? -0 : 0;
    if (hi === 0) hi = mid < negatives ? -0 : 0;
  }
  return odd ? hi : lo / 2 + hi / 2;
}

/** Largest of a[from..to) (to > from). */
function maxOf(a: Float64Array, from: number, to: number): number {
  let m = a[from]!;
  for (let i = from + 1; i < to; i++) if (a[i]! > m) m = a[i]!;
  return m;
}

function countNegatives(a: Float64Array, from: number, to: number): number {
  let n = 0;
  for (let i = from; i < to; i++) {
    const x = a[i]!;
    if (x < 0 || (x === 0 && 1 / x < 0)) n++;
  }
  return n;
}

// Bracketing the middle: a sample of evenly spaced entries gives two values that
// very likely enclose the middle ranks; one pass counts the entries below the bracket and
// keeps those inside it, and the middle is selected among those few. When the bracket
// misses (about 1 % of the time), the caller selects among all entries as before. The
// Theil–Sen median of 1770 pairwise slopes takes about half the time this way.
const BRACKET_MIN = 512;
const SAMPLE = 255;
/** Sample ranks either side of the middle's expected rank (2.5 standard deviations of it). */
const SAMPLE_SPREAD = 20;
const sample = new Float64Array(SAMPLE);
let inside = new Float64Array(1024);
const bracket = { lo: 0, hi: 0, negatives: -1 };

/**
 * The middle values of a[0..len) (ranks mid − 1 and mid, or mid alone for an odd len) into
 * `bracket`, without reordering `a`; false when the bracket misses them.
 */
function bracketMiddle(a: Float64Array, len: number, mid: number): boolean {
  const stride = len / SAMPLE;
  for (let q = 0; q < SAMPLE; q++) sample[q] = a[Math.floor((q + 0.5) * stride)]!;
  const centre = SAMPLE >> 1;
  const top = selectInPlace(sample, SAMPLE, centre + SAMPLE_SPREAD);
  const bottom = selectInPlace(sample, centre + SAMPLE_SPREAD, centre - SAMPLE_SPREAD);
  if (inside.length < len) inside = new Float64Array(len);
  let below = 0;
  let m = 0;
  for (let i = 0; i < len; i++) {
    const x = a[i]!;
    if (x < bottom) below++;
    else if (x <= top) inside[m++] = x;
  }
  const first = len % 2 ? mid : mid - 1;
  if (below > first || below + m <= mid) return false;
  // All inside are equal when the bracket is a single value (as ±0 may be: see the caller).
  const hi = bottom === top ? bottom : selectInPlace(inside, m, mid - below);
  bracket.hi = hi;
  // Rank mid − 1 is inside too (below <= mid − 1): the largest of those selected before mid.
  bracket.lo = len % 2 ? hi : bottom === top ? bottom : maxOf(inside, 0, mid - below);
  // Every entry below the bracket is negative when the middle is zero (bottom <= 0 then).
  bracket.negatives = hi === 0 || bracket.lo === 0 ? below + countNegatives(inside, 0, m) : -1;
  return true;
}

function insertionSort(a: Float64Array, len: number): void {
  for (let i = 1; i < len; i++) {
    const x = a[i]!;
    let j = i - 1;
    while (j >= 0 && a[j]! > x) {
      a[j + 1] = a[j]!;
      j--;
    }
    a[j + 1] = x;
  }
}

/**
 * The k-th smallest of a[0..len) (Hoare's selection with a median-of-three pivot); on return
 * a[0..k) <= a[k] <= a(k..len). Falls back to a sort of the remaining range should the
 * partitions keep coming out lopsided, so the worst case stays O(len log len).
 */
function selectInPlace(a: Float64Array, len: number, k: number): number {
  let l = 0;
  let r = len - 1;
  let budget = 2 * Math.ceil(Math.log2(len)) + 8;
  for (;;) {
    if (r <= l + 1) {
      if (r === l + 1 && a[r]! < a[l]!) swap(a, l, r);
      return a[k]!;
    }
    if (--budget < 0) {
      a.subarray(l, r + 1).sort();
      return a[k]!;
    }
    const m = (l + r) >> 1;
    swap(a, m, l + 1);
    if (a[l]! > a[r]!) swap(a, l, r);
    if (a[l + 1]! > a[r]!) swap(a, l + 1, r);
    if (a[l]! > a[l + 1]!) swap(a, l, l + 1);
    // a[l] <= pivot a[l + 1] <= a[r]: sentinels for both scans
    const pivot = a[l + 1]!;
    let i = l + 1;
    let j = r;
    for (;;) {
      do i++;
      while (a[i]! < pivot);
      do j--;
      while (a[j]! > pivot);
      if (j < i) break;
      swap(a, i, j);
    }
    a[l + 1] = a[j]!;
    a[j] = pivot;
    if (j >= k) r = j - 1;
    if (j <= k) l = i;
  }
}

function swap(a: Float64Array, i: number, j: number): void {
  const x = a[i]!;
  a[i] = a[j]!;
  a[j] = x;
}
