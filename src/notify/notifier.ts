// The notifier: routing and escalation, pure. It takes advisory transitions, nuisance events,
// acknowledgements and `nowMs`, and returns the messages to send and when it wants to be
// ticked next. It never reads the clock and does no I/O; the service (service.ts) puts its
// messages into the outbox in the same transaction as its state (persist()).
//
//   transition ─▶ annunciation? ─▶ chattering? ─▶ flood at the position? ─▶ maintenance? ─▶ quiet hours? ─▶ send
//                                   (one message)   (summary at the end)     (dropped)        (digest at the end)
//                 (warnings pass every hold but chatter: nothing holds a warning back)
//
//   episode (one per advisory while it needs someone): primary ─afterS─▶ secondary ─afterS─▶ supervisor,
//   reminders every everyS to everyone paged; it ends at ack, at clear (not while latched or
//   chattering), reset, shelve, suppression and out of service, with a "stand down" message.
//
// Routes pick recipients by tier, unit and operator position: a roster (its on-call people along
// the chain) and broadcast channels. A person is reached on every contact they have.
import { ROLES, type NotificationsConfig, type PersonConfig, type RouteConfig } from "../config/sections/notifications.js";
import { tierRank, type AdvisoryState, type AdvisoryTransition, type NuisanceEvent, type Tier } from "../core/types.js";
import type { AdvisoryInfo } from "./catalogue.js";
import { formatValue, makeFields, recipientKey, subjectOf, textOf, type FieldsInput, type Message, type MessageFields, type MessageKind, type Recipient } from "./message.js";
import { Roster } from "./roster.js";
import { formatLocal, localDateText, localParts, minutesOf, parseSiteTime, wallDay, wallToUtc } from "./zone.js";

const DAY_MS = 86_400_000;
const WEEKDAY_INDEX: Record<string, number> = { mon: 0, tue: 1, wed: 2, thu: 3, fri: 4, sat: 5, sun: 6 };
/** Items a flood summary or a digest lists at most (the count says how many there were). */
export const MAX_LISTED_ITEMS = 30;

export interface NotifierSetup {
  config: NotificationsConfig;
  site: string;
  plant: string;
  linkBase: string;
  advisories: readonly AdvisoryInfo[];
}

/** What the notifier may ask about an advisory while it writes a message. */
export interface NotifyContext {
  /** The latest value of the advisory's trend key (AdvisoryInfo.trend), null when unknown. */
  trend?(advisoryId: string): number | null;
  /** The advisory's value now (escalations and reminders show it), null when unknown. */
  value?(advisoryId: string): number | null;
}

export interface NotifierOutput {
  messages: Message[];
  /** The earliest time a tick can send something, or null when nothing waits on time. */
  nextDueMs: number | null;
}

/** An acknowledgement that does not come from the advisory board (later: a signed link on the phone). */
export interface NotifyAck {
  advisoryId: string;
  by: string;
  atMs: number;
}

interface Chain {
  rosterId: string;
  /** The last role of the chain paged (index into ROLES), −1 before the first. */
  roleIndex: number;
  exhausted: boolean;
}

interface Episode {
  key: string;
  advisoryId: string;
  startMs: number;
  tier: Tier;
  chains: Chain[];
  /** People paged so far, and when each was paged last. */
  persons: string[];
  pagedAtMs: Record<string, number>;
  /** Broadcast channels that got it. */
  channels: string[];
  escalations: number;
  nextEscalationMs: number | null;
  reminders: number;
  nextReminderMs: number | null;
  /** Kept through raises and clears while the advisory chatters. */
  chatter: boolean;
}

interface DigestEntry {
  channel: string;
  recipient: Recipient;
  items: string[];
  count: number;
}

interface Flood {
  position: string;
  startMs: number;
  firstOut: string | null;
  held: string[];
  count: number;
}

/** What a restart needs to carry on (the service stores it with the outbox, in one transaction). */
export interface PersistedNotifier {
  version: 1;
  episodes: Episode[];
  digest: DigestEntry[];
  floods: Flood[];
  chattering: { advisoryId: string; maxTier: Tier }[];
  last: { advisoryId: string; state: AdvisoryState; tier: Tier; value: number | null; limit: number }[];
}

type Hold = "maintenance" | "quiet" | null;

/** Whether a transition asks for attention: into unack from elsewhere, a higher tier, or a re-alert. */
export function annunciates(t: AdvisoryTransition): boolean {
  return (t.to === "unack" && t.from !== "unack") || (t.transition === "escalate" && t.to === "unack");
}

export class Notifier {
  private readonly cfg: NotificationsConfig;
  private readonly zone: string;
  private readonly info = new Map<string, AdvisoryInfo>();
  private readonly people = new Map<string, PersonConfig>();
  private readonly rosters = new Map<string, Roster>();
  private readonly rosterNames = new Map<string, string>();
  private readonly maintenance: { fromMs: number; toMs: number; units: string[] | null; reason: string }[];
  private readonly quiet: { days: Set<number>; fromMin: number; toMin: number }[];
  private episodes = new Map<string, Episode>();
  private digest = new Map<string, DigestEntry>();
  private floods = new Map<string, Flood>();
  private chattering = new Map<string, { maxTier: Tier }>();
  /** Each advisory's last transition: state, tier, value and the limit of that tier. */
  private last = new Map<string, { state: AdvisoryState; tier: Tier; value: number | null; limit: number }>();
  private lastTickMs: number | null = null;
  /** Advisories whose episode came from restore() and awaits reconcile(). */
  private restored = new Set<string>();
  /** Per channel with a daily test: its next scheduled instant (a cache). */
  private readonly nextTestMs = new Map<string, number>();
  private dirty = false;

  constructor(private readonly setup: NotifierSetup) {
    this.cfg = setup.config;
    this.zone = setup.config.timeZone;
    for (const a of setup.advisories) this.info.set(a.id, a);
    for (const p of this.cfg.people) this.people.set(p.id, p);
    for (const r of this.cfg.rosters) {
      this.rosters.set(r.id, new Roster(r, this.zone));
      this.rosterNames.set(r.id, r.name ?? r.id);
    }
    this.maintenance = this.cfg.maintenanceWindows.map((w) => ({
      fromMs: parseSiteTime(w.from, this.zone),
      toMs: parseSiteTime(w.to, this.zone),
      units: w.units ?? null,
      reason: w.reason,
    }));
    this.quiet = this.cfg.quietHours.map((q) => ({
      days: new Set((q.days ?? Object.keys(WEEKDAY_INDEX)).map((d) => WEEKDAY_INDEX[d]!)),
      fromMin: minutesOf(q.from),
      toMin: minutesOf(q.to),
    }));
  }

  // ---- inputs ----

  /** Advisory transitions and nuisance events, in the order the core emitted them. */
  handle(events: readonly (AdvisoryTransition | NuisanceEvent)[], nowMs: number, ctx: NotifyContext = {}): NotifierOutput {
    const out: Message[] = [];
    // A chatter event follows the raise that made the advisory chatter: that raise is then told by the chatter message alone.
    const chatterNow = new Set(events.filter((e): e is NuisanceEvent => e.kind === "nuisance" && e.type === "chatter" && e.advisoryId !== null).map((e) => e.advisoryId!));
    for (const e of events) {
      if (e.kind === "advisory") this.onTransition(e, chatterNow.has(e.advisoryId), ctx, out);
      else this.onNuisance(e, ctx, out);
    }
    return { messages: out, nextDueMs: this.nextDueMs(nowMs) };
  }

  /** Someone took the advisory from a notification: the chain stops and the others are told. */
  acknowledge(ack: NotifyAck): NotifierOutput {
    const out: Message[] = [];
    const ep = this.episodes.get(ack.advisoryId);
    if (ep) this.endEpisode(ep, ack.atMs, `acknowledged by ${ack.by} from a notification`, "ack-notify", ack.by, out);
    return { messages: out, nextDueMs: this.nextDueMs(ack.atMs) };
  }

  /** Time passes: escalations, reminders, the end of quiet hours, daily tests. */
  tick(nowMs: number, ctx: NotifyContext = {}): NotifierOutput {
    const out: Message[] = [];
    for (const ep of this.episodes.values()) this.runEpisode(ep, nowMs, ctx, out);
    if (this.digest.size && !this.isQuiet(nowMs)) this.flushDigest(nowMs, out);
    if (this.lastTickMs !== null) this.dailyTests(this.lastTickMs, nowMs, out);
    this.lastTickMs = nowMs;
    return { messages: out, nextDueMs: this.nextDueMs(nowMs) };
  }

  /** Whether anything a restart needs changed since the last call (and clears the mark). */
  takeChanged(): boolean {
    const d = this.dirty;
    this.dirty = false;
    return d;
  }

  // ---- what survives a restart ----

  persist(): PersistedNotifier {
    return {
      version: 1,
      episodes: [...this.episodes.values()].map((e) => structuredClone(e)),
      digest: [...this.digest.values()].map((d) => structuredClone(d)),
      floods: [...this.floods.values()].map((f) => structuredClone(f)),
      chattering: [...this.chattering].map(([advisoryId, c]) => ({ advisoryId, maxTier: c.maxTier })),
      last: [...this.last].map(([advisoryId, l]) => ({ advisoryId, ...l })),
    };
  }

  /**
   * Carry on from a stored state (before the first event after a restart). Episodes of advisories
   * no longer configured are dropped; reconcile() then drops those the board no longer needs.
   */
  restore(p: PersistedNotifier): void {
    if (p === null || typeof p !== "object" || p.version !== 1)
      throw new TypeError(`notifier state: expected an object with version 1, found ${JSON.stringify((p as { version?: unknown } | null)?.version ?? p)}`);
    this.episodes = new Map(p.episodes.filter((e) => this.info.has(e.advisoryId)).map((e) => [e.advisoryId, e]));
    this.restored = new Set(this.episodes.keys());
    this.digest = new Map(p.digest.map((d) => [`${d.channel}|${recipientKey(d.recipient)}`, d]));
    this.floods = new Map(p.floods.map((f) => [f.position, f]));
    this.chattering = new Map(p.chattering.filter((c) => this.info.has(c.advisoryId)).map((c) => [c.advisoryId, { maxTier: c.maxTier }]));
    this.last = new Map(p.last.map((l) => [l.advisoryId, { state: l.state, tier: l.tier, value: l.value, limit: l.limit }]));
  }

  /**
   * After the advisory board restored its own states: a restored episode whose advisory no longer
   * needs anyone (normal, acknowledged, held, or its rule changed) ends without a message.
   * Episodes begun since the restore are the board's present and stay.
   */
  reconcile(current: readonly { id: string; state: AdvisoryState }[]): void {
    const state = new Map(current.map((c) => [c.id, c.state]));
    const restored = this.restored;
    this.restored = new Set();
    for (const [id, e] of this.episodes) {
      if (!restored.has(id)) continue;
      const s = state.get(id);
      if (s === "unack" || s === "latched" || (e.chatter && this.chattering.has(id))) continue;
      this.episodes.delete(id);
      this.dirty = true;
    }
  }

  /** Advisories with someone being chased, for health and tests. */
  activeEpisodes(): { advisoryId: string; tier: Tier; persons: string[]; escalations: number; reminders: number; nextEscalationMs: number | null; nextReminderMs: number | null }[] {
    return [...this.episodes.values()].map((e) => ({
      advisoryId: e.advisoryId,
      tier: e.tier,
      persons: [...e.persons],
      escalations: e.escalations,
      reminders: e.reminders,
      nextEscalationMs: e.nextEscalationMs,
      nextReminderMs: e.nextReminderMs,
    }));
  }

  // ---- routing ----

  private routes(info: AdvisoryInfo, tier: Tier): RouteConfig[] {
    return this.cfg.routes.filter(
      (r) => r.tiers.includes(tier) && (!r.units || (info.unitId !== null && r.units.includes(info.unitId))) && (!r.positions || r.positions.includes(info.position)),
    );
  }

  /** Routes for a position as a whole (flood summaries): any tier, any unit. */
  private positionRoutes(position: string): RouteConfig[] {
    return this.cfg.routes.filter((r) => !r.positions || r.positions.includes(position));
  }

  /** The first on-call person of each roster (primary, else secondary, else supervisor) at `atMs`. */
  private firstPaged(routes: readonly RouteConfig[], atMs: number): { chains: Chain[]; persons: string[]; channels: string[] } {
    const chains: Chain[] = [];
    const persons: string[] = [];
    const channels: string[] = [];
    for (const r of routes) {
      for (const c of r.channels ?? []) if (!channels.includes(c)) channels.push(c);
      if (r.roster === undefined || chains.some((c) => c.rosterId === r.roster)) continue;
      const chain: Chain = { rosterId: r.roster, roleIndex: -1, exhausted: false };
      const who = this.nextInChain(chain, atMs, persons);
      if (who !== null) persons.push(who);
      chains.push(chain);
    }
    return { chains, persons, channels };
  }

  /** Moves the chain to its next role held by someone not paged yet; null when the chain is at its end. */
  private nextInChain(chain: Chain, atMs: number, paged: readonly string[]): string | null {
    const onCall = this.rosters.get(chain.rosterId)!.onCall(atMs);
    for (let j = chain.roleIndex + 1; j < ROLES.length; j++) {
      const who = onCall[ROLES[j]!];
      if (who !== null && !paged.includes(who)) {
        chain.roleIndex = j;
        return who;
      }
    }
    chain.roleIndex = ROLES.length - 1;
    chain.exhausted = true;
    return null;
  }

  private hold(info: AdvisoryInfo | null, tier: Tier, atMs: number): Hold {
    if (tier === "warning") return null;
    if (this.maintenance.some((w) => w.fromMs <= atMs && atMs < w.toMs && (w.units === null || (info?.unitId != null && w.units.includes(info.unitId))))) return "maintenance";
    if (this.isQuiet(atMs)) return "quiet";
    return null;
  }

  /** Within quiet hours at `atMs` (site local time). */
  isQuiet(atMs: number): boolean {
    if (this.quiet.length === 0) return false;
    const p = localParts(this.zone, atMs);
    const m = p.hour * 60 + p.minute;
    const yesterday = (p.weekday + 6) % 7;
    return this.quiet.some((q) => (q.fromMin < q.toMin ? q.days.has(p.weekday) && m >= q.fromMin && m < q.toMin : (q.days.has(p.weekday) && m >= q.fromMin) || (q.days.has(yesterday) && m < q.toMin)));
  }

  // ---- transitions ----

  private onTransition(t: AdvisoryTransition, chatterNow: boolean, ctx: NotifyContext, out: Message[]): void {
    this.last.set(t.advisoryId, { state: t.to, tier: t.tier, value: t.value, limit: t.limit });
    this.dirty = true;
    const info = this.infoOf(t.advisoryId);
    const ep = this.episodes.get(t.advisoryId);
    if (annunciates(t)) {
      const ch = this.chattering.get(t.advisoryId);
      if (chatterNow && !ch) return;
      if (ch) {
        // While it chatters only a higher tier than any told since is sent.
        if (tierRank(t.tier) <= tierRank(ch.maxTier)) return;
        ch.maxTier = t.tier;
      }
      if (t.tier !== "warning") {
        const flood = this.floods.get(info.position);
        if (flood) {
          flood.count++;
          if (flood.held.length < MAX_LISTED_ITEMS) flood.held.push(this.itemLine(info, t.tier, t.value, t.limit, t.atMs));
          return;
        }
      }
      const hold = this.hold(info, t.tier, t.atMs);
      const routes = this.routes(info, t.tier);
      if (hold === "maintenance" || routes.length === 0) return;
      const first = this.firstPaged(routes, t.atMs);
      if (hold === "quiet") {
        this.addDigest(first.persons, first.channels, this.itemLine(info, t.tier, t.value, t.limit, t.atMs));
        return;
      }
      const carried = ep ? ep.persons.filter((p) => !first.persons.includes(p)) : [];
      const persons = [...first.persons, ...carried];
      if (ep) this.episodes.delete(t.advisoryId);
      const next = this.startEpisode(info, t.tier, t.atMs, first.chains, persons, first.channels, ch !== undefined || ep?.chatter === true);
      const headline = t.transition === "re-alert" ? `${info.title}: still active after acknowledgement` : t.transition === "escalate" ? `${info.title}: now ${t.tier}` : info.title;
      const fields = this.advisoryFields("advisory", info, t.tier, t.value, t.limit, t.atMs, headline, t.why, this.followUp(next), ctx);
      this.emit(out, `${t.advisoryId}@${t.atMs}:${t.transition}`, fields, persons, first.channels);
      return;
    }
    if (!ep) return;
    switch (t.transition) {
      case "de-escalate":
        ep.tier = t.tier;
        if (!this.cfg.escalation.tiers.includes(t.tier)) ep.nextEscalationMs = null;
        if (!this.cfg.reminders.tiers.includes(t.tier)) ep.nextReminderMs = null;
        return;
      case "ack":
        return this.endEpisode(ep, t.atMs, `acknowledged by ${t.by}`, "ack", t.by, out);
      case "clear":
        if (t.to === "latched" || ep.chatter) return;
        return this.endEpisode(ep, t.atMs, `returned to normal (${t.why})`, "clear", null, out);
      case "reset":
        return this.endEpisode(ep, t.atMs, `reset by ${t.by}`, "reset", t.by, out);
      case "shelve":
        return this.endEpisode(ep, t.atMs, `shelved by ${t.by}: ${t.why}`, "shelve", t.by, out);
      case "suppress":
        return this.endEpisode(ep, t.atMs, t.why, "suppress", null, out);
      case "out-of-service":
        return this.endEpisode(ep, t.atMs, `taken out of service by ${t.by}: ${t.why}`, "out-of-service", t.by, out);
      default:
        return;
    }
  }

  private onNuisance(n: NuisanceEvent, ctx: NotifyContext, out: Message[]): void {
    if (n.type === "chatter" && n.advisoryId !== null) return this.onChatter(n, n.advisoryId, ctx, out);
    if (n.type === "chatter-end" && n.advisoryId !== null) {
      this.dirty = true;
      this.chattering.delete(n.advisoryId);
      const ep = this.episodes.get(n.advisoryId);
      if (!ep?.chatter) return;
      ep.chatter = false;
      const st = this.last.get(n.advisoryId)?.state;
      if (st !== "unack" && st !== "latched") this.endEpisode(ep, n.atMs, `no longer chattering; it is ${st ?? "normal"} now`, "chatter-end", null, out);
      return;
    }
    if (n.type === "flood-start") return this.onFloodStart(n, out);
    if (n.type === "flood-end") return this.onFloodEnd(n, out);
    // Standing advisories are a matter for the rule's review, not for a page.
  }

  private onChatter(n: NuisanceEvent, id: string, ctx: NotifyContext, out: Message[]): void {
    this.dirty = true;
    const info = this.infoOf(id);
    const tier = this.last.get(id)?.tier ?? "notice";
    this.chattering.set(id, { maxTier: tier });
    const hold = this.hold(info, tier, n.atMs);
    const routes = this.routes(info, tier);
    if (hold === "maintenance" || routes.length === 0) return;
    const first = this.firstPaged(routes, n.atMs);
    const line = `${this.itemLine(info, tier, null, null, n.atMs)} chattering (${n.count} raises)`;
    if (hold === "quiet") {
      this.addDigest(first.persons, first.channels, line);
      return;
    }
    let ep = this.episodes.get(id);
    const persons = [...first.persons, ...(ep?.persons.filter((p) => !first.persons.includes(p)) ?? [])];
    if (ep) ep.chatter = true;
    else ep = this.startEpisode(info, tier, n.atMs, first.chains, persons, first.channels, true);
    const note = `Further raises of this advisory are not sent one by one until it settles (a higher tier still is).${this.followUp(ep) ? ` ${this.followUp(ep)}` : ""}`;
    const l = this.last.get(id);
    const fields = this.advisoryFields("chatter", info, tier, l?.value ?? null, l?.limit ?? null, n.atMs, `${info.title}: chattering`, n.why, note, ctx);
    this.emit(out, `${id}@${n.atMs}:chatter`, fields, persons, first.channels);
  }

  private onFloodStart(n: NuisanceEvent, out: Message[]): void {
    this.dirty = true;
    this.floods.set(n.position, { position: n.position, startMs: n.atMs, firstOut: n.advisoryId, held: [], count: 0 });
    if (this.hold(null, "caution", n.atMs) !== null) return;
    const first = this.firstPaged(this.positionRoutes(n.position), n.atMs);
    const firstOut = n.advisoryId === null ? null : this.infoOf(n.advisoryId);
    const fields = this.fields({
      kind: "flood-start",
      tier: null,
      advisoryId: n.advisoryId,
      headline: `Advisory flood at ${n.position}: ${n.count} advisories${firstOut ? `, first out: ${firstOut.title}` : ""}`,
      unit: firstOut?.unitId ? { id: firstOut.unitId, name: firstOut.unitName } : null,
      why: n.why,
      note: "Further notices and cautions at this position are summarised when the flood ends; warnings are still sent one by one.",
      atMs: n.atMs,
    });
    this.emit(out, `flood:${n.position}@${n.atMs}:start`, fields, first.persons, first.channels);
  }

  private onFloodEnd(n: NuisanceEvent, out: Message[]): void {
    this.dirty = true;
    const flood = this.floods.get(n.position);
    this.floods.delete(n.position);
    if (!flood || this.hold(null, "caution", n.atMs) !== null) return;
    const first = this.firstPaged(this.positionRoutes(n.position), n.atMs);
    const more = flood.count - flood.held.length;
    const fields = this.fields({
      kind: "flood-end",
      tier: null,
      advisoryId: null,
      headline: `Advisory flood at ${n.position} over: ${flood.count} notices and cautions were not sent one by one`,
      why: n.why,
      items: more > 0 ? [...flood.held, `… and ${more} more`] : flood.held,
      note: flood.count ? "They are all on the dashboard and in the history." : null,
      atMs: n.atMs,
    });
    this.emit(out, `flood:${n.position}@${flood.startMs}:end`, fields, first.persons, first.channels);
  }

  // ---- episodes ----

  private startEpisode(info: AdvisoryInfo, tier: Tier, atMs: number, chains: Chain[], persons: string[], channels: string[], chatter: boolean): Episode {
    const esc = this.cfg.escalation.tiers.includes(tier) && chains.some((c) => !c.exhausted);
    const rem = this.cfg.reminders.tiers.includes(tier) && this.cfg.reminders.max > 0 && persons.length > 0;
    const ep: Episode = {
      key: `${info.id}@${atMs}`,
      advisoryId: info.id,
      startMs: atMs,
      tier,
      chains,
      persons: [...persons],
      pagedAtMs: Object.fromEntries(persons.map((p) => [p, atMs])),
      channels: [...channels],
      escalations: 0,
      nextEscalationMs: esc ? atMs + this.cfg.escalation.afterS * 1000 : null,
      reminders: 0,
      nextReminderMs: rem ? atMs + this.cfg.reminders.everyS * 1000 : null,
      chatter,
    };
    this.episodes.set(info.id, ep);
    this.restored.delete(info.id);
    this.dirty = true;
    return ep;
  }

  /** What the recipient can expect next, in words. */
  private followUp(ep: Episode): string | null {
    const bits: string[] = [];
    if (ep.nextEscalationMs !== null) bits.push(`not acknowledged within ${Math.round(this.cfg.escalation.afterS / 60)} min, the next on call is paged`);
    if (ep.nextReminderMs !== null) bits.push(`a reminder follows every ${Math.round(this.cfg.reminders.everyS / 60)} min until it is acknowledged`);
    return bits.length ? `If ${bits.join("; ")}.` : null;
  }

  private runEpisode(ep: Episode, nowMs: number, ctx: NotifyContext, out: Message[]): void {
    const info = this.infoOf(ep.advisoryId);
    // In time order, so that a reminder due with an escalation also reaches the person just paged.
    for (;;) {
      const e = ep.nextEscalationMs;
      const r = ep.nextReminderMs;
      const dueE = e !== null && e <= nowMs;
      const dueR = r !== null && r <= nowMs;
      if (!dueE && !dueR) return;
      this.dirty = true;
      if (dueE && (!dueR || e! <= r!)) this.escalate(ep, info, e!, ctx, out);
      else this.remind(ep, info, r!, ctx, out);
    }
  }

  /** The value now (from the context) or at the last transition, and the limit of the last tier. */
  private present(id: string, ctx: NotifyContext): { value: number | null; limit: number | null } {
    const l = this.last.get(id);
    const now = ctx.value?.(id);
    return { value: now !== undefined ? now : (l?.value ?? null), limit: l?.limit ?? null };
  }

  private escalate(ep: Episode, info: AdvisoryInfo, atMs: number, ctx: NotifyContext, out: Message[]): void {
    ep.escalations++;
    const waitedMin = Math.round((atMs - ep.startMs) / 60_000);
    const before = ep.persons.map((p) => this.people.get(p)?.name ?? p);
    for (const chain of ep.chains) {
      if (chain.exhausted) continue;
      const who = this.nextInChain(chain, atMs, ep.persons);
      if (who === null) continue;
      ep.persons.push(who);
      ep.pagedAtMs[who] = atMs;
      const role = ROLES[chain.roleIndex]!;
      const note = `You are ${role} on call for ${this.rosterNames.get(chain.rosterId)}. Paged before you: ${before.join(", ") || "nobody"}.`;
      const { value, limit } = this.present(ep.advisoryId, ctx);
      const fields = this.advisoryFields("escalation", info, ep.tier, value, limit, ep.startMs, `${info.title}: not acknowledged after ${waitedMin} min`, null, note, ctx);
      this.emit(out, `${ep.key}:escalation-${ep.escalations}`, fields, [who], []);
    }
    ep.nextEscalationMs = ep.chains.some((c) => !c.exhausted) ? atMs + this.cfg.escalation.afterS * 1000 : null;
  }

  private remind(ep: Episode, info: AdvisoryInfo, atMs: number, ctx: NotifyContext, out: Message[]): void {
    ep.reminders++;
    const max = this.cfg.reminders.max;
    const to = ep.persons.filter((p) => ep.pagedAtMs[p] !== atMs);
    const waitedMin = Math.round((atMs - ep.startMs) / 60_000);
    const note = ep.reminders < max ? `Reminder ${ep.reminders} of at most ${max}.` : `Last reminder (${max} of ${max}); the advisory stays on the dashboard until acknowledged.`;
    const { value, limit } = this.present(ep.advisoryId, ctx);
    const fields = this.advisoryFields("reminder", info, ep.tier, value, limit, ep.startMs, `${info.title}: still not acknowledged after ${waitedMin} min`, null, note, ctx);
    for (const p of to) ep.pagedAtMs[p] = atMs;
    this.emit(out, `${ep.key}:reminder-${ep.reminders}`, fields, to, []);
    ep.nextReminderMs = ep.reminders < max ? atMs + this.cfg.reminders.everyS * 1000 : null;
  }

  /** The episode ends: the people paged (warning tiers) and the channels that got it are told to stand down. */
  private endEpisode(ep: Episode, atMs: number, reason: string, what: string, by: string | null, out: Message[]): void {
    this.episodes.delete(ep.advisoryId);
    this.dirty = true;
    const info = this.infoOf(ep.advisoryId);
    const chased = this.cfg.escalation.tiers.includes(ep.tier) || this.cfg.reminders.tiers.includes(ep.tier);
    const persons = chased ? ep.persons.filter((p) => p !== by) : [];
    const l = this.last.get(ep.advisoryId);
    const fields = this.advisoryFields("resolved", info, ep.tier, l?.value ?? null, l?.limit ?? null, atMs, `${info.title}: ${reason}`, null, "No action is needed from you for this advisory now.", {});
    this.emit(out, `${ep.key}:end@${atMs}:${what}`, fields, persons, ep.channels);
  }

  // ---- quiet hours, daily tests ----

  private addDigest(persons: readonly string[], channels: readonly string[], line: string): void {
    this.dirty = true;
    const add = (channel: string, recipient: Recipient) => {
      const k = `${channel}|${recipientKey(recipient)}`;
      const d = this.digest.get(k) ?? { channel, recipient, items: [], count: 0 };
      d.count++;
      if (d.items.length < MAX_LISTED_ITEMS) d.items.push(line);
      this.digest.set(k, d);
    };
    for (const pid of persons) for (const c of this.people.get(pid)?.contacts ?? []) add(c.channel, this.personRecipient(pid, c.address));
    for (const c of channels) add(c, { kind: "channel" });
  }

  private flushDigest(nowMs: number, out: Message[]): void {
    this.dirty = true;
    for (const d of this.digest.values()) {
      const more = d.count - d.items.length;
      const fields = this.fields({
        kind: "digest",
        tier: null,
        advisoryId: null,
        headline: `${d.count} notice${d.count === 1 ? "" : "s"} and cautions held during quiet hours`,
        items: more > 0 ? [...d.items, `… and ${more} more`] : d.items,
        note: "Warnings are never held back; these are the lower tiers that waited. Each is on the dashboard with its present state.",
        atMs: nowMs,
      });
      out.push(this.message(`digest@${nowMs}`, d.channel, d.recipient, fields));
    }
    this.digest.clear();
  }

  /**
   * Daily tests whose local time came in (fromMs, toMs]: each channel's at most once per tick
   * (the latest day's), so a clock that jumps over days sends one, not a burst.
   */
  private dailyTests(fromMs: number, toMs: number, out: Message[]): void {
    for (const c of this.cfg.channels) {
      if (!c.dailyTest) continue;
      // The next instant is kept: working it out takes a few Intl calls, and ticks come every second.
      const next = this.nextTestMs.get(c.id);
      if (next !== undefined && toMs < next && toMs >= fromMs) continue;
      const due = this.lastScheduled(c.dailyTest.at, toMs);
      this.nextTestMs.set(c.id, this.nextScheduled(c.dailyTest.at, toMs));
      if (due === null || due <= fromMs) continue;
      this.dirty = true;
      const fields = this.fields({
        kind: "test",
        tier: null,
        advisoryId: null,
        headline: `Daily test of channel ${c.id} (${c.kind})`,
        note: "If you read this, millwarden can reach you this way. This test says nothing about the plant.",
        atMs: due,
      });
      const key = `test:${c.id}:${localDateText(this.zone, due)}`;
      if (c.kind === "email" || c.kind === "webpush") {
        for (const pid of c.dailyTest.to ?? []) {
          for (const k of this.people.get(pid)?.contacts ?? []) if (k.channel === c.id) out.push(this.message(key, c.id, this.personRecipient(pid, k.address), fields));
        }
      } else out.push(this.message(key, c.id, { kind: "channel" }, fields));
    }
  }

  /** The first instant after `afterMs` at which local time reads `hhmm`. */
  private nextScheduled(hhmm: string, afterMs: number): number {
    const min = minutesOf(hhmm);
    const today = wallDay(this.zone, afterMs);
    for (const day of [today, today + DAY_MS, today + 2 * DAY_MS]) {
      const s = wallToUtc(this.zone, day + min * 60_000);
      if (s > afterMs) return s;
    }
    throw new RangeError(`no ${hhmm} within two days after ${new Date(afterMs).toISOString()}`);
  }

  /** The latest instant at or before `toMs` at which local time read `hhmm` (today's or yesterday's). */
  private lastScheduled(hhmm: string, toMs: number): number | null {
    const min = minutesOf(hhmm);
    const today = wallDay(this.zone, toMs);
    for (const day of [today, today - DAY_MS]) {
      const s = wallToUtc(this.zone, day + min * 60_000);
      if (s <= toMs) return s;
    }
    return null;
  }

  /** The next instant after `nowMs` at which a tick can send something. */
  nextDueMs(nowMs: number): number | null {
    let next = Number.POSITIVE_INFINITY;
    for (const ep of this.episodes.values()) {
      if (ep.nextEscalationMs !== null) next = Math.min(next, ep.nextEscalationMs);
      if (ep.nextReminderMs !== null) next = Math.min(next, ep.nextReminderMs);
    }
    for (const c of this.cfg.channels) {
      if (!c.dailyTest) continue;
      const cached = this.nextTestMs.get(c.id);
      next = Math.min(next, cached !== undefined && cached > nowMs ? cached : this.nextScheduled(c.dailyTest.at, nowMs));
    }
    if (this.digest.size) {
      if (!this.isQuiet(nowMs)) next = Math.min(next, nowMs);
      else {
        const today = wallDay(this.zone, nowMs);
        for (const q of this.quiet)
          for (const day of [today - DAY_MS, today, today + DAY_MS, today + 2 * DAY_MS]) {
            const s = wallToUtc(this.zone, day + q.toMin * 60_000);
            if (s > nowMs && !this.isQuiet(s)) next = Math.min(next, s);
          }
      }
    }
    return Number.isFinite(next) ? next : null;
  }

  // ---- building messages ----

  private infoOf(id: string): AdvisoryInfo {
    return (
      this.info.get(id) ?? {
        id,
        title: id,
        unitId: null,
        unitName: null,
        position: "control-room",
        quantity: id,
        indicator: id,
        valueUnit: "",
        direction: "high",
        states: null,
        trend: null,
      }
    );
  }

  private itemLine(info: AdvisoryInfo, tier: Tier, value: number | null, limit: number | null, atMs: number): string {
    const v = info.states || value === null ? "" : `: ${formatValue(value, info.valueUnit)}${limit !== null ? ` (limit ${formatValue(limit, info.valueUnit)})` : ""}`;
    return `${formatLocal(this.zone, atMs)} ${tier.toUpperCase()} ${info.unitId ?? "plant"} ${info.title}${v}`;
  }

  private fields(i: Omit<FieldsInput, "site" | "plant" | "timeZone" | "linkBase">): MessageFields {
    return makeFields({ ...i, site: this.setup.site, plant: this.setup.plant, timeZone: this.zone, linkBase: this.setup.linkBase });
  }

  private advisoryFields(
    kind: MessageKind,
    info: AdvisoryInfo,
    tier: Tier,
    value: number | null,
    limit: number | null,
    atMs: number,
    headline: string,
    why: string | null,
    note: string | null,
    ctx: NotifyContext,
  ): MessageFields {
    const trendValue = info.trend ? (ctx.trend?.(info.id) ?? null) : null;
    return this.fields({
      kind,
      tier,
      advisoryId: info.id,
      headline,
      unit: info.unitId ? { id: info.unitId, name: info.unitName } : null,
      indicator: info.indicator,
      quantity: info.quantity,
      value: info.states ? null : value,
      states: info.states,
      valueUnit: info.valueUnit,
      limit: info.states ? null : limit,
      direction: info.direction,
      trend: info.trend && trendValue !== null ? { label: info.trend.label, value: trendValue, unit: info.trend.unit } : null,
      why,
      note,
      atMs,
    });
  }

  private personRecipient(pid: string, address: string | undefined): Recipient {
    return { kind: "person", id: pid, name: this.people.get(pid)?.name ?? pid, address: address ?? null };
  }

  private message(eventKey: string, channel: string, recipient: Recipient, fields: MessageFields): Message {
    return { eventKey, channel, recipient, subject: subjectOf(fields), text: textOf(fields), fields };
  }

  /** One message per contact of each person and per broadcast channel, each recipient and channel once. */
  private emit(out: Message[], eventKey: string, fields: MessageFields, persons: readonly string[], channels: readonly string[]): void {
    const seen = new Set<string>();
    const push = (channel: string, r: Recipient) => {
      const k = `${recipientKey(r)}|${channel}`;
      if (seen.has(k)) return;
      seen.add(k);
      out.push(this.message(eventKey, channel, r, fields));
    };
    for (const pid of persons) for (const c of this.people.get(pid)?.contacts ?? []) push(c.channel, this.personRecipient(pid, c.address));
    for (const c of channels) push(c, { kind: "channel" });
  }
}
