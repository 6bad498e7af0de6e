// CO rate of rise at one measuring point, over a short and a long rolling window of
// source time, each with two estimators on the same points:
//   least squares (RollingLinearFit, O(1) per sample): the textbook slope, follows a spike;
//   Theil–Sen (RollingRobustSlope): the median of pairwise slopes (Sen 1968), ignores spikes.
// The robust slope is the one rules watch by default, so a single spike raises nothing.
//
// No gradient is computed across a gap, a bad or uncertain value, or a function check
// (calibration, blowback, multiplexer switch): the windows start again and say why.
// After a function check the next transportLagS seconds of samples are still check gas
// travelling down the sample line, so they are skipped too.
//
// Memory: each window is decimated to slots of windowS / maxPointsPerWindow seconds (the
// first sample of a slot is kept), so it holds at most maxPointsPerWindow + 1 points
// whatever the sample rate and however long the run.
import type { CoPointConfig } from "../config/schema.js";
import type { Sample } from "../core/types.js";
import { SampleHistory } from "./co-history.js";
import { RollingLinearFit } from "./rolling-fit.js";
import { RollingRobustSlope } from "./robust-slope.js";

export interface WindowResult {
  windowS: number;
  /** Theil–Sen slope, ppm/min. */
  robustPpmPerMin: number | null;
  /** Source time (epoch ms) of the newest point the Theil–Sen slope was computed with. */
  robustAsOfMs: number | null;
  /** Least-squares slope, ppm/min. */
  lsPpmPerMin: number | null;
  /** Points held in the window (after decimation). */
  points: number;
  spanS: number;
  status: "ok" | "unknown";
  reason: string;
}

/** Buckets of the Theil–Sen estimator (RollingRobustSlope's default, whose guarantees are proved for it). */
const ROBUST_BUCKETS = 60;

/** Both estimators over one rolling window, fed the same decimated points. */
export class SlopeWindow {
  private readonly ls: RollingLinearFit;
  private readonly robust: RollingRobustSlope;
  private readonly slotS: number;
  private lastSlot: number | null = null;
  private newestS: number | null = null;
  private clears = 0;
  // Theil–Sen costs the median of m(m−1)/2 pairwise slopes per computation, least squares O(1).
  // The robust slope is recomputed once the window has moved on by one bucket width
  // (windowS / ROBUST_BUCKETS: 5 s for a 5 min window), at once after a restart: between
  // refreshes the bucket representatives barely move, and the estimate lags by half a
  // window anyway. robustAsOfMs tells how old it is.
  private readonly refreshS: number;
  private cacheClears = -1;
  private cacheAtS = 0;
  private cacheSlope: number | null = null;

  constructor(
    readonly windowS: number,
    maxPoints: number,
  ) {
    this.slotS = windowS / maxPoints;
    this.refreshS = windowS / ROBUST_BUCKETS;
    this.ls = new RollingLinearFit(windowS);
    this.robust = new RollingRobustSlope(windowS, ROBUST_BUCKETS);
  }

  get count(): number {
    return this.robust.count;
  }

  get spanS(): number {
    return this.robust.spanS;
  }

  /** tS strictly increasing (the caller guarantees it). */
  push(tS: number, v: number): void {
    const slot = Math.floor(tS / this.slotS);
    if (this.lastSlot !== null && slot <= this.lastSlot) return;
    this.lastSlot = slot;
    this.newestS = tS;
    this.ls.push(tS, v);
    this.robust.push(tS, v);
  }

  clear(): void {
    this.ls.clear();
    this.robust.clear();
    this.lastSlot = null;
    this.newestS = null;
    this.clears++;
  }

  /** Refreshes the cached robust slope when due (see refreshS); cacheAtS tells its age. */
  private robustSlope(): number | null {
    const newest = this.newestS!;
    if (this.cacheClears !== this.clears || newest - this.cacheAtS >= this.refreshS) {
      this.cacheClears = this.clears;
      this.cacheAtS = newest;
      this.cacheSlope = this.robust.slopePerS();
    }
    return this.cacheSlope;
  }

  /** Read the window as it stands into `r` (the signal is trusted; the windows filled after `since`). */
  read(r: WindowReading, minPoints: number, since: string): void {
    r.windowS = this.windowS;
    r.trusted = true;
    r.whyNot = "";
    r.since = since;
    r.minPoints = minPoints;
    r.count = this.count;
    r.spanS = this.spanS;
    r.robustPpmPerMin = null;
    r.lsPpmPerMin = null;
    r.robustAsOfMs = null;
    if (r.count < minPoints || r.spanS < this.windowS / 2) {
      r.kind = "filling";
      return;
    }
    const robust = this.robustSlope();
    const ls = this.ls.slopePerS();
    if (robust === null || ls === null) {
      r.kind = "no-spread";
      return;
    }
    r.kind = "ok";
    r.robustAsOfMs = Math.round(this.cacheAtS * 1000);
    r.robustPpmPerMin = robust * 60;
    r.lsPpmPerMin = ls * 60;
  }

  /** The signal cannot be trusted now: `r` says why (the window is not read). */
  readUntrusted(r: WindowReading, whyNot: string): void {
    r.windowS = this.windowS;
    r.trusted = false;
    r.whyNot = whyNot;
    r.count = this.count;
    r.spanS = this.spanS;
    r.robustPpmPerMin = null;
    r.lsPpmPerMin = null;
    r.robustAsOfMs = null;
  }

  evaluate(minPoints: number, since: string): WindowResult {
    const r = new WindowReading();
    this.read(r, minPoints, since);
    return r.result();
  }
}

/**
 * One window at one tick as plain numbers. The monitor reads this at every tick; the reason
 * text and the WindowResult are built only when someone asks (an unknown value, a snapshot).
 */
export class WindowReading {
  windowS = 0;
  trusted = false;
  whyNot = "";
  /** Why the windows last started again (they fill after it). */
  since = "";
  minPoints = 0;
  count = 0;
  spanS = 0;
  kind: "filling" | "no-spread" | "ok" = "filling";
  robustPpmPerMin: number | null = null;
  lsPpmPerMin: number | null = null;
  robustAsOfMs: number | null = null;

  get reason(): string {
    if (!this.trusted) return this.whyNot;
    if (this.kind === "filling") {
      return `window filling after ${this.since} (${this.count} points over ${Math.round(this.spanS)} s; needs ${this.minPoints} over ${this.windowS / 2} s)`;
    }
    return this.kind === "no-spread" ? "no spread in time" : `Theil–Sen over ${this.windowS} s, ${this.count} points`;
  }

  result(): WindowResult {
    if (!this.trusted) {
      return { windowS: this.windowS, robustPpmPerMin: null, robustAsOfMs: null, lsPpmPerMin: null, points: this.count, spanS: this.spanS, status: "unknown", reason: this.whyNot };
    }
    return {
      windowS: this.windowS,
      points: this.count,
      spanS: this.spanS,
      robustAsOfMs: this.robustAsOfMs,
      robustPpmPerMin: this.robustPpmPerMin,
      lsPpmPerMin: this.lsPpmPerMin,
      status: this.kind === "ok" ? "ok" : "unknown",
      reason: this.reason,
    };
  }
}

export interface Interruption {
  /** Source time (epoch ms) of the sample or tick that restarted the windows; null before any data. */
  atMs: number | null;
  reason: string;
}

export class CoGradient {
  readonly short: SlopeWindow;
  readonly long: SlopeWindow;
  /** Values kept for a rise across a unit that uses this point as its inlet; null when none does. */
  history: SampleHistory | null = null;
  /** Latest sample that entered the windows (good, not in or just after a function check). */
  latest: { tS: number; v: number } | null = null;
  interruption: Interruption = { atMs: null, reason: "no data yet" };
  accepted = 0;
  duplicates = 0;
  outOfOrder = 0;
  /** Source time of the newest sample of any quality, s: gaps and ordering are judged on it. */
  private lastRawS: number | null = null;
  private settleUntilS: number | null = null;

  constructor(readonly cfg: CoPointConfig) {
    this.short = new SlopeWindow(cfg.shortWindowS, cfg.maxPointsPerWindow);
    this.long = new SlopeWindow(cfg.longWindowS, cfg.maxPointsPerWindow);
  }

  /** Keep inlet values for `horizonS` (the longest transport delay asked of this point plus its tolerance). */
  keepHistory(horizonS: number): void {
    const need = horizonS + this.cfg.maxGapS;
    if (!this.history || this.history.horizonS < need) this.history = new SampleHistory(need, 20_000);
  }

  /** Feed one sample of the point's CO signal. */
  add(s: Sample): void {
    const tS = s.sourceTimeMs / 1000;
    if (this.lastRawS !== null && tS <= this.lastRawS) {
      // The engine drops these already; counted here so a direct feed cannot corrupt a window.
      if (tS === this.lastRawS) this.duplicates++;
      else this.outOfOrder++;
      return;
    }
    const gapS = this.lastRawS === null ? 0 : tS - this.lastRawS;
    this.lastRawS = tS;
    this.accepted++;
    const bad =
      s.quality === "bad" || !Number.isFinite(s.value)
        ? `bad value (${s.qualityReason ?? "bad"})`
        : s.quality === "uncertain"
          ? `uncertain value (${s.qualityReason ?? "uncertain"})`
          : s.functionCheck
            ? "analyser in function check"
            : this.settleUntilS !== null && tS < this.settleUntilS
              ? `settling after a function check (the sample line holds check gas for the ${this.cfg.transportLagS} s transport lag)`
              : null;
    if (s.functionCheck) this.settleUntilS = tS + this.cfg.transportLagS;
    if (bad !== null) {
      this.history?.markBreak(tS);
      return this.restart(s.sourceTimeMs, bad);
    }
    this.settleUntilS = null;
    if (gapS > this.cfg.maxGapS) this.restart(s.sourceTimeMs, `gap of ${Math.round(gapS)} s in the data`);
    this.short.push(tS, s.value);
    this.long.push(tS, s.value);
    this.history?.push(tS, s.value);
    this.latest = { tS, v: s.value };
  }

  /**
   * The signal cannot be trusted at a tick (stale, out of range, analyser fault): start again.
   * Windows already emptied by a sample keep that sample's more precise reason. The inlet
   * history is left alone: its interpolation never bridges a gap longer than maxGapS.
   */
  interrupt(nowMs: number, reason: string): void {
    if (this.short.count === 0 && this.long.count === 0 && this.latest === null) return;
    this.restart(nowMs, reason);
  }

  private restart(atMs: number, reason: string): void {
    this.short.clear();
    this.long.clear();
    this.latest = null;
    this.interruption = { atMs, reason };
  }

  /** Both windows as they stand into `short` and `long`; `trusted` is false when the signal is stale or bad now. */
  read(short: WindowReading, long: WindowReading, trusted: boolean, whyNot: string): void {
    if (trusted) {
      this.short.read(short, this.cfg.minPoints, this.interruption.reason);
      this.long.read(long, this.cfg.minPoints, this.interruption.reason);
    } else {
      this.short.readUntrusted(short, whyNot);
      this.long.readUntrusted(long, whyNot);
    }
  }

  /** Both windows as they stand; `trusted` is false when the signal is stale or bad now. */
  evaluate(trusted: boolean, whyNot: string): { short: WindowResult; long: WindowResult } {
    const short = new WindowReading();
    const long = new WindowReading();
    this.read(short, long, trusted, whyNot);
    return { short: short.result(), long: long.result() };
  }
}
