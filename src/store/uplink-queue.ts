// Store-and-forward for the republisher: messages for the site broker wait here, in the
// historian's file, while the broker is away, and are drained in order when it returns.
//
// Contracts:
// - Bounded at maxMessages: the oldest ordinary message is dropped first; advisory transitions
//   (keepLast) only when nothing else is left. Every drop is counted (uplink_dropped).
// - peek() hands out the oldest messages; remove() deletes them once the broker has taken them,
//   so a crash in between publishes them again (at least once).
// - Its own connection to the historian's file (WAL), like the notification outbox.
import Database from "better-sqlite3";
import { MIGRATIONS } from "./migrations.js";

export const UPLINK_SCHEMA_VERSION = 7;

export interface UplinkMessage {
  topic: string;
  body: Buffer;
  qos: 0 | 1;
  retain: boolean;
  /** Advisory transitions: dropped last. */
  keepLast: boolean;
}

export interface QueuedUplinkMessage extends UplinkMessage {
  id: number;
  queuedAtMs: number;
}

export interface UplinkQueueStats {
  depth: number;
  droppedOrdinary: number;
  droppedKeepLast: number;
}

export class UplinkQueue {
  private readonly insert: Database.Statement;
  private readonly countAll: Database.Statement;
  private depthCache: number;

  private constructor(
    private readonly db: Database.Database,
    private readonly maxMessages: number,
  ) {
    this.insert = db.prepare("INSERT INTO uplink_queue (topic, body, qos, retain, keep_last, queued_at_ms) VALUES (?, ?, ?, ?, ?, ?)");
    this.countAll = db.prepare("SELECT count(*) FROM uplink_queue").pluck();
    this.depthCache = this.countAll.get() as number;
  }

  /** On the historian's file (already migrated by Historian.open), or a private in-memory queue. */
  static openBeside(path: string, maxMessages: number): UplinkQueue {
    const db = new Database(path);
    try {
      db.pragma("busy_timeout = 1000");
      if (path === ":memory:") db.exec(MIGRATIONS.find((m) => m.version === UPLINK_SCHEMA_VERSION)!.sql);
      else {
        const mode = db.pragma("journal_mode", { simple: true });
        if (mode !== "wal") throw new Error(`expected the historian's file in WAL journal mode; found "${String(mode)}"`);
      }
      return new UplinkQueue(db, maxMessages);
    } catch (err) {
      db.close();
      throw err;
    }
  }

  get depth(): number {
    return this.depthCache;
  }

  /** Queue messages (one transaction), dropping the oldest beyond the bound. */
  push(msgs: readonly UplinkMessage[], atMs: number): void {
    if (msgs.length === 0) return;
    this.db.transaction(() => {
      for (const m of msgs) this.insert.run(m.topic, m.body, m.qos, m.retain ? 1 : 0, m.keepLast ? 1 : 0, Math.trunc(atMs));
      this.depthCache += msgs.length;
      let over = this.depthCache - this.maxMessages;
      for (const keep of [0, 1] as const) {
        if (over <= 0) break;
        const ids = this.db.prepare("SELECT id FROM uplink_queue WHERE keep_last = ? ORDER BY id LIMIT ?").pluck().all(keep, over) as number[];
        if (ids.length === 0) continue;
        this.db.prepare(`DELETE FROM uplink_queue WHERE id IN (${ids.map(() => "?").join(",")})`).run(...ids);
        this.db.prepare("INSERT INTO uplink_dropped (keep_last, count) VALUES (?, ?) ON CONFLICT (keep_last) DO UPDATE SET count = count + excluded.count").run(keep, ids.length);
        over -= ids.length;
        this.depthCache -= ids.length;
      }
    })();
  }

  /** The oldest `limit` messages, in order. */
  peek(limit: number): QueuedUplinkMessage[] {
    const rows = this.db.prepare("SELECT id, topic, body, qos, retain, keep_last, queued_at_ms FROM uplink_queue ORDER BY id LIMIT ?").raw().all(limit) as [number, string, Buffer, number, number, number, number][];
    return rows.map(([id, topic, body, qos, retain, keep, at]) => ({ id, topic, body, qos: qos === 1 ? 1 : 0, retain: retain === 1, keepLast: keep === 1, queuedAtMs: at }));
  }

  remove(ids: readonly number[]): void {
    if (ids.length === 0) return;
    const r = this.db.prepare(`DELETE FROM uplink_queue WHERE id IN (${ids.map(() => "?").join(",")})`).run(...ids);
    this.depthCache -= r.changes;
  }

  stats(): UplinkQueueStats {
    const d = new Map(this.db.prepare("SELECT keep_last, count FROM uplink_dropped").raw().all() as [number, number][]);
    return { depth: this.depthCache, droppedOrdinary: d.get(0) ?? 0, droppedKeepLast: d.get(1) ?? 0 };
  }

  close(): void {
    this.db.close();
  }
}
