import { describe, expect, it } from "vitest";
import fc from "fast-check";
import psychrolib from "psychrolib";
import {
  SATURATION_MIN_PRESSURE_PA,
  absolutePressurePa,
  dewPointMarginK,
  evaporatedWaterKgPerH,
  h2oPctVolFromMassBalance,
  h2oPctVolFromRelativeHumidity,
  waterDewPointC,
} from "../../src/physics/index.js";

const P_ATM = 101_325;

describe("water dew point, DESIGN.md §4 check values", () => {
  // DESIGN.md §4 check values, computed with python3-iapws (IAPWS-IF97), given to 0.01 K.
  it.each([
    [10, P_ATM, 46.07],
    [15, P_ATM, 54.24],
    [20, P_ATM, 60.34],
    [25, P_ATM, 65.26],
    [10, 96_000, 45.01],
  ])("%d vol %% H2O at %d Pa -> %f °C (DESIGN.md §4, python3-iapws)", (h2o, pPa, expectedC) => {
    expect(Math.abs(waterDewPointC(h2o, pPa) - expectedC)).toBeLessThanOrEqual(0.01);
  });

  it("normal boiling point: pure steam at 101.325 kPa condenses at 99.97 °C", () => {
    // IAPWS R7-97 eq. 31 gives Ts(0.101325 MPa) = 373.124 K (steam tables: 99.974 °C; ITS-90 boiling point, from memory).
    expect(Math.abs(waterDewPointC(100, P_ATM) - 99.974)).toBeLessThan(0.001);
  });
});

describe("moisture from a mass balance", () => {
  it("worked figure: 3.3 t/h water into 70,000 Nm³/h wet gas at 8 % -> 13.10 % H2O, dew point 51.45 °C", () => {
    // DESIGN.md §4 worked figure (checked there with python3-iapws), 22.414 Nm³/kmol, 18.015 kg/kmol.
    const h2o = h2oPctVolFromMassBalance({
      gasFlowNm3PerHWet: 70_000,
      gasH2oPctVol: 8,
      evaporatedWaterKgPerH: 3_300,
    });
    expect(Math.abs(h2o - 13.1)).toBeLessThan(0.005);
    expect(Math.abs(waterDewPointC(h2o, P_ATM) - 51.45)).toBeLessThanOrEqual(0.01);
  });

  it("evaporated water equals the dry-solids balance", () => {
    // Independent formulation (dry solids are conserved): product = feed·(1 − w_raw)/(1 − w_prod),
    // water = feed − product; DESIGN.md §4 states feed·(w_raw − w_prod)/(1 − w_prod).
    // Hand-worked case: 30 t/h at 12 % dried to 1 % -> 30,000 − 26,400/0.99 = 3,333.33 kg/h.
    expect(evaporatedWaterKgPerH(30, 0.12, 0.01)).toBeCloseTo(3333.333, 3);
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 500, noNaN: true }),
        fc.double({ min: 0, max: 0.6, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        (feedTPerH, wRaw, share) => {
          const wProd = wRaw * share;
          const feedKgPerH = feedTPerH * 1000;
          const byDrySolids = feedKgPerH - (feedKgPerH * (1 - wRaw)) / (1 - wProd);
          return Math.abs(evaporatedWaterKgPerH(feedTPerH, wRaw, wProd) - byDrySolids) <= 1e-9 * (1 + feedKgPerH);
        },
      ),
    );
  });

  it("mixing stays between the gas's moisture and pure water and adds nothing without evaporation", () => {
    // Mole balance (DESIGN.md §4): the mixture lies between its two streams.
    fc.assert(
      fc.property(
        fc.double({ min: 100, max: 1e6, noNaN: true }),
        fc.double({ min: 0, max: 100, noNaN: true }),
        fc.double({ min: 0, max: 1e5, noNaN: true }),
        (flow, x, evap) => {
          const mixed = h2oPctVolFromMassBalance({ gasFlowNm3PerHWet: flow, gasH2oPctVol: x, evaporatedWaterKgPerH: evap });
          const still = h2oPctVolFromMassBalance({ gasFlowNm3PerHWet: flow, gasH2oPctVol: x, evaporatedWaterKgPerH: 0 });
          return mixed >= x - 1e-9 && mixed <= 100 + 1e-9 && Math.abs(still - x) < 1e-9;
        },
      ),
    );
  });

  it("rejects a product wetter than the raw coal and bad balance inputs", () => {
    expect(() => evaporatedWaterKgPerH(30, 0.05, 0.1)).toThrow(/productMoistureFrac \(0\.1\) must be <= rawMoistureFrac/);
    expect(() => evaporatedWaterKgPerH(-1, 0.1, 0.01)).toThrow(RangeError);
    expect(() => evaporatedWaterKgPerH(30, 1, 0.01)).toThrow(/rawMoistureFrac .*\[0, 1\); got 1/);
    expect(() =>
      h2oPctVolFromMassBalance({ gasFlowNm3PerHWet: 0, gasH2oPctVol: 8, evaporatedWaterKgPerH: 1 }),
    ).toThrow(/gasFlowNm3PerHWet .*> 0 Nm³\/h; got 0/);
    expect(() =>
      h2oPctVolFromMassBalance({ gasFlowNm3PerHWet: 1000, gasH2oPctVol: Number.NaN, evaporatedWaterKgPerH: 1 }),
    ).toThrow(/gasH2oPctVol .*got NaN/);
  });
});

describe("moisture from a humidity sensor, against psychrolib", () => {
  const p = psychrolib;
  p.SetUnitSystem(p.SI);

  it("vol % from RH matches psychrolib's vapour pressure within 0.025 %", () => {
    // Oracle: psychrolib GetVapPresFromRelHum (ASHRAE Handbook Fundamentals 2017 ch. 1 eq. 12);
    // the tolerance is that of the saturation pressure comparison (max 0.0203 % up to 150 °C).
    for (const tempC of [5, 20, 40, 60, 80, 95]) {
      for (const rhPct of [10, 50, 90, 100]) {
        const oraclePct = ((p.GetVapPresFromRelHum(tempC, rhPct / 100) as number) / P_ATM) * 100;
        const ours = h2oPctVolFromRelativeHumidity(rhPct, tempC, P_ATM);
        expect(Math.abs(ours / oraclePct - 1)).toBeLessThan(2.5e-4);
      }
    }
  });

  it("dew point via RH matches psychrolib GetTDewPointFromRelHum within 0.01 K", () => {
    // Oracle: psychrolib GetTDewPointFromRelHum; tolerance as in the vapour pressure comparison (max 0.0074 K).
    for (const tempC of [20, 35, 50, 70, 90]) {
      for (const rhPct of [40, 70, 100]) {
        const ours = waterDewPointC(h2oPctVolFromRelativeHumidity(rhPct, tempC, P_ATM), P_ATM);
        expect(Math.abs(ours - (p.GetTDewPointFromRelHum(tempC, rhPct / 100) as number))).toBeLessThan(0.01);
      }
    }
  });

  it("saturated gas has its dew point at its own temperature", () => {
    // Definition of the dew point (100 % RH means the vapour is at saturation).
    fc.assert(
      fc.property(fc.double({ min: 1, max: 99, noNaN: true }), (tempC) => {
        const x = h2oPctVolFromRelativeHumidity(100, tempC, P_ATM);
        return Math.abs(waterDewPointC(x, P_ATM) - tempC) < 1e-9 * (1 + tempC);
      }),
    );
  });

  it("refuses RH that would put more vapour in the gas than its pressure allows", () => {
    // Saturation pressure at 120 °C (about 198.7 kPa, IF97) exceeds one atmosphere.
    expect(() => h2oPctVolFromRelativeHumidity(100, 120, P_ATM)).toThrow(/more than the absolute pressure/);
    expect(() => h2oPctVolFromRelativeHumidity(101, 20, P_ATM)).toThrow(/rhPct .*\[0, 100\] %; got 101/);
  });
});

describe("absolute pressure and margin", () => {
  it("p_abs = barometric + gauge; a mill at −3 mbar at 1013.25 mbar runs at 101,025 Pa", () => {
    // DESIGN.md §4: p_abs = barometric + gauge; suction around −3 mbar is common practice.
    expect(absolutePressurePa(P_ATM, -300)).toBe(101_025);
    expect(() => absolutePressurePa(P_ATM, -P_ATM)).toThrow(/gives 0 Pa; an absolute pressure must be > 0 Pa/);
    expect(() => absolutePressurePa(0, 100)).toThrow(/barometricPa .*> 0 Pa; got 0/);
    expect(() => absolutePressurePa(P_ATM, Number.NaN)).toThrow(/gaugePa .*got NaN/);
  });

  it("margin is gas temperature minus dew point: 75 °C gas at 20 vol % has 14.66 K", () => {
    // DESIGN.md §4: margin = T_gas − T_dew; dew point 60.34 °C at 20 vol % (DESIGN.md check value).
    expect(dewPointMarginK(75, waterDewPointC(20, P_ATM))).toBeCloseTo(14.66, 2);
    expect(dewPointMarginK(50, 55)).toBe(-5);
    expect(() => dewPointMarginK(Number.POSITIVE_INFINITY, 40)).toThrow(/gasTempC .*got Infinity/);
  });
});

describe("dew point properties", () => {
  it("dew point strictly increases with moisture", () => {
    // Clausius-Clapeyron: Ts rises strictly with the partial pressure.
    fc.assert(
      fc.property(
        fc.double({ min: 1, max: 99, noNaN: true }),
        fc.double({ min: 1e-6, max: 1, noNaN: true }),
        fc.double({ min: 70_000, max: 500_000, noNaN: true }),
        (x, rel, pPa) => {
          const x2 = Math.min(100, x * (1 + rel));
          return waterDewPointC(x2, pPa) > waterDewPointC(x, pPa);
        },
      ),
    );
  });

  it("dew point strictly increases with pressure", () => {
    // Clausius-Clapeyron, as above, at fixed composition.
    fc.assert(
      fc.property(
        fc.double({ min: 1, max: 100, noNaN: true }),
        fc.double({ min: 70_000, max: 400_000, noNaN: true }),
        fc.double({ min: 1e-6, max: 0.25, noNaN: true }),
        (x, pPa, rel) => waterDewPointC(x, pPa * (1 + rel)) > waterDewPointC(x, pPa),
      ),
    );
  });

  it("out-of-range and non-finite moisture or pressure throws RangeError", () => {
    const badX = fc.oneof(
      fc.double({ max: 0 }),
      fc.double({ min: 100, minExcluded: true }),
      fc.constantFrom(Number.NaN, Infinity, -Infinity),
    );
    const badP = fc.oneof(fc.double({ max: 0 }), fc.constantFrom(Number.NaN, Infinity, -Infinity));
    fc.assert(fc.property(badX, (x) => void expect(() => waterDewPointC(x, P_ATM)).toThrow(RangeError)));
    fc.assert(fc.property(badP, (pPa) => void expect(() => waterDewPointC(10, pPa)).toThrow(RangeError)));
  });

  it("very dry gas (dew point below 0 °C) is refused: frost point not covered", () => {
    // IAPWS R7-97 Region 4 starts at 273.15 K / 611.213 Pa; 0.5 vol % at 1 atm is 506.6 Pa.
    expect(() => waterDewPointC(0.5, P_ATM)).toThrow(/below .*Region 4 lower bound.*frost point/);
    const justAbove = (SATURATION_MIN_PRESSURE_PA / P_ATM) * 100 * (1 + 1e-12);
    expect(Math.abs(waterDewPointC(justAbove, P_ATM))).toBeLessThan(1e-6);
  });
});
