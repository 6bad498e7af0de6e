// Rolling median baseline, e.g. the CO level of the last hour, against which a rise is
// measured. The median ignores the short excursions (blowbacks, a puff at a feeder) that
// a mean would carry into the baseline.
//
// Decimation keeps the cost and memory fixed by the window, not the sample rate: the time
// axis is cut into slots of decimateS seconds (slot = floor(tS / decimateS)) and only the
// first sample of each slot is kept, so at most windowS / decimateS + 1 values are held.
//
// Freezing: during start-up or after the gas source changes the CO level moves for
// reasons that are not a heating; while frozen, push() is ignored and value() keeps the
// baseline that stood when it was frozen. After unfreeze() the held values age out as new
// ones arrive, so the baseline moves over to the new conditions without a jump.
//
// Units: tS in seconds, values in the signal's unit.
import { checkNumber } from "../physics/validate.js";

export class RollingMedianBaseline {
  // FIFO of kept values in time order; `head` advances on eviction and the arrays are
  // compacted now and then, so eviction is amortised O(1).
  private times: number[] = [];
  private values: number[] = [];
  private head = 0;
  /** The kept values in ascending order, for an O(1) median. */
  private sorted: number[] = [];
  private lastSlot: number | null = null;
  private lastPushS: number | null = null;
  private frozenReason: string | null = null;

  constructor(
    readonly windowS: number,
    readonly decimateS: number,
  ) {
    checkNumber("RollingMedianBaseline", "windowS", windowS, { min: 0, minExclusive: true, unit: "s" });
    checkNumber("RollingMedianBaseline", "decimateS", decimateS, { min: 0, minExclusive: true, unit: "s" });
  }

  /** Number of values the median is taken over. */
  get count(): number {
    return this.times.length - this.head;
  }

  /** The reason given to freeze(), or null when the baseline follows the data. */
  get frozen(): string | null {
    return this.frozenReason;
  }

  freeze(reason: string): void {
    if (typeof reason !== "string" || reason.trim() === "") {
      throw new RangeError(`RollingMedianBaseline.freeze: reason must be a non-empty string; got ${JSON.stringify(reason)}`);
    }
    this.frozenReason = reason;
  }

  unfreeze(): void {
    this.frozenReason = null;
  }

  /**
   * Offer a value at time tS (strictly increasing). Ignored while frozen. Evicts values
   * older than tS − windowS; keeps the value if it is the first of its decimation slot.
   * O(count) for the sorted insert, once per slot at most.
   */
  push(tS: number, v: number): void {
    if (this.frozenReason !== null) return;
    if (!Number.isFinite(tS) || !Number.isFinite(v)) {
      throw new RangeError(`RollingMedianBaseline.push: tS and v must be finite numbers; got tS ${tS}, v ${v}`);
    }
    if (this.lastPushS !== null && !(tS > this.lastPushS)) {
      throw new RangeError(`RollingMedianBaseline.push: tS must increase; got ${tS} s after ${this.lastPushS} s`);
    }
    this.lastPushS = tS;
    const oldestAllowed = tS - this.windowS;
    while (this.head < this.times.length && this.times[this.head]! < oldestAllowed) {
      removeSorted(this.sorted, this.values[this.head]!);
      this.head++;
    }
    if (this.head > 64 && this.head * 2 > this.times.length) {
      this.times = this.times.slice(this.head);
      this.values = this.values.slice(this.head);
      this.head = 0;
    }
    const slot = Math.floor(tS / this.decimateS);
    if (this.lastSlot !== null && slot <= this.lastSlot) return;
    this.lastSlot = slot;
    this.times.push(tS);
    this.values.push(v);
    insertSorted(this.sorted, v);
  }

  /** Median of the kept values (the mean of the middle two for an even count), or null when empty. */
  value(): number | null {
    const a = this.sorted;
    const n = a.length;
    if (n === 0) return null;
    const mid = n >> 1;
    return n % 2 ? a[mid]! : a[mid - 1]! / 2 + a[mid]! / 2;
  }
}

/** Index of the first element >= v. */
function lowerBound(a: number[], v: number): number {
  let lo = 0;
  let hi = a.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (a[mid]! < v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

function insertSorted(a: number[], v: number): void {
  a.splice(lowerBound(a, v), 0, v);
}

function removeSorted(a: number[], v: number): void {
  const i = lowerBound(a, v);
  // v is held (it was inserted and not yet removed), so a[i] === v
  a.splice(i, 1);
}
