// When a unit is being purged, and its purge progress (PurgeTracker does the counting).
//
//   idle | complete | stopped ──flow comes on, measured O2 not inert──▶ running
//   running ──measured O2 inert──▶ complete
//   running ──flow at or below flowOnNm3PerH──▶ stopped
//
// A purge starts when the trusted inert flow comes on (above flowOnNm3PerH after having been
// seen at or below it) while the measured O2 is marginal or not inert. Once the unit has been
// measured inert in a spell of flow, the flow is holding it inert, and an O2 rise then is a
// deviation to show as marginal or not-inert, not a new purge. A spell whose start was not seen
// (the box started while the flow was on) is not taken for a purge either: the unit then shows
// its measured state, the more cautious reading. The purge is complete only on the measured O2
// (the inerting state says "inert"); the counted volume changes are context, never the proof.
// All O2 values here are on the O2 analysers' basis.
import type { OxygenPurgeConfig } from "../config/sections/oxygen.js";
import type { O2Basis } from "../physics/oxygen.js";
import { volumeChangesToTarget } from "../physics/purge.js";
import type { MeasuredInertingState } from "./inerting.js";
import { fmt } from "./inerting.js";
import { PurgeTracker } from "./purge-tracker.js";
import type { Trust } from "./signal-state.js";

export type PurgeStatus = "idle" | "running" | "complete" | "stopped";

export interface PurgeProgressView {
  status: PurgeStatus;
  inertFlowSignal: string;
  /** Latest trusted inert flow, Nm³/h; null when untrusted. */
  inertFlowNm3PerH: number | null;
  flowOnNm3PerH: number;
  /** Whether the flow is above flowOnNm3PerH; null when the flow cannot be trusted. */
  flowOn: boolean | null;
  volumeM3: number;
  inertO2PctVol: number;
  targetO2PctVol: number;
  /** Basis of the O2 values of this purge (the O2 analysers'). */
  basis: O2Basis;
  startedAtMs: number | null;
  startO2PctVol: number | null;
  /** Volume changes counted from the inert flow and the unit volume (Nm³ taken as m³). */
  volumeChanges: number | null;
  /** Volume changes a well-mixed unit needs from the start O2 to the target. */
  volumeChangesToTarget: number | null;
  /** Well-mixed O2 after the counted volume changes, % vol. */
  predictedO2PctVol: number | null;
  measuredO2PctVol: number | null;
  /** Seconds to the target at the decay fitted to the measured O2; 0 once measured at or below it. */
  fittedTimeToTargetS: number | null;
  reason: string;
}

export class UnitPurge {
  private tracker: PurgeTracker;
  private status: PurgeStatus = "idle";
  /** The present spell of flow is not a purge: its start was not seen, or the unit was measured inert in it. */
  private noPurgeThisSpell = true;
  private startedAtMs: number | null = null;
  private startO2: number | null = null;
  private flow: number | null = null;
  private flowOn: boolean | null = null;
  private note = "no purge seen yet";
  /** view() of the latest step (the tracker's view refits, so it is built once per step). */
  private cached: PurgeProgressView | null = null;

  constructor(
    readonly cfg: OxygenPurgeConfig,
    readonly basis: O2Basis,
  ) {
    this.tracker = new PurgeTracker({ volumeM3: cfg.volumeM3, inertO2PctVol: cfg.inertO2PctVol, targetO2PctVol: cfg.targetO2PctVol });
  }

  /** Whether the unit is being purged now: a purge running and the flow on. */
  get purging(): boolean {
    return this.status === "running" && this.flowOn === true;
  }

  get running(): boolean {
    return this.status === "running";
  }

  /**
   * Advance to `nowMs` with the inert flow, the measured O2 (trusted, on the analysers' basis;
   * null when not) and the state that O2 gives.
   */
  step(nowMs: number, flow: Trust | null, o2PctVol: number | null, measured: MeasuredInertingState): void {
    this.cached = null;
    this.flow = flow && flow.ok && flow.value !== null ? flow.value : null;
    this.flowOn = this.flow === null ? null : this.flow > this.cfg.flowOnNm3PerH;

    if (this.status === "running") {
      this.tracker.update(nowMs, this.flow, o2PctVol);
      if (measured === "inert") {
        this.tracker.stop();
        this.status = "complete";
        this.noPurgeThisSpell = this.flowOn !== false;
        this.note = "purge complete: the measured O2 is below the limit by the marginal band";
      } else if (this.flowOn === false) {
        this.tracker.stop();
        this.status = "stopped";
        this.noPurgeThisSpell = false;
        this.note = `inert flow at or below ${this.cfg.flowOnNm3PerH} Nm³/h before the unit was measured inert: purge stopped`;
      }
      return;
    }

    if (this.flowOn === false) this.noPurgeThisSpell = false;
    if (this.flowOn !== true) return;
    if (measured === "inert") {
      this.noPurgeThisSpell = true;
      return;
    }
    if (this.noPurgeThisSpell || o2PctVol === null || (measured !== "marginal" && measured !== "not-inert")) return;
    if (!(o2PctVol >= 0 && o2PctVol <= 100)) return;
    this.tracker.start(nowMs, o2PctVol);
    this.tracker.update(nowMs, this.flow, o2PctVol);
    this.status = "running";
    this.startedAtMs = nowMs;
    this.startO2 = o2PctVol;
    this.note = "purge running";
  }

  /** Counted volume changes while a purge runs; null (with the reason) otherwise. */
  volumeChanges(): { value: number | null; reason: string } {
    // The count the view would show, without building it (the tracker's view refits).
    if (this.status === "running") return { value: this.tracker.volumeChangesCounted, reason: "" };
    return { value: null, reason: `no purge running (${this.note})` };
  }

  view(): PurgeProgressView {
    this.cached ??= this.build();
    return this.cached;
  }

  private build(): PurgeProgressView {
    const c = this.cfg;
    const started = this.status !== "idle";
    const t = this.tracker.view();
    const needed = this.startO2 === null ? null : this.startO2 <= c.targetO2PctVol ? 0 : volumeChangesToTarget(this.startO2, c.inertO2PctVol, c.targetO2PctVol);
    const flowText =
      this.flow === null ? "inert flow not trusted" : `inert flow ${fmt(this.flow)} Nm³/h (${this.flowOn ? "above" : "at or below"} ${fmt(c.flowOnNm3PerH)})`;
    return {
      status: this.status,
      inertFlowSignal: c.inertFlowSignal,
      inertFlowNm3PerH: this.flow,
      flowOnNm3PerH: c.flowOnNm3PerH,
      flowOn: this.flowOn,
      volumeM3: c.volumeM3,
      inertO2PctVol: c.inertO2PctVol,
      targetO2PctVol: c.targetO2PctVol,
      basis: this.basis,
      startedAtMs: this.startedAtMs,
      startO2PctVol: this.startO2,
      volumeChanges: started ? t.volumeChanges : null,
      volumeChangesToTarget: needed,
      predictedO2PctVol: started ? t.predictedO2PctVol : null,
      measuredO2PctVol: started ? t.measuredO2PctVol : null,
      fittedTimeToTargetS: started ? t.fittedTimeToTargetS : null,
      reason: started ? `${this.note}; ${flowText}; ${t.reason}` : `${this.note}; ${flowText}`,
    };
  }
}
