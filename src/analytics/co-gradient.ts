// CO rate of rise at one measuring point: least squares over a rolling window of
// source time. No gradient is computed across a gap, a bad value or a function
// check (calibration, blowback, multiplexer switch): the window starts again.
import type { CoPointConfig } from "../config/schema.js";
import type { Sample } from "../core/types.js";
import { RollingLinearFit } from "./rolling-fit.js";

export interface GradientResult {
  gradientPpmPerMin: number | null;
  status: "ok" | "unknown";
  reason: string;
}

export class CoGradient {
  private readonly fit: RollingLinearFit;
  private restartReason = "no data yet";

  constructor(readonly cfg: CoPointConfig) {
    this.fit = new RollingLinearFit(cfg.windowS);
  }

  /** Feed one sample of the point's CO signal (already ordered by source time). */
  add(s: Sample): void {
    if (s.quality === "bad" || !Number.isFinite(s.value)) return this.restart(`bad value (${s.qualityReason ?? "bad"})`);
    if (s.functionCheck) return this.restart("analyser in function check");
    const tS = s.sourceTimeMs / 1000;
    const newest = this.fit.newestS;
    if (newest !== null && tS - newest > this.cfg.maxGapS) this.restart(`gap of ${Math.round(tS - newest)} s in the data`);
    this.fit.push(tS, s.value);
  }

  private restart(reason: string): void {
    this.fit.clear();
    this.restartReason = reason;
  }

  /** The gradient as it stands; `trusted` is false when the signal is stale or bad now. */
  evaluate(trusted: boolean, whyNot: string): GradientResult {
    if (!trusted) return { gradientPpmPerMin: null, status: "unknown", reason: whyNot };
    const needSpanS = this.cfg.windowS * 0.5;
    if (this.fit.count < this.cfg.minPoints || this.fit.spanS < needSpanS) {
      return {
        gradientPpmPerMin: null,
        status: "unknown",
        reason: `window filling after ${this.restartReason} (${this.fit.count} points over ${Math.round(this.fit.spanS)} s; needs ${this.cfg.minPoints} over ${needSpanS} s)`,
      };
    }
    const slope = this.fit.slopePerS();
    if (slope === null) return { gradientPpmPerMin: null, status: "unknown", reason: "no spread in time" };
    return { gradientPpmPerMin: slope * 60, status: "ok", reason: `least squares over ${this.cfg.windowS} s, ${this.fit.count} points` };
  }
}
