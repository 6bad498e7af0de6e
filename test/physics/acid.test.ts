import { describe, expect, it } from "vitest";
import fc from "fast-check";
import {
  acidDewPointC,
  acidDewPointOkkes,
  acidDewPointVerhoffBanchero,
  so3PpmFromSo2,
} from "../../src/physics/index.js";

const P_ATM = 101_325;

// Published correlations (Verhoff & Banchero 1974; Okkes 1987); check values as given in DESIGN.md §4.
describe("sulfuric acid dew point", () => {
  it("1 atm, 10 % H2O, 10 ppm SO3: V&B 137.3 °C, Okkes 133.3 °C", () => {
    // DESIGN.md §4 check values (published correlations, ±0.1 K).
    expect(Math.abs(acidDewPointC("verhoff-banchero", 10, 10, P_ATM) - 137.3)).toBeLessThanOrEqual(0.1);
    expect(Math.abs(acidDewPointC("okkes", 10, 10, P_ATM) - 133.3)).toBeLessThanOrEqual(0.1);
  });

  it("published worked example: p_H2O 93.44 mmHg, p_SO3 0.0024917 mmHg -> 128.75 °C (V&B)", () => {
    // DESIGN.md §4: published worked example in partial pressures (the source rounds to 129 °C).
    expect(Math.abs(acidDewPointVerhoffBanchero(93.44, 0.0024917) - 128.75)).toBeLessThanOrEqual(0.01);
  });

  it("the partial-pressure forms match the composition form at 1 atm", () => {
    // Same check point as above (DESIGN.md §4): 10 % of 760 mmHg = 76 mmHg, 10 ppm = 0.0076 mmHg.
    expect(acidDewPointVerhoffBanchero(76, 0.0076)).toBeCloseTo(acidDewPointC("verhoff-banchero", 10, 10, P_ATM), 10);
    expect(acidDewPointOkkes(0.1, 1e-5)).toBeCloseTo(acidDewPointC("okkes", 10, 10, P_ATM), 10);
  });

  it("acid dew point rises with SO3 over a flue-gas range (both correlations)", () => {
    // Both published correlations increase monotonically with p_SO3 for 1-100 ppm SO3 and 5-20 % H2O.
    fc.assert(
      fc.property(
        fc.double({ min: 5, max: 20, noNaN: true }),
        fc.double({ min: 1, max: 50, noNaN: true }),
        fc.constantFrom("verhoff-banchero" as const, "okkes" as const),
        (h2o, so3, method) => acidDewPointC(method, h2o, so3 * 2, P_ATM) > acidDewPointC(method, h2o, so3, P_ATM),
      ),
    );
  });

  it("SO3 from SO2 with a conversion fraction: 1000 ppm at 2 % -> 20 ppm", () => {
    // DESIGN.md §4: SO3 = SO2 · configured conversion fraction (1-3 % typical).
    expect(so3PpmFromSo2(1000, 0.02)).toBeCloseTo(20, 12);
    expect(() => so3PpmFromSo2(1000, 2)).toThrow(/conversionFrac .*\[0, 1\]; got 2/);
  });

  it("bad input throws RangeError naming the argument", () => {
    expect(() => acidDewPointC("verhoff-banchero", 10, 0, P_ATM)).toThrow(/so3Ppm .*got 0/);
    expect(() => acidDewPointC("magnus" as "okkes", 10, 10, P_ATM)).toThrow(/method must be one of/);
    expect(() => acidDewPointVerhoffBanchero(Number.NaN, 0.01)).toThrow(/pH2OmmHg .*got NaN/);
    expect(() => acidDewPointOkkes(0.1, 1e-9)).toThrow(/pSO3atm .*got 1e-9/);
    expect(() => acidDewPointC("okkes", 10, 10, -1)).toThrow(/absPressurePa .*got -1/);
  });
});
