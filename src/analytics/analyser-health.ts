// Health of one analyser (or transmitter): can the numbers it sends be trusted now?
// A value that cannot be trusted makes the indicators built on it "unknown", never safe,
// so this module names *why* a value is not trusted, one state at a time for the screen,
// with every applicable reason listed.
//
// States, worst first (the first that applies is reported; HEALTH_ORDER below):
//   no-data         nothing received yet
//   stale           no update within 3 expected periods (receive time): every diagnosis of
//                   the last sample is old news, so this leads
//   loop-fault      4–20 mA loop current in the NAMUR NE 43 failure band (wire break, short,
//                   transmitter fault): NE 107 category F
//   bad             sample quality bad (or a value that is not a number): NE 107 F
//   function-check  calibration, blowback or multiplexer switching: NE 107 category C; the value
//                   is held or shows test gas, so out-of-range or frozen are expected consequences
//   out-of-range    value outside the configured valid range: NE 107 S (out of specification)
//   frozen          no change larger than frozenEpsilon within frozenWindowS while the plant runs:
//                   a time-shared analyser holding a point at its last value is frozen, not calm
//   uncertain       quality uncertain, or the loop current in the NE 43 saturation band
//   ok
//
// Times: all in epoch ms on the edge box's clock. Staleness and the frozen window use the
// receive time, because nowMs is on the same clock; the source time may come from an
// analyser whose clock is off. Memory: the frozen detector holds the samples of one window
// at most (monotonic deques), independent of run time.
import { checkNumber } from "../physics/validate.js";
import { checkFinite } from "./check.js";

export type AnalyserHealthState =
  | "ok"
  | "no-data"
  | "stale"
  | "frozen"
  | "out-of-range"
  | "bad"
  | "uncertain"
  | "function-check"
  | "loop-fault";

/** Worst first: the reported state is the first of these that applies. */
export const HEALTH_ORDER: readonly AnalyserHealthState[] = [
  "no-data",
  "stale",
  "loop-fault",
  "bad",
  "function-check",
  "out-of-range",
  "frozen",
  "uncertain",
  "ok",
];

/**
 * NAMUR NE 43 current levels in mA (from memory): measurement information 3.8–20.5 mA;
 * failure information at or below 3.6 mA or at or above 21 mA; in between, the transmitter
 * signals that the measurement is saturated beyond its range.
 */
export const NE43 = {
  failureLowMa: 3.6,
  measureLowMa: 3.8,
  measureHighMa: 20.5,
  failureHighMa: 21.0,
} as const;

/** A sample is stale after this many expected periods without an update (as SignalState). */
export const HEALTH_STALE_AFTER_PERIODS = 3;

export interface AnalyserHealthOptions {
  /** Expected update period, s (> 0). */
  expectedPeriodS: number;
  /** Window for the frozen test, s (> 0); longer than the analyser's normal calm spells. */
  frozenWindowS: number;
  /** A change up to this size (signal unit, >= 0) still counts as no change. */
  frozenEpsilon: number;
  /** Valid range [low, high] in the signal's unit. */
  range?: [number, number];
  /** The signal comes over a 4–20 mA loop whose current is reported (NE 43 checks); samples without loopCurrentMa skip the check. */
  loopMa?: boolean;
}

/** One sample as the health check needs it; a core Sample fits, plus the loop current. */
export interface AnalyserHealthSample {
  value: number;
  quality: "good" | "uncertain" | "bad";
  qualityReason?: string;
  sourceTimeMs: number;
  receiveTimeMs: number;
  functionCheck?: boolean;
  /** Loop current in mA; used only with `loopMa`. */
  loopCurrentMa?: number;
}

export interface AnalyserHealthResult {
  state: AnalyserHealthState;
  /** Every condition that applies, worst first; empty when ok. */
  reasons: string[];
  /**
   * When the reported state began, as seen by evaluate() (so to the tick period);
   * null while no data has arrived.
   */
  sinceMs: number | null;
}

type LoopBand = "ok" | "low-saturated" | "high-saturated" | "fault-low" | "fault-high";

function loopBand(ma: number): LoopBand {
  if (ma <= NE43.failureLowMa) return "fault-low";
  if (ma >= NE43.failureHighMa) return "fault-high";
  if (ma < NE43.measureLowMa) return "low-saturated";
  if (ma > NE43.measureHighMa) return "high-saturated";
  return "ok";
}

/**
 * Sliding-window extremum of a held signal. Each entry keeps the time its sample was
 * superseded (`untilMs`); an entry leaves at the front once it was superseded before the
 * window start. Entries dominated by a later sample are dropped at the back, so the front
 * is the extremum of every sample whose held interval reaches into the window.
 */
class ExtremumDeque {
  private t: number[] = [];
  private v: number[] = [];
  private until: number[] = [];
  private head = 0;

  /** `keepsOver(a, b)`: an older value a stays in front of a newer b (a > b for the maximum). */
  constructor(private readonly keepsOver: (older: number, newer: number) => boolean) {}

  get empty(): boolean {
    return this.head >= this.t.length;
  }

  push(tMs: number, v: number): void {
    const last = this.t.length - 1;
    if (last >= this.head) this.until[last] = tMs; // the newest sample is always at the back
    while (this.t.length > this.head && !this.keepsOver(this.v[this.t.length - 1]!, v)) {
      this.t.pop();
      this.v.pop();
      this.until.pop();
    }
    this.t.push(tMs);
    this.v.push(v);
    this.until.push(Number.POSITIVE_INFINITY);
  }

  /** Drop entries superseded at or before `windowStartMs`. */
  expire(windowStartMs: number): void {
    while (this.head < this.t.length && this.until[this.head]! <= windowStartMs) this.head++;
    if (this.head > 64 && this.head * 2 > this.t.length) {
      this.t = this.t.slice(this.head);
      this.v = this.v.slice(this.head);
      this.until = this.until.slice(this.head);
      this.head = 0;
    }
  }

  front(): number | null {
    return this.empty ? null : this.v[this.head]!;
  }

  clear(): void {
    this.t = [];
    this.v = [];
    this.until = [];
    this.head = 0;
  }
}

export class AnalyserHealth {
  private readonly opts: AnalyserHealthOptions;
  private last: AnalyserHealthSample | null = null;
  private readonly maxD = new ExtremumDeque((older, newer) => older > newer);
  private readonly minD = new ExtremumDeque((older, newer) => older < newer);
  /** Receive time of the first sample of the current unbroken run the frozen test may use. */
  private flatHistoryFromMs: number | null = null;
  private reported: AnalyserHealthState | null = null;
  private reportedSinceMs: number | null = null;
  /** The result while all is well, reused: evaluate() runs for every analysed signal at every tick. */
  private okResult: AnalyserHealthResult = { state: "ok", reasons: [], sinceMs: null };

  constructor(opts: AnalyserHealthOptions) {
    const fn = "AnalyserHealth";
    checkNumber(fn, "expectedPeriodS", opts.expectedPeriodS, { min: 0, minExclusive: true, unit: "s" });
    checkNumber(fn, "frozenWindowS", opts.frozenWindowS, { min: 0, minExclusive: true, unit: "s" });
    checkNumber(fn, "frozenEpsilon", opts.frozenEpsilon, { min: 0 });
    if (opts.range) {
      const [lo, hi] = opts.range;
      checkFinite(fn, "range[0]", lo);
      checkFinite(fn, "range[1]", hi);
      if (!(lo < hi)) throw new RangeError(`${fn}: range must be [low, high] with low < high; got [${lo}, ${hi}]`);
    }
    this.opts = { ...opts, range: opts.range ? [opts.range[0], opts.range[1]] : undefined };
  }

  private get staleAfterMs(): number {
    return HEALTH_STALE_AFTER_PERIODS * this.opts.expectedPeriodS * 1000;
  }

  /** Take the newest sample (in receive order). */
  update(s: AnalyserHealthSample): void {
    const fn = "AnalyserHealth.update";
    checkFinite(fn, "sourceTimeMs", s.sourceTimeMs, "epoch ms");
    checkFinite(fn, "receiveTimeMs", s.receiveTimeMs, "epoch ms");
    if (s.loopCurrentMa !== undefined) checkFinite(fn, "loopCurrentMa", s.loopCurrentMa, "mA");
    const prev = this.last;
    this.last = { ...s };

    // The frozen test only looks at values that claim to be measurements: a bad value, a
    // loop fault or a function check (which holds the value on purpose) breaks the run, and so
    // does a gap long enough to be stale or a receive clock that stepped back.
    const usable =
      s.quality !== "bad" &&
      Number.isFinite(s.value) &&
      s.functionCheck !== true &&
      !(this.opts.loopMa && s.loopCurrentMa !== undefined && loopBand(s.loopCurrentMa).startsWith("fault"));
    const broken =
      prev === null ||
      s.receiveTimeMs < prev.receiveTimeMs ||
      s.receiveTimeMs - prev.receiveTimeMs > this.staleAfterMs;
    if (!usable || broken) this.resetFlat();
    if (!usable) return;
    if (this.flatHistoryFromMs === null) this.flatHistoryFromMs = s.receiveTimeMs;
    this.maxD.push(s.receiveTimeMs, s.value);
    this.minD.push(s.receiveTimeMs, s.value);
  }

  private resetFlat(): void {
    this.maxD.clear();
    this.minD.clear();
    this.flatHistoryFromMs = null;
  }

  /**
   * The state at nowMs (epoch ms, non-decreasing between calls). `plantRunning`: the
   * process is in a phase where the measured value must move, so a flat value is frozen.
   */
  evaluate(nowMs: number, plantRunning: boolean): AnalyserHealthResult {
    checkFinite("AnalyserHealth.evaluate", "nowMs", nowMs, "epoch ms");
    const found = new Map<AnalyserHealthState, string[]>();
    const add = (state: AnalyserHealthState, reason: string): void => {
      if (!found.has(state)) found.set(state, []);
      found.get(state)!.push(reason);
    };
    const s = this.last;
    if (s === null) {
      this.reported = "no-data";
      this.reportedSinceMs = null;
      return { state: "no-data", reasons: ["no sample received yet"], sinceMs: null };
    }

    const ageMs = nowMs - s.receiveTimeMs;
    const stale = ageMs > this.staleAfterMs;
    const frozen = this.frozenSpan(nowMs);
    // Fast path, no allocation: fresh, good, in range, no loop trouble, not in check, not frozen.
    const r = this.opts.range;
    if (
      !stale &&
      s.quality === "good" &&
      Number.isFinite(s.value) &&
      s.functionCheck !== true &&
      !(this.opts.loopMa && s.loopCurrentMa !== undefined && loopBand(s.loopCurrentMa) !== "ok") &&
      !(r && (s.value < r[0] || s.value > r[1])) &&
      !(plantRunning && frozen !== null)
    ) {
      if (this.reported !== "ok") {
        this.reported = "ok";
        this.reportedSinceMs = nowMs;
        this.okResult = { state: "ok", reasons: [], sinceMs: nowMs };
      }
      return this.okResult;
    }
    const of = stale ? "last sample: " : "";
    if (stale) {
      add(
        "stale",
        `no update for ${fmt(ageMs / 1000)} s (expected every ${fmt(this.opts.expectedPeriodS)} s, ` +
          `stale after ${HEALTH_STALE_AFTER_PERIODS} periods)`,
      );
    }
    if (this.opts.loopMa && s.loopCurrentMa !== undefined) {
      const ma = s.loopCurrentMa;
      const band = loopBand(ma);
      if (band === "fault-low") add("loop-fault", `${of}loop current ${fmt(ma)} mA at or below the NAMUR NE 43 failure level ${NE43.failureLowMa} mA (wire break or transmitter fault)`);
      if (band === "fault-high") add("loop-fault", `${of}loop current ${fmt(ma)} mA at or above the NAMUR NE 43 failure level ${NE43.failureHighMa} mA (short circuit or transmitter fault)`);
      if (band === "low-saturated") add("uncertain", `${of}loop current ${fmt(ma)} mA below the NAMUR NE 43 measuring band ${NE43.measureLowMa}–${NE43.measureHighMa} mA: signal saturated low`);
      if (band === "high-saturated") add("uncertain", `${of}loop current ${fmt(ma)} mA above the NAMUR NE 43 measuring band ${NE43.measureLowMa}–${NE43.measureHighMa} mA: signal saturated high`);
    }
    if (s.quality === "bad") add("bad", `${of}quality bad${s.qualityReason ? ` (${s.qualityReason})` : ""}`);
    else if (!Number.isFinite(s.value)) add("bad", `${of}value is not a finite number (${s.value})`);
    if (s.functionCheck) add("function-check", `${of}analyser in function check (NAMUR NE 107 category C: calibration, blowback or multiplexer switching)`);
    if (r && Number.isFinite(s.value) && (s.value < r[0] || s.value > r[1])) {
      add("out-of-range", `${of}value ${fmt(s.value)} outside the valid range ${r[0]}..${r[1]}`);
    }
    if (s.quality === "uncertain") add("uncertain", `${of}quality uncertain${s.qualityReason ? ` (${s.qualityReason})` : ""}`);

    if (plantRunning && frozen !== null) {
      add(
        "frozen",
        `no change larger than ${fmt(this.opts.frozenEpsilon)} within ${fmt(this.opts.frozenWindowS)} s while the plant runs ` +
          `(spread ${fmt(frozen)}; a time-shared analyser holding this point reads as frozen, not calm)`,
      );
    }

    const state = HEALTH_ORDER.find((h) => found.has(h)) ?? "ok";
    const reasons = HEALTH_ORDER.flatMap((h) => found.get(h) ?? []);
    if (state !== this.reported) {
      this.reported = state;
      this.reportedSinceMs = nowMs;
    }
    return { state, reasons, sinceMs: this.reportedSinceMs };
  }

  /**
   * Spread (max − min) of the held value over [nowMs − frozenWindowS, nowMs] when it is
   * within frozenEpsilon and the unbroken history reaches back over the whole window; else null.
   */
  private frozenSpan(nowMs: number): number | null {
    if (this.flatHistoryFromMs === null) return null;
    const windowStartMs = nowMs - this.opts.frozenWindowS * 1000;
    if (this.flatHistoryFromMs > windowStartMs) return null;
    this.maxD.expire(windowStartMs);
    this.minD.expire(windowStartMs);
    const hi = this.maxD.front();
    const lo = this.minD.front();
    if (hi === null || lo === null) return null;
    const spread = hi - lo;
    return spread <= this.opts.frozenEpsilon ? spread : null;
  }
}

function fmt(x: number): string {
  // 4 significant digits for the messages, without trailing zeros
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(4)));
}
