// CO baseline at one measuring point: the median of the last hour (RollingMedianBaseline,
// decimated), and the rise of the current value above it.
//
// Frozen (holds the value it had) while
//  - the unit's operating phase is one of the configured start-up phases: during warm-up,
//    inerting and the first feed the CO level moves for reasons other than a heating;
//  - for a configured time after the drying-gas source changed (a state signal), because a
//    new gas brings its own CO level;
//  - the gas source signal itself cannot be trusted (a change could go unseen).
// Until the phase of the unit is known (no phase computed for it) nothing is frozen by
// phase, and the view says so.
import type { CoBaselineConfig } from "../config/sections/co.js";
import type { MillPhase } from "./phase.js";
import type { Sample } from "../core/types.js";
import { RollingMedianBaseline } from "./rolling-median.js";
import type { Trust } from "./signal-state.js";

export interface BaselineResult {
  ppm: number | null;
  status: "ok" | "unknown";
  reason: string;
  /** Why it is frozen, or null when it follows the data. */
  frozen: string | null;
  /** Phase of the phase unit at this tick; null when none is computed. */
  phase: MillPhase | null;
  /** What the phase did to the baseline, in words. */
  phaseNote: string;
  /** Values the median is taken over (at most windowS / decimateS + 1). */
  values: number;
}

export class CoBaseline {
  private readonly median: RollingMedianBaseline;
  private readonly needValues: number;
  private lastPushS: number | null = null;
  private gas: { value: number; changedAtS: number | null; from: number | null } | null = null;
  // What the last update() found, as plain values; result and reason are built from them when asked.
  private updated = false;
  private lastPpm: number | null = null;
  private lastValues = 0;
  private lastFrozen: string | null = null;
  private lastPhase: MillPhase | null = null;
  private last: BaselineResult | null = null;

  constructor(
    readonly cfg: CoBaselineConfig,
    readonly phaseUnit: string,
  ) {
    this.median = new RollingMedianBaseline(cfg.windowS, cfg.decimateS);
    this.needValues = Math.ceil(cfg.minS / cfg.decimateS);
  }

  get count(): number {
    return this.median.count;
  }

  /** A sample of the gas source signal (in source-time order). */
  noteGasSource(s: Sample): void {
    if (s.quality !== "good" || !Number.isFinite(s.value)) return;
    const tS = s.sourceTimeMs / 1000;
    if (this.gas === null) this.gas = { value: s.value, changedAtS: null, from: null };
    else if (s.value !== this.gas.value) this.gas = { value: s.value, changedAtS: tS, from: this.gas.value };
  }

  /**
   * Decide the freeze at nowMs, then offer the latest trusted CO sample (null when the CO
   * cannot be trusted now). `gasSource` is the gas source signal's trust, null when none is configured.
   */
  update(nowMs: number, phase: MillPhase | null, gasSource: Trust | null, latest: { tS: number; v: number } | null): void {
    const phaseWhy = phase !== null && this.cfg.freezePhases.includes(phase) ? `${this.phaseUnit} in ${phase}` : null;
    let gasWhy: string | null = null;
    if (gasSource !== null) {
      const g = this.gas;
      if (!gasSource.ok) gasWhy = `gas source unknown (${gasSource.reason})`;
      else if (g?.changedAtS != null) {
        const leftS = g.changedAtS + this.cfg.gasSourceFreezeS - nowMs / 1000;
        if (leftS > 0) gasWhy = `gas source changed from ${g.from} to ${g.value}; frozen ${Math.ceil(leftS)} s more`;
      }
    }
    const freeze = phaseWhy !== null || gasWhy !== null;
    if (freeze) this.median.freeze(phaseWhy !== null && gasWhy !== null ? `${phaseWhy}; ${gasWhy}` : (phaseWhy ?? gasWhy)!);
    else this.median.unfreeze();
    if (!freeze && latest && (this.lastPushS === null || latest.tS > this.lastPushS)) {
      this.median.push(latest.tS, latest.v);
      this.lastPushS = latest.tS;
    }
    this.updated = true;
    this.lastFrozen = this.median.frozen;
    this.lastValues = this.median.count;
    this.lastPhase = phase;
    const ppm = this.median.value();
    this.lastPpm = this.lastValues < this.needValues ? null : ppm;
    this.last = null;
  }

  /** The baseline as of the last update, ppm; null while filling. */
  get ppm(): number | null {
    return this.lastPpm;
  }

  /** Why the baseline is frozen as of the last update, or null. */
  get frozen(): string | null {
    return this.lastFrozen;
  }

  /** The reason that goes with `ppm`: how it was taken, or why it is unknown. */
  get reason(): string {
    if (!this.updated) return "no data yet";
    const values = this.lastValues;
    const frozen = this.lastFrozen;
    if (this.lastPpm === null) {
      const filling = `${values} of ${this.needValues} values (one per ${this.cfg.decimateS} s)`;
      return frozen ? `baseline frozen (${frozen}) before it had filled: ${filling}` : `baseline filling: ${filling}`;
    }
    const over = `median of ${values} values over ${this.cfg.windowS} s`;
    return frozen ? `${over}, frozen: ${frozen}` : over;
  }

  /** The full result of the last update (built when asked for). */
  get result(): BaselineResult {
    if (this.last === null) {
      if (!this.updated) this.last = { ppm: null, status: "unknown", reason: "no data yet", frozen: null, phase: null, phaseNote: "", values: 0 };
      else {
        const phase = this.lastPhase;
        const phaseNote =
          phase === null
            ? `no operating phase computed for ${this.phaseUnit}: the baseline is not frozen by phase`
            : this.cfg.freezePhases.includes(phase)
              ? `${this.phaseUnit} in ${phase}: frozen`
              : `${this.phaseUnit} in ${phase}: follows the data`;
        const common = { frozen: this.lastFrozen, phase, phaseNote, values: this.lastValues };
        this.last =
          this.lastPpm === null
            ? { ppm: null, status: "unknown", reason: this.reason, ...common }
            : { ppm: this.lastPpm, status: "ok", reason: this.reason, ...common };
      }
    }
    return this.last;
  }
}
