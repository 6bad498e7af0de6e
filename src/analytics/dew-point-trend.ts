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
    const tS = nowMs / 1000;
    if (marginK === null) {
      this.fit.clear();
      this.restartReason = "the margin was unknown";
      const why = `margin unknown: ${whyUnknown}`;
      return { marginTrendKPerMin: null, trendReason: why, timeToCondensationS: null, timeToCondensationReason: why };
    }
    const newest = this.fit.newestS;
    if (newest !== null && tS - newest > this.maxGapS) {
      this.fit.clear();
      this.restartReason = `a gap of ${Math.round(tS - newest)} s`;
    }
    // A second tick at the same time adds nothing (the fit needs increasing times).
    if (newest === null || tS > newest) this.fit.push(tS, marginK);
    const span = this.fit.spanS;
    if (span < this.minSpanS) {
      const why = `trend needs ${Math.round(this.minSpanS)} s of known margin after ${this.restartReason}; has ${Math.round(span)} s`;
      return { marginTrendKPerMin: null, trendReason: why, timeToCondensationS: null, timeToCondensationReason: why };
    }
    const slope = this.fit.slopePerS();
    if (slope === null) {
      const why = "no spread in time";
      return { marginTrendKPerMin: null, trendReason: why, timeToCondensationS: null, timeToCondensationReason: why };
    }
    const trendReason = `least squares over ${Math.round(span)} s (window ${this.windowS} s, ${this.fit.count} points)`;
    const ttc = timeToCondensationS(marginK, slope);
    return {
      marginTrendKPerMin: slope * 60,
      trendReason,
      timeToCondensationS: ttc,
      timeToCondensationReason:
        ttc === null ? `margin not shrinking (${(slope * 60).toFixed(3)} K/min)` : marginK <= 0 ? "at or below the dew point now" : `margin / -trend at ${(slope * 60).toFixed(3)} K/min`,
    };
  }
}
