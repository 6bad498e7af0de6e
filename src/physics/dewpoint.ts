// Water dew point of mill gas, and the moisture sources behind it (DESIGN.md §4).
// Ideal-gas mixture: the water partial pressure is the mole (= volume) fraction times
// the absolute pressure. The enhancement factor of moist gas (~1.004 near ambient
// pressure, from memory) is neglected: it would raise the dew point by roughly 0.05-0.1 K.

import { checkNumber } from "./validate.js";
import {
  SATURATION_MAX_PRESSURE_PA,
  SATURATION_MAX_TEMP_C,
  SATURATION_MIN_PRESSURE_PA,
  saturationPressureAtC,
  saturationTemperatureC,
} from "./water.js";

/** Molar volume of an ideal gas at 0 °C and 101.325 kPa, Nm³/kmol. */
export const MOLAR_VOLUME_NM3_PER_KMOL = 22.414;
/** Molar mass of water, kg/kmol. */
export const WATER_MOLAR_MASS_KG_PER_KMOL = 18.015;

/**
 * Water dew point in °C of a gas holding `h2oPctVolWet` vol % water (wet basis,
 * 0 < x <= 100) at absolute pressure `absPressurePa`.
 * Throws a RangeError when the water partial pressure lies outside IAPWS-IF97 Region 4:
 * below 611.2127 Pa the gas is so dry that it would frost below 0 °C, which this
 * function does not cover.
 */
export function waterDewPointC(h2oPctVolWet: number, absPressurePa: number): number {
  const fn = "waterDewPointC";
  checkNumber(fn, "h2oPctVolWet", h2oPctVolWet, { min: 0, max: 100, minExclusive: true, unit: "vol %" });
  checkNumber(fn, "absPressurePa", absPressurePa, { min: 0, minExclusive: true, unit: "Pa" });
  const waterPartialPa = (h2oPctVolWet / 100) * absPressurePa;
  if (waterPartialPa < SATURATION_MIN_PRESSURE_PA) {
    throw new RangeError(
      `${fn}: water partial pressure ${waterPartialPa} Pa (${h2oPctVolWet} vol % at ${absPressurePa} Pa) ` +
        `is below ${SATURATION_MIN_PRESSURE_PA} Pa, the IAPWS-IF97 Region 4 lower bound: ` +
        `the gas is very dry and its dew point lies below 0 °C, where a frost point would apply (not covered)`,
    );
  }
  if (waterPartialPa > SATURATION_MAX_PRESSURE_PA) {
    throw new RangeError(
      `${fn}: water partial pressure ${waterPartialPa} Pa (${h2oPctVolWet} vol % at ${absPressurePa} Pa) ` +
        `is above the critical pressure ${SATURATION_MAX_PRESSURE_PA} Pa: no dew point exists`,
    );
  }
  return saturationTemperatureC(waterPartialPa);
}

/**
 * Water content in vol % (wet basis) from a relative humidity `rhPct` (0..100 %, over
 * liquid water) measured at `tempC` (0..373.946 °C) and absolute pressure `absPressurePa`.
 */
export function h2oPctVolFromRelativeHumidity(rhPct: number, tempC: number, absPressurePa: number): number {
  const fn = "h2oPctVolFromRelativeHumidity";
  checkNumber(fn, "rhPct", rhPct, { min: 0, max: 100, unit: "%" });
  checkNumber(fn, "tempC", tempC, { min: 0, max: SATURATION_MAX_TEMP_C, unit: "°C" });
  checkNumber(fn, "absPressurePa", absPressurePa, { min: 0, minExclusive: true, unit: "Pa" });
  const waterPartialPa = (rhPct / 100) * saturationPressureAtC(tempC);
  if (waterPartialPa > absPressurePa) {
    throw new RangeError(
      `${fn}: ${rhPct} % RH at ${tempC} °C means ${waterPartialPa} Pa of water vapour, ` +
        `more than the absolute pressure ${absPressurePa} Pa; check the sensor's temperature and pressure`,
    );
  }
  return (waterPartialPa / absPressurePa) * 100;
}

/** Absolute pressure in Pa from barometric pressure (> 0 Pa) and gauge pressure (negative below atmosphere). */
export function absolutePressurePa(barometricPa: number, gaugePa: number): number {
  const fn = "absolutePressurePa";
  checkNumber(fn, "barometricPa", barometricPa, { min: 0, minExclusive: true, unit: "Pa" });
  checkNumber(fn, "gaugePa", gaugePa, { unit: "Pa" });
  const absPa = barometricPa + gaugePa;
  if (!(absPa > 0)) {
    throw new RangeError(
      `${fn}: barometricPa ${barometricPa} + gaugePa ${gaugePa} gives ${absPa} Pa; an absolute pressure must be > 0 Pa`,
    );
  }
  return absPa;
}

/** Margin in K of the gas temperature above its dew point; negative means condensing. */
export function dewPointMarginK(gasTempC: number, dewPointC: number): number {
  const fn = "dewPointMarginK";
  checkNumber(fn, "gasTempC", gasTempC, { min: -273.15, unit: "°C" });
  checkNumber(fn, "dewPointC", dewPointC, { min: -273.15, unit: "°C" });
  return gasTempC - dewPointC;
}

/**
 * Water evaporated from the coal in kg/h: feed · 1000 · (w_raw − w_prod) / (1 − w_prod),
 * with moistures as mass fractions of the wet coal (DESIGN.md §4). The product
 * moisture may not exceed the raw moisture: a mill dries, it does not wet.
 */
export function evaporatedWaterKgPerH(
  coalFeedTPerH: number,
  rawMoistureFrac: number,
  productMoistureFrac: number,
): number {
  const fn = "evaporatedWaterKgPerH";
  checkNumber(fn, "coalFeedTPerH", coalFeedTPerH, { min: 0, unit: "t/h" });
  checkNumber(fn, "rawMoistureFrac", rawMoistureFrac, { min: 0, max: 1, maxExclusive: true });
  checkNumber(fn, "productMoistureFrac", productMoistureFrac, { min: 0, max: 1, maxExclusive: true });
  if (productMoistureFrac > rawMoistureFrac) {
    throw new RangeError(
      `${fn}: productMoistureFrac (${productMoistureFrac}) must be <= rawMoistureFrac (${rawMoistureFrac})`,
    );
  }
  return (coalFeedTPerH * 1000 * (rawMoistureFrac - productMoistureFrac)) / (1 - productMoistureFrac);
}

export interface MassBalanceInput {
  /** Gas flow before the coal's water is added, Nm³/h, wet basis (> 0). */
  gasFlowNm3PerHWet: number;
  /** Water already in that gas, vol % wet basis (0..100). */
  gasH2oPctVol: number;
  /** Water evaporated from the coal into the gas, kg/h (>= 0). */
  evaporatedWaterKgPerH: number;
}

/**
 * Water content in vol % (wet basis) after the evaporated water joins the gas:
 * x = (n_gas·x_gas + m_evap/18.015) / (n_gas + m_evap/18.015), n_gas = flow / 22.414 (kmol/h).
 */
export function h2oPctVolFromMassBalance(input: MassBalanceInput): number {
  const fn = "h2oPctVolFromMassBalance";
  if (typeof input !== "object" || input === null) {
    throw new RangeError(`${fn}: expected an object { gasFlowNm3PerHWet, gasH2oPctVol, evaporatedWaterKgPerH }`);
  }
  checkNumber(fn, "gasFlowNm3PerHWet", input.gasFlowNm3PerHWet, { min: 0, minExclusive: true, unit: "Nm³/h" });
  checkNumber(fn, "gasH2oPctVol", input.gasH2oPctVol, { min: 0, max: 100, unit: "vol %" });
  checkNumber(fn, "evaporatedWaterKgPerH", input.evaporatedWaterKgPerH, { min: 0, unit: "kg/h" });
  const gasKmolPerH = input.gasFlowNm3PerHWet / MOLAR_VOLUME_NM3_PER_KMOL;
  const waterKmolPerH = input.evaporatedWaterKgPerH / WATER_MOLAR_MASS_KG_PER_KMOL;
  return ((gasKmolPerH * (input.gasH2oPctVol / 100) + waterKmolPerH) / (gasKmolPerH + waterKmolPerH)) * 100;
}
