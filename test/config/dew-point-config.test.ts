// Config of moisture sources, dew point locations and acid dew points: valid forms parse,
// and every mistake is reported at file:line with the key, what was expected and what was found.
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadConfig, parseConfig } from "../../src/config/load.js";
import { derivedQuantities } from "../../src/core/quantities.js";
import { problemsOf, lineOf, SITE_AND_SOURCE } from "./helpers.js";

const base = `${SITE_AND_SOURCE}signals:
  - { id: gas.temp, name: Gas temperature, tag: TT-1, source: m, topic: t/1, unit: degC, expectedPeriodS: 1 }
  - { id: wall.temp, name: Wall temperature, tag: TT-2, source: m, topic: t/2, unit: degC, expectedPeriodS: 1 }
  - { id: h2o, name: H2O, tag: AT-3, source: m, topic: t/3, unit: pctVol, expectedPeriodS: 1 }
  - { id: rh, name: Humidity, tag: MT-4, source: m, topic: t/4, unit: pct, expectedPeriodS: 1 }
  - { id: feed, name: Coal feed, tag: WI-5, source: m, topic: t/5, unit: t/h, expectedPeriodS: 1 }
  - { id: flow, name: Gas flow, tag: FT-6, source: m, topic: t/6, unit: Nm3/h, expectedPeriodS: 1 }
  - { id: power, name: Drive power, tag: JI-7, source: m, topic: t/7, unit: kW, expectedPeriodS: 1 }
  - { id: so2, name: SO2, tag: AT-8, source: m, topic: t/8, unit: ppm, expectedPeriodS: 1 }
  - { id: gauge, name: Gauge pressure, tag: PT-9, source: m, topic: t/9, unit: mbar, expectedPeriodS: 1 }
units:
  - { id: u1, name: Filter, kind: bag-filter }
`;

const sources = `moistureSources:
  - { id: an, name: Analyser, kind: analyser, signal: h2o }
  - { id: hu, name: Humidity probe, kind: humidity, relativeHumidity: rh, temperature: gas.temp, gaugePressure: gauge }
  - id: mb
    name: Mill balance
    kind: mass-balance
    coalFeed: feed
    rawMoisture: { pctMass: 12 }
    productMoisture: { massFraction: 0.015 }
    gasFlowNm3PerH: { value: 70000 }
    incomingGasH2o: { pctVol: 7 }
`;

const dew = `dewPoints:
  - { id: d1, name: Outlet, unit: u1, gasTemperature: gas.temp, moisture: an, compareWith: [mb, hu], gaugePressure: gauge }
`;

const acid = `acidDewPoints:
  - id: a1
    name: Filter acid dew point
    unit: u1
    method: okkes
    moisture: an
    so3: { from: so2, signal: so2, conversionPct: 2 }
    coldestTemperatures: [gas.temp, wall.temp]
`;

const valid = base + sources + dew + acid;


/** 1-based line of the first line containing `marker`. */

/** The config with `from` replaced by `to` (which must occur exactly once). */
function edit(from: string, to: string, text = valid): string {
  expect(text.split(from)).toHaveLength(2);
  return text.replace(from, to);
}

describe("valid moisture sources, dew points and acid dew points", () => {
  it("parse, with defaults filled in", () => {
    const cfg = parseConfig(valid, "plant.yaml");
    expect(cfg.moistureSources.map((m) => m.kind)).toEqual(["analyser", "humidity", "mass-balance"]);
    const mb = cfg.moistureSources[2]!;
    expect(mb.kind === "mass-balance" && mb.gasFlowNm3PerH.measuredAt).toBe("mill-inlet");
    // DESIGN brief: the default trend window is 10 min.
    expect(cfg.dewPoints[0]).toMatchObject({ moisture: "an", compareWith: ["mb", "hu"], trendWindowS: 600 });
    expect(cfg.acidDewPoints[0]).toMatchObject({ method: "okkes", so3: { from: "so2", conversionPct: 2 } });
  });

  it("list the derived keys rules may watch", () => {
    const keys = derivedQuantities(parseConfig(valid, "plant.yaml")).map((q) => q.key);
    expect(keys).toEqual(
      expect.arrayContaining([
        "moisture.an.h2oPctVol",
        "moisture.mb.h2oPctVol",
        "dewpoint.d1.dewPointC",
        "dewpoint.d1.marginK",
        "dewpoint.d1.marginTrendKPerMin",
        "dewpoint.d1.timeToCondensationS",
        "dewpoint.d1.h2oDisagreementPctVol",
        "dewpoint.d1.dewPointDisagreementK",
        "dewpoint.lowest.marginK",
        "dewpoint.lowest.timeToCondensationS",
        "aciddewpoint.a1.so3Ppm",
        "aciddewpoint.a1.acidDewPointC",
        "aciddewpoint.a1.marginK",
      ]),
    );
  });

  it("the acid dew point example config loads (and the demo still does)", () => {
    const dir = join(import.meta.dirname, "../../config");
    const example = loadConfig(join(dir, "example-acid-dew-point.yaml"));
    expect(example.acidDewPoints.map((a) => a.so3.from)).toEqual(["fuel-sulfur", "so2"]);
    const demo = loadConfig(join(dir, "demo.yaml"));
    expect(demo.dewPoints.find((d) => d.id === "bf2-outlet")).toMatchObject({ moisture: "bf2-h2o", compareWith: ["vm2-balance"] });
    expect(demo.moistureSources.find((m) => m.id === "bf2-h2o")).toMatchObject({ kind: "analyser", signal: "bf2.outlet.h2o" });
  });
});

describe("moisture source mistakes", () => {
  it("an unknown kind names the kinds there are", () => {
    const text = edit("kind: analyser, signal: h2o", "kind: analyzer, signal: h2o");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ file: "plant.yaml", line: lineOf(text, "kind: analyzer"), key: "moistureSources[0].kind" });
    expect(p[0]!.message).toMatch(/'analyser' \| 'humidity' \| 'mass-balance'.*found string "analyzer"/);
  });

  it("a misspelt key in a mass balance is reported at its own line", () => {
    const text = edit("    coalFeed: feed\n", "    coalFeedTPerH: feed\n");
    const p = problemsOf(text);
    expect(p.find((x) => x.key === "moistureSources[2].coalFeedTPerH")).toMatchObject({ line: lineOf(text, "coalFeedTPerH"), message: expect.stringMatching(/unknown key "coalFeedTPerH"/) });
  });

  it("a moisture given both as a constant and a signal is refused", () => {
    const text = edit("rawMoisture: { pctMass: 12 }", "rawMoisture: { pctMass: 12, signal: rh }");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: lineOf(text, "rawMoisture"), key: "moistureSources[2].rawMoisture" });
    expect(p[0]!.message).toMatch(/expected exactly one of pctMass, massFraction, signal .*; found pctMass and signal/);
  });

  it("a gas flow with neither a value nor a signal is refused", () => {
    const text = edit("gasFlowNm3PerH: { value: 70000 }", "gasFlowNm3PerH: { measuredAt: mill-outlet }");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: lineOf(text, "gasFlowNm3PerH"), key: "moistureSources[2].gasFlowNm3PerH" });
    expect(p[0]!.message).toMatch(/expected exactly one of value, signal .*; found none of them/);
  });

  it("a product moisture above the raw moisture is refused", () => {
    const text = edit("productMoisture: { massFraction: 0.015 }", "productMoisture: { pctMass: 14 }");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: lineOf(text, "productMoisture"), key: "moistureSources[2].productMoisture" });
    expect(p[0]!.message).toMatch(/product moisture \(14 %\) at most the raw moisture \(12 %\)/);
  });

  it("signals in the wrong unit say which unit was expected", () => {
    const cases: [string, string, string, RegExp][] = [
      ["coalFeed: feed", "coalFeed: power", "moistureSources[2].coalFeed", /signal "power" is in kW, expected t\/h/],
      ["relativeHumidity: rh", "relativeHumidity: h2o", "moistureSources[1].relativeHumidity", /signal "h2o" is in pctVol, expected pct/],
      ["kind: analyser, signal: h2o", "kind: analyser, signal: rh", "moistureSources[0].signal", /signal "rh" is in pct, expected % vol/],
      ["gasFlowNm3PerH: { value: 70000 }", "gasFlowNm3PerH: { signal: feed }", "moistureSources[2].gasFlowNm3PerH.signal", /signal "feed" is in t\/h, expected Nm3\/h/],
      ["incomingGasH2o: { pctVol: 7 }", "incomingGasH2o: { signal: so2 }", "moistureSources[2].incomingGasH2o.signal", /signal "so2" is in ppm, expected % vol/],
    ];
    for (const [from, to, key, message] of cases) {
      const text = edit(from, to);
      const p = problemsOf(text);
      expect(p).toHaveLength(1);
      expect(p[0]).toMatchObject({ key, line: lineOf(text, to) });
      expect(p[0]!.message).toMatch(message);
    }
  });

  it("a duplicate source id names the first use", () => {
    const text = edit("{ id: hu, name: Humidity probe", "{ id: an, name: Humidity probe");
    const p = problemsOf(text);
    expect(p.find((x) => x.key === "moistureSources[1].id")).toMatchObject({ line: lineOf(text, "Humidity probe"), message: expect.stringMatching(/duplicate id "an" \(first used at moistureSources\[0\]\)/) });
  });
});

describe("dew point location mistakes", () => {
  it("an unknown moisture source lists the sources there are", () => {
    const text = edit("moisture: an, compareWith", "moisture: anx, compareWith");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: lineOf(text, "moisture: anx"), key: "dewPoints[0].moisture" });
    expect(p[0]!.message).toMatch(/unknown moisture source "anx": expected one of the ids under moistureSources \(an, hu, mb\)/);
  });

  it("the old h2o key is refused and without sources the message says to add one", () => {
    const text = base + `dewPoints:\n  - { id: d1, name: Outlet, unit: u1, gasTemperature: gas.temp, h2o: h2o }\n`;
    const p = problemsOf(text);
    expect(p.find((x) => x.key === "dewPoints[0].h2o")!.message).toMatch(/unknown key "h2o"/);
    const text2 = base + `dewPoints:\n  - { id: d1, name: Outlet, unit: u1, gasTemperature: gas.temp, moisture: an }\n`;
    const p2 = problemsOf(text2);
    expect(p2[0]).toMatchObject({ key: "dewPoints[0].moisture", line: lineOf(text2, "moisture: an") });
    expect(p2[0]!.message).toMatch(/no moistureSources are configured; add one \(kind analyser, humidity or mass-balance\)/);
  });

  it("compareWith may not name the location's own source, a source twice, or an unknown one", () => {
    const cases: [string, string, RegExp][] = [
      ["compareWith: [an, hu]", "dewPoints[0].compareWith[0]", /"an" is this location's own moisture source/],
      ["compareWith: [mb, mb]", "dewPoints[0].compareWith[1]", /"mb" is listed twice/],
      ["compareWith: [mb, nope]", "dewPoints[0].compareWith[1]", /unknown moisture source "nope"/],
    ];
    for (const [to, key, message] of cases) {
      const text = edit("compareWith: [mb, hu]", to);
      const p = problemsOf(text);
      expect(p).toHaveLength(1);
      expect(p[0]).toMatchObject({ key, line: lineOf(text, to) });
      expect(p[0]!.message).toMatch(message);
    }
  });

  it('the id "lowest" is kept for the plant-wide keys', () => {
    const text = edit("{ id: d1, name: Outlet", "{ id: lowest, name: Outlet");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ key: "dewPoints[0].id", line: lineOf(text, "id: lowest") });
    expect(p[0]!.message).toMatch(/kept for the plant-wide keys/);
  });

  it("a trend span longer than its window is refused", () => {
    const text = edit("compareWith: [mb, hu], gaugePressure: gauge }", "compareWith: [mb, hu], gaugePressure: gauge, trendWindowS: 300, trendMinSpanS: 400 }");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ key: "dewPoints[0].trendMinSpanS", line: lineOf(text, "trendMinSpanS") });
    expect(p[0]!.message).toMatch(/expected at most trendWindowS \(300 s\); found 400 s/);
  });
});

describe("acid dew point mistakes", () => {
  it("an unknown method names the two correlations", () => {
    const text = edit("method: okkes", "method: magnus");
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ key: "acidDewPoints[0].method", line: lineOf(text, "method: magnus") });
    expect(p[0]!.message).toMatch(/"verhoff-banchero"\|"okkes"|verhoff-banchero.*okkes/);
  });

  it("an SO2 signal in % vol, a fuel feed in kW, an empty temperature list and a duplicate temperature are refused", () => {
    const cases: [string, string, string, RegExp][] = [
      ["so3: { from: so2, signal: so2, conversionPct: 2 }", "so3: { from: so2, signal: h2o, conversionPct: 2 }", "acidDewPoints[0].so3.signal", /signal "h2o" is in pctVol, expected ppm \(SO2\)/],
      [
        "so3: { from: so2, signal: so2, conversionPct: 2 }",
        "so3: { from: fuel-sulfur, fuelFeed: power, sulfurPctMass: 1, gasFlowNm3PerH: { value: 20000 }, conversionPct: 2 }",
        "acidDewPoints[0].so3.fuelFeed",
        /signal "power" is in kW, expected t\/h \(fuel feed\)/,
      ],
      ["coldestTemperatures: [gas.temp, wall.temp]", "coldestTemperatures: []", "acidDewPoints[0].coldestTemperatures", />=1 items/],
      ["coldestTemperatures: [gas.temp, wall.temp]", "coldestTemperatures: [gas.temp, gas.temp]", "acidDewPoints[0].coldestTemperatures[1]", /listed twice/],
      ["coldestTemperatures: [gas.temp, wall.temp]", "coldestTemperatures: [gas.temp, h2o]", "acidDewPoints[0].coldestTemperatures[1]", /signal "h2o" is in pctVol, expected a temperature unit/],
      ["so3: { from: so2, signal: so2, conversionPct: 2 }", "so3: { from: so2, signal: so2 }", "acidDewPoints[0].so3.conversionPct", /expected number.*found nothing/],
      ["so3: { from: so2, signal: so2, conversionPct: 2 }", "so3: { from: sulfur, signal: so2 }", "acidDewPoints[0].so3.from", /'measured' \| 'so2' \| 'fuel-sulfur'/],
    ];
    for (const [from, to, key, message] of cases) {
      const text = edit(from, to);
      const p = problemsOf(text);
      expect(p).toHaveLength(1);
      expect(p[0]).toMatchObject({ key, line: lineOf(text, to.slice(0, 20)) });
      expect(p[0]!.message).toMatch(message);
    }
  });

  it("an unknown moisture source and unit are named", () => {
    const text = edit("    moisture: an\n    so3", "    moisture: wet\n    so3").replace("    unit: u1\n    method", "    unit: u9\n    method");
    const p = problemsOf(text);
    expect(p.map((x) => x.key)).toEqual(["acidDewPoints[0].unit", "acidDewPoints[0].moisture"]);
    expect(p[0]!.line).toBe(lineOf(text, "unit: u9"));
    expect(p[1]!.message).toMatch(/unknown moisture source "wet"/);
  });
});
