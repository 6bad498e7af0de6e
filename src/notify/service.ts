// The notification service: the edge around the pure notifier.
//
//   daemon.record(events) ─▶ notifier.handle(events, coreNow) ─messages─┐
//   daemon.tick(coreNow)  ─▶ notifier.tick(coreNow) ─────────messages──┤
//                                                                      ▼
//            outbox.commit(rows, notifier state) — one transaction (a restart neither loses nor repeats)
//                                                                      │
//   every second (wall clock): outbox.due(now) ─▶ channel.send() ─▶ outbox.record(result) — one transaction
//
// The notifier runs on the core's time (on the data clock, the data's), so escalations and
// quiet hours follow the plant; retries run on the box's clock, since they wait for networks.
// Nothing here throws into the daemon: a channel that fails shows as failing in health(), its
// error is logged when it changes, and its entries wait for the next attempt.
import { dirname, isAbsolute, resolve } from "node:path";
import { mulberry32 } from "../core/random.js";
import type { Agent } from "node:https";
import type { MillwardenConfig } from "../config/schema.js";
import { checkNotifications, type NotificationChannelConfig, type NotificationsConfig } from "../config/sections/notifications.js";
import type { AdvisoryView, CoreEvent } from "../core/types.js";
import type { Logger } from "../daemon/log.js";
import type { ChannelStats, DeliveryLogRow, OutboxEntry, OutboxItem } from "../store/outbox.js";
import { Outbox } from "../store/outbox.js";
import type { AckLinkLookup, NotificationsHealth } from "../server/deps.js";
import { ACK_LINK_TTL_MS, AckLinkSigner, ackLinkUrl, loadOrCreateAckLinkKey } from "./ack-link.js";
import type { DeliveryPolicy } from "./backoff.js";
import { advisoryCatalogue } from "./catalogue.js";
import { EmailChannel, type MailTransport } from "./channels/email.js";
import { MqttChannel } from "./channels/mqtt.js";
import { shortHash, type Channel, type Delivery, type SendResult } from "./channels/types.js";
import { WebhookChannel } from "./channels/webhook.js";
import { WebPushChannel } from "./channels/webpush.js";
import { recipientKey, type Message } from "./message.js";
import { Notifier, type NotifierOutput, type NotifyAck, type NotifyContext, type PersistedNotifier } from "./notifier.js";
import { Redactor } from "./redact.js";
import { loadOrCreateVapidKeys, type VapidKeys } from "./vapid.js";

const DELIVER_EVERY_MS = 1000;
const DUE_BATCH = 100;
const STATS_CACHE_MS = 5000;
const PRUNE_EVERY_MS = 3600_000;
/** A daily test missed, with two hours of slack for retries: the channel is silent. */
export const SILENT_AFTER_MS = 26 * 3600_000;

export interface NotifyServiceOptions {
  config: MillwardenConfig;
  /** The historian's file (the outbox lives in it); ":memory:" gives a private in-memory outbox. */
  historianPath: string;
  /** Base for relative paths when the historian is in memory (default the working folder). */
  baseDir?: string;
  log: Logger;
  /** The box's clock, for the outbox and retries. */
  now: () => number;
  /** Advisories as the board shows them now (restore, present values in reminders). */
  advisories: () => AdvisoryView[];
  env?: NodeJS.ProcessEnv;
  /** Uniform [0, 1) numbers for the retry jitter; default a generator seeded from the clock. */
  random?: () => number;
  /** Tests: an HTTPS agent for Web Push, an SMTP transport. */
  webPushAgent?: Agent;
  mailTransport?: MailTransport;
  /** How long an acknowledge link works (default ACK_LINK_TTL_MS). */
  ackLinkTtlMs?: number;
}

/** Messages a person can acknowledge the advisory from. */
const ACKNOWLEDGEABLE = new Set(["advisory", "escalation", "reminder"]);

/** A channel that could not be built (a missing environment variable): every attempt fails with why. */
class BrokenChannel implements Channel {
  constructor(
    readonly id: string,
    readonly kind: NotificationChannelConfig["kind"],
    readonly why: string,
  ) {}
  async send(): Promise<SendResult> {
    // Worth retrying: once the service is restarted with the setting fixed, waiting entries go out.
    return { ok: false, retry: true, error: this.why };
  }
  async close(): Promise<void> {}
}

/** Seedable random numbers for the retry jitter (tests pass a fixed seed). */
export const seededRandom = (seed: number): (() => number) => mulberry32(Math.trunc(seed));

export class NotifyService {
  readonly notifier: Notifier;
  readonly outbox: Outbox;
  readonly vapidPublicKey: string | null;
  private readonly cfg: NotificationsConfig;
  private readonly channels = new Map<string, Channel>();
  private readonly channelConfigs: NotificationChannelConfig[];
  private readonly redactor = new Redactor();
  private readonly policy: DeliveryPolicy;
  private readonly random: () => number;
  private readonly trendKeys = new Map<string, string[]>();
  private readonly trendValues = new Map<string, number | null>();
  private readonly lastLoggedError = new Map<string, string>();
  private readonly inFlight = new Set<number>();
  private reconciled = false;
  private timer: NodeJS.Timeout | null = null;
  /** Channels in a delivery round now, and those asked for one more. */
  private readonly running = new Map<string, Promise<void>>();
  private readonly again = new Set<string>();
  private stopped = false;
  private stats: { atMs: number; list: ChannelStats[] } | null = null;
  private lastPruneMs = Number.NEGATIVE_INFINITY;
  private commitError: string | null = null;
  private readonly signer: AckLinkSigner;
  private readonly linkBase: string;
  private readonly ackLinkTtlMs: number;
  private readonly startedAtMs: number;

  private constructor(private readonly o: NotifyServiceOptions) {
    const cfg = o.config.notifications!;
    this.cfg = cfg;
    this.channelConfigs = cfg.channels;
    this.policy = cfg.delivery;
    this.random = o.random ?? seededRandom(o.now() ^ (process.pid << 8));
    const advisories = advisoryCatalogue(o.config);
    for (const a of advisories) if (a.trend) this.trendKeys.set(a.trend.key, [...(this.trendKeys.get(a.trend.key) ?? []), a.id]);
    const linkBase = cfg.linkBase ?? `http://${o.config.server.host}:${o.config.server.port}`;
    this.linkBase = linkBase;
    this.startedAtMs = o.now();
    this.ackLinkTtlMs = o.ackLinkTtlMs ?? ACK_LINK_TTL_MS;
    this.notifier = new Notifier({ config: cfg, site: o.config.site.name, plant: o.config.site.plant, linkBase, advisories });
    this.outbox = Outbox.openBeside(o.historianPath);
    const saved = this.outbox.loadState();
    if (saved !== null) {
      try {
        this.notifier.restore(JSON.parse(saved) as PersistedNotifier);
      } catch (err) {
        o.log.warn(`notifications: the stored notifier state could not be read (${(err as Error).message}); escalations under way before the restart are not continued`);
      }
    }
    const dataDir = o.historianPath === ":memory:" ? resolve(o.baseDir ?? process.cwd(), "data") : dirname(o.historianPath);
    const keyFile = resolve(dataDir, "ack-link.key");
    const ak = loadOrCreateAckLinkKey(keyFile);
    if (ak.created) o.log.info(`notifications: made the key that signs acknowledge links in ${keyFile} (keep it private; a new key voids the links sent before)`);
    this.signer = new AckLinkSigner(ak.key);
    const env = o.env ?? process.env;
    let vapid: VapidKeys | null = null;
    for (const c of cfg.channels) {
      try {
        if (c.kind === "webpush") {
          const dir = o.historianPath === ":memory:" ? resolve(o.baseDir ?? process.cwd(), "data") : dirname(o.historianPath);
          const file = isAbsolute(c.vapidFile) ? c.vapidFile : resolve(dir, c.vapidFile);
          const r = loadOrCreateVapidKeys(file);
          vapid = r.keys;
          this.redactor.add(r.keys.privateKey);
          if (r.created) o.log.info(`notifications: made a VAPID key pair for Web Push in ${file} (keep it; browsers subscribe with its public key)`);
          this.channels.set(
            c.id,
            new WebPushChannel(
              c,
              r.keys,
              (endpoint) => this.outbox.subscription(endpoint),
              (endpoint) => {
                this.outbox.removeSubscription(endpoint);
                o.log.info(`notifications: a Web Push subscription at ${new URL(endpoint).host} is gone and was removed`);
              },
              o.webPushAgent,
            ),
          );
        } else {
          for (const name of c.kind === "webhook" ? [c.secretEnv] : c.passwordEnv ? [c.passwordEnv] : []) this.redactor.add(env[name]);
          this.channels.set(c.id, c.kind === "email" ? new EmailChannel(c, env, o.mailTransport) : c.kind === "webhook" ? new WebhookChannel(c, env) : new MqttChannel(c, env));
        }
      } catch (err) {
        const why = this.redactor.redact((err as Error).message);
        o.log.warn(`notifications: channel "${c.id}" (${c.kind}) cannot be used: ${why}. Its messages wait in the outbox.`);
        this.channels.set(c.id, new BrokenChannel(c.id, c.kind, why));
      }
    }
    this.vapidPublicKey = vapid?.publicKey ?? null;
  }

  static create(o: NotifyServiceOptions): NotifyService {
    if (!o.config.notifications) throw new Error("NotifyService: the config has no notifications: section");
    // The loader's cross-check says this with file:line; this catches a config built in code.
    const problems: string[] = [];
    const key = (path: (string | number)[]) => path.map((p) => (typeof p === "number" ? `[${p}]` : `.${p}`)).join("").slice(1);
    checkNotifications(o.config, {
      problem: (path, m) => problems.push(`${key(path)}: ${m}`),
      needSignal: () => undefined,
      needUnit: (path, u) => {
        if (!o.config.units.some((x) => x.id === u)) problems.push(`${key(path)}: unknown unit "${u}": expected one of ${o.config.units.map((x) => x.id).join(", ")}`);
      },
    });
    if (problems.length) throw new Error(`notifications config: ${problems.join("; ")}`);
    return new NotifyService(o);
  }

  // ---- from the daemon (synchronous, never throws) ----

  /** Every event the core emitted, in order; the notifier takes transitions and nuisance events. */
  record(events: readonly CoreEvent[], coreNowMs: number): void {
    const relevant: Parameters<Notifier["handle"]>[0][number][] = [];
    for (const e of events) {
      if (e.kind === "derived") {
        if (this.trendKeys.has(e.key)) this.trendValues.set(e.key, e.value);
      } else if (e.kind === "advisory" || e.kind === "nuisance") relevant.push(e);
    }
    if (relevant.length === 0) return;
    this.guard("handling events", () => this.commit(this.notifier.handle(relevant, coreNowMs, this.context())));
  }

  tick(coreNowMs: number): void {
    this.guard("ticking", () => {
      if (!this.reconciled) {
        this.notifier.reconcile(this.o.advisories());
        this.reconciled = true;
      }
      this.commit(this.notifier.tick(coreNowMs, this.context()));
    });
  }

  /** An acknowledgement from outside the board (the acknowledge link, once accounts exist). */
  acknowledge(ack: NotifyAck): void {
    this.guard("acknowledging", () => this.commit(this.notifier.acknowledge(ack)));
  }

  private context(): NotifyContext {
    return {
      trend: (id) => {
        for (const [key, ids] of this.trendKeys) if (ids.includes(id)) return this.trendValues.get(key) ?? null;
        return null;
      },
      value: (id) => this.o.advisories().find((a) => a.id === id)?.value ?? null,
    };
  }

  private guard(what: string, f: () => void): void {
    try {
      f();
      if (this.commitError) {
        this.o.log.info("notifications: the outbox accepts messages again");
        this.commitError = null;
      }
    } catch (err) {
      const msg = this.redactor.redact((err as Error).message);
      if (msg !== this.commitError) this.o.log.error(`notifications: ${what} failed: ${msg} (messages of this step may be lost)`);
      this.commitError = msg;
    }
  }

  /** Messages and the notifier's state into the outbox, in one transaction. */
  private commit(out: NotifierOutput): void {
    const changed = this.notifier.takeChanged();
    if (out.messages.length === 0 && !changed) return;
    const items = out.messages.flatMap((m) => this.expand(m));
    this.outbox.commit(items, changed ? JSON.stringify(this.notifier.persist()) : null, this.o.now());
    if (items.length) this.kick();
  }

  /** A Web Push message to a person is one row per browser the person subscribed (none: one row that fails, visibly). */
  private expand(m: Message): OutboxItem[] {
    const key = recipientKey(m.recipient);
    const kind = this.channelConfigs.find((c) => c.id === m.channel)?.kind;
    if (kind === "webpush" && m.recipient.kind === "person") {
      const subs = this.outbox.subscriptionsOf(m.recipient.id);
      if (subs.length === 0) return [{ message: m, recipientKey: key, address: null }];
      return subs.map((s) => ({ message: m, recipientKey: `${key}#${shortHash(s.endpoint).slice(0, 16)}`, address: s.endpoint }));
    }
    return [{ message: m, recipientKey: key, address: m.recipient.kind === "person" ? m.recipient.address : null }];
  }

  // ---- delivery (wall clock, asynchronous) ----

  start(): void {
    if (this.timer || this.stopped) return;
    this.timer = setInterval(() => this.kick(), DELIVER_EVERY_MS);
    this.timer.unref();
    this.kick();
  }

  /**
   * Deliver what is due now. Each channel runs on its own, so a receiver that hangs until its
   * timeout never holds back another channel; a channel busy with a round is asked for one more.
   */
  kick(): void {
    if (this.stopped) return;
    let due: OutboxEntry[];
    try {
      const nowMs = this.o.now();
      if (nowMs - this.lastPruneMs >= PRUNE_EVERY_MS) {
        this.lastPruneMs = nowMs;
        this.outbox.prune(nowMs - this.o.config.storage.rawRetentionDays * 86_400_000);
      }
      due = this.outbox.due(nowMs, DUE_BATCH).filter((e) => !this.inFlight.has(e.id));
    } catch (err) {
      this.logChannelError("(outbox)", `reading the outbox failed: ${this.redactor.redact((err as Error).message)}`);
      return;
    }
    const byChannel = new Map<string, OutboxEntry[]>();
    for (const e of due) byChannel.set(e.channel, [...(byChannel.get(e.channel) ?? []), e]);
    for (const [id, list] of byChannel) {
      if (this.running.has(id)) {
        this.again.add(id);
        continue;
      }
      const round = this.deliverChannel(id, list).finally(() => {
        this.running.delete(id);
        if (this.again.delete(id)) this.kick();
      });
      this.running.set(id, round);
    }
  }

  /** Deliver until nothing due is left and no channel is busy (tests await it). */
  async deliverNow(): Promise<void> {
    for (;;) {
      this.kick();
      if (this.running.size === 0) return;
      await Promise.all(this.running.values());
    }
  }

  /**
   * One round of a channel, in order (warnings first). After a failure worth retrying the round
   * stops: the receiver is probably away, and each further entry would only wait out its timeout.
   */
  private async deliverChannel(id: string, entries: OutboxEntry[]): Promise<void> {
    const ch = this.channels.get(id) ?? new BrokenChannel(id, "webhook", `channel "${id}" is no longer configured`);
    for (const e of entries) {
      if (this.stopped) return;
      this.inFlight.add(e.id);
      const t0 = this.o.now();
      let result: SendResult;
      try {
        result = await ch.send(this.toDelivery(e));
      } catch (err) {
        // An adapter should not throw; if one does, it is worth another try.
        result = { ok: false, retry: true, error: (err as Error).message };
      }
      const t1 = this.o.now();
      const clean = result.ok ? result : { ...result, error: this.redactor.redact(result.error) };
      try {
        const r = this.outbox.record(e.id, clean, t1, t1 - t0, this.policy, this.random);
        this.stats = null;
        if (!clean.ok && r) {
          const next = r.state === "dead" ? "given up" : `next attempt at ${new Date(r.nextAttemptMs!).toISOString()}`;
          this.logChannelError(id, `${r.error ?? clean.error} (${next})`);
        } else if (clean.ok && this.lastLoggedError.has(id)) {
          this.lastLoggedError.delete(id);
          this.o.log.info(`notifications: channel "${id}" delivers again`);
        }
      } catch (err) {
        this.logChannelError(id, `recording a delivery failed: ${this.redactor.redact((err as Error).message)}`);
        return;
      } finally {
        this.inFlight.delete(e.id);
      }
      if (!clean.ok && clean.retry) return;
    }
  }

  /** A channel's error is logged when it changes, not at every attempt. */
  private logChannelError(id: string, text: string): void {
    const shape = text.replace(/next attempt at \S+/, "").replace(/\d+/g, "#");
    if (this.lastLoggedError.get(id) === shape) return;
    this.lastLoggedError.set(id, shape);
    this.o.log.warn(`notifications: channel "${id}": ${text}`);
  }

  // ---- acknowledge links ----

  private toDelivery(e: OutboxEntry): Delivery {
    return toDelivery(e, this.ackLinkOf(e));
  }

  /** The acknowledge link of an entry, or null when its message is not about an advisory one can acknowledge. */
  ackLinkOf(e: OutboxEntry): string | null {
    if (e.advisoryId === null || !ACKNOWLEDGEABLE.has(e.kind)) return null;
    return ackLinkUrl(this.linkBase, this.signer.sign(e.id, e.advisoryId, e.recipientKey, e.createdAtMs + this.ackLinkTtlMs));
  }

  /** What a link's token stands for: 404 not ours (or tampered), 410 expired, 409 used. No side effect. */
  inspectAckLink(token: string): AckLinkLookup {
    const c = AckLinkSigner.parse(token);
    const bad: AckLinkLookup = { ok: false, status: 404, error: "acknowledge link: not one this box made (check that the whole link was opened; a link cut short by a mail program does not work)" };
    if (c === null) return bad;
    const e = this.outbox.get(c.outboxId);
    if (e === null || e.advisoryId === null || !ACKNOWLEDGEABLE.has(e.kind) || !this.signer.verify(token, e.advisoryId, e.recipientKey)) return bad;
    // The signature covers the expiry, so the one in the token is the one that was sent.
    if (this.o.now() >= c.expiresAtMs) {
      return { ok: false, status: 410, error: `acknowledge link: expired at ${new Date(c.expiresAtMs).toISOString()}; acknowledge the advisory on the dashboard` };
    }
    const used = this.outbox.ackLinkUse(e.id);
    if (used !== null) return usedAnswer(used);
    const kind = this.channelConfigs.find((x) => x.id === e.channel)?.kind ?? "unknown";
    return {
      ok: true,
      outboxId: e.id,
      advisoryId: e.advisoryId,
      channel: e.channel,
      channelKind: kind,
      personId: e.recipient.kind === "person" ? e.recipient.id : null,
      expiresAtMs: c.expiresAtMs,
      subject: e.subject,
    };
  }

  /** Checks the link again and marks it used, in one statement: of two at once, one wins and the other gets 409. */
  useAckLink(token: string, by: string): AckLinkLookup {
    const r = this.inspectAckLink(token);
    if (!r.ok) return r;
    const before = this.outbox.useAckLink(r.outboxId, r.advisoryId, r.channel, by, this.o.now());
    return before === null ? r : usedAnswer(before);
  }

  // ---- Web Push sign-up, the delivery log ----

  /** An account stands for the person of notifications.people whose id is its name (compared without case). */
  personOf(user: string): string | null {
    const u = user.toLowerCase();
    return this.cfg.people.find((p) => p.id.toLowerCase() === u)?.id ?? null;
  }

  subscribe(personId: string, sub: { endpoint: string; p256dh: string; auth: string }): void {
    this.outbox.addSubscription({ endpoint: sub.endpoint, personId, p256dh: sub.p256dh, auth: sub.auth, createdAtMs: this.o.now() });
  }

  /** Only the person's own subscription: nobody removes another person's browser. */
  unsubscribe(personId: string, endpoint: string): boolean {
    const s = this.outbox.subscription(endpoint);
    return s !== null && s.personId === personId && this.outbox.removeSubscription(endpoint);
  }

  deliveries(limit: number): DeliveryLogRow[] {
    return this.outbox.recentDeliveries(limit);
  }

  // ---- health, stop ----

  health(): NotificationsHealth {
    const nowMs = this.o.now();
    let list: ChannelStats[] = [];
    try {
      if (!this.stats || nowMs - this.stats.atMs > STATS_CACHE_MS) this.stats = { atMs: nowMs, list: this.outbox.channelStats() };
      list = this.stats.list;
    } catch {
      list = [];
    }
    const channels = this.channelConfigs.map((c) => {
      const s = list.find((x) => x.channel === c.id);
      const ch = this.channels.get(c.id);
      const broken = ch instanceof BrokenChannel;
      const lastSuccessMs = s?.lastSuccessMs ?? null;
      const lastFailureMs = s?.lastFailureMs ?? null;
      const failing = broken || (lastFailureMs !== null && (lastSuccessMs === null || lastFailureMs > lastSuccessMs));
      return {
        id: c.id,
        kind: c.kind,
        state: failing ? ("failing" as const) : lastSuccessMs !== null ? ("ok" as const) : ("idle" as const),
        lastSuccessMs,
        lastFailureMs,
        lastError: failing ? (s?.lastError ?? (broken ? (ch as BrokenChannel).why : null)) : null,
        pending: (s?.pending ?? 0) + (s?.failed ?? 0),
        dead: s?.dead ?? 0,
        sent: s?.sent ?? 0,
        // The daily test is the proof of life: without one, a quiet channel is just quiet.
        failingSinceMs: failing ? (s?.failingSinceMs ?? null) : null,
        silent: c.dailyTest !== undefined && nowMs - (lastSuccessMs ?? this.startedAtMs) > SILENT_AFTER_MS,
      };
    });
    return {
      status: channels.some((c) => c.state === "failing") || this.commitError ? "failing" : "ok",
      channels,
      escalating: this.notifier.activeEpisodes().length,
      outboxError: this.commitError,
      vapidPublicKey: this.vapidPublicKey,
    };
  }

  async stop(): Promise<void> {
    this.stopped = true;
    if (this.timer) clearInterval(this.timer);
    this.timer = null;
    await Promise.all([...this.running.values()].map((r) => r.catch(() => undefined)));
    for (const c of this.channels.values()) await c.close().catch(() => undefined);
    this.outbox.close();
  }
}

function toDelivery(e: OutboxEntry, ackLink: string | null): Delivery {
  if (ackLink === null) return { id: e.id, dedupKey: e.dedupKey, channel: e.channel, recipient: e.recipient, address: e.address, subject: e.subject, text: e.text, fields: e.fields };
  // The token is added here, at each attempt, and never stored: the outbox row, its log and the
  // daemon's log never hold it.
  const open = `Open: ${e.fields.link}`;
  const text = e.text.includes(open) ? e.text.replace(open, `${open}\nAcknowledge: ${ackLink}`) : `${e.text}\nAcknowledge: ${ackLink}\n`;
  return { id: e.id, dedupKey: e.dedupKey, channel: e.channel, recipient: e.recipient, address: e.address, subject: e.subject, text, fields: { ...e.fields, ackLink } };
}

function usedAnswer(u: { usedBy: string; usedAtMs: number }): AckLinkLookup {
  return { ok: false, status: 409, error: `acknowledge link: used already, by ${u.usedBy} at ${new Date(u.usedAtMs).toISOString()}; each link works once` };
}
