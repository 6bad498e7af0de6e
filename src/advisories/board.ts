// The advisory board: every rule's advisory, the commands people give them, nuisance control,
// and what survives a restart. Pure: the engine hands it each rule's input at a tick.
import type { AdvisoryPolicy, RuleConfig } from "../config/schema.js";
import { tierRank, type AdvisoryTransition, type AdvisoryView, type Command, type NuisanceEvent } from "../core/types.js";
import { Advisory, ruleKey, type CommandResult, type PersistedAdvisory, type RuleInput } from "./advisory.js";
import { NuisanceControl } from "./nuisance.js";

export type BoardEvent = AdvisoryTransition | NuisanceEvent;

export type BoardCommandOutcome =
  | { ok: true; events: BoardEvent[]; advisory: AdvisoryView | null }
  | { ok: false; status: 400 | 403 | 404 | 409; error: string };

export class AdvisoryBoard {
  readonly advisories: Advisory[] = [];
  private readonly byId = new Map<string, Advisory>();
  private readonly nuisance: NuisanceControl;

  constructor(
    rules: readonly RuleConfig[],
    describe: (r: RuleConfig) => { unit: string; label: string },
    policy: AdvisoryPolicy,
  ) {
    this.nuisance = new NuisanceControl(policy);
    for (const r of rules) {
      const d = describe(r);
      const a = new Advisory(r, d.unit, d.label, policy);
      this.advisories.push(a);
      this.byId.set(a.id, a);
    }
  }

  get(id: string): Advisory | undefined {
    return this.byId.get(id);
  }

  inFlood(position: string): boolean {
    return this.nuisance.inFlood(position);
  }

  /** Evaluate every rule at `nowMs`, in config order. */
  evaluate(nowMs: number, inputOf: (a: Advisory) => RuleInput): BoardEvent[] {
    const out: BoardEvent[] = [];
    for (const a of this.advisories) this.emit(a, a.evaluate(inputOf(a), nowMs), out);
    for (const e of this.nuisance.tick(nowMs, this.advisories)) out.push(e);
    return out;
  }

  command(cmd: Command): BoardCommandOutcome {
    const a = this.byId.get(cmd.advisoryId);
    if (!a) return { ok: false, status: 404, error: `no advisory "${cmd.advisoryId}": expected the id of an advisory in GET /api/advisories` };
    const r: CommandResult = a.command(cmd);
    if (!r.ok) return r;
    const out: BoardEvent[] = [];
    this.emit(a, r.events, out);
    return { ok: true, events: out, advisory: a.view() };
  }

  private emit(a: Advisory, transitions: AdvisoryTransition[], out: BoardEvent[]): void {
    for (const t of transitions) {
      out.push(t);
      for (const n of this.nuisance.onTransition(t, a)) out.push(n);
    }
  }

  /** Advisories on screen: highest tier first, then newest. Nuisance marks never hide one. */
  views(): AdvisoryView[] {
    return this.advisories
      .map((a) => a.view())
      .filter((v): v is AdvisoryView => v !== null)
      .sort((x, y) => tierRank(y.tier) - tierRank(x.tier) || y.raisedAtMs - x.raisedAtMs);
  }

  /** The advisories whose state differs from a fresh one: what a restart must get back. */
  persist(): PersistedAdvisory[] {
    return this.advisories.map((a) => a.persist()).filter((p) => p.alarmState !== "normal" || p.activeTier !== null || p.shelf || p.outOfService);
  }

  /**
   * Restore states kept before a restart. An entry whose rule is gone or changed is dropped
   * (its condition is judged afresh). `shelvedBefore` lists advisories the transition log shows
   * shelved at the stop: those whose state could not be restored are unshelved, visibly.
   */
  restore(saved: readonly PersistedAdvisory[], nowMs: number, shelvedBefore: readonly string[] = []): { events: BoardEvent[]; restored: string[]; dropped: string[] } {
    const events: BoardEvent[] = [];
    const restored: string[] = [];
    const dropped: string[] = [];
    for (const p of saved) {
      const a = this.byId.get(p.id);
      if (!a || p.ruleKey !== ruleKey(a.rule)) {
        dropped.push(p.id);
        continue;
      }
      this.emit(a, a.restore(p, nowMs), events);
      restored.push(p.id);
    }
    for (const id of shelvedBefore) {
      const a = this.byId.get(id);
      if (a && !restored.includes(id)) events.push(a.unshelveUnrecovered(nowMs));
    }
    return { events, restored, dropped };
  }
}
