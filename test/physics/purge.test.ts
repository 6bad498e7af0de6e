import { describe, expect, it } from "vitest";
import fc from "fast-check";
import {
  predictedConcentrationWellMixed,
  purgeVolumeChanges,
  volumeChangesToTarget,
} from "../../src/physics/index.js";

describe("well-mixed purge", () => {
  it("21 -> 1 % O2 with pure N2 needs 3.04 volume changes", () => {
    // DESIGN.md §4 check value: ln(21/1) = 3.0445.
    expect(volumeChangesToTarget(21, 0, 1)).toBeCloseTo(3.04, 2);
  });

  it("Crowl & Louvar sweep-through example: Q t = 1000 ln(20.99/1.24) ≈ 2829 ft³", () => {
    // Crowl & Louvar, Chemical Process Safety, sweep-through purging example (from memory, as in DESIGN.md §4):
    // 1000 ft³ vessel from air (21 % O2) to 1.25 % O2 with N2 holding 0.01 % O2.
    const qtFt3 = 1000 * volumeChangesToTarget(21, 0.01, 1.25);
    expect(Math.abs(qtFt3 - 2829)).toBeLessThan(0.5);
  });

  it("counting volume changes: 50 m³/min for 60 min into a 1000 m³ vessel is 3 changes", () => {
    // Definition N = Q t / V (DESIGN.md §4).
    expect(purgeVolumeChanges(50 / 60, 3600, 1000)).toBeCloseTo(3, 12);
  });

  it("prediction and target are inverses", () => {
    // The well-mixed solution C = C0 + (C1 − C0) e^(−N) inverted gives N = ln[(C1 − C0)/(C2 − C0)].
    fc.assert(
      fc.property(
        fc.double({ min: 0.5, max: 25, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        fc.double({ min: 0, max: 10, noNaN: true }),
        (c1, c0Share, n) => {
          const c0 = c1 * c0Share * 0.5;
          const c2 = predictedConcentrationWellMixed(c1, c0, n);
          if (!(c2 > c0)) return true; // e^(−N) underflow never happens for N <= 10
          return Math.abs(volumeChangesToTarget(c1, c0, c2) - n) < 1e-6;
        },
      ),
    );
  });

  it("after 3.04 volume changes from air with pure N2 the predicted O2 is 1 %", () => {
    // DESIGN.md §4 check value read the other way: 21 · e^(−ln 21) = 1.
    expect(predictedConcentrationWellMixed(21, 0, Math.log(21))).toBeCloseTo(1, 12);
  });

  it("target already met needs no volume changes", () => {
    expect(volumeChangesToTarget(0.5, 0, 1)).toBe(0);
    expect(volumeChangesToTarget(5, 21, 4)).toBe(0); // re-airing: already above the 4 % asked for
  });

  it("unreachable targets throw RangeError", () => {
    expect(() => volumeChangesToTarget(21, 2, 1)).toThrow(/c2 1 is unreachable: purging down .*c2 must be > c0/);
    expect(() => volumeChangesToTarget(21, 2, 2)).toThrow(/unreachable/);
    // Re-airing a vessel (purging up with air) never gets above the air's 21 %.
    expect(() => volumeChangesToTarget(2, 21, 21)).toThrow(/purging up .*c2 must be < c0/);
    expect(() => volumeChangesToTarget(21, 21, 10)).toThrow(/already holds the purge gas's concentration/);
  });

  it("bad input throws RangeError naming the argument", () => {
    expect(() => purgeVolumeChanges(1, 10, 0)).toThrow(/volume .*> 0; got 0/);
    expect(() => purgeVolumeChanges(-1, 10, 5)).toThrow(/q .*got -1/);
    expect(() => purgeVolumeChanges(1, Number.NaN, 5)).toThrow(/tS .*got NaN/);
    expect(() => predictedConcentrationWellMixed(21, 0, -1)).toThrow(/volumeChanges .*got -1/);
  });
});
