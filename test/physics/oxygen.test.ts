import { describe, expect, it } from "vitest";
import fc from "fast-check";
import {
  effectiveOxygenLimit,
  nfpa69LimitPctVol,
  o2DryFromWet,
  o2OnBasis,
  o2WetFromDry,
} from "../../src/physics/index.js";

describe("oxygen basis", () => {
  it("10 % wet at 15 % H2O is 11.765 % dry, and back", () => {
    // DESIGN.md §4 check value: O2_dry = O2_wet / (1 − x_H2O) = 10 / 0.85.
    const dry = o2DryFromWet(10, 15);
    expect(Math.abs(dry - 11.765)).toBeLessThan(0.0005);
    expect(o2WetFromDry(dry, 15)).toBeCloseTo(10, 12);
  });

  it("air (20.95 % O2 dry, ISO 2533 / US Std Atmosphere 1976 composition) at 2 % H2O reads 20.531 % wet", () => {
    // Dry-air O2 fraction 20.946 vol % (US Standard Atmosphere 1976, from memory); 20.946 · 0.98 = 20.527.
    expect(o2WetFromDry(20.946, 2)).toBeCloseTo(20.527, 3);
  });

  it("round trip wet -> dry -> wet over the valid domain", () => {
    // Definition of the two bases: the dry value is the wet one renormalised without water.
    fc.assert(
      fc.property(
        fc.double({ min: 0, max: 99, noNaN: true }),
        fc.double({ min: 0, max: 1, noNaN: true }),
        (h2o, share) => {
          const o2Wet = share * (100 - h2o);
          return Math.abs(o2WetFromDry(o2DryFromWet(o2Wet, h2o), h2o) - o2Wet) <= 1e-9 * (1 + o2Wet);
        },
      ),
    );
  });

  it("o2OnBasis converts, passes through, and returns null when the water content is unknown", () => {
    // DESIGN.md §4: compare on the limit's own basis; unknown moisture makes the comparison unknown.
    expect(o2OnBasis(10, "wet", "dry", 15)).toBeCloseTo(11.7647, 4);
    expect(o2OnBasis(11.7647058823529, "dry", "wet", 15)).toBeCloseTo(10, 10);
    expect(o2OnBasis(10, "wet", "wet", null)).toBe(10);
    expect(o2OnBasis(10, "dry", "dry", 15)).toBe(10);
    expect(o2OnBasis(10, "wet", "dry", null)).toBeNull();
    expect(o2OnBasis(10, "dry", "wet", null)).toBeNull();
  });

  it("bad input throws RangeError naming the argument", () => {
    expect(() => o2DryFromWet(10, 100)).toThrow(/h2oPctVolWet .*\[0, 100\) vol %; got 100/);
    expect(() => o2DryFromWet(Number.NaN, 10)).toThrow(/o2PctVolWet .*got NaN/);
    expect(() => o2DryFromWet(90, 15)).toThrow(/exceed 100 vol %/);
    expect(() => o2WetFromDry(-1, 10)).toThrow(/o2PctVolDry .*got -1/);
    expect(() => o2OnBasis(10, "moist" as "wet", "dry", 10)).toThrow(/from must be one of "wet", "dry"; got "moist"/);
    expect(() => o2OnBasis(10, "wet", "dry", Number.NaN)).toThrow(RangeError);
  });
});

describe("NFPA 69 oxygen limit (from memory: verify the clause against the edition in force)", () => {
  // DESIGN.md §4 check values for the NFPA 69 margin rule [M].
  it.each([
    [12, "continuous", 10.0],
    [12, "periodic", 7.2],
    [4, "continuous", 2.4],
    [4, "periodic", 1.6],
  ] as const)("LOC %d %s -> %f (DESIGN.md §4, NFPA 69 from memory)", (loc, monitoring, expected) => {
    expect(nfpa69LimitPctVol(loc, monitoring)).toBeCloseTo(expected, 12);
  });

  it("the limit is always below the LOC", () => {
    // NFPA 69 requires a margin below the LOC in every case.
    fc.assert(
      fc.property(
        fc.double({ min: 0.1, max: 21, noNaN: true }),
        fc.constantFrom("continuous" as const, "periodic" as const),
        (loc, monitoring) => {
          const limit = nfpa69LimitPctVol(loc, monitoring);
          return limit > 0 && limit < loc;
        },
      ),
    );
  });

  it("refuses an LOC outside (0, 21] and an unknown monitoring mode", () => {
    expect(() => nfpa69LimitPctVol(0, "continuous")).toThrow(/locPctVol .*\(0, 21\] vol %; got 0/);
    expect(() => nfpa69LimitPctVol(Number.NaN, "continuous")).toThrow(/got NaN/);
    expect(() => nfpa69LimitPctVol(12, "sometimes" as "periodic")).toThrow(/monitoring must be one of/);
  });
});

describe("effective oxygen limit", () => {
  it("picks the lowest of site maximum and LOC-based limit", () => {
    // DESIGN.md §4: the limit is the lowest of the site's maximum and the LOC with the NFPA 69 margin.
    expect(effectiveOxygenLimit({ siteMaxPctVol: 12, locPctVol: 12, monitoring: "continuous" })).toEqual({
      limitPctVol: 10,
      source: "loc-nfpa69",
    });
    expect(effectiveOxygenLimit({ siteMaxPctVol: 8, locPctVol: 12, monitoring: "continuous" })).toEqual({
      limitPctVol: 8,
      source: "site-maximum",
    });
    expect(effectiveOxygenLimit({ siteMaxPctVol: 9, locPctVol: 12, monitoring: "periodic" }).limitPctVol).toBeCloseTo(
      7.2,
      12,
    );
    expect(effectiveOxygenLimit({ siteMaxPctVol: 9, monitoring: "continuous" })).toEqual({
      limitPctVol: 9,
      source: "site-maximum",
    });
  });

  it("applies the extra margin to the LOC-based limit", () => {
    // DESIGN.md §4: an LOC tested below process temperature gets a configured extra margin.
    const r = effectiveOxygenLimit({ siteMaxPctVol: 12, locPctVol: 12, monitoring: "continuous", extraMarginPctPt: 1.5 });
    expect(r.source).toBe("loc-nfpa69");
    expect(r.limitPctVol).toBeCloseTo(8.5, 12);
  });

  it("errors when neither value is given or the input is inconsistent", () => {
    expect(() => effectiveOxygenLimit({ monitoring: "continuous" })).toThrow(/give siteMaxPctVol or locPctVol/);
    expect(() => effectiveOxygenLimit({ siteMaxPctVol: 10, monitoring: "continuous", extraMarginPctPt: 1 })).toThrow(
      /extraMarginPctPt .*locPctVol was not given/,
    );
    expect(() => effectiveOxygenLimit({ locPctVol: 4, monitoring: "periodic", extraMarginPctPt: 2 })).toThrow(
      /leaves no positive limit/,
    );
    expect(() => effectiveOxygenLimit({ siteMaxPctVol: Number.NaN, monitoring: "continuous" })).toThrow(
      /siteMaxPctVol .*got NaN/,
    );
  });
});
