// The latest value of each signal and whether it can be trusted at a given time.
// A value that cannot be trusted makes every indicator built on it "unknown".
import type { SignalConfig } from "../config/schema.js";
import { unitDef } from "../config/units.js";
import type { Quality, Sample, SignalView } from "../core/types.js";

/** A signal is stale when nothing arrived within this many expected periods. */
export const STALE_AFTER_PERIODS = 3;

export interface Trust {
  ok: boolean;
  value: number | null;
  reason: string;
}

export class SignalState {
  value: number | null = null;
  quality: Quality | null = null;
  qualityReason: string | null = null;
  sourceTimeMs: number | null = null;
  receiveTimeMs: number | null = null;
  functionCheck = false;
  /** Samples refused because they were not newer than the latest one. */
  outOfOrder = 0;
  duplicates = 0;
  readonly unitSymbol: string;
  /** The configured range converted to canonical units. */
  private readonly range: [number, number] | null;

  constructor(readonly cfg: SignalConfig) {
    const def = unitDef(cfg.unit);
    this.unitSymbol = def.canonical;
    const r = cfg.range?.map(def.toCanonical);
    this.range = r ? [Math.min(r[0]!, r[1]!), Math.max(r[0]!, r[1]!)] : null;
  }

  /**
   * Take a sample. Returns false when it is not newer than the latest (duplicate or
   * out of order): such a sample changes neither the latest value nor any window.
   */
  accept(s: Sample): boolean {
    if (this.sourceTimeMs !== null && s.sourceTimeMs <= this.sourceTimeMs) {
      if (s.sourceTimeMs === this.sourceTimeMs) this.duplicates++;
      else this.outOfOrder++;
      return false;
    }
    const r = this.range;
    let quality = s.quality;
    let reason = s.qualityReason ?? null;
    if (!Number.isFinite(s.value)) {
      quality = "bad";
      reason = reason ?? "not a finite number";
    } else if (r && (s.value < r[0] || s.value > r[1]) && quality !== "bad") {
      quality = "bad";
      reason = `out of range ${this.cfg.range![0]}..${this.cfg.range![1]} ${this.cfg.unit}`;
    }
    this.value = Number.isFinite(s.value) ? s.value : null;
    this.quality = quality;
    this.qualityReason = quality === "good" ? null : reason;
    this.sourceTimeMs = s.sourceTimeMs;
    this.receiveTimeMs = s.receiveTimeMs;
    this.functionCheck = s.functionCheck === true;
    return true;
  }

  isStale(nowMs: number): boolean {
    return this.receiveTimeMs === null || nowMs - this.receiveTimeMs > STALE_AFTER_PERIODS * this.cfg.expectedPeriodS * 1000;
  }

  trust(nowMs: number): Trust {
    const name = this.cfg.id;
    if (this.receiveTimeMs === null) return { ok: false, value: null, reason: `${name}: no data yet` };
    if (this.isStale(nowMs)) {
      return { ok: false, value: null, reason: `${name}: no data for ${Math.round((nowMs - this.receiveTimeMs) / 1000)} s` };
    }
    if (this.quality === "bad" || this.value === null) return { ok: false, value: null, reason: `${name}: bad (${this.qualityReason ?? "bad"})` };
    if (this.functionCheck) return { ok: false, value: null, reason: `${name}: analyser in function check` };
    if (this.quality === "uncertain") return { ok: false, value: this.value, reason: `${name}: uncertain (${this.qualityReason ?? "uncertain"})` };
    return { ok: true, value: this.value, reason: "" };
  }

  view(nowMs: number): SignalView {
    return {
      id: this.cfg.id,
      name: this.cfg.name,
      unit: this.unitSymbol,
      value: this.value,
      quality: this.quality,
      qualityReason: this.qualityReason,
      sourceTimeMs: this.sourceTimeMs,
      receiveTimeMs: this.receiveTimeMs,
      expectedPeriodS: this.cfg.expectedPeriodS,
      stale: this.isStale(nowMs),
      functionCheck: this.functionCheck,
    };
  }
}
