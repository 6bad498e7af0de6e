// The oxygen keys of a unit: one analyser or redundant ones with a vote, the temperature
// allowance on the LOC, the trend window and the purge. Bad input names file:line, the key,
// what was expected and what was found.
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadConfig, parseConfig } from "../../src/config/load.js";
import { derivedQuantities } from "../../src/core/quantities.js";
import { problemsOf, lineOf, SITE_AND_SOURCE } from "./helpers.js";

const head = `${SITE_AND_SOURCE}signals:
  - { id: a.o2, name: O2 A, tag: AT-1A, source: m, topic: t/1, unit: pctVol, basis: dry, expectedPeriodS: 1 }
  - { id: b.o2, name: O2 B, tag: AT-1B, source: m, topic: t/2, unit: pctVol, basis: dry, expectedPeriodS: 1 }
  - { id: c.o2, name: O2 C, tag: AT-1C, source: m, topic: t/3, unit: pctVol, basis: dry, expectedPeriodS: 1 }
  - { id: w.o2, name: O2 wet, tag: AT-2, source: m, topic: t/4, unit: pctVol, basis: wet, expectedPeriodS: 1 }
  - { id: n.o2, name: O2 no basis, tag: AT-3, source: m, topic: t/5, unit: pctVol, expectedPeriodS: 1 }
  - { id: n2.flow, name: N2 flow, tag: FT-5, source: m, topic: t/6, unit: Nm3/h, expectedPeriodS: 1 }
  - { id: feed, name: Feed, tag: WI-6, source: m, topic: t/7, unit: t/h, expectedPeriodS: 1 }
units:
  - id: u1
    name: Mill
    kind: mill
    oxygen:
`;

/** A config whose unit u1 has these oxygen lines (indented under oxygen:). */
const withOxygen = (lines: string[], tail = "") => head + lines.map((l) => `      ${l}\n`).join("") + tail;
const LIMIT = "siteMaximum: { pctVol: 10, basis: dry, origin: explosion-protection document }";


describe("valid oxygen configs", () => {
  it("one analyser with defaults for the band and the trend", () => {
    const cfg = parseConfig(withOxygen(["signal: a.o2", LIMIT]), "plant.yaml");
    expect(cfg.units[0]!.oxygen).toMatchObject({ signal: "a.o2", marginalBandPctPt: 1.5, trendWindowS: 300, trendMaxGapS: 30 });
  });

  it("redundant analysers with a vote, a temperature allowance and a purge; the derived keys are listed", () => {
    const text = withOxygen([
      "signals: [a.o2, b.o2, c.o2]",
      "voting: 2oo3",
      "disagreeLimitPctPt: 0.5",
      "loc: { pctVol: 12, monitoring: continuous, origin: EN 14034-4 test at 60 °C, temperatureAllowancePctPt: 1, temperatureAllowanceOrigin: site hazard study }",
      "trendWindowS: 600",
      "purge: { volumeM3: 450, inertFlowSignal: n2.flow, inertO2PctVol: 0.01, targetO2PctVol: 8, flowOnNm3PerH: 100 }",
    ]);
    const cfg = parseConfig(text, "plant.yaml");
    expect(cfg.units[0]!.oxygen!.signals).toEqual(["a.o2", "b.o2", "c.o2"]);
    expect(derivedQuantities(cfg).map((q) => q.key)).toEqual([
      "o2.u1.o2PctVol",
      "o2.u1.marginPctPt",
      "o2.u1.trendPctPtPerMin",
      "o2.u1.timeToLimitS",
      "o2.u1.purgeVolumeChanges",
    ]);
  });

  it("a rule may watch the time to limit; the purge key exists only with a purge", () => {
    const rule = (q: string) =>
      `rules:\n  - { id: r1, title: T, quantity: ${q}, direction: low, tiers: { caution: 600, warning: 180 }, cause: c, consequence: c, check: c, origin: demo values }\n`;
    expect(parseConfig(withOxygen(["signal: a.o2", LIMIT], rule("o2.u1.timeToLimitS")), "plant.yaml").rules).toHaveLength(1);
    const p = problemsOf(withOxygen(["signal: a.o2", LIMIT], rule("o2.u1.purgeVolumeChanges")));
    expect(p[0]!.key).toBe("rules[0].quantity");
    expect(p[0]!.message).toMatch(/unknown quantity "o2\.u1\.purgeVolumeChanges"/);
  });

  it("the demo config has the vm2 purge on the inert gas flow and a time-to-limit rule", () => {
    const cfg = loadConfig(join(import.meta.dirname, "../../config/demo.yaml"));
    const vm2 = cfg.units.find((u) => u.id === "vm2")!.oxygen!;
    expect(vm2.purge).toMatchObject({ inertFlowSignal: "ig2.flow", volumeM3: 450 });
    expect(cfg.signals.find((s) => s.id === "ig2.flow")).toMatchObject({ tag: "IG2-FT-051", unit: "Nm3/h" });
    const r = cfg.rules.find((x) => x.quantity === "o2.vm2.timeToLimitS")!;
    expect(r).toMatchObject({ direction: "low", tiers: { caution: 600, warning: 180 } });
    expect(r.origin).toMatch(/site must confirm/);
  });
});

describe("oxygen config errors: file:line, key, expected, found", () => {
  it("signal and signals together", () => {
    const text = withOxygen(["signal: a.o2", "signals: [a.o2, b.o2]", "voting: highest", "disagreeLimitPctPt: 0.5", LIMIT]);
    const p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ file: "plant.yaml", line: lineOf(text, "signals: [a.o2"), key: "units[0].oxygen.signals" });
    expect(p[0]!.message).toMatch(/expected either signal \(one analyser\) or signals \(redundant analysers\), not both; found signal "a.o2" and signals \[a.o2, b.o2\]/);
  });

  it("neither signal nor signals", () => {
    const text = withOxygen([LIMIT]);
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: lineOf(text, "siteMaximum"), key: "units[0].oxygen" });
    expect(p[0]!.message).toMatch(/expected signal \(one O2 analyser\) or signals .*; found neither/);
  });

  it("voting or disagreeLimitPctPt with one analyser", () => {
    const text = withOxygen(["signal: a.o2", "voting: median", "disagreeLimitPctPt: 0.5", LIMIT]);
    const p = problemsOf(text);
    expect(p.map((x) => [x.key, x.line])).toEqual([
      ["units[0].oxygen.voting", lineOf(text, "voting:")],
      ["units[0].oxygen.disagreeLimitPctPt", lineOf(text, "disagreeLimitPctPt")],
    ]);
    expect(p[0]!.message).toMatch(/voting applies to redundant analysers under signals; this unit has one analyser \(signal "a.o2"\)/);
  });

  it("redundant analysers without voting and disagreeLimitPctPt", () => {
    const p = problemsOf(withOxygen(["signals: [a.o2, b.o2]", LIMIT]));
    expect(p.map((x) => x.message)).toEqual([
      expect.stringMatching(/expected voting \(highest, median or 2oo3\)/),
      expect.stringMatching(/expected disagreeLimitPctPt \(percentage points\)/),
    ]);
  });

  it("2oo3 with two analysers, a listed twice, and a single-entry list", () => {
    expect(problemsOf(withOxygen(["signals: [a.o2, b.o2]", "voting: 2oo3", "disagreeLimitPctPt: 0.5", LIMIT]))[0]!.message).toMatch(
      /2oo3 voting takes exactly 3 analysers; found 2/,
    );
    const twice = withOxygen(["signals:", "  - a.o2", "  - a.o2", "voting: highest", "disagreeLimitPctPt: 0.5", LIMIT]);
    const p = problemsOf(twice);
    expect(p[0]).toMatchObject({ key: "units[0].oxygen.signals[1]", line: lineOf(twice, "- a.o2") + 1 });
    expect(p[0]!.message).toMatch(/signal "a.o2" is listed twice/);
    const one = problemsOf(withOxygen(["signals: [a.o2]", "voting: highest", "disagreeLimitPctPt: 0.5", LIMIT]));
    expect(one[0]!.key).toBe("units[0].oxygen.signals");
    expect(one[0]!.message).toMatch(/>=2 items.*found a list of 1/);
  });

  it("analysers on different bases, a signal without a basis, an unknown signal", () => {
    const mixed = problemsOf(withOxygen(["signals: [a.o2, w.o2]", "voting: highest", "disagreeLimitPctPt: 0.5", "h2oSignal: c.o2", LIMIT]));
    expect(mixed[0]!.message).toMatch(/must read on one basis to be voted; found a.o2 dry, w.o2 wet/);
    const text = withOxygen(["signal: n.o2", LIMIT]);
    const nb = problemsOf(text);
    expect(nb[0]).toMatchObject({ key: "units[0].oxygen.signal", line: lineOf(text, "signal: n.o2") });
    expect(nb[0]!.message).toMatch(/O2 signal "n.o2" must declare its basis \(wet or dry\)/);
    const unknown = problemsOf(withOxygen(["signals: [a.o2, x.o2]", "voting: highest", "disagreeLimitPctPt: 0.5", LIMIT]));
    expect(unknown[0]).toMatchObject({ key: "units[0].oxygen.signals[1]" });
    expect(unknown[0]!.message).toMatch(/unknown signal "x.o2"/);
  });

  it("a temperature allowance that leaves no limit, or has no origin", () => {
    // NFPA 69 (from memory): LOC 4 % with continuous monitoring -> 2.4 %; an allowance of 2.5 leaves nothing.
    const text = withOxygen(["signal: a.o2", "loc:", "  pctVol: 4", "  monitoring: continuous", "  origin: lab", "  temperatureAllowancePctPt: 2.5", "  temperatureAllowanceOrigin: guess"]);
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ key: "units[0].oxygen.loc.temperatureAllowancePctPt", line: lineOf(text, "temperatureAllowancePctPt") });
    expect(p[0]!.message).toMatch(/expected an allowance below the NFPA 69 limit of 2\.4 % \(LOC 4 %, continuous monitoring\); found 2\.5 %-pt/);
    const noOrigin = problemsOf(withOxygen(["signal: a.o2", "loc: { pctVol: 12, monitoring: continuous, origin: lab, temperatureAllowancePctPt: 1 }"]));
    expect(noOrigin[0]!.message).toMatch(/expected temperatureAllowanceOrigin with temperatureAllowancePctPt/);
    const negative = problemsOf(withOxygen(["signal: a.o2", "loc: { pctVol: 12, monitoring: continuous, origin: lab, temperatureAllowancePctPt: -1, temperatureAllowanceOrigin: x y z }"]));
    expect(negative[0]!.key).toBe("units[0].oxygen.loc.temperatureAllowancePctPt");
    expect(negative[0]!.message).toMatch(/found number -1/);
  });

  it("a trend gap limit not shorter than the window", () => {
    const text = withOxygen(["signal: a.o2", LIMIT, "trendWindowS: 60", "trendMaxGapS: 60"]);
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ key: "units[0].oxygen.trendMaxGapS", line: lineOf(text, "trendMaxGapS") });
    expect(p[0]!.message).toMatch(/expected a gap limit shorter than the trend window \(60 s\); found 60 s/);
  });

  it("purge: unknown or wrong-unit flow signal, target not above the inert gas, target not below the limit, unknown key", () => {
    const purge = (p: string) => withOxygen(["signal: a.o2", LIMIT, `purge: { ${p} }`]);
    const base = "volumeM3: 450, inertO2PctVol: 0, flowOnNm3PerH: 100";
    const unknownFlow = purge(`${base}, inertFlowSignal: n3.flow, targetO2PctVol: 8`);
    const p1 = problemsOf(unknownFlow);
    expect(p1[0]).toMatchObject({ key: "units[0].oxygen.purge.inertFlowSignal", line: lineOf(unknownFlow, "purge:") });
    expect(p1[0]!.message).toMatch(/unknown signal "n3.flow"/);
    expect(problemsOf(purge(`${base}, inertFlowSignal: feed, targetO2PctVol: 8`))[0]!.message).toMatch(/signal "feed" is in t\/h, expected Nm3\/h/);
    expect(problemsOf(purge(`volumeM3: 450, inertO2PctVol: 2, flowOnNm3PerH: 100, inertFlowSignal: n2.flow, targetO2PctVol: 2`))[0]!.message).toMatch(
      /expected a target above the inert gas's O2 \(2 %\): purging only approaches it; found 2 %/,
    );
    expect(problemsOf(purge(`${base}, inertFlowSignal: n2.flow, targetO2PctVol: 10`))[0]!.message).toMatch(/expected a target below the unit's limit of 10 % dry; found 10 %/);
    const typo = purge(`${base}, inertFlowSignal: n2.flow, targetO2PctVol: 8, volumeM: 3`);
    const p5 = problemsOf(typo);
    expect(p5[0]).toMatchObject({ key: "units[0].oxygen.purge.volumeM", line: lineOf(typo, "purge:") });
    expect(p5[0]!.message).toMatch(/unknown key "volumeM"/);
    const missing = problemsOf(purge(`inertO2PctVol: 0, flowOnNm3PerH: 100, inertFlowSignal: n2.flow, targetO2PctVol: 8`));
    expect(missing[0]!.key).toBe("units[0].oxygen.purge.volumeM3");
    expect(missing[0]!.message).toMatch(/expected number.*found nothing/);
  });
});
