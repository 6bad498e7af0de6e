// The computing core. Pure and deterministic: the same samples, commands and ticks
// give the same events, live or in replay.
//
//   Sample ──▶ signal state (latest, quality, staleness) ──▶ CO windows
//   Tick(now) ──▶ dew points, CO gradients, inerting state ──▶ rules ──▶ advisory transitions
//   Command ──▶ advisory lifecycle (acknowledge)
//
// Samples only update state; everything derived is computed at a tick, once a second
// live (wall clock) or at each whole second of the data's own time (replay).
import type { MillwardenConfig } from "../config/schema.js";
import { CoGradient } from "../analytics/co-gradient.js";
import { evaluateDewPoint } from "../analytics/dew-point-margin.js";
import { InertingEstimator } from "../analytics/inerting.js";
import { SignalState, type Trust } from "../analytics/signal-state.js";
import { Advisory } from "../advisories/advisory.js";
import { derivedQuantities, type QuantityInfo } from "./quantities.js";
import {
  ADVISORY_ONLY,
  tierRank,
  type AdvisoryTransition,
  type AdvisoryView,
  type Command,
  type CoPointView,
  type CoreEvent,
  type DerivedValue,
  type DewPointView,
  type PlantState,
  type Sample,
  type UnitView,
} from "./types.js";

export type IngestOutcome = "accepted" | "unknown-signal" | "duplicate" | "out-of-order";

export type CommandOutcome =
  | { ok: true; events: AdvisoryTransition[]; advisory: AdvisoryView | null }
  | { ok: false; status: 404 | 409; error: string };

export class Engine {
  private readonly signals = new Map<string, SignalState>();
  private readonly coBySignal = new Map<string, CoGradient[]>();
  private readonly coPoints: CoGradient[] = [];
  private readonly inerting: { estimator: InertingEstimator; h2o: string | undefined }[] = [];
  private readonly advisories: Advisory[] = [];
  private readonly advisoryById = new Map<string, Advisory>();
  readonly quantities: QuantityInfo[];
  private readonly derived = new Map<string, number | null>();
  private nowMs = 0;
  private view: Omit<PlantState, "signals" | "advisories" | "nowMs" | "site" | "advisoryOnly"> = { units: [], dewPoints: [], coPoints: [] };

  constructor(readonly cfg: MillwardenConfig) {
    for (const s of cfg.signals) this.signals.set(s.id, new SignalState(s));
    for (const c of cfg.coPoints) {
      const g = new CoGradient(c);
      this.coPoints.push(g);
      const list = this.coBySignal.get(c.signal) ?? [];
      list.push(g);
      this.coBySignal.set(c.signal, list);
    }
    for (const u of cfg.units) {
      if (!u.oxygen) continue;
      const o2Basis = this.signals.get(u.oxygen.signal)!.cfg.basis!;
      this.inerting.push({ estimator: new InertingEstimator({ ...u, oxygen: u.oxygen }, o2Basis), h2o: u.oxygen.h2oSignal });
    }
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
    const co = this.coBySignal.get(s.signal);
    if (co) for (const g of co) g.add(s);
    return "accepted";
  }

  private trust(id: string, nowMs: number): Trust {
    return this.signals.get(id)!.trust(nowMs);
  }

  /** Compute every derived value at `nowMs`, then evaluate the rules. */
  tick(nowMs: number): CoreEvent[] {
    this.nowMs = nowMs;
    const out: CoreEvent[] = [];
    const emit = (key: string, value: number | null, reason: string) => {
      this.derived.set(key, value);
      const d: DerivedValue = { kind: "derived", key, atMs: nowMs, value, status: value === null ? "unknown" : "ok" };
      if (value === null) d.reason = reason;
      out.push(d);
    };

    const baro = this.cfg.site.barometricSignal ? this.trust(this.cfg.site.barometricSignal, nowMs) : null;
    const barometricPa = baro?.ok && baro.value !== null ? baro.value : this.cfg.site.barometricPressureHPa * 100;

    const dewPoints: DewPointView[] = this.cfg.dewPoints.map((d) => {
      const v = evaluateDewPoint(
        d,
        this.trust(d.gasTemperature, nowMs),
        this.trust(d.h2o, nowMs),
        d.gaugePressure ? this.trust(d.gaugePressure, nowMs) : null,
        barometricPa,
      );
      emit(`dewpoint.${d.id}.dewPointC`, v.dewPointC, v.reason);
      emit(`dewpoint.${d.id}.marginK`, v.marginK, v.reason);
      return v;
    });

    const coPoints: CoPointView[] = this.coPoints.map((g) => {
      const t = this.trust(g.cfg.signal, nowMs);
      const r = g.evaluate(t.ok, t.reason);
      emit(`co.${g.cfg.id}.gradientPpmPerMin`, r.gradientPpmPerMin, r.reason);
      return {
        id: g.cfg.id,
        name: g.cfg.name,
        unitId: g.cfg.unit,
        signal: g.cfg.signal,
        coPpm: t.ok ? t.value : null,
        gradientPpmPerMin: r.gradientPpmPerMin,
        windowS: g.cfg.windowS,
        status: r.status,
        reason: r.reason,
      };
    });

    const inertingByUnit = new Map(
      this.inerting.map(({ estimator, h2o }) => {
        const v = estimator.evaluate(this.trust(estimator.unit.oxygen.signal, nowMs), h2o ? this.trust(h2o, nowMs) : null);
        emit(`o2.${v.unitId}.o2PctVol`, v.o2PctVol, v.reason);
        emit(`o2.${v.unitId}.marginPctPt`, v.marginPctPt, v.reason);
        return [v.unitId, v] as const;
      }),
    );
    const units: UnitView[] = this.cfg.units.map((u) => ({ id: u.id, name: u.name, kind: u.kind, inerting: inertingByUnit.get(u.id) ?? null }));
    this.view = { units, dewPoints, coPoints };

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
      ...this.view,
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
