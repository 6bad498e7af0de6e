// One advisory: a rule's condition (thresholds or states, deadband, on- and off-delay) and
// its lifecycle after ISA-18.2 / IEC 62682.
//
//   normal ──raise──▶ unack ──ack──▶ ack ──(reAlertS)──▶ unack
//     ▲                 │ clear        │ clear
//     │                 ▼              ▼
//     └──────ack──── rtn-unack       normal        (latching rule: clear ──▶ latched ──reset──▶ normal)
//
//   held states, in which nothing is annunciated: out-of-service > shelved > suppressed.
//   On leaving them the advisory is unack if its condition is present, else normal.
//
// The condition is evaluated all the time, held or not, so that leaving a held state shows
// the truth at once. Everything takes `nowMs`; nothing here reads a clock.
import type { AdvisoryPolicy, RuleConfig } from "../config/schema.js";
import {
  ADVISORY_ONLY,
  TIERS,
  tierRank,
  type AdvisoryState,
  type AdvisoryTransition,
  type AdvisoryView,
  type Command,
  type Tier,
  type TransitionKind,
} from "../core/types.js";

export const SYSTEM_USER = "millwarden";

export type CommandResult =
  | { ok: true; events: AdvisoryTransition[] }
  | { ok: false; status: 400 | 403 | 404 | 409; error: string };

/** What the engine found for the rule at a tick. */
export interface RuleInput {
  /** Value of the quantity (state rule: 1 while the state matches, 0 otherwise); null = unknown. */
  value: number | null;
  /** For a state rule, the state itself. */
  stateText?: string | null;
  /** Why the rule is suppressed by design now (phase, analyser in function check), or null. */
  suppressedBy: string | null;
}

/** What survives a restart (the historian keeps it; see Advisory.persist/restore). */
export interface PersistedAdvisory {
  id: string;
  /** A fingerprint of the rule: a changed rule is not restored. */
  ruleKey: string;
  alarmState: "normal" | "unack" | "ack" | "rtn-unack" | "latched";
  activeTier: Tier | null;
  lastTier: Tier;
  value: number | null;
  raisedAtMs: number;
  lastChangeMs: number;
  ackedBy: string | null;
  ackedAtMs: number | null;
  shelf: Shelf | null;
  outOfService: Hold | null;
}

interface Hold {
  by: string;
  reason: string;
  atMs: number;
}
interface Shelf extends Hold {
  untilMs: number;
  oneShot: boolean;
}

type AlarmState = PersistedAdvisory["alarmState"];

const fmt = (v: number | null) => (v === null ? "—" : Math.abs(v) >= 100 ? v.toFixed(0) : v.toFixed(1));
/** A value with its unit; an endless time to a limit reads "not approaching". */
const withUnit = (v: number | null, unit: string) => (v !== null && !Number.isFinite(v) ? "not approaching" : `${fmt(v)} ${unit}`);
const minutes = (ms: number) => `${Math.round(ms / 60_000)} min`;

/** A stable fingerprint of what decides a rule's condition (texts may change freely). */
export function ruleKey(r: RuleConfig): string {
  return JSON.stringify([r.quantity, r.direction ?? null, r.tiers ?? null, r.states ?? null, r.tier ?? null, r.latching]);
}

export class Advisory {
  /** The lifecycle apart from the held states. */
  private alarmState: AlarmState = "normal";
  /** Active tier after on/off-delay, or null when the condition is not present. */
  activeTier: Tier | null = null;
  lastTier: Tier;
  value: number | null = null;
  stateText: string | null = null;
  raisedAtMs = 0;
  lastChangeMs = 0;
  ackedBy: string | null = null;
  ackedAtMs: number | null = null;
  /** Since when the condition has been continuously present (standing advisories). */
  activeSinceMs: number | null = null;
  private shelf: Shelf | null = null;
  private outOfService: Hold | null = null;
  private suppressedBy: string | null = null;
  private pendingUp: { tier: Tier; sinceMs: number } | null = null;
  private pendingDown: { tier: Tier | null; sinceMs: number } | null = null;
  private readonly thresholds: { tier: Tier; value: number }[];
  /** Nuisance marks, set by the board. */
  chattering = false;
  firstOut = false;
  standing = false;

  constructor(
    readonly rule: RuleConfig,
    readonly unitSymbol: string,
    readonly quantityLabel: string,
    private readonly policy: AdvisoryPolicy,
  ) {
    // A state rule is a threshold rule on 1 (state matches) / 0 at its one tier.
    this.thresholds = rule.states
      ? [{ tier: rule.tier!, value: 1 }]
      : TIERS.flatMap((tier) => (rule.tiers?.[tier] === undefined ? [] : [{ tier, value: rule.tiers[tier]! }]));
    if (this.thresholds.length === 0) throw new RangeError(`rule "${rule.id}": expected tiers with at least one threshold, or states with a tier`);
    this.lastTier = this.thresholds[0]!.tier;
  }

  get id(): string {
    return this.rule.id;
  }

  get position(): string {
    return this.rule.position;
  }

  /** The state shown: a held state first, then the lifecycle. */
  get state(): AdvisoryState {
    if (this.outOfService) return "out-of-service";
    if (this.shelf) return "shelved";
    if (this.suppressedBy) return "suppressed";
    return this.alarmState;
  }

  private get held(): boolean {
    return this.outOfService !== null || this.shelf !== null || this.suppressedBy !== null;
  }

  thresholdOf(tier: Tier): number {
    return this.thresholds.find((t) => t.tier === tier)!.value;
  }

  /** The tier the value calls for, holding the active tier within the deadband. */
  targetTier(v: number): Tier | null {
    const high = this.rule.states !== undefined || this.rule.direction === "high";
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

  /**
   * Evaluate the rule at `nowMs`. An unknown value (null) changes nothing and raises nothing;
   * pending delays restart, since nobody can tell whether the condition held meanwhile.
   */
  evaluate(input: RuleInput, nowMs: number): AdvisoryTransition[] {
    const out: AdvisoryTransition[] = [];
    this.value = input.value;
    this.stateText = input.stateText ?? null;

    // Holds that end by time or by the condition: shelve expiry first.
    if (this.shelf && nowMs >= this.shelf.untilMs) {
      const shelvedMs = nowMs - this.shelf.atMs;
      out.push(...this.leaveHold(() => (this.shelf = null), "unshelve", nowMs, SYSTEM_USER, `shelve expired after ${minutes(shelvedMs)}`));
    }
    if (input.suppressedBy !== this.suppressedBy) {
      const was = this.suppressedBy;
      const set = () => (this.suppressedBy = input.suppressedBy);
      if (was === null) out.push(...this.enterHold(set, "suppress", nowMs, SYSTEM_USER, `suppressed by design: ${input.suppressedBy}`));
      else if (input.suppressedBy === null) out.push(...this.leaveHold(set, "unsuppress", nowMs, SYSTEM_USER, `no longer suppressed (was: ${was})`));
      else set();
    }

    if (input.value === null) {
      this.pendingUp = null;
      this.pendingDown = null;
      return out;
    }
    const target = this.targetTier(input.value);
    const activeRank = this.activeTier === null ? -1 : tierRank(this.activeTier);
    const targetRank = target === null ? -1 : tierRank(target);
    if (targetRank > activeRank) {
      this.pendingDown = null;
      if (!this.pendingUp) this.pendingUp = { tier: target!, sinceMs: nowMs };
      else this.pendingUp.tier = target!;
      if (nowMs - this.pendingUp.sinceMs >= this.rule.onDelayS * 1000) {
        this.pendingUp = null;
        out.push(...this.rise(target!, nowMs));
      }
    } else if (targetRank < activeRank) {
      this.pendingUp = null;
      if (!this.pendingDown) this.pendingDown = { tier: target, sinceMs: nowMs };
      else this.pendingDown.tier = target;
      if (nowMs - this.pendingDown.sinceMs >= this.rule.offDelayS * 1000) {
        this.pendingDown = null;
        out.push(...(target === null ? this.clear(nowMs) : this.lower(target, nowMs)));
      }
    } else {
      this.pendingUp = null;
      this.pendingDown = null;
    }

    // Re-alert: acknowledged and still present for too long asks for attention again.
    const re = this.rule.reAlertS;
    if (re !== undefined && !this.held && this.alarmState === "ack" && this.activeTier !== null && this.ackedAtMs !== null && nowMs - this.ackedAtMs >= re * 1000) {
      const ackedMs = nowMs - this.ackedAtMs;
      this.alarmState = "unack";
      this.ackedBy = null;
      this.ackedAtMs = null;
      out.push(this.transition("re-alert", "ack", nowMs, SYSTEM_USER, `still ${this.activeTier} ${minutes(ackedMs)} after acknowledgement`));
    }
    return out;
  }

  command(cmd: Command): CommandResult {
    switch (cmd.kind) {
      case "ack":
        return this.acknowledge(cmd.by, cmd.atMs, cmd.note);
      case "reset":
        return this.reset(cmd.by, cmd.atMs, cmd.note);
      case "shelve":
        return this.shelve(cmd);
      case "unshelve": {
        if (!this.shelf) return { ok: false, status: 409, error: `advisory "${this.id}" is not shelved` };
        return { ok: true, events: this.leaveHold(() => (this.shelf = null), "unshelve", cmd.atMs, cmd.by, cmd.reason?.trim() || "unshelved") };
      }
      case "out-of-service": {
        if (cmd.role !== "engineer") return { ok: false, status: 403, error: `taking advisory "${this.id}" out of service needs the engineer role` };
        const reason = cmd.reason?.trim();
        if (!reason) return { ok: false, status: 400, error: `out of service needs a reason: expected a non-empty "reason"` };
        if (this.outOfService) return { ok: false, status: 409, error: `advisory "${this.id}" is already out of service (by ${this.outOfService.by})` };
        return { ok: true, events: this.enterHold(() => (this.outOfService = { by: cmd.by, reason, atMs: cmd.atMs }), "out-of-service", cmd.atMs, cmd.by, reason) };
      }
      case "return-to-service": {
        if (cmd.role !== "engineer") return { ok: false, status: 403, error: `returning advisory "${this.id}" to service needs the engineer role` };
        if (!this.outOfService) return { ok: false, status: 409, error: `advisory "${this.id}" is not out of service` };
        return { ok: true, events: this.leaveHold(() => (this.outOfService = null), "return-to-service", cmd.atMs, cmd.by, cmd.reason?.trim() || "returned to service") };
      }
    }
  }

  private acknowledge(by: string, atMs: number, note?: string): CommandResult {
    const s = this.state;
    if (this.held) return { ok: false, status: 409, error: `advisory "${this.id}" is ${s}: nothing to acknowledge` };
    if (s === "normal") return { ok: false, status: 404, error: `advisory "${this.id}" is not active` };
    if (s === "ack" || (s === "latched" && this.ackedBy !== null))
      return { ok: false, status: 409, error: `advisory "${this.id}" is already acknowledged by ${this.ackedBy}` };
    this.alarmState = s === "unack" ? "ack" : s === "latched" ? "latched" : "normal";
    this.ackedBy = by;
    this.ackedAtMs = atMs;
    this.lastChangeMs = atMs;
    return { ok: true, events: [this.transition("ack", s, atMs, by, note?.trim() || "acknowledged")] };
  }

  private reset(by: string, atMs: number, note?: string): CommandResult {
    if (this.alarmState !== "latched" || this.held) {
      const why = this.activeTier !== null && this.rule.latching ? "its condition is still present" : `it is ${this.state}, not latched`;
      return { ok: false, status: 409, error: `advisory "${this.id}" cannot be reset: ${why}` };
    }
    this.alarmState = "normal";
    this.lastChangeMs = atMs;
    this.ackedBy ??= by;
    this.ackedAtMs ??= atMs;
    return { ok: true, events: [this.transition("reset", "latched", atMs, by, note?.trim() || "reset")] };
  }

  private shelve(cmd: Extract<Command, { kind: "shelve" }>): CommandResult {
    const reason = cmd.reason?.trim();
    if (!reason) return { ok: false, status: 400, error: `shelving needs a reason: expected a non-empty "reason"` };
    const maxS = this.policy.maxShelveS;
    const oneShot = cmd.oneShot === true;
    if (!oneShot && cmd.durationS === undefined) return { ok: false, status: 400, error: `shelving needs "durationS" (1..${maxS} s) or "oneShot": true` };
    if (cmd.durationS !== undefined && !(Number.isFinite(cmd.durationS) && cmd.durationS > 0 && cmd.durationS <= maxS))
      return { ok: false, status: 400, error: `expected "durationS" between 1 and ${maxS} s (advisoryPolicy.maxShelveS); found ${cmd.durationS}` };
    if (this.outOfService) return { ok: false, status: 409, error: `advisory "${this.id}" is out of service` };
    if (this.shelf) return { ok: false, status: 409, error: `advisory "${this.id}" is already shelved by ${this.shelf.by} until ${new Date(this.shelf.untilMs).toISOString()}` };
    if (!this.policy.shelveWarnings && this.activeTier === "warning")
      return { ok: false, status: 409, error: `advisory "${this.id}" is at warning tier, which this site does not allow to be shelved (advisoryPolicy.shelveWarnings)` };
    const durationS = Math.min(cmd.durationS ?? maxS, maxS);
    const shelf = { by: cmd.by, reason, atMs: cmd.atMs, untilMs: cmd.atMs + durationS * 1000, oneShot };
    const how = oneShot ? `one-shot (until it clears, at most ${minutes(durationS * 1000)})` : `for ${minutes(durationS * 1000)}`;
    return { ok: true, events: this.enterHold(() => (this.shelf = shelf), "shelve", cmd.atMs, cmd.by, `${reason} — shelved ${how}`) };
  }

  /** A held state begins (`change` sets it): the lifecycle restarts when it ends. */
  private enterHold(change: () => void, kind: TransitionKind, atMs: number, by: string, why: string): AdvisoryTransition[] {
    const from = this.state;
    change();
    this.alarmState = "normal";
    this.ackedBy = null;
    this.ackedAtMs = null;
    this.lastChangeMs = atMs;
    if (from === this.state) return [];
    return [this.transition(kind, from, atMs, by, why)];
  }

  /** A held state ends (`change` clears it): unack if the condition is present, else normal (or the next held state). */
  private leaveHold(change: () => void, kind: TransitionKind, atMs: number, by: string, why: string): AdvisoryTransition[] {
    const from = this.state;
    change();
    this.alarmState = this.activeTier !== null ? "unack" : "normal";
    if (this.activeTier !== null) this.raisedAtMs = atMs;
    this.lastChangeMs = atMs;
    if (from === this.state) return [];
    return [this.transition(kind, from, atMs, by, why)];
  }

  private rise(tier: Tier, nowMs: number): AdvisoryTransition[] {
    const wasActive = this.activeTier !== null;
    this.activeTier = tier;
    this.lastTier = tier;
    if (!wasActive) this.activeSinceMs = nowMs;
    if (this.held) return [];
    const from = this.alarmState;
    this.lastChangeMs = nowMs;
    this.alarmState = "unack";
    this.ackedBy = null;
    this.ackedAtMs = null;
    if (!wasActive) this.raisedAtMs = nowMs;
    return [this.transition(wasActive ? "escalate" : "raise", from, nowMs, SYSTEM_USER, `${this.describe()} reached the ${tier} ${this.thresholdText(tier)}`)];
  }

  private lower(tier: Tier, nowMs: number): AdvisoryTransition[] {
    this.activeTier = tier;
    this.lastTier = tier;
    if (this.held) return [];
    this.lastChangeMs = nowMs;
    return [this.transition("de-escalate", this.alarmState, nowMs, SYSTEM_USER, `${this.describe()} no longer beyond the higher threshold; now ${tier}`)];
  }

  private clear(nowMs: number): AdvisoryTransition[] {
    this.activeTier = null;
    this.activeSinceMs = null;
    this.standing = false;
    const now = this.rule.states ? (this.stateText ?? "unknown") : withUnit(this.value, this.unitSymbol);
    const why = `${this.quantityLabel} returned to normal (${now})`;
    if (this.shelf?.oneShot) {
      // A one-shot shelve ends with the condition it was set for.
      return this.leaveHold(() => (this.shelf = null), "unshelve", nowMs, SYSTEM_USER, `${why}; one-shot shelve ended`);
    }
    if (this.held) return [];
    const from = this.alarmState;
    this.lastChangeMs = nowMs;
    this.alarmState = this.rule.latching ? "latched" : from === "ack" ? "normal" : "rtn-unack";
    return [this.transition("clear", from, nowMs, SYSTEM_USER, this.rule.latching ? `${why}; latched until reset` : why)];
  }

  private describe(): string {
    if (this.rule.states) return `${this.quantityLabel} ${this.stateText ?? "unknown"}`;
    return `${this.quantityLabel} ${withUnit(this.value, this.unitSymbol)}`;
  }

  private thresholdText(tier: Tier): string {
    if (this.rule.states) return `state (${this.rule.states.join(" or ")})`;
    return `threshold ${withUnit(this.thresholdOf(tier), this.unitSymbol)}`;
  }

  private transition(kind: TransitionKind, from: AdvisoryState, atMs: number, by: string, why: string): AdvisoryTransition {
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

  /** Shown on the screen: every state but normal, and held advisories only while their condition is present. */
  view(): AdvisoryView | null {
    const state = this.state;
    if (state === "normal") return null;
    if (this.held && this.activeTier === null && state !== "out-of-service" && state !== "shelved") return null;
    const tier = this.lastTier;
    const limit = this.thresholdOf(tier);
    const r = this.rule;
    const active = this.activeTier !== null;
    const stateWords =
      state === "latched" ? ", latched until reset" : !active ? ", now back to normal" : state === "shelved" ? ", shelved" : state === "suppressed" ? ", suppressed by design" : state === "out-of-service" ? ", out of service" : "";
    const hold = this.outOfService ?? this.shelf;
    return {
      id: this.id,
      ruleId: r.id,
      state,
      tier,
      unitId: r.unit ?? null,
      title: r.title,
      message: `${r.title}: ${this.describe()} (${tier} ${this.thresholdText(tier)})${stateWords}. ${ADVISORY_ONLY}`,
      quantity: r.quantity,
      value: this.value,
      unit: this.unitSymbol,
      limit,
      direction: r.direction ?? "high",
      cause: r.cause,
      consequence: r.consequence,
      check: r.check,
      origin: r.origin,
      raisedAtMs: this.raisedAtMs,
      lastChangeMs: this.lastChangeMs,
      ackedBy: this.ackedBy,
      ackedAtMs: this.ackedAtMs,
      latching: r.latching,
      conditionActive: active,
      shelvedUntilMs: this.shelf?.untilMs ?? null,
      oneShot: this.shelf?.oneShot ?? false,
      suppressedBy: this.suppressedBy,
      heldBy: hold?.by ?? null,
      heldReason: hold?.reason ?? null,
      chattering: this.chattering,
      firstOut: this.firstOut,
      standing: this.standing,
      position: r.position,
      states: r.states ?? null,
      stateValue: this.stateText,
    };
  }

  persist(): PersistedAdvisory {
    return {
      id: this.id,
      ruleKey: ruleKey(this.rule),
      alarmState: this.alarmState,
      activeTier: this.activeTier,
      lastTier: this.lastTier,
      value: this.value,
      raisedAtMs: this.raisedAtMs,
      lastChangeMs: this.lastChangeMs,
      ackedBy: this.ackedBy,
      ackedAtMs: this.ackedAtMs,
      shelf: this.shelf,
      outOfService: this.outOfService,
    };
  }

  /**
   * Take back what was stored before a restart. A shelve that ran out meanwhile ends now. The
   * condition itself is re-evaluated at the next tick (and clears or escalates from there).
   */
  restore(p: PersistedAdvisory, nowMs: number): AdvisoryTransition[] {
    this.alarmState = p.alarmState;
    this.activeTier = p.activeTier;
    this.activeSinceMs = p.activeTier !== null ? p.raisedAtMs : null;
    this.lastTier = this.thresholds.some((t) => t.tier === p.lastTier) ? p.lastTier : this.lastTier;
    this.value = p.value;
    this.raisedAtMs = p.raisedAtMs;
    this.lastChangeMs = p.lastChangeMs;
    this.ackedBy = p.ackedBy;
    this.ackedAtMs = p.ackedAtMs;
    this.outOfService = p.outOfService;
    this.shelf = p.shelf;
    if (this.shelf && nowMs >= this.shelf.untilMs) {
      return this.leaveHold(() => (this.shelf = null), "unshelve", nowMs, SYSTEM_USER, "shelve expired while millwarden was stopped");
    }
    return [];
  }

  /** A shelve whose state could not be read back after a restart ends now, visibly. */
  unshelveUnrecovered(nowMs: number): AdvisoryTransition {
    return this.transition("unshelve", "shelved", nowMs, SYSTEM_USER, "shelve could not be restored after a restart; unshelved");
  }
}
