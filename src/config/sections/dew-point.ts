// Config of the water dew point locations, the moisture sources behind them and the
// sulfuric acid dew points (one family: condensation).
import { z } from "zod";
import { id, positive, text } from "./common.js";
import type { CheckContext, Path, QuantityInfo } from "./context.js";
import { acidDewPointQuantities, acidDewPointSchema, checkAcidDewPoints, type AcidDewPointConfig } from "./acid-dew-point.js";
import {
  checkMoistureSources,
  moistureSourceQuantities,
  moistureSourceSchema,
  unknownSourceMessage,
  type MoistureSourceConfig,
} from "./moisture-source.js";

/** The location id kept for the plant-wide keys (dewpoint.lowest.marginK). */
export const PLANT_WIDE_DEW_POINT_ID = "lowest";
/** Default window of the margin trend: 10 min. */
export const DEFAULT_TREND_WINDOW_S = 600;

export const dewPointSchema = z.strictObject({
  id,
  name: text,
  unit: id,
  gasTemperature: id,
  /** Id of the moisture source whose value gives this location's dew point. */
  moisture: id,
  /** Other moisture sources shown beside it, with their disagreement. */
  compareWith: z.array(id).default([]),
  /** Gauge pressure signal at the location; omitted means atmospheric. */
  gaugePressure: id.optional(),
  /** Least-squares window of the margin trend, s. */
  trendWindowS: positive.default(DEFAULT_TREND_WINDOW_S),
  /** The trend is shown once the margin has been known without a gap for this long; default half the window. */
  trendMinSpanS: positive.optional(),
});

export const dewPointSection = {
  moistureSources: z.array(moistureSourceSchema).default([]),
  dewPoints: z.array(dewPointSchema).default([]),
  acidDewPoints: z.array(acidDewPointSchema).default([]),
};

export type DewPointConfig = z.infer<typeof dewPointSchema>;
export type { AcidDewPointConfig, MoistureSourceConfig };

/** What the dew point monitor needs from a config. */
export interface DewPointFamilyConfig {
  moistureSources: MoistureSourceConfig[];
  dewPoints: DewPointConfig[];
  acidDewPoints: AcidDewPointConfig[];
}

type Section = DewPointFamilyConfig & { signals: { id: string; unit: string }[] };

export function checkDewPoints(cfg: Section, ctx: CheckContext): void {
  const sourceIds = checkMoistureSources(cfg, ctx);
  cfg.dewPoints.forEach((d, i) => {
    const at = (...p: Path): Path => ["dewPoints", i, ...p];
    if (d.id === PLANT_WIDE_DEW_POINT_ID) {
      ctx.problem(at("id"), `the id "${PLANT_WIDE_DEW_POINT_ID}" is kept for the plant-wide keys (dewpoint.lowest.marginK): choose another`);
    }
    ctx.needUnit(at("unit"), d.unit);
    ctx.needSignal(at("gasTemperature"), d.gasTemperature, "temperature", "a temperature unit (degC, K, degF)");
    if (!sourceIds.has(d.moisture)) ctx.problem(at("moisture"), unknownSourceMessage(d.moisture, sourceIds));
    const seen = new Set<string>();
    d.compareWith.forEach((c, k) => {
      if (c === d.moisture) ctx.problem(at("compareWith", k), `"${c}" is this location's own moisture source: expected another source to compare with`);
      else if (seen.has(c)) ctx.problem(at("compareWith", k), `"${c}" is listed twice: expected each source once`);
      else if (!sourceIds.has(c)) ctx.problem(at("compareWith", k), unknownSourceMessage(c, sourceIds));
      seen.add(c);
    });
    if (d.gaugePressure) ctx.needSignal(at("gaugePressure"), d.gaugePressure, "pressure", "a pressure unit (Pa, hPa, mbar, kPa, bar)");
    if (d.trendMinSpanS !== undefined && d.trendMinSpanS > d.trendWindowS) {
      ctx.problem(at("trendMinSpanS"), `expected at most trendWindowS (${d.trendWindowS} s); found ${d.trendMinSpanS} s`);
    }
  });
  checkAcidDewPoints(cfg, sourceIds, ctx);
}

export function dewPointQuantities(cfg: DewPointFamilyConfig): QuantityInfo[] {
  const locations = cfg.dewPoints.flatMap((d) => [
    { key: `dewpoint.${d.id}.dewPointC`, unit: "°C", label: `${d.name} water dew point` },
    { key: `dewpoint.${d.id}.marginK`, unit: "K", label: `${d.name} dew point margin` },
    { key: `dewpoint.${d.id}.marginTrendKPerMin`, unit: "K/min", label: `${d.name} dew point margin trend` },
    { key: `dewpoint.${d.id}.timeToCondensationS`, unit: "s", label: `${d.name} predicted time to condensation` },
    ...(d.compareWith.length
      ? [
          { key: `dewpoint.${d.id}.h2oDisagreementPctVol`, unit: "% vol", label: `${d.name} largest H2O disagreement between moisture sources` },
          { key: `dewpoint.${d.id}.dewPointDisagreementK`, unit: "K", label: `${d.name} largest dew point disagreement between moisture sources` },
        ]
      : []),
  ]);
  const plant = cfg.dewPoints.length
    ? [
        { key: `dewpoint.${PLANT_WIDE_DEW_POINT_ID}.marginK`, unit: "K", label: "Lowest water dew point margin of the plant" },
        { key: `dewpoint.${PLANT_WIDE_DEW_POINT_ID}.timeToCondensationS`, unit: "s", label: "Shortest predicted time to condensation of the plant" },
      ]
    : [];
  return [...moistureSourceQuantities(cfg), ...locations, ...plant, ...acidDewPointQuantities(cfg)];
}
