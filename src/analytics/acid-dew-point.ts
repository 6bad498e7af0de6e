// Sulfuric acid dew point at one location (DESIGN.md §4) and its margin against the
// coldest of the configured temperatures: acid condenses first on the coldest surface
// the gas touches. Unknown, with the reason, whenever an input cannot be trusted; the
// margin is unknown when any listed temperature is (that one might be the coldest).
import type { AcidDewPointConfig } from "../config/sections/acid-dew-point.js";
import { acidDewPointC, so3PpmFromSo2, type AcidDewPointMethod } from "../physics/acid.js";
import { absolutePressurePa } from "../physics/dewpoint.js";
import { so2PpmFromFuelSulfur } from "../physics/fuel-sulfur.js";
import { readInput, type MoistureSourceView, type TrustOf } from "./moisture-estimate.js";

export const ACID_METHOD_NAMES: Readonly<Record<AcidDewPointMethod, string>> = {
  "verhoff-banchero": "Verhoff & Banchero (1974)",
  okkes: "Okkes (1987)",
};

export interface AcidDewPointView {
  id: string;
  name: string;
  unitId: string;
  method: AcidDewPointMethod;
  /** The correlation in words, e.g. "Verhoff & Banchero (1974)". */
  methodName: string;
  moistureSourceId: string;
  h2oPctVol: number | null;
  /** How SO3 is obtained: measured, from measured SO2, or from the fuel's sulfur. */
  so3From: AcidDewPointConfig["so3"]["from"];
  so2Ppm: number | null;
  so3Ppm: number | null;
  absPressurePa: number | null;
  acidDewPointC: number | null;
  /** The coldest of the configured temperatures, and its signal. */
  coldestSignalId: string | null;
  coldestTempC: number | null;
  marginK: number | null;
  status: "ok" | "unknown";
  reason: string;
  /** Why the acid dew point itself is unknown (it may be known while the margin is not). */
  acidDewPointReason: string;
}

const fmt = (v: number, digits = 1) => v.toFixed(digits);

/**
 * The acid dew point and its margin. `describe` false leaves the reason of a known margin
 * empty (acidDewPointReason gives it); the reason of an unknown one is always given.
 */
export function evaluateAcidDewPoint(
  cfg: AcidDewPointConfig,
  sources: ReadonlyMap<string, MoistureSourceView>,
  trust: TrustOf,
  barometricPa: number,
  describe = true,
): AcidDewPointView {
  const view: AcidDewPointView = {
    id: cfg.id,
    name: cfg.name,
    unitId: cfg.unit,
    method: cfg.method,
    methodName: ACID_METHOD_NAMES[cfg.method],
    moistureSourceId: cfg.moisture,
    h2oPctVol: null,
    so3From: cfg.so3.from,
    so2Ppm: null,
    so3Ppm: null,
    absPressurePa: null,
    acidDewPointC: null,
    coldestSignalId: null,
    coldestTempC: null,
    marginK: null,
    status: "unknown",
    reason: "",
    acidDewPointReason: "",
  };
  const dewWhy: string[] = [];
  const moisture = sources.get(cfg.moisture);
  if (!moisture) dewWhy.push(`moisture source "${cfg.moisture}" is not configured`);
  else if (moisture.status !== "ok" || moisture.h2oPctVol === null) dewWhy.push(`moisture source ${moisture.id}: ${moisture.reason}`);
  else view.h2oPctVol = moisture.h2oPctVol;

  try {
    const s = cfg.so3;
    if (s.from === "measured") {
      view.so3Ppm = readInput({ signal: s.signal }, trust, dewWhy);
    } else if (s.from === "so2") {
      view.so2Ppm = readInput({ signal: s.signal }, trust, dewWhy);
      if (view.so2Ppm !== null) view.so3Ppm = so3PpmFromSo2(view.so2Ppm, s.conversionPct / 100);
    } else {
      const feed = readInput({ signal: s.fuelFeed }, trust, dewWhy);
      const flow = readInput(s.gasFlowNm3PerH, trust, dewWhy);
      if (feed !== null && flow !== null) {
        // A weigh feeder or flow meter at rest may read a little below zero: no fuel, no sulfur.
        view.so2Ppm = so2PpmFromFuelSulfur(Math.max(0, feed), s.sulfurPctMass, flow);
        view.so3Ppm = so3PpmFromSo2(view.so2Ppm, s.conversionPct / 100);
      }
    }
  } catch (e) {
    dewWhy.push((e as Error).message);
  }

  let gauge = 0;
  if (cfg.gaugePressure) {
    const g = readInput({ signal: cfg.gaugePressure }, trust, dewWhy);
    if (g !== null) gauge = g;
  }
  try {
    view.absPressurePa = absolutePressurePa(barometricPa, gauge);
  } catch (e) {
    dewWhy.push((e as Error).message);
  }

  if (!dewWhy.length) {
    if (view.so3Ppm === 0) dewWhy.push("no SO3 in the gas (0 ppm): no acid dew point");
    else {
      try {
        view.acidDewPointC = acidDewPointC(cfg.method, view.h2oPctVol!, view.so3Ppm!, view.absPressurePa!);
      } catch (e) {
        dewWhy.push((e as Error).message);
      }
    }
  }
  view.acidDewPointReason = dewWhy.join("; ");

  // The coldest temperature: only when every listed one is trusted.
  const tempWhy: string[] = [];
  let coldest: { id: string; c: number } | null = null;
  for (const sid of cfg.coldestTemperatures) {
    const c = readInput({ signal: sid }, trust, tempWhy);
    if (c !== null && (coldest === null || c < coldest.c)) coldest = { id: sid, c };
  }
  if (coldest && !tempWhy.length) {
    view.coldestSignalId = coldest.id;
    view.coldestTempC = coldest.c;
  }
  const why = [...dewWhy, ...tempWhy];
  if (why.length || view.acidDewPointC === null || view.coldestTempC === null) return { ...view, reason: why.join("; ") || "not computable" };
  const known: AcidDewPointView = { ...view, marginK: view.coldestTempC - view.acidDewPointC, status: "ok" };
  return describe ? { ...known, reason: acidDewPointReason(cfg, known, moisture!.name) } : known;
}

/** How a known acid dew point margin was obtained (evaluateAcidDewPoint's reason when known); `moistureName` names its moisture source. */
export function acidDewPointReason(cfg: AcidDewPointConfig, v: AcidDewPointView, moistureName: string): string {
  const s = cfg.so3;
  const so3How =
    s.from === "measured"
      ? `SO3 measured by ${s.signal}`
      : s.from === "so2"
        ? `SO3 = ${s.conversionPct} % of the SO2 measured by ${s.signal}`
        : `SO3 = ${s.conversionPct} % of the SO2 from ${s.sulfurPctMass} % sulfur in the fuel (${s.fuelFeed})`;
  return `${v.methodName}; ${so3How} (${fmt(v.so3Ppm!, 2)} ppm); H2O ${fmt(v.h2oPctVol!)} % from ${moistureName}; ` + `coldest ${v.coldestSignalId} at ${fmt(v.coldestTempC!)} °C`;
}
