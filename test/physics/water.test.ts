import { describe, expect, it } from "vitest";
import fc from "fast-check";
import psychrolib from "psychrolib";
import {
  SATURATION_MAX_PRESSURE_PA,
  SATURATION_MAX_TEMP_C,
  SATURATION_MAX_TEMP_K,
  SATURATION_MIN_PRESSURE_PA,
  SATURATION_MIN_TEMP_C,
  SATURATION_MIN_TEMP_K,
  saturationPressureAtC,
  saturationPressurePa,
  saturationTemperatureC,
  saturationTemperatureK,
} from "../../src/physics/index.js";

const relErr = (actual: number, expected: number): number => Math.abs(actual / expected - 1);

describe("IAPWS-IF97 Region 4 against the release's own verification tables", () => {
  // IAPWS R7-97(2012), Table 35: ps from eq. 30, 9 significant digits (MPa).
  it.each([
    [300, 0.353658941e-2],
    [500, 0.263889776e1],
    [600, 0.123443146e2],
  ])("ps(%d K) = %f MPa (IAPWS R7-97 Table 35)", (tempK, psMPa) => {
    expect(relErr(saturationPressurePa(tempK), psMPa * 1e6)).toBeLessThan(1e-8);
  });

  // IAPWS R7-97(2012), Table 36: Ts from eq. 31, 9 significant digits (K).
  it.each([
    [0.1, 0.372755919e3],
    [1, 0.453035632e3],
    [10, 0.584149488e3],
  ])("Ts(%f MPa) = %f K (IAPWS R7-97 Table 36)", (pMPa, tsK) => {
    expect(relErr(saturationTemperatureK(pMPa * 1e6), tsK)).toBeLessThan(1e-8);
  });

  it("°C helpers agree with the kelvin functions at the Table 35/36 points", () => {
    // IAPWS R7-97 Table 35 (300 K) and Table 36 (0.1 MPa), shifted by 273.15 K.
    expect(relErr(saturationPressureAtC(300 - 273.15), 0.353658941e-2 * 1e6)).toBeLessThan(1e-8);
    expect(Math.abs(saturationTemperatureC(0.1e6) - (372.755919 - 273.15))).toBeLessThan(1e-6);
  });

  it("range limits match IAPWS R7-97: 273.15..647.096 K, 611.213 Pa..22.064 MPa", () => {
    // IAPWS R7-97(2012), range of eq. 30/31: 273.15 K <= T <= 647.096 K, 611.213 Pa <= p <= 22.064 MPa.
    expect(SATURATION_MIN_TEMP_K).toBe(273.15);
    expect(SATURATION_MAX_TEMP_K).toBe(647.096);
    expect(SATURATION_MIN_TEMP_C).toBe(0);
    expect(SATURATION_MAX_TEMP_C).toBeCloseTo(647.096 - 273.15, 9);
    // The release rounds the lower limit to 611.213 Pa; the equation's value is 611.2127 Pa.
    expect(Math.abs(SATURATION_MIN_PRESSURE_PA - 611.213)).toBeLessThan(0.0005);
    expect(relErr(SATURATION_MAX_PRESSURE_PA, 22.064e6)).toBeLessThan(1e-9);
    // The whole published pressure range is accepted.
    expect(() => saturationTemperatureK(611.213)).not.toThrow();
    expect(() => saturationTemperatureK(22.064e6)).not.toThrow();
    // Critical point: IAPWS R7-97, Tc = 647.096 K, pc = 22.064 MPa.
    expect(Math.abs(saturationTemperatureK(22.064e6) - 647.096)).toBeLessThan(1e-6);
  });
});

describe("against psychrolib (ASHRAE Handbook Fundamentals 2017, Hyland-Wexler form)", () => {
  const p = psychrolib;
  p.SetUnitSystem(p.SI);

  it("saturation pressure 0.01..150 °C in 1 K steps agrees within 0.025 %", () => {
    // Oracle: npm psychrolib 1.1.1 GetSatVapPres (Pa), a different formulation from IF97.
    // Measured maximum deviation over this grid: 0.0203 % at 150 °C; tolerance set just above it.
    let maxRel = 0;
    for (let i = 0; i <= 150; i++) {
      const tempC = i === 0 ? 0.01 : i;
      maxRel = Math.max(maxRel, relErr(saturationPressureAtC(tempC), p.GetSatVapPres(tempC) as number));
    }
    expect(maxRel).toBeLessThan(2.5e-4);
    // The formulations are not identical, so the deviation is not zero either.
    expect(maxRel).toBeGreaterThan(1e-6);
  });

  it("dew point from vapour pressure 700 Pa..475 kPa agrees within 0.01 K", () => {
    // Oracle: psychrolib GetTDewPointFromVapPres (Newton iteration to 0.001 K; dry bulb 200 °C
    // so its min(T_dew, T_dry) never clips). Measured maximum deviation 0.0074 K near 150 °C;
    // below 1 atm it is under 0.003 K. Tolerance set just above the maximum.
    let maxDiffK = 0;
    for (let pw = 700; pw <= 475_000; pw *= 1.05) {
      const oracle = p.GetTDewPointFromVapPres(200, pw) as number;
      maxDiffK = Math.max(maxDiffK, Math.abs(saturationTemperatureC(pw) - oracle));
    }
    expect(maxDiffK).toBeLessThan(0.01);
  });
});

describe("properties", () => {
  it("ps and Ts are inverses over the whole range (T -> p -> T within 1e-9 relative)", () => {
    // IAPWS R7-97: eq. 31 is the exact algebraic inverse of eq. 30 (both solve eq. 29).
    fc.assert(
      fc.property(fc.double({ min: SATURATION_MIN_TEMP_K, max: SATURATION_MAX_TEMP_K, noNaN: true }), (tempK) => {
        const back = saturationTemperatureK(saturationPressurePa(tempK));
        return relErr(back, tempK) < 1e-9;
      }),
      { numRuns: 2000 },
    );
  });

  it("ps and Ts are inverses over the whole range (p -> T -> p within 1e-9 relative)", () => {
    // IAPWS R7-97: eq. 30 is the exact algebraic inverse of eq. 31.
    const lnMin = Math.log(SATURATION_MIN_PRESSURE_PA);
    const lnMax = Math.log(SATURATION_MAX_PRESSURE_PA);
    fc.assert(
      fc.property(fc.double({ min: 0, max: 1, noNaN: true }), (u) => {
        const pPa = Math.min(SATURATION_MAX_PRESSURE_PA, Math.exp(lnMin + u * (lnMax - lnMin)));
        const back = saturationPressurePa(saturationTemperatureK(pPa));
        return relErr(back, pPa) < 1e-9;
      }),
      { numRuns: 2000 },
    );
  });

  it("ps rises strictly with temperature", () => {
    // Clausius-Clapeyron: dp/dT > 0 along the whole saturation line.
    fc.assert(
      fc.property(
        fc.double({ min: SATURATION_MIN_TEMP_K, max: SATURATION_MAX_TEMP_K - 1e-3, noNaN: true }),
        fc.double({ min: 1e-6, max: 1, noNaN: true }),
        (tempK, stepK) => {
          const hi = Math.min(SATURATION_MAX_TEMP_K, tempK + stepK);
          return saturationPressurePa(hi) > saturationPressurePa(tempK);
        },
      ),
    );
  });

  it("out-of-range and non-finite inputs throw RangeError", () => {
    // Range of IAPWS R7-97 eq. 30/31; anything outside, and NaN/Infinity, must be refused.
    const badTempK = fc.oneof(
      fc.double({ max: SATURATION_MIN_TEMP_K, maxExcluded: true }),
      fc.double({ min: SATURATION_MAX_TEMP_K, minExcluded: true }),
      fc.constantFrom(Number.NaN, Infinity, -Infinity),
    );
    const badPressurePa = fc.oneof(
      fc.double({ max: SATURATION_MIN_PRESSURE_PA, maxExcluded: true }),
      fc.double({ min: SATURATION_MAX_PRESSURE_PA, minExcluded: true }),
      fc.constantFrom(Number.NaN, Infinity, -Infinity),
    );
    // -0 °C is 0 °C (valid), so the generator excludes it explicitly.
    const badTempC = fc.oneof(
      fc.double({ max: SATURATION_MIN_TEMP_C, maxExcluded: true }).filter((t) => t < 0),
      fc.double({ min: SATURATION_MAX_TEMP_C, minExcluded: true }),
      fc.constantFrom(Number.NaN, Infinity, -Infinity),
    );
    fc.assert(fc.property(badTempK, (t) => void expect(() => saturationPressurePa(t)).toThrow(RangeError)));
    fc.assert(fc.property(badTempC, (t) => void expect(() => saturationPressureAtC(t)).toThrow(RangeError)));
    fc.assert(
      fc.property(badPressurePa, (pPa) => {
        expect(() => saturationTemperatureK(pPa)).toThrow(RangeError);
        expect(() => saturationTemperatureC(pPa)).toThrow(RangeError);
      }),
    );
  });

  it("error messages name the argument, the value and the valid range", () => {
    expect(() => saturationPressurePa(200)).toThrow(/tempK .*\[273\.15, 647\.096\] K; got 200/);
    expect(() => saturationTemperatureK(Number.NaN)).toThrow(/pressurePa .*Pa; got NaN/);
    expect(() => saturationPressureAtC(-5)).toThrow(/tempC .*\[0, 373\.946\] °C; got -5/);
    // A string from a config file is not a number.
    expect(() => saturationPressurePa("300" as unknown as number)).toThrow(/got "300"/);
  });
});
