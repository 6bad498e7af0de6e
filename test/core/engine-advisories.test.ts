// Advisories through the engine: suppression by design (a rule's phases; an analyser in function
// check, NAMUR NE 107 category C), state rules on the phase, state changes reported, and the
// advisory states a restart restores. ISA-18.2 calls suppression by design "designed suppression":
// the advisory is not annunciated while the plant state makes it meaningless.
import { describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { Engine } from "../../src/core/engine.js";
import type { AdvisoryTransition, CoreEvent, Sample, StateChange } from "../../src/core/types.js";
import { quantitySignals } from "../../src/advisories/dependencies.js";
import { loadConfig } from "../../src/config/load.js";

const T0 = Date.UTC(2026, 2, 2, 4, 0, 0);

const config = `site: { name: Testfield, plant: Line 9, barometricPressureHPa: 1013 }
clock: data
sources:
  - { id: m, kind: mqtt, url: "mqtt://127.0.0.1:18831" }
signals:
  - { id: vm1.drive, name: Drive power, tag: JI-1, source: m, topic: t/1, unit: kW, expectedPeriodS: 1 }
  - { id: vm1.feed,  name: Coal feed,   tag: WI-2, source: m, topic: t/2, unit: t/h, expectedPeriodS: 1 }
  - { id: vm1.tin,   name: Inlet temperature, tag: TT-3, source: m, topic: t/3, unit: degC, expectedPeriodS: 1 }
  - { id: vm1.trip,  name: Mill trip, tag: XS-5, source: m, topic: t/5, unit: state, expectedPeriodS: 1 }
  - { id: vm1.o2,    name: Outlet O2 (wet), tag: AT-4, source: m, topic: t/4, unit: pctVol, basis: wet, expectedPeriodS: 1, analyser: vm1-a4 }
units:
  - id: vm1
    name: Mill VM1
    kind: mill
    phase: { drivePower: vm1.drive, feed: vm1.feed, inletTemp: vm1.tin, trip: vm1.trip, drivePowerRunningKW: 100, feedOnTPerH: 3, warmGasC: 100, minDwellS: 0, initialCoalInside: false }
    oxygen:
      signal: vm1.o2
      siteMaximum: { pctVol: 12, basis: wet, origin: test value }
analysers:
  - { id: vm1-a4, name: Mill outlet O2 analyser, frozenWindowS: 600, frozenEpsilon: 0.0001, phaseUnit: vm1 }
rules:
  - { id: o2-high-grinding, title: O2 high while grinding, unit: vm1, quantity: vm1.o2, direction: high, tiers: { caution: 9 }, phases: [grinding], cause: c, consequence: c, check: c, origin: test value }
  - { id: o2-margin, title: O2 margin small, unit: vm1, quantity: o2.vm1.marginPctPt, direction: low, tiers: { caution: 2 }, cause: c, consequence: c, check: c, origin: test value }
  - { id: loaded-standstill, title: Mill stopped with coal inside, unit: vm1, quantity: phase.vm1, states: [standstill-loaded], tier: notice, latching: true, cause: c, consequence: c, check: c, origin: test value }
`;
const cfg = parseConfig(config, "engine-advisories.yaml");

const sample = (signal: string, value: number, tMs: number, functionCheck = false): Sample => ({
  signal,
  value,
  quality: "good",
  sourceTimeMs: tMs,
  receiveTimeMs: tMs,
  ...(functionCheck ? { functionCheck } : {}),
});

interface Plant {
  driveKW: number;
  o2: number;
  trip?: boolean;
  cal?: boolean;
}
function run(e: Engine, from: number, to: number, plant: (k: number) => Plant): CoreEvent[] {
  const out: CoreEvent[] = [];
  for (let k = from; k <= to; k++) {
    const t = T0 + k * 1000;
    const p = plant(k);
    e.ingest(sample("vm1.drive", p.driveKW, t));
    e.ingest(sample("vm1.feed", p.driveKW > 0 ? 30 : 0, t));
    e.ingest(sample("vm1.tin", 200, t));
    e.ingest(sample("vm1.trip", p.trip ? 1 : 0, t));
    // A little noise so the analyser is never frozen.
    e.ingest(sample("vm1.o2", p.o2 + (k % 2) * 0.01, t, p.cal));
    out.push(...e.tick(t));
  }
  return out;
}
const transitions = (events: CoreEvent[], id: string) => events.filter((x): x is AdvisoryTransition => x.kind === "advisory" && x.advisoryId === id);

describe("suppression by design", () => {
  it("a rule with phases is suppressed outside them and raises once its phase comes", () => {
    const e = new Engine(cfg);
    // Warm-up (drive off, hot gas on), O2 high (air in the circuit): the grinding rule is suppressed, not raised.
    const off = run(e, 0, 60, () => ({ driveKW: 0, o2: 20 }));
    expect(transitions(off, "o2-high-grinding").map((t) => t.transition)).toEqual(["suppress"]);
    expect(e.currentAdvisories().find((a) => a.id === "o2-high-grinding")).toMatchObject({ state: "suppressed", suppressedBy: expect.stringMatching(/vm1 is warm-up; the rule applies in grinding/) });
    // Grinding with O2 still high: the suppression ends and the advisory is annunciated.
    const on = run(e, 61, 120, () => ({ driveKW: 500, o2: 10 }));
    const t = transitions(on, "o2-high-grinding");
    expect(t[0]).toMatchObject({ transition: "unsuppress", from: "suppressed", to: "unack" });
  });

  it("a rule whose value is unknown because its analyser is in function check is suppressed, not silently blind", () => {
    const e = new Engine(cfg);
    run(e, 0, 120, () => ({ driveKW: 500, o2: 8 }));
    const cal = run(e, 121, 180, () => ({ driveKW: 500, o2: 8, cal: true }));
    const margin = transitions(cal, "o2-margin");
    expect(margin[0]).toMatchObject({ transition: "suppress", to: "suppressed", why: expect.stringMatching(/function check/) });
    const back = run(e, 181, 240, () => ({ driveKW: 500, o2: 8 }));
    expect(transitions(back, "o2-margin")[0]).toMatchObject({ transition: "unsuppress", to: "normal" });
  });

  it("the rule's signals are read off the config", () => {
    expect(quantitySignals(cfg, "o2.vm1.marginPctPt")).toEqual(["vm1.o2"]);
    expect(quantitySignals(cfg, "vm1.o2")).toEqual(["vm1.o2"]);
    const demo = loadConfig("config/demo.yaml");
    // A CO rise follows its inlet and outlet points to their signals.
    const rise = demo.coRises[0]!;
    const want = [demo.coPoints.find((p) => p.id === rise.inlet)!.signal, demo.coPoints.find((p) => p.id === rise.outlet)!.signal].sort();
    expect(quantitySignals(demo, `co-rise.${rise.id}.risePpm`)).toEqual(expect.arrayContaining(want));
  });
});

describe("state rules and state changes", () => {
  it("reports each change of phase and inerting state once, and a latching state rule waits for reset", () => {
    const e = new Engine(cfg);
    const ev = [
      ...run(e, 0, 60, () => ({ driveKW: 500, o2: 8 })),
      // Trip with coal inside: standstill-loaded.
      ...run(e, 61, 200, () => ({ driveKW: 0, o2: 8, trip: true })),
    ];
    const phases = ev.filter((x): x is StateChange => x.kind === "state" && x.key === "phase.vm1").map((x) => x.value);
    expect(phases[0]).toBe("grinding");
    expect(phases).toContain("standstill-loaded");
    // No repeats back to back: only changes are reported.
    for (let i = 1; i < phases.length; i++) expect(phases[i]).not.toBe(phases[i - 1]);
    expect(transitions(ev, "loaded-standstill")[0]).toMatchObject({ transition: "raise", tier: "notice" });
    // Restarted and grinding again: the condition clears but the advisory stays latched.
    const later = run(e, 201, 400, () => ({ driveKW: 500, o2: 8 }));
    expect(transitions(later, "loaded-standstill").at(-1)).toMatchObject({ transition: "clear", to: "latched" });
    const r = e.command({ kind: "reset", advisoryId: "loaded-standstill", by: "shift lead", atMs: T0 + 401_000 });
    expect(r).toMatchObject({ ok: true, events: [{ transition: "reset", from: "latched", to: "normal" }] });
  });
});

describe("restart", () => {
  it("an acknowledged advisory comes back acknowledged and does not ring again; a shelve that ran out ends", () => {
    const e1 = new Engine(cfg);
    run(e1, 0, 120, () => ({ driveKW: 500, o2: 10.5 })); // margin 1.5 < 2: caution
    expect(e1.command({ kind: "ack", advisoryId: "o2-margin", by: "op", atMs: T0 + 121_000 })).toMatchObject({ ok: true });
    expect(e1.command({ kind: "shelve", advisoryId: "o2-high-grinding", by: "op", atMs: T0 + 121_000, reason: "known drift", durationS: 60 })).toMatchObject({ ok: true });
    const saved = JSON.parse(JSON.stringify(e1.persistAdvisories()));

    const e2 = new Engine(cfg);
    const r = e2.restoreAdvisories(saved, T0 + 600_000);
    expect(r.restored).toEqual(expect.arrayContaining(["o2-margin", "o2-high-grinding"]));
    expect(r.events).toEqual([expect.objectContaining({ transition: "unshelve", advisoryId: "o2-high-grinding", why: expect.stringMatching(/while millwarden was stopped/) })]);
    const after = run(e2, 600, 720, () => ({ driveKW: 500, o2: 10.5 }));
    expect(transitions(after, "o2-margin")).toEqual([]);
    expect(e2.currentAdvisories().find((a) => a.id === "o2-margin")).toMatchObject({ state: "ack", ackedBy: "op" });
  });

  it("a changed rule is not restored, and a shelve whose state was lost is ended visibly", () => {
    const e1 = new Engine(cfg);
    run(e1, 0, 120, () => ({ driveKW: 500, o2: 10.5 }));
    const saved = e1.persistAdvisories().map((p) => ({ ...p, ruleKey: "something else" }));
    const e2 = new Engine(cfg);
    const r = e2.restoreAdvisories(saved, T0 + 200_000, ["o2-high-grinding"]);
    expect(r.restored).toEqual([]);
    expect(r.dropped.length).toBeGreaterThan(0);
    expect(r.events).toEqual([expect.objectContaining({ transition: "unshelve", advisoryId: "o2-high-grinding", why: expect.stringMatching(/could not be restored/) })]);
  });
});

describe("a state that cannot be told", () => {
  it("neither clears nor raises a state rule: a tick of stale data leaves a latched advisory alone", () => {
    const e = new Engine(cfg);
    run(e, 0, 60, () => ({ driveKW: 500, o2: 8 }));
    run(e, 61, 200, () => ({ driveKW: 0, o2: 8, trip: true })); // standstill-loaded: the latching notice
    expect(e.currentAdvisories().find((a) => a.id === "loaded-standstill")).toMatchObject({ state: "unack", conditionActive: true });
    // No samples for 10 s: every signal stale, the phase "unknown".
    const gap: CoreEvent[] = [];
    for (let k = 201; k <= 210; k++) gap.push(...e.tick(T0 + k * 1000));
    expect(gap.filter((x): x is StateChange => x.kind === "state" && x.key === "phase.vm1").map((x) => x.value)).toContain("unknown");
    expect(transitions(gap, "loaded-standstill")).toEqual([]);
    // Data again, still stopped with coal inside: nothing rings again.
    expect(transitions(run(e, 211, 260, () => ({ driveKW: 0, o2: 8, trip: true })), "loaded-standstill")).toEqual([]);
  });
});

