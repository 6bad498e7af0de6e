// The daemon's side of GET /api/handover and GET /api/rules: reads the historian and the
// plant state, and hands them to the pure src/server/handover.ts.
import type { MillwardenConfig } from "../config/schema.js";
import type { PlantState, StateChange } from "../core/types.js";
import { computeHandover, type Handover } from "../server/handover.js";
import type { Historian } from "../store/historian.js";

/** How far before the shift's start the historian is asked for state changes, to know the states at its start. */
const STATE_LOOKBACK_MS = 7 * 24 * 3600_000;
/** Points per derived series: a reduced trend keeps each bucket's min and max, so the extremes survive. */
const SERIES_POINTS = 2000;

export function handoverFromHistorian(historian: Historian, state: PlantState, cfg: Pick<MillwardenConfig, "units">, hours: number): Handover {
  historian.flush();
  const toMs = state.nowMs;
  const fromMs = toMs - hours * 3600_000;
  const states = historian.events(fromMs - STATE_LOOKBACK_MS, toMs).filter((e): e is StateChange => e.kind === "state");
  return computeHandover({
    fromMs,
    toMs,
    plant: {
      units: state.units.map((u) => ({ id: u.id, name: u.name, hasOxygen: cfg.units.some((c) => c.id === u.id && c.oxygen !== undefined) })),
      dewPoints: state.dewPoints.map((d) => ({ id: d.id, name: d.name, unitId: d.unitId ?? null })),
      coPoints: state.coPoints.map((p) => ({ id: p.id, name: p.name, unitId: p.unitId ?? null })),
    },
    transitions: historian.transitions({ fromMs, toMs, limit: 100_000 }),
    states,
    series: (key) => historian.trend(key, fromMs, toMs, SERIES_POINTS).points,
  });
}
