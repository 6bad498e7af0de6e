// The phase monitor through its Monitor interface, with a fake tick context standing in for
// the engine. There is no published standard for phase inference: the phases and their rules
// are this project's design (DESIGN.md §3, src/analytics/phase.ts), built around the hazard
// windows of DESIGN.md §1 (warm-up, first feed, planned stop, trip with coal left inside).
// The sequences are what a plant engineer would call each stretch on an invented mill.
import { describe, expect, it } from "vitest";
import type { UnitConfig } from "../../src/config/schema.js";
import type { TickContext } from "../../src/core/calculator.js";
import { PhaseMonitor, type PhaseView } from "../../src/analytics/phase-monitor.js";
import type { MillPhase } from "../../src/analytics/phase.js";
import type { Trust } from "../../src/analytics/signal-state.js";

const T0 = Date.UTC(2026, 2, 2, 4, 0, 0);

const mill: UnitConfig = {
  id: "vm1",
  name: "Mill VM1",
  kind: "mill",
  phase: {
    drivePower: "vm1.drive",
    feed: "vm1.feed",
    inletTemp: "vm1.tin",
    outletTemp: "vm1.tout",
    inertFlow: "n2.flow",
    trip: "vm1.trip",
    drivePowerRunningKW: 200,
    feedOnTPerH: 5,
    warmGasC: 120,
    inertFlowOnNm3PerH: 1000,
    minDwellS: 30,
    runEmptyS: 300,
    initialCoalInside: false,
  },
};
const filter: UnitConfig = { id: "bf1", name: "Filter BF1", kind: "bag-filter" };

type Plant = Record<string, number | null>;
const cold: Plant = { "vm1.drive": 0, "vm1.feed": 0, "vm1.tin": 15, "vm1.tout": 14, "n2.flow": 0, "vm1.trip": 0 };
const grinding: Plant = { "vm1.drive": 1500, "vm1.feed": 40, "vm1.tin": 230, "vm1.tout": 90, "n2.flow": 0, "vm1.trip": 0 };

/** A tick context whose trust reads the plant values (null = untrusted, with a reason). */
function ctxAt(nowMs: number, plant: Plant, emitted: string[]): TickContext {
  return {
    nowMs,
    trust: (id): Trust => {
      if (!(id in plant)) throw new Error(`the monitor asked for unconfigured signal ${id}`);
      const v = plant[id]!;
      return v === null ? { ok: false, value: null, reason: `${id}: no data for 9 s` } : { ok: true, value: v, reason: "" };
    },
    phase: () => null,
    emit: (key) => emitted.push(key),
    derived: () => undefined,
  };
}

/** Tick every 10 s from fromS to toS; returns the phase changes as [tS, phase] and the last view. */
function run(m: PhaseMonitor, fromS: number, toS: number, plant: (tS: number) => Plant) {
  const changes: [number, MillPhase][] = [];
  const emitted: string[] = [];
  let prev: MillPhase | null = null;
  for (let t = fromS; t <= toS; t += 10) {
    m.tick(ctxAt(T0 + t * 1000, plant(t), emitted));
    const p = m.phaseOf("vm1")!;
    if (p !== prev) changes.push([t, p]);
    prev = p;
  }
  const last: PhaseView = m.view().phases[0]!;
  return { changes, last, emitted };
}

describe("PhaseMonitor", () => {
  it("a start-up: standstill, warm-up when hot gas arrives, starting with the drive, grinding with the feed", () => {
    const m = new PhaseMonitor([filter, mill]);
    const { changes, last, emitted } = run(m, 0, 900, (t) => ({
      ...cold,
      "vm1.tin": t >= 60 ? 180 : 15, // hot-gas generator lit at 60 s
      "vm1.drive": t >= 600 ? 1500 : 0,
      "vm1.feed": t >= 700 ? 40 : 0,
    }));
    // Each threshold test counts after holding 30 s (minDwellS).
    expect(changes).toEqual([
      [0, "standstill-empty"],
      [90, "warm-up"],
      [630, "starting"],
      [730, "grinding"],
    ]);
    expect(last).toMatchObject({ id: "vm1", unitId: "vm1", phase: "grinding", sinceMs: T0 + 730_000 });
    expect(last.reason).toMatch(/drive running \(1500 kW >= 200 kW\) and feed on \(40 t\/h >= 5 t\/h\)/);
    expect(last.inputs).toMatchObject({ drivePowerKW: 1500, feedTPerH: 40, millInletTempC: 180, millOutletTempC: 14, trip: false, coalInside: true });
    // Phases are categorical: nothing numeric is emitted.
    expect(emitted).toEqual([]);
    // A unit without a phase has none; the view lists configured units only.
    expect(m.phaseOf("bf1")).toBeNull();
    expect(m.view().phases.map((p) => p.id)).toEqual(["vm1"]);
  });

  it("a trip with coal inside: standstill-loaded at once, and it stays loaded whatever the gas does", () => {
    const m = new PhaseMonitor([mill]);
    const { changes, last } = run(m, 0, 900, (t) => ({
      ...grinding,
      // The protection system trips the mill at 300 s: drive and feed drop, the trip reads 1 for 100 s.
      "vm1.drive": t >= 300 ? 0 : 1500,
      "vm1.feed": t >= 300 ? 0 : 40,
      "vm1.trip": t >= 300 && t < 400 ? 1 : 0,
      "vm1.tin": t >= 300 ? 150 : 230, // hot gas still arriving, cooling
      "n2.flow": t >= 500 ? 2500 : 0, // operators inert the tripped mill
    }));
    expect(changes).toEqual([
      [0, "grinding"],
      [300, "standstill-loaded"],
    ]);
    expect(last.reason).toMatch(/drive stopped, coal inside \(tripped before the mill ran empty\) \(inert gas flowing, hot gas at the inlet\)/);
    expect(last.inputs.coalInside).toBe(true);
    expect(last.sinceMs).toBe(T0 + 300_000);
  });

  it("a planned stop: stopping once the feed is off, empty after running empty, loaded when stopped too soon", () => {
    const stop = (driveOffS: number) => (t: number): Plant => ({
      ...grinding,
      "vm1.feed": t >= 300 ? 0 : 40,
      "vm1.drive": t >= driveOffS ? 0 : 1500,
    });
    const a = run(new PhaseMonitor([mill]), 0, 900, stop(700));
    // Feed off at 300 counts at 330; running empty takes runEmptyS = 300 s from 330 (630); drive off at 700 counts at 730.
    expect(a.changes).toEqual([
      [0, "grinding"],
      [330, "stopping"],
      [730, "standstill-empty"],
    ]);
    expect(a.last.reason).toMatch(/mill empty \(ran empty: drive ran 300 s without feed\)/);

    const b = run(new PhaseMonitor([mill]), 0, 900, stop(500));
    expect(b.changes).toEqual([
      [0, "grinding"],
      [330, "stopping"],
      [530, "standstill-loaded"],
    ]);
    expect(b.last.reason).toMatch(/the drive stopped before the mill ran empty/);
  });

  it("is unknown, naming the untrusted input, when the drive power cannot be trusted", () => {
    const m = new PhaseMonitor([mill]);
    const { changes, last } = run(m, 0, 60, (t) => ({ ...grinding, "vm1.drive": t >= 30 ? null : 1500 }));
    expect(changes).toEqual([
      [0, "grinding"],
      [30, "unknown"],
    ]);
    expect(last.reason).toMatch(/^drive power unknown; not trusted: vm1\.drive: no data for 9 s$/);
    expect(last.inputs.drivePowerKW).toBeNull();
  });

  it("a wall clock stepped back does not throw: time holds until it passes the last tick", () => {
    const m = new PhaseMonitor([mill]);
    m.tick(ctxAt(T0 + 100_000, grinding, []));
    expect(() => m.tick(ctxAt(T0 + 40_000, grinding, []))).not.toThrow();
    expect(m.view().phases[0]!.sinceMs).toBe(T0 + 100_000);
  });
});
