// The notification outbox: durable, at-least-once delivery with a deduplication key.
//
//   notifier ─messages + its state─▶ commit() ── one transaction ──▶ notify_outbox (UNIQUE dedup_key)
//                                                                   notify_state
//   delivery loop: due(now) ─▶ channel.send() ─▶ record(result) ── one transaction ──▶ outbox row state
//                                                                                   + notify_deliveries
//
// Contracts:
// - A dedup key (event | recipient | channel) is entered once: commit() ignores a key already
//   there, whatever its state, so a restart that hands in the same messages adds nothing.
// - record() marks the result and logs the attempt in one transaction, and only for an entry
//   still pending or failed: a row marked sent is never handed out again.
// - The one way to send twice is a crash after a receiver accepted and before record()
//   committed (milliseconds). Receivers get the dedup key (webhook header, MQTT payload, e-mail
//   Message-ID) to drop such a repeat.
// - Neither body nor last_error holds a secret: the caller passes texts already redacted.
// - Its own connection to the historian's file (WAL lets both write, one at a time; every
//   call here is one short synchronous transaction). An in-memory historian cannot be shared:
//   openBeside(":memory:") makes a private in-memory outbox.
import Database from "better-sqlite3";
import { afterFailure, type DeliveryPolicy } from "../notify/backoff.js";
import type { Message, MessageFields, MessageKind, Recipient } from "../notify/message.js";
import { MIGRATIONS } from "./migrations.js";

export const OUTBOX_SCHEMA_VERSION = 5;
/** The acknowledge links used (notify_ack_links). */
export const ACK_LINK_SCHEMA_VERSION = 6;

export type OutboxState = "pending" | "sent" | "failed" | "dead";

/** One message for one recipient on one channel, ready to be stored. */
export interface OutboxItem {
  message: Message;
  /** Recipient key of the row (a Web Push entry adds the subscription to the person). */
  recipientKey: string;
  address: string | null;
}

export interface OutboxEntry {
  id: number;
  dedupKey: string;
  eventKey: string;
  channel: string;
  recipientKey: string;
  recipient: Recipient;
  address: string | null;
  kind: MessageKind;
  tier: string | null;
  advisoryId: string | null;
  subject: string;
  text: string;
  fields: MessageFields;
  state: OutboxState;
  attempts: number;
  createdAtMs: number;
  nextAttemptMs: number;
  lastAttemptMs: number | null;
  sentAtMs: number | null;
  lastError: string | null;
}

export type AttemptResult = { ok: true } | { ok: false; retry: boolean; error: string };

export interface ChannelStats {
  channel: string;
  lastSuccessMs: number | null;
  lastFailureMs: number | null;
  lastError: string | null;
  /** The first failure after the last success (null while the last attempt succeeded). */
  failingSinceMs: number | null;
  pending: number;
  failed: number;
  dead: number;
  sent: number;
}

export interface PushSubscriptionRow {
  endpoint: string;
  personId: string;
  p256dh: string;
  auth: string;
  createdAtMs: number;
}

/** One delivery attempt as the dashboard lists it. */
export interface DeliveryLogRow {
  id: number;
  outboxId: number;
  channel: string;
  atMs: number;
  attempt: number;
  outcome: "sent" | "retry" | "dead";
  error: string | null;
  durationMs: number;
  recipient: string;
  kind: MessageKind;
  tier: string | null;
  advisoryId: string | null;
  /** The entry's state now (a retry may have been followed by a success). */
  entryState: OutboxState;
}

export const dedupKeyOf = (eventKey: string, recipientKey: string, channel: string): string => `${eventKey}|${recipientKey}|${channel}`;

type Row = {
  id: number;
  dedup_key: string;
  event_key: string;
  channel: string;
  recipient: string;
  address: string | null;
  kind: MessageKind;
  tier: string | null;
  advisory_id: string | null;
  body: string;
  state: OutboxState;
  attempts: number;
  created_at_ms: number;
  next_attempt_ms: number;
  last_attempt_ms: number | null;
  sent_at_ms: number | null;
  last_error: string | null;
};

export class Outbox {
  private readonly st: Record<string, Database.Statement>;
  private closed = false;

  constructor(private readonly db: Database.Database) {
    const v = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' AND name = 'notify_outbox'").pluck().get();
    if (!v) throw new Error(`the database has no notification outbox: expected schema version ${OUTBOX_SCHEMA_VERSION} or later (open it with the Historian first, which migrates it)`);
    this.st = {
      insert: db.prepare(
        "INSERT OR IGNORE INTO notify_outbox (dedup_key, event_key, channel, recipient, address, kind, tier, advisory_id, body, state, attempts, created_at_ms, next_attempt_ms) " +
          "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, 'pending', 0, ?, ?)",
      ),
      saveState: db.prepare("INSERT INTO notify_state (id, body, updated_at_ms) VALUES (1, ?, ?) ON CONFLICT (id) DO UPDATE SET body = excluded.body, updated_at_ms = excluded.updated_at_ms"),
      loadState: db.prepare("SELECT body FROM notify_state WHERE id = 1").pluck(),
      // Warnings first when there is a backlog, then in the order they fell due.
      due: db.prepare(
        "SELECT * FROM notify_outbox WHERE state IN ('pending', 'failed') AND next_attempt_ms <= ? ORDER BY CASE tier WHEN 'warning' THEN 0 ELSE 1 END, next_attempt_ms, id LIMIT ?",
      ),
      get: db.prepare("SELECT * FROM notify_outbox WHERE id = ?"),
      mark: db.prepare(
        "UPDATE notify_outbox SET state = ?, attempts = attempts + 1, last_attempt_ms = ?, next_attempt_ms = ?, sent_at_ms = ?, last_error = ? WHERE id = ? AND state IN ('pending', 'failed')",
      ),
      log: db.prepare("INSERT INTO notify_deliveries (outbox_id, channel, at_ms, attempt, outcome, error, duration_ms) VALUES (?, ?, ?, ?, ?, ?, ?)"),
      counts: db.prepare("SELECT channel, state, count(*) AS n FROM notify_outbox GROUP BY channel, state"),
      lastOutcome: db.prepare("SELECT channel, outcome, max(at_ms) AS at_ms FROM notify_deliveries GROUP BY channel, outcome"),
      failingSince: db.prepare("SELECT min(at_ms) FROM notify_deliveries WHERE channel = ? AND outcome != 'sent' AND at_ms > ?").pluck(),
      lastFailure: db.prepare("SELECT error FROM notify_deliveries WHERE channel = ? AND outcome != 'sent' ORDER BY at_ms DESC, id DESC LIMIT 1").pluck(),
      addSub: db.prepare(
        "INSERT INTO push_subscriptions (endpoint, person_id, p256dh, auth, created_at_ms) VALUES (?, ?, ?, ?, ?) " +
          "ON CONFLICT (endpoint) DO UPDATE SET person_id = excluded.person_id, p256dh = excluded.p256dh, auth = excluded.auth",
      ),
      removeSub: db.prepare("DELETE FROM push_subscriptions WHERE endpoint = ?"),
      subsOf: db.prepare("SELECT endpoint, person_id, p256dh, auth, created_at_ms FROM push_subscriptions WHERE person_id = ? ORDER BY created_at_ms, endpoint"),
      sub: db.prepare("SELECT endpoint, person_id, p256dh, auth, created_at_ms FROM push_subscriptions WHERE endpoint = ?"),
      pruneLog: db.prepare("DELETE FROM notify_deliveries WHERE outbox_id IN (SELECT id FROM notify_outbox WHERE state IN ('sent', 'dead') AND created_at_ms < ?)"),
      prune: db.prepare("DELETE FROM notify_outbox WHERE state IN ('sent', 'dead') AND created_at_ms < ?"),
      useLink: db.prepare("INSERT OR IGNORE INTO notify_ack_links (outbox_id, advisory_id, channel, used_by, used_at_ms) VALUES (?, ?, ?, ?, ?)"),
      linkUse: db.prepare("SELECT used_by, used_at_ms FROM notify_ack_links WHERE outbox_id = ?"),
      recentDeliveries: db.prepare(
        "SELECT d.id, d.outbox_id, d.channel, d.at_ms, d.attempt, d.outcome, d.error, d.duration_ms, o.recipient, o.kind, o.tier, o.advisory_id, o.state " +
          "FROM notify_deliveries d JOIN notify_outbox o ON o.id = d.outbox_id ORDER BY d.id DESC LIMIT ?",
      ),
    };
  }

  /**
   * Its own connection to the historian's file (after the Historian opened and migrated it),
   * or a private in-memory database for ":memory:".
   */
  static openBeside(path: string, opts: { busyTimeoutMs?: number } = {}): Outbox {
    const db = new Database(path);
    try {
      db.pragma(`busy_timeout = ${opts.busyTimeoutMs ?? 1000}`);
      // A "sent" mark lost to a power cut would send again: this connection syncs every commit (they are few).
      db.pragma("synchronous = FULL");
      if (path === ":memory:") {
        for (const m of MIGRATIONS.filter((x) => x.version >= OUTBOX_SCHEMA_VERSION && x.version <= ACK_LINK_SCHEMA_VERSION)) db.exec(m.sql);
      } else {
        const mode = db.pragma("journal_mode", { simple: true });
        if (mode !== "wal") throw new Error(`expected the historian's file in WAL journal mode; found "${String(mode)}"`);
      }
      return new Outbox(db);
    } catch (err) {
      db.close();
      throw err;
    }
  }

  /**
   * Store messages (a key already there is ignored) and, with `state`, the notifier's state that
   * produced them, in one transaction. Returns how many rows were new.
   */
  commit(items: readonly OutboxItem[], state: string | null, nowMs: number): { added: number; duplicates: number } {
    this.assertOpen();
    let added = 0;
    this.db.transaction(() => {
      for (const { message: m, recipientKey, address } of items) {
        const body = JSON.stringify({ recipient: m.recipient, subject: m.subject, text: m.text, fields: m.fields });
        const r = this.st.insert!.run(
          dedupKeyOf(m.eventKey, recipientKey, m.channel),
          m.eventKey,
          m.channel,
          recipientKey,
          address,
          m.fields.kind,
          m.fields.tier,
          m.fields.advisoryId,
          body,
          Math.trunc(nowMs),
          Math.trunc(nowMs),
        );
        added += r.changes;
      }
      if (state !== null) this.st.saveState!.run(state, Math.trunc(nowMs));
    })();
    return { added, duplicates: items.length - added };
  }

  loadState(): string | null {
    this.assertOpen();
    return (this.st.loadState!.get() as string | undefined) ?? null;
  }

  /** Entries to try now (pending or failed, due): warnings first, then oldest due first. */
  due(nowMs: number, limit = 100): OutboxEntry[] {
    this.assertOpen();
    return (this.st.due!.all(Math.trunc(nowMs), limit) as Row[]).map(toEntry);
  }

  get(id: number): OutboxEntry | null {
    this.assertOpen();
    const r = this.st.get!.get(id) as Row | undefined;
    return r ? toEntry(r) : null;
  }

  /**
   * The result of one attempt: the entry's new state and the delivery log row, in one
   * transaction. An entry no longer pending or failed is left as it is (returns null).
   */
  record(id: number, result: AttemptResult, nowMs: number, durationMs: number, policy: DeliveryPolicy, random: () => number): { state: OutboxState; nextAttemptMs: number | null; error: string | null } | null {
    this.assertOpen();
    const t = Math.trunc(nowMs);
    return this.db.transaction(() => {
      const row = this.st.get!.get(id) as Row | undefined;
      if (!row || (row.state !== "pending" && row.state !== "failed")) return null;
      let state: OutboxState;
      let next = row.next_attempt_ms;
      let error: string | null = null;
      if (result.ok) state = "sent";
      else {
        const f = afterFailure({ attempts: row.attempts, createdAtMs: row.created_at_ms }, result.retry, t, policy, random);
        error = f.state === "dead" ? `${result.error} (${f.why})` : result.error;
        state = f.state;
        if (f.state === "failed") next = f.nextAttemptMs;
      }
      this.st.mark!.run(state, t, next, state === "sent" ? t : null, error, id);
      this.st.log!.run(id, row.channel, t, row.attempts + 1, state === "sent" ? "sent" : state === "dead" ? "dead" : "retry", error, Math.max(0, Math.round(durationMs)));
      return { state, nextAttemptMs: state === "failed" ? next : null, error };
    })();
  }

  /** Per channel: last success and failure, the last error, and the entries in each state. */
  channelStats(): ChannelStats[] {
    this.assertOpen();
    const by = new Map<string, ChannelStats>();
    const of = (channel: string) => {
      let s = by.get(channel);
      if (!s) {
        s = { channel, lastSuccessMs: null, lastFailureMs: null, lastError: null, failingSinceMs: null, pending: 0, failed: 0, dead: 0, sent: 0 };
        by.set(channel, s);
      }
      return s;
    };
    for (const r of this.st.counts!.all() as { channel: string; state: OutboxState; n: number }[]) of(r.channel)[r.state] = r.n;
    for (const r of this.st.lastOutcome!.all() as { channel: string; outcome: string; at_ms: number }[]) {
      const s = of(r.channel);
      if (r.outcome === "sent") s.lastSuccessMs = r.at_ms;
      else s.lastFailureMs = Math.max(s.lastFailureMs ?? Number.NEGATIVE_INFINITY, r.at_ms);
    }
    for (const s of by.values()) {
      if (s.lastFailureMs === null) continue;
      s.lastError = (this.st.lastFailure!.get(s.channel) as string | undefined) ?? null;
      if (s.lastSuccessMs === null || s.lastFailureMs > s.lastSuccessMs) s.failingSinceMs = (this.st.failingSince!.get(s.channel, s.lastSuccessMs ?? Number.MIN_SAFE_INTEGER) as number | null | undefined) ?? null;
    }
    return [...by.values()].sort((a, b) => a.channel.localeCompare(b.channel));
  }

  /** Every entry, oldest first (tests, the CLI). */
  entries(filter: { state?: OutboxState; channel?: string } = {}): OutboxEntry[] {
    this.assertOpen();
    const where: string[] = [];
    const args: unknown[] = [];
    if (filter.state) {
      where.push("state = ?");
      args.push(filter.state);
    }
    if (filter.channel) {
      where.push("channel = ?");
      args.push(filter.channel);
    }
    const sql = `SELECT * FROM notify_outbox${where.length ? ` WHERE ${where.join(" AND ")}` : ""} ORDER BY id`;
    return (this.db.prepare(sql).all(...args) as Row[]).map(toEntry);
  }

  /** The delivery log, oldest first. */
  deliveries(outboxId?: number): { outboxId: number; channel: string; atMs: number; attempt: number; outcome: string; error: string | null }[] {
    this.assertOpen();
    const rows = (
      outboxId === undefined
        ? this.db.prepare("SELECT * FROM notify_deliveries ORDER BY id").all()
        : this.db.prepare("SELECT * FROM notify_deliveries WHERE outbox_id = ? ORDER BY id").all(outboxId)
    ) as { outbox_id: number; channel: string; at_ms: number; attempt: number; outcome: string; error: string | null }[];
    return rows.map((r) => ({ outboxId: r.outbox_id, channel: r.channel, atMs: r.at_ms, attempt: r.attempt, outcome: r.outcome, error: r.error }));
  }

  /** Delete sent and dead entries created before `beforeMs`, with their log. */
  prune(beforeMs: number): number {
    this.assertOpen();
    return this.db.transaction(() => {
      this.st.pruneLog!.run(Math.trunc(beforeMs));
      return this.st.prune!.run(Math.trunc(beforeMs)).changes;
    })();
  }

  // ---- acknowledge links (single use) ----

  /**
   * Marks the link of an outbox entry used. Returns null when this call marked it, or who used
   * it before and when (the link works once; the check and the mark are one statement).
   */
  useAckLink(outboxId: number, advisoryId: string, channel: string, by: string, nowMs: number): { usedBy: string; usedAtMs: number } | null {
    this.assertOpen();
    if (this.st.useLink!.run(outboxId, advisoryId, channel, by, Math.trunc(nowMs)).changes > 0) return null;
    return this.ackLinkUse(outboxId);
  }

  /** Who used the link of an outbox entry, or null while it is unused. */
  ackLinkUse(outboxId: number): { usedBy: string; usedAtMs: number } | null {
    this.assertOpen();
    const r = this.st.linkUse!.get(outboxId) as { used_by: string; used_at_ms: number } | undefined;
    return r ? { usedBy: r.used_by, usedAtMs: r.used_at_ms } : null;
  }

  /** The newest delivery attempts first, with what they were for (the dashboard's delivery log). */
  recentDeliveries(limit: number): DeliveryLogRow[] {
    this.assertOpen();
    if (!Number.isSafeInteger(limit) || limit < 1) throw new RangeError(`Outbox.recentDeliveries: expected limit to be a whole number ≥ 1, found ${String(limit)}`);
    type R = { id: number; outbox_id: number; channel: string; at_ms: number; attempt: number; outcome: string; error: string | null; duration_ms: number; recipient: string; kind: MessageKind; tier: string | null; advisory_id: string | null; state: OutboxState };
    return (this.st.recentDeliveries!.all(limit) as R[]).map((r) => ({
      id: r.id,
      outboxId: r.outbox_id,
      channel: r.channel,
      atMs: r.at_ms,
      attempt: r.attempt,
      outcome: r.outcome as DeliveryLogRow["outcome"],
      error: r.error,
      durationMs: r.duration_ms,
      // The recipient key names the person (and a browser's short hash), never an address.
      recipient: r.recipient,
      kind: r.kind,
      tier: r.tier,
      advisoryId: r.advisory_id,
      entryState: r.state,
    }));
  }

  // ---- Web Push subscriptions ----

  addSubscription(s: PushSubscriptionRow): void {
    this.assertOpen();
    for (const [k, v] of Object.entries({ endpoint: s.endpoint, personId: s.personId, p256dh: s.p256dh, auth: s.auth }))
      if (typeof v !== "string" || v.length === 0) throw new TypeError(`push subscription: expected a non-empty ${k}`);
    if (!s.endpoint.startsWith("https://")) throw new TypeError("push subscription: expected an https:// endpoint");
    this.st.addSub!.run(s.endpoint, s.personId, s.p256dh, s.auth, Math.trunc(s.createdAtMs));
  }

  removeSubscription(endpoint: string): boolean {
    this.assertOpen();
    return this.st.removeSub!.run(endpoint).changes > 0;
  }

  subscriptionsOf(personId: string): PushSubscriptionRow[] {
    this.assertOpen();
    return (this.st.subsOf!.all(personId) as { endpoint: string; person_id: string; p256dh: string; auth: string; created_at_ms: number }[]).map(subRow);
  }

  subscription(endpoint: string): PushSubscriptionRow | null {
    this.assertOpen();
    const r = this.st.sub!.get(endpoint) as { endpoint: string; person_id: string; p256dh: string; auth: string; created_at_ms: number } | undefined;
    return r ? subRow(r) : null;
  }

  close(): void {
    if (this.closed) return;
    this.closed = true;
    this.db.close();
  }

  private assertOpen(): void {
    if (this.closed) throw new Error("Outbox: used after close()");
  }
}

function subRow(r: { endpoint: string; person_id: string; p256dh: string; auth: string; created_at_ms: number }): PushSubscriptionRow {
  return { endpoint: r.endpoint, personId: r.person_id, p256dh: r.p256dh, auth: r.auth, createdAtMs: r.created_at_ms };
}

function toEntry(r: Row): OutboxEntry {
  const body = JSON.parse(r.body) as { recipient: Recipient; subject: string; text: string; fields: MessageFields };
  return {
    id: r.id,
    dedupKey: r.dedup_key,
    eventKey: r.event_key,
    channel: r.channel,
    recipientKey: r.recipient,
    recipient: body.recipient,
    address: r.address,
    kind: r.kind,
    tier: r.tier,
    advisoryId: r.advisory_id,
    subject: body.subject,
    text: body.text,
    fields: body.fields,
    state: r.state,
    attempts: r.attempts,
    createdAtMs: r.created_at_ms,
    nextAttemptMs: r.next_attempt_ms,
    lastAttemptMs: r.last_attempt_ms,
    sentAtMs: r.sent_at_ms,
    lastError: r.last_error,
  };
}
