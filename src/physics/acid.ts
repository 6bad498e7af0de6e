// Sulfuric acid dew point of combustion gas (DESIGN.md §4). Relevant only where the
// drying gas comes from burning a sulfur-bearing fuel. Both are published empirical
// correlations; their results differ by a few kelvin, so the method is always shown.

import { checkChoice, checkNumber } from "./validate.js";
import { ZERO_CELSIUS_K } from "./water.js";

export type AcidDewPointMethod = "verhoff-banchero" | "okkes";
const METHODS: readonly AcidDewPointMethod[] = ["verhoff-banchero", "okkes"];

const PA_PER_ATM = 101325;
const MMHG_PER_ATM = 760;

/**
 * Verhoff & Banchero (1974), acid dew point in °C:
 * 1000/T = 2.276 − 0.02943 ln p_H2O − 0.0858 ln p_SO3 + 0.0062 ln p_H2O ln p_SO3,
 * T in K, partial pressures in mmHg (both > 0).
 */
export function acidDewPointVerhoffBanchero(pH2OmmHg: number, pSO3mmHg: number): number {
  const fn = "acidDewPointVerhoffBanchero";
  checkNumber(fn, "pH2OmmHg", pH2OmmHg, { min: 0, max: MMHG_PER_ATM * 10, minExclusive: true, unit: "mmHg" });
  checkNumber(fn, "pSO3mmHg", pSO3mmHg, { min: 0, max: MMHG_PER_ATM * 10, minExclusive: true, unit: "mmHg" });
  const lnW = Math.log(pH2OmmHg);
  const lnS = Math.log(pSO3mmHg);
  const inverseK = (2.276 - 0.02943 * lnW - 0.0858 * lnS + 0.0062 * lnW * lnS) / 1000;
  if (!(inverseK > 0)) {
    throw new RangeError(
      `${fn}: pH2OmmHg ${pH2OmmHg} and pSO3mmHg ${pSO3mmHg} lie outside the correlation (1/T = ${inverseK} 1/K)`,
    );
  }
  return 1 / inverseK - ZERO_CELSIUS_K;
}

/**
 * Okkes (1987), acid dew point in °C:
 * T = 203.25 + 27.6 log10 p_H2O + 10.83 log10 p_SO3 + 1.06 (log10 p_SO3 + 8)^2.19,
 * partial pressures in atm; p_SO3 must exceed 1e-8 atm (0.01 ppm at 1 atm) for the
 * power term to be defined.
 */
export function acidDewPointOkkes(pH2Oatm: number, pSO3atm: number): number {
  const fn = "acidDewPointOkkes";
  checkNumber(fn, "pH2Oatm", pH2Oatm, { min: 0, max: 10, minExclusive: true, unit: "atm" });
  checkNumber(fn, "pSO3atm", pSO3atm, { min: 1e-8, max: 10, minExclusive: true, unit: "atm" });
  const logS = Math.log10(pSO3atm);
  return 203.25 + 27.6 * Math.log10(pH2Oatm) + 10.83 * logS + 1.06 * Math.pow(logS + 8, 2.19);
}

/**
 * Acid dew point in °C by `method`, from water (vol %, wet, 0 < x <= 100) and SO3
 * (ppm by volume, > 0) at absolute pressure `absPressurePa`.
 */
export function acidDewPointC(
  method: AcidDewPointMethod,
  h2oPctVol: number,
  so3Ppm: number,
  absPressurePa: number,
): number {
  const fn = "acidDewPointC";
  checkChoice(fn, "method", method, METHODS);
  checkNumber(fn, "h2oPctVol", h2oPctVol, { min: 0, max: 100, minExclusive: true, unit: "vol %" });
  // Without SO3 there is no acid dew point; the correlations diverge at zero.
  checkNumber(fn, "so3Ppm", so3Ppm, { min: 0, max: 1e6, minExclusive: true, unit: "ppm" });
  checkNumber(fn, "absPressurePa", absPressurePa, { min: 0, minExclusive: true, unit: "Pa" });
  const pAtm = absPressurePa / PA_PER_ATM;
  const pH2Oatm = (h2oPctVol / 100) * pAtm;
  const pSO3atm = so3Ppm * 1e-6 * pAtm;
  return method === "okkes"
    ? acidDewPointOkkes(pH2Oatm, pSO3atm)
    : acidDewPointVerhoffBanchero(pH2Oatm * MMHG_PER_ATM, pSO3atm * MMHG_PER_ATM);
}

/**
 * SO3 in ppm formed from `so2Ppm` of SO2 with a configured conversion fraction
 * (0..1; 1-3 % is typical for combustion gas, per DESIGN.md).
 */
export function so3PpmFromSo2(so2Ppm: number, conversionFrac: number): number {
  const fn = "so3PpmFromSo2";
  checkNumber(fn, "so2Ppm", so2Ppm, { min: 0, max: 1e6, unit: "ppm" });
  checkNumber(fn, "conversionFrac", conversionFrac, { min: 0, max: 1 });
  return so2Ppm * conversionFrac;
}
