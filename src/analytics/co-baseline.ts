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
  private last: BaselineResult;

  constructor(
    readonly cfg: CoBaselineConfig,
    readonly phaseUnit: string,
  ) {
    this.median = new RollingMedianBaseline(cfg.windowS, cfg.decimateS);
    this.needValues = Math.ceil(cfg.minS / cfg.decimateS);
    this.last = { ppm: null, status: "unknown", reason: "no data yet", frozen: null, phase: null, phaseNote: "", values: 0 };
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
  update(nowMs: number, phase: MillPhase | null, gasSource: Trust | null, latest: { tS: number; v: number } | null): BaselineResult {
    const why: string[] = [];
    let phaseNote: string;
    if (phase === null) phaseNote = `no operating phase computed for ${this.phaseUnit}: the baseline is not frozen by phase`;
    else if (this.cfg.freezePhases.includes(phase)) {
      phaseNote = `${this.phaseUnit} in ${phase}: frozen`;
      why.push(`${this.phaseUnit} in ${phase}`);
    } else phaseNote = `${this.phaseUnit} in ${phase}: follows the data`;
    if (gasSource !== null) {
      const g = this.gas;
      if (!gasSource.ok) why.push(`gas source unknown (${gasSource.reason})`);
      else if (g?.changedAtS != null) {
        const leftS = g.changedAtS + this.cfg.gasSourceFreezeS - nowMs / 1000;
        if (leftS > 0) why.push(`gas source changed from ${g.from} to ${g.value}; frozen ${Math.ceil(leftS)} s more`);
      }
    }
    if (why.length) this.median.freeze(why.join("; "));
    else this.median.unfreeze();
    if (!why.length && latest && (this.lastPushS === null || latest.tS > this.lastPushS)) {
      this.median.push(latest.tS, latest.v);
      this.lastPushS = latest.tS;
    }

    const frozen = this.median.frozen;
    const values = this.median.count;
    const common = { frozen, phase, phaseNote, values };
    const ppm = this.median.value();
    if (values < this.needValues || ppm === null) {
      const filling = `${values} of ${this.needValues} values (one per ${this.cfg.decimateS} s)`;
      const reason = frozen ? `baseline frozen (${frozen}) before it had filled: ${filling}` : `baseline filling: ${filling}`;
      this.last = { ppm: null, status: "unknown", reason, ...common };
    } else {
      const over = `median of ${values} values over ${this.cfg.windowS} s`;
      this.last = { ppm, status: "ok", reason: frozen ? `${over}, frozen: ${frozen}` : over, ...common };
    }
    return this.last;
  }

  get result(): BaselineResult {
    return this.last;
  }
}
