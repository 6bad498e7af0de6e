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
