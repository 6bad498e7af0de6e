// Every file in config/ must parse; broken configs must say file:line:column, the key,
// what was expected and what was found.
import { readdirSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadConfig, parseConfig } from "../../src/config/load.js";
import { lineOf, problemsOf, SITE_AND_SOURCE } from "./helpers.js";

const CONFIG_DIR = join(import.meta.dirname, "../../config");
const configFiles = readdirSync(CONFIG_DIR).filter((f) => /\.ya?ml$/.test(f));

describe("every example config in config/", () => {
  it("there is at least the demo config", () => {
    expect(configFiles).toContain("demo.yaml");
  });
  for (const f of configFiles) {
    it(`${f} parses and validates`, () => {
      const cfg = loadConfig(join(CONFIG_DIR, f));
      expect(cfg.signals.length).toBeGreaterThan(0);
      expect(cfg.units.length).toBeGreaterThan(0);
    });
  }
});


const minimal = `${SITE_AND_SOURCE}signals:
  - { id: a.temp, name: Gas temperature, tag: TT-1, source: m, topic: t/1, unit: degC, expectedPeriodS: 1 }
  - { id: a.h2o, name: Moisture, tag: AT-2, source: m, topic: t/2, unit: pctVol, expectedPeriodS: 1 }
units:
  - { id: u1, name: Filter, kind: bag-filter }
`;

describe("config errors name file, line, key, expectation and finding", () => {
  it("the minimal config is valid", () => {
    expect(parseConfig(minimal, "plant.yaml").signals).toHaveLength(2);
  });

  it("a wrong type gives file:line:column and what was found", () => {
    const p = problemsOf(minimal.replace("barometricPressureHPa: 1013", "barometricPressureHPa: high"));
    expect(p).toHaveLength(1);
    expect(p[0]).toMatchObject({ file: "plant.yaml", line: 4, key: "site.barometricPressureHPa" });
    expect(p[0]!.message).toMatch(/expected number/);
    expect(p[0]!.message).toMatch(/found string "high"/);
  });

  it("an unknown unit names the list of known units and the line", () => {
    const p = problemsOf(minimal.replace("unit: degC", "unit: celsius"));
    expect(p[0]).toMatchObject({ line: 10, key: "signals[0].unit" });
    expect(p[0]!.message).toMatch(/degC/);
    expect(p[0]!.message).toMatch(/found string "celsius"/);
  });

  it("an unknown key is reported at its own line", () => {
    const p = problemsOf(minimal.replace("  plant: Line 1\n", "  plant: Line 1\n  plnat: typo\n"));
    expect(p[0]).toMatchObject({ line: 4, key: "site.plnat" });
    expect(p[0]!.message).toMatch(/unknown key "plnat"/);
  });

  it("a dangling reference names what exists", () => {
    const text = minimal + `moistureSources:\n  - { id: m1, name: Analyser, kind: analyser, signal: a.h2o_typo }\n`;
    const p = problemsOf(text);
    expect(p[0]).toMatchObject({ line: 15, key: "moistureSources[0].signal" });
    expect(p[0]!.message).toMatch(/unknown signal "a.h2o_typo".*a\.temp, a\.h2o/);
  });

  it("a signal of the wrong kind of unit is refused", () => {
    const text = minimal + `moistureSources:\n  - { id: m1, name: Analyser, kind: analyser, signal: a.h2o }\ndewPoints:\n  - { id: d1, name: Outlet, unit: u1, gasTemperature: a.h2o, moisture: m1 }\n`;
    expect(problemsOf(text)[0]!.message).toMatch(/in pctVol, expected a temperature unit/);
  });

  it("a rule on an unknown quantity suggests derived keys", () => {
    const text =
      minimal +
      `moistureSources:\n  - { id: m1, name: Analyser, kind: analyser, signal: a.h2o }\ndewPoints:\n  - { id: d1, name: Outlet, unit: u1, gasTemperature: a.temp, moisture: m1 }\n` +
      `rules:\n  - { id: r1, title: T, quantity: dewpoint.d1.margin, direction: low, tiers: { caution: 15 }, cause: c, consequence: c, check: c, origin: common practice }\n`;
    const p = problemsOf(text);
    expect(p[0]!.key).toBe("rules[0].quantity");
    expect(p[0]!.message).toMatch(/dewpoint\.d1\.marginK/);
  });

  it("tiers out of order are refused", () => {
    const text =
      minimal +
      `rules:\n  - { id: r1, title: T, quantity: a.temp, direction: high, tiers: { caution: 90, warning: 80 }, cause: c, consequence: c, check: c, origin: common practice }\n`;
    expect(problemsOf(text)[0]!.message).toMatch(/rising from notice to warning/);
  });

  describe("advisory rules", () => {
    const R = "cause: c, consequence: c, check: c, origin: common practice";
    it("a state rule needs a state key, values it can take, and one tier", () => {
      const bad = minimal + `rules:\n  - { id: r1, title: T, quantity: phase.u1, states: [grinding], tier: notice, ${R} }\n`;
      // u1 has no phase section: phase.u1 is no state key.
      expect(problemsOf(bad)[0]).toMatchObject({ key: "rules[0].quantity", message: expect.stringMatching(/unknown state "phase.u1"/) });
      const noTier = minimal + `rules:\n  - { id: r1, title: T, quantity: a.temp, states: [x], ${R} }\n`;
      expect(problemsOf(noTier).map((x) => x.message).join("\n")).toMatch(/needs tier:/);
    });
    it("a threshold rule needs direction and tiers, and no tier:", () => {
      const text = minimal + `rules:\n  - { id: r1, title: T, quantity: a.temp, ${R} }\n`;
      expect(problemsOf(text)[0]!.message).toMatch(/expected direction: \(high or low\) and tiers:/);
      const both = minimal + `rules:\n  - { id: r1, title: T, quantity: a.temp, direction: high, tiers: { caution: 1 }, tier: caution, ${R} }\n`;
      expect(problemsOf(both)[0]).toMatchObject({ key: "rules[0].tier" });
    });
    it("phases need a unit with a phase section", () => {
      const text = minimal + `rules:\n  - { id: r1, title: T, quantity: a.temp, direction: high, tiers: { caution: 1 }, phases: [grinding], ${R} }\n`;
      expect(problemsOf(text)[0]).toMatchObject({ key: "rules[0].phases", message: expect.stringMatching(/expected unit: or phaseUnit:/) });
      const unknownPhase = minimal + `rules:\n  - { id: r1, title: T, unit: u1, quantity: a.temp, direction: high, tiers: { caution: 1 }, phases: [milling], ${R} }\n`;
      expect(problemsOf(unknownPhase)[0]).toMatchObject({ key: "rules[0].phases[0]", line: lineOf(unknownPhase, "milling") });
    });
  });

  it("YAML syntax errors carry the position", () => {
    const p = problemsOf("site:\n  name: [unclosed\n");
    expect(p[0]!.file).toBe("plant.yaml");
    expect(p[0]!.message).toMatch(/YAML syntax/);
    expect(p[0]!.line).toBeGreaterThanOrEqual(2);
  });

  it("a missing file is a config error naming the path", () => {
    expect(() => loadConfig("/nonexistent/millwarden.yaml")).toThrow(/nonexistent\/millwarden.yaml.*cannot read/);
  });

  it("an O2 unit on another basis than its limit needs an H2O signal", () => {
    const text =
      minimal.replace("unit: pctVol, expectedPeriodS: 1 }", "unit: pctVol, expectedPeriodS: 1 }\n  - { id: a.o2, name: O2, tag: AT-3, source: m, topic: t/3, unit: pctVol, basis: dry, expectedPeriodS: 1 }") +
      `  - id: u2\n    name: Mill\n    kind: mill\n    oxygen:\n      signal: a.o2\n      siteMaximum: { pctVol: 12, basis: wet, origin: common practice }\n`;
    const p = problemsOf(text);
    expect(p[0]!.key).toBe("units[1].oxygen");
    expect(p[0]!.message).toMatch(/expected h2oSignal/);
  });
});

describe("thresholds per coal type", () => {
  const R = "cause: c, consequence: c, check: c, origin: common practice";
  const rule = `rules:\n  - { id: r1, title: T, quantity: a.temp, direction: high, tiersByCoal: { lignite: { caution: 70, warning: 75 }, hv-bituminous: { caution: 95, warning: 100 } }, ${R} }\n`;
  it("the site's coal picks the rule's tiers", () => {
    const text = minimal.replace("barometricPressureHPa: 1013", "barometricPressureHPa: 1013\n  coal: { type: lignite }") + rule;
    expect(parseConfig(text, "plant.yaml").rules[0]!.tiers).toEqual({ caution: 70, warning: 75 });
  });
  it("without site.coal, or for a coal the rule has no row for, the config is refused with the line", () => {
    const none = minimal + rule;
    expect(problemsOf(none)[0]).toMatchObject({ key: "rules[0].tiersByCoal", message: expect.stringMatching(/expected site\.coal\.type, one of lignite, hv-bituminous/) });
    const other = minimal.replace("barometricPressureHPa: 1013", "barometricPressureHPa: 1013\n  coal: { type: anthracite }") + rule;
    expect(problemsOf(other)[0]).toMatchObject({ line: lineOf(other, "tiersByCoal"), message: expect.stringMatching(/no thresholds for the site's coal "anthracite"/) });
  });
});
