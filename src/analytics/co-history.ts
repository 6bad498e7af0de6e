// A bounded history of one signal's values by source time, for looking a value up at an
// earlier time: the inlet CO a transport delay before the outlet sample it is compared with.
//
// Entries are (t, v) in strictly increasing t; v = NaN marks a break (a bad value, a function
// check): nothing is interpolated across it. A lookup interpolates linearly between the two
// samples around the time asked for when both are good and at most maxGapS apart, else takes
// the nearest good sample within a tolerance, else says why there is none.
//
// Memory: entries older than horizonS before the newest are dropped, and never more than
// maxEntries are held (the oldest go first), whatever the sample rate or run time.
//
// Units: t in seconds, v in the signal's unit.

export type Lookup =
  | { value: number; atS: number; how: "exact" | "interpolated" | "nearest" }
  | { value: null; reason: string };

export class SampleHistory {
  private t: number[] = [];
  private v: number[] = [];
  private head = 0;

  constructor(
    readonly horizonS: number,
    readonly maxEntries: number,
  ) {
    if (!(horizonS > 0) || !Number.isFinite(horizonS)) throw new RangeError(`SampleHistory: horizonS must be a positive number of seconds; got ${horizonS}`);
    if (!Number.isInteger(maxEntries) || maxEntries < 2) throw new RangeError(`SampleHistory: maxEntries must be an integer >= 2; got ${maxEntries}`);
  }

  get count(): number {
    return this.t.length - this.head;
  }

  /** A good value at tS (strictly later than the newest entry; later ones are the caller's to drop). */
  push(tS: number, v: number): void {
    if (!Number.isFinite(v)) throw new RangeError(`SampleHistory.push: v must be finite (use markBreak for a bad value); got ${v}`);
    this.append(tS, v);
  }

  /** A bad value or function check at tS: a break in the history. */
  markBreak(tS: number): void {
    this.append(tS, Number.NaN);
  }

  private append(tS: number, v: number): void {
    if (!Number.isFinite(tS)) throw new RangeError(`SampleHistory: tS must be finite; got ${tS}`);
    const n = this.t.length;
    if (n > this.head && !(tS > this.t[n - 1]!)) {
      throw new RangeError(`SampleHistory: tS must increase; got ${tS} s after ${this.t[n - 1]} s`);
    }
    this.t.push(tS);
    this.v.push(v);
    const oldest = tS - this.horizonS;
    while (this.head < this.t.length && (this.t[this.head]! < oldest || this.count > this.maxEntries)) this.head++;
    if (this.head > 1024 && this.head * 2 > this.t.length) {
      this.t = this.t.slice(this.head);
      this.v = this.v.slice(this.head);
      this.head = 0;
    }
  }

  /** The value at targetS (see the header for the rules). */
  valueAt(targetS: number, toleranceS: number, maxGapS: number): Lookup {
    const n = this.t.length;
    if (this.count === 0) return { value: null, reason: "no history yet" };
    // last index with t <= targetS, or head - 1
    let lo = this.head;
    let hi = n;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (this.t[mid]! <= targetS) lo = mid + 1;
      else hi = mid;
    }
    const a = lo - 1;
    const b = lo;
    const hasA = a >= this.head;
    const hasB = b < n;
    const goodA = hasA && Number.isFinite(this.v[a]!);
    const goodB = hasB && Number.isFinite(this.v[b]!);
    if (goodA && this.t[a] === targetS) return { value: this.v[a]!, atS: targetS, how: "exact" };
    if (goodA && goodB && this.t[b]! - this.t[a]! <= maxGapS) {
      const f = (targetS - this.t[a]!) / (this.t[b]! - this.t[a]!);
      return { value: this.v[a]! + f * (this.v[b]! - this.v[a]!), atS: targetS, how: "interpolated" };
    }
    const dA = goodA ? targetS - this.t[a]! : Infinity;
    const dB = goodB ? this.t[b]! - targetS : Infinity;
    if (Math.min(dA, dB) <= toleranceS) {
      const i = dA <= dB ? a : b;
      return { value: this.v[i]!, atS: this.t[i]!, how: "nearest" };
    }
    const oldest = this.t[this.head]!;
    const newest = this.t[n - 1]!;
    if (targetS < oldest) return { value: null, reason: `history starts ${Math.round(oldest - targetS)} s after the time needed` };
    if (targetS > newest) return { value: null, reason: `no value yet for the time needed (the newest is ${Math.round(targetS - newest)} s older)` };
    return { value: null, reason: `no good value within ${toleranceS} s of the time needed (a gap, a bad value or a function check)` };
  }
}
