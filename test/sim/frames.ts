// Shared utilities for the simulator tests: run a scenario to the end, pick series, and
// compute least-squares slopes and dew points independently of the code under test.
import { createRequire } from "node:module";
import { createScenario, type SimFrame } from "../../src/sim/plant.js";

export interface Point {
  tS: number;
  value: number;
}

export function runScenario(name: string, opts: { startTimeMs?: number; stepS?: number; seed?: number } = {}): SimFrame[] {
  const scenario = createScenario(name, { startTimeMs: opts.startTimeMs ?? 0, stepS: opts.stepS, seed: opts.seed });
  const frames: SimFrame[] = [];
  for (let f = scenario.next(); f !== null; f = scenario.next()) frames.push(f);
  return frames;
}

export function valueOf(frame: SimFrame, tag: string): number {
  const v = frame.values.find((x) => x.tag === tag);
  if (v === undefined) throw new Error(`frame at ${frame.tMs} has no tag ${tag}`);
  return v.value;
}

/** A tag's series with time in seconds from the first frame. */
export function series(frames: SimFrame[], tag: string): Point[] {
  const t0 = frames[0]?.tMs ?? 0;
  return frames.map((f) => ({ tS: (f.tMs - t0) / 1000, value: valueOf(f, tag) }));
}

export function meanBetween(points: Point[], fromS: number, toS: number): number {
  const sel = points.filter((p) => p.tS >= fromS && p.tS < toS);
  if (sel.length === 0) throw new Error(`no points in [${fromS}, ${toS})`);
  return sel.reduce((a, p) => a + p.value, 0) / sel.length;
}

/**
 * Ordinary least-squares slope (ppm/min for CO) over the trailing window ending at each
 * point, for every point whose window is complete. Textbook OLS:
 * b = (n·Σxy − Σx·Σy) / (n·Σx² − (Σx)²), with x in minutes relative to the window end
 * (keeps the sums well conditioned). Returns one entry per complete window.
 */
export function trailingOlsSlopes(points: Point[], windowS: number): { tS: number; slopePerMin: number }[] {
  const out: { tS: number; slopePerMin: number }[] = [];
  let start = 0;
  for (let end = 0; end < points.length; end++) {
    const endPoint = points[end]!;
    while (points[start]!.tS < endPoint.tS - windowS - 1e-9) start++;
    if (endPoint.tS - (points[0]?.tS ?? 0) < windowS - 1e-9) continue; // window not yet full
    let n = 0, sx = 0, sy = 0, sxx = 0, sxy = 0;
    for (let i = start; i <= end; i++) {
      const p = points[i]!;
      const x = (p.tS - endPoint.tS) / 60;
      n++;
      sx += x;
      sy += p.value;
      sxx += x * x;
      sxy += x * p.value;
    }
    out.push({ tS: endPoint.tS, slopePerMin: (n * sxy - sx * sy) / (n * sxx - sx * sx) });
  }
  return out;
}

interface Psychrolib {
  SI: number;
  SetUnitSystem(u: number): void;
  GetTDewPointFromVapPres(tDryBulbC: number, vapPresPa: number): number;
}
const psychrolib = createRequire(import.meta.url)("psychrolib") as Psychrolib;
psychrolib.SetUnitSystem(psychrolib.SI);

/**
 * Water dew point, °C, of gas with the given H2O (% vol) at barometric + gauge pressure:
 * p_w = x·p_abs (ideal gas), then the ASHRAE Handbook Fundamentals (2017) saturation line
 * as implemented by the npm package psychrolib (an oracle outside this project).
 */
export function dewPointC(h2oPctVol: number, gaugeMbar: number, baroPa = 101_325): number {
  const pAbsPa = baroPa + gaugeMbar * 100;
  // The dry-bulb argument only caps the result; 200 °C is psychrolib's upper bound.
  return psychrolib.GetTDewPointFromVapPres(200, (h2oPctVol / 100) * pAbsPa);
}
