// Analyser health through the engine: a signal whose analyser is not healthy is untrusted
// for every later monitor and rule, so what is built on it reads "unknown" (DESIGN.md §3:
// "a value that cannot be trusted makes the dependent indicator unknown, never safe"; a
// time-shared analyser holding a point at its last value is frozen, not calm).
// The order matters: phase first, then health with this tick's phase, then the indicators.
import { describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { Engine } from "../../src/core/engine.js";
import type { AdvisoryTransition, CoreEvent, Sample } from "../../src/core/types.js";

const T0 = Date.UTC(2026, 2, 2, 4, 0, 0);

const config = `site: { name: Testfield, plant: Line 9, barometricPressureHPa: 1013 }
clock: data
sources:
  - { id: m, kind: mqtt, url: "mqtt://127.0.0.1:18831" }
signals:
  - { id: vm1.drive, name: Drive power, tag: JI-1, source: m, topic: t/1, unit: kW, expectedPeriodS: 1 }
  - { id: vm1.feed,  name: Coal feed,   tag: WI-2, source: m, topic: t/2, unit: t/h, expectedPeriodS: 1 }
  - { id: vm1.tin,   name: Inlet temperature, tag: TT-3, source: m, topic: t/3, unit: degC, expectedPeriodS: 1 }
  - { id: vm1.o2,    name: Outlet O2 (wet), tag: AT-4, source: m, topic: t/4, unit: pctVol, basis: wet, expectedPeriodS: 1, analyser: vm1-a4 }
units:
  - id: vm1
    name: Mill VM1
    kind: mill
    phase: { drivePower: vm1.drive, feed: vm1.feed, inletTemp: vm1.tin, drivePowerRunningKW: 100, feedOnTPerH: 3, warmGasC: 100, minDwellS: 0, initialCoalInside: false }
    oxygen:
      signal: vm1.o2
      siteMaximum: { pctVol: 12, basis: wet, origin: test value }
analysers:
  - { id: vm1-a4, name: Mill outlet O2 analyser, frozenWindowS: 60, frozenEpsilon: 0.005, phaseUnit: vm1 }
rules:
  - { id: o2-high, title: O2 high, unit: vm1, quantity: vm1.o2, direction: high, tiers: { caution: 7.5 }, onDelayS: 90, cause: c, consequence: c, check: c, origin: test value }
`;
const cfg = parseConfig(config, "trust.yaml");

const sample = (signal: string, value: number, tMs: number): Sample => ({ signal, value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });

/** 1 Hz samples then a tick, for seconds [from, to]; `plant(k)` gives drive kW and O2 % wet. */
function run(e: Engine, from: number, to: number, plant: (k: number) => { driveKW: number; o2: number }): CoreEvent[] {
  const out: CoreEvent[] = [];
  for (let k = from; k <= to; k++) {
    const t = T0 + k * 1000;
    const p = plant(k);
    e.ingest(sample("vm1.drive", p.driveKW, t));
    e.ingest(sample("vm1.feed", p.driveKW > 0 ? 30 : 0, t));
    e.ingest(sample("vm1.tin", 200, t));
    e.ingest(sample("vm1.o2", p.o2, t));
    out.push(...e.tick(t));
  }
  return out;
}

const inerting = (e: Engine) => e.snapshot().units.find((u) => u.id === "vm1")!.inerting!;
const raises = (events: CoreEvent[]) => events.filter((x): x is AdvisoryTransition => x.kind === "advisory" && x.transition === "raise");

describe("trust through analyser health", () => {
  it("the inerting state on a frozen O2 analyser is unknown, and a rule on its value raises nothing", () => {
    const e = new Engine(cfg);
    // O2 held at exactly 8.00 % while the mill grinds: the analyser holds the point.
    const events = run(e, 0, 59, () => ({ driveKW: 1500, o2: 8 }));
    expect(e.snapshot().phases[0]!.phase).toBe("grinding");
    expect(inerting(e).state).toBe("inert"); // 12 % wet site maximum, margin 4 %-pt (above the 1.5 band)
    events.push(...run(e, 60, 200, () => ({ driveKW: 1500, o2: 8 })));
    // Frozen once 60 s of unbroken flat history lie behind: from the tick at 60 s.
    const v = inerting(e);
    expect(v.state).toBe("unknown");
    expect(v.reason).toMatch(/vm1\.o2: analyser vm1-a4 frozen \(vm1\.o2: no change larger than 0\.005 within 60 s while the plant runs/);
    expect(e.snapshot().analysers[0]).toMatchObject({ id: "vm1-a4", state: "frozen", sinceMs: T0 + 60_000, plantRunning: true });
    // O2 8 % stands above the rule's 7.5 % caution, but the on-delay (90 s) never completes on an untrusted value.
    expect(raises(events)).toEqual([]);
  });

  it("the same analyser alive (a few hundredths of noise) stays trusted: inert, and the rule raises after its on-delay", () => {
    const e = new Engine(cfg);
    const events = run(e, 0, 200, (k) => ({ driveKW: 1500, o2: 8 + 0.02 * (k % 3) }));
    expect(inerting(e).state).toBe("inert");
    expect(e.snapshot().analysers[0]!.state).toBe("ok");
    expect(raises(events).map((r) => [r.advisoryId, r.atMs - T0])).toEqual([["o2-high", 90_000]]);
  });

  it("the tick that stops the mill judges the analyser with the new phase: a standstill's flat value is not frozen", () => {
    const e = new Engine(cfg);
    run(e, 0, 99, () => ({ driveKW: 1500, o2: 8 }));
    expect(inerting(e).state).toBe("unknown");
    run(e, 100, 100, () => ({ driveKW: 0, o2: 8 })); // drive stops at 100 s (minDwellS 0)
    expect(e.snapshot().phases[0]).toMatchObject({ phase: "standstill-loaded", sinceMs: T0 + 100_000 });
    expect(e.snapshot().analysers[0]).toMatchObject({ state: "ok", plantRunning: false });
    expect(inerting(e).state).toBe("inert");
  });
});
