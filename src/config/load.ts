// Loads a YAML config, checks its shape and its cross-references, and reports every
// problem with file:line:column, the key, what was expected and what was found.
import { readFileSync } from "node:fs";
import { LineCounter, parseDocument, isNode, type Document } from "yaml";
import { configSchema, type MillwardenConfig } from "./schema.js";
import { unitDef, type Quantity } from "./units.js";
import { derivedQuantities, stateKeys } from "../core/quantities.js";
import type { CheckContext, Path } from "./sections/context.js";
import { checkOxygen } from "./sections/oxygen.js";
import { checkDewPoints } from "./sections/dew-point.js";
import { checkCo } from "./sections/co.js";
import { checkPhase } from "./sections/phase.js";
import { checkNotifications } from "./sections/notifications.js";
import { checkAnalysers } from "./sections/analysers.js";
import { checkRepublish } from "./sections/republish.js";

export interface ConfigProblem {
  file: string;
  line: number;
  column: number;
  /** Dotted key path, e.g. signals[3].unit */
  key: string;
  message: string;
}

export class ConfigError extends Error {
  constructor(public readonly problems: ConfigProblem[]) {
    super(problems.map(formatProblem).join("\n"));
    this.name = "ConfigError";
  }
}

export function formatProblem(p: ConfigProblem): string {
  return `${p.file}:${p.line}:${p.column}: ${p.key || "(top level)"}: ${p.message}`;
}


const keyOf = (path: Path) =>
  path.reduce<string>((acc, p) => (typeof p === "number" ? `${acc}[${p}]` : acc ? `${acc}.${p}` : p), "");

function describe(v: unknown): string {
  if (v === undefined) return "nothing";
  if (v === null) return "null";
  if (Array.isArray(v)) return `a list of ${v.length}`;
  if (typeof v === "object") return "a mapping";
  return `${typeof v} ${JSON.stringify(v)}`;
}

class Locator {
  constructor(
    private readonly doc: Document,
    private readonly lines: LineCounter,
    private readonly file: string,
  ) {}

  /** Where the value at `path` stands, or its nearest existing parent. */
  at(path: Path, message: string): ConfigProblem {
    for (let n = path.length; n >= 0; n--) {
      const node = this.doc.getIn(path.slice(0, n), true);
      if (isNode(node) && node.range) {
        const pos = this.lines.linePos(node.range[0]);
        return { file: this.file, line: pos.line, column: pos.col, key: keyOf(path), message };
      }
    }
    return { file: this.file, line: 1, column: 1, key: keyOf(path), message };
  }

  found(path: Path): unknown {
    const v = this.doc.getIn(path);
    return isNode(v) ? v.toJSON() : v;
  }
}

/** Parse config text; `file` names it in messages. Throws ConfigError. */
export function parseConfig(textContent: string, file: string): MillwardenConfig {
  const lines = new LineCounter();
  const doc = parseDocument(textContent, { lineCounter: lines, prettyErrors: false, uniqueKeys: true });
  const problems: ConfigProblem[] = [];
  for (const e of doc.errors) {
    const pos = lines.linePos(e.pos[0]);
    problems.push({ file, line: pos.line, column: pos.col, key: "", message: `YAML syntax: ${e.message.split("\n")[0]}` });
  }
  if (problems.length) throw new ConfigError(problems);
  const loc = new Locator(doc, lines, file);

  let js: unknown;
  try {
    js = doc.toJS();
  } catch (err) {
    // An alias whose anchor is missing parses, but cannot be turned into data.
    const msg = err instanceof Error ? err.message : String(err);
    const name = /alias[^:]*:\s*(\S+)/.exec(msg)?.[1];
    const at = name === undefined ? -1 : textContent.indexOf(`*${name}`);
    const pos = at >= 0 ? lines.linePos(at) : { line: 1, col: 1 };
    throw new ConfigError([{ file, line: pos.line, column: pos.col, key: "", message: `YAML: ${msg.split("\n")[0]}` }]);
  }
  const parsed = configSchema.safeParse(js);
  if (!parsed.success) {
    for (const issue of parsed.error.issues) {
      const path = issue.path.filter((p): p is string | number => typeof p !== "symbol");
      let msg = issue.message;
      if (issue.code === "unrecognized_keys") {
        msg = `unknown key${issue.keys.length > 1 ? "s" : ""} ${issue.keys.map((k) => `"${k}"`).join(", ")} (check the spelling against config/demo.yaml)`;
        problems.push(loc.at([...path, issue.keys[0]!], msg));
        continue;
      }
      if (issue.code !== "custom") msg = `${msg}; found ${describe(loc.found(path))}`;
      problems.push(loc.at(path, msg));
    }
    throw new ConfigError(problems);
  }
  const cfg = parsed.data;
  crossCheck(cfg, loc, problems);
  if (problems.length) throw new ConfigError(problems);
  return cfg;
}

export function loadConfig(path: string): MillwardenConfig {
  let content: string;
  try {
    content = readFileSync(path, "utf8");
  } catch (e) {
    throw new ConfigError([{ file: path, line: 1, column: 1, key: "", message: `cannot read the file: ${(e as Error).message}` }]);
  }
  return parseConfig(content, path);
}

function duplicates<T extends { id: string }>(list: T[], section: string, loc: Locator, out: ConfigProblem[]) {
  const seen = new Map<string, number>();
  list.forEach((item, i) => {
    const first = seen.get(item.id);
    if (first !== undefined) out.push(loc.at([section, i, "id"], `duplicate id "${item.id}" (first used at ${section}[${first}])`));
    else seen.set(item.id, i);
  });
  return seen;
}

function crossCheck(cfg: MillwardenConfig, loc: Locator, out: ConfigProblem[]) {
  const sources = duplicates(cfg.sources, "sources", loc, out);
  const signals = duplicates(cfg.signals, "signals", loc, out);
  const units = duplicates(cfg.units, "units", loc, out);
  duplicates(cfg.dewPoints, "dewPoints", loc, out);
  duplicates(cfg.coPoints, "coPoints", loc, out);
  duplicates(cfg.rules, "rules", loc, out);
  const signalById = new Map(cfg.signals.map((s) => [s.id, s]));

  const needSignal = (path: Path, sid: string, quantity?: Quantity, what?: string) => {
    if (!signals.has(sid)) {
      out.push(loc.at(path, `unknown signal "${sid}": expected one of the ids under signals (${[...signals.keys()].slice(0, 8).join(", ")}${signals.size > 8 ? ", ..." : ""})`));
      return;
    }
    const s = signalById.get(sid)!;
    if (quantity && unitDef(s.unit).quantity !== quantity) {
      out.push(loc.at(path, `signal "${sid}" is in ${s.unit}, expected ${what}`));
    }
  };
  const needUnit = (path: Path, uid: string) => {
    if (!units.has(uid)) out.push(loc.at(path, `unknown unit "${uid}": expected one of ${[...units.keys()].join(", ")}`));
  };

  cfg.signals.forEach((s, i) => {
    if (!sources.has(s.source)) out.push(loc.at(["signals", i, "source"], `unknown source "${s.source}": expected one of ${[...sources.keys()].join(", ")}`));
    const kind = cfg.sources.find((x) => x.id === s.source)?.kind;
    if (kind === "mqtt" && !s.topic) out.push(loc.at(["signals", i], `signal "${s.id}" from an MQTT source needs a topic`));
    if (kind === "opcua" && !s.nodeId) out.push(loc.at(["signals", i], `signal "${s.id}" from an OPC UA source needs a nodeId (e.g. ns=1;s=${s.tag})`));
    if (s.range && !(s.range[0] < s.range[1])) out.push(loc.at(["signals", i, "range"], `expected [low, high] with low < high; found [${s.range.join(", ")}]`));
    if (s.unit === "Am3/h" && !s.actualConditions)
      out.push(loc.at(["signals", i, "unit"], `a flow in Am3/h needs actualConditions: { temperature: <signal or { degC }>, gaugePressure: <signal> } to become Nm3/h`));
    if (s.actualConditions && s.unit !== "Am3/h") out.push(loc.at(["signals", i, "actualConditions"], `actualConditions belong to a flow in Am3/h; this signal is in ${s.unit}`));
  });
  cfg.signals.forEach((s, i) => {
    const c = s.actualConditions;
    if (!c) return;
    if (typeof c.temperature === "string") needSignal(["signals", i, "actualConditions", "temperature"], c.temperature, "temperature", "a temperature unit (degC, K, degF)");
    if (c.gaugePressure) needSignal(["signals", i, "actualConditions", "gaugePressure"], c.gaugePressure, "pressure", "a pressure unit (Pa, hPa, mbar, kPa, bar)");
  });
  if (cfg.site.barometricSignal) needSignal(["site", "barometricSignal"], cfg.site.barometricSignal, "pressure", "a pressure unit (Pa, hPa, mbar, kPa, bar)");

  const ctx: CheckContext = { problem: (path, msg) => out.push(loc.at(path, msg)), needSignal, needUnit };
  checkOxygen(cfg, ctx);
  checkDewPoints(cfg, ctx);
  checkCo(cfg, ctx);
  checkPhase(cfg, ctx);
  checkAnalysers(cfg, ctx);
  checkNotifications(cfg, ctx);
  checkRepublish(cfg, ctx);

  const quantities = new Set([...signals.keys(), ...derivedQuantities(cfg).map((q) => q.key)]);
  const states = new Map(stateKeys(cfg).map((k) => [k.key, k]));
  cfg.rules.forEach((r, i) => {
    if (r.unit) needUnit(["rules", i, "unit"], r.unit);
    if (r.phaseUnit) needUnit(["rules", i, "phaseUnit"], r.phaseUnit);
    if (r.phases) {
      const pu = r.phaseUnit ?? r.unit;
      if (!pu) out.push(loc.at(["rules", i, "phases"], `phases need the unit whose phase decides: expected unit: or phaseUnit:`));
      else if (units.has(pu) && !cfg.units.find((u) => u.id === pu)?.phase)
        out.push(loc.at(["rules", i, "phases"], `unit "${pu}" has no phase section, so its phase is never known: expected a unit with phase:`));
    }
    if (r.states) {
      // State rule: a state key, values it can take, one tier; no thresholds.
      const k = states.get(r.quantity);
      if (!k) {
        const keys = [...states.keys()];
        out.push(loc.at(["rules", i, "quantity"], `unknown state "${r.quantity}": a rule with states: watches a state key, expected one of ${keys.slice(0, 8).join(", ")}${keys.length > 8 ? ", ..." : ""}`));
      } else {
        r.states.forEach((v, j) => {
          if (!k.values.includes(v)) out.push(loc.at(["rules", i, "states", j], `"${v}" is not a value of ${r.quantity}: expected one of ${k.values.join(", ")}`));
        });
      }
      if (!r.tier) out.push(loc.at(["rules", i], `a rule with states: needs tier: (notice, caution or warning)`));
      if (r.direction || r.tiers) out.push(loc.at(["rules", i, r.direction ? "direction" : "tiers"], `a rule with states: takes tier:, not direction: or tiers:`));
      if (r.rate) out.push(loc.at(["rules", i, "rate"], `a rule with states: has no rate of change: leave out rate:`));
      return;
    }
    if (r.tiersByCoal) {
      // The thresholds of the coal ground now become the rule's tiers.
      const coal = cfg.site.coal?.type;
      const kinds = Object.keys(r.tiersByCoal);
      if (r.tiers) out.push(loc.at(["rules", i, "tiersByCoal"], `give tiers: or tiersByCoal:, not both`));
      else if (!coal) out.push(loc.at(["rules", i, "tiersByCoal"], `tiersByCoal needs the coal ground: expected site.coal.type, one of ${kinds.join(", ")}`));
      else if (!r.tiersByCoal[coal]) out.push(loc.at(["rules", i, "tiersByCoal"], `no thresholds for the site's coal "${coal}": expected it among ${kinds.join(", ")}`));
      else r.tiers = r.tiersByCoal[coal];
      for (const [kind, t] of Object.entries(r.tiersByCoal)) {
        const ordered = [t.notice, t.caution, t.warning].filter((x): x is number => x !== undefined);
        const ok = ordered.every((v, k) => k === 0 || (r.direction === "high" ? v > ordered[k - 1]! : v < ordered[k - 1]!));
        if (!ok) out.push(loc.at(["rules", i, "tiersByCoal", kind], `expected thresholds ${r.direction === "high" ? "rising" : "falling"} from notice to warning; found ${JSON.stringify(t)}`));
      }
      if (!r.tiers) return;
    }
    if (!r.direction || !r.tiers) {
      out.push(loc.at(["rules", i], `expected direction: (high or low) and tiers: for a threshold rule, or states: and tier: for a state rule`));
      return;
    }
    if (r.tier) out.push(loc.at(["rules", i, "tier"], `tier: belongs to a state rule; a threshold rule gives tiers: with a threshold each`));
    if (!quantities.has(r.quantity)) {
      const near = [...quantities].filter((q) => q.split(".")[1] === r.quantity.split(".")[1] || q.startsWith(r.quantity.split(".")[0] ?? "")).slice(0, 6);
      const hint = states.has(r.quantity) ? ` ("${r.quantity}" is a state key: give states: and tier:)` : near.length ? ` such as ${near.join(", ")}` : "";
      out.push(loc.at(["rules", i, "quantity"], `unknown quantity "${r.quantity}": expected a signal id or a derived key${hint}`));
    }
    const t = r.tiers;
    const ordered = [t.notice, t.caution, t.warning].filter((x): x is number => x !== undefined);
    const ok = ordered.every((v, k) => k === 0 || (r.direction === "high" ? v > ordered[k - 1]! : v < ordered[k - 1]!));
    if (!ok) out.push(loc.at(["rules", i, "tiers"], `expected thresholds ${r.direction === "high" ? "rising" : "falling"} from notice to warning; found ${JSON.stringify(t)}`));
  });
}
