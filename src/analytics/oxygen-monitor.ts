// Oxygen monitor: each unit's O2 against its limit, its trend, its purge and its inerting
// state (src/analytics/unit-oxygen.ts does the work per unit). Derived keys per unit:
// o2.<unit>.o2PctVol, .marginPctPt, .trendPctPtPerMin, .timeToLimitS, and .purgeVolumeChanges
// where a purge is configured.
import type { SignalConfig, UnitConfig } from "../config/schema.js";
import { o2SignalIds } from "../config/sections/oxygen.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import type { Sample } from "../core/types.js";
import { UnitOxygen, type InertingView, type O2ReadingInput } from "./unit-oxygen.js";

export type { InertingView, O2LimitView, O2ReadingView, O2VoteView, PurgeProgressView } from "./unit-oxygen.js";

export interface UnitView {
  id: string;
  name: string;
  kind: string;
  inerting: InertingView | null;
}

/** A unit with oxygen, its derived keys and the inputs handed to it at each tick (reused). */
interface Tracked {
  unit: UnitOxygen;
  keys: { o2PctVol: string; marginPctPt: string; trend: string; timeToLimitS: string; purge: string };
  inputs: (O2ReadingInput & { latest: { ms: number } })[];
}

export class OxygenMonitor implements Monitor {
  private readonly perUnit: Tracked[] = [];
  /** Source time of the latest accepted sample of each O2 signal (the trend runs on it); NaN before any. */
  private readonly sourceTimeMs = new Map<string, { ms: number }>();
  private ticked = false;
  /** Views of the last tick, built on the first view() after it. */
  private views: UnitView[] | null = null;

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
      for (const sid of ids) if (!this.sourceTimeMs.has(sid)) this.sourceTimeMs.set(sid, { ms: Number.NaN });
      const k = `o2.${u.id}`;
      this.perUnit.push({
        unit: new UnitOxygen(u.id, u.oxygen, basis),
        keys: { o2PctVol: `${k}.o2PctVol`, marginPctPt: `${k}.marginPctPt`, trend: `${k}.trendPctPtPerMin`, timeToLimitS: `${k}.timeToLimitS`, purge: `${k}.purgeVolumeChanges` },
        inputs: ids.map((id) => ({ id, trust: { ok: false, value: null, reason: "" }, sourceTimeMs: null, latest: this.sourceTimeMs.get(id)! })),
      });
    }
  }

  ingest(s: Sample): void {
    const latest = this.sourceTimeMs.get(s.signal);
    if (latest) latest.ms = s.sourceTimeMs;
  }

  // Reasons are passed for unknown values and for endless times (they say why); a known value's
  // reason is not recorded (see TickContext.emit), so it is built only when a view asks.
  tick(ctx: TickContext): void {
    this.ticked = true;
    this.views = null;
    for (const { unit: u, keys, inputs } of this.perUnit) {
      const o = u.oxygen;
      for (const x of inputs) {
        x.trust = ctx.trust(x.id);
        x.sourceTimeMs = Number.isNaN(x.latest.ms) ? null : x.latest.ms;
      }
      u.step({
        nowMs: ctx.nowMs,
        o2: inputs,
        h2o: o.h2oSignal ? ctx.trust(o.h2oSignal) : null,
        inertFlow: o.purge ? ctx.trust(o.purge.inertFlowSignal) : null,
      });
      const o2PctVol = u.o2PctVol;
      ctx.emit(keys.o2PctVol, o2PctVol, o2PctVol === null ? u.o2Reason : "");
      ctx.emit(keys.marginPctPt, u.marginPctPt, o2PctVol === null ? u.o2Reason : "");
      const trend = u.trendPctPtPerMin;
      ctx.emit(keys.trend, trend, trend === null ? u.trendReason : "");
      const timeS = u.timeToLimitValue;
      ctx.emit(keys.timeToLimitS, timeS, timeS === null || timeS === Number.POSITIVE_INFINITY ? u.trendReason : "");
      if (u.purge) {
        const v = u.purge.volumeChanges();
        ctx.emit(keys.purge, v.value, v.reason);
      }
    }
  }

  view(): { units: UnitView[] } {
    if (!this.ticked) return { units: [] };
    if (this.views === null) {
      const byUnit = new Map(this.perUnit.map((t) => [t.unit.unitId, t.unit]));
      this.views = this.units.map((u) => ({ id: u.id, name: u.name, kind: u.kind, inerting: byUnit.get(u.id)?.view() ?? null }));
    }
    return { units: this.views };
  }

  /** The unit's inerting state as of the last tick; null when the unit has no oxygen section. */
  inertingStateOf(unitId: string): InertingView["state"] | null {
    if (!this.ticked) return null;
    for (const t of this.perUnit) if (t.unit.unitId === unitId) return t.unit.state;
    return null;
  }
}
