// Names of the derived quantities the core computes from a config, so that rules,
// trends and the historian all speak of the same keys. A key is
// "<family>.<location or unit id>.<quantity with its unit>".
import type { MillwardenConfig } from "../config/schema.js";

export interface QuantityInfo {
  key: string;
  unit: string;
  label: string;
}

export function derivedQuantities(cfg: Pick<MillwardenConfig, "units" | "dewPoints" | "coPoints">): QuantityInfo[] {
  const out: QuantityInfo[] = [];
  for (const d of cfg.dewPoints) {
    out.push({ key: `dewpoint.${d.id}.dewPointC`, unit: "°C", label: `${d.name} water dew point` });
    out.push({ key: `dewpoint.${d.id}.marginK`, unit: "K", label: `${d.name} dew point margin` });
  }
  for (const c of cfg.coPoints) {
    out.push({ key: `co.${c.id}.gradientPpmPerMin`, unit: "ppm/min", label: `${c.name} CO gradient` });
  }
  for (const u of cfg.units) {
    if (!u.oxygen) continue;
    out.push({ key: `o2.${u.id}.o2PctVol`, unit: "% vol", label: `${u.name} O2 on the limit's basis` });
    out.push({ key: `o2.${u.id}.marginPctPt`, unit: "%-pt", label: `${u.name} O2 margin to limit` });
  }
  return out;
}
