// Everything about one unit's oxygen at one tick, from trusted inputs only:
//
//   O2 analyser(s) ──vote──▶ O2 on the analysers' basis ──(H2O)──▶ O2 on each limit's basis
//                                     │                                   │
//                                     ├──▶ purge progress                 ├──▶ margin, measured state
//                                     │                                   └──▶ trend, time to limit
//                                     └──────────────▶ state: inert | marginal | not-inert | purging | unknown
//
// "purging" replaces marginal or not-inert while a purge runs with the inert flow on; it never
// replaces unknown, and nothing but the measured O2 makes the state "inert". Redundant analysers
// are voted (src/analytics/voting.ts): untrusted readings are left out, and the state is unknown
// when the vote cannot be formed. Pure: time is an argument.
import type { OxygenConfig } from "../config/sections/oxygen.js";
import { o2SignalIds } from "../config/sections/oxygen.js";
import type { InertingState } from "../core/types.js";
import type { O2Basis } from "../physics/oxygen.js";
import { InertingEstimator, fmt, type InertingEvaluation, type MeasuredInertingState, type O2Limit } from "./inerting.js";
import { O2Trend, timeToLimitS } from "./oxygen-trend.js";
import { UnitPurge, type PurgeProgressView } from "./purge-session.js";
import type { Trust } from "./signal-state.js";
import { vote, type VoteMode } from "./voting.js";

export type { PurgeProgressView } from "./purge-session.js";

/** A limit as configured (O2Limit), with the O2 against it now. */
export interface O2LimitView extends O2Limit {
  /** The O2 on this limit's basis, % vol, and the margin to it, percentage points. */
  o2PctVol: number | null;
  marginPctPt: number | null;
  trendPctPtPerMin: number | null;
  timeToLimitS: number | null;
  /** The limit with the smallest margin: the one shown as the unit's limit. */
  governing: boolean;
}

export interface O2ReadingView {
  /** Signal id. */
  id: string;
  /** % vol on the analysers' basis; null when untrusted. */
  pctVol: number | null;
  trusted: boolean;
  /** Whether the value shown for the unit was taken from this reading. */
  used: boolean;
  reason: string;
}

export interface O2VoteView {
  mode: VoteMode;
  disagreeLimitPctPt: number;
  /** Trusted readings spread more than disagreeLimitPctPt. */
  disagreement: boolean;
  /** Fewer trusted readings than analysers configured. */
  degraded: boolean;
  used: string[];
  reason: string;
}

export interface InertingView {
  unitId: string;
  state: InertingState;
  /** The state from the measured O2 alone (differs from `state` only while purging). */
  measuredState: MeasuredInertingState;
  /** The signal the value was taken from (the first used; the first configured when none). */
  o2Signal: string;
  o2Signals: string[];
  /** The (voted) reading on the analysers' own basis. */
  readingPctVol: number | null;
  readingBasis: O2Basis;
  h2oSignal: string | null;
  /** H2O used for the wet/dry conversion, vol % wet; null when none is needed or it is untrusted. */
  h2oPctVol: number | null;
  /** O2 on the governing limit's basis. */
  o2PctVol: number | null;
  basis: O2Basis;
  /** The governing limit (smallest margin; the lowest limit while the O2 is unknown), on `basis`. */
  limitPctVol: number;
  /** Which limit governs, how it was set and its recorded origin. */
  limitSource: string;
  /** limit − O2 in percentage points; positive is on the safe side. */
  marginPctPt: number | null;
  /** Below this margin the unit is "marginal". */
  marginalBandPctPt: number;
  limits: O2LimitView[];
  readings: O2ReadingView[];
  vote: O2VoteView | null;
  /** O2 trend on the governing limit's basis, percentage points per minute. */
  trendPctPtPerMin: number | null;
  trendWindowS: number;
  /** Seconds to the first limit reached at the present trend (0 when rising at or above one); null when not rising or unknown. */
  timeToLimitS: number | null;
  trendReason: string;
  purge: PurgeProgressView | null;
  reason: string;
}

export interface O2ReadingInput {
  id: string;
  trust: Trust;
  /** Source time of the latest sample of this signal, epoch ms (null when none). */
  sourceTimeMs: number | null;
}

export interface UnitOxygenInputs {
  nowMs: number;
  /** The O2 signals, in config order. */
  o2: O2ReadingInput[];
  h2o: Trust | null;
  inertFlow: Trust | null;
}

export interface UnitOxygenResult {
  view: InertingView;
  /** Derived values to record: key suffix → value (null = unknown) and reason. */
  derived: { key: "o2PctVol" | "marginPctPt" | "trendPctPtPerMin" | "timeToLimitS" | "purgeVolumeChanges"; value: number | null; reason: string }[];
}

/** A limit's trend at the last step. */
interface LimitTrend {
  limit: O2Limit;
  trend: O2Trend;
  pctPtPerMin: number | null;
  timeS: number | null;
}

/** What the last step found, as computed; the view and the texts of known values are built from it when asked. */
interface Step {
  trusts: Trust[];
  o2: Trust;
  used: string[];
  voteView: O2VoteView | null;
  ev: InertingEvaluation;
  state: InertingState;
  purging: boolean;
  timeS: number | null;
  trendNow: number | null;
  /** Set at the step when the trend is unknown (it is recorded then); else built when asked. */
  trendReason: string | null;
}

export class UnitOxygen {
  readonly estimator: InertingEstimator;
  readonly signalIds: string[];
  /** One per limit, in the estimator's order (the order of its comparisons). */
  private readonly limitTrends: LimitTrend[];
  readonly purge: UnitPurge | null;
  private last: Step | null = null;
  private lastView: InertingView | null = null;

  constructor(
    readonly unitId: string,
    readonly oxygen: OxygenConfig,
    readonly o2Basis: O2Basis,
  ) {
    this.estimator = new InertingEstimator(oxygen, o2Basis);
    this.signalIds = o2SignalIds(oxygen);
    if (!this.signalIds.length) throw new RangeError(`UnitOxygen ${unitId}: expected signal or signals; found neither`);
    this.limitTrends = this.estimator.limits.map((limit) => ({ limit, trend: new O2Trend(oxygen.trendWindowS, oxygen.trendMaxGapS), pctPtPerMin: null, timeS: null }));
    this.purge = oxygen.purge ? new UnitPurge(oxygen.purge, o2Basis) : null;
  }

  evaluate(inp: UnitOxygenInputs): UnitOxygenResult {
    this.step(inp);
    const view = this.view();
    const ev = this.last!.ev;
    const trendReason = this.trendReason;
    const derived: UnitOxygenResult["derived"] = [
      { key: "o2PctVol", value: view.o2PctVol, reason: ev.reason },
      { key: "marginPctPt", value: view.marginPctPt, reason: ev.reason },
      { key: "trendPctPtPerMin", value: view.trendPctPtPerMin, reason: trendReason },
      { key: "timeToLimitS", value: this.timeToLimitValue, reason: trendReason },
    ];
    if (this.purge) {
      const v = this.purge.volumeChanges();
      derived.push({ key: "purgeVolumeChanges", value: v.value, reason: v.reason });
    }
    return { view, derived };
  }

  /**
   * Advance to `inp.nowMs` and compute the unit's values (read them from the getters). The
   * reasons of known values are left out; view() and the getters build them when asked.
   */
  step(inp: UnitOxygenInputs): void {
    const o = this.oxygen;
    const ids = this.signalIds;
    let inputs = inp.o2;
    // The monitor passes the signals in config order; anything else is looked up by id.
    if (inputs.length !== ids.length || inputs.some((r, i) => r.id !== ids[i])) {
      const byId = new Map(inp.o2.map((r) => [r.id, r]));
      inputs = ids.map((sid) => {
        const r = byId.get(sid);
        if (!r) throw new RangeError(`UnitOxygen ${this.unitId}: no input for O2 signal "${sid}"`);
        return r;
      });
    }
    this.lastView = null;

    // One value from the analyser(s).
    let o2: Trust;
    let used: string[];
    let voteView: O2VoteView | null = null;
    if (inputs.length === 1 && !o.signals) {
      const t = inputs[0]!.trust;
      o2 = t.ok && t.value !== null ? { ok: true, value: t.value, reason: "" } : { ok: false, value: null, reason: t.reason };
      used = o2.ok ? [inputs[0]!.id] : [];
    } else {
      const mode = o.voting ?? "highest";
      const limit = o.disagreeLimitPctPt ?? 0;
      const r = vote(
        inputs.map((x) => ({ id: x.id, value: x.trust.ok ? x.trust.value : null, trusted: x.trust.ok })),
        mode,
        limit,
      );
      used = r.used;
      const trustedCount = inputs.filter((x) => x.trust.ok && x.trust.value !== null).length;
      voteView = { mode, disagreeLimitPctPt: limit, disagreement: r.disagreement, degraded: trustedCount < inputs.length, used, reason: r.reason };
      const why = inputs.filter((x) => !x.trust.ok).map((x) => x.trust.reason);
      o2 = r.value !== null ? { ok: true, value: r.value, reason: "" } : { ok: false, value: null, reason: `${r.reason}${why.length ? ` (${why.join("; ")})` : ""}` };
    }

    const ev = this.estimator.evaluate(o2, inp.h2o, false);
    const measured: MeasuredInertingState = ev.state;

    // Trend on each limit's basis, from the analysers' source time; restarted by any break.
    let pointMs = Number.NEGATIVE_INFINITY;
    for (const x of inputs) if (used.includes(x.id)) pointMs = Math.max(pointMs, x.sourceTimeMs ?? inp.nowMs);
    if (ev.ok) {
      const seriesKey = used.join(",");
      ev.comparisons.forEach((c, i) => {
        const lt = this.limitTrends[i]!;
        lt.trend.add(Number.isFinite(pointMs) ? pointMs : inp.nowMs, c.o2PctVol, seriesKey);
        lt.pctPtPerMin = lt.trend.read();
        lt.timeS = timeToLimitS(c.marginPctPt, lt.pctPtPerMin);
      });
    } else {
      for (const lt of this.limitTrends) lt.trend.reset();
    }

    // Purge progress on the analysers' basis.
    this.purge?.step(inp.nowMs, inp.inertFlow, o2.ok ? o2.value : null, measured);
    const purging = this.purge !== null && this.purge.purging && (measured === "marginal" || measured === "not-inert");
    const state: InertingState = purging ? "purging" : measured;

    // Time to limit: the first limit reached; unknown when any limit's trend is.
    let timeS: number | null = null;
    if (ev.ok) {
      const lts = this.limitTrends;
      if (lts.some((lt) => lt.timeS === 0)) timeS = 0;
      else if (!lts.some((lt) => lt.pctPtPerMin === null)) {
        const times = lts.map((lt) => lt.timeS).filter((t): t is number => t !== null);
        timeS = times.length ? Math.min(...times) : null;
      }
    }
    const trendNow = ev.ok ? this.governingTrend(ev).pctPtPerMin : null;
    this.last = { trusts: inputs.map((x) => x.trust), o2, used, voteView, ev, state, purging, timeS, trendNow, trendReason: null };
    if (trendNow === null) this.last.trendReason = this.trendReason;
  }

  private governingTrend(ev: Extract<InertingEvaluation, { ok: true }>): LimitTrend {
    return this.limitTrends[ev.comparisons.indexOf(ev.governing)]!;
  }

  /** The inerting state as of the last step. */
  get state(): InertingState {
    return this.last!.state;
  }

  /** O2 on the governing limit's basis and the margin to it; null when unknown (ev reason says why). */
  get o2PctVol(): number | null {
    const ev = this.last!.ev;
    return ev.ok ? ev.governing.o2PctVol : null;
  }

  get marginPctPt(): number | null {
    const ev = this.last!.ev;
    return ev.ok ? ev.governing.marginPctPt : null;
  }

  /** Why the O2 is unknown, or how it compares with its limit. */
  get o2Reason(): string {
    const ev = this.last!.ev;
    if (ev.ok && ev.reason === "") ev.reason = this.estimator.describe(ev);
    return ev.reason;
  }

  get trendPctPtPerMin(): number | null {
    return this.last!.trendNow;
  }

  /** Known trend, not approaching the limit: an endless time, so a rule on it clears (null would hold it). */
  get timeToLimitValue(): number | null {
    const l = this.last!;
    return l.timeS ?? (l.trendNow !== null ? Number.POSITIVE_INFINITY : null);
  }

  /** The reason of the trend and of the time to the limit. */
  get trendReason(): string {
    const l = this.last!;
    if (l.trendReason !== null) return l.trendReason;
    const ev = l.ev;
    if (!ev.ok) return `O2 trend unknown: ${this.o2Reason}`;
    const g = this.governingTrend(ev).trend.readReason;
    const lts = this.limitTrends;
    if (lts.some((lt) => lt.timeS === 0)) return `O2 rising at or above a limit; ${g}`;
    const unknown = lts.find((lt) => lt.pctPtPerMin === null);
    if (unknown) return unknown.trend.readReason;
    const timeS = l.timeS;
    return timeS === null ? `O2 not rising toward a limit; ${g}` : `${fmt(timeS)} s to the limit at the present trend; ${g}`;
  }

  /** The unit's view as of the last step (built when first asked for after it). */
  view(): InertingView {
    this.lastView ??= this.buildView();
    return this.lastView;
  }

  private buildView(): InertingView {
    const o = this.oxygen;
    const { trusts, o2, used, voteView, ev, state, purging, timeS, trendNow } = this.last!;
    const measured: MeasuredInertingState = ev.state;
    const evReason = this.o2Reason;
    const trendReason = this.trendReason;
    const readings: O2ReadingView[] = this.signalIds.map((id, i) => {
      const t = trusts[i]!;
      return { id, pctVol: t.ok ? t.value : null, trusted: t.ok, used: used.includes(id), reason: t.reason };
    });

    const lowest = this.estimator.lowestLimit();
    const gLimit = ev.ok ? ev.governing.limit : lowest;
    const limits: O2LimitView[] = this.estimator.limits.map((l, i) => {
      const c = ev.ok ? ev.comparisons.find((x) => x.limit.id === l.id)! : null;
      const p = ev.ok ? this.limitTrends[i]! : null;
      return {
        id: l.id,
        pctVol: l.pctVol,
        basis: l.basis,
        text: l.text,
        origin: l.origin,
        locPctVol: l.locPctVol,
        monitoring: l.monitoring,
        temperatureAllowancePctPt: l.temperatureAllowancePctPt,
        o2PctVol: c ? c.o2PctVol : null,
        marginPctPt: c ? c.marginPctPt : null,
        trendPctPtPerMin: p ? p.pctPtPerMin : null,
        timeToLimitS: p ? p.timeS : null,
        governing: l.id === gLimit.id,
      };
    });

    const purgeView = this.purge ? this.purge.view() : null;
    let reason = evReason;
    if (purging && purgeView) {
      reason =
        `being purged: ${evReason}; not yet ${fmt(o.marginalBandPctPt)} %-pt below the limit, so not inert; ` +
        `${purgeView.volumeChanges === null ? "no" : fmt(purgeView.volumeChanges)} volume changes counted` +
        (purgeView.predictedO2PctVol === null ? "" : `, well-mixed prediction ${fmt(purgeView.predictedO2PctVol)} % ${this.o2Basis}`) +
        (purgeView.fittedTimeToTargetS === null ? "" : `, ${Math.round(purgeView.fittedTimeToTargetS)} s to the target ${fmt(purgeView.targetO2PctVol)} % at the measured decay`);
    }
    if (voteView && (voteView.disagreement || voteView.degraded) && ev.ok) reason += `; ${voteView.reason}`;

    return {
      unitId: this.unitId,
      state,
      measuredState: measured,
      o2Signal: used[0] ?? this.signalIds[0]!,
      o2Signals: this.signalIds,
      readingPctVol: o2.ok ? o2.value : null,
      readingBasis: this.o2Basis,
      h2oSignal: o.h2oSignal ?? null,
      h2oPctVol: ev.h2oPctVol,
      o2PctVol: ev.ok ? ev.governing.o2PctVol : null,
      basis: gLimit.basis,
      limitPctVol: gLimit.pctVol,
      limitSource: gLimit.text,
      marginPctPt: ev.ok ? ev.governing.marginPctPt : null,
      marginalBandPctPt: o.marginalBandPctPt,
      limits,
      readings,
      vote: voteView,
      trendPctPtPerMin: trendNow,
      trendWindowS: o.trendWindowS,
      timeToLimitS: timeS,
      trendReason,
      purge: purgeView,
      reason,
    };
  }
}
