// O2 trend toward a limit and the time to reach that limit at the present trend.
//
// Trend: least-squares slope of the O2 (on one limit's basis) over a rolling window, in
// percentage points per minute, from the O2 analysers' own source times. The line restarts
// after anything that breaks the series: untrusted data (stale, bad, function check:
// calibration, blowback, multiplexer switch), a gap longer than maxGapS, or a change in which
// redundant analysers make the value. It is unknown until the points span half the window.
//
// Time to limit: margin / trend while the O2 rises toward the limit (exact for a linear rise),
// 0 while it rises at or above the limit; null while it is flat or falling, or unknown.
import { RollingLinearFit } from "./rolling-fit.js";

/** Fewest points for a trend (besides the span of half the window). */
const MIN_POINTS = 3;

export class O2Trend {
  private readonly fit: RollingLinearFit;
  private lastTimeMs: number | null = null;
  private seriesKey: string | null = null;
  // What the last read() saw, for its reason.
  private readKind: "filling" | "no-spread" | "ok" = "filling";
  private readCount = 0;
  private readSpanS = 0;

  constructor(
    readonly windowS: number,
    readonly maxGapS: number,
  ) {
    if (!(windowS > 0) || !(maxGapS > 0)) throw new RangeError(`O2Trend: windowS and maxGapS must be > 0 s; got ${windowS} and ${maxGapS}`);
    this.fit = new RollingLinearFit(windowS);
  }

  /** Forget the line (untrusted data: no trend across it). */
  reset(): void {
    this.fit.clear();
    this.lastTimeMs = null;
    this.seriesKey = null;
  }

  /**
   * Add the O2 measured at `timeMs` (source time, epoch ms). `seriesKey` names what makes the
   * value (e.g. the analysers used); a change restarts the line. Points not newer than the last are ignored.
   */
  add(timeMs: number, o2PctVol: number, seriesKey = ""): void {
    if (!Number.isFinite(timeMs) || !Number.isFinite(o2PctVol)) throw new RangeError(`O2Trend.add: expected finite time and O2; got ${timeMs} and ${o2PctVol}`);
    if (this.seriesKey !== seriesKey || (this.lastTimeMs !== null && timeMs - this.lastTimeMs > this.maxGapS * 1000)) {
      this.fit.clear();
      this.lastTimeMs = null;
    }
    this.seriesKey = seriesKey;
    if (this.lastTimeMs !== null && timeMs <= this.lastTimeMs) return;
    this.fit.push(timeMs / 1000, o2PctVol);
    this.lastTimeMs = timeMs;
  }

  /** Percentage points per minute, or null with the reason. */
  trend(): { pctPtPerMin: number | null; reason: string } {
    const pctPtPerMin = this.read();
    return { pctPtPerMin, reason: this.readReason };
  }

  /** As trend() without its reason, which readReason gives until the next read (built only when asked for). */
  read(): number | null {
    this.readCount = this.fit.count;
    this.readSpanS = this.fit.spanS;
    if (this.readCount < MIN_POINTS || this.readSpanS < this.windowS / 2) {
      this.readKind = "filling";
      return null;
    }
    const slope = this.fit.slopePerS();
    this.readKind = slope === null ? "no-spread" : "ok";
    return slope === null ? null : slope * 60;
  }

  get readReason(): string {
    if (this.readKind === "filling") return `O2 trend needs ${fmtS(this.windowS / 2)} s of trusted O2 without a break; has ${fmtS(this.readSpanS)} s`;
    if (this.readKind === "no-spread") return "O2 trend: no time spread in the points";
    return `least squares over ${fmtS(this.readSpanS)} s (${this.readCount} points)`;
  }
}

/**
 * Seconds until the O2 reaches the limit at `trendPctPtPerMin`: margin / trend for a rise
 * (0 when the margin is already <= 0), null when the trend is unknown, flat or falling.
 */
export function timeToLimitS(marginPctPt: number, trendPctPtPerMin: number | null): number | null {
  if (!Number.isFinite(marginPctPt)) throw new RangeError(`timeToLimitS: marginPctPt must be a finite number; got ${marginPctPt}`);
  if (trendPctPtPerMin === null || !(trendPctPtPerMin > 0)) return null;
  if (marginPctPt <= 0) return 0;
  return (marginPctPt / trendPctPtPerMin) * 60;
}

function fmtS(s: number): string {
  return String(Math.round(s));
}
