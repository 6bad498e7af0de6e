// Inerting of one unit from its measured O2: the unit's limits, and the O2 compared with
// each limit on that limit's own basis (a site maximum for moist gas is wet, a laboratory
// LOC is dry). The smallest margin governs. Only a measured, trusted O2 makes a unit inert.
//
// Limits (DESIGN.md §4): the site's configured maximum, and the LOC less the NFPA 69 margin
// (src/physics/oxygen.ts), less an optional temperature allowance. The LOC falls as the
// temperature rises, but no general correlation gives by how much (it depends on the coal and
// the test), so the allowance is a configured site value; the better answer is an LOC tested at
// the maximum process temperature.
import type { OxygenConfig } from "../config/sections/oxygen.js";
import { effectiveOxygenLimit, o2OnBasis, type O2Basis, type O2Monitoring } from "../physics/oxygen.js";
import type { Trust } from "./signal-state.js";

/** The state from the measured O2 alone; "purging" is added on top of it (see unit-oxygen.ts). */
export type MeasuredInertingState = "inert" | "marginal" | "not-inert" | "unknown";

export interface O2Limit {
  id: "site-maximum" | "loc";
  /** The limit on `basis`, % vol. */
  pctVol: number;
  basis: O2Basis;
  /** How the limit was set, with its recorded origin. */
  text: string;
  origin: string;
  locPctVol: number | null;
  monitoring: O2Monitoring | null;
  temperatureAllowancePctPt: number | null;
}

export interface LimitComparison {
  limit: O2Limit;
  /** O2 on the limit's basis, % vol. */
  o2PctVol: number;
  /** limit − O2, percentage points; positive is on the safe side. */
  marginPctPt: number;
}

export type InertingEvaluation =
  | { ok: true; state: Exclude<MeasuredInertingState, "unknown">; comparisons: LimitComparison[]; governing: LimitComparison; h2oPctVol: number | null; reason: string }
  | { ok: false; state: "unknown"; h2oPctVol: number | null; reason: string };

/** The limits configured for a unit, on their own bases (at least one; the config check makes sure). */
export function unitLimits(o: OxygenConfig): O2Limit[] {
  const out: O2Limit[] = [];
  if (o.siteMaximum) {
    const s = o.siteMaximum;
    out.push({
      id: "site-maximum",
      pctVol: s.pctVol,
      basis: s.basis,
      text: `site maximum ${s.pctVol} % ${s.basis} (${s.origin})`,
      origin: s.origin,
      locPctVol: null,
      monitoring: null,
      temperatureAllowancePctPt: null,
    });
  }
  if (o.loc) {
    const l = o.loc;
    const allowance = l.temperatureAllowancePctPt ?? null;
    const { limitPctVol } = effectiveOxygenLimit({ locPctVol: l.pctVol, monitoring: l.monitoring, ...(allowance === null ? {} : { extraMarginPctPt: allowance }) });
    const allowanceText = allowance === null ? "" : `, less a temperature allowance of ${allowance} %-pt (${l.temperatureAllowanceOrigin ?? "origin not recorded"})`;
    out.push({
      id: "loc",
      pctVol: limitPctVol,
      basis: l.basis,
      text: `LOC ${l.pctVol} % ${l.basis} with the NFPA 69 margin, ${l.monitoring} monitoring (${l.origin})${allowanceText}`,
      origin: l.origin,
      locPctVol: l.pctVol,
      monitoring: l.monitoring,
      temperatureAllowancePctPt: allowance,
    });
  }
  if (!out.length) throw new RangeError("unitLimits: expected a siteMaximum, a loc, or both; found neither");
  return out;
}

/** inert when the margin is at least the band, marginal from 0 up to the band, not-inert above the limit. */
export function stateFromMargin(marginPctPt: number, bandPctPt: number): Exclude<MeasuredInertingState, "unknown"> {
  return marginPctPt < 0 ? "not-inert" : marginPctPt < bandPctPt ? "marginal" : "inert";
}

export class InertingEstimator {
  readonly limits: O2Limit[];

  constructor(
    readonly oxygen: OxygenConfig,
    /** What the O2 analysers read. */
    readonly o2Basis: O2Basis,
  ) {
    this.limits = unitLimits(oxygen);
  }

  /** The lowest limit (shown while the O2 is unknown). */
  lowestLimit(): O2Limit {
    return this.limits.reduce((a, b) => (b.pctVol < a.pctVol ? b : a));
  }

  /**
   * Compare the O2 (on the analysers' basis, already voted) with every limit. Unknown,
   * never safe, when the O2 or an H2O needed for a conversion cannot be trusted.
   */
  evaluate(o2: Trust, h2o: Trust | null, describe = true): InertingEvaluation {
    const needsH2o = this.limits.some((l) => l.basis !== this.o2Basis);
    const h2oValue = needsH2o && h2o && h2o.ok ? h2o.value : null;
    const unknown = (reason: string): InertingEvaluation => ({ ok: false, state: "unknown", h2oPctVol: h2oValue, reason });
    if (!o2.ok || o2.value === null) return unknown(o2.reason || "no trusted O2");
    if (needsH2o && (!h2o || !h2o.ok || h2o.value === null)) {
      const other = this.o2Basis === "wet" ? "dry" : "wet";
      return unknown(`no trusted H2O for the ${this.o2Basis}-to-${other} conversion: ${h2o?.reason ?? "none configured"}`);
    }
    const comparisons: LimitComparison[] = [];
    for (const limit of this.limits) {
      let x: number | null;
      try {
        x = o2OnBasis(o2.value, this.o2Basis, limit.basis, h2oValue);
      } catch (e) {
        // e.g. a slightly negative reading from zero drift, or O2 + H2O above 100 %
        return unknown(`O2 ${o2.value} % ${this.o2Basis} cannot be put on the ${limit.basis} basis: ${(e as Error).message}`);
      }
      if (x === null) return unknown("wet/dry conversion needs a trusted H2O");
      comparisons.push({ limit, o2PctVol: x, marginPctPt: limit.pctVol - x });
    }
    const governing = comparisons.reduce((a, b) => (b.marginPctPt < a.marginPctPt ? b : a));
    const state = stateFromMargin(governing.marginPctPt, this.oxygen.marginalBandPctPt);
    const ev: InertingEvaluation = { ok: true, state, comparisons, governing, h2oPctVol: h2oValue, reason: "" };
    if (describe) ev.reason = this.describe(ev);
    return ev;
  }

  /**
   * The reason evaluate() gives with a known O2 (with `describe` false it leaves it empty: the
   * text is built only when someone looks).
   */
  describe(ev: Extract<InertingEvaluation, { ok: true }>): string {
    const g = ev.governing;
    return ev.state === "not-inert"
      ? `O2 ${fmt(g.o2PctVol)} % ${g.limit.basis} is above the limit ${fmt(g.limit.pctVol)} % (${g.limit.id})`
      : `O2 ${fmt(g.o2PctVol)} % ${g.limit.basis}, ${fmt(g.marginPctPt)} %-pt below the limit ${fmt(g.limit.pctVol)} % (${g.limit.id})` +
          (ev.state === "marginal" ? `, within the marginal band of ${fmt(this.oxygen.marginalBandPctPt)} %-pt` : "");
  }
}

export function fmt(x: number): string {
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(4)));
}
