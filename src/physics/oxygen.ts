// Oxygen on wet and dry basis, and the oxygen limit for an inerted mill (DESIGN.md §4).
// An in-situ probe reads wet gas, an extractive analyser behind a cooler reads dry gas;
// a limit is compared on its own basis.

import { checkChoice, checkNumber } from "./validate.js";

export type O2Basis = "wet" | "dry";
export type O2Monitoring = "continuous" | "periodic";

const BASES: readonly O2Basis[] = ["wet", "dry"];
const MONITORING: readonly O2Monitoring[] = ["continuous", "periodic"];

/** Highest O2 content accepted for a limit or an LOC: that of air (20.95 vol %, rounded up). */
const AIR_O2_PCT_VOL = 21;

function checkH2o(fn: string, h2oPctVolWet: number): void {
  // 100 % water leaves no dry gas to refer to.
  checkNumber(fn, "h2oPctVolWet", h2oPctVolWet, { min: 0, max: 100, maxExclusive: true, unit: "vol %" });
}

/** O2 on dry basis from O2 on wet basis: O2_dry = O2_wet / (1 − x_H2O). */
export function o2DryFromWet(o2PctVolWet: number, h2oPctVolWet: number): number {
  const fn = "o2DryFromWet";
  checkNumber(fn, "o2PctVolWet", o2PctVolWet, { min: 0, max: 100, unit: "vol %" });
  checkH2o(fn, h2oPctVolWet);
  // A little slack for rounding in values derived by subtraction (e.g. 100 − H2O).
  if (o2PctVolWet + h2oPctVolWet > 100 + 1e-9) {
    throw new RangeError(
      `${fn}: o2PctVolWet (${o2PctVolWet}) + h2oPctVolWet (${h2oPctVolWet}) exceed 100 vol %; ` +
        `both must be fractions of the same wet gas`,
    );
  }
  // Mathematically <= 100 given the check above; clamp the last-digit rounding.
  return Math.min(100, o2PctVolWet / (1 - h2oPctVolWet / 100));
}

/** O2 on wet basis from O2 on dry basis: O2_wet = O2_dry · (1 − x_H2O). */
export function o2WetFromDry(o2PctVolDry: number, h2oPctVolWet: number): number {
  const fn = "o2WetFromDry";
  checkNumber(fn, "o2PctVolDry", o2PctVolDry, { min: 0, max: 100, unit: "vol %" });
  checkH2o(fn, h2oPctVolWet);
  return o2PctVolDry * (1 - h2oPctVolWet / 100);
}

/**
 * `value` (O2 vol % on basis `from`) expressed on basis `to`. Returns the value itself
 * when the bases match, and null when a conversion is needed but the water content is
 * unknown (null): the caller then treats the comparison as unknown, never as safe.
 */
export function o2OnBasis(value: number, from: O2Basis, to: O2Basis, h2oPctVolWet: number | null): number | null {
  const fn = "o2OnBasis";
  checkChoice(fn, "from", from, BASES);
  checkChoice(fn, "to", to, BASES);
  checkNumber(fn, "value", value, { min: 0, max: 100, unit: "vol %" });
  if (from === to) return value;
  if (h2oPctVolWet === null) return null;
  return from === "wet" ? o2DryFromWet(value, h2oPctVolWet) : o2WetFromDry(value, h2oPctVolWet);
}

/**
 * Highest allowed O2 in vol % for a limiting oxygen concentration `locPctVol`, with the
 * NFPA 69 safety margin (from memory: verify the clause against the edition in force):
 * - continuous monitoring: LOC − 2 percentage points when LOC >= 5 %, else 60 % of LOC;
 * - periodic (not continuous) monitoring: 60 % of LOC when LOC >= 5 %, else 40 % of LOC.
 * The result is on the LOC's basis (a laboratory LOC is a dry-gas value).
 */
export function nfpa69LimitPctVol(locPctVol: number, monitoring: O2Monitoring): number {
  const fn = "nfpa69LimitPctVol";
  checkNumber(fn, "locPctVol", locPctVol, { min: 0, max: AIR_O2_PCT_VOL, minExclusive: true, unit: "vol %" });
  checkChoice(fn, "monitoring", monitoring, MONITORING);
  if (monitoring === "continuous") return locPctVol >= 5 ? locPctVol - 2 : 0.6 * locPctVol;
  return locPctVol >= 5 ? 0.6 * locPctVol : 0.4 * locPctVol;
}

export interface OxygenLimitInput {
  /** The site's configured maximum O2, vol % (from the explosion-protection document). */
  siteMaxPctVol?: number;
  /** Limiting oxygen concentration of the coal, vol %, ideally tested at the maximum process temperature. */
  locPctVol?: number;
  monitoring: O2Monitoring;
  /**
   * Further percentage points taken off the LOC-based limit, e.g. because the LOC was
   * tested below the process temperature (LOC falls as temperature rises). Needs locPctVol.
   */
  extraMarginPctPt?: number;
}

export interface OxygenLimit {
  limitPctVol: number;
  source: "site-maximum" | "loc-nfpa69";
}

/**
 * The O2 limit that applies: the lowest of the site maximum and the LOC with the NFPA 69
 * margin (minus any extra margin). At least one of the two must be given.
 * Both values must be on the same basis (wet or dry): convert with o2OnBasis first.
 * On a tie the site maximum is named as the source.
 */
export function effectiveOxygenLimit(input: OxygenLimitInput): OxygenLimit {
  const fn = "effectiveOxygenLimit";
  if (typeof input !== "object" || input === null) {
    throw new RangeError(`${fn}: expected an object { siteMaxPctVol?, locPctVol?, monitoring, extraMarginPctPt? }`);
  }
  const { siteMaxPctVol, locPctVol, monitoring, extraMarginPctPt } = input;
  checkChoice(fn, "monitoring", monitoring, MONITORING);
  if (siteMaxPctVol === undefined && locPctVol === undefined) {
    throw new RangeError(`${fn}: give siteMaxPctVol or locPctVol (or both); neither was given`);
  }
  if (extraMarginPctPt !== undefined && locPctVol === undefined) {
    throw new RangeError(
      `${fn}: extraMarginPctPt (${extraMarginPctPt}) applies to the LOC-based limit, but locPctVol was not given`,
    );
  }
  const candidates: OxygenLimit[] = [];
  if (siteMaxPctVol !== undefined) {
    checkNumber(fn, "siteMaxPctVol", siteMaxPctVol, {
      min: 0,
      max: AIR_O2_PCT_VOL,
      minExclusive: true,
      unit: "vol %",
    });
    candidates.push({ limitPctVol: siteMaxPctVol, source: "site-maximum" });
  }
  if (locPctVol !== undefined) {
    checkNumber(fn, "locPctVol", locPctVol, { min: 0, max: AIR_O2_PCT_VOL, minExclusive: true, unit: "vol %" });
    const extra =
      extraMarginPctPt === undefined
        ? 0
        : checkNumber(fn, "extraMarginPctPt", extraMarginPctPt, { min: 0, unit: "percentage points" });
    const limitPctVol = nfpa69LimitPctVol(locPctVol, monitoring) - extra;
    if (!(limitPctVol > 0)) {
      throw new RangeError(
        `${fn}: extraMarginPctPt ${extra} leaves no positive limit for LOC ${locPctVol} vol % ` +
          `(${monitoring} monitoring); got ${limitPctVol} vol %`,
      );
    }
    candidates.push({ limitPctVol, source: "loc-nfpa69" });
  }
  let best = candidates[0] as OxygenLimit;
  for (const c of candidates) if (c.limitPctVol < best.limitPctVol) best = c;
  return best;
}
