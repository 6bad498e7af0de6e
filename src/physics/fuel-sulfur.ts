// SO2 in combustion gas from the sulfur in the fuel (for the acid dew point where no
// SO2 or SO3 is measured). All the fuel's sulfur is taken to burn to SO2 (1 kmol S ->
// 1 kmol SO2); the SO3 share is then a configured conversion (see so3PpmFromSo2).

import { MOLAR_VOLUME_NM3_PER_KMOL } from "./dewpoint.js";
import { checkNumber } from "./validate.js";

/** Molar mass of sulfur, kg/kmol (IUPAC standard atomic weight 32.06). */
export const SULFUR_MOLAR_MASS_KG_PER_KMOL = 32.06;

/**
 * SO2 in ppm by volume of the flue gas: SO2 kmol/h = feed·1000·S/32.06,
 * ppm = 1e6 · SO2 / (flow / 22.414), with the fuel feed in t/h (>= 0), its sulfur in
 * % by mass (0..100) and the flue gas flow in Nm³/h on a wet basis (> 0).
 */
export function so2PpmFromFuelSulfur(fuelFeedTPerH: number, sulfurPctMass: number, fluegasNm3PerHWet: number): number {
  const fn = "so2PpmFromFuelSulfur";
  checkNumber(fn, "fuelFeedTPerH", fuelFeedTPerH, { min: 0, unit: "t/h" });
  checkNumber(fn, "sulfurPctMass", sulfurPctMass, { min: 0, max: 100, unit: "% by mass" });
  checkNumber(fn, "fluegasNm3PerHWet", fluegasNm3PerHWet, { min: 0, minExclusive: true, unit: "Nm³/h" });
  const so2KmolPerH = (fuelFeedTPerH * 1000 * (sulfurPctMass / 100)) / SULFUR_MOLAR_MASS_KG_PER_KMOL;
  const gasKmolPerH = fluegasNm3PerHWet / MOLAR_VOLUME_NM3_PER_KMOL;
  return (1e6 * so2KmolPerH) / gasKmolPerH;
}
