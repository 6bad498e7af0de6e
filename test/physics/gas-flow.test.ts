// Actual to normal volume flow. Source: DIN 1343 (normal state T_n = 273.15 K, p_n = 101 325 Pa)
// with the ideal-gas law, V_n = V_a · (p_a / p_n) · (T_n / T_a). The worked figures below are
// that formula by hand.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { actualToNormal, NORMAL_PRESSURE_PA, NORMAL_TEMPERATURE_K } from "../../src/physics/gas-flow.js";

describe("actual to normal gas flow (DIN 1343)", () => {
  it("uses the DIN 1343 normal state", () => {
    expect(NORMAL_TEMPERATURE_K).toBe(273.15);
    expect(NORMAL_PRESSURE_PA).toBe(101_325);
  });

  it("worked figures", () => {
    // At the normal state itself nothing changes.
    expect(actualToNormal(1000, 0, 101_325)).toBe(1000);
    // Twice the pressure at 0 °C: twice the normal volume.
    expect(actualToNormal(1000, 0, 202_650)).toBeCloseTo(2000, 9);
    // Mill gas at 80 °C and 96 kPa absolute: 1000 × (96 000 / 101 325) × (273.15 / 353.15) = 732.82.
    expect(actualToNormal(1000, 80, 96_000)).toBeCloseTo(732.82, 2);
    // 90 °C, 3 mbar below 1013.25 hPa: 1000 × (101 025 / 101 325) × (273.15 / 363.15) = 749.94.
    expect(actualToNormal(1000, 90, 101_025)).toBeCloseTo(749.94, 2);
  });

  it("property: proportional to the actual flow and to the pressure, inversely to the absolute temperature", () => {
    fc.assert(
      fc.property(fc.double({ min: 0, max: 1e6, noNaN: true }), fc.double({ min: -40, max: 600, noNaN: true }), fc.double({ min: 5e4, max: 2e5, noNaN: true }), (v, t, p) => {
        const n = actualToNormal(v, t, p);
        expect(actualToNormal(2 * v, t, p)).toBeCloseTo(2 * n, 6);
        expect(actualToNormal(v, t, 2 * p)).toBeCloseTo(2 * n, 6);
        expect(n * (t + 273.15)).toBeCloseTo(v * (p / 101_325) * 273.15, 3);
      }),
    );
  });

  it("refuses temperatures at or below absolute zero and pressures at or below 0", () => {
    expect(() => actualToNormal(1, -273.15, 1e5)).toThrow(/above absolute zero/);
    expect(() => actualToNormal(1, 20, 0)).toThrow(/above 0 Pa/);
  });
});
