// Oxygen monitor: each unit's O2 against its limit and its inerting state.
import type { SignalConfig, UnitConfig } from "../config/schema.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import type { InertingState } from "../core/types.js";
import { InertingEstimator } from "./inerting.js";

export interface InertingView {
  unitId: string;
  state: InertingState;
  o2Signal: string;
  /** O2 on the limit's basis. */
  o2PctVol: number | null;
  basis: "wet" | "dry";
  /** The effective limit (lowest of site maximum and LOC with NFPA 69 margin), on `basis`. */
  limitPctVol: number;
  /** Which of the two set the limit, with its recorded origin. */
  limitSource: string;
  /** limit − O2 in percentage points; positive is on the safe side. */
  marginPctPt: number | null;
  /** Below this margin the unit is "marginal". */
  marginalBandPctPt: number;
  reason: string;
}

export interface UnitView {
  id: string;
  name: string;
  kind: string;
  inerting: InertingView | null;
}

export class OxygenMonitor implements Monitor {
  private readonly estimators: { estimator: InertingEstimator; h2o: string | undefined }[] = [];
  private views: UnitView[] = [];

  constructor(
    private readonly units: UnitConfig[],
    signals: SignalConfig[],
  ) {
    const basisOf = new Map(signals.map((s) => [s.id, s.basis]));
    for (const u of units) {
      if (!u.oxygen) continue;
      const o2Basis = basisOf.get(u.oxygen.signal)!;
      this.estimators.push({ estimator: new InertingEstimator({ ...u, oxygen: u.oxygen }, o2Basis), h2o: u.oxygen.h2oSignal });
    }
  }

  tick(ctx: TickContext): void {
    const byUnit = new Map(
      this.estimators.map(({ estimator, h2o }) => {
        const v = estimator.evaluate(ctx.trust(estimator.unit.oxygen.signal), h2o ? ctx.trust(h2o) : null);
        ctx.emit(`o2.${v.unitId}.o2PctVol`, v.o2PctVol, v.reason);
        ctx.emit(`o2.${v.unitId}.marginPctPt`, v.marginPctPt, v.reason);
        return [v.unitId, v] as const;
      }),
    );
    this.views = this.units.map((u) => ({ id: u.id, name: u.name, kind: u.kind, inerting: byUnit.get(u.id) ?? null }));
  }

  view(): { units: UnitView[] } {
    return { units: this.views };
  }
}
