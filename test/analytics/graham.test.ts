// Graham's ratio GR = 100 · CO / (0.265 · N2 − O2) (DESIGN.md §4), with worked numbers done
// by hand, and the mine-fire practice bands of DESIGN.md §4 (2–3 "serious heating" from memory).
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { grahamInterpretation, grahamRatio } from "../../src/physics/graham.js";

describe("grahamRatio", () => {
  it("worked example: 50 ppm CO, 79.0 % N2, 20.435 % O2 gives GR 1.0", () => {
    // By hand: 0.265 × 79.0 = 20.935; deficiency 20.935 − 20.435 = 0.500 %-pt;
    // CO 50 ppm = 0.005 % vol; GR = 100 × 0.005 / 0.500 = 1.0 (in floating point a hair
    // below 1, since 0.265 × 79 rounds up: the band boundary itself is tested below).
    expect(grahamRatio(0.005, 79.0, 20.435)).toBeCloseTo(1.0, 10);
  });

  it("worked example: 20 ppm CO, 78.0 % N2, 20.17 % O2 gives GR 0.4, normal", () => {
    // By hand: 0.265 × 78.0 = 20.67; 20.67 − 20.17 = 0.50; GR = 100 × 0.002 / 0.50 = 0.4.
    const gr = grahamRatio(0.002, 78.0, 20.17);
    expect(gr).toBeCloseTo(0.4, 10);
    expect(grahamInterpretation(gr)).toEqual({ band: "normal", text: "normal (below 0.5)", source: "mine-fire practice (DESIGN.md §4)" });
  });

  it("does not change when the sample is diluted with air (the reason it is used instead of CO alone)", () => {
    // Air taken with O2 = 0.265 · N2 (zero deficiency by the ratio's own constant) and no CO: mixing a
    // fraction f of it scales CO and the deficiency alike, so the ratio is unchanged.
    const airN2 = 79.04;
    const airO2 = 0.265 * airN2;
    fc.assert(
      fc.property(
        fc.double({ min: 0.0001, max: 1, noNaN: true }),
        fc.double({ min: 70, max: 85, noNaN: true }),
        fc.double({ min: 0.1, max: 5, noNaN: true }),
        fc.double({ min: 0, max: 0.9, noNaN: true }),
        (co, n2, deficiency, f) => {
          const o2 = 0.265 * n2 - deficiency;
          const gr = grahamRatio(co, n2, o2);
          const mixed = grahamRatio((1 - f) * co, (1 - f) * n2 + f * airN2, (1 - f) * o2 + f * airO2);
          expect(Math.abs(mixed - gr)).toBeLessThanOrEqual(1e-6 * gr);
        },
      ),
    );
  });

  it("refuses gas with no oxygen deficiency: the ratio is meaningless without consumed oxygen", () => {
    // Fresh air, 20.95 % O2 and 79.04 % N2: 0.265 × 79.04 = 20.9456 < 20.95.
    expect(() => grahamRatio(0.001, 79.04, 20.95)).toThrow(
      /oxygen deficiency 0\.265 · N2 − O2 must be > 0 %-pt; got -0\.004.* \(N2 79\.04 %, O2 20\.95 %\): no oxygen consumed, so the ratio is meaningless/,
    );
    expect(() => grahamRatio(-1, 79, 20)).toThrow(/coPctVol must be a finite number in \[0, 100\] % vol; got -1/);
  });
});

describe("grahamInterpretation", () => {
  it("gives the mine-fire practice bands, each including its lower bound", () => {
    const cases: [number, string][] = [
      [0, "normal"],
      [0.49, "normal"],
      [0.5, "heating"],
      [0.99, "heating"],
      [1, "advanced-heating"],
      [1.99, "advanced-heating"],
      [2, "serious-heating"],
      [3, "serious-heating"],
      [3.01, "active-fire"],
      [40, "active-fire"],
    ];
    for (const [gr, band] of cases) expect([gr, grahamInterpretation(gr).band]).toEqual([gr, band]);
    expect(grahamInterpretation(2.5).source).toMatch(/from memory/);
    expect(() => grahamInterpretation(Number.NaN)).toThrow(/gr must be a finite number >= 0; got NaN/);
  });
});
