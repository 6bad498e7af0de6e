// The inerting estimator: O2 against each limit on the limit's own basis, the limit from the
// site maximum and the LOC with the NFPA 69 margin, and the temperature allowance.
// Expected values come from DESIGN.md §4 check values, named beside each check.
import { describe, expect, it } from "vitest";
import { oxygenSchema, type OxygenConfig } from "../../src/config/sections/oxygen.js";
import { InertingEstimator, stateFromMargin, unitLimits } from "../../src/analytics/inerting.js";
import type { Trust } from "../../src/analytics/signal-state.js";

const ok = (value: number): Trust => ({ ok: true, value, reason: "" });
const bad = (reason: string, value: number | null = null): Trust => ({ ok: false, value, reason });
const oxy = (o: Record<string, unknown>): OxygenConfig => oxygenSchema.parse({ signal: "o2", ...o });

describe("wet/dry basis (DESIGN.md §4: O2_dry = O2_wet / (1 − x_H2O))", () => {
  it("10 % wet at 15 % H2O is 11.765 % dry against a dry LOC limit", () => {
    // DESIGN.md §4 check value: 10 / 0.85 = 11.765 % dry. LOC 15 % dry, continuous -> 13 % dry (NFPA 69, from memory).
    const e = new InertingEstimator(oxy({ h2oSignal: "h2o", loc: { pctVol: 15, basis: "dry", monitoring: "continuous", origin: "test report" } }), "wet");
    const r = e.evaluate(ok(10), ok(15));
    expect(r.ok).toBe(true);
    if (!r.ok) return;
    expect(Math.abs(r.governing.o2PctVol - 11.765)).toBeLessThan(0.0005);
    expect(r.governing.limit.basis).toBe("dry");
    expect(r.governing.marginPctPt).toBeCloseTo(13 - 10 / 0.85, 12);
    expect(r.h2oPctVol).toBe(15);
    expect(r.state).toBe("marginal"); // margin 1.235 < band 1.5
  });

  it("a dry reading of 11.765 % at 15 % H2O is 10 % wet against a wet site maximum", () => {
    // DESIGN.md §4, the same check value the other way: O2_wet = O2_dry · (1 − x_H2O).
    const e = new InertingEstimator(oxy({ h2oSignal: "h2o", siteMaximum: { pctVol: 12, basis: "wet", origin: "common practice" } }), "dry");
    const r = e.evaluate(ok(10 / 0.85), ok(15));
    expect(r.ok && r.governing.o2PctVol).toBeCloseTo(10, 12);
    expect(r.ok && r.state).toBe("inert"); // margin 2 >= band 1.5
  });

  it("each limit on its own basis; the smaller margin governs", () => {
    // Site maximum 12 % wet, LOC 15 % dry continuous -> 13 % dry. O2 9.5 % wet at 10 % H2O is
    // 10.556 % dry: margins 2.5 (wet) and 2.444 (dry), so the LOC governs (DESIGN.md §4).
    const e = new InertingEstimator(
      oxy({
        h2oSignal: "h2o",
        siteMaximum: { pctVol: 12, basis: "wet", origin: "explosion-protection document" },
        loc: { pctVol: 15, basis: "dry", monitoring: "continuous", origin: "EN 14034-4 test" },
      }),
      "wet",
    );
    const r = e.evaluate(ok(9.5), ok(10));
    if (!r.ok) throw new Error(r.reason);
    expect(r.comparisons.map((c) => [c.limit.id, c.marginPctPt])).toEqual([
      ["site-maximum", 2.5],
      ["loc", expect.closeTo(13 - 9.5 / 0.9, 12)],
    ]);
    expect(r.governing.limit.id).toBe("loc");
    expect(r.governing.limit.text).toMatch(/LOC 15 % dry with the NFPA 69 margin, continuous monitoring \(EN 14034-4 test\)/);
  });

  it("is unknown when the H2O needed for the conversion cannot be trusted, never safe", () => {
    const e = new InertingEstimator(oxy({ h2oSignal: "h2o", loc: { pctVol: 15, monitoring: "continuous", origin: "test" } }), "wet");
    for (const h of [bad("h2o: no data for 10 s"), bad("h2o: uncertain (drift)", 12), null]) {
      const r = e.evaluate(ok(5), h);
      expect(r.state).toBe("unknown");
      expect(r.reason).toMatch(/no trusted H2O for the wet-to-dry conversion/);
    }
  });

  it("is unknown when the O2 itself cannot be trusted, even with an uncertain value", () => {
    const e = new InertingEstimator(oxy({ siteMaximum: { pctVol: 8, basis: "dry", origin: "x site" } }), "dry");
    expect(e.evaluate(bad("o2: uncertain (calibration due)", 3), null).state).toBe("unknown");
    expect(e.evaluate(bad("o2: analyser in function check"), null).reason).toMatch(/function check/);
  });

  it("a reading the conversion refuses (below zero from zero drift) is unknown with the reason, not a crash", () => {
    const e = new InertingEstimator(oxy({ h2oSignal: "h2o", loc: { pctVol: 15, monitoring: "continuous", origin: "test" } }), "wet");
    const r = e.evaluate(ok(-0.2), ok(10));
    expect(r.state).toBe("unknown");
    expect(r.reason).toMatch(/cannot be put on the dry basis/);
  });
});

describe("the limit: NFPA 69 margin below the LOC (from memory: verify the clause against the edition in force)", () => {
  // DESIGN.md §4 check values: LOC 12 continuous -> 10.0; not continuous -> 7.2; LOC 4 -> 2.4 / 1.6.
  it.each([
    [12, "continuous", 10.0],
    [12, "periodic", 7.2],
    [4, "continuous", 2.4],
    [4, "periodic", 1.6],
  ] as const)("LOC %d %% with %s monitoring gives a limit of %d %%", (loc, monitoring, expected) => {
    const [l] = unitLimits(oxy({ loc: { pctVol: loc, monitoring, origin: "EN 14034-4 test report" } }));
    expect(l!.pctVol).toBeCloseTo(expected, 12);
    expect(l!.monitoring).toBe(monitoring);
    expect(l!.origin).toBe("EN 14034-4 test report");
  });

  it("the site maximum governs when it is lower, and its origin is shown", () => {
    // Site maximum 8 % dry below the LOC limit 10 % dry (LOC 12 continuous, NFPA 69 from memory).
    const e = new InertingEstimator(
      oxy({ siteMaximum: { pctVol: 8, basis: "dry", origin: "explosion-protection document rev. C" }, loc: { pctVol: 12, monitoring: "continuous", origin: "lab" } }),
      "dry",
    );
    const r = e.evaluate(ok(5), null);
    expect(r.ok && r.governing.limit.id).toBe("site-maximum");
    expect(r.ok && r.governing.marginPctPt).toBe(3);
    expect(e.lowestLimit().text).toBe("site maximum 8 % dry (explosion-protection document rev. C)");
  });

  it("the temperature allowance comes off the LOC-based limit", () => {
    // NFPA 69 (from memory): LOC 12 % continuous -> 10 %; less a configured 1.5 %-pt allowance -> 8.5 %.
    const o = oxy({ loc: { pctVol: 12, monitoring: "continuous", origin: "lab at 60 °C", temperatureAllowancePctPt: 1.5, temperatureAllowanceOrigin: "site hazard study: process runs to 110 °C" } });
    const [l] = unitLimits(o);
    expect(l!.pctVol).toBeCloseTo(8.5, 12);
    expect(l!.temperatureAllowancePctPt).toBe(1.5);
    expect(l!.text).toMatch(/less a temperature allowance of 1\.5 %-pt \(site hazard study: process runs to 110 °C\)/);
    // 9 % O2 is marginal against 10 % but above 8.5 %: not inert once the allowance applies.
    expect(new InertingEstimator(o, "dry").evaluate(ok(9), null).state).toBe("not-inert");
    const without = oxy({ loc: { pctVol: 12, monitoring: "continuous", origin: "lab" } });
    expect(new InertingEstimator(without, "dry").evaluate(ok(9), null).state).toBe("marginal");
  });
});

describe("state from the margin", () => {
  it("inert at or beyond the band, marginal from the limit up to the band, not inert above the limit", () => {
    // Definitions of the states (DESIGN.md §4, our own names).
    expect(stateFromMargin(1.5, 1.5)).toBe("inert");
    expect(stateFromMargin(1.49, 1.5)).toBe("marginal");
    expect(stateFromMargin(0, 1.5)).toBe("marginal");
    expect(stateFromMargin(-0.01, 1.5)).toBe("not-inert");
  });
});
