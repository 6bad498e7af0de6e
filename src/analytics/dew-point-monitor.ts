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
import { acidDewPointReason, evaluateAcidDewPoint, type AcidDewPointView } from "./acid-dew-point.js";
import { dewPointReason, evaluateDewPoint, type DewPointComparisonView, type DewPointReading } from "./dew-point-margin.js";
import { MarginTrend } from "./dew-point-trend.js";
import { evaluateMoistureSource, moistureSourceReason, type MoistureSourceView } from "./moisture-estimate.js";
import type { Trust } from "./signal-state.js";

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

/** A location and what its last tick found (its view is built from it when asked). */
interface Location {
  cfg: DewPointFamilyConfig["dewPoints"][number];
  trend: MarginTrend;
  keys: { dewPointC: string; marginK: string; trend: string; ttc: string; h2oDisagreement: string; dewPointDisagreement: string };
  /** The reading without the reason of a known margin (dewPointReason gives it). */
  reading: DewPointReading | null;
}

type Baro = { pa: number; source: "measured" | "configured"; reason: string };

export class DewPointMonitor implements Monitor {
  private readonly locations: Location[];
  private readonly sourceKeys: string[];
  private readonly acidKeys: { so3Ppm: string; acidDewPointC: string; marginK: string }[];
  private readonly plantKeys = { marginK: `dewpoint.${PLANT_WIDE_DEW_POINT_ID}.marginK`, ttc: `dewpoint.${PLANT_WIDE_DEW_POINT_ID}.timeToCondensationS` };
  // The last tick, as computed: reasons of known values are left out until a view asks.
  private ticked = false;
  private sources: MoistureSourceView[] = [];
  private readonly sourceById = new Map<string, MoistureSourceView>();
  private acid: AcidDewPointView[] = [];
  private baroPa = 0;
  private baroTrust: Trust | null = null;
  private views: ReturnType<DewPointMonitor["view"]> | null = null;

  constructor(
    /** The family's part of the config: moisture sources, dew point locations, acid dew points. */
    private readonly cfg: DewPointFamilyConfig,
    /** Barometric pressure at the site, Pa: a measured signal while trusted, else the configured value. */
    private readonly barometric: BarometricConfig,
  ) {
    this.locations = cfg.dewPoints.map((d) => {
      const key = `dewpoint.${d.id}`;
      return {
        cfg: d,
        trend: new MarginTrend(d.trendWindowS, d.trendMinSpanS),
        keys: {
          dewPointC: `${key}.dewPointC`,
          marginK: `${key}.marginK`,
          trend: `${key}.marginTrendKPerMin`,
          ttc: `${key}.timeToCondensationS`,
          h2oDisagreement: `${key}.h2oDisagreementPctVol`,
          dewPointDisagreement: `${key}.dewPointDisagreementK`,
        },
        reading: null,
      };
    });
    this.sourceKeys = cfg.moistureSources.map((m) => `moisture.${m.id}.h2oPctVol`);
    this.acidKeys = cfg.acidDewPoints.map((a) => ({ so3Ppm: `aciddewpoint.${a.id}.so3Ppm`, acidDewPointC: `aciddewpoint.${a.id}.acidDewPointC`, marginK: `aciddewpoint.${a.id}.marginK` }));
  }

  // Reasons are passed for unknown values and for endless times (they say why); a known value's
  // reason is not recorded (see TickContext.emit), so it is built only when a view asks.
  tick(ctx: TickContext): void {
    const trust = (id: string) => ctx.trust(id);
    const baroPa = this.barometricAt(ctx);
    this.views = null;
    this.ticked = true;

    const ms = this.cfg.moistureSources;
    this.sources = [];
    for (let i = 0; i < ms.length; i++) {
      const v = evaluateMoistureSource(ms[i]!, trust, baroPa, false);
      ctx.emit(this.sourceKeys[i]!, v.h2oPctVol, v.reason);
      this.sources.push(v);
      this.sourceById.set(v.id, v);
    }
    const sources = this.sourceById;

    for (const loc of this.locations) {
      const d = loc.cfg;
      const r = evaluateDewPoint(d, ctx.trust(d.gasTemperature), sources, d.gaugePressure ? ctx.trust(d.gaugePressure) : null, baroPa, false);
      loc.reading = r;
      const trend = loc.trend;
      trend.step(ctx.nowMs, r.marginK, r.reason);
      const k = loc.keys;
      ctx.emit(k.dewPointC, r.dewPointC, r.dewPointReason);
      ctx.emit(k.marginK, r.marginK, r.reason);
      const trendKPerMin = trend.trendKPerMin;
      const why = trendKPerMin === null ? trend.trendReason : "";
      ctx.emit(k.trend, trendKPerMin, why);
      // Known trend, margin not shrinking: an endless time, so a rule on it clears (null would hold it).
      const ttcS = trend.timeToCondensationS ?? (trendKPerMin !== null ? Number.POSITIVE_INFINITY : null);
      ctx.emit(k.ttc, ttcS, ttcS === Number.POSITIVE_INFINITY ? trend.timeToCondensationReason : why);
      if (d.compareWith.length) {
        ctx.emit(k.h2oDisagreement, r.h2oDisagreementPctVol, r.disagreementReason);
        ctx.emit(k.dewPointDisagreement, r.dewPointDisagreementK, r.disagreementReason);
      }
    }

    const as = this.cfg.acidDewPoints;
    this.acid = [];
    for (let i = 0; i < as.length; i++) {
      const v = evaluateAcidDewPoint(as[i]!, sources, trust, baroPa, false);
      const k = this.acidKeys[i]!;
      ctx.emit(k.so3Ppm, v.so3Ppm, v.acidDewPointReason);
      ctx.emit(k.acidDewPointC, v.acidDewPointC, v.acidDewPointReason);
      ctx.emit(k.marginK, v.marginK, v.reason);
      this.acid.push(v);
    }

    if (this.locations.length) {
      const lowest = lowestMargin(this.locations);
      ctx.emit(this.plantKeys.marginK, lowest, lowest === null ? this.summaryOf(this.locations.map(lightView), []).reason : "");
      const ttc = plantTimeToCondensation(this.locations.map(lightView));
      ctx.emit(this.plantKeys.ttc, ttc.value, ttc.reason);
    }
  }

  /** The barometric pressure in use, Pa; the signal's trust is kept for the view. */
  private barometricAt(ctx: TickContext): number {
    if (!this.barometric.signal) {
      this.baroTrust = null;
      this.baroPa = this.barometric.fallbackPa;
    } else {
      const t = ctx.trust(this.barometric.signal);
      this.baroTrust = t;
      this.baroPa = t.ok && t.value !== null ? t.value : this.barometric.fallbackPa;
    }
    return this.baroPa;
  }

  private baro(): Baro {
    const configured = `configured ${(this.barometric.fallbackPa / 100).toFixed(1)} hPa`;
    const t = this.baroTrust;
    if (t === null) return { pa: this.baroPa, source: "configured", reason: configured };
    if (t.ok && t.value !== null) return { pa: this.baroPa, source: "measured", reason: `measured by ${this.barometric.signal}` };
    return { pa: this.baroPa, source: "configured", reason: `${configured} (${t.reason})` };
  }

  /** The summary at the tick, for its reason only (its barometric part is left unfilled). */
  private summaryOf(views: SummaryInput[], acid: AcidDewPointView[]): DewPointSummaryView {
    return summarize(views, acid, { pa: this.baroPa, source: "configured", reason: "" });
  }

  view(): {
    moistureSources: MoistureSourceView[];
    dewPoints: DewPointView[];
    dewPointSummary: DewPointSummaryView[];
    acidDewPoints: AcidDewPointView[];
  } {
    if (!this.ticked) return { moistureSources: [], dewPoints: [], dewPointSummary: [], acidDewPoints: [] };
    if (this.views === null) {
      const ms = this.cfg.moistureSources;
      const moistureSources = this.sources.map((v, i) => (v.status === "ok" ? { ...v, reason: moistureSourceReason(ms[i]!, v) } : v));
      const dewPoints = this.locations.map((loc): DewPointView => {
        const r = loc.reading!;
        const reading = r.status === "ok" ? { ...r, reason: dewPointReason(r) } : r;
        return { ...reading, ...loc.trend.result, trendWindowS: loc.cfg.trendWindowS };
      });
      const as = this.cfg.acidDewPoints;
      const acidDewPoints = this.acid.map((v, i) => (v.status === "ok" ? { ...v, reason: acidDewPointReason(as[i]!, v, this.sourceById.get(v.moistureSourceId)!.name) } : v));
      this.views = { moistureSources, dewPoints, dewPointSummary: [summarize(dewPoints, acidDewPoints, this.baro())], acidDewPoints };
    }
    return this.views;
  }
}

/** The fields of a location's view the summary and the plant-wide time read. */
type SummaryInput = Pick<DewPointView, "id" | "name" | "status" | "marginK" | "reason" | "marginTrendKPerMin" | "trendReason" | "timeToCondensationS">;

/**
 * A location's last tick as the summary reads it. Its reason is that of an unknown margin
 * only (a known one's is never read), and trendReason that of an unknown trend only.
 */
function lightView(loc: Location): SummaryInput {
  const r = loc.reading!;
  const trendKPerMin = loc.trend.trendKPerMin;
  return {
    id: r.id,
    name: r.name,
    status: r.status,
    marginK: r.marginK,
    reason: r.reason,
    marginTrendKPerMin: trendKPerMin,
    trendReason: trendKPerMin === null ? loc.trend.trendReason : "",
    timeToCondensationS: loc.trend.timeToCondensationS,
  };
}

/** The lowest margin when every location's is known (the summary's status ok), else null. */
function lowestMargin(locations: Location[]): number | null {
  let lowest: number | null = null;
  for (const loc of locations) {
    const r = loc.reading!;
    if (r.status !== "ok" || r.marginK === null) return null;
    if (lowest === null || r.marginK < lowest) lowest = r.marginK;
  }
  return lowest;
}

function summarize(views: SummaryInput[], acid: AcidDewPointView[], baro: Baro): DewPointSummaryView {
  const known = views.filter((v) => v.status === "ok" && v.marginK !== null);
  const unknownLocations = views.filter((v) => !known.includes(v)).map((v) => ({ id: v.id, reason: v.reason }));
  const lowest = known.reduce<SummaryInput | null>((a, v) => (a === null || v.marginK! < a.marginK! ? v : a), null);
  const shrinking = views.filter((v) => v.timeToCondensationS !== null);
  const soonest = shrinking.reduce<SummaryInput | null>((a, v) => (a === null || v.timeToCondensationS! < a.timeToCondensationS! ? v : a), null);
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
function plantTimeToCondensation(views: SummaryInput[]): { value: number | null; reason: string } {
  const noTrend = views.find((v) => v.marginTrendKPerMin === null);
  if (noTrend) return { value: null, reason: `${noTrend.id}: ${noTrend.trendReason}` };
  const shrinking = views.filter((v) => v.timeToCondensationS !== null);
  // Every trend known, none shrinking: an endless time (a rule on it clears).
  if (!shrinking.length) return { value: Number.POSITIVE_INFINITY, reason: "no margin is shrinking" };
  const soonest = shrinking.reduce((a, v) => (v.timeToCondensationS! < a.timeToCondensationS! ? v : a));
  return { value: soonest.timeToCondensationS, reason: "" };
}
