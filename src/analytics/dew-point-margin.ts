// Water dew point and its margin at one location: gas temperature minus the dew
// point of the gas at its absolute pressure (barometric plus the local gauge pressure),
// with the water content from the location's moisture source. Other sources named in
// compareWith are evaluated at the same pressure and shown with their disagreement.
import type { DewPointConfig } from "../config/sections/dew-point.js";
import { absolutePressurePa, dewPointMarginK, waterDewPointC } from "../physics/dewpoint.js";
import type { MoistureSourceKind, MoistureSourceView } from "./moisture-estimate.js";
import type { Trust } from "./signal-state.js";

export interface DewPointComparisonView {
  /** The compared moisture source's id. */
  id: string;
  name: string;
  kind: MoistureSourceKind | null;
  h2oPctVol: number | null;
  /** Its dew point at this location's absolute pressure. */
  dewPointC: number | null;
  /** This source minus the one used, vol % (percentage points). */
  h2oDifferencePctVol: number | null;
  /** This source's dew point minus the one used, K. */
  dewPointDifferenceK: number | null;
  status: "ok" | "unknown";
  reason: string;
}

/** The location's values before the trend is added (see DewPointView). */
export interface DewPointReading {
  id: string;
  name: string;
  unitId: string;
  gasTempC: number | null;
  /** Water content used, vol % wet, and where it came from. */
  h2oPctVol: number | null;
  moistureSourceId: string;
  moistureSourceName: string | null;
  moistureSourceKind: MoistureSourceKind | null;
  gaugePressurePa: number | null;
  absPressurePa: number | null;
  dewPointC: number | null;
  marginK: number | null;
  /** "unknown" whenever the margin cannot be computed. */
  status: "ok" | "unknown";
  reason: string;
  /** Why the dew point itself is unknown (it may be known while the margin is not). */
  dewPointReason: string;
  comparisons: DewPointComparisonView[];
  /** Largest |difference| among the comparisons; null without comparisons or when one is unknown. */
  h2oDisagreementPctVol: number | null;
  dewPointDisagreementK: number | null;
  disagreementReason: string;
}

/** Dew point of `source` at `absPa`, or the reason it is unknown. */
function dewPointOf(source: MoistureSourceView | undefined, sourceId: string, absPa: number | null, pressureWhy: string): { c: number | null; why: string } {
  if (!source) return { c: null, why: `moisture source "${sourceId}" is not configured` };
  if (source.status !== "ok" || source.h2oPctVol === null) return { c: null, why: `moisture source ${source.id}: ${source.reason}` };
  if (absPa === null) return { c: null, why: pressureWhy };
  try {
    return { c: waterDewPointC(source.h2oPctVol, absPa), why: "" };
  } catch (e) {
    return { c: null, why: `moisture source ${source.id}: ${(e as Error).message}` };
  }
}

/**
 * The location's dew point and margin. `describe` false leaves the reason of a known margin
 * empty (dewPointReason gives it from the reading); the reason of an unknown one is always given.
 */
export function evaluateDewPoint(
  cfg: DewPointConfig,
  gasTemp: Trust,
  sources: ReadonlyMap<string, MoistureSourceView>,
  gaugePa: Trust | null,
  barometricPa: number,
  describe = true,
): DewPointReading {
  const used = sources.get(cfg.moisture);
  let absPa: number | null = null;
  let pressureWhy = "";
  if (gaugePa && (!gaugePa.ok || gaugePa.value === null)) pressureWhy = gaugePa.reason;
  else {
    try {
      absPa = absolutePressurePa(barometricPa, gaugePa?.value ?? 0);
    } catch (e) {
      pressureWhy = (e as Error).message;
    }
  }
  const dew = dewPointOf(used, cfg.moisture, absPa, pressureWhy);
  const gasTempC = gasTemp.ok ? gasTemp.value : null;
  const usedH2o = used?.status === "ok" ? used.h2oPctVol : null;

  const comparisons = cfg.compareWith.map((cid): DewPointComparisonView => {
    const s = sources.get(cid);
    const d = dewPointOf(s, cid, absPa, pressureWhy);
    const h2o = s?.status === "ok" ? s.h2oPctVol : null;
    const ok = d.c !== null && dew.c !== null && h2o !== null && usedH2o !== null;
    return {
      id: cid,
      name: s?.name ?? cid,
      kind: s?.kind ?? null,
      h2oPctVol: h2o,
      dewPointC: d.c,
      h2oDifferencePctVol: h2o !== null && usedH2o !== null ? h2o - usedH2o : null,
      dewPointDifferenceK: ok ? d.c! - dew.c! : null,
      status: ok ? "ok" : "unknown",
      reason: ok ? "" : d.why || dew.why,
    };
  });
  let h2oDisagreementPctVol: number | null = null;
  let dewPointDisagreementK: number | null = null;
  let disagreementReason = "";
  if (comparisons.length === 0) disagreementReason = "no other moisture source to compare with";
  else {
    const unknown = comparisons.find((c) => c.status !== "ok");
    if (unknown) disagreementReason = `comparison with ${unknown.id} unknown: ${unknown.reason}`;
    else {
      h2oDisagreementPctVol = Math.max(...comparisons.map((c) => Math.abs(c.h2oDifferencePctVol!)));
      dewPointDisagreementK = Math.max(...comparisons.map((c) => Math.abs(c.dewPointDifferenceK!)));
    }
  }

  const base: DewPointReading = {
    id: cfg.id,
    name: cfg.name,
    unitId: cfg.unit,
    gasTempC,
    h2oPctVol: usedH2o,
    moistureSourceId: cfg.moisture,
    moistureSourceName: used?.name ?? null,
    moistureSourceKind: used?.kind ?? null,
    gaugePressurePa: gaugePa ? (gaugePa.ok ? gaugePa.value : null) : 0,
    absPressurePa: absPa,
    dewPointC: dew.c,
    marginK: null,
    status: "unknown",
    reason: "",
    dewPointReason: dew.why,
    comparisons,
    h2oDisagreementPctVol,
    dewPointDisagreementK,
    disagreementReason,
  };
  const gasWhy = gasTemp.ok ? "" : gasTemp.reason;
  if (gasWhy || pressureWhy || dew.why || gasTempC === null || dew.c === null) {
    const why = [...new Set([gasWhy, pressureWhy, dew.why])].filter(Boolean);
    return { ...base, reason: why.join("; ") || "not computable" };
  }
  try {
    const known: DewPointReading = { ...base, marginK: dewPointMarginK(gasTempC, dew.c), status: "ok" };
    return describe ? { ...known, reason: dewPointReason(known) } : known;
  } catch (e) {
    return { ...base, reason: (e as Error).message };
  }
}

/** How a known margin was obtained, from its reading (evaluateDewPoint's reason when known). */
export function dewPointReason(r: DewPointReading): string {
  return `H2O from ${r.moistureSourceName} (${r.moistureSourceKind}); IAPWS-IF97 saturation line at ${(r.absPressurePa! / 100).toFixed(1)} hPa absolute`;
}
