// Trend of a dew point margin (least squares over a rolling window of tick times) and
// the time to condensation it predicts: margin / −trend while the margin shrinks.
// Never across a gap: an unknown margin, or ticks further apart than the gap limit,
// start the window again.
import { RollingLinearFit } from "./rolling-fit.js";

export interface MarginTrendResult {
  marginTrendKPerMin: number | null;
  trendReason: string;
  /** Seconds until the margin reaches zero at the present trend; 0 at or below the dew point. */
  timeToCondensationS: number | null;
  timeToCondensationReason: string;
}

/**
 * Predicted time to condensation, s: `marginK` / −`trendKPerS` while the margin shrinks,
 * 0 when the gas is already at or below its dew point, null when the margin holds or grows.
 */
export function timeToCondensationS(marginK: number, trendKPerS: number): number | null {
  if (marginK <= 0) return 0;
  if (!(trendKPerS < 0)) return null;
  return marginK / -trendKPerS;
}

export class MarginTrend {
  private readonly fit: RollingLinearFit;
  /** Ticks further apart than this break the window (replay across missing data, a restart). */
  readonly maxGapS: number;
  private restartReason = "no margin yet";
  // What the last update found, as plain values: the reasons are built when asked for.
  private kind: "unknown" | "filling" | "no-spread" | "ok" = "unknown";
  private whyUnknown = "";
  private marginK = 0;
  private spanS = 0;
  private count = 0;
  private slopePerS = 0;
  private sinceRestart = "";
  private last: MarginTrendResult | null = null;

  constructor(
    readonly windowS: number,
    /** Span of known margin needed before a trend is shown. */
    readonly minSpanS: number = windowS / 2,
  ) {
    this.fit = new RollingLinearFit(windowS);
    this.maxGapS = Math.max(10, windowS / 10);
  }

  /** Add the margin at `nowMs` (null when unknown, with `whyUnknown`) and read the trend. */
  update(nowMs: number, marginK: number | null, whyUnknown: string): MarginTrendResult {
    this.step(nowMs, marginK, whyUnknown);
    return this.result;
  }

  /** As update(), without building the result: read it from the getters. */
  step(nowMs: number, marginK: number | null, whyUnknown: string): void {
    this.last = null;
    const tS = nowMs / 1000;
    if (marginK === null) {
      this.fit.clear();
      this.restartReason = "the margin was unknown";
      this.kind = "unknown";
      this.whyUnknown = whyUnknown;
      return;
    }
    const newest = this.fit.newestS;
    if (newest !== null && tS - newest > this.maxGapS) {
      this.fit.clear();
      this.restartReason = `a gap of ${Math.round(tS - newest)} s`;
    }
    // A second tick at the same time adds nothing (the fit needs increasing times).
    if (newest === null || tS > newest) this.fit.push(tS, marginK);
    this.marginK = marginK;
    this.spanS = this.fit.spanS;
    this.count = this.fit.count;
    if (this.spanS < this.minSpanS) {
      this.kind = "filling";
      this.sinceRestart = this.restartReason;
      return;
    }
    const slope = this.fit.slopePerS();
    if (slope === null) {
      this.kind = "no-spread";
      return;
    }
    this.kind = "ok";
    this.slopePerS = slope;
  }

  /** The trend of the last update, K/min; null when unknown. */
  get trendKPerMin(): number | null {
    return this.kind === "ok" ? this.slopePerS * 60 : null;
  }

  /** Seconds to condensation at the last update's trend; null when unknown or the margin holds or grows. */
  get timeToCondensationS(): number | null {
    return this.kind === "ok" ? timeToCondensationS(this.marginK, this.slopePerS) : null;
  }

  /** Why the trend is unknown, or how it was taken. */
  get trendReason(): string {
    switch (this.kind) {
      case "unknown":
        return `margin unknown: ${this.whyUnknown}`;
      case "filling":
        return `trend needs ${Math.round(this.minSpanS)} s of known margin after ${this.sinceRestart}; has ${Math.round(this.spanS)} s`;
      case "no-spread":
        return "no spread in time";
      case "ok":
        return `least squares over ${Math.round(this.spanS)} s (window ${this.windowS} s, ${this.count} points)`;
    }
  }

  get timeToCondensationReason(): string {
    if (this.kind !== "ok") return this.trendReason;
    const slope = this.slopePerS;
    const ttc = timeToCondensationS(this.marginK, slope);
    return ttc === null ? `margin not shrinking (${(slope * 60).toFixed(3)} K/min)` : this.marginK <= 0 ? "at or below the dew point now" : `margin / -trend at ${(slope * 60).toFixed(3)} K/min`;
  }

  /** The last update's full result (built when asked for). */
  get result(): MarginTrendResult {
    this.last ??= {
      marginTrendKPerMin: this.trendKPerMin,
      trendReason: this.trendReason,
      timeToCondensationS: this.timeToCondensationS,
      timeToCondensationReason: this.timeToCondensationReason,
    };
    return this.last;
  }
}
