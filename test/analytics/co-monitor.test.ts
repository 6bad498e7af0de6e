// The CO monitor's baseline (frozen by phase and by a gas source change), the rise across a
// unit with its transport delay, and the enclosed-store indicators (long-window rise in ppm/h,
// Graham's ratio), through the monitor as the engine drives it.
// Sources: the baseline as a rolling median frozen during start-up and after a gas source
// change, the rise levels and the silo rate are common practice (DESIGN.md §4); Graham's
// ratio GR = 100·CO/(0.265·N2 − O2) in % vol, bands < 0.5 normal, 0.5–1 heating, 1–2
// advanced heating, > 3 active fire: mine-fire practice (DESIGN.md §4).
import { describe, expect, it } from "vitest";
import { SampleHistory } from "../../src/analytics/co-history.js";
import { CoPlant, T0, coPoint, coRise, run } from "./co-helpers.js";

describe("baseline", () => {
  // Minute slots, counted after 10 min, median over the hour.
  const point = (over: Record<string, unknown> = {}) =>
    coPoint({ id: "f", signal: "f.co", unit: "bf", baseline: { windowS: 3600, decimateS: 60, minS: 600, phaseUnit: "vm", ...over } });

  it("without a phase for its unit it freezes nothing and says so", () => {
    const plant = new CoPlant([point()]);
    run(plant, "f.co", 0, 300, () => 20);
    const b = plant.point("f").baseline;
    expect(b.phase).toBeNull();
    expect(b.frozen).toBeNull();
    expect(b.phaseNote).toMatch(/no operating phase computed for vm: the baseline is not frozen by phase/);
    // 6 values of one per minute, 10 needed
    expect(b.status).toBe("unknown");
    expect(b.reason).toMatch(/baseline filling: 6 of 10 values/);
    expect(plant.value("co.f.baselinePpm")).toBeNull();
    expect(plant.value("co.f.riseAboveBaselinePpm")).toBeNull();
  });

  it("is the median of the last hour and gives the rise above it", () => {
    const plant = new CoPlant([point()]);
    plant.phases.set("vm", "grinding");
    // 20 min at 20 ppm with one 10 s puff of 500 ppm: the median ignores it
    run(plant, "f.co", 0, 1200, (t) => (t >= 600 && t < 610 ? 500 : 20));
    run(plant, "f.co", 1201, 1260, () => 95);
    const b = plant.point("f").baseline;
    expect(b.status).toBe("ok");
    expect(b.ppm).toBe(20);
    expect(plant.value("co.f.baselinePpm")).toBe(20);
    expect(plant.value("co.f.riseAboveBaselinePpm")).toBe(75);
    expect(b.phaseNote).toBe("vm in grinding: follows the data");
  });

  it("freezes in a start-up phase (default warm-up, inerting, starting) and moves over to the new level afterwards", () => {
    const plant = new CoPlant([point()]);
    plant.phases.set("vm", "grinding");
    run(plant, "f.co", 0, 1199, () => 20); // 20 minute values of 20 ppm
    plant.phases.set("vm", "starting");
    run(plant, "f.co", 1200, 2999, () => 60); // 30 min at 60 ppm while starting
    let b = plant.point("f").baseline;
    expect(b.frozen).toBe("vm in starting");
    expect(b.phase).toBe("starting");
    expect(b.ppm).toBe(20);
    expect(b.riseAbovePpm).toBe(40);
    expect(b.riseReason).toMatch(/frozen baseline \(vm in starting\)/);
    plant.phases.set("vm", "grinding");
    run(plant, "f.co", 3000, 3599, () => 60); // 10 minute values of 60 after 20 of 20: median still 20
    b = plant.point("f").baseline;
    expect(b.frozen).toBeNull();
    expect(b.ppm).toBe(20);
    run(plant, "f.co", 3600, 4260, () => 60); // 22 values of 60 against the 9 of 20 still inside the hour: median 60
    b = plant.point("f").baseline;
    expect(b.ppm).toBe(60);
    expect(b.riseAbovePpm).toBe(0);
  });

  it("freezes only in the phases listed", () => {
    const plant = new CoPlant([point({ freezePhases: ["stopping"] })]);
    plant.phases.set("vm", "starting");
    run(plant, "f.co", 0, 700, () => 30);
    expect(plant.point("f").baseline.frozen).toBeNull();
    expect(plant.point("f").baseline.ppm).toBe(30);
    plant.phases.set("vm", "stopping");
    run(plant, "f.co", 701, 800, () => 300);
    expect(plant.point("f").baseline.frozen).toBe("vm in stopping");
    expect(plant.point("f").baseline.ppm).toBe(30);
  });

  it("freezes for gasSourceFreezeS after the gas source changes, and while the source is unknown", () => {
    const plant = new CoPlant([point({ gasSourceSignal: "gas.source", gasSourceFreezeS: 600 })], [], { "gas.source": { unit: "state", periodS: 1 } });
    plant.phases.set("vm", "grinding");
    const source = (t: number) => (t < 1200 ? 1 : 2);
    const level = (t: number) => (t < 1200 ? 20 : 50);
    run(plant, "f.co", 0, 1799, level, 1, (t) => plant.feed("gas.source", source(t), T0 + t * 1000));
    let b = plant.point("f").baseline;
    expect(b.frozen).toMatch(/^gas source changed from 1 to 2; frozen 1 s more$/);
    expect(b.ppm).toBe(20);
    expect(plant.value("co.f.riseAboveBaselinePpm")).toBe(30);
    run(plant, "f.co", 1800, 2000, level, 1, (t) => plant.feed("gas.source", source(t), T0 + t * 1000));
    b = plant.point("f").baseline;
    expect(b.frozen).toBeNull();
    expect(b.ppm).toBe(20); // 20 values of 20 against 4 of 50
    // The gas source signal goes stale: a change could go unseen, so the baseline holds.
    run(plant, "f.co", 2001, 2010, level);
    expect(plant.point("f").baseline.frozen).toMatch(/gas source unknown \(gas\.source: no data for \d+ s\)/);
  });
});

describe("rise across a unit", () => {
  // Inlet: a piecewise-linear CO with its corners on whole seconds, sampled on whole seconds.
  // Outlet: the inlet 20 s later plus 15 ppm made in the unit, sampled on half seconds, so every
  // lookup interpolates between two inlet samples; linear interpolation is exact on a straight
  // segment, so the rise is exactly 15 ppm (and 15 + 0.2·20 = 19 ppm if the delay is ignored).
  const inletPpm = (t: number) => (t <= 300 ? 30 + 0.2 * t : 90 - 0.1 * (t - 300));
  const build = (delayS: number) =>
    new CoPlant([coPoint({ id: "in", signal: "in.co" }), coPoint({ id: "out", signal: "out.co" })], [coRise({ id: "bf", inlet: "in", outlet: "out", transportDelayS: delayS })]);
  const drive = (plant: CoPlant, fromS: number, toS: number) => {
    for (let t = fromS; t <= toS; t++) {
      plant.feed("in.co", inletPpm(t), T0 + t * 1000);
      plant.feed("out.co", inletPpm(t + 0.5 - 20) + 15, T0 + t * 1000 + 500);
      plant.tick(T0 + t * 1000 + 700);
    }
  };

  it("outlet minus the inlet one transport delay earlier: exact on synthetic data", () => {
    const plant = build(20);
    drive(plant, 0, 200);
    let r = plant.tick(T0 + 200_700).coRises[0]!;
    expect(r.status).toBe("ok");
    expect(r.inletHow).toBe("interpolated");
    expect(r.inletAtMs).toBe(T0 + 200_500 - 20_000);
    expect(r.risePpm!).toBeCloseTo(15, 9);
    expect(plant.value("co-rise.bf.risePpm")!).toBeCloseTo(15, 9);
    drive(plant, 201, 500); // past the corner at 300 s, on the falling segment
    r = plant.monitor.view().coRises[0]!;
    expect(r.risePpm!).toBeCloseTo(15, 9);
    expect(r.outletPpm! - r.inletPpm!).toBeCloseTo(15, 9);
  });

  it("ignoring the delay would be wrong by the inlet's change over it", () => {
    const plant = build(0);
    drive(plant, 0, 200);
    // The outlet sample at 200.5 s (30 + 0.2·180.5 + 15 = 81.1 ppm) meets the inlet at 200.5 s;
    // the inlet sample at 201 s has not come yet, so the nearest one within the 5 s tolerance
    // stands in: 200 s, 70.0 ppm. Rise 11.1 ppm instead of the true 15.
    const r = plant.monitor.view().coRises[0]!;
    expect(r.inletHow).toBe("nearest");
    expect(r.inletAtMs).toBe(T0 + 200_000);
    expect(plant.value("co-rise.bf.risePpm")!).toBeCloseTo(11.1, 9);
  });

  it("is unknown before the inlet has history for the delayed time, and when the inlet cannot be trusted", () => {
    const plant = build(20);
    drive(plant, 0, 10);
    const r = plant.monitor.view().coRises[0]!;
    expect(r.status).toBe("unknown");
    expect(r.risePpm).toBeNull();
    expect(r.reason).toMatch(/inlet 20 s before the outlet sample: history starts 10 s after the time needed/);
    drive(plant, 11, 100);
    plant.feed("out.co", 50, T0 + 101_500);
    plant.tick(T0 + 104_000); // inlet stale (last 100 s)
    expect(plant.monitor.view().coRises[0]!.reason).toMatch(/^inlet in\.co: no data for 4 s/);
  });

  it("history lookup: nearest sample within the tolerance, none across a break or beyond it", () => {
    const h = new SampleHistory(600, 1000);
    for (let t = 0; t <= 100; t += 10) h.push(t, t * 2);
    expect(h.valueAt(42, 5, 10)).toEqual({ value: 84, atS: 42, how: "interpolated" });
    expect(h.valueAt(42, 5, 5)).toEqual({ value: 80, atS: 40, how: "nearest" }); // 10 s apart > maxGapS 5
    expect(h.valueAt(45, 4, 5)).toMatchObject({ value: null });
    expect(h.valueAt(50, 5, 10)).toEqual({ value: 100, atS: 50, how: "exact" });
    h.markBreak(105);
    h.push(110, 0);
    expect(h.valueAt(103, 5, 10)).toEqual({ value: 200, atS: 100, how: "nearest" }); // not across the break
    expect(h.valueAt(107, 2, 10)).toMatchObject({ value: null, reason: expect.stringMatching(/no good value within 2 s/) });
    expect(h.valueAt(130, 5, 10)).toMatchObject({ value: null, reason: expect.stringMatching(/newest is 20 s older/) });
    // bounded by the horizon
    for (let t = 120; t <= 5000; t += 10) h.push(t, 1);
    expect(h.count).toBeLessThanOrEqual(61);
  });
});

describe("enclosed stores", () => {
  const silo = (store: Record<string, unknown>) =>
    coPoint({ id: "s", signal: "s.co", unit: "silo", shortWindowS: 1800, longWindowS: 7200, transportLagS: 120, minPoints: 20, maxGapS: 60, store });
  const signals = { "s.co": { periodS: 10 }, "s.o2": { unit: "pctVol", periodS: 10 }, "s.n2": { unit: "pctVol", periodS: 10 } };

  it("long-window rise in ppm/h: 15 ppm/h over 2 h, sampled every 10 s", () => {
    const plant = new CoPlant([silo({ o2Signal: "s.o2" })], [], signals);
    run(plant, "s.co", 0, 7200, (t) => 5 + (15 / 3600) * t, 10, (t) => plant.feed("s.o2", 8, T0 + t * 1000));
    const p = plant.point("s");
    expect(p.store!.riseLongPpmPerH!).toBeCloseTo(15, 9);
    expect(plant.value("co.s.riseLongPpmPerH")!).toBeCloseTo(15, 9);
    // No N2 and no by-difference: no ratio, and no key for it.
    expect(p.store!.n2Source).toBe("none");
    expect(p.store!.grahamRatio).toBeNull();
    expect(p.store!.grahamReason).toMatch(/no N2 measured and n2ByDifference not set/);
    expect(() => plant.value("co.s.grahamRatio")).toThrow(/never emitted/);
  });

  function graham(store: Record<string, unknown>, coPpm: number, o2: number, n2?: number) {
    const plant = new CoPlant([silo(store)], [], signals);
    plant.feed("s.co", coPpm, T0);
    plant.feed("s.o2", o2, T0);
    if (n2 !== undefined) plant.feed("s.n2", n2, T0);
    plant.tick(T0 + 500);
    return { view: plant.point("s").store!, key: plant.value("co.s.grahamRatio") };
  }

  it("Graham's ratio with N2 measured: CO 200 ppm, O2 19.5 %, N2 79.0 % gives 1.3937 (advanced heating)", () => {
    // By hand: 100 · 0.02 / (0.265 · 79.0 − 19.5) = 2 / 1.435 = 1.393728...
    const { view, key } = graham({ o2Signal: "s.o2", n2Signal: "s.n2" }, 200, 19.5, 79.0);
    expect(view.n2Source).toBe("signal");
    expect(key!).toBeCloseTo(2 / 1.435, 9);
    expect(key!).toBeCloseTo(1.393728, 6);
    expect(view.grahamBand).toBe("advanced-heating");
    expect(view.grahamText).toBe("advanced heating (1 to 2)");
    expect(view.caveat).toMatch(/N2-inerted store/);
  });

  it("Graham's ratio with N2 by difference: N2 = 100 − 19.5 − 0.02 = 80.48 %, ratio 1.0946, with the caveat", () => {
    // By hand: 2 / (0.265 · 80.48 − 19.5) = 2 / 1.8272 = 1.094571...
    const { view, key } = graham({ o2Signal: "s.o2", n2ByDifference: true }, 200, 19.5);
    expect(view.n2Source).toBe("by difference");
    expect(view.n2PctVol!).toBeCloseTo(80.48, 9);
    expect(key!).toBeCloseTo(2 / 1.8272, 9);
    expect(view.grahamBand).toBe("advanced-heating");
    expect(view.caveat).toMatch(/assumes the rest of the gas is N2; wrong where the store is inerted with CO2/);
  });

  it("too small an oxygen deficiency gives no ratio; a normal store reads normal", () => {
    // 0.265 · 79.2 − 20.8 = 0.188 %-pt < 0.3
    const small = graham({ o2Signal: "s.o2", n2Signal: "s.n2" }, 30, 20.8, 79.2);
    expect(small.key).toBeNull();
    expect(small.view.grahamReason).toMatch(/oxygen deficiency 0\.265·N2 − O2 = 0\.19 %-pt, below 0\.3/);
    // 100 · 0.003 / (0.265 · 79.0 − 19.5) = 0.3 / 1.435 = 0.209: normal (below 0.5)
    const normal = graham({ o2Signal: "s.o2", n2Signal: "s.n2" }, 30, 19.5, 79.0);
    expect(normal.key!).toBeCloseTo(0.3 / 1.435, 9);
    expect(normal.view.grahamText).toBe("normal (below 0.5)");
  });

  it("no ratio when the O2 cannot be trusted", () => {
    const plant = new CoPlant([silo({ o2Signal: "s.o2", n2ByDifference: true })], [], signals);
    plant.feed("s.co", 200, T0);
    plant.feed("s.o2", 19.5, T0, { functionCheck: true });
    plant.tick(T0 + 500);
    expect(plant.value("co.s.grahamRatio")).toBeNull();
    expect(plant.point("s").store!.grahamReason).toMatch(/^O2: s\.o2: analyser in function check/);
  });
});
