import { describe, expect, it } from "vitest";
import { so2PpmFromFuelSulfur } from "../../src/physics/fuel-sulfur.js";

describe("SO2 from the fuel's sulfur", () => {
  it("0.5 t/h of fuel at 1 % S into 20,000 Nm³/h -> 174.78 ppm", () => {
    // Hand-computed: 0.5·1000·0.01 = 5 kg/h S; 5/32.06 = 0.155958 kmol/h SO2 (1 kmol S -> 1 kmol SO2);
    // 20,000/22.414 = 892.299 kmol/h gas; 1e6·0.155958/892.299 = 174.78 ppm.
    expect(so2PpmFromFuelSulfur(0.5, 1, 20_000)).toBeCloseTo(174.78, 2);
  });

  it("scales with feed and sulfur and inversely with the gas flow", () => {
    // Same hand-computed figure, doubled or halved by each input in turn.
    expect(so2PpmFromFuelSulfur(1, 1, 20_000)).toBeCloseTo(2 * 174.7817, 3);
    expect(so2PpmFromFuelSulfur(0.5, 2, 20_000)).toBeCloseTo(2 * 174.7817, 3);
    expect(so2PpmFromFuelSulfur(0.5, 1, 40_000)).toBeCloseTo(174.7817 / 2, 3);
    expect(so2PpmFromFuelSulfur(0, 1, 40_000)).toBe(0);
  });

  it("refuses bad input, naming the argument", () => {
    expect(() => so2PpmFromFuelSulfur(-1, 1, 20_000)).toThrow(/fuelFeedTPerH .*>= 0 t\/h; got -1/);
    expect(() => so2PpmFromFuelSulfur(1, 101, 20_000)).toThrow(/sulfurPctMass .*\[0, 100\] % by mass; got 101/);
    expect(() => so2PpmFromFuelSulfur(1, 1, 0)).toThrow(/fluegasNm3PerHWet .*> 0 Nm³\/h; got 0/);
  });
});
