// Saturation line of water, IAPWS-IF97 Region 4:
// IAPWS R7-97(2012), eq. 30 (ps from T), eq. 31 (Ts from p), coefficients Table 34.
// Reference temperature T* = 1 K and pressure p* = 1 MPa; this module speaks Pa and K.

import { checkNumber } from "./validate.js";

/** Table 34, n1..n10 (index 0 unused so indices match the release). */
const N = [
  0, 0.11670521452767e4, -0.72421316703206e6, -0.17073846940092e2, 0.12020824702470e5,
  -0.32325550322333e7, 0.14915108613530e2, -0.48232657361591e4, 0.40511340542057e6,
  -0.23855557567849, 0.65017534844798e3,
] as const;
const [, n1, n2, n3, n4, n5, n6, n7, n8, n9, n10] = N;

const PA_PER_MPA = 1e6;

/** 0 °C in kelvin. */
export const ZERO_CELSIUS_K = 273.15;

/** Lower temperature limit of Region 4 (R7-97 eq. 30 range). */
export const SATURATION_MIN_TEMP_K = 273.15;
/** Upper temperature limit of Region 4: the critical temperature. */
export const SATURATION_MAX_TEMP_K = 647.096;
/** The same limits in °C. */
export const SATURATION_MIN_TEMP_C = 0;
export const SATURATION_MAX_TEMP_C = 373.946;

// eq. 30 without checks, so the pressure limits can be derived from it.
function ps(tempK: number): number {
  const theta = tempK + n9 / (tempK - n10);
  const a = theta * theta + n1 * theta + n2;
  const b = n3 * theta * theta + n4 * theta + n5;
  const c = n6 * theta * theta + n7 * theta + n8;
  const r = (2 * c) / (-b + Math.sqrt(b * b - 4 * a * c));
  return r * r * r * r * PA_PER_MPA;
}

/**
 * Lower pressure limit of Region 4: eq. 30 at 273.15 K, 611.2127 Pa (R7-97 quotes it
 * rounded, 611.213 Pa). Using the equation's own value keeps ps and Ts exact inverses
 * over the whole range, limits included.
 */
export const SATURATION_MIN_PRESSURE_PA = ps(SATURATION_MIN_TEMP_K);
/** Upper pressure limit: eq. 30 at 647.096 K, 22.064 MPa (the critical pressure) to 1e-11. */
export const SATURATION_MAX_PRESSURE_PA = ps(SATURATION_MAX_TEMP_K);

/** Saturation pressure in Pa at `tempK` (273.15..647.096 K), IAPWS-IF97 eq. 30. */
export function saturationPressurePa(tempK: number): number {
  checkNumber("saturationPressurePa", "tempK", tempK, {
    min: SATURATION_MIN_TEMP_K,
    max: SATURATION_MAX_TEMP_K,
    unit: "K",
  });
  return ps(tempK);
}

/** Saturation temperature in K at `pressurePa` (611.2127 Pa..22.064 MPa), IAPWS-IF97 eq. 31. */
export function saturationTemperatureK(pressurePa: number): number {
  checkNumber("saturationTemperatureK", "pressurePa", pressurePa, {
    min: SATURATION_MIN_PRESSURE_PA,
    max: SATURATION_MAX_PRESSURE_PA,
    unit: "Pa",
  });
  const beta = Math.sqrt(Math.sqrt(pressurePa / PA_PER_MPA));
  const e = beta * beta + n3 * beta + n6;
  const f = n1 * beta * beta + n4 * beta + n7;
  const g = n2 * beta * beta + n5 * beta + n8;
  const d = (2 * g) / (-f - Math.sqrt(f * f - 4 * e * g));
  const s = n10 + d;
  const tempK = (s - Math.sqrt(s * s - 4 * (n9 + n10 * d))) / 2;
  // Rounding may step a hair outside the limits at the ends of the range.
  return Math.min(SATURATION_MAX_TEMP_K, Math.max(SATURATION_MIN_TEMP_K, tempK));
}

/** Saturation pressure in Pa at `tempC` (0..373.946 °C). */
export function saturationPressureAtC(tempC: number): number {
  checkNumber("saturationPressureAtC", "tempC", tempC, {
    min: SATURATION_MIN_TEMP_C,
    max: SATURATION_MAX_TEMP_C,
    unit: "°C",
  });
  // Clamp: 373.946 + 273.15 may round just above 647.096 in binary floating point.
  const tempK = Math.min(SATURATION_MAX_TEMP_K, Math.max(SATURATION_MIN_TEMP_K, tempC + ZERO_CELSIUS_K));
  return ps(tempK);
}

/** Saturation temperature in °C at `pressurePa` (611.2127 Pa..22.064 MPa). */
export function saturationTemperatureC(pressurePa: number): number {
  checkNumber("saturationTemperatureC", "pressurePa", pressurePa, {
    min: SATURATION_MIN_PRESSURE_PA,
    max: SATURATION_MAX_PRESSURE_PA,
    unit: "Pa",
  });
  return saturationTemperatureK(pressurePa) - ZERO_CELSIUS_K;
}
