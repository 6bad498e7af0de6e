// Moisture of mill gas from a mass balance when the gas flow is metered after the
// mill (the evaporated water is already inside the metered flow). The inlet-flow form
// is h2oPctVolFromMassBalance in dewpoint.ts; both follow DESIGN.md §4.

import { MOLAR_VOLUME_NM3_PER_KMOL, WATER_MOLAR_MASS_KG_PER_KMOL } from "./dewpoint.js";
import { checkNumber } from "./validate.js";

export interface OutletFlowMassBalanceInput {
  /** Gas flow after the mill, evaporated water included, Nm³/h wet basis (> 0). */
  outletFlowNm3PerHWet: number;
  /** Water in the gas entering the mill, vol % wet basis (0..100). */
  incomingH2oPctVol: number;
  /** Water evaporated from the coal into the gas, kg/h (>= 0). */
  evaporatedWaterKgPerH: number;
}

/**
 * Water content in vol % (wet basis) of the gas leaving the mill, from the flow metered
 * there: n_out = flow/22.414, w = m_evap/18.015, n_in = n_out − w (kmol/h),
 * x = (n_in·x_in + w) / n_out. Throws when the evaporated water alone would exceed the
 * metered flow (n_in <= 0): the flow or the feed signal is wrong.
 */
export function h2oPctVolFromOutletFlowMassBalance(input: OutletFlowMassBalanceInput): number {
  const fn = "h2oPctVolFromOutletFlowMassBalance";
  if (typeof input !== "object" || input === null) {
    throw new RangeError(`${fn}: expected an object { outletFlowNm3PerHWet, incomingH2oPctVol, evaporatedWaterKgPerH }`);
  }
  checkNumber(fn, "outletFlowNm3PerHWet", input.outletFlowNm3PerHWet, { min: 0, minExclusive: true, unit: "Nm³/h" });
  checkNumber(fn, "incomingH2oPctVol", input.incomingH2oPctVol, { min: 0, max: 100, unit: "vol %" });
  checkNumber(fn, "evaporatedWaterKgPerH", input.evaporatedWaterKgPerH, { min: 0, unit: "kg/h" });
  const outKmolPerH = input.outletFlowNm3PerHWet / MOLAR_VOLUME_NM3_PER_KMOL;
  const waterKmolPerH = input.evaporatedWaterKgPerH / WATER_MOLAR_MASS_KG_PER_KMOL;
  const inKmolPerH = outKmolPerH - waterKmolPerH;
  if (!(inKmolPerH > 0)) {
    throw new RangeError(
      `${fn}: ${input.evaporatedWaterKgPerH} kg/h of evaporated water is ${(waterKmolPerH * MOLAR_VOLUME_NM3_PER_KMOL).toFixed(0)} Nm³/h of vapour, ` +
        `not less than the metered outlet flow ${input.outletFlowNm3PerHWet} Nm³/h: check the flow and the coal feed`,
    );
  }
  return ((inKmolPerH * (input.incomingH2oPctVol / 100) + waterKmolPerH) / outKmolPerH) * 100;
}
