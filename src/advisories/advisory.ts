// One advisory: a rule's tier decision (thresholds, deadband, on-delay) and its
// lifecycle after ISA-18.2 (normal → unack → ack → normal, or unack → rtn-unack → normal).
//
//   normal ──raise──▶ unack ──ack──▶ ack
//     ▲                 │ clear        │ clear
//     │                 ▼              ▼
//     └──────ack──── rtn-unack       normal
//
// A raise while returned-unacknowledged goes back to unack; an escalation to a higher
// tier needs a fresh acknowledgement (ack → unack). Everything takes `nowMs`.
import type { RuleConfig } from "../config/schema.js";
import { ADVISORY_ONLY, TIERS, tierRank, type AdvisoryState, type AdvisoryTransition, type AdvisoryView, type Tier } from "../core/types.js";

export const SYSTEM_USER = "millwarden";

export type AckOutcome =
  | { ok: true; events: AdvisoryTransition[] }
  | { ok: false; status: 404 | 409; error: string };

const fmt = (v: number | null) => (v === null ? "—" : Math.abs(v) >= 100 ? v.toFixed(0) : v.toFixed(1));
/** A value with its unit; an endless time to a limit reads "not approaching". */
const withUnit = (v: number | null, unit: string) => (v !== null && !Number.isFinite(v) ? "not approaching" : `${fmt(v)} ${unit}`);

export class Advisory {
  state: AdvisoryState = "normal";
  /** Active tier, or null when the condition is not present. */
  activeTier: Tier | null = null;
  lastTier: Tier;
  value: number | null = null;
  raisedAtMs = 0;
  lastChangeMs = 0;
  ackedBy: string | null = null;
  ackedAtMs: number | null = null;
  private pending: { tier: Tier; sinceMs: number } | null = null;
  private readonly thresholds: { tier: Tier; value: number }[];

  constructor(
    readonly rule: RuleConfig,
    readonly unitSymbol: string,
    readonly quantityLabel: string,
  ) {
    this.thresholds = TIERS.flatMap((tier) => (rule.tiers[tier] === undefined ? [] : [{ tier, value: rule.tiers[tier]! }]));
    this.lastTier = this.thresholds[0]!.tier;
  }

  get id(): string {
    return this.rule.id;
  }

  thresholdOf(tier: Tier): number {
    return this.thresholds.find((t) => t.tier === tier)!.value;
  }

  /** The tier the value calls for, holding the active tier within the deadband. */
  targetTier(v: number): Tier | null {
    const high = this.rule.direction === "high";
    const db = this.rule.deadband;
    const activeRank = this.activeTier === null ? -1 : tierRank(this.activeTier);
    let target: Tier | null = null;
    for (const { tier, value: th } of this.thresholds) {
      const exceeded = high ? v >= th : v <= th;
      const held = activeRank >= tierRank(tier) && (high ? v > th - db : v < th + db);
      if (exceeded || held) target = tier;
    }
    return target;
  }

  /** Evaluate the rule at `nowMs`; a null value (unknown) changes nothing and raises nothing. */
  evaluate(value: number | null, nowMs: number): AdvisoryTransition[] {
    this.value = value;
    if (value === null) {
      this.pending = null;
      return [];
    }
    const target = this.targetTier(value);
    const activeRank = this.activeTier === null ? -1 : tierRank(this.activeTier);
    const targetRank = target === null ? -1 : tierRank(target);
    if (targetRank > activeRank) {
      if (!this.pending) this.pending = { tier: target!, sinceMs: nowMs };
      else this.pending.tier = target!;
      if (nowMs - this.pending.sinceMs < this.rule.onDelayS * 1000) return [];
      this.pending = null;
      return [this.rise(target!, nowMs)];
    }
    this.pending = null;
    if (targetRank < activeRank) return [target === null ? this.clear(nowMs) : this.lower(target, nowMs)];
    return [];
  }

  acknowledge(by: string, atMs: number, note?: string): AckOutcome {
    if (this.state === "normal") return { ok: false, status: 404, error: `advisory "${this.id}" is not active` };
    if (this.state === "ack") return { ok: false, status: 409, error: `advisory "${this.id}" is already acknowledged by ${this.ackedBy}` };
    const from = this.state;
    this.state = from === "unack" ? "ack" : "normal";
    this.ackedBy = by;
    this.ackedAtMs = atMs;
    this.lastChangeMs = atMs;
    return { ok: true, events: [this.transition("ack", from, atMs, by, note ?? "acknowledged")] };
  }

  private rise(tier: Tier, nowMs: number): AdvisoryTransition {
    const from = this.state;
    const wasActive = this.activeTier !== null;
    this.activeTier = tier;
    this.lastTier = tier;
    this.lastChangeMs = nowMs;
    this.state = "unack";
    this.ackedBy = null;
    this.ackedAtMs = null;
    if (!wasActive) this.raisedAtMs = nowMs;
    const kind = wasActive ? "escalate" : "raise";
    return this.transition(kind, from, nowMs, SYSTEM_USER, `${this.quantityLabel} ${withUnit(this.value, this.unitSymbol)} reached the ${tier} threshold ${withUnit(this.thresholdOf(tier), this.unitSymbol)}`);
  }

  private lower(tier: Tier, nowMs: number): AdvisoryTransition {
    this.activeTier = tier;
    this.lastTier = tier;
    this.lastChangeMs = nowMs;
    return this.transition("de-escalate", this.state, nowMs, SYSTEM_USER, `${this.quantityLabel} ${withUnit(this.value, this.unitSymbol)} no longer beyond the higher threshold; now ${tier}`);
  }

  private clear(nowMs: number): AdvisoryTransition {
    const from = this.state;
    this.activeTier = null;
    this.lastChangeMs = nowMs;
    this.state = from === "ack" ? "normal" : "rtn-unack";
    return this.transition("clear", from, nowMs, SYSTEM_USER, `${this.quantityLabel} returned to normal (${withUnit(this.value, this.unitSymbol)})`);
  }

  private transition(kind: AdvisoryTransition["transition"], from: AdvisoryState, atMs: number, by: string, why: string): AdvisoryTransition {
    return {
      kind: "advisory",
      atMs,
      advisoryId: this.id,
      ruleId: this.rule.id,
      transition: kind,
      from,
      to: this.state,
      tier: this.lastTier,
      value: this.value,
      limit: this.thresholdOf(this.lastTier),
      by,
      why,
    };
  }

  view(): AdvisoryView | null {
    if (this.state === "normal") return null;
    const tier = this.lastTier;
    const limit = this.thresholdOf(tier);
    const r = this.rule;
    const active = this.activeTier !== null;
    return {
      id: this.id,
      ruleId: r.id,
      state: this.state,
      tier,
      unitId: r.unit ?? null,
      title: r.title,
      message:
        `${r.title}: ${this.quantityLabel} ${withUnit(this.value, this.unitSymbol)} ` +
        `(${tier} threshold ${withUnit(limit, this.unitSymbol)})${active ? "" : ", now back to normal"}. ${ADVISORY_ONLY}`,
      quantity: r.quantity,
      value: this.value,
      unit: this.unitSymbol,
      limit,
      direction: r.direction,
      cause: r.cause,
      consequence: r.consequence,
      check: r.check,
      origin: r.origin,
      raisedAtMs: this.raisedAtMs,
      lastChangeMs: this.lastChangeMs,
      ackedBy: this.ackedBy,
      ackedAtMs: this.ackedAtMs,
    };
  }
}
