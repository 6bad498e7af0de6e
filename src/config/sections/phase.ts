// Config of each mill's operating phase inference (src/analytics/phase.ts): which signals
// feed it and the thresholds that turn them into drive running, feed on, hot gas, inert gas.
// It sits under units[].phase, so the unit schema references phaseSchema.
import { z } from "zod";
import { id, positive } from "./common.js";
import type { CheckContext } from "./context.js";

export const phaseSchema = z.strictObject({
  /** Main drive power, kW. */
  drivePower: id,
  /** Raw coal feed, t/h. */
  feed: id,
  /** Mill inlet gas temperature. */
  inletTemp: id,
  /** Mill outlet gas temperature (shown with the inference; the rules do not need it). */
  outletTemp: id.optional(),
  /** Inert-gas flow into the mill, Nm3/h; needs inertFlowOnNm3PerH. */
  inertFlow: id.optional(),
  /** Trip from the protection system, unit "state": non-zero = tripped. */
  trip: id.optional(),
  /** Maintenance declared, unit "state": non-zero = in maintenance. */
  maintenance: id.optional(),
  drivePowerRunningKW: positive,
  feedOnTPerH: positive,
  warmGasC: z.number().min(-273.15),
  inertFlowOnNm3PerH: positive.optional(),
  /** A threshold test must hold its new value this long before it counts, s. */
  minDwellS: z.number().nonnegative(),
  /** Running the drive without feed this long empties the mill, s (default 300 s, a placeholder). */
  runEmptyS: positive.optional(),
  /** Coal inside when tracking starts without history; the cautious default is true. */
  initialCoalInside: z.boolean().default(true),
});

export type PhaseSectionConfig = z.infer<typeof phaseSchema>;

interface UnitLike {
  id: string;
  kind: string;
  phase?: PhaseSectionConfig | undefined;
}
interface SignalLike {
  id: string;
  unit: string;
}

/** The config unit each of these inputs must be in (the thresholds are stated in it). */
const INPUT_UNITS = [
  { key: "drivePower", unit: "kW", what: "kW" },
  { key: "feed", unit: "t/h", what: "t/h" },
  { key: "inertFlow", unit: "Nm3/h", what: "Nm3/h (or Am3/h with actualConditions)" },
  { key: "trip", unit: "state", what: 'unit "state" (non-zero = tripped)' },
  { key: "maintenance", unit: "state", what: 'unit "state" (non-zero = in maintenance)' },
] as const;

export function checkPhase(cfg: { units: UnitLike[]; signals: SignalLike[] }, ctx: CheckContext): void {
  const signalById = new Map(cfg.signals.map((s) => [s.id, s]));
  cfg.units.forEach((u, i) => {
    const p = u.phase;
    if (!p) return;
    const at = (key: string) => ["units", i, "phase", key];
    if (u.kind !== "mill") ctx.problem(["units", i, "phase"], `an operating phase is inferred for mills only; unit "${u.id}" is a ${u.kind}`);
    for (const key of ["inletTemp", "outletTemp"] as const) {
      const sid = p[key];
      if (sid) ctx.needSignal(at(key), sid, "temperature", "a temperature unit (degC, K, degF)");
    }
    for (const { key, unit, what } of INPUT_UNITS) {
      const sid = p[key];
      if (!sid) continue;
      ctx.needSignal(at(key), sid);
      const s = signalById.get(sid);
      // An actual flow is converted to a normal one in the core: it stands for Nm3/h.
      const given = s?.unit === "Am3/h" ? "Nm3/h" : s?.unit;
      if (s && given !== unit) ctx.problem(at(key), `signal "${sid}" is in ${s.unit}, expected ${what}`);
    }
    if (p.inertFlow && p.inertFlowOnNm3PerH === undefined) {
      ctx.problem(at("inertFlow"), "expected inertFlowOnNm3PerH with inertFlow: the flow at or above which inerting is on");
    }
    if (!p.inertFlow && p.inertFlowOnNm3PerH !== undefined) {
      ctx.problem(at("inertFlowOnNm3PerH"), "expected an inertFlow signal with inertFlowOnNm3PerH; found none");
    }
  });
}
