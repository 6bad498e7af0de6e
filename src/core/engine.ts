// The computing core. Pure and deterministic: the same samples, commands and ticks
// give the same events, live or in replay.
//
//   Sample ──▶ signal state (latest, quality, staleness) ──▶ analyser health, CO windows
//   Tick(now) ──▶ phase (signals' own trust) ──▶ analyser health (needs the phase)
//             ──▶ dew points, CO gradients, inerting state (full trust) ──▶ rules ──▶ advisory transitions
//   Command ──▶ advisory lifecycle (acknowledge)
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
import { Advisory } from "../advisories/advisory.js";
import type { Monitor, TickContext } from "./calculator.js";
import { derivedQuantities, type QuantityInfo } from "./quantities.js";
import {
  ADVISORY_ONLY,
  tierRank,
  type AdvisoryTransition,
  type AdvisoryView,
  type Command,
  type CoreEvent,
  type DerivedValue,
  type PlantState,
  type Sample,
} from "./types.js";

export type IngestOutcome = "accepted" | "unknown-signal" | "duplicate" | "out-of-order";

export type CommandOutcome =
  | { ok: true; events: AdvisoryTransition[]; advisory: AdvisoryView | null }
  | { ok: false; status: 404 | 409; error: string };

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
  private readonly advisories: Advisory[] = [];
  private readonly advisoryById = new Map<string, Advisory>();
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
    this.quantities = derivedQuantities(cfg);
    const info = new Map<string, { unit: string; label: string }>(this.quantities.map((q) => [q.key, q]));
    for (const s of this.signals.values()) info.set(s.cfg.id, { unit: s.unitSymbol, label: s.cfg.name });
    for (const r of cfg.rules) {
      const q = info.get(r.quantity)!;
      const a = new Advisory(r, q.unit, q.label);
      this.advisories.push(a);
      this.advisoryById.set(a.id, a);
    }
  }

  /** Series names a trend can ask for: signal ids and derived keys. */
  seriesNames(): string[] {
    return [...this.signals.keys(), ...this.quantities.map((q) => q.key)];
  }

  ingest(s: Sample): IngestOutcome {
    const state = this.signals.get(s.signal);
    if (!state) return "unknown-signal";
    const before = state.duplicates;
    if (!state.accept(s)) return state.duplicates > before ? "duplicate" : "out-of-order";
    for (const m of this.monitors) m.ingest?.(s);
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
  tick(nowMs: number): CoreEvent[] {
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

    for (const a of this.advisories) {
      const q = a.rule.quantity;
      let value: number | null;
      if (this.derived.has(q)) value = this.derived.get(q)!;
      else {
        const t = this.trust(q, nowMs);
        value = t.ok ? t.value : null;
      }
      for (const e of a.evaluate(value, nowMs)) out.push(e);
    }
    return out;
  }

  command(cmd: Command): CommandOutcome {
    const a = this.advisoryById.get(cmd.advisoryId);
    if (!a) return { ok: false, status: 404, error: `no advisory "${cmd.advisoryId}": expected the id of an advisory in GET /api/advisories` };
    const r = a.acknowledge(cmd.by, cmd.atMs, cmd.note);
    if (!r.ok) return r;
    return { ok: true, events: r.events, advisory: a.view() };
  }

  /** Current advisories: highest tier first, then newest. */
  currentAdvisories(): AdvisoryView[] {
    return this.advisories
      .map((a) => a.view())
      .filter((v): v is AdvisoryView => v !== null)
      .sort((x, y) => tierRank(y.tier) - tierRank(x.tier) || y.raisedAtMs - x.raisedAtMs);
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
