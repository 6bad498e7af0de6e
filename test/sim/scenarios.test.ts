// The fault scenarios of the simulated plant: wet coal, a stuck fresh-air damper, a trip
// followed by an N2 purge, a frozen CO analyser, an analyser calibration, a trip with CO rising
// in the standing gas, a trip that upsets everything at once, an O2 set point at a threshold.
// Each test names the key values at the key times; physics is checked against sources outside
// the simulator where one exists.
import { describe, expect, it } from "vitest";
import {
  CAL_GASES,
  CAL_SAMPLE_GAS_S,
  CAL_STATUS_OFF_S,
  CAL_STATUS_ON_S,
  CHATTER_END_S,
  CHATTER_FILTER_O2_PCT_DRY,
  CHATTER_ONSET_S,
  FLOOD_PURGE_START_S,
  FLOOD_TRIP_AT_S,
  FROZEN_CO_AT_S,
  GLOW_FILTER_CO_PPM,
  LOADED_BLANKET_AT_S,
  LOADED_BLANKET_N2_NM3_PER_H,
  LOADED_TRIP_AT_S,
  NEST_START_S,
  PURGE_N2_NM3_PER_H,
  PURGE_START_S,
  WET_COAL_MOISTURE,
  createScenario,
  scenarioNames,
  type SimFrame,
} from "../../src/sim/plant.js";
import { GRINDING_COMMANDS, LOOP_VOLUME_NM3, PlantModel, evaporationTPerH, mixH2OFraction, FLUE_H2O_FRAC, AMBIENT_H2O_FRAC } from "../../src/sim/model.js";
import { gaussian, mulberry32 } from "../../src/sim/prng.js";
import { dewPointC, meanBetween, runScenario, series, valueOf, type Point } from "./frames.js";

const START_MS = Date.UTC(2025, 2, 3, 6, 0, 0);
const cache = new Map<string, ReturnType<typeof runScenario>>();
function frames(name: string, seed = 1) {
  const key = `${name}/${seed}`;
  let f = cache.get(key);
  if (f === undefined) {
    f = runScenario(name, { startTimeMs: START_MS, seed });
    cache.set(key, f);
  }
  return f;
}

/** Least-squares line y = a + b·x (textbook OLS) with its coefficient of determination. */
function fitLine(points: { x: number; y: number }[]): { slope: number; r2: number } {
  const n = points.length;
  const mx = points.reduce((s, p) => s + p.x, 0) / n;
  const my = points.reduce((s, p) => s + p.y, 0) / n;
  let sxy = 0, sxx = 0, syy = 0;
  for (const p of points) {
    sxy += (p.x - mx) * (p.y - my);
    sxx += (p.x - mx) ** 2;
    syy += (p.y - my) ** 2;
  }
  return { slope: sxy / sxx, r2: (sxy * sxy) / (sxx * syy) };
}

function firstTimeS(points: Point[], pred: (p: Point) => boolean): number {
  return points.find(pred)?.tS ?? Number.POSITIVE_INFINITY;
}

/** Rolling 30-s means, so that a threshold crossing is not decided by one noisy sample. */
function smoothed(points: Point[], halfS = 15): Point[] {
  return points.map((p, i) => {
    const sel = points.slice(Math.max(0, i - halfS), i + halfS + 1);
    return { tS: p.tS, value: sel.reduce((s, q) => s + q.value, 0) / sel.length };
  });
}

describe("registry entries of the fault scenarios", () => {
  it("expose their duration and onset", () => {
    const info = (n: string) => {
      const s = createScenario(n, { startTimeMs: 0 });
      return [s.durationS, s.onsetS];
    };
    expect(info("wet-coal-surge")).toEqual([2400, 600]);
    expect(info("o2-creep-damper")).toEqual([2400, 600]);
    expect(info("purge-after-trip")).toEqual([3600, 600]);
    expect(info("frozen-co-analyser")).toEqual([2400, 600]);
    expect(info("analyser-calibration")).toEqual([2400, 900]);
    expect(info("trip-loaded-co-rise")).toEqual([4200, 600]);
    expect(info("trip-flood")).toEqual([3600, 1200]);
    expect(info("o2-chatter")).toEqual([2400, 600]);
  });
});

/**
 * Steady grinding without any scenario, frame for frame as createScenario makes them (settled
 * plant, one deviate per measured tag and frame from the same seed): the reference a scenario
 * that leaves the process alone must match.
 */
function steadyGrinding(frameCount: number, seed = 1): SimFrame[] {
  const plant = new PlantModel();
  plant.settleGrinding();
  const normal = gaussian(mulberry32(seed));
  const out: SimFrame[] = [];
  for (let k = 0; k < frameCount; k++) {
    if (k > 0) plant.step(1, GRINDING_COMMANDS);
    out.push({ tMs: START_MS + k * 1000, values: plant.measure(normal) });
  }
  return out;
}

describe("status outputs", () => {
  it("publish 0 or 1 only: the trip output from the frame after the trip, the analyser status only in analyser-calibration", () => {
    for (const name of scenarioNames()) {
      const f = frames(name);
      for (const tag of ["VM2-UZ-130", "BF2-AS-213"]) {
        const v = new Set(f.map((fr) => valueOf(fr, tag)));
        for (const x of v) expect([0, 1], `${name} ${tag}`).toContain(x);
      }
      if (name !== "analyser-calibration") expect(new Set(f.map((fr) => valueOf(fr, "BF2-AS-213"))), name).toEqual(new Set([0]));
    }
    const tripAt: Record<string, number | null> = { "purge-after-trip": 600, "trip-loaded-co-rise": LOADED_TRIP_AT_S, "trip-flood": FLOOD_TRIP_AT_S };
    for (const name of scenarioNames()) {
      const at = tripAt[name] ?? null;
      // Frame k shows the commands decided at frame k − 1.
      const trip = series(frames(name), "VM2-UZ-130");
      expect(trip.filter((p) => p.value === 1).map((p) => p.tS)[0] ?? null, name).toBe(at === null ? null : at + 1);
      if (at !== null) expect(trip.filter((p) => p.tS > at && p.value !== 1), name).toEqual([]);
    }
  });
});

describe("analyser-calibration", () => {
  const f = frames("analyser-calibration");
  const ref = steadyGrinding(f.length);
  const analyserTags = ["BF2-AT-213", "BF2-AT-214", "BF2-AS-213"];

  it("leaves the process alone: every other tag equals steady grinding frame for frame", () => {
    expect(f.length).toBe(2400);
    const differing: string[] = [];
    f.forEach((fr, i) => {
      fr.values.forEach((v, j) => {
        if (analyserTags.includes(v.tag)) return;
        if (v.tag !== ref[i]!.values[j]!.tag || v.value !== ref[i]!.values[j]!.value) differing.push(`${v.tag}@${i}`);
      });
    });
    expect(differing).toEqual([]);
  });

  it("sets the status to 1 for the whole sequence and the flush after it", () => {
    const on = series(f, "BF2-AS-213").filter((p) => p.value === 1).map((p) => p.tS);
    expect(on[0]).toBe(CAL_STATUS_ON_S + 1);
    expect(on.at(-1)).toBe(CAL_STATUS_OFF_S);
    expect(on.length).toBe(CAL_STATUS_OFF_S - CAL_STATUS_ON_S);
    expect(CAL_GASES[0]!.fromS).toBeGreaterThan(CAL_STATUS_ON_S);
  });

  it("shows each check gas: the readings approach it as a first-order analyser does", () => {
    // After t = 120 s of a step, 1 − e^(−t/τ) of the way (τ = 45 s O2, 40 s CO; first-order response).
    const endOf = (i: number) => (i + 1 < CAL_GASES.length ? CAL_GASES[i + 1]!.fromS : CAL_SAMPLE_GAS_S);
    const o2 = series(f, "BF2-AT-213");
    const co = series(f, "BF2-AT-214");
    const o2Before = meanBetween(o2, 0, CAL_STATUS_ON_S);
    expect(meanBetween(o2, endOf(0) - 5, endOf(0))).toBeCloseTo(o2Before * Math.exp(-120 / 45), 0);
    expect(meanBetween(co, endOf(1) - 5, endOf(1))).toBeGreaterThan(800 * (1 - Math.exp(-120 / 40)) - 5);
    expect(meanBetween(co, endOf(1) - 5, endOf(1))).toBeLessThan(805);
    expect(meanBetween(o2, endOf(2) - 5, endOf(2))).toBeGreaterThan(20.9 * (1 - Math.exp(-120 / 45)) - 0.2);
    expect(Math.max(...o2.map((p) => p.value))).toBeLessThanOrEqual(20.9 + 0.2);
  });

  it("is back on the process when the status drops, and equal to steady grinding within noise later", () => {
    const o2 = series(f, "BF2-AT-213");
    const refO2 = series(ref, "BF2-AT-213");
    const co = series(f, "BF2-AT-214");
    const refCo = series(ref, "BF2-AT-214");
    expect(Math.abs(meanBetween(o2, CAL_STATUS_OFF_S - 20, CAL_STATUS_OFF_S) - meanBetween(refO2, CAL_STATUS_OFF_S - 20, CAL_STATUS_OFF_S))).toBeLessThan(0.15);
    expect(Math.abs(meanBetween(co, CAL_STATUS_OFF_S - 20, CAL_STATUS_OFF_S) - meanBetween(refCo, CAL_STATUS_OFF_S - 20, CAL_STATUS_OFF_S))).toBeLessThan(1);
    for (let i = 0; i <= CAL_GASES[0]!.fromS; i++) expect(valueOf(f[i]!, "BF2-AT-213"), `frame ${i}`).toBe(valueOf(ref[i]!, "BF2-AT-213"));
    for (let i = CAL_STATUS_OFF_S + 300; i < f.length; i++) {
      expect(Math.abs(valueOf(f[i]!, "BF2-AT-213") - valueOf(ref[i]!, "BF2-AT-213")), `frame ${i}`).toBeLessThanOrEqual(0.011);
      expect(Math.abs(valueOf(f[i]!, "BF2-AT-214") - valueOf(ref[i]!, "BF2-AT-214")), `frame ${i}`).toBeLessThanOrEqual(0.11);
    }
  });
});

describe("trip-loaded-co-rise", () => {
  const f = frames("trip-loaded-co-rise");
  const s = (tag: string) => series(f, tag);
  const tripS = LOADED_TRIP_AT_S;

  it("trips and isolates the circuit: drive, feed and fan stop, coal stays inside, N2 blanket by hand", () => {
    expect(firstTimeS(s("VM2-JI-120"), (p) => p.tS >= tripS && p.value === 0) - tripS).toBeLessThanOrEqual(15);
    for (const tag of ["VM2-JI-120", "VM2-WI-121"]) expect(s(tag).filter((p) => p.tS >= tripS + 60 && p.value !== 0)).toEqual([]);
    // No suction once the fan has stopped: no false air.
    expect(Math.abs(meanBetween(s("BF2-PT-212"), tripS + 120, 4200))).toBeLessThan(0.5);
    expect(LOADED_BLANKET_AT_S).toBe(tripS + 60);
    expect(Math.abs(meanBetween(s("IG2-FT-051"), LOADED_BLANKET_AT_S + 300, 4200) - LOADED_BLANKET_N2_NM3_PER_H)).toBeLessThan(30);
  });

  it("keeps the O2 low: it only falls under the N2 blanket", () => {
    const o2 = smoothed(s("VM2-AT-113"));
    expect(Math.max(...o2.filter((p) => p.tS >= tripS).map((p) => p.value))).toBeLessThan(9.2);
    expect(meanBetween(s("VM2-AT-113"), 4080, 4200)).toBeLessThan(meanBetween(s("VM2-AT-113"), 0, tripS) - 3);
  });

  it("builds up CO in the standing gas at both analysers, still rising and faster at the end (the nest)", () => {
    for (const tag of ["VM2-AT-114", "BF2-AT-214"]) {
      const co = s(tag);
      const before = meanBetween(co, 0, tripS);
      expect(meanBetween(co, 4080, 4200) - before, tag).toBeGreaterThan(200);
      // Least squares over two 10-min windows: the nest's doubling makes the late rise steeper.
      const slope = (a: number, b: number) => fitLine(co.filter((p) => p.tS >= a && p.tS < b).map((p) => ({ x: p.tS / 60, y: p.value }))).slope;
      expect(slope(3600, 4200), tag).toBeGreaterThan(slope(2400, 3000));
      expect(slope(3600, 4200), tag).toBeGreaterThan(3);
    }
    // Nothing of the nest before it starts: the first minutes after the trip are the coal's own oxidation.
    expect(NEST_START_S).toBe(tripS + 300);
  });

  it("CO in a closed vessel: the rise matches the CO made inside over the loop volume while almost nothing leaves", () => {
    // Right after the blanket starts the vent flow is tiny: dC/dt ≈ G / V (well-mixed vessel).
    // The coal's oxidation CO is 0.026 Nm³ per t of feed × 30 t/h at the trip (model.ts).
    const gNm3PerH = 0.026 * 30 * Math.exp(-(LOADED_BLANKET_AT_S + 120 - tripS) / (16 * 60));
    const expectedPpmPerMin = ((gNm3PerH / LOOP_VOLUME_NM3) * 1e6) / 60;
    const co = s("VM2-AT-114").filter((p) => p.tS >= LOADED_BLANKET_AT_S + 60 && p.tS < LOADED_BLANKET_AT_S + 180);
    const slope = fitLine(co.map((p) => ({ x: p.tS / 60, y: p.value }))).slope;
    expect(slope).toBeGreaterThan(0.7 * expectedPpmPerMin);
    expect(slope).toBeLessThan(1.3 * expectedPpmPerMin);
  });
});

describe("trip-flood", () => {
  const f = frames("trip-flood");
  const s = (tag: string) => series(f, tag);
  const tripS = FLOOD_TRIP_AT_S;

  it("draws air in after the trip while the fan runs on: O2 toward air, above the limit by the purge start", () => {
    expect(Math.abs(meanBetween(s("VM2-AT-113"), 0, tripS) - 9)).toBeLessThan(0.1);
    expect(meanBetween(s("VM2-AT-113"), FLOOD_PURGE_START_S - 30, FLOOD_PURGE_START_S)).toBeGreaterThan(14.5);
    expect(Math.max(...s("VM2-AT-113").map((p) => p.value))).toBeLessThan(20.9);
  });

  it("lets the glowing coal raise the CO at mill and filter within minutes, the filter's hot fines adding their own", () => {
    const mill = s("VM2-AT-114");
    const filter = s("BF2-AT-214");
    expect(meanBetween(mill, FLOOD_PURGE_START_S - 30, FLOOD_PURGE_START_S) - meanBetween(mill, 0, tripS)).toBeGreaterThan(100);
    // Across the filter: outlet minus inlet, about the hot fines' 80 ppm less the part not yet reached at 5 min (2-min time constant).
    const across = meanBetween(filter, FLOOD_PURGE_START_S - 30, FLOOD_PURGE_START_S) - meanBetween(mill, FLOOD_PURGE_START_S - 30, FLOOD_PURGE_START_S);
    expect(across).toBeGreaterThan(0.6 * GLOW_FILTER_CO_PPM);
    expect(across).toBeLessThan(1.1 * GLOW_FILTER_CO_PPM);
    expect(meanBetween(filter, 0, tripS)).toBeLessThan(40);
  });

  it("calms down after the purge: O2 back below the 12 % wet site maximum within 20 min, CO past its peak", () => {
    const belowS = firstTimeS(smoothed(s("VM2-AT-113")), (p) => p.tS > FLOOD_PURGE_START_S && p.value < 12);
    expect(belowS - FLOOD_PURGE_START_S).toBeLessThan(20 * 60);
    const co = smoothed(s("VM2-AT-114"));
    const peak = Math.max(...co.map((p) => p.value));
    expect(meanBetween(s("VM2-AT-114"), 3540, 3600)).toBeLessThan(peak - 50);
    expect(peak).toBeLessThan(2000); // within the analyser's range (config/demo.yaml)
  });
});

describe("o2-chatter", () => {
  const f = frames("o2-chatter");
  const s = (tag: string) => series(f, tag);

  it("settles the filter O2 at 11.0 % dry while the set point is raised, and back at about 10.5 % after", () => {
    expect(CHATTER_FILTER_O2_PCT_DRY).toBe(11);
    expect(Math.abs(meanBetween(s("BF2-AT-213"), CHATTER_ONSET_S + 600, CHATTER_END_S) - 11)).toBeLessThan(0.03);
    expect(Math.abs(meanBetween(s("BF2-AT-213"), 0, CHATTER_ONSET_S) - 10.5)).toBeLessThan(0.1);
    expect(Math.abs(meanBetween(s("BF2-AT-213"), 2100, 2400) - 10.5)).toBeLessThan(0.1);
  });

  it("holds the raised wet set point at the mill: O2_dry = O2_wet / (1 − x_H2O) (DESIGN.md §4)", () => {
    const wet = meanBetween(s("VM2-AT-113"), CHATTER_ONSET_S + 600, CHATTER_END_S);
    const h2o = meanBetween(s("BF2-AT-215"), CHATTER_ONSET_S + 600, CHATTER_END_S) / 100;
    expect(wet).toBeGreaterThan(9.2);
    expect(wet).toBeLessThan(9.6);
    expect(Math.abs(wet / (1 - h2o) - meanBetween(s("BF2-AT-213"), CHATTER_ONSET_S + 600, CHATTER_END_S))).toBeLessThan(0.05);
    // Less N2 for the higher O2.
    expect(meanBetween(s("IG2-FT-051"), CHATTER_ONSET_S + 600, CHATTER_END_S)).toBeLessThan(meanBetween(s("IG2-FT-051"), 0, CHATTER_ONSET_S) - 500);
  });
});

describe("wet-coal-surge", () => {
  const f = frames("wet-coal-surge");
  const s = (tag: string) => series(f, tag);
  const onsetS = 600;
  const margin = f.map((frame, i) => ({ tS: i, value: valueOf(frame, "BF2-TT-211") - dewPointC(valueOf(frame, "BF2-AT-215"), valueOf(frame, "BF2-PT-212")) }));

  it("keeps the moisture balance at the wet coal's moisture (DESIGN.md §4 formulas)", () => {
    // Hand calculation: 30 t/h × (0.32 − 0.015) / 0.985 = 9.289 t/h of water, against 3.198 t/h at 12 %.
    expect(WET_COAL_MOISTURE).toBe(0.32);
    expect(evaporationTPerH(30, 0.32, 0.015)).toBeCloseTo(9.289, 3);
    const plant = new PlantModel();
    plant.settleGrinding();
    for (let i = 0; i < 360; i++) plant.step(10, { ...GRINDING_COMMANDS, rawCoalMoisture: 0.32 });
    expect(plant.evaporationTPerH).toBeCloseTo(evaporationTPerH(plant.feedTPerH, 0.32, 0.015), 6);
    // The loop H2O is the mix of the fresh streams with the evaporated water.
    const fl = plant.freshFlows();
    const dry = fl.flue + fl.falseAir + fl.n2;
    const streamsH2O = (fl.flue * FLUE_H2O_FRAC + fl.falseAir * AMBIENT_H2O_FRAC) / dry;
    expect(plant.h2oFrac).toBeCloseTo(mixH2OFraction(dry, streamsH2O, plant.evaporationTPerH), 6);
  });

  it("starts from steady grinding with about 30 K dew point margin at the bag filter outlet", () => {
    expect(meanBetween(s("VM2-WI-121"), 0, onsetS)).toBeCloseTo(30, 0);
    expect(Math.abs(meanBetween(s("VM2-TT-111"), 0, onsetS) - 88)).toBeLessThan(0.3);
    const m = meanBetween(margin, 0, onsetS);
    expect(m).toBeGreaterThan(28);
    expect(m).toBeLessThan(34);
  });

  it("raises the gas H2O and its dew point: the margin shrinks steadily toward 10 K and below", () => {
    expect(meanBetween(s("BF2-AT-215"), 0, onsetS)).toBeLessThan(15);
    expect(meanBetween(s("BF2-AT-215"), 2280, 2400)).toBeGreaterThan(35);
    const dewEnd = dewPointC(meanBetween(s("BF2-AT-215"), 2280, 2400), meanBetween(s("BF2-PT-212"), 2280, 2400));
    expect(dewEnd).toBeGreaterThan(72);
    expect(dewEnd).toBeLessThan(76);
    // Gradual: still above 24 K five minutes in; every 3-minute mean lower than the one before.
    expect(meanBetween(margin, onsetS + 270, onsetS + 330)).toBeGreaterThan(24);
    let prev = Number.POSITIVE_INFINITY;
    for (let m = 3; m <= 24; m += 3) {
      const now = meanBetween(margin, onsetS + (m - 3) * 60, onsetS + m * 60);
      expect(now, `${m} min after onset`).toBeLessThan(prev);
      prev = now;
    }
    const end = meanBetween(margin, 2280, 2400);
    expect(end).toBeLessThan(10);
    expect(end).toBeGreaterThan(6);
  });

  it("lets the mill outlet temperature sag a little once the hot-gas generator is at its maximum", () => {
    const t = s("VM2-TT-111");
    // Never more than 3.5 K below the 88 °C set point, but below it at the end.
    expect(Math.min(...smoothed(t).map((p) => p.value))).toBeGreaterThan(84.5);
    expect(meanBetween(t, 2100, 2400)).toBeLessThan(87.3);
    // The burner fires harder: the generator outlet climbs by more than 150 K and stays below 800 °C.
    expect(meanBetween(s("HG2-TT-011"), 2100, 2400) - meanBetween(s("HG2-TT-011"), 0, onsetS)).toBeGreaterThan(150);
    expect(Math.max(...s("HG2-TT-011").map((p) => p.value))).toBeLessThan(800);
  });

  it("holds the wet O2 at its set point while the steam takes the place of the N2", () => {
    const o2 = smoothed(s("VM2-AT-113"));
    for (const p of o2) expect(Math.abs(p.value - 9), `t=${p.tS}`).toBeLessThan(0.4);
    expect(meanBetween(s("IG2-FT-051"), 2100, 2400)).toBeLessThan(0.15 * meanBetween(s("IG2-FT-051"), 0, onsetS));
    // O2_dry = O2_wet / (1 − x_H2O) (DESIGN.md §4): the dry-basis O2 at the filter rises with the steam.
    expect(meanBetween(s("BF2-AT-213"), 2280, 2400)).toBeGreaterThan(13.5);
    expect(meanBetween(s("VM2-WI-121"), 2100, 2400)).toBeCloseTo(30, 0);
  });
});

describe("o2-creep-damper", () => {
  const f = frames("o2-creep-damper");
  const s = (tag: string) => series(f, tag);
  const onsetS = 600;

  it("starts inerted at 9 % O2 wet", () => {
    expect(Math.abs(meanBetween(s("VM2-AT-113"), 0, onsetS) - 9)).toBeLessThan(0.1);
  });

  it("creeps the mill O2 up by about 0.15 %-pt/min, in a straight line", () => {
    const pts = s("VM2-AT-113").filter((p) => p.tS >= onsetS + 300).map((p) => ({ x: p.tS / 60, y: p.value }));
    const fit = fitLine(pts);
    expect(fit.slope).toBeGreaterThan(0.13);
    expect(fit.slope).toBeLessThan(0.17);
    expect(fit.r2).toBeGreaterThan(0.99);
  });

  it("passes the site maximum of 12 % wet about 20 min after the onset and ends well past it", () => {
    const crossS = firstTimeS(smoothed(s("VM2-AT-113")), (p) => p.tS > onsetS && p.value > 12);
    expect(crossS - onsetS).toBeGreaterThan(18 * 60);
    expect(crossS - onsetS).toBeLessThan(25 * 60);
    expect(meanBetween(s("VM2-AT-113"), 2340, 2400)).toBeGreaterThan(12.8);
  });

  it("shows the same creep at the filter on a dry basis: O2_dry = O2_wet / (1 − x_H2O) (DESIGN.md §4)", () => {
    for (const [a, b] of [[0, onsetS], [1800, 1860], [2340, 2400]] as const) {
      const wet = meanBetween(s("VM2-AT-113"), a, b);
      const h2o = meanBetween(s("BF2-AT-215"), a, b) / 100;
      // The extractive analyser lags the in-situ probe by about half a minute: 0.1 %-pt at this creep.
      expect(Math.abs(meanBetween(s("BF2-AT-213"), a, b) - wet / (1 - h2o)), `${a}-${b} s`).toBeLessThan(0.2);
    }
  });

  it("is not answered by the inerting controller, while the burner holds the mill outlet temperature", () => {
    const n2Before = meanBetween(s("IG2-FT-051"), 0, onsetS);
    expect(Math.abs(meanBetween(s("IG2-FT-051"), 2340, 2400) / n2Before - 1)).toBeLessThan(0.05);
    for (const p of smoothed(s("VM2-TT-111"))) expect(Math.abs(p.value - 88), `t=${p.tS}`).toBeLessThan(1);
    // The damper's air dilutes the moisture.
    expect(meanBetween(s("BF2-AT-215"), 2340, 2400)).toBeLessThan(meanBetween(s("BF2-AT-215"), 0, onsetS) - 3);
  });
});

describe("purge-after-trip", () => {
  const f = frames("purge-after-trip");
  const s = (tag: string) => series(f, tag);
  const tripS = 600;

  it("trips from steady grinding: drive at zero at once, feed within a minute, hot gas gone", () => {
    expect(meanBetween(s("VM2-JI-120"), 0, tripS)).toBeGreaterThan(1700);
    expect(firstTimeS(s("VM2-JI-120"), (p) => p.tS >= tripS && p.value === 0) - tripS).toBeLessThanOrEqual(15);
    expect(firstTimeS(s("VM2-WI-121"), (p) => p.tS >= tripS && p.value === 0) - tripS).toBeLessThanOrEqual(60);
    expect(meanBetween(s("VM2-TT-101"), tripS + 150, tripS + 180)).toBeLessThan(80);
    // Coal stays inside: nothing restarts the drive or the feed.
    for (const tag of ["VM2-JI-120", "VM2-WI-121"]) expect(s(tag).filter((p) => p.tS >= tripS + 60 && p.value !== 0)).toEqual([]);
  });

  it("draws false air in while the fan runs on: O2 rises toward air, above the limit by the purge start", () => {
    const o2 = s("VM2-AT-113");
    expect(meanBetween(o2, PURGE_START_S - 30, PURGE_START_S)).toBeGreaterThan(14.5);
    expect(meanBetween(o2, PURGE_START_S - 30, PURGE_START_S)).toBeGreaterThan(meanBetween(o2, tripS + 200, tripS + 230));
    // Toward dry air's 20.9 % (US Standard Atmosphere 1976: 20.946 %), never beyond it.
    expect(Math.max(...o2.map((p) => p.value))).toBeLessThan(20.9);
    expect(meanBetween(s("IG2-FT-051"), PURGE_START_S - 30, PURGE_START_S)).toBeLessThan(300);
  });

  it("purges with the fan stopped: no suction, N2 at 3,000 Nm³/h", () => {
    expect(Math.abs(meanBetween(s("BF2-PT-212"), PURGE_START_S + 120, 3600))).toBeLessThan(0.5);
    expect(PURGE_N2_NM3_PER_H).toBe(3000);
    expect(Math.abs(meanBetween(s("IG2-FT-051"), PURGE_START_S + 300, 3600) - 3000)).toBeLessThan(50);
  });

  it("decays the O2 exponentially, more slowly than the well-mixed prediction, back below the limit", () => {
    // Well-mixed dilution (common practice, from memory): C(t) = C0·exp(−Q·t/V), so ln C falls at Q/V.
    const q = meanBetween(s("IG2-FT-051"), PURGE_START_S + 360, 3600) / 60; // Nm³/min
    const wellMixedPerMin = q / LOOP_VOLUME_NM3;
    const pts = s("VM2-AT-113")
      .filter((p) => p.tS >= PURGE_START_S + 360)
      .map((p) => ({ x: p.tS / 60, y: Math.log(p.value) }));
    const fit = fitLine(pts);
    expect(fit.r2).toBeGreaterThan(0.995);
    expect(-fit.slope).toBeGreaterThan(0.5 * wellMixedPerMin);
    expect(-fit.slope).toBeLessThan(0.85 * wellMixedPerMin);
    // Below the 12 % wet site maximum within 20 min of the purge start; under 5 % at the end.
    const belowS = firstTimeS(smoothed(s("VM2-AT-113")), (p) => p.tS > PURGE_START_S && p.value < 12);
    expect(belowS - PURGE_START_S).toBeGreaterThan(5 * 60);
    expect(belowS - PURGE_START_S).toBeLessThan(20 * 60);
    expect(meanBetween(s("VM2-AT-113"), 3540, 3600)).toBeLessThan(5);
  });

  it("lets CO build up from the coal left inside once the gas stands still", () => {
    const baseline = meanBetween(s("VM2-AT-114"), 0, tripS);
    expect(Math.max(...smoothed(s("VM2-AT-114")).filter((p) => p.tS > PURGE_START_S).map((p) => p.value))).toBeGreaterThan(baseline + 30);
  });
});

describe("frozen-co-analyser", () => {
  const frozen = frames("frozen-co-analyser");
  const live = frames("filter-smoulder");
  const tag = "BF2-AT-214";

  it("is filter-smoulder frame for frame, except the bag filter outlet CO from the freeze on", () => {
    expect(frozen.length).toBe(live.length);
    const differing: string[] = [];
    frozen.forEach((fr, i) => {
      fr.values.forEach((v, j) => {
        const same = v.value === live[i]!.values[j]!.value;
        const mayDiffer = v.tag === tag && i >= FROZEN_CO_AT_S;
        if (!same && !mayDiffer) differing.push(`${v.tag}@${i}`);
      });
    });
    expect(differing).toEqual([]);
  });

  it("holds BF2-AT-214 exactly at its reading at onset + 3 min, while the real CO keeps rising", () => {
    expect(FROZEN_CO_AT_S).toBe(780);
    const held = valueOf(live[FROZEN_CO_AT_S]!, tag);
    const after = frozen.slice(FROZEN_CO_AT_S).map((fr) => valueOf(fr, tag));
    expect(new Set(after)).toEqual(new Set([held]));
    // The live reading moved on: 1·τ + 0.6·τ² ppm at τ = 30 min is 570 ppm above baseline (scenario definition).
    expect(valueOf(live.at(-1)!, tag) - held).toBeGreaterThan(400);
  });

  it("leaves the mill outlet CO analyser live", () => {
    const after = frozen.slice(FROZEN_CO_AT_S).map((fr) => valueOf(fr, "VM2-AT-114"));
    expect(new Set(after).size).toBeGreaterThan(20);
    const moves = after.filter((v, i) => i > 0 && v !== after[i - 1]).length;
    expect(moves).toBeGreaterThan(after.length / 2);
  });
});
