// The computing core. Pure and deterministic: the same samples, commands and ticks
// give the same events, live or in replay.
//
//   Sample ──▶ signal state (latest, quality, staleness) ──▶ analyser health, CO windows
//   Tick(now) ──▶ phase (signals' own trust) ──▶ analyser health (needs the phase)
//             ──▶ dew points, CO gradients, inerting state (full trust) ──▶ rules ──▶ advisory transitions
//   Command ──▶ advisory lifecycle (acknowledge, reset, shelve, out of service: src/advisories)
//
// Samples only update state; everything derived is computed at a tick, once a second
// live (wall clock) or at each whole second of the data's own time (replay).
import type { MillwardenConfig } from "../config/schema.js";
import { SignalState, type Trust } from "../analytics/signal-state.js";
import { DewPointMonitor } from "../analytics/dew-point-monitor.js";
import { CoMonitor } from "../analytics/co-monitor.js";
import { OxygenMonitor } from "../analytics/oxygen-monitor.js";
import { PhaseMonitor } from "../analytics/phase-monitor.js";
import { HealthMonitor } from "../analytics/health-monitor.js";
import type { Advisory, PersistedAdvisory, RuleInput } from "../advisories/advisory.js";
import { AdvisoryBoard } from "../advisories/board.js";
import { quantitySignals } from "../advisories/dependencies.js";
import { actualToNormal } from "../physics/gas-flow.js";
import { RollingLinearFit } from "../analytics/rolling-fit.js";
import type { Monitor, TickContext } from "./calculator.js";
import { derivedQuantities, stateKeys, type QuantityInfo } from "./quantities.js";
import {
  ADVISORY_ONLY,
  type AdvisoryView,
  type Command,
  type CoreEvent,
  type DerivedValue,
  type PlantState,
  type Sample,
  type StateChange,
} from "./types.js";

export type IngestOutcome = "accepted" | "unknown-signal" | "duplicate" | "out-of-order";

export type CommandOutcome =
  | { ok: true; events: CoreEvent[]; advisory: AdvisoryView | null }
  | { ok: false; status: 400 | 403 | 404 | 409; error: string };

export interface TickOptions {
  /**
   * false: compute every indicator but evaluate no rule. A warm start replays recent history
   * this way to refill the windows and baselines without raising anything from the past.
   */
  rules?: boolean;
}

/** What a rule needs from the config besides itself: the signals its value comes from. */
interface RuleWiring {
  signals: string[];
  /** Analysers of those signals. */
  analysers: string[];
}

export class Engine {
  private readonly signals = new Map<string, SignalState>();
  private readonly dewPoints: DewPointMonitor;
  private readonly co: CoMonitor;
  private readonly oxygen: OxygenMonitor;
  private readonly phases: PhaseMonitor;
  private readonly health: HealthMonitor;
  /**
   * Run in this order at every tick: later monitors may read what earlier ones emitted.
   * The phase monitor comes first and sees the signals' own trust; the health monitor next
   * (its frozen test needs the phase); every monitor after it sees full trust, in which a
   * signal whose analyser is not healthy is untrusted.
   */
  private readonly monitors: Monitor[];
  /** The monitors that take samples, in the same order (ingest runs for every sample). */
  private readonly ingesters: Monitor[];
  private readonly board: AdvisoryBoard;
  /** Flows in Am3/h: converted to Nm3/h at each sample from the meter's temperature and pressure then. */
  private readonly toNormalFlow = new Map<string, (s: Sample) => Sample>();
  /** Rate rules: least squares over the rule's window of the quantity's values at the ticks. */
  private readonly rateFits = new Map<string, RollingLinearFit>();
  private readonly wiring = new Map<string, RuleWiring>();
  /** Discrete states (phase, inerting, analyser health) as of the last tick, to report changes. */
  private readonly states = new Map<string, string | null>();
  private readonly stateReaders: { key: string; read: () => string | null }[] = [];
  readonly quantities: QuantityInfo[];
  private readonly derived = new Map<string, number | null>();
  private nowMs = 0;

  constructor(readonly cfg: MillwardenConfig) {
    for (const s of cfg.signals) this.signals.set(s.id, new SignalState(s));
    this.dewPoints = new DewPointMonitor(cfg, { signal: cfg.site.barometricSignal, fallbackPa: cfg.site.barometricPressureHPa * 100 });
    this.co = new CoMonitor(cfg.coPoints, cfg.coRises);
    this.oxygen = new OxygenMonitor(cfg.units, cfg.signals);
    this.phases = new PhaseMonitor(cfg.units);
    this.health = new HealthMonitor(cfg.analysers, cfg.signals);
    this.monitors = [this.phases, this.health, this.dewPoints, this.co, this.oxygen];
    this.ingesters = this.monitors.filter((m) => m.ingest);
    this.quantities = derivedQuantities(cfg);
    const info = new Map<string, { unit: string; label: string }>(this.quantities.map((q) => [q.key, q]));
    for (const s of this.signals.values()) info.set(s.cfg.id, { unit: s.unitSymbol, label: s.cfg.name });
    const stateInfo = stateKeys(cfg);
    for (const k of stateInfo) info.set(k.key, { unit: "", label: k.label });
    for (const k of stateInfo) {
      const [family, id] = k.key.split(".") as [string, string];
      const read =
        family === "phase" ? () => this.phases.phaseOf(id) : family === "inerting" ? () => this.oxygen.inertingStateOf(id) : () => this.health.stateOf(id);
      this.stateReaders.push({ key: k.key, read });
    }
    this.board = new AdvisoryBoard(
      cfg.rules,
      (r) => {
        const q = info.get(r.quantity) ?? { unit: "", label: r.quantity };
        return r.rate ? { unit: `${q.unit}/min`, label: `${q.label} rate of change (${r.rate.windowS} s)` } : q;
      },
      cfg.advisoryPolicy,
    );
    for (const r of cfg.rules) if (r.rate) this.rateFits.set(r.id, new RollingLinearFit(r.rate.windowS));
    for (const sig of cfg.signals) if (sig.actualConditions) this.toNormalFlow.set(sig.id, this.normalFlowConverter(sig.actualConditions));
    const analyserOf = new Map(cfg.signals.map((s) => [s.id, s.analyser]));
    for (const r of cfg.rules) {
      const signals = r.states ? [] : quantitySignals(cfg, r.quantity);
      const analysers = [...new Set(signals.flatMap((sid) => analyserOf.get(sid) ?? []))];
      this.wiring.set(r.id, { signals, analysers });
    }
  }

  /**
   * Am3/h → Nm3/h (DIN 1343) with the temperature and absolute pressure (site barometric plus the
   * meter's gauge pressure) as trusted when the sample arrives; without them the flow is bad.
   */
  private normalFlowConverter(c: NonNullable<MillwardenConfig["signals"][number]["actualConditions"]>): (s: Sample) => Sample {
    const site = this.cfg.site;
    return (s) => {
      if (s.quality === "bad" || !Number.isFinite(s.value)) return s;
      const at = s.receiveTimeMs;
      const missing: string[] = [];
      let tC: number | null = null;
      if (typeof c.temperature === "string") {
        const t = this.trust(c.temperature, at);
        if (t.ok) tC = t.value;
        else missing.push(t.reason);
      } else tC = c.temperature.degC;
      let baroPa = site.barometricPressureHPa * 100;
      if (site.barometricSignal) {
        const b = this.trust(site.barometricSignal, at);
        if (b.ok && b.value !== null) baroPa = b.value;
      }
      let gaugePa = 0;
      if (c.gaugePressure) {
        const g = this.trust(c.gaugePressure, at);
        if (g.ok && g.value !== null) gaugePa = g.value;
        else missing.push(g.reason);
      }
      if (tC === null || missing.length) return { ...s, value: Number.NaN, quality: "bad", qualityReason: `Am3/h to Nm3/h: ${missing.join("; ")}` };
      return { ...s, value: actualToNormal(s.value, tC, baroPa + gaugePa) };
    };
  }

  /** Series names a trend can ask for: signal ids and derived keys. */
  seriesNames(): string[] {
    return [...this.signals.keys(), ...this.quantities.map((q) => q.key)];
  }

  ingest(sample: Sample): IngestOutcome {
    const state = this.signals.get(sample.signal);
    if (!state) return "unknown-signal";
    const convert = this.toNormalFlow.get(sample.signal);
    const s = convert ? convert(sample) : sample;
    const before = state.duplicates;
    if (!state.accept(s)) return state.duplicates > before ? "duplicate" : "out-of-order";
    for (const m of this.ingesters) m.ingest!(s);
    return "accepted";
  }

  /** The signal's own trust: fresh, good quality, not in function check. */
  private rawTrust(id: string, nowMs: number): Trust {
    return this.signals.get(id)!.trust(nowMs);
  }

  /** Full trust: the signal's own, and its analyser healthy as of this tick's health evaluation. */
  private trust(id: string, nowMs: number): Trust {
    const own = this.rawTrust(id, nowMs);
    if (!own.ok) return own;
    const why = this.health.distrust(id);
    return why === null ? own : { ok: false, value: null, reason: why };
  }

  /** Compute every derived value at `nowMs`, then evaluate the rules. */
  tick(nowMs: number, opts: TickOptions = {}): CoreEvent[] {
    this.nowMs = nowMs;
    const out: CoreEvent[] = [];
    let fullTrust = false;
    const ctx: TickContext = {
      nowMs,
      trust: (id) => (fullTrust ? this.trust(id, nowMs) : this.rawTrust(id, nowMs)),
      phase: (unitId) => this.phases.phaseOf(unitId),
      emit: (key, value, reason) => {
        this.derived.set(key, value);
        const d: DerivedValue = { kind: "derived", key, atMs: nowMs, value, status: value === null ? "unknown" : "ok" };
        if (value === null) d.reason = reason;
        out.push(d);
      },
      derived: (key) => this.derived.get(key),
    };
    for (const m of this.monitors) {
      m.tick(ctx);
      if (m === this.health) fullTrust = true;
    }

    // Discrete states: report each change (replay sums time per state from these).
    for (const { key, read } of this.stateReaders) {
      const v = read();
      if (this.states.get(key) === v && this.states.has(key)) continue;
      this.states.set(key, v);
      const e: StateChange = { kind: "state", atMs: nowMs, key, value: v };
      out.push(e);
    }

    if (opts.rules !== false) for (const e of this.board.evaluate(nowMs, (a) => this.ruleInput(a, nowMs))) out.push(e);
    return out;
  }

  /** A rule's value at this tick, and whether it is suppressed by design. */
  private ruleInput(a: Advisory, nowMs: number): RuleInput {
    const r = a.rule;
    let value: number | null;
    let stateText: string | null = null;
    if (r.states) {
      stateText = this.states.get(r.quantity) ?? null;
      // A state that cannot be told ("unknown", e.g. for a tick of stale data) neither raises nor
      // clears, unless the rule watches for "unknown" itself.
      const unknown = stateText === null || (stateText === "unknown" && !r.states.includes("unknown"));
      value = unknown ? null : r.states.includes(stateText!) ? 1 : 0;
    } else if (this.derived.has(r.quantity)) value = this.derived.get(r.quantity)!;
    else {
      const t = this.trust(r.quantity, nowMs);
      value = t.ok ? t.value : null;
    }
    const fit = this.rateFits.get(r.id);
    if (fit) {
      // The rate of the value seen at the ticks; an unknown value starts the window again.
      if (value === null || !Number.isFinite(value)) {
        fit.clear();
        value = null;
      } else {
        fit.push(nowMs / 1000, value);
        const slope = fit.spanS >= fit.windowS / 2 ? fit.slopePerS() : null;
        value = slope === null ? null : slope * 60;
      }
    }
    let suppressedBy: string | null = null;
    if (r.phases) {
      const unitId = (r.phaseUnit ?? r.unit)!;
      const phase = this.phases.phaseOf(unitId) ?? "unknown";
      if (!r.phases.includes(phase)) suppressedBy = `${unitId} is ${phase}; the rule applies in ${r.phases.join(", ")}`;
    }
    if (suppressedBy === null && value === null) {
      const w = this.wiring.get(r.id)!;
      const inCheck = w.analysers.find((id) => this.health.stateOf(id) === "function-check") ?? w.signals.find((id) => this.signals.get(id)!.functionCheck);
      if (inCheck !== undefined) suppressedBy = `${inCheck} in function check`;
    }
    return { value, stateText, suppressedBy };
  }

  command(cmd: Command): CommandOutcome {
    return this.board.command(cmd);
  }

  /** Current advisories: highest tier first, then newest. */
  currentAdvisories(): AdvisoryView[] {
    return this.board.views();
  }

  /** Advisory states a restart must get back (the historian keeps them). */
  persistAdvisories(): PersistedAdvisory[] {
    return this.board.persist();
  }

  /** Take back advisory states kept before a restart; see AdvisoryBoard.restore. */
  restoreAdvisories(saved: readonly PersistedAdvisory[], nowMs: number, shelvedBefore: readonly string[] = []) {
    return this.board.restore(saved, nowMs, shelvedBefore);
  }

  /** Whether an operator position is in an advisory flood now. */
  inFlood(position: string): boolean {
    return this.board.inFlood(position);
  }

  /** The plant as of the last tick. */
  snapshot(): PlantState {
    return {
      advisoryOnly: ADVISORY_ONLY,
      site: { name: this.cfg.site.name, plant: this.cfg.site.plant },
      nowMs: this.nowMs,
      signals: [...this.signals.values()].map((s) => s.view(this.nowMs)),
      ...this.phases.view(),
      ...this.health.view(),
      ...this.oxygen.view(),
      ...this.dewPoints.view(),
      ...this.co.view(),
      advisories: this.currentAdvisories(),
    };
  }
}

/**
 * Ticks for the data clock: the whole seconds passed up to and including `sampleTimeMs`
 * since the last tick. Replay and accelerated simulation tick the core with these
 * before each sample, so the core sees the same times it would have seen live.
 */
export class DataClock {
  private lastTickMs: number | null = null;

  /** Tick times due before ingesting a sample at `sampleTimeMs` (at most `maxTicks`, the latest ones). */
  due(sampleTimeMs: number, maxTicks = 3600): number[] {
    const sec = Math.floor(sampleTimeMs / 1000) * 1000;
    if (this.lastTickMs === null) {
      this.lastTickMs = sec;
      return [];
    }
    if (sec <= this.lastTickMs) return [];
    const first = Math.max(this.lastTickMs + 1000, sec - (maxTicks - 1) * 1000);
    const out: number[] = [];
    for (let t = first; t <= sec; t += 1000) out.push(t);
    this.lastTickMs = sec;
    return out;
  }
}
