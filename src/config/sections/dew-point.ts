// Config of the water dew point locations.
import { z } from "zod";
import { id, text } from "./common.js";
import type { CheckContext, QuantityInfo } from "./context.js";

export const dewPointSchema = z.strictObject({
  id,
  name: text,
  unit: id,
  gasTemperature: id,
  h2o: id,
  /** Gauge pressure signal at the location; omitted means atmospheric. */
  gaugePressure: id.optional(),
});

export const dewPointSection = {
  dewPoints: z.array(dewPointSchema).default([]),
};

export type DewPointConfig = z.infer<typeof dewPointSchema>;
type Section = { dewPoints: DewPointConfig[] };

export function checkDewPoints(cfg: Section, ctx: CheckContext): void {
  cfg.dewPoints.forEach((d, i) => {
    ctx.needUnit(["dewPoints", i, "unit"], d.unit);
    ctx.needSignal(["dewPoints", i, "gasTemperature"], d.gasTemperature, "temperature", "a temperature unit (degC, K, degF)");
    ctx.needSignal(["dewPoints", i, "h2o"], d.h2o, "concentration-pct", "% vol (pctVol)");
    if (d.gaugePressure) ctx.needSignal(["dewPoints", i, "gaugePressure"], d.gaugePressure, "pressure", "a pressure unit");
  });
}

export function dewPointQuantities(cfg: Section): QuantityInfo[] {
  return cfg.dewPoints.flatMap((d) => [
    { key: `dewpoint.${d.id}.dewPointC`, unit: "°C", label: `${d.name} water dew point` },
    { key: `dewpoint.${d.id}.marginK`, unit: "K", label: `${d.name} dew point margin` },
  ]);
}
