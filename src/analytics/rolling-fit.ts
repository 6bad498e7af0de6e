// Least-squares straight line over a rolling time window, O(1) per sample.
//
// Sums of t, v, t², t·v are kept with t measured from a local origin. Adding and
// removing terms lets rounding drift and lets t grow, which destroys precision in
// Sxx = Σt² − (Σt)²/n; so the origin is moved to the oldest point and the sums are
// recomputed from the buffer every `rebaseEvery` insertions (amortised O(1)).
import { grownRing } from "./ring.js";

export class RollingLinearFit {
  private t: Float64Array;
  private v: Float64Array;
  private head = 0; // index of the oldest point
  private n = 0;
  private originS = 0;
  private st = 0;
  private sv = 0;
  private stt = 0;
  private stv = 0;
  private sinceRebase = 0;

  constructor(
    readonly windowS: number,
    initialCapacity = 64,
    private readonly rebaseEvery = 4096,
  ) {
    this.t = new Float64Array(initialCapacity);
    this.v = new Float64Array(initialCapacity);
  }

  get count(): number {
    return this.n;
  }

  /** Time span covered by the points held, in seconds. */
  get spanS(): number {
    if (this.n < 2) return 0;
    return this.tAt(this.n - 1) - this.tAt(0);
  }

  get newestS(): number | null {
    return this.n ? this.tAt(this.n - 1) : null;
  }

  clear(): void {
    this.head = 0;
    this.n = 0;
    this.st = this.sv = this.stt = this.stv = 0;
    this.sinceRebase = 0;
  }

  /** Add a point; `tS` must be later than the newest point (callers drop the others). */
  push(tS: number, value: number): void {
    if (this.n === this.t.length) this.grow();
    if (this.n === 0) this.originS = tS;
    // Wrapping by comparison, not %: push runs for every sample.
    let idx = this.head + this.n;
    if (idx >= this.t.length) idx -= this.t.length;
    this.t[idx] = tS;
    this.v[idx] = value;
    this.n++;
    const x = tS - this.originS;
    this.st += x;
    this.sv += value;
    this.stt += x * x;
    this.stv += x * value;
    // Evict points that fell out of the window.
    const oldestAllowed = tS - this.windowS;
    while (this.n > 0 && this.t[this.head]! < oldestAllowed) this.dropOldest();
    if (++this.sinceRebase >= this.rebaseEvery) this.rebase();
  }

  /** Slope in value units per second, or null with fewer than two distinct times. */
  slopePerS(): number | null {
    if (this.n < 2) return null;
    const n = this.n;
    const sxx = this.stt - (this.st * this.st) / n;
    if (!(sxx > 1e-12)) return null;
    const sxy = this.stv - (this.st * this.sv) / n;
    return sxy / sxx;
  }

  mean(): number | null {
    return this.n ? this.sv / this.n : null;
  }

  /** The i-th oldest time (0 <= i < n). */
  private tAt(i: number): number {
    const idx = this.head + i;
    return this.t[idx < this.t.length ? idx : idx - this.t.length]!;
  }

  private dropOldest(): void {
    const x = this.t[this.head]! - this.originS;
    const value = this.v[this.head]!;
    this.st -= x;
    this.sv -= value;
    this.stt -= x * x;
    this.stv -= x * value;
    if (++this.head === this.t.length) this.head = 0;
    this.n--;
    if (this.n === 0) this.clear();
  }

  private rebase(): void {
    this.sinceRebase = 0;
    if (this.n === 0) return;
    this.originS = this.t[this.head]!;
    this.st = this.sv = this.stt = this.stv = 0;
    for (let i = 0; i < this.n; i++) {
      const idx = (this.head + i) % this.t.length;
      const x = this.t[idx]! - this.originS;
      const value = this.v[idx]!;
      this.st += x;
      this.sv += value;
      this.stt += x * x;
      this.stv += x * value;
    }
  }

  private grow(): void {
    ({ t: this.t, v: this.v } = grownRing(this.t, this.v, this.head, this.n));
    this.head = 0;
  }
}
