// Phase monitor: the operating phase of every unit with `phase:` configured, at each tick,
// from the trusted values of its inputs (src/analytics/phase.ts holds the rules).
//
// It runs first in the engine, on the signals' own trust (fresh, good, not in function
// check), so that analyser health and every later monitor see the phase of this tick.
// Phases are categorical: nothing numeric is emitted; the view shows the phase, since when,
// why, and the inputs behind it.
import type { UnitConfig } from "../config/schema.js";
import type { PhaseSectionConfig } from "../config/sections/phase.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import { PhaseTracker, type MillPhase } from "./phase.js";
import type { Trust } from "./signal-state.js";

export interface PhaseView {
  /** The unit id (one entry per unit with a phase). */
  id: string;
  unitId: string;
  phase: MillPhase;
  /** When the current phase was entered, epoch ms. */
  sinceMs: number;
  reason: string;
  /** Input values as used (null = not trusted), the debounced tests and the coal-inside memory. */
  inputs: Record<string, number | boolean | null>;
}

/** Phases in which the process runs: the gas and the coal move, so measured values must move. */
export const RUNNING_PHASES: readonly MillPhase[] = ["starting", "grinding", "stopping"];

interface Tracked {
  unitId: string;
  cfg: PhaseSectionConfig;
  tracker: PhaseTracker;
  /** The phase as of the last tick; null before the first. */
  phase: MillPhase | null;
  /** Why inputs were not trusted at the last tick (the view appends them to the tracker's reason). */
  untrusted: string[];
  /** The view of the last tick, built when first asked for. */
  view: PhaseView | null;
}

export class PhaseMonitor implements Monitor {
  private readonly units: Tracked[] = [];
  private readonly byUnit = new Map<string, Tracked>();
  private lastNowMs: number | null = null;

  constructor(units: UnitConfig[]) {
    for (const u of units) {
      if (!u.phase) continue;
      const p = u.phase;
      const t: Tracked = {
        unitId: u.id,
        cfg: p,
        tracker: new PhaseTracker({
          drivePowerRunningKW: p.drivePowerRunningKW,
          feedOnTPerH: p.feedOnTPerH,
          warmGasC: p.warmGasC,
          inertFlowOnNm3PerH: p.inertFlowOnNm3PerH,
          minDwellS: p.minDwellS,
          runEmptyS: p.runEmptyS,
          initialCoalInside: p.initialCoalInside,
        }),
        phase: null,
        untrusted: [],
        view: null,
      };
      this.units.push(t);
      this.byUnit.set(u.id, t);
    }
  }

  tick(ctx: TickContext): void {
    // A wall clock stepped back must not throw in the core: time holds at the last tick
    // until the clock passes it again (the tracker needs non-decreasing times).
    const nowMs = this.lastNowMs === null ? ctx.nowMs : Math.max(this.lastNowMs, ctx.nowMs);
    this.lastNowMs = nowMs;
    for (const t of this.units) {
      const p = t.cfg;
      const untrusted: string[] = [];
      const read = (sid: string | undefined): Trust | null => {
        if (sid === undefined) return null;
        const tr = ctx.trust(sid);
        if (!tr.ok) untrusted.push(tr.reason);
        return tr;
      };
      const num = (tr: Trust | null): number | null => (tr?.ok ? tr.value : null);
      // State inputs: non-zero = on. Untrusted = null: the tracker then decides from the drive and feed.
      const flag = (tr: Trust | null): boolean | null => (tr === null ? null : tr.ok && tr.value !== null ? tr.value !== 0 : null);
      // The tracker keeps its input object for the reason and inputs it builds when asked: a new one each tick.
      t.phase = t.tracker.step({
        nowMs,
        drivePowerKW: num(read(p.drivePower)),
        feedTPerH: num(read(p.feed)),
        millInletTempC: num(read(p.inletTemp)),
        millOutletTempC: num(read(p.outletTemp)),
        inertFlowNm3PerH: num(read(p.inertFlow)),
        trip: flag(read(p.trip)),
        maintenance: flag(read(p.maintenance)),
      });
      t.untrusted = untrusted;
      t.view = null;
    }
  }

  /** The unit's phase as of the last tick; null when no phase is configured for it. */
  phaseOf(unitId: string): MillPhase | null {
    const t = this.byUnit.get(unitId);
    if (!t) return null;
    return t.phase ?? "unknown";
  }

  view(): { phases: PhaseView[] } {
    return { phases: this.units.flatMap((t) => (t.phase === null ? [] : [(t.view ??= viewOf(t))])) };
  }
}

function viewOf(t: Tracked): PhaseView {
  const r = t.tracker.result;
  const reason = t.untrusted.length ? `${r.reason}; not trusted: ${t.untrusted.join("; ")}` : r.reason;
  return { id: t.unitId, unitId: t.unitId, phase: r.phase, sinceMs: r.sinceMs, reason, inputs: r.inputs };
}
