// A small plant around a CoMonitor for the CO tests: real SignalState trust (staleness,
// quality, function check), a settable operating phase per unit, and the emitted values.
import { CoMonitor } from "../../src/analytics/co-monitor.js";
import type { MillPhase } from "../../src/analytics/phase.js";
import { SignalState } from "../../src/analytics/signal-state.js";
import { coPointSchema, coRiseSchema, type CoPointConfig, type CoRiseConfig } from "../../src/config/sections/co.js";
import type { SignalConfig } from "../../src/config/schema.js";
import type { TickContext } from "../../src/core/calculator.js";
import type { Sample } from "../../src/core/types.js";

/** Epoch ms, 2026-11-30 06:00 UTC (whole seconds, so sample times are exact in binary). */
export const T0 = Date.UTC(2026, 10, 30, 6, 0, 0);

/** A CO point config through the real schema (defaults applied), e.g. co({ id: "p", signal: "p.co" }). */
export function coPoint(over: Record<string, unknown>): CoPointConfig {
  return coPointSchema.parse({ name: "Test point", unit: "u1", shortWindowS: 300, longWindowS: 900, transportLagS: 40, minPoints: 30, maxGapS: 20, ...over });
}

export function coRise(over: Record<string, unknown>): CoRiseConfig {
  return coRiseSchema.parse({ id: "r1", name: "Test rise", unit: "u1", ...over });
}

function signalConfig(id: string, unit: string, expectedPeriodS: number): SignalConfig {
  return { id, name: id, tag: id.toUpperCase(), source: "test", topic: `t/${id}`, unit, scale: 1, offset: 0, expectedPeriodS };
}

export class CoPlant {
  readonly monitor: CoMonitor;
  readonly phases = new Map<string, MillPhase | null>();
  readonly emitted = new Map<string, { value: number | null; reason: string }>();
  private readonly signals = new Map<string, SignalState>();

  constructor(
    points: CoPointConfig[],
    rises: CoRiseConfig[] = [],
    /** Signal ids with their units and expected update periods (default ppm, 1 s). */
    signals: Record<string, { unit?: string; periodS?: number }> = {},
  ) {
    this.monitor = new CoMonitor(points, rises);
    const ids = new Set([...points.map((p) => p.signal), ...Object.keys(signals)]);
    for (const id of ids) {
      const s = signals[id] ?? {};
      this.signals.set(id, new SignalState(signalConfig(id, s.unit ?? "ppm", s.periodS ?? 1)));
    }
  }

  /** Ingest one sample as the engine does: signal state first, the monitor only if it was accepted. */
  feed(signal: string, value: number, tMs: number, extra: Partial<Sample> = {}): boolean {
    const s: Sample = { signal, value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs, ...extra };
    const state = this.signals.get(signal);
    if (!state) throw new Error(`CoPlant: unknown signal ${signal}`);
    if (!state.accept(s)) return false;
    this.monitor.ingest(s);
    return true;
  }

  tick(nowMs: number) {
    const ctx: TickContext = {
      nowMs,
      trust: (id) => {
        const s = this.signals.get(id);
        if (!s) throw new Error(`CoPlant: trust of unknown signal ${id}`);
        return s.trust(nowMs);
      },
      phase: (unitId) => this.phases.get(unitId) ?? null,
      emit: (key, value, reason) => {
        this.emitted.set(key, { value, reason });
      },
      derived: (key) => this.emitted.get(key)?.value,
    };
    this.monitor.tick(ctx);
    return this.monitor.view();
  }

  point(id: string) {
    const p = this.monitor.view().coPoints.find((x) => x.id === id);
    if (!p) throw new Error(`CoPlant: no point ${id}`);
    return p;
  }

  value(key: string): number | null {
    const e = this.emitted.get(key);
    if (!e) throw new Error(`CoPlant: ${key} was never emitted`);
    return e.value;
  }
}

/**
 * Feed `signal` once per `stepS` from `fromS` to `toS` (seconds after T0, inclusive) with
 * value f(tS), ticking half a step after each sample.
 */
export function run(plant: CoPlant, signal: string, fromS: number, toS: number, f: (tS: number) => number, stepS = 1, also?: (tS: number) => void): void {
  for (let k = 0; fromS + k * stepS <= toS + 1e-9; k++) {
    const tS = fromS + k * stepS;
    plant.feed(signal, f(tS), T0 + tS * 1000);
    also?.(tS);
    plant.tick(T0 + tS * 1000 + 500);
  }
}
