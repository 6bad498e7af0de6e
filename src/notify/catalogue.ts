// What a message says about each advisory, taken from the config once: its title, unit,
// indicator, the unit symbol of its value and the derived key of its trend, where one exists.
// Pure.
import type { MillwardenConfig } from "../config/schema.js";
import { unitDef } from "../config/units.js";
import { derivedQuantities, stateKeys } from "../core/quantities.js";

export interface AdvisoryInfo {
  id: string;
  title: string;
  unitId: string | null;
  unitName: string | null;
  position: string;
  /** The quantity the rule watches (signal id, derived key or state key). */
  quantity: string;
  /** Its name for people ("Bag filter outlet dew point margin"). */
  indicator: string;
  /** Unit symbol of value and limit ("" for a state rule). */
  valueUnit: string;
  direction: "high" | "low";
  /** A state rule's states (its value is then 1 while one matches, else 0); null for a threshold rule. */
  states: string[] | null;
  /** The derived key whose value is the indicator's trend, with its label and unit. */
  trend: { key: string; label: string; unit: string } | null;
}

/** The family's trend key for a quantity, if the config computes one (and it is not the quantity itself). */
function trendKeyOf(quantity: string): string[] {
  const [family, place] = quantity.split(".");
  if (place === undefined) return [];
  if (family === "dewpoint") return [`dewpoint.${place}.marginTrendKPerMin`];
  if (family === "o2") return [`o2.${place}.trendPctPtPerMin`];
  if (family === "co") return [`co.${place}.gradientPpmPerMin`, `co.${place}.riseLongPpmPerH`];
  return [];
}

export function advisoryCatalogue(cfg: MillwardenConfig): AdvisoryInfo[] {
  const info = new Map<string, { unit: string; label: string }>(derivedQuantities(cfg).map((q) => [q.key, q]));
  for (const s of cfg.signals) info.set(s.id, { unit: unitDef(s.unit).canonical, label: s.name });
  for (const k of stateKeys(cfg)) info.set(k.key, { unit: "", label: k.label });
  const units = new Map(cfg.units.map((u) => [u.id, u.name]));
  return cfg.rules.map((r) => {
    const q = info.get(r.quantity);
    const trendKey = r.states ? undefined : trendKeyOf(r.quantity).find((k) => k !== r.quantity && info.has(k));
    const t = trendKey === undefined ? undefined : info.get(trendKey);
    return {
      id: r.id,
      title: r.title,
      unitId: r.unit ?? null,
      unitName: r.unit ? (units.get(r.unit) ?? null) : null,
      position: r.position,
      quantity: r.quantity,
      indicator: q?.label ?? r.quantity,
      valueUnit: q?.unit ?? "",
      direction: r.direction ?? "high",
      states: r.states ?? null,
      trend: trendKey && t ? { key: trendKey, label: t.label, unit: t.unit } : null,
    };
  });
}
