// The CO sections of a config file: windows longer than the transport lag, store and rise
// cross-checks, each reported with file:line; the derived keys a config gives; the demo plant.
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { ConfigError, loadConfig, parseConfig } from "../../src/config/load.js";
import { derivedQuantities } from "../../src/core/quantities.js";

const BASE = `site: { name: Test works, plant: Line 1, barometricPressureHPa: 1013 }
sources:
  - { id: m, kind: mqtt, url: "mqtt://127.0.0.1:18830" }
signals:
  - { id: mill.co,  name: Mill CO,    tag: M-AT-1, source: m, topic: t/1, unit: ppm, expectedPeriodS: 1 }
  - { id: filt.co,  name: Filter CO,  tag: F-AT-1, source: m, topic: t/2, unit: ppm, expectedPeriodS: 1 }
  - { id: silo.co,  name: Silo CO,    tag: S-AT-1, source: m, topic: t/3, unit: ppm, expectedPeriodS: 10 }
  - { id: silo.o2,  name: Silo O2,    tag: S-AT-2, source: m, topic: t/4, unit: pctVol, basis: dry, expectedPeriodS: 10 }
  - { id: silo.n2,  name: Silo N2,    tag: S-AT-3, source: m, topic: t/5, unit: pctVol, expectedPeriodS: 10 }
  - { id: gas.src,  name: Gas source, tag: G-YI-1, source: m, topic: t/6, unit: state, expectedPeriodS: 1 }
  - { id: feed,     name: Feed,       tag: M-WI-1, source: m, topic: t/7, unit: t/h, expectedPeriodS: 1 }
units:
  - { id: mill, name: Mill, kind: mill }
  - { id: filt, name: Filter, kind: bag-filter }
  - { id: silo, name: Silo, kind: silo }
`;

function parse(coPart: string) {
  return parseConfig(BASE + coPart, "test.yaml");
}

function problems(coPart: string): string[] {
  try {
    parse(coPart);
  } catch (e) {
    if (e instanceof ConfigError) return e.message.split("\n");
    throw e;
  }
  throw new Error("expected a ConfigError");
}

/** 1-based line of the first line containing `needle` in the whole text. */
function lineOf(coPart: string, needle: string): number {
  const i = (BASE + coPart).split("\n").findIndex((l) => l.includes(needle));
  if (i < 0) throw new Error(`no line with ${needle}`);
  return i + 1;
}

const MILL = "  - { id: mill-out, name: Mill outlet, unit: mill, signal: mill.co, shortWindowS: 300, longWindowS: 900, transportLagS: 40 }\n";
const FILT = "  - { id: filt-out, name: Filter outlet, unit: filt, signal: filt.co, shortWindowS: 300, longWindowS: 900, transportLagS: 60 }\n";

describe("CO point windows", () => {
  it("a short window not longer than the transport lag is an error at its file:line", () => {
    const part = `coPoints:\n  - id: p\n    name: P\n    unit: mill\n    signal: mill.co\n    shortWindowS: 60\n    longWindowS: 900\n    transportLagS: 60\n`;
    const line = lineOf(part, "shortWindowS: 60");
    expect(problems(part)).toContain(`test.yaml:${line}:19: coPoints[0].shortWindowS: expected a window longer than the transport lag (60 s); found 60 s`);
  });

  it("so is a long window not longer than the lag or than the short window", () => {
    const part = `coPoints:\n  - id: p\n    name: P\n    unit: mill\n    signal: mill.co\n    shortWindowS: 300\n    longWindowS: 30\n    transportLagS: 40\n`;
    const msgs = problems(part);
    const line = lineOf(part, "longWindowS: 30");
    expect(msgs).toContain(`test.yaml:${line}:18: coPoints[0].longWindowS: expected a window longer than the transport lag (40 s); found 30 s`);
    expect(msgs).toContain(`test.yaml:${line}:18: coPoints[0].longWindowS: expected the long window longer than the short one (300 s); found 30 s`);
  });

  it("the single windowS of earlier configs is refused by name", () => {
    const part = `coPoints:\n  - { id: p, name: P, unit: mill, signal: mill.co, windowS: 300, shortWindowS: 300, longWindowS: 900, transportLagS: 40 }\n`;
    expect(problems(part).join("\n")).toMatch(/coPoints\[0\]\.windowS: unknown key "windowS"/);
  });

  it("defaults: minPoints 10, maxGapS 30, 1200 points per window, a 1 h baseline frozen in warm-up, inerting and starting", () => {
    const p = parse("coPoints:\n" + MILL).coPoints[0]!;
    expect(p).toMatchObject({ minPoints: 10, maxGapS: 30, maxPointsPerWindow: 1200, windowS: 300 });
    expect(p.baseline).toEqual({ windowS: 3600, decimateS: 60, minS: 900, freezePhases: ["warm-up", "inerting", "starting"], gasSourceFreezeS: 1800 });
  });
});

describe("baseline options", () => {
  it("the gas source must be a state signal, the phase unit a unit, the phases real phase names", () => {
    const part =
      "coPoints:\n  - { id: p, name: P, unit: mill, signal: mill.co, shortWindowS: 300, longWindowS: 900, transportLagS: 40, baseline: { gasSourceSignal: feed, phaseUnit: nowhere } }\n";
    const msgs = problems(part).join("\n");
    expect(msgs).toMatch(/coPoints\[0\]\.baseline\.gasSourceSignal: expected a state signal \(unit: state\) naming the gas source; "feed" is in t\/h/);
    expect(msgs).toMatch(/coPoints\[0\]\.baseline\.phaseUnit: unknown unit "nowhere"/);
    const bad = "coPoints:\n  - { id: p, name: P, unit: mill, signal: mill.co, shortWindowS: 300, longWindowS: 900, transportLagS: 40, baseline: { freezePhases: [warmup] } }\n";
    expect(problems(bad).join("\n")).toMatch(/coPoints\[0\]\.baseline\.freezePhases\[0\]/);
    const ok = parse("coPoints:\n  - { id: p, name: P, unit: mill, signal: mill.co, shortWindowS: 300, longWindowS: 900, transportLagS: 40, baseline: { gasSourceSignal: gas.src, gasSourceFreezeS: 600 } }\n");
    expect(ok.coPoints[0]!.baseline).toMatchObject({ gasSourceSignal: "gas.src", gasSourceFreezeS: 600, windowS: 3600 });
  });
});

describe("enclosed stores", () => {
  it("only on a silo or dust hopper; N2 from a signal or by difference, not both", () => {
    const part =
      "coPoints:\n" +
      "  - { id: m, name: M, unit: mill, signal: mill.co, shortWindowS: 300, longWindowS: 900, transportLagS: 40, store: { o2Signal: silo.o2 } }\n" +
      "  - { id: s, name: S, unit: silo, signal: silo.co, shortWindowS: 1800, longWindowS: 10800, transportLagS: 120, store: { o2Signal: silo.o2, n2Signal: silo.n2, n2ByDifference: true } }\n";
    const msgs = problems(part).join("\n");
    expect(msgs).toMatch(/coPoints\[0\]\.store: expected the point's unit to be an enclosed store \(kind silo or dust-hopper\); unit "mill" is a mill/);
    expect(msgs).toMatch(/coPoints\[1\]\.store\.n2ByDifference: expected either n2Signal or n2ByDifference: true, not both/);
  });

  it("the store keys: the ratio is listed only where N2 is known", () => {
    const none = parse("coPoints:\n  - { id: s, name: S, unit: silo, signal: silo.co, shortWindowS: 1800, longWindowS: 10800, transportLagS: 120, store: { o2Signal: silo.o2 } }\n");
    const keys = derivedQuantities(none).map((q) => q.key);
    expect(keys).toContain("co.s.riseLongPpmPerH");
    expect(keys).not.toContain("co.s.grahamRatio");
    const diff = parse("coPoints:\n  - { id: s, name: S, unit: silo, signal: silo.co, shortWindowS: 1800, longWindowS: 10800, transportLagS: 120, store: { o2Signal: silo.o2, n2ByDifference: true } }\n");
    expect(derivedQuantities(diff).find((q) => q.key === "co.s.grahamRatio")).toMatchObject({ unit: "%" });
  });
});

describe("rise across a unit", () => {
  it("inlet and outlet must be two different CO points; ids unique", () => {
    const part =
      "coPoints:\n" + MILL + FILT +
      "coRises:\n" +
      "  - { id: r, name: R, unit: filt, inlet: mill-out, outlet: nowhere, transportDelayS: 20 }\n" +
      "  - { id: r, name: R2, unit: filt, inlet: mill-out, outlet: mill-out, transportDelayS: 20 }\n";
    const msgs = problems(part).join("\n");
    expect(msgs).toMatch(/coRises\[0\]\.outlet: unknown CO point "nowhere": expected one of the ids under coPoints \(mill-out, filt-out\)/);
    expect(msgs).toMatch(/coRises\[1\]\.id: duplicate id "r" \(first used at coRises\[0\]\)/);
    expect(msgs).toMatch(/coRises\[1\]\.outlet: expected an outlet other than the inlet; found "mill-out" for both/);
  });

  it("gives every key a rule may watch", () => {
    const part =
      "coPoints:\n" + MILL + FILT +
      "coRises:\n  - { id: bf, name: Filter rise, unit: filt, inlet: mill-out, outlet: filt-out, transportDelayS: 20 }\n" +
      "rules:\n  - { id: co-rise, title: T, quantity: co-rise.bf.risePpm, direction: high, tiers: { caution: 50 }, cause: c, consequence: c, check: c, origin: common practice }\n" +
      "  - { id: co-base, title: T, quantity: co.filt-out.riseAboveBaselinePpm, direction: high, tiers: { caution: 75 }, cause: c, consequence: c, check: c, origin: common practice }\n";
    const cfg = parse(part);
    expect(cfg.coRises[0]).toMatchObject({ transportDelayS: 20, toleranceS: 5 });
    const keys = derivedQuantities(cfg).map((q) => q.key);
    for (const id of ["mill-out", "filt-out"]) {
      for (const q of ["gradientPpmPerMin", "gradientLsPpmPerMin", "gradientLongPpmPerMin", "baselinePpm", "riseAboveBaselinePpm"]) expect(keys).toContain(`co.${id}.${q}`);
    }
    expect(keys).toContain("co-rise.bf.risePpm");
  });
});

describe("the demo plant (config/demo.yaml)", () => {
  const cfg = loadConfig(join(import.meta.dirname, "../../config/demo.yaml"));

  it("keeps its CO point ids and rule ids, with the new rules on the baseline rise and the silo rate", () => {
    expect(cfg.coPoints.map((p) => p.id)).toEqual(["vm2-outlet", "bf2-outlet", "fs2"]);
    const rules = new Map(cfg.rules.map((r) => [r.id, r]));
    for (const id of ["co-gradient-bf2", "co-gradient-vm2", "co-level-bf2"]) expect(rules.has(id)).toBe(true);
    expect(rules.get("co-gradient-bf2")!.quantity).toBe("co.bf2-outlet.gradientPpmPerMin");
    // common practice: 50-100 ppm above baseline as caution, several hundred as warning
    expect(rules.get("co-baseline-bf2")).toMatchObject({ quantity: "co.bf2-outlet.riseAboveBaselinePpm", tiers: { caution: 75, warning: 300 } });
    expect(rules.get("co-baseline-bf2")!.origin).toMatch(/common practice/);
    // common practice: silo 10-20 ppm/h over 1-6 h
    const silo = rules.get("co-silo-fs2")!;
    expect(silo.quantity).toBe("co.fs2.riseLongPpmPerH");
    expect(silo.tiers!.caution).toBeGreaterThanOrEqual(10);
    expect(silo.tiers!.caution).toBeLessThanOrEqual(20);
    const fs2 = cfg.coPoints.find((p) => p.id === "fs2")!;
    expect(fs2.longWindowS).toBeGreaterThanOrEqual(3600);
    expect(fs2.longWindowS).toBeLessThanOrEqual(6 * 3600);
  });

  it("windows longer than each analyser's lag; the bag filter rise from the mill outlet", () => {
    for (const p of cfg.coPoints) {
      expect(p.shortWindowS).toBeGreaterThan(p.transportLagS);
      expect(p.longWindowS).toBeGreaterThan(p.shortWindowS);
    }
    expect(cfg.coRises).toEqual([expect.objectContaining({ inlet: "vm2-outlet", outlet: "bf2-outlet", unit: "bf2" })]);
    expect(derivedQuantities(cfg).map((q) => q.key)).toContain("co-rise.bf2.risePpm");
  });
});
