// Purge progress of a well-mixed vessel (DESIGN.md §4):
//   ln[(C1 − C0)/(C2 − C0)] = Q t / V,  N = Q t / V volume changes,
// C1 the starting concentration, C0 the purge gas's, C2 the concentration reached.
// Real vessels mix imperfectly, so these predictions are compared with the measured
// decay; counted volume changes alone never make a unit inert.

import { checkNumber } from "./validate.js";

/**
 * Volume changes N = q · tS / volume: `q` purge flow in volume units per second (>= 0),
 * `tS` elapsed seconds (>= 0), `volume` the vessel volume in the same volume unit (> 0).
 */
export function purgeVolumeChanges(q: number, tS: number, volume: number): number {
  const fn = "purgeVolumeChanges";
  checkNumber(fn, "q", q, { min: 0, unit: "volume/s" });
  checkNumber(fn, "tS", tS, { min: 0, unit: "s" });
  checkNumber(fn, "volume", volume, { min: 0, minExclusive: true });
  return (q * tS) / volume;
}

/**
 * Concentration predicted after `volumeChanges` (>= 0) in a well-mixed vessel that
 * started at `c1` and is purged with gas at `c0` (any one unit, >= 0):
 * C = C0 + (C1 − C0) · e^(−N).
 */
export function predictedConcentrationWellMixed(c1: number, c0: number, volumeChanges: number): number {
  const fn = "predictedConcentrationWellMixed";
  checkNumber(fn, "c1", c1, { min: 0 });
  checkNumber(fn, "c0", c0, { min: 0 });
  checkNumber(fn, "volumeChanges", volumeChanges, { min: 0 });
  return c0 + (c1 - c0) * Math.exp(-volumeChanges);
}

/**
 * Volume changes needed to go from `c1` to the target `c2` with purge gas at `c0`:
 * N = ln[(c1 − c0)/(c2 − c0)]. Returns 0 when the target is already met. Throws when
 * the target is unreachable: purging down (c1 > c0) can never reach c2 <= c0, purging
 * up (c1 < c0) never reaches c2 >= c0.
 */
export function volumeChangesToTarget(c1: number, c0: number, c2: number): number {
  const fn = "volumeChangesToTarget";
  checkNumber(fn, "c1", c1, { min: 0 });
  checkNumber(fn, "c0", c0, { min: 0 });
  checkNumber(fn, "c2", c2, { min: 0 });
  if (c1 > c0) {
    if (c2 >= c1) return 0;
    if (c2 <= c0) {
      throw new RangeError(
        `${fn}: target c2 ${c2} is unreachable: purging down from c1 ${c1} with purge gas at c0 ${c0} ` +
          `only approaches ${c0}; c2 must be > c0`,
      );
    }
  } else if (c1 < c0) {
    if (c2 <= c1) return 0;
    if (c2 >= c0) {
      throw new RangeError(
        `${fn}: target c2 ${c2} is unreachable: purging up from c1 ${c1} with purge gas at c0 ${c0} ` +
          `only approaches ${c0}; c2 must be < c0`,
      );
    }
  } else {
    if (c2 === c1) return 0;
    throw new RangeError(
      `${fn}: target c2 ${c2} is unreachable: the vessel (c1 ${c1}) already holds the purge gas's concentration c0 ${c0}`,
    );
  }
  return Math.log((c1 - c0) / (c2 - c0));
}
