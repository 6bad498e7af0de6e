import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { h2oPctVolFromMassBalance } from "../../src/physics/dewpoint.js";
import { h2oPctVolFromOutletFlowMassBalance } from "../../src/physics/moisture-balance.js";

describe("mass balance with the gas flow metered after the mill", () => {
  it("worked figure: 3.3 t/h into 70,000 Nm³/h at 8 % -> 13.10 %, from the outlet flow 74,105.81 Nm³/h", () => {
    // DESIGN.md §4 worked figure; 3,300 kg/h = 3300/18.015 kmol/h = 4,105.81 Nm³/h of vapour (22.414 Nm³/kmol).
    const x = h2oPctVolFromOutletFlowMassBalance({ outletFlowNm3PerHWet: 74_105.81182, incomingH2oPctVol: 8, evaporatedWaterKgPerH: 3_300 });
    expect(Math.abs(x - 13.1)).toBeLessThan(0.005);
  });

  it("agrees with the inlet-flow form when the outlet flow is the inlet flow plus the vapour", () => {
    // Conservation of moles (ideal gas): n_out = n_in + m_evap/18.015.
    fc.assert(
      fc.property(
        fc.double({ min: 1_000, max: 500_000, noNaN: true }),
        fc.double({ min: 0, max: 40, noNaN: true }),
        fc.double({ min: 0, max: 20_000, noNaN: true }),
        (inletNm3PerH, xIn, waterKgPerH) => {
          const outlet = inletNm3PerH + (waterKgPerH / 18.015) * 22.414;
          const a = h2oPctVolFromMassBalance({ gasFlowNm3PerHWet: inletNm3PerH, gasH2oPctVol: xIn, evaporatedWaterKgPerH: waterKgPerH });
          const b = h2oPctVolFromOutletFlowMassBalance({ outletFlowNm3PerHWet: outlet, incomingH2oPctVol: xIn, evaporatedWaterKgPerH: waterKgPerH });
          return Math.abs(a - b) < 1e-9 * (1 + a);
        },
      ),
    );
  });

  it("refuses more vapour than the metered flow, and bad numbers, naming the argument", () => {
    expect(() => h2oPctVolFromOutletFlowMassBalance({ outletFlowNm3PerHWet: 1_000, incomingH2oPctVol: 5, evaporatedWaterKgPerH: 1_000 })).toThrow(
      /1000 kg\/h of evaporated water is 1244 Nm³\/h of vapour, not less than the metered outlet flow 1000 Nm³\/h/,
    );
    expect(() => h2oPctVolFromOutletFlowMassBalance({ outletFlowNm3PerHWet: 0, incomingH2oPctVol: 5, evaporatedWaterKgPerH: 1 })).toThrow(/outletFlowNm3PerHWet .*> 0 Nm³\/h; got 0/);
    expect(() => h2oPctVolFromOutletFlowMassBalance({ outletFlowNm3PerHWet: 1e4, incomingH2oPctVol: Number.NaN, evaporatedWaterKgPerH: 1 })).toThrow(/incomingH2oPctVol .*got NaN/);
  });
});
