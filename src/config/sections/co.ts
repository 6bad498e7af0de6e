// Config of the CO measuring points.
import { z } from "zod";
import { id, positive, text } from "./common.js";
import type { CheckContext, QuantityInfo } from "./context.js";

export const coPointSchema = z.strictObject({
  id,
  name: text,
  unit: id,
  signal: id,
  windowS: positive,
  /** Analyser transport lag; the window must be longer than it. */
  transportLagS: z.number().nonnegative(),
  minPoints: z.number().int().min(3).default(10),
  /** A gap longer than this restarts the window: no gradient across a gap. */
  maxGapS: positive.default(30),
});

export const coSection = {
  coPoints: z.array(coPointSchema).default([]),
};

export type CoPointConfig = z.infer<typeof coPointSchema>;
type Section = { coPoints: CoPointConfig[] };

export function checkCo(cfg: Section, ctx: CheckContext): void {
  cfg.coPoints.forEach((c, i) => {
    ctx.needUnit(["coPoints", i, "unit"], c.unit);
    ctx.needSignal(["coPoints", i, "signal"], c.signal, "concentration-ppm", "ppm");
    if (c.windowS <= c.transportLagS) ctx.problem(["coPoints", i, "windowS"], `expected a window longer than the transport lag (${c.transportLagS} s); found ${c.windowS} s`);
  });
}

export function coQuantities(cfg: Section): QuantityInfo[] {
  return cfg.coPoints.map((c) => ({ key: `co.${c.id}.gradientPpmPerMin`, unit: "ppm/min", label: `${c.name} CO gradient` }));
}
