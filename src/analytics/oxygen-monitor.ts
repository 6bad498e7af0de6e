// Oxygen monitor: each unit's O2 against its limit, its trend, its purge and its inerting
// state (src/analytics/unit-oxygen.ts does the work per unit). Derived keys per unit:
// o2.<unit>.o2PctVol, .marginPctPt, .trendPctPtPerMin, .timeToLimitS, and .purgeVolumeChanges
// where a purge is configured.
import type { SignalConfig, UnitConfig } from "../config/schema.js";
import { o2SignalIds } from "../config/sections/oxygen.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import type { Sample } from "../core/types.js";
import { UnitOxygen, type InertingView } from "./unit-oxygen.js";

export type { InertingView, O2LimitView, O2ReadingView, O2VoteView, PurgeProgressView } from "./unit-oxygen.js";

export interface UnitView {
  id: string;
  name: string;
  kind: string;
  inerting: InertingView | null;
}

export class OxygenMonitor implements Monitor {
  private readonly perUnit: UnitOxygen[] = [];
  /** Source time of the latest accepted sample of each O2 signal (the trend runs on it). */
  private readonly sourceTimeMs = new Map<string, number>();
  private views: UnitView[] = [];

  constructor(
    private readonly units: UnitConfig[],
    signals: SignalConfig[],
  ) {
    const basisOf = new Map(signals.map((s) => [s.id, s.basis]));
    for (const u of units) {
      if (!u.oxygen) continue;
      // The config check makes every O2 signal of a unit declare one common basis.
      const ids = o2SignalIds(u.oxygen);
      const basis = basisOf.get(ids[0] ?? "");
      if (!basis) throw new RangeError(`OxygenMonitor: O2 signal "${ids[0] ?? ""}" of unit "${u.id}" declares no basis (wet or dry)`);
      this.perUnit.push(new UnitOxygen(u.id, u.oxygen, basis));
      for (const sid of ids) this.sourceTimeMs.set(sid, Number.NaN);
    }
  }

  ingest(s: Sample): void {
    if (this.sourceTimeMs.has(s.signal)) this.sourceTimeMs.set(s.signal, s.sourceTimeMs);
  }

  tick(ctx: TickContext): void {
    const byUnit = new Map<string, InertingView>();
    for (const u of this.perUnit) {
      const o = u.oxygen;
      const r = u.evaluate({
        nowMs: ctx.nowMs,
        o2: u.signalIds.map((id) => {
          const t = this.sourceTimeMs.get(id);
          return { id, trust: ctx.trust(id), sourceTimeMs: t === undefined || Number.isNaN(t) ? null : t };
        }),
        h2o: o.h2oSignal ? ctx.trust(o.h2oSignal) : null,
        inertFlow: o.purge ? ctx.trust(o.purge.inertFlowSignal) : null,
      });
      for (const d of r.derived) ctx.emit(`o2.${u.unitId}.${d.key}`, d.value, d.reason);
      byUnit.set(u.unitId, r.view);
    }
    this.views = this.units.map((u) => ({ id: u.id, name: u.name, kind: u.kind, inerting: byUnit.get(u.id) ?? null }));
  }

  view(): { units: UnitView[] } {
    return { units: this.views };
  }

  /** The unit's inerting state as of the last tick; null when the unit has no oxygen section. */
  inertingStateOf(unitId: string): InertingView["state"] | null {
    for (const v of this.views) if (v.id === unitId) return v.inerting?.state ?? null;
    return null;
  }
}
