// Golden scenario folders, run by one generic test.
//
// Every folder test/scenarios/<name>/ with a scenario.json is run through the real config
// loader and the real Engine on the data clock (see harness.ts): input.csv is read with
// parseHistoryCsv, and every advisory transition and nuisance event (chatter, flood,
// standing) the core emits must equal, one for one and in the core's order, the lines of
// expected.jsonl.
//
//   UPDATE_GOLDEN=1 npx vitest run test/scenarios    rewrites every expected.jsonl from the
//                                                     present code instead of comparing
//   npx tsx test/scenarios/generate.ts                regenerates every input.csv from the simulator
//
// A golden file only records what the code does. So each folder also has its own checks
// below (CHECKS), stating what a process engineer expects of the scenario, independent of
// expected.jsonl; a folder without checks fails.
import { existsSync, readFileSync, writeFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { createRequire } from "node:module";
import { describe, expect, it } from "vitest";
import type { MillwardenConfig } from "../../src/config/schema.js";
import { loadConfig } from "../../src/config/load.js";
import type { AdvisoryTransition, PlantState, Sample } from "../../src/core/types.js";
import { parseHistoryCsv } from "../../src/sources/csv.js";
import {
  CAL_GASES,
  CAL_SAMPLE_GAS_S,
  CAL_STATUS_OFF_S,
  CAL_STATUS_ON_S,
  CHATTER_END_S,
  FLOOD_PURGE_START_S,
  FROZEN_CO_AT_S,
  PURGE_START_S,
  SIM_TAGS,
  createScenario,
} from "../../src/sim/plant.js";
import {
  SCENARIOS_DIR,
  SIM_START_MS,
  configOf,
  readScenarioSpec,
  runCore,
  scenarioFolders,
  type GoldenEvent,
  type ScenarioRun,
  type ScenarioSpec,
  type TickRecord,
} from "./harness.js";

const UPDATE = process.env.UPDATE_GOLDEN === "1";

interface Loaded {
  spec: ScenarioSpec;
  cfg: MillwardenConfig;
  samples: Sample[];
  run: ScenarioRun;
  onsetMs: number;
  endMs: number;
}

const cache = new Map<string, Loaded>();
function load(folder: string): Loaded {
  let l = cache.get(folder);
  if (l === undefined) {
    const spec = readScenarioSpec(folder);
    const cfg = configOf(folder, spec);
    const file = join(SCENARIOS_DIR, folder, "input.csv");
    const { samples } = parseHistoryCsv(readFileSync(file, "utf8"), file);
    const onsetS = createScenario(spec.sim, { startTimeMs: 0 }).onsetS;
    if (onsetS === null) throw new Error(`${folder}: simulator scenario "${spec.sim}" has no onset; these checks need one`);
    l = { spec, cfg, samples, run: runCore(cfg, samples), onsetMs: SIM_START_MS + onsetS * 1000, endMs: SIM_START_MS + spec.durationS * 1000 };
    cache.set(folder, l);
  }
  return l;
}

// ---- helpers for the checks -------------------------------------------------------------

/** A keyed list of the state (a family's view); fails clearly while the family has not added it. */
function listOf(state: PlantState, key: string): Record<string, unknown>[] {
  const v = (state as unknown as Record<string, unknown>)[key];
  if (!Array.isArray(v)) throw new Error(`GET /api/state has no list "${key}" (found ${JSON.stringify(v)}): the family that provides it has not landed`);
  return v as Record<string, unknown>[];
}

function entry(state: PlantState, key: string, id: string): Record<string, unknown> {
  const e = listOf(state, key).find((x) => x.id === id);
  if (e === undefined) throw new Error(`state.${key} has no entry with id "${id}"`);
  return e;
}

function inertingState(t: TickRecord, unitId: string): string {
  const u = entry(t.state, "units", unitId) as { inerting?: { state?: string } | null };
  if (!u.inerting?.state) throw new Error(`state.units "${unitId}" has no inerting state at ${new Date(t.nowMs).toISOString()}`);
  return u.inerting.state;
}

function signalValue(t: TickRecord, id: string): number | null {
  const s = t.state.signals.find((x) => x.id === id);
  if (s === undefined) throw new Error(`state.signals has no signal "${id}"`);
  return s.value;
}

/** A derived key must be one the config declares (engine.quantities); fails naming it otherwise. */
function requireQuantity(run: ScenarioRun, key: string, family: string): void {
  const known = run.engine.quantities.map((q) => q.key);
  if (!known.includes(key)) {
    throw new Error(`derived key "${key}" is missing from engine.quantities (the ${family} family has not landed it); known keys: ${known.join(", ")}`);
  }
}

function ticksBetween(run: ScenarioRun, fromMs: number, toMs: number): TickRecord[] {
  return run.ticks.filter((t) => t.nowMs >= fromMs && t.nowMs <= toMs);
}

function tickAt(run: ScenarioRun, atMs: number): TickRecord {
  const t = run.ticks.find((x) => x.nowMs >= atMs);
  if (t === undefined) throw new Error(`no tick at or after ${new Date(atMs).toISOString()}`);
  return t;
}

/** Consecutive duplicates removed. */
function runs<T>(xs: T[]): T[] {
  return xs.filter((x, i) => i === 0 || x !== xs[i - 1]);
}

function raisesOf(ts: AdvisoryTransition[], advisoryId: string) {
  return ts.filter((t) => t.advisoryId === advisoryId && (t.transition === "raise" || t.transition === "escalate"));
}

/**
 * Annunciations as ISA-18.2 counts them for chatter and flood (DESIGN.md §5): a transition into
 * "unack" from any other state (a raise, the end of a suppression with the condition present),
 * not a re-alert and not an escalation of an advisory already unacknowledged.
 */
function annunciations(ts: AdvisoryTransition[]): AdvisoryTransition[] {
  return ts.filter((t) => t.to === "unack" && t.from !== "unack" && t.transition !== "re-alert");
}

function phaseOf(t: TickRecord, unitId: string): unknown {
  return entry(t.state, "phases", unitId).phase;
}

/** Mean of a signal's values over the ticks in [fromMs, toMs]. */
function meanSignal(run: ScenarioRun, id: string, fromMs: number, toMs: number): number {
  const v = ticksBetween(run, fromMs, toMs).map((t) => signalValue(t, id)!);
  if (v.length === 0) throw new Error(`no ticks between ${iso(fromMs)} and ${iso(toMs)}`);
  return v.reduce((a, b) => a + b, 0) / v.length;
}

/** The shipped demo config, for comparing a scenario-local config with it. */
const DEMO_CONFIG = resolve(SCENARIOS_DIR, "../../config/demo.yaml");

/**
 * The rules of the demo rule set built on the bag filter outlet O2/CO analyser bf2-a213
 * (BF2-AT-213 O2, BF2-AT-214 CO), read off config/demo.yaml by hand: the filter's CO gradient,
 * CO level, CO above baseline and CO rise across the filter, its O2 margin and time to the O2
 * limit. (The analyser's own state rules watch its health, not its values.)
 */
/** bf2-a213's settle time after a function check, from config/demo.yaml. */
const BF2_A213_SETTLE_S = loadConfig(DEMO_CONFIG).analysers.find((a) => a.id === "bf2-a213")!.settleS;
const BF2_A213_RULES = ["co-baseline-bf2", "co-gradient-bf2", "co-level-bf2", "co-rise-bf2", "o2-margin-bf2", "o2-time-bf2"];

interface Psychrolib {
  SI: number;
  SetUnitSystem(u: number): void;
  GetTDewPointFromVapPres(tDryBulbC: number, vapPresPa: number): number;
}
const psychrolib = createRequire(import.meta.url)("psychrolib") as Psychrolib;
psychrolib.SetUnitSystem(psychrolib.SI);

/**
 * Water dew point, °C, from the ASHRAE Handbook Fundamentals (2017) saturation line as the
 * npm package psychrolib implements it (an oracle outside this project); p_w = x·p_abs (Dalton).
 */
function dewPointC(h2oPctVol: number, absPressurePa: number): number {
  return psychrolib.GetTDewPointFromVapPres(200, (h2oPctVol / 100) * absPressurePa);
}

/**
 * The demo plant's O2 limits, computed here on their own: site maximum 12 % wet, and the
 * LOC 15 % dry less the NFPA 69 (2019) §8.3.2 margin for continuously monitored systems with
 * an LOC of at least 5 %: 2 %-pt, so 13 % dry (from memory). The smaller margin governs;
 * O2_dry = O2_wet / (1 − x_H2O) (DESIGN.md §4).
 */
function independentO2MarginPctPt(o2WetPct: number, h2oPct: number): number {
  return Math.min(12 - o2WetPct, 13 - o2WetPct / (1 - h2oPct / 100));
}

function olsSlopePerS(points: { tMs: number; v: number }[]): number {
  const n = points.length;
  const mt = points.reduce((a, p) => a + p.tMs / 1000, 0) / n;
  const mv = points.reduce((a, p) => a + p.v, 0) / n;
  let sxy = 0;
  let sxx = 0;
  for (const p of points) {
    sxy += (p.tMs / 1000 - mt) * (p.v - mv);
    sxx += (p.tMs / 1000 - mt) ** 2;
  }
  return sxy / sxx;
}

const iso = (ms: number) => new Date(ms).toISOString();
const MIN = 60_000;

// ---- what a process engineer expects of each scenario -----------------------------------

type Check = (l: Loaded) => void;

const CHECKS: Record<string, Record<string, Check>> = {
  "wet-coal-surge": {
    "raises dewpoint-bf2-outlet after the onset (not before), reaching caution as the margin falls below 15 K, never warning": ({ run, onsetMs }) => {
      const ts = run.transitions.filter((t) => t.advisoryId === "dewpoint-bf2-outlet");
      expect(ts.filter((t) => t.atMs < onsetMs), "nothing before the onset").toEqual([]);
      const raised = raisesOf(ts, "dewpoint-bf2-outlet");
      expect(raised.length, "a raise after the onset").toBeGreaterThan(0);
      expect(raised[0]!.transition).toBe("raise");
      // The margin falls from ~31 K; notice is 20 K in config/demo.yaml, reached some minutes into the surge.
      expect(raised[0]!.atMs - onsetMs).toBeLessThanOrEqual(15 * MIN);
      expect(raised.some((t) => t.tier === "caution"), "caution once the margin is below 15 K").toBe(true);
      // The independent margin (psychrolib) never comes near the 5 K warning level (checked below).
      expect(raised.filter((t) => t.tier === "warning")).toEqual([]);
    },
    "state.dewPoints bf2-outlet shows the margin shrinking from ~30 K to ~10 K, as psychrolib computes it": ({ run, onsetMs, endMs }) => {
      const margin = (t: TickRecord) => {
        const m = entry(t.state, "dewPoints", "bf2-outlet").marginK;
        if (typeof m !== "number") throw new Error(`dewPoints bf2-outlet marginK is ${JSON.stringify(m)} at ${iso(t.nowMs)}, expected a number`);
        return m;
      };
      const meanMargin = (fromMs: number, toMs: number) => {
        const sel = ticksBetween(run, fromMs, toMs).map(margin);
        return sel.reduce((a, b) => a + b, 0) / sel.length;
      };
      // Common practice keeps 15-20 K in the filter (DESIGN.md §4); steady grinding here has about 30 K.
      const before = meanMargin(onsetMs - 5 * MIN, onsetMs);
      expect(before).toBeGreaterThan(27);
      expect(before).toBeLessThan(35);
      const end = meanMargin(endMs - 3 * MIN, endMs);
      expect(end).toBeLessThan(11);
      expect(end).toBeGreaterThan(6);
      // Shrinking: every 3-minute mean over the surge is below the one before.
      const means = [3, 6, 9, 12, 15, 18].map((m) => meanMargin(onsetMs + (m - 3) * MIN, onsetMs + m * MIN));
      for (let i = 1; i < means.length; i++) expect(means[i]!, `3-min mean ${i}`).toBeLessThan(means[i - 1]!);
      // The margin matches gas temperature minus the ASHRAE dew point of the measured H2O at the
      // filter's absolute pressure (site barometric 1002 hPa in config/demo.yaml, plus the gauge).
      for (const m of [-5, 5, 10, 15, 20, 25]) {
        const t = tickAt(run, onsetMs + m * MIN);
        const gasC = signalValue(t, "bf2.outlet.temp")!;
        const h2o = signalValue(t, "bf2.outlet.h2o")!;
        const gaugePa = signalValue(t, "bf2.outlet.press")!;
        expect(Math.abs(margin(t) - (gasC - dewPointC(h2o, 100_200 + gaugePa))), `at onset ${m >= 0 ? "+" : ""}${m} min`).toBeLessThan(0.25);
      }
      // Never near the 5 K warning level of the rule.
      expect(Math.min(...run.ticks.map(margin))).toBeGreaterThan(6);
    },
    "dewpoint.bf2-outlet.timeToCondensationS is finite and positive while the margin shrinks, and near margin / rate": ({ run, onsetMs }) => {
      const key = "dewpoint.bf2-outlet.timeToCondensationS";
      requireQuantity(run, key, "dew point");
      const during = ticksBetween(run, onsetMs + 6 * MIN, onsetMs + 15 * MIN);
      for (const t of during) {
        const v = t.derived.get(key);
        expect(typeof v === "number" && Number.isFinite(v) && v > 0, `${key} at ${iso(t.nowMs)} is ${String(v)}`).toBe(true);
      }
      // Linear extrapolation from the state's own margins: margin now / fall rate over 5 min.
      const now = tickAt(run, onsetMs + 12 * MIN);
      const earlier = tickAt(run, onsetMs + 7 * MIN);
      const m = (t: TickRecord) => entry(t.state, "dewPoints", "bf2-outlet").marginK as number;
      const rateKPerS = (m(earlier) - m(now)) / ((now.nowMs - earlier.nowMs) / 1000);
      const extrapolatedS = m(now) / rateKPerS;
      const v = now.derived.get(key) as number;
      expect(v).toBeGreaterThan(extrapolatedS / 3);
      expect(v).toBeLessThan(extrapolatedS * 3);
    },
  },

  "o2-creep-damper": {
    "o2-margin-vm2 goes notice, caution, warning in that order after the onset, warning near the independent limit crossing": ({ run, onsetMs }) => {
      const ts = run.transitions.filter((t) => t.advisoryId === "o2-margin-vm2");
      expect(ts.filter((t) => t.atMs < onsetMs), "nothing before the onset").toEqual([]);
      const raised = raisesOf(ts, "o2-margin-vm2");
      const first = (tier: string) => raised.find((t) => t.tier === tier);
      const [n, c, w] = [first("notice"), first("caution"), first("warning")];
      expect(n, "notice").toBeDefined();
      expect(c, "caution").toBeDefined();
      expect(w, "warning").toBeDefined();
      expect(raised[0]!.tier).toBe("notice");
      expect(n!.atMs).toBeLessThan(c!.atMs);
      expect(c!.atMs).toBeLessThan(w!.atMs);
      // Warning is margin < 0: the measured O2 has passed the limit (computed here from the samples).
      const crossing = run.ticks.find((t) => t.nowMs > onsetMs && independentO2MarginPctPt(signalValue(t, "vm2.outlet.o2")!, signalValue(t, "bf2.outlet.h2o")!) < 0);
      expect(crossing, "the measured O2 passes the limit").toBeDefined();
      expect(w!.atMs).toBeGreaterThan(crossing!.nowMs - 1 * MIN);
      expect(w!.atMs).toBeLessThan(crossing!.nowMs + 3 * MIN);
    },
    "vm2 inerting state goes inert, marginal, not-inert in that order and does not return to inert": ({ run, onsetMs }) => {
      const states = ticksBetween(run, onsetMs - 1 * MIN, Infinity).map((t) => inertingState(t, "vm2"));
      const firstAt = (s: string) => states.indexOf(s);
      expect(states[0]).toBe("inert");
      expect(firstAt("marginal")).toBeGreaterThan(0);
      expect(firstAt("not-inert")).toBeGreaterThan(firstAt("marginal"));
      expect(states.slice(firstAt("not-inert")).includes("inert"), "back to inert after not-inert").toBe(false);
      expect(states.at(-1)).toBe("not-inert");
      expect(runs(states).filter((s) => s !== "inert" && s !== "marginal" && s !== "not-inert")).toEqual([]);
    },
    "o2.vm2.timeToLimitS is finite during the creep, falls as the limit nears, and is near margin / rate": ({ run, onsetMs }) => {
      const key = "o2.vm2.timeToLimitS";
      requireQuantity(run, key, "oxygen");
      const notInert = run.ticks.find((t) => t.nowMs > onsetMs && inertingState(t, "vm2") === "not-inert");
      expect(notInert).toBeDefined();
      const during = ticksBetween(run, onsetMs + 6 * MIN, notInert!.nowMs - 1 * MIN);
      expect(during.length).toBeGreaterThan(300);
      for (const t of during) {
        const v = t.derived.get(key);
        expect(typeof v === "number" && Number.isFinite(v) && v > 0, `${key} at ${iso(t.nowMs)} is ${String(v)}`).toBe(true);
      }
      const at = (m: number) => tickAt(run, onsetMs + m * MIN).derived.get(key) as number;
      expect(at(15)).toBeLessThan(at(8));
      // Independent: governing margin (see independentO2MarginPctPt) over its least-squares rate of the last 5 min.
      const now = tickAt(run, onsetMs + 10 * MIN);
      const pts = ticksBetween(run, now.nowMs - 5 * MIN, now.nowMs).map((t) => ({
        tMs: t.nowMs,
        v: independentO2MarginPctPt(signalValue(t, "vm2.outlet.o2")!, signalValue(t, "bf2.outlet.h2o")!),
      }));
      const extrapolatedS = pts.at(-1)!.v / -olsSlopePerS(pts);
      expect(at(10)).toBeGreaterThan(extrapolatedS / 2);
      expect(at(10)).toBeLessThan(extrapolatedS * 2);
    },
  },

  "purge-after-trip": {
    "the phase of vm2 is grinding before the trip, standstill-loaded within 2 min after it and to the end (coal left inside)": ({ run, onsetMs }) => {
      const phase = (t: TickRecord) => entry(t.state, "phases", "vm2").phase;
      expect(phase(tickAt(run, onsetMs - 1 * MIN))).toBe("grinding");
      const loaded = run.ticks.find((t) => t.nowMs > onsetMs && phase(t) === "standstill-loaded");
      expect(loaded, "standstill-loaded after the trip").toBeDefined();
      expect(loaded!.nowMs - onsetMs).toBeLessThanOrEqual(2 * MIN);
      expect(runs(ticksBetween(run, loaded!.nowMs, Infinity).map(phase))).toEqual(["standstill-loaded"]);
    },
    "vm2 is purging while N2 flows and O2 is above the limit, never inert above the limit, and ends inert or marginal": ({ run }) => {
      const purgeStartMs = SIM_START_MS + PURGE_START_S * 1000;
      let purgingTicks = 0;
      for (const t of run.ticks) {
        const margin = independentO2MarginPctPt(signalValue(t, "vm2.outlet.o2")!, signalValue(t, "bf2.outlet.h2o")!);
        const state = inertingState(t, "vm2");
        if (margin < 0) expect(state, `inert above the limit at ${iso(t.nowMs)}`).not.toBe("inert");
        const n2 = signalValue(t, "ig2.flow");
        // Clearly above the limit (0.3 %-pt, several noise sigmas) with the purge flow on.
        if (t.nowMs > purgeStartMs && n2 !== null && n2 >= 1000 && margin < -0.3) {
          expect(state, `vm2 inerting state at ${iso(t.nowMs)} (N2 ${n2} Nm³/h, margin ${margin.toFixed(2)} %-pt)`).toBe("purging");
          purgingTicks++;
        }
      }
      // The purge window is several minutes long: the check above is not vacuous.
      expect(purgingTicks).toBeGreaterThan(300);
      expect(["inert", "marginal"]).toContain(inertingState(run.ticks.at(-1)!, "vm2"));
    },
  },

  "analyser-calibration": {
    "the analyser is in function check while its status says so and for its settle time after, and no advisory is raised at all": ({ run }) => {
      const state = (t: TickRecord) => entry(t.state, "analysers", "bf2-a213").state;
      const inCheck = run.ticks.filter((t) => state(t) === "function-check");
      expect(inCheck.length, "ticks in function check").toBeGreaterThan(0);
      // The status output is 1 from the frame after CAL_STATUS_ON_S to the frame of CAL_STATUS_OFF_S (plant.ts);
      // then the analyser settles for its settleS (config/demo.yaml) while the line flushes.
      expect(inCheck[0]!.nowMs - (SIM_START_MS + CAL_STATUS_ON_S * 1000)).toBeLessThanOrEqual(3000);
      expect(inCheck.at(-1)!.nowMs - (SIM_START_MS + (CAL_STATUS_OFF_S + BF2_A213_SETTLE_S) * 1000)).toBeLessThanOrEqual(3000);
      expect(inCheck.at(-1)!.nowMs - (SIM_START_MS + (CAL_STATUS_OFF_S + BF2_A213_SETTLE_S) * 1000)).toBeGreaterThanOrEqual(-3000);
      expect(runs(run.ticks.map(state))).toEqual(["ok", "function-check", "ok"]);
      expect(annunciations(run.transitions).map((t) => `${t.advisoryId} ${t.transition} at ${iso(t.atMs)}`)).toEqual([]);
      expect(run.nuisance).toEqual([]);
    },
    "every rule on bf2-a213's values is suppressed by design for the check and unsuppressed after it, and only those": ({ run }) => {
      const byDesign = (kind: string) =>
        run.transitions
          .filter((t) => t.transition === kind && t.atMs > SIM_START_MS + CAL_STATUS_ON_S * 1000)
          .map((t) => t.advisoryId)
          .sort();
      expect(byDesign("suppress")).toEqual(BF2_A213_RULES);
      expect(byDesign("unsuppress")).toEqual(BF2_A213_RULES);
      for (const t of run.transitions.filter((x) => x.transition === "suppress" && BF2_A213_RULES.includes(x.advisoryId))) {
        expect(t.why, t.advisoryId).toMatch(/bf2-a213 in function check/);
        expect(t.atMs - (SIM_START_MS + CAL_STATUS_ON_S * 1000)).toBeLessThanOrEqual(3000);
      }
      for (const t of run.transitions.filter((x) => x.transition === "unsuppress" && BF2_A213_RULES.includes(x.advisoryId))) {
        expect(Math.abs(t.atMs - (SIM_START_MS + (CAL_STATUS_OFF_S + BF2_A213_SETTLE_S) * 1000))).toBeLessThanOrEqual(3000);
      }
      // The 20-minute "function check too long" notice is not reached by a 10-minute calibration.
      expect(CAL_STATUS_OFF_S - CAL_STATUS_ON_S).toBeLessThan(1200);
      expect(run.transitions.filter((t) => t.advisoryId === "analyser-check-bf2-a213")).toEqual([]);
    },
    "the readings show the check gases meanwhile; the O2 margin and CO gradient at the filter are unknown, never a number": ({ run }) => {
      // At the end of each 120 s step a first-order reading has covered 1 − e^(−120/45) = 93 % (O2) and
      // 1 − e^(−120/40) = 95 % (CO) of the way to the check gas (the analysers' time constants, model.ts).
      const endOf = (i: number) => SIM_START_MS + (i + 1 < CAL_GASES.length ? CAL_GASES[i + 1]!.fromS : CAL_SAMPLE_GAS_S) * 1000;
      expect(meanSignal(run, "bf2.outlet.o2", endOf(0) - 10_000, endOf(0))).toBeLessThan(1.2);
      expect(meanSignal(run, "bf2.outlet.co", endOf(1) - 10_000, endOf(1))).toBeGreaterThan(720);
      expect(meanSignal(run, "bf2.outlet.o2", endOf(2) - 10_000, endOf(2))).toBeGreaterThan(18.5);
      for (const t of ticksBetween(run, SIM_START_MS + (CAL_STATUS_ON_S + 3) * 1000, SIM_START_MS + CAL_STATUS_OFF_S * 1000)) {
        expect(t.derived.get("o2.bf2.marginPctPt"), `o2.bf2.marginPctPt at ${iso(t.nowMs)}`).toBeNull();
        expect(t.derived.get("co.bf2-outlet.gradientPpmPerMin"), `co gradient at ${iso(t.nowMs)}`).toBeNull();
      }
      // Back on the process within minutes: margin as computed here from the reading (13 % dry LOC-based limit).
      const after = tickAt(run, SIM_START_MS + (CAL_STATUS_OFF_S + 120) * 1000);
      const margin = after.derived.get("o2.bf2.marginPctPt");
      expect(typeof margin).toBe("number");
      expect(Math.abs((margin as number) - independentO2MarginPctPt(signalValue(after, "vm2.outlet.o2")!, signalValue(after, "bf2.outlet.h2o")!))).toBeLessThan(0.3);
    },
    "without the analyser's status signal the same check gases would raise O2 and CO advisories": ({ samples }) => {
      const demo = loadConfig(DEMO_CONFIG);
      // config/demo.yaml without the status contact: bf2-a213 has no functionCheckSignal.
      const unaware = { ...demo, analysers: demo.analysers.map((a) => ({ ...a, functionCheckSignal: undefined })) };
      expect(demo.analysers.find((a) => a.id === "bf2-a213")?.functionCheckSignal).toBe("bf2.a213.status");
      const blind = runCore(unaware, samples);
      const raised = annunciations(blind.transitions).filter((t) => t.atMs >= SIM_START_MS + CAL_STATUS_ON_S * 1000);
      const ids = new Set(raised.map((t) => t.advisoryId));
      // 20.9 % O2 (instrument air) is far above the 13 % dry limit; 800 ppm CO is far above 400 ppm.
      expect(ids.has("o2-margin-bf2"), [...ids].join(", ")).toBe(true);
      expect(ids.has("co-level-bf2"), [...ids].join(", ")).toBe(true);
    },
  },

  "trip-loaded-co-rise": {
    "the phase goes grinding → standstill-loaded at the trip and stays there; the latching notice is raised then and stays on": ({ run, onsetMs, endMs }) => {
      expect(phaseOf(tickAt(run, onsetMs - 1 * MIN), "vm2")).toBe("grinding");
      const loaded = run.ticks.find((t) => t.nowMs > onsetMs && phaseOf(t, "vm2") === "standstill-loaded");
      expect(loaded, "standstill-loaded after the trip").toBeDefined();
      expect(loaded!.nowMs - onsetMs).toBeLessThanOrEqual(2 * MIN);
      expect(runs(ticksBetween(run, loaded!.nowMs, Infinity).map((t) => phaseOf(t, "vm2")))).toEqual(["standstill-loaded"]);
      const ts = run.transitions.filter((t) => t.advisoryId === "mill-stopped-loaded-vm2");
      expect(ts.map((t) => t.transition)).toEqual(["raise"]);
      expect(ts[0]!.atMs - onsetMs).toBeLessThanOrEqual(2 * MIN);
      const view = tickAt(run, endMs - 1000).state.advisories.find((a) => a.id === "mill-stopped-loaded-vm2");
      expect(view?.latching).toBe(true);
      expect(view?.conditionActive).toBe(true);
    },
    "CO rises at both analysers through the standstill, and CO advisories are raised during it, none before the trip": ({ run, onsetMs, endMs }) => {
      for (const id of ["vm2.outlet.co", "bf2.outlet.co"]) {
        const before = meanSignal(run, id, onsetMs - 5 * MIN, onsetMs);
        const end = meanSignal(run, id, endMs - 2 * MIN, endMs);
        expect(end - before, id).toBeGreaterThan(150);
        // Still rising at the end (the nest), by least squares over the last 15 min.
        const pts = ticksBetween(run, endMs - 15 * MIN, endMs).map((t) => ({ tMs: t.nowMs, v: signalValue(t, id)! }));
        expect(olsSlopePerS(pts) * 60, `${id} ppm/min over the last 15 min`).toBeGreaterThan(1);
      }
      const co = annunciations(run.transitions).filter((t) => t.advisoryId.startsWith("co-"));
      expect(co.filter((t) => t.atMs < onsetMs)).toEqual([]);
      expect(new Set(co.map((t) => t.advisoryId))).toEqual(new Set(["co-gradient-vm2", "co-gradient-bf2", "co-baseline-vm2", "co-baseline-bf2", "co-level-bf2"]));
      for (const t of co) expect(phaseOf(tickAt(run, t.atMs), "vm2"), `${t.advisoryId} at ${iso(t.atMs)}`).toBe("standstill-loaded");
    },
    "the isolated, blanketed circuit stays inert: no O2 advisory, and the O2 only falls": ({ run, onsetMs, endMs }) => {
      expect(run.transitions.filter((t) => t.advisoryId.startsWith("o2-"))).toEqual([]);
      expect(meanSignal(run, "vm2.outlet.o2", endMs - 2 * MIN, endMs)).toBeLessThan(meanSignal(run, "vm2.outlet.o2", onsetMs - 2 * MIN, onsetMs));
    },
  },

  "trip-flood": {
    "more than 10 annunciations within 10 min of the trip give one flood-start whose first-out is the trip's own notice": ({ run, onsetMs }) => {
      const starts = run.nuisance.filter((n) => n.type === "flood-start");
      expect(starts.length).toBe(1);
      const start = starts[0]!;
      expect(start.position).toBe("control-room");
      expect(start.atMs - onsetMs).toBeLessThanOrEqual(10 * MIN);
      // Counted here: annunciations within the 10 min ending at the flood-start (DESIGN.md §5: more than 10).
      const inWindow = annunciations(run.transitions).filter((t) => t.atMs > start.atMs - 10 * MIN && t.atMs <= start.atMs);
      expect(inWindow.length).toBeGreaterThan(10);
      expect(start.count).toBe(inWindow.length);
      expect(start.advisoryId).toBe(inWindow[0]!.advisoryId);
      expect(start.advisoryId).toBe("mill-stopped-loaded-vm2");
      // Many things at once: the phase, the O2 and the CO families all take part.
      const families = new Set(inWindow.map((t) => t.advisoryId.split("-")[0]));
      for (const f of ["mill", "o2", "co"]) expect(families.has(f), `family ${f} in ${[...families].join(", ")}`).toBe(true);
      expect(annunciations(run.transitions).filter((t) => t.atMs < onsetMs)).toEqual([]);
    },
    "the flood ends once fewer than 5 annunciations are left within 10 min, after the purge has calmed the plant": ({ run }) => {
      const ends = run.nuisance.filter((n) => n.type === "flood-end");
      expect(ends.length).toBe(1);
      const end = ends[0]!;
      const start = run.nuisance.find((n) => n.type === "flood-start")!;
      expect(end.atMs).toBeGreaterThan(start.atMs);
      expect(end.atMs).toBeGreaterThan(SIM_START_MS + FLOOD_PURGE_START_S * 1000);
      const countAt = (atMs: number) => annunciations(run.transitions).filter((t) => t.atMs > atMs - 10 * MIN && t.atMs <= atMs).length;
      expect(countAt(end.atMs)).toBeLessThan(5);
      expect(countAt(end.atMs - 1000)).toBeGreaterThanOrEqual(5);
      expect(run.engine.inFlood("control-room")).toBe(false);
    },
  },

  "o2-chatter": {
    "the bag filter O2 sits at the notice threshold of its margin while the set point is raised": ({ run, onsetMs }) => {
      // Margin as computed here: the 13 % dry LOC-based limit minus the dry reading (the wet site maximum does not govern at 14 % H2O).
      const fromMs = onsetMs + 10 * MIN;
      const toMs = SIM_START_MS + CHATTER_END_S * 1000;
      const margins = ticksBetween(run, fromMs, toMs).map((t) => 13 - signalValue(t, "bf2.outlet.o2")!);
      const mean = margins.reduce((a, b) => a + b, 0) / margins.length;
      expect(Math.abs(mean - 2)).toBeLessThan(0.05);
      // Noise carries it across the 2.0 %-pt threshold both ways, many times.
      const crossings = margins.filter((m, i) => i > 0 && m < 2 !== margins[i - 1]! < 2).length;
      expect(crossings).toBeGreaterThan(50);
    },
    "the untuned o2-margin-bf2 chatters: one chatter event at its third raise within 60 s, and it ends after 5 quiet minutes": ({ run }) => {
      const raises = annunciations(run.transitions).filter((t) => t.advisoryId === "o2-margin-bf2");
      const third = raises.find((t, i) => i >= 2 && t.atMs - raises[i - 2]!.atMs < 60_000);
      expect(third, "three raises within 60 s").toBeDefined();
      const chatter = run.nuisance.filter((n) => n.type === "chatter");
      expect(chatter.map((n) => [n.advisoryId, n.atMs])).toEqual([["o2-margin-bf2", third!.atMs]]);
      const end = run.nuisance.filter((n) => n.type === "chatter-end");
      expect(end.map((n) => n.advisoryId)).toEqual(["o2-margin-bf2"]);
      expect(end[0]!.atMs - raises.at(-1)!.atMs).toBeGreaterThanOrEqual(5 * MIN);
      expect(end[0]!.atMs - raises.at(-1)!.atMs).toBeLessThan(5 * MIN + 2000);
    },
    "the mill's rule with the shipped deadband and on-delay sees the same gas and does not chatter": ({ run }) => {
      const vm2 = annunciations(run.transitions).filter((t) => t.advisoryId === "o2-margin-vm2");
      expect(vm2.length).toBeLessThanOrEqual(1);
      expect(run.nuisance.filter((n) => n.advisoryId === "o2-margin-vm2")).toEqual([]);
      expect(annunciations(run.transitions).filter((t) => t.advisoryId === "o2-margin-bf2").length).toBeGreaterThan(10 * vm2.length + 10);
    },
  },

  "frozen-co-analyser": {
    "the analyser of bf2.outlet.co reads frozen within frozenWindowS + 1 min of the freeze and stays unhealthy; the mill outlet analyser is never frozen": ({ cfg, run }) => {
      const { analyserId, windowS } = analyserOf(cfg, "bf2.outlet.co");
      const freezeMs = SIM_START_MS + FROZEN_CO_AT_S * 1000;
      const stateOf = (t: TickRecord, id: string) => entry(t.state, "analysers", id).state;
      const frozen = run.ticks.find((t) => stateOf(t, analyserId) === "frozen");
      expect(frozen, `analyser ${analyserId} reads frozen`).toBeDefined();
      expect(frozen!.nowMs).toBeGreaterThan(freezeMs);
      expect(frozen!.nowMs - freezeMs).toBeLessThanOrEqual((windowS + 60) * 1000);
      for (const t of ticksBetween(run, frozen!.nowMs, Infinity)) expect(stateOf(t, analyserId), iso(t.nowMs)).not.toBe("ok");
      const mill = analyserOf(cfg, "vm2.outlet.co").analyserId;
      expect(run.ticks.filter((t) => stateOf(t, mill) === "frozen").map((t) => iso(t.nowMs))).toEqual([]);
    },
    "the CO gradient at bf2-outlet is unknown from then on, never a calm number": ({ cfg, run }) => {
      const { analyserId } = analyserOf(cfg, "bf2.outlet.co");
      const frozen = run.ticks.find((t) => entry(t.state, "analysers", analyserId).state === "frozen");
      expect(frozen, `analyser ${analyserId} reads frozen`).toBeDefined();
      const after = ticksBetween(run, frozen!.nowMs, Infinity);
      expect(after.length).toBeGreaterThan(60);
      for (const t of after) {
        expect(t.derived.get("co.bf2-outlet.gradientPpmPerMin"), `derived gradient at ${iso(t.nowMs)}`).toBeNull();
        expect(entry(t.state, "coPoints", "bf2-outlet").gradientPpmPerMin, `coPoints gradient at ${iso(t.nowMs)}`).toBeNull();
      }
    },
  },
};

/** The analyser a signal comes from and its frozen window, from the config. */
function analyserOf(cfg: MillwardenConfig, signalId: string): { analyserId: string; windowS: number } {
  const sig = cfg.signals.find((s) => s.id === signalId);
  if (!sig?.analyser) throw new Error(`signal "${signalId}" names no analyser in the config`);
  const list = (cfg as unknown as { analysers?: { id: string; frozenWindowS?: number }[] }).analysers;
  const a = list?.find((x) => x.id === sig.analyser);
  if (typeof a?.frozenWindowS !== "number") {
    throw new Error(`analyser "${sig.analyser}" of "${signalId}" has no frozenWindowS in the config's analysers section (the health family has not landed it)`);
  }
  return { analyserId: sig.analyser, windowS: a.frozenWindowS };
}

// ---- the generic test ------------------------------------------------------------------

const folders = scenarioFolders();

describe("golden scenario folders", () => {
  it("are the eight known scenarios, each with its own checks", () => {
    expect(folders).toEqual([
      "analyser-calibration",
      "frozen-co-analyser",
      "o2-chatter",
      "o2-creep-damper",
      "purge-after-trip",
      "trip-flood",
      "trip-loaded-co-rise",
      "wet-coal-surge",
    ]);
    expect(Object.keys(CHECKS).sort()).toEqual(folders);
  });
});

for (const folder of folders) {
  describe(folder, () => {
    it("input.csv holds the configured signals in time order over durationS", { timeout: 120_000 }, () => {
      const { spec, cfg, samples } = load(folder);
      const ids = new Set(cfg.signals.map((s) => s.id));
      expect(samples.filter((s) => !ids.has(s.signal)).map((s) => s.signal)).toEqual([]);
      for (let i = 1; i < samples.length; i++) if (samples[i]!.sourceTimeMs < samples[i - 1]!.sourceTimeMs) throw new Error(`input.csv: sample ${i} goes back in time`);
      expect(samples[0]!.sourceTimeMs).toBe(SIM_START_MS);
      expect(samples.at(-1)!.sourceTimeMs).toBe(SIM_START_MS + (spec.durationS - 1) * 1000);
      // One sample per simulated second for every signal the simulator feeds (topic suffix = tag).
      const tags = new Set(SIM_TAGS.map((t) => t.tag));
      const fed = cfg.signals.filter((sg) => sg.topic !== undefined && tags.has(sg.topic.slice(sg.topic.lastIndexOf("/") + 1)));
      expect(fed.length).toBeGreaterThan(10);
      expect(samples.length).toBe(spec.durationS * fed.length);
    });

    it("emits exactly the advisory transitions and nuisance events of expected.jsonl, in order", { timeout: 120_000 }, () => {
      const { run } = load(folder);
      const got = run.events.map((t) => JSON.parse(JSON.stringify(t)) as GoldenEvent);
      const file = join(SCENARIOS_DIR, folder, "expected.jsonl");
      if (UPDATE) {
        writeFileSync(file, got.map((t) => `${JSON.stringify(t)}\n`).join(""));
        return;
      }
      if (!existsSync(file)) throw new Error(`${file} is missing: create it with UPDATE_GOLDEN=1 npx vitest run test/scenarios`);
      const want = readFileSync(file, "utf8")
        .split("\n")
        .map((line, i) => ({ line, i }))
        .filter(({ line }) => line.trim() !== "")
        .map(({ line, i }) => {
          try {
            return JSON.parse(line) as GoldenEvent;
          } catch {
            throw new Error(`${file}:${i + 1}: expected one JSON object per line, found ${JSON.stringify(line.slice(0, 60))}`);
          }
        });
      expect(got).toEqual(want);
    });

    for (const [name, check] of Object.entries(CHECKS[folder] ?? {})) {
      it(name, { timeout: 120_000 }, () => check(load(folder)));
    }
  });
}
