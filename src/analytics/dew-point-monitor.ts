// Condensation monitor: the water content from each moisture source, the water dew
// point, its margin and trend at every location, a plant-wide summary (lowest margin
// leads), and the sulfuric acid dew points.
//
//   moisture sources ──▶ dew point locations (+ comparisons) ──▶ margin trend ──▶ summary
//                    └─▶ acid dew points (coldest temperature)
import {
  PLANT_WIDE_DEW_POINT_ID,
  type DewPointFamilyConfig,
} from "../config/sections/dew-point.js";
import type { Monitor, TickContext } from "../core/calculator.js";
import { evaluateAcidDewPoint, type AcidDewPointView } from "./acid-dew-point.js";
import { evaluateDewPoint, type DewPointComparisonView, type DewPointReading } from "./dew-point-margin.js";
import { MarginTrend } from "./dew-point-trend.js";
import { evaluateMoistureSource, type MoistureSourceView } from "./moisture-estimate.js";

export type { AcidDewPointView, DewPointComparisonView, MoistureSourceView };

export interface DewPointView extends DewPointReading {
  marginTrendKPerMin: number | null;
  trendWindowS: number;
  trendReason: string;
  timeToCondensationS: number | null;
  timeToCondensationReason: string;
}

export interface DewPointSummaryView {
  /** Always "plant": the summary is a one-entry list so that live deltas patch it. */
  id: "plant";
  /** ok: every location known; partial: some unknown (the lowest shown is of the known ones); unknown: none known. */
  status: "ok" | "partial" | "unknown";
  reason: string;
  lowestMarginK: number | null;
  locationId: string | null;
  locationName: string | null;
  lowestMarginTrendKPerMin: number | null;
  shortestTimeToCondensationS: number | null;
  shortestTimeLocationId: string | null;
  knownLocations: number;
  totalLocations: number;
  unknownLocations: { id: string; reason: string }[];
  /** The barometric pressure every absolute pressure is built on, and where it came from. */
  barometricPa: number;
  barometricSource: "measured" | "configured";
  barometricReason: string;
  lowestAcidMarginK: number | null;
  acidLocationId: string | null;
}

export interface BarometricConfig {
  signal?: string | undefined;
  fallbackPa: number;
}

export class DewPointMonitor implements Monitor {
  private readonly trends = new Map<string, MarginTrend>();
  private sourceViews: MoistureSourceView[] = [];
  private views: DewPointView[] = [];
  private acidViews: AcidDewPointView[] = [];
  private summary: DewPointSummaryView[] = [];

  constructor(
    /** The family's part of the config: moisture sources, dew point locations, acid dew points. */
    private readonly cfg: DewPointFamilyConfig,
    /** Barometric pressure at the site, Pa: a measured signal while trusted, else the configured value. */
    private readonly barometric: BarometricConfig,
  ) {
    for (const d of this.cfg.dewPoints) this.trends.set(d.id, new MarginTrend(d.trendWindowS, d.trendMinSpanS));
  }

  tick(ctx: TickContext): void {
    const trust = (id: string) => ctx.trust(id);
    const baro = this.barometricAt(ctx);

    this.sourceViews = this.cfg.moistureSources.map((m) => {
      const v = evaluateMoistureSource(m, trust, baro.pa);
      ctx.emit(`moisture.${m.id}.h2oPctVol`, v.h2oPctVol, v.reason);
      return v;
    });
    const sources = new Map(this.sourceViews.map((v) => [v.id, v]));

    this.views = this.cfg.dewPoints.map((d) => {
      const r = evaluateDewPoint(d, ctx.trust(d.gasTemperature), sources, d.gaugePressure ? ctx.trust(d.gaugePressure) : null, baro.pa);
      const trend = this.trends.get(d.id)!.update(ctx.nowMs, r.marginK, r.reason);
      const key = `dewpoint.${d.id}`;
      ctx.emit(`${key}.dewPointC`, r.dewPointC, r.dewPointReason);
      ctx.emit(`${key}.marginK`, r.marginK, r.reason);
      ctx.emit(`${key}.marginTrendKPerMin`, trend.marginTrendKPerMin, trend.trendReason);
      // Known trend, margin not shrinking: an endless time, so a rule on it clears (null would hold it).
      const ttcS = trend.timeToCondensationS ?? (trend.marginTrendKPerMin !== null ? Number.POSITIVE_INFINITY : null);
      ctx.emit(`${key}.timeToCondensationS`, ttcS, trend.timeToCondensationReason);
      if (d.compareWith.length) {
        ctx.emit(`${key}.h2oDisagreementPctVol`, r.h2oDisagreementPctVol, r.disagreementReason);
        ctx.emit(`${key}.dewPointDisagreementK`, r.dewPointDisagreementK, r.disagreementReason);
      }
      return { ...r, ...trend, trendWindowS: d.trendWindowS };
    });

    this.acidViews = this.cfg.acidDewPoints.map((a) => {
      const v = evaluateAcidDewPoint(a, sources, trust, baro.pa);
      const key = `aciddewpoint.${a.id}`;
      ctx.emit(`${key}.so3Ppm`, v.so3Ppm, v.acidDewPointReason);
      ctx.emit(`${key}.acidDewPointC`, v.acidDewPointC, v.acidDewPointReason);
      ctx.emit(`${key}.marginK`, v.marginK, v.reason);
      return v;
    });

    const s = summarize(this.views, this.acidViews, baro);
    if (this.cfg.dewPoints.length) {
      const key = `dewpoint.${PLANT_WIDE_DEW_POINT_ID}`;
      ctx.emit(`${key}.marginK`, s.status === "ok" ? s.lowestMarginK : null, s.reason);
      const ttc = plantTimeToCondensation(this.views);
      ctx.emit(`${key}.timeToCondensationS`, ttc.value, ttc.reason);
    }
    this.summary = [s];
  }

  private barometricAt(ctx: TickContext): { pa: number; source: "measured" | "configured"; reason: string } {
    const configured = `configured ${(this.barometric.fallbackPa / 100).toFixed(1)} hPa`;
    if (!this.barometric.signal) return { pa: this.barometric.fallbackPa, source: "configured", reason: configured };
    const t = ctx.trust(this.barometric.signal);
    if (t.ok && t.value !== null) return { pa: t.value, source: "measured", reason: `measured by ${this.barometric.signal}` };
    return { pa: this.barometric.fallbackPa, source: "configured", reason: `${configured} (${t.reason})` };
  }

  view(): {
    moistureSources: MoistureSourceView[];
    dewPoints: DewPointView[];
    dewPointSummary: DewPointSummaryView[];
    acidDewPoints: AcidDewPointView[];
  } {
    return { moistureSources: this.sourceViews, dewPoints: this.views, dewPointSummary: this.summary, acidDewPoints: this.acidViews };
  }
}

function summarize(views: DewPointView[], acid: AcidDewPointView[], baro: { pa: number; source: "measured" | "configured"; reason: string }): DewPointSummaryView {
  const known = views.filter((v) => v.status === "ok" && v.marginK !== null);
  const unknownLocations = views.filter((v) => !known.includes(v)).map((v) => ({ id: v.id, reason: v.reason }));
  const lowest = known.reduce<DewPointView | null>((a, v) => (a === null || v.marginK! < a.marginK! ? v : a), null);
  const shrinking = views.filter((v) => v.timeToCondensationS !== null);
  const soonest = shrinking.reduce<DewPointView | null>((a, v) => (a === null || v.timeToCondensationS! < a.timeToCondensationS! ? v : a), null);
  const acidKnown = acid.filter((a) => a.marginK !== null);
  const acidLowest = acidKnown.reduce<AcidDewPointView | null>((a, v) => (a === null || v.marginK! < a.marginK! ? v : a), null);
  const status = views.length === 0 || known.length === 0 ? "unknown" : known.length === views.length ? "ok" : "partial";
  const unknownText = unknownLocations.map((u) => `${u.id}: ${u.reason}`).join("; ");
  const reason =
    views.length === 0
      ? "no dew point locations configured"
      : status === "ok"
        ? `lowest of ${views.length} locations`
        : status === "partial"
          ? `unknown at ${unknownText}; the lowest known is ${lowest!.marginK!.toFixed(1)} K at ${lowest!.id}`
          : `unknown at every location: ${unknownText}`;
  return {
    id: "plant",
    status,
    reason,
    lowestMarginK: lowest?.marginK ?? null,
    locationId: lowest?.id ?? null,
    locationName: lowest?.name ?? null,
    lowestMarginTrendKPerMin: lowest?.marginTrendKPerMin ?? null,
    shortestTimeToCondensationS: soonest?.timeToCondensationS ?? null,
    shortestTimeLocationId: soonest?.id ?? null,
    knownLocations: known.length,
    totalLocations: views.length,
    unknownLocations,
    barometricPa: baro.pa,
    barometricSource: baro.source,
    barometricReason: baro.reason,
    lowestAcidMarginK: acidLowest?.marginK ?? null,
    acidLocationId: acidLowest?.id ?? null,
  };
}

/** The shortest predicted time to condensation, known only when every location's trend is known. */
function plantTimeToCondensation(views: DewPointView[]): { value: number | null; reason: string } {
  const noTrend = views.find((v) => v.marginTrendKPerMin === null);
  if (noTrend) return { value: null, reason: `${noTrend.id}: ${noTrend.trendReason}` };
  const shrinking = views.filter((v) => v.timeToCondensationS !== null);
  // Every trend known, none shrinking: an endless time (a rule on it clears).
  if (!shrinking.length) return { value: Number.POSITIVE_INFINITY, reason: "no margin is shrinking" };
  const soonest = shrinking.reduce((a, v) => (v.timeToCondensationS! < a.timeToCondensationS! ? v : a));
  return { value: soonest.timeToCondensationS, reason: "" };
}
