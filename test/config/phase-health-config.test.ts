// Config of the operating phase (units[].phase) and the analysers (analysers:): a broken
// config names file:line:column, the key, what was expected and what was found.
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadConfig, parseConfig } from "../../src/config/load.js";
import { problemsOf, lineOf, SITE_AND_SOURCE } from "./helpers.js";

const base = `${SITE_AND_SOURCE}signals:
  - { id: d.power, name: Drive power, tag: JI-1, source: m, topic: t/1, unit: kW, expectedPeriodS: 1 }
  - { id: d.feed, name: Feed, tag: WI-2, source: m, topic: t/2, unit: t/h, expectedPeriodS: 1 }
  - { id: d.tin, name: Inlet temperature, tag: TT-3, source: m, topic: t/3, unit: degC, expectedPeriodS: 1 }
  - { id: d.n2, name: N2 flow, tag: FT-4, source: m, topic: t/4, unit: Nm3/h, expectedPeriodS: 1 }
  - { id: d.trip, name: Mill trip, tag: XS-5, source: m, topic: t/5, unit: state, expectedPeriodS: 1 }
  - { id: a.o2, name: O2, tag: AT-6, source: m, topic: t/6, unit: pctVol, basis: wet, expectedPeriodS: 1, analyser: a6 }
  - { id: a.co, name: CO, tag: AT-7, source: m, topic: t/7, unit: ppm, expectedPeriodS: 5, analyser: a6 }
  - { id: a.loop, name: O2 loop current, tag: AI-8, source: m, topic: t/8, unit: mA, expectedPeriodS: 1 }
  - { id: a.status, name: Analyser status, tag: XS-9, source: m, topic: t/9, unit: state, expectedPeriodS: 1 }
units:
  - id: vm1
    name: Mill
    kind: mill
    phase:
      drivePower: d.power
      feed: d.feed
      inletTemp: d.tin
      inertFlow: d.n2
      trip: d.trip
      drivePowerRunningKW: 100
      feedOnTPerH: 3
      warmGasC: 100
      inertFlowOnNm3PerH: 3000
      minDwellS: 10
  - { id: bf1, name: Filter, kind: bag-filter }
analysers:
  - { id: a6, name: Filter O2/CO analyser, frozenWindowS: 600, frozenEpsilon: 0.005, loopCurrentSignal: a.loop, functionCheckSignal: a.status, phaseUnit: vm1 }
`;


/** 1-based line of the first line containing `needle` in `text`. */

function edit(from: string, to: string): string {
  expect(base).toContain(from);
  return base.replace(from, to);
}

describe("phase and analyser config", () => {
  it("the base config is valid, with the defaults filled in", () => {
    const cfg = parseConfig(base, "plant.yaml");
    expect(cfg.units[0]!.phase).toMatchObject({ drivePower: "d.power", minDwellS: 10, initialCoalInside: true });
    expect(cfg.units[0]!.phase!.runEmptyS).toBeUndefined(); // the tracker's default (300 s) applies
    expect(cfg.analysers).toEqual([
      { id: "a6", name: "Filter O2/CO analyser", frozenWindowS: 600, frozenEpsilon: 0.005, loopCurrentSignal: "a.loop", functionCheckSignal: "a.status", phaseUnit: "vm1", settleS: 0 },
    ]);
    expect(parseConfig(base.replace(/analysers:\n.*\n$/, "").replace(/, analyser: a6/g, ""), "plant.yaml").analysers).toEqual([]);
  });

  it("a signal naming an undeclared analyser is refused at its line, with the declared ids", () => {
    const text = edit("unit: ppm, expectedPeriodS: 5, analyser: a6 }", "unit: ppm, expectedPeriodS: 5, analyser: a7 }");
    const p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ file: "plant.yaml", line: lineOf(text, "analyser: a7"), key: "signals[6].analyser" });
    expect(p[0]!.message).toBe('unknown analyser "a7": expected one of the ids under analysers (a6)');
  });

  it("analyser ids are lowercase ids, on the signal and under analysers", () => {
    const text = base.replace(/analyser: a6/g, "analyser: A6").replace("id: a6,", "id: A6,");
    const p = problemsOf(text);
    expect(p.map((x) => x.key)).toEqual(["signals[5].analyser", "signals[6].analyser", "analysers[0].id"]);
    expect(p[0]!.line).toBe(lineOf(text, "id: a.o2"));
    expect(p[2]!.line).toBe(lineOf(text, "id: A6,"));
    for (const x of p) expect(x.message).toMatch(/expected a lowercase id.*found string "A6"/);
  });

  it("a phase input in the wrong unit, or unknown, is refused at its key", () => {
    let text = edit("      feed: d.feed\n", "      feed: d.power\n");
    let p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ line: lineOf(text, "feed: d.power"), column: 13, key: "units[0].phase.feed" });
    expect(p[0]!.message).toBe('signal "d.power" is in kW, expected t/h');

    text = edit("      inletTemp: d.tin\n", "      inletTemp: d.n2\n");
    expect(problemsOf(text)[0]!.message).toBe('signal "d.n2" is in Nm3/h, expected a temperature unit (degC, K, degF)');
    text = edit("      trip: d.trip\n", "      trip: d.feed\n");
    expect(problemsOf(text)[0]!.message).toMatch(/signal "d\.feed" is in t\/h, expected unit "state" \(non-zero = tripped\)/);

    text = edit("      drivePower: d.power\n", "      drivePower: d.pwr\n");
    p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: lineOf(text, "d.pwr"), key: "units[0].phase.drivePower" });
    expect(p[0]!.message).toMatch(/^unknown signal "d\.pwr": expected one of the ids under signals \(d\.power, d\.feed/);
  });

  it("a misspelt or missing phase key, an inert flow without its threshold, a phase on a filter", () => {
    let text = edit("      drivePowerRunningKW: 100\n", "      drivePowerRunningkW: 100\n");
    let p = problemsOf(text);
    expect(p.map((x) => [x.key, x.line])).toContainEqual(["units[0].phase.drivePowerRunningkW", lineOf(text, "drivePowerRunningkW")]);
    expect(p.find((x) => x.key === "units[0].phase.drivePowerRunningKW")!.message).toMatch(/expected number.*found nothing/);

    text = edit("      inertFlowOnNm3PerH: 3000\n", "");
    p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ line: lineOf(text, "inertFlow: d.n2"), key: "units[0].phase.inertFlow" });
    expect(p[0]!.message).toMatch(/expected inertFlowOnNm3PerH with inertFlow/);

    text = edit("  - { id: bf1, name: Filter, kind: bag-filter }\n", "  - { id: bf1, name: Filter, kind: bag-filter, phase: { drivePower: d.power, feed: d.feed, inletTemp: d.tin, drivePowerRunningKW: 1, feedOnTPerH: 1, warmGasC: 100, minDwellS: 0 } }\n");
    p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ line: lineOf(text, "id: bf1"), key: "units[1].phase" });
    expect(p[0]!.message).toBe('an operating phase is inferred for mills only; unit "bf1" is a bag-filter');
  });

  it("the loop current must be in mA, the status a state signal, the phase unit a mill with a phase", () => {
    let text = edit("loopCurrentSignal: a.loop, functionCheckSignal: a.status", "loopCurrentSignal: a.status, functionCheckSignal: a.loop");
    let p = problemsOf(text);
    expect(p.map((x) => [x.key, x.line, x.message])).toEqual([
      ["analysers[0].loopCurrentSignal", lineOf(text, "id: a6,"), 'signal "a.status" is in state, expected mA (the loop current)'],
      ["analysers[0].functionCheckSignal", lineOf(text, "id: a6,"), 'signal "a.loop" is in mA, expected unit "state" (non-zero = in function check)'],
    ]);
    text = edit("phaseUnit: vm1 }", "phaseUnit: bf1 }");
    p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]!.key).toBe("analysers[0].phaseUnit");
    expect(p[0]!.message).toBe('unit "bf1" has no phase configured: expected a mill with units[].phase');
    text = edit("phaseUnit: vm1 }", "phaseUnit: vm9 }");
    expect(problemsOf(text)[0]!.message).toBe('unknown unit "vm9": expected one of vm1, bf1');
  });

  it("the frozen window holds at least 10 updates of the slowest signal; ids are unique; no analyser without a signal", () => {
    let text = edit("frozenWindowS: 600", "frozenWindowS: 40");
    let p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ key: "analysers[0].frozenWindowS", line: lineOf(text, "id: a6,") });
    expect(p[0]!.message).toBe('expected at least 10 expected periods of signal "a.co" (50 s); found 40 s');

    text = base + "  - { id: a6, name: Twin, frozenWindowS: 600, frozenEpsilon: 0 }\n  - { id: a9, name: Spare, frozenWindowS: 600, frozenEpsilon: 0 }\n";
    p = problemsOf(text);
    expect(p.map((x) => [x.key, x.line, x.message])).toEqual([
      ["analysers[1].id", lineOf(text, "id: a6, name: Twin"), 'duplicate id "a6" (first used at analysers[0])'],
      ["analysers[2].id", lineOf(text, "id: a9"), 'no signal names analyser "a9": expected at least one signal with analyser: a9'],
    ]);
  });

  it("a loop current or status signal belongs to its analyser through that key alone", () => {
    const text = edit("unit: mA, expectedPeriodS: 1 }", "unit: mA, expectedPeriodS: 1, analyser: a6 }");
    const p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]!.key).toBe("analysers[0].loopCurrentSignal");
    expect(p[0]!.message).toMatch(/signal "a\.loop" carries analyser: a6.*remove its analyser key/);
  });
});

describe("the demo config", () => {
  const demo = loadConfig(join(import.meta.dirname, "../../config/demo.yaml"));
  it("declares every analyser its signals name, and infers the phase of VM2 from its drive, feed, gas temperatures and N2 flow", () => {
    const declared = new Set(demo.analysers.map((a) => a.id));
    const named = new Set(demo.signals.flatMap((s) => (s.analyser ? [s.analyser] : [])));
    expect([...named].sort()).toEqual(["bf2-a213", "bf2-a215", "fs2-a313", "vm2-a113", "vm2-a114"]);
    expect([...declared].sort()).toEqual([...named].sort());
    expect(demo.units.find((u) => u.id === "vm2")!.phase).toMatchObject({
      drivePower: "vm2.drive.power",
      feed: "vm2.feed",
      inletTemp: "vm2.inlet.temp",
      outletTemp: "vm2.outlet.temp",
      inertFlow: "ig2.flow",
    });
  });
});
