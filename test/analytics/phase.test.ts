// Operating phase scenarios. There is no published standard for phase inference: the rules
// are this project's design (src/analytics/phase.ts), built around the hazard windows of
// DESIGN.md §1 (warm-up, first feed, planned stop, trip with coal inside, restart). The
// sequences below are what a plant engineer would call each stretch of a start-up, a trip and
// a planned stop on an invented vertical roller mill (Tarnholm Works, line 2).
import { describe, expect, it } from "vitest";
import { PhaseTracker, type MillPhase, type PhaseConfig, type PhaseInputs, type PhaseResult } from "../../src/analytics/phase.js";

const T0 = 1_700_000_000_000;
const cfg: PhaseConfig = {
  drivePowerRunningKW: 200,
  feedOnTPerH: 5,
  warmGasC: 120,
  inertFlowOnNm3PerH: 500,
  minDwellS: 30,
  runEmptyS: 300,
  initialCoalInside: false,
};

type Plant = Omit<PhaseInputs, "nowMs">;
const standstill: Plant = {
  drivePowerKW: 0,
  feedTPerH: 0,
  millInletTempC: 40,
  millOutletTempC: 35,
  inertFlowNm3PerH: 0,
  trip: false,
  maintenance: false,
};

/** Drive the tracker every 10 s; `plant(tS)` gives the inputs; returns the phase changes as [tS, phase]. */
function run(tr: PhaseTracker, fromS: number, toS: number, plant: (tS: number) => Plant): { changes: [number, MillPhase][]; last: PhaseResult } {
  const changes: [number, MillPhase][] = [];
  let last: PhaseResult | null = null;
  let prev: MillPhase | null = null;
  for (let t = fromS; t <= toS; t += 10) {
    last = tr.update({ nowMs: T0 + t * 1000, ...plant(t) });
    if (last.phase !== prev) changes.push([t, last.phase]);
    prev = last.phase;
  }
  return { changes, last: last! };
}

describe("PhaseTracker", () => {
  it("a start-up: standstill, warm-up, inerting, starting, grinding; short dips do not flicker", () => {
    const tr = new PhaseTracker(cfg);
    const plant = (t: number): Plant => ({
      ...standstill,
      millInletTempC: t >= 60 ? 180 : 40, // hot-gas generator lit at 60 s
      inertFlowNm3PerH: t >= 300 && !(t >= 400 && t < 420) ? 1200 : 0, // 20 s dip at 400 s
      drivePowerKW: t >= 600 ? 1500 : 0,
      feedTPerH: t >= 960 ? (t >= 1200 && t < 1220 ? 0 : 40) : t >= 900 ? 2 : 0, // ramp below 5 t/h, then on; 20 s dip
    });
    const { changes, last } = run(tr, 0, 1400, plant);
    // each change counts after its 30 s dwell
    expect(changes).toEqual([
      [0, "standstill-empty"],
      [90, "warm-up"],
      [330, "inerting"],
      [630, "starting"],
      [990, "grinding"],
    ]);
    expect(last.sinceMs).toBe(T0 + 990_000);
    expect(last.reason).toBe("drive running (1500 kW >= 200 kW) and feed on (40 t/h >= 5 t/h)");
    expect(last.inputs).toMatchObject({ driveRunning: true, feedOn: true, coalInside: true, drivePowerKW: 1500 });
  });

  it("a trip with coal inside: standstill-loaded at once, through hot and inert gas, until the mill runs empty", () => {
    const tr = new PhaseTracker(cfg);
    const grinding: Plant = { ...standstill, drivePowerKW: 1500, feedTPerH: 40, millInletTempC: 250, millOutletTempC: 95 };
    run(tr, 0, 100, () => grinding);
    // trip: the drive still coasts at the first update
    let r = tr.update({ nowMs: T0 + 110_000, ...grinding, trip: true });
    expect(r.phase).toBe("standstill-loaded");
    expect(r.sinceMs).toBe(T0 + 110_000);
    expect(r.reason).toBe("trip signal active; coal inside (tripped before the mill ran empty)");
    // trip reset, drive stopped; hours later hot gas and inert gas are on: still loaded
    const after = (t: number): Plant => ({
      ...standstill,
      millInletTempC: t >= 3000 ? 200 : 60,
      inertFlowNm3PerH: t >= 2000 ? 1200 : 0,
      drivePowerKW: t >= 9000 ? 1500 : 0,
    });
    const { changes } = run(tr, 120, 9200, after);
    expect(changes).toEqual([
      [120, "standstill-loaded"],
      [9030, "starting"],
    ]);
    r = tr.update({ nowMs: T0 + 9200_000, ...after(9200) });
    expect(r.reason).toMatch(/^drive running, no feed yet; running without feed for 170 s of 300 s to run empty$/);
    // 300 s without feed empties it; stopping the drive then gives an empty standstill (inert gas still on)
    run(tr, 9210, 9330, after);
    r = tr.update({ nowMs: T0 + 9340_000, ...after(9340) });
    expect(r.inputs.coalInside).toBe(false);
    const stopped = (t: number): Plant => ({ ...after(t), drivePowerKW: 0 });
    const end = run(tr, 9350, 9500, stopped);
    expect(end.changes).toEqual([
      [9350, "starting"],
      [9380, "inerting"],
    ]);
  });

  it("a trip while starting without any feed leaves the mill empty", () => {
    const tr = new PhaseTracker(cfg);
    run(tr, 0, 100, () => ({ ...standstill, drivePowerKW: 1500 }));
    const r = tr.update({ nowMs: T0 + 110_000, ...standstill, drivePowerKW: 1500, trip: true });
    expect(r.phase).toBe("standstill-empty");
  });

  it("a planned stop: stopping while it runs empty, then an empty standstill (a cooling hot inlet is not warm-up)", () => {
    const tr = new PhaseTracker(cfg);
    const plant = (t: number): Plant => ({
      ...standstill,
      drivePowerKW: t < 500 ? 1500 : 0,
      feedTPerH: t < 100 ? 40 : 0,
      millInletTempC: 250 - t / 10, // cooling from 250 °C, above 120 °C throughout
    });
    const { changes, last } = run(tr, 0, 700, plant);
    expect(changes).toEqual([
      [0, "grinding"],
      [130, "stopping"],
      [530, "standstill-empty"],
    ]);
    expect(last.reason).toBe("drive stopped, mill empty (ran empty: drive ran 300 s without feed)");
  });

  it("a stop before the mill ran empty leaves it loaded", () => {
    const tr = new PhaseTracker(cfg);
    const plant = (t: number): Plant => ({ ...standstill, drivePowerKW: t < 250 ? 1500 : 0, feedTPerH: t < 100 ? 40 : 0 });
    const { changes, last } = run(tr, 0, 400, plant);
    expect(changes).toEqual([
      [0, "grinding"],
      [130, "stopping"],
      [280, "standstill-loaded"],
    ]);
    expect(last.reason).toBe("drive stopped, coal inside (the drive stopped before the mill ran empty)");
    // maintenance clears it
    expect(tr.update({ nowMs: T0 + 410_000, ...standstill, maintenance: true }).phase).toBe("maintenance");
    expect(tr.update({ nowMs: T0 + 420_000, ...standstill }).phase).toBe("standstill-empty");
  });

  it("unknown when a key input is untrusted, and the memory of coal inside survives it", () => {
    const tr = new PhaseTracker(cfg);
    run(tr, 0, 50, () => ({ ...standstill, drivePowerKW: 1500, feedTPerH: 40 }));
    let r = tr.update({ nowMs: T0 + 60_000, ...standstill, drivePowerKW: null, feedTPerH: 40 });
    expect([r.phase, r.reason]).toEqual(["unknown", "drive power unknown"]);
    r = tr.update({ nowMs: T0 + 70_000, ...standstill, drivePowerKW: 1500, feedTPerH: null });
    expect([r.phase, r.reason]).toEqual(["unknown", "drive running, feed unknown"]);
    run(tr, 80, 200, () => standstill);
    r = tr.update({ nowMs: T0 + 210_000, ...standstill });
    expect(r.phase).toBe("standstill-loaded");
    r = tr.update({ nowMs: T0 + 220_000, ...standstill, millInletTempC: null });
    expect(r.phase).toBe("standstill-loaded"); // coal inside decides; the inlet temperature is not needed
    const empty = new PhaseTracker(cfg);
    r = empty.update({ nowMs: T0, ...standstill, inertFlowNm3PerH: null });
    expect([r.phase, r.reason]).toEqual(["unknown", "drive stopped, inert-gas flow unknown"]);
  });

  it("without history the mill is assumed loaded (the cautious default)", () => {
    const { initialCoalInside: _drop, ...noInitial } = cfg;
    const tr = new PhaseTracker(noInitial);
    const r = tr.update({ nowMs: T0, ...standstill });
    expect(r.phase).toBe("standstill-loaded");
    expect(r.reason).toBe("drive stopped, coal inside (assumed: no history since tracking began)");
  });

  it("refuses bad configuration and input with what was expected and what was found", () => {
    expect(() => new PhaseTracker({ ...cfg, drivePowerRunningKW: 0 })).toThrow(/drivePowerRunningKW must be a finite number > 0 kW; got 0/);
    expect(() => new PhaseTracker({ ...cfg, minDwellS: -5 })).toThrow(/minDwellS must be a finite number >= 0 s; got -5/);
    const tr = new PhaseTracker(cfg);
    tr.update({ nowMs: T0, ...standstill });
    expect(() => tr.update({ nowMs: T0 - 1, ...standstill })).toThrow(/nowMs must not decrease; got 1699999999999 after 1700000000000/);
    expect(() => tr.update({ nowMs: T0, ...standstill, feedTPerH: Number.NaN })).toThrow(/feedTPerH must be a finite number; got NaN/);
  });
});
