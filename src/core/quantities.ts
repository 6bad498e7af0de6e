// Names of the derived quantities the core computes from a config, so that rules,
// trends and the historian all speak of the same keys. A key is
// "<family>.<location or unit id>.<quantity with its unit>"; each config section lists its own.
import type { MillwardenConfig } from "../config/schema.js";
import { coQuantities } from "../config/sections/co.js";
import type { QuantityInfo } from "../config/sections/context.js";
import { dewPointQuantities } from "../config/sections/dew-point.js";
import { oxygenQuantities } from "../config/sections/oxygen.js";

export type { QuantityInfo };

export function derivedQuantities(cfg: Pick<MillwardenConfig, "units" | "dewPoints" | "coPoints" | "coRises" | "moistureSources" | "acidDewPoints">): QuantityInfo[] {
  return [...dewPointQuantities(cfg), ...coQuantities(cfg), ...oxygenQuantities(cfg)];
}

/** A discrete state a state rule can watch, with the values it can take. */
export interface StateKeyInfo {
  key: string;
  label: string;
  values: readonly string[];
}

export const PHASE_VALUES = ["standstill-empty", "standstill-loaded", "warm-up", "inerting", "starting", "grinding", "stopping", "maintenance", "unknown"] as const;
export const INERTING_VALUES = ["inert", "marginal", "not-inert", "purging", "unknown"] as const;
export const ANALYSER_VALUES = ["ok", "no-data", "stale", "frozen", "out-of-range", "bad", "uncertain", "function-check", "loop-fault"] as const;

/** State keys: phase.<unit> (units with a phase section), inerting.<unit> (with oxygen), analyser.<id>. */
export function stateKeys(cfg: Pick<MillwardenConfig, "units" | "analysers">): StateKeyInfo[] {
  return [
    ...cfg.units.filter((u) => u.phase).map((u) => ({ key: `phase.${u.id}`, label: `phase of ${u.name}`, values: PHASE_VALUES })),
    ...cfg.units.filter((u) => u.oxygen).map((u) => ({ key: `inerting.${u.id}`, label: `inerting state of ${u.name}`, values: INERTING_VALUES })),
    ...cfg.analysers.map((a) => ({ key: `analyser.${a.id}`, label: `health of analyser ${a.name}`, values: ANALYSER_VALUES })),
  ];
}
