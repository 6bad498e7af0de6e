// GET /api/rules: the configured rules as the dashboard needs them (every limit of every tier,
// so the trends page can draw a limit before any advisory has been raised). Pure: built once
// from the loaded config.
import type { MillwardenConfig, RuleConfig } from "../config/schema.js";
import { derivedQuantities, stateKeys } from "../core/quantities.js";
import type { Tier } from "../core/types.js";
import { unitDef } from "../config/units.js";

export interface RuleView {
  id: string;
  title: string;
  /** The plant unit the rule belongs to (null: plant-wide). */
  unitId: string | null;
  /** The signal id, derived key or state key it watches. */
  quantity: string;
  /** The quantity's engineering unit ("" for a state key). */
  quantityUnit: string;
  /** Threshold rule: direction and one limit per tier it has; a state rule: null. */
  direction: "high" | "low" | null;
  tiers: Partial<Record<Tier, number>> | null;
  /** State rule: the values that make it active, at this tier. */
  states: string[] | null;
  tier: Tier | null;
  deadband: number;
  onDelayS: number;
  offDelayS: number;
  latching: boolean;
  /** Phases (of phaseUnit) in which it applies; null: always. */
  phases: string[] | null;
  phaseUnit: string | null;
  position: string;
  origin: string;
  cause: string;
  consequence: string;
  check: string;
}

export function ruleViews(cfg: Pick<MillwardenConfig, "rules" | "signals" | "units" | "analysers" | "dewPoints" | "coPoints" | "coRises" | "moistureSources" | "acidDewPoints">): RuleView[] {
  const unitOf = new Map<string, string>(derivedQuantities(cfg).map((q) => [q.key, q.unit]));
  for (const s of cfg.signals) unitOf.set(s.id, unitDef(s.unit).canonical);
  for (const k of stateKeys(cfg)) unitOf.set(k.key, "");
  return cfg.rules.map((r: RuleConfig) => ({
    id: r.id,
    title: r.title,
    unitId: r.unit ?? null,
    quantity: r.quantity,
    quantityUnit: unitOf.get(r.quantity) ?? "",
    direction: r.direction ?? null,
    tiers: r.tiers ? Object.fromEntries(Object.entries(r.tiers).filter(([, v]) => v !== undefined)) : null,
    states: r.states ? [...r.states] : null,
    tier: r.tier ?? null,
    deadband: r.deadband,
    onDelayS: r.onDelayS,
    offDelayS: r.offDelayS,
    latching: r.latching,
    phases: r.phases ? [...r.phases] : null,
    phaseUnit: r.phaseUnit ?? r.unit ?? null,
    position: r.position,
    origin: r.origin,
    cause: r.cause,
    consequence: r.consequence,
    check: r.check,
  }));
}
