// CO rate of rise at one measuring point: the two estimators on each window, restarts at
// gaps, bad values and function checks, and the bounded memory.
// Sources: least squares from the normal equations (slope = Sxy / Sxx, Gauss); Theil–Sen as
// the median of the slopes of all point pairs (Sen 1968, J. Am. Stat. Assoc. 63:1379);
// the 5 ppm/min caution level is common practice (DESIGN.md §4: 5–10 ppm/min sustained).
import { describe, expect, it } from "vitest";
import { CoGradient } from "../../src/analytics/co-gradient.js";
import { mulberry32 } from "../../src/sim/prng.js";
import { CoPlant, T0, coPoint, coRise, run } from "./co-helpers.js";

const CAUTION_PPM_PER_MIN = 5; // common practice (DESIGN.md §4)

describe("exactness on noiseless ramps", () => {
  // On a straight line every pair has the line's slope, so their median is that slope (Sen 1968);
  // least squares reproduces a straight line exactly (its residuals are zero).
  it("regular 1 s samples: short and long, robust and least squares, all give the ramp's 8 ppm/min", () => {
    const plant = new CoPlant([coPoint({ id: "p", signal: "p.co" })]);
    run(plant, "p.co", 0, 1000, (t) => 40 + (8 / 60) * t);
    const p = plant.point("p");
    expect(p.status).toBe("ok");
    for (const v of [p.gradientPpmPerMin, p.gradientLsPpmPerMin, p.gradientLongPpmPerMin, p.long.lsPpmPerMin]) expect(v!).toBeCloseTo(8, 9);
    expect(plant.value("co.p.gradientPpmPerMin")!).toBeCloseTo(8, 9);
    expect(plant.value("co.p.gradientLsPpmPerMin")!).toBeCloseTo(8, 9);
    expect(plant.value("co.p.gradientLongPpmPerMin")!).toBeCloseTo(8, 9);
    // The robust slope is at most one bucket width old (300 s / 60 buckets = 5 s).
    expect(p.short.robustAsOfMs!).toBeGreaterThan(T0 + 995_000);
    expect(p.short.robustAsOfMs!).toBeLessThanOrEqual(T0 + 1_000_000);
    // The windows hold what they span: 301 points over the last 300 s, 901 over 900 s.
    expect(p.short.points).toBe(301);
    expect(p.long.points).toBe(901);
  });

  it("irregular sampling (0.5 to 4 s apart, seeded) and a decimated long window are still exact", () => {
    const g = new CoGradient(coPoint({ id: "p", signal: "p.co", longWindowS: 3600, maxPointsPerWindow: 60, minPoints: 10 }));
    const rnd = mulberry32(7);
    let tS = 0;
    while (tS < 4000) {
      g.add({ signal: "p.co", value: 12 - (3 / 60) * tS, quality: "good", sourceTimeMs: T0 + tS * 1000, receiveTimeMs: T0 + tS * 1000 });
      tS += 0.5 * (1 + Math.floor(rnd() * 8)); // multiples of 0.5 s: exact in binary
    }
    const { short, long } = g.evaluate(true, "");
    expect(short.status).toBe("ok");
    expect(short.robustPpmPerMin!).toBeCloseTo(-3, 9);
    expect(short.lsPpmPerMin!).toBeCloseTo(-3, 9);
    expect(long.status).toBe("ok");
    expect(long.points).toBeLessThanOrEqual(61); // 3600 s cut into 60 s slots
    expect(long.robustPpmPerMin!).toBeCloseTo(-3, 9);
    expect(long.lsPpmPerMin!).toBeCloseTo(-3, 9);
  });
});

describe("robust against spikes, least squares not", () => {
  it("one 2000 ppm spike on a flat 40 ppm: least squares crosses the caution level, Theil–Sen stays at 0", () => {
    const plant = new CoPlant([coPoint({ id: "p", signal: "p.co" })]);
    run(plant, "p.co", 0, 300, (t) => (t === 290 ? 2040 : 40));
    const p = plant.point("p");
    // Least squares by hand: 301 points at x = 0..300, mean 150, Sxx = 2·Σk² (k = 1..150)
    // = 2·150·151·301/6 = 2 272 550 s²; the spike adds Sxy = 2000·(290 − 150).
    const lsPpmPerS = (2000 * 140) / 2_272_550;
    expect(p.gradientLsPpmPerMin!).toBeCloseTo(lsPpmPerS * 60, 9); // 7.39 ppm/min
    expect(p.gradientLsPpmPerMin!).toBeGreaterThan(CAUTION_PPM_PER_MIN);
    expect(p.gradientPpmPerMin).toBe(0);
  });

  it("a 10 s burst of 2000 ppm on a 2 ppm/min ramp leaves the robust gradient exact", () => {
    // 301 points in 60 buckets of 5 s: the burst spoils at most 3 of 60 representatives,
    // fewer than a quarter, so more than half of the pairs are clean (robust-slope.ts).
    const plant = new CoPlant([coPoint({ id: "p", signal: "p.co" })]);
    run(plant, "p.co", 0, 300, (t) => 40 + (2 / 60) * t + (t >= 200 && t < 210 ? 2000 : 0));
    const p = plant.point("p");
    expect(p.gradientPpmPerMin!).toBeCloseTo(2, 9);
    expect(Math.abs(p.gradientLsPpmPerMin! - 2)).toBeGreaterThan(CAUTION_PPM_PER_MIN);
  });
});

describe("no gradient across a gap, a bad value or a function check", () => {
  const cfg = () => coPoint({ id: "p", signal: "p.co" }); // maxGapS 20, transportLagS 40
  const ramp = (t: number) => 40 + (6 / 60) * t;

  it("a gap longer than maxGapS restarts both windows, says so, and the gradient comes back once half a window is filled", () => {
    const plant = new CoPlant([cfg()]);
    run(plant, "p.co", 0, 400, ramp);
    run(plant, "p.co", 431, 440, ramp); // 31 s without samples
    let p = plant.point("p");
    expect(p.status).toBe("unknown");
    expect(p.gradientPpmPerMin).toBeNull();
    expect(plant.value("co.p.gradientPpmPerMin")).toBeNull();
    expect(p.reason).toMatch(/gap of 31 s/);
    expect(p.lastRestart).toEqual({ atMs: T0 + 431_000, reason: "gap of 31 s in the data" });
    expect(p.short.points).toBe(10);
    expect(p.long.points).toBe(10);
    run(plant, "p.co", 441, 581, ramp); // 151 points over 150 s: half the short window
    p = plant.point("p");
    expect(p.status).toBe("ok");
    expect(p.gradientPpmPerMin!).toBeCloseTo(6, 9);
    expect(p.long.status).toBe("unknown"); // the long window needs 450 s
  });

  it("a function check restarts the windows; the transport lag after it is skipped (check gas still in the line)", () => {
    const plant = new CoPlant([cfg()]);
    run(plant, "p.co", 0, 400, ramp);
    plant.feed("p.co", 0, T0 + 401_000, { functionCheck: true });
    plant.tick(T0 + 401_500);
    expect(plant.point("p").reason).toMatch(/function check/);
    run(plant, "p.co", 402, 440, ramp); // within 40 s of the check
    let p = plant.point("p");
    expect(p.short.points).toBe(0);
    expect(p.reason).toMatch(/settling after a function check/);
    run(plant, "p.co", 441, 600, ramp);
    p = plant.point("p");
    expect(p.short.points).toBe(160);
    expect(p.status).toBe("ok");
    expect(p.gradientPpmPerMin!).toBeCloseTo(6, 9);
  });

  it("bad and uncertain values restart the windows with the reason", () => {
    const plant = new CoPlant([cfg()]);
    run(plant, "p.co", 0, 400, ramp);
    plant.feed("p.co", Number.NaN, T0 + 401_000, { quality: "bad", qualityReason: "sensor failure" });
    plant.tick(T0 + 401_500);
    expect(plant.point("p").lastRestart.reason).toBe("bad value (sensor failure)");
    run(plant, "p.co", 402, 405, ramp);
    expect(plant.point("p").reason).toMatch(/window filling after bad value \(sensor failure\)/);
    plant.feed("p.co", 80, T0 + 406_000, { quality: "uncertain", qualityReason: "UncertainLastUsableValue" });
    plant.tick(T0 + 406_500);
    expect(plant.point("p").lastRestart.reason).toBe("uncertain value (UncertainLastUsableValue)");
    expect(plant.point("p").status).toBe("unknown");
  });

  it("a value the signal state refuses to trust at a tick (stale) restarts the windows", () => {
    const plant = new CoPlant([cfg()]);
    run(plant, "p.co", 0, 400, ramp);
    plant.tick(T0 + 405_000); // 5 s after the last sample, expected period 1 s
    const p = plant.point("p");
    expect(p.status).toBe("unknown");
    expect(p.reason).toMatch(/no data for 5 s/);
    expect(p.short.points).toBe(0);
  });

  it("duplicates and out-of-order samples fed straight to a point change nothing and are counted", () => {
    const g = new CoGradient(cfg());
    const s = (v: number, tS: number) => ({ signal: "p.co", value: v, quality: "good" as const, sourceTimeMs: T0 + tS * 1000, receiveTimeMs: T0 + tS * 1000 });
    for (let t = 0; t <= 300; t++) g.add(s(ramp(t), t));
    g.add(s(9999, 300));
    g.add(s(9999, 250));
    expect(g.duplicates).toBe(1);
    expect(g.outOfOrder).toBe(1);
    expect(g.accepted).toBe(301);
    expect(g.evaluate(true, "").short.robustPpmPerMin!).toBeCloseTo(6, 9);
    expect(g.latest).toEqual({ tS: (T0 + 300_000) / 1000, v: ramp(300) });
  });
});

describe("memory does not grow with run time", () => {
  it("48 h at 1 Hz: windows, baseline and inlet history hold what their lengths allow, no more", () => {
    const inlet = coPoint({ id: "in", signal: "in.co" });
    const silo = coPoint({ id: "s", signal: "s.co", shortWindowS: 1800, longWindowS: 10800, minPoints: 60 });
    const plant = new CoPlant([inlet, silo], [coRise({ inlet: "in", outlet: "s", transportDelayS: 20 })]);
    const rnd = mulberry32(3);
    const H = 48 * 3600;
    for (let t = 0; t <= H; t++) {
      const v = 20 + 5 * rnd();
      plant.feed("in.co", v, T0 + t * 1000);
      plant.feed("s.co", v, T0 + t * 1000);
      if (t % 60 === 0 || t > H - 2) plant.tick(T0 + t * 1000 + 500);
    }
    const view = plant.tick(T0 + H * 1000 + 500);
    const p = view.coPoints.find((x) => x.id === "in")!;
    const s = view.coPoints.find((x) => x.id === "s")!;
    expect(p.samples.accepted).toBe(H + 1);
    expect(p.short.points).toBe(301);
    expect(p.long.points).toBe(901);
    expect(s.short.points).toBeLessThanOrEqual(1201); // decimated to 1800 s / 1200 slots
    expect(s.long.points).toBeLessThanOrEqual(1201); // 10 800 s / 1200 slots of 9 s
    expect(s.long.points).toBeGreaterThan(1100);
    expect(p.baseline.values).toBeLessThanOrEqual(61); // 3600 s / 60 s + 1
    expect(p.baseline.status).toBe("ok");
    // inlet history: transport delay 20 s + tolerance 5 s + the inlet's maxGapS 20 s
    expect(view.coRises[0]!.historyPoints).toBeLessThanOrEqual(46);
    expect(view.coRises[0]!.status).toBe("ok");
  }, 120_000);

  it("10 Hz into a 900 s window keeps at most maxPointsPerWindow + 1 points", () => {
    const g = new CoGradient(coPoint({ id: "p", signal: "p.co", longWindowS: 900, maxPointsPerWindow: 600 }));
    for (let k = 0; k <= 36_000; k++) {
      const tMs = T0 + k * 100;
      g.add({ signal: "p.co", value: 40 + k * 0.001, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });
    }
    const { short, long } = g.evaluate(true, "");
    expect(long.points).toBeLessThanOrEqual(601);
    expect(short.points).toBeLessThanOrEqual(601);
    // 0.001 ppm per 0.1 s = 0.6 ppm/min, exact through the decimation
    expect(long.robustPpmPerMin!).toBeCloseTo(0.6, 6); // tenths of a second are not exact in binary
    expect(short.lsPpmPerMin!).toBeCloseTo(0.6, 6);
  });
});
