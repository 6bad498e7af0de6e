// Inerting state of one unit: O2 against its limit, compared on the limit's own basis.
// The limit is the lowest of the site maximum and the LOC less the NFPA 69 margin;
// each is compared on its own basis (a site maximum for moist gas is wet, a laboratory
// LOC is dry), and the smaller margin governs.
import type { UnitConfig } from "../config/schema.js";
import type { InertingState, InertingView } from "../core/types.js";
import { nfpa69LimitPctVol, o2OnBasis } from "../physics/oxygen.js";
import type { Trust } from "./signal-state.js";

type Basis = "wet" | "dry";
interface Limit {
  pctVol: number;
  basis: Basis;
  source: string;
}

export class InertingEstimator {
  readonly limits: Limit[];
  readonly o2Basis: Basis;

  constructor(
    readonly unit: UnitConfig & { oxygen: NonNullable<UnitConfig["oxygen"]> },
    o2Basis: Basis,
  ) {
    this.o2Basis = o2Basis;
    const o = unit.oxygen;
    this.limits = [];
    if (o.siteMaximum) this.limits.push({ pctVol: o.siteMaximum.pctVol, basis: o.siteMaximum.basis, source: `site maximum (${o.siteMaximum.origin})` });
    if (o.loc) {
      const lim = nfpa69LimitPctVol(o.loc.pctVol, o.loc.monitoring);
      this.limits.push({
        pctVol: lim,
        basis: o.loc.basis,
        source: `LOC ${o.loc.pctVol} % ${o.loc.basis} with the NFPA 69 margin, ${o.loc.monitoring} monitoring (${o.loc.origin})`,
      });
    }
  }

  evaluate(o2: Trust, h2o: Trust | null): InertingView {
    const o = this.unit.oxygen;
    const first = this.limits.reduce((a, b) => (b.pctVol < a.pctVol ? b : a));
    const base: Omit<InertingView, "state" | "o2PctVol" | "marginPctPt" | "reason"> = {
      unitId: this.unit.id,
      o2Signal: o.signal,
      basis: first.basis,
      limitPctVol: first.pctVol,
      limitSource: first.source,
      marginalBandPctPt: o.marginalBandPctPt,
    };
    const unknown = (reason: string): InertingView => ({ ...base, state: "unknown", o2PctVol: null, marginPctPt: null, reason });
    if (!o2.ok || o2.value === null) return unknown(o2.reason);

    let governing: { limit: Limit; o2: number; margin: number } | null = null;
    for (const limit of this.limits) {
      let x: number | null = o2.value;
      if (limit.basis !== this.o2Basis) {
        if (!h2o || !h2o.ok || h2o.value === null) return unknown(`no trusted H2O for the ${this.o2Basis}-to-${limit.basis} conversion: ${h2o?.reason ?? "none configured"}`);
        x = o2OnBasis(o2.value, this.o2Basis, limit.basis, h2o.value);
        if (x === null) return unknown("wet/dry conversion failed");
      }
      const margin = limit.pctVol - x;
      if (!governing || margin < governing.margin) governing = { limit, o2: x, margin };
    }
    const g = governing!;
    const state: InertingState = g.margin < 0 ? "not-inert" : g.margin < o.marginalBandPctPt ? "marginal" : "inert";
    return {
      ...base,
      basis: g.limit.basis,
      limitPctVol: g.limit.pctVol,
      limitSource: g.limit.source,
      state,
      o2PctVol: g.o2,
      marginPctPt: g.margin,
      reason:
        state === "not-inert"
          ? `O2 ${g.o2.toFixed(1)} % ${g.limit.basis} is above the limit ${g.limit.pctVol.toFixed(1)} %`
          : `O2 ${g.o2.toFixed(1)} % ${g.limit.basis}, ${g.margin.toFixed(1)} %-pt below the limit`,
    };
  }
}
