// Shared by the golden scenario test (scenarios.test.ts) and its generator (generate.ts).
//
//   test/scenarios/<name>/scenario.json   { config, sim, seed, durationS }
//                        /input.csv       the simulator's samples, history exchange format
//                        /expected.jsonl  every advisory transition and nuisance event (chatter,
//                                         flood, standing) the core emits, one per line, in the
//                                         order the core emits them
//
// Samples are made the way the daemon gets them: each simulator frame becomes the JSON
// message the simulator publishes (src/sim/publish.ts), decoded for every signal whose MQTT
// topic ends in "/<tag>" (src/sources/decode.ts), with the receive time set to the source
// time as the daemon does on the data clock. The core is then run as the daemon runs it on
// the data clock (src/daemon/daemon.ts): before each sample a tick for every due second,
// after the last sample one more tick at the last whole second.
import { existsSync, readdirSync, readFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { loadConfig } from "../../src/config/load.js";
import type { MillwardenConfig } from "../../src/config/schema.js";
import { DataClock, Engine } from "../../src/core/engine.js";
import type { AdvisoryTransition, CoreEvent, NuisanceEvent, PlantState, Sample } from "../../src/core/types.js";
import { makeDecoder, parseBody, type SignalDecoder } from "../../src/sources/decode.js";
import { createScenario, scenarioNames } from "../../src/sim/plant.js";

export const SCENARIOS_DIR = import.meta.dirname;
/** Simulated time of every folder's first frame: a Monday morning shift (any fixed time would do). */
export const SIM_START_MS = Date.UTC(2026, 0, 12, 6, 0, 0);

export interface ScenarioSpec {
  /** Path of the config, relative to the folder. */
  config: string;
  /** Simulator scenario name (src/sim/plant.ts). */
  sim: string;
  seed: number;
  /** Simulated seconds taken from the start of the scenario. */
  durationS: number;
  /**
   * Changes to named rules of the config, for a scenario that shows a badly tuned rule; the rest
   * of the config stays the shipped one, so the scenario follows every later change to it.
   */
  ruleOverrides?: Record<string, RuleOverride>;
  /** What the scenario shows and why it changes what it changes (JSON has no comments). */
  note?: string;
}

/** The tuning fields a scenario may change on a rule. */
const OVERRIDABLE = ["deadband", "onDelayS", "offDelayS", "reAlertS"] as const;
export type RuleOverride = Partial<Record<(typeof OVERRIDABLE)[number], number>>;

/** Folders under test/scenarios/ that hold a scenario.json. */
export function scenarioFolders(): string[] {
  return readdirSync(SCENARIOS_DIR, { withFileTypes: true })
    .filter((d) => d.isDirectory() && existsSync(join(SCENARIOS_DIR, d.name, "scenario.json")))
    .map((d) => d.name)
    .sort();
}

export function readScenarioSpec(folder: string): ScenarioSpec {
  const file = join(SCENARIOS_DIR, folder, "scenario.json");
  let raw: unknown;
  try {
    raw = JSON.parse(readFileSync(file, "utf8"));
  } catch (e) {
    throw new Error(`${file}: expected JSON, found a file that does not parse: ${(e as Error).message}`);
  }
  const o = raw as Record<string, unknown>;
  const fail = (key: string, expected: string) => {
    throw new Error(`${file}: ${key}: expected ${expected}, found ${JSON.stringify(o?.[key])}`);
  };
  if (o === null || typeof o !== "object" || Array.isArray(o)) throw new Error(`${file}: expected an object { config, sim, seed, durationS[, ruleOverrides] }, found ${JSON.stringify(raw)}`);
  const extra = Object.keys(o).filter((k) => !["config", "sim", "seed", "durationS", "ruleOverrides", "note"].includes(k));
  if (extra.length > 0) throw new Error(`${file}: expected only the keys config, sim, seed, durationS, ruleOverrides, note, found also ${extra.join(", ")}`);
  if (o.ruleOverrides !== undefined) {
    const ro = o.ruleOverrides as Record<string, unknown>;
    if (ro === null || typeof ro !== "object" || Array.isArray(ro)) fail("ruleOverrides", "an object of rule id → { deadband, onDelayS, offDelayS, reAlertS }");
    for (const [id, v] of Object.entries(ro)) {
      const bad = v === null || typeof v !== "object" || Object.entries(v as object).some(([k, x]) => !(OVERRIDABLE as readonly string[]).includes(k) || typeof x !== "number" || !(x >= 0));
      if (bad) throw new Error(`${file}: ruleOverrides.${id}: expected { ${OVERRIDABLE.join(", ")} } with numbers ≥ 0, found ${JSON.stringify(v)}`);
    }
  }
  if (typeof o.config !== "string" || o.config === "") fail("config", "a path to a config file, relative to the folder");
  if (typeof o.sim !== "string" || !scenarioNames().includes(o.sim)) fail("sim", `one of ${scenarioNames().join(", ")}`);
  if (typeof o.seed !== "number" || !Number.isInteger(o.seed)) fail("seed", "an integer");
  const full = createScenario(o.sim as string, { startTimeMs: 0 }).durationS;
  if (typeof o.durationS !== "number" || !Number.isInteger(o.durationS) || o.durationS <= 0 || o.durationS > full) {
    fail("durationS", `a whole number of seconds in 1..${full} (the length of "${String(o.sim)}")`);
  }
  return o as unknown as ScenarioSpec;
}

export function configOf(folder: string, spec: ScenarioSpec): MillwardenConfig {
  const cfg = loadConfig(resolve(SCENARIOS_DIR, folder, spec.config));
  if (!spec.ruleOverrides) return cfg;
  for (const id of Object.keys(spec.ruleOverrides)) {
    if (!cfg.rules.some((r) => r.id === id)) throw new Error(`test/scenarios/${folder}/scenario.json: ruleOverrides: no rule "${id}" in ${spec.config}`);
  }
  return { ...cfg, rules: cfg.rules.map((r) => ({ ...r, ...spec.ruleOverrides![r.id] })) };
}

/** The simulator's frames as samples of the config's signals (topic suffix = tag). */
export function simulatedSamples(spec: ScenarioSpec, cfg: MillwardenConfig): Sample[] {
  const sourceById = new Map(cfg.sources.map((s) => [s.id, s]));
  const byTag = new Map<string, SignalDecoder[]>();
  for (const s of cfg.signals) {
    const source = sourceById.get(s.source);
    // The simulator publishes over MQTT: only signals of an MQTT source map to its tags.
    if (source?.kind !== "mqtt" || !s.topic) continue;
    const tag = s.topic.slice(s.topic.lastIndexOf("/") + 1);
    byTag.set(tag, [...(byTag.get(tag) ?? []), makeDecoder(s, source)]);
  }
  const scenario = createScenario(spec.sim, { startTimeMs: SIM_START_MS, seed: spec.seed });
  const endMs = SIM_START_MS + spec.durationS * 1000;
  const out: Sample[] = [];
  for (let f = scenario.next(); f !== null && f.tMs < endMs; f = scenario.next()) {
    const time = new Date(f.tMs).toISOString();
    for (const { tag, value } of f.values) {
      const decoders = byTag.get(tag);
      if (!decoders) continue;
      const payload = JSON.stringify({ value, time, quality: "good" });
      const { parsed, error } = parseBody(payload, "json");
      for (const d of decoders) {
        const r = d.decode(payload, parsed, error, f.tMs);
        if (r.reject) throw new Error(`simulator frame at ${time}, tag ${tag}: the decoder refused it (${r.reject}: ${r.detail})`);
        out.push({ ...r.sample, receiveTimeMs: r.sample.sourceTimeMs });
      }
    }
  }
  return out;
}

export interface TickRecord {
  nowMs: number;
  state: PlantState;
  /** Derived values emitted at this tick, by key. */
  derived: Map<string, number | null>;
}

/** What expected.jsonl records: advisory transitions and nuisance events. */
export type GoldenEvent = AdvisoryTransition | NuisanceEvent;

export interface ScenarioRun {
  engine: Engine;
  /** Advisory transitions and nuisance events, in the order the core emitted them. */
  events: GoldenEvent[];
  transitions: AdvisoryTransition[];
  nuisance: NuisanceEvent[];
  ticks: TickRecord[];
}

/** Run the real core over the samples on the data clock, exactly as the daemon does. */
export function runCore(cfg: MillwardenConfig, samples: readonly Sample[]): ScenarioRun {
  const engine = new Engine(cfg);
  const clock = new DataClock();
  const events: GoldenEvent[] = [];
  const transitions: AdvisoryTransition[] = [];
  const nuisance: NuisanceEvent[] = [];
  const ticks: TickRecord[] = [];
  const tick = (nowMs: number) => {
    const out: CoreEvent[] = engine.tick(nowMs);
    const derived = new Map<string, number | null>();
    for (const e of out) {
      if (e.kind === "advisory") {
        events.push(e);
        transitions.push(e);
      } else if (e.kind === "nuisance") {
        events.push(e);
        nuisance.push(e);
      } else if (e.kind === "derived") derived.set(e.key, e.value);
    }
    ticks.push({ nowMs, state: engine.snapshot(), derived });
  };
  for (const s of samples) {
    for (const t of clock.due(s.sourceTimeMs)) tick(t);
    engine.ingest({ ...s });
  }
  const last = samples.at(-1);
  if (last !== undefined) tick(Math.floor(last.sourceTimeMs / 1000) * 1000);
  return { engine, events, transitions, nuisance, ticks };
}
