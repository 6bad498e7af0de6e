// Numbered schema migrations of the historian database.
//
// Rules: a migration, once released, is never edited; a change is a new migration with the
// next number. Each runs in its own transaction together with its row in schema_migrations,
// so a file is always at exactly one known version. PRAGMA user_version mirrors the version
// so that the sqlite3 shell shows it without a query. A migration may add a data step
// (`run`), which runs after its SQL in the same transaction.
import type Database from "better-sqlite3";
import { buildChunks, minuteOf, rollupMinutes, type ChunkPoints } from "./chunk.js";

export interface Migration {
  version: number;
  description: string;
  sql: string;
  run?: (db: Database.Database) => void;
}

/** Marks a file as ours in the meta table: a file without it is refused, never "migrated". */
export const APPLICATION_NAME = "millwarden";

export const MIGRATIONS: readonly Migration[] = [
  {
    version: 1,
    description: "series, samples, derived values, advisory transitions, meta",
    sql: `
      CREATE TABLE meta (
        key   TEXT PRIMARY KEY,
        value TEXT NOT NULL
      ) WITHOUT ROWID;

      -- Signals and derived keys get small integer ids: a row of samples then costs
      -- about 28 bytes instead of repeating a name on every row.
      CREATE TABLE series (
        id   INTEGER PRIMARY KEY,
        kind TEXT NOT NULL CHECK (kind IN ('signal', 'derived')),
        name TEXT NOT NULL,
        UNIQUE (kind, name)
      );

      -- quality: 0 good, 1 uncertain, 2 bad (the OPC UA StatusCode severity bits).
      -- value NULL when the source value was NaN or infinite.
      CREATE TABLE samples (
        signal_id INTEGER NOT NULL,
        t_ms      INTEGER NOT NULL,
        value     REAL,
        quality   INTEGER NOT NULL,
        recv_ms   INTEGER NOT NULL,
        PRIMARY KEY (signal_id, t_ms)
      ) WITHOUT ROWID;

      -- status: 0 ok, 1 unknown.
      CREATE TABLE derived (
        series_id INTEGER NOT NULL,
        t_ms      INTEGER NOT NULL,
        value     REAL,
        status    INTEGER NOT NULL,
        PRIMARY KEY (series_id, t_ms)
      ) WITHOUT ROWID;

      -- The audit trail of advisories: rows are only ever inserted.
      CREATE TABLE advisory_transitions (
        id          INTEGER PRIMARY KEY,
        at_ms       INTEGER NOT NULL,
        advisory_id TEXT NOT NULL,
        rule_id     TEXT NOT NULL,
        transition  TEXT NOT NULL,
        from_state  TEXT NOT NULL,
        to_state    TEXT NOT NULL,
        tier        TEXT NOT NULL,
        value       REAL,
        limit_value REAL,
        by_user     TEXT NOT NULL,
        why         TEXT NOT NULL
      );
      CREATE INDEX advisory_transitions_advisory_at ON advisory_transitions (advisory_id, at_ms);
      CREATE INDEX advisory_transitions_at ON advisory_transitions (at_ms);
    `,
  },
  {
    version: 2,
    description: "recent rows append-only, sealed into compressed chunks with 1-minute roll-ups; samples and derived moved there",
    sql: `
      -- Rows not sealed yet, samples and derived values alike. A rowid table without an index:
      -- every insert lands on the last page whatever its series, so a batch of interleaved
      -- signals writes about its own size (a (series, time) key writes a page per row).
      -- quality: bits 0-1 the code (samples 0 good, 1 uncertain, 2 bad; derived 0 ok,
      -- 1 unknown); bit 4 set when the value is -0, which a REAL column stores as 0.
      -- value NULL when the value was missing, NaN or infinite.
      CREATE TABLE recent (
        series_id INTEGER NOT NULL,
        t_ms      INTEGER NOT NULL,
        value     REAL,
        quality   INTEGER NOT NULL
      );

      -- Sealed points of one series, compressed (src/store/chunk.ts). The chunks of a series
      -- never overlap in time. A rowid table: rows of a few hundred bytes and more fit it
      -- better than a WITHOUT ROWID table (sqlite.org/withoutrowid.html, section 4).
      CREATE TABLE chunks (
        id         INTEGER PRIMARY KEY,
        series_id  INTEGER NOT NULL,
        t_first_ms INTEGER NOT NULL,
        t_last_ms  INTEGER NOT NULL,
        n          INTEGER NOT NULL,
        data       BLOB NOT NULL,
        quality    BLOB
      );
      -- Range reads by series; covering, so that counting points never reads the blobs.
      CREATE INDEX chunks_series_last ON chunks (series_id, t_last_ms, t_first_ms, n);
      -- Retention and the disk budget delete the oldest chunks first.
      CREATE INDEX chunks_last ON chunks (t_last_ms);

      -- One row per series and minute with points: min, max, sum and count over the usable
      -- values (present, and not bad / unknown), the last of them, and the worst quality code
      -- of the minute's points.
      CREATE TABLE rollups_1m (
        series_id   INTEGER NOT NULL,
        t_minute_ms INTEGER NOT NULL,
        min         REAL,
        max         REAL,
        sum         REAL,
        count       INTEGER NOT NULL,
        last        REAL,
        quality     INTEGER NOT NULL,
        PRIMARY KEY (series_id, t_minute_ms)
      ) WITHOUT ROWID;
    `,
    // The rows of migration 1 become chunks and roll-ups; their receive times (recv_ms) are
    // not kept: history keeps the source time, value and quality.
    run: (db) => {
      moveToChunks(db, "SELECT t_ms, value, quality FROM samples WHERE signal_id = ? AND t_ms > ? ORDER BY t_ms LIMIT ?", "signal");
      moveToChunks(db, "SELECT t_ms, value, status FROM derived WHERE series_id = ? AND t_ms > ? ORDER BY t_ms LIMIT ?", "derived");
      db.exec("DROP TABLE samples; DROP TABLE derived;");
    },
  },
  {
    version: 3,
    description: "plant events (nuisance marks, state changes) and the advisory states a restart restores",
    sql: `
      -- Nuisance control (chatter, flood, standing) and discrete state changes (phase,
      -- inerting state, analyser health): few rows, inserted only. body is the event as JSON.
      CREATE TABLE plant_events (
        id    INTEGER PRIMARY KEY,
        at_ms INTEGER NOT NULL,
        kind  TEXT NOT NULL CHECK (kind IN ('nuisance', 'state')),
        name  TEXT NOT NULL,
        body  TEXT NOT NULL
      );
      CREATE INDEX plant_events_at ON plant_events (at_ms);

      -- One row per advisory that is not plainly normal (active, acknowledged, latched,
      -- shelved, out of service): rewritten after every transition, read back at start.
      CREATE TABLE advisory_state (
        advisory_id   TEXT PRIMARY KEY,
        body          TEXT NOT NULL,
        updated_at_ms INTEGER NOT NULL
      ) WITHOUT ROWID;
    `,
  },
  {
    version: 4,
    description: "local user accounts and the audit log (logins, commands, user changes, configuration loaded)",
    sql: `
      -- One row per local account (src/store/accounts.ts). Names compare without case, so
      -- "J.Ferris" and "j.ferris" cannot be two accounts. password_hash carries its own
      -- scrypt parameters and salt (src/server/passwords.ts); version goes up at every change,
      -- which ends the sessions opened before it.
      CREATE TABLE users (
        name          TEXT PRIMARY KEY COLLATE NOCASE,
        role          TEXT NOT NULL CHECK (role IN ('viewer', 'operator', 'engineer', 'admin')),
        password_hash TEXT NOT NULL,
        version       INTEGER NOT NULL,
        created_at_ms INTEGER NOT NULL,
        updated_at_ms INTEGER NOT NULL
      ) WITHOUT ROWID;

      -- Who did what, from where: rows are only ever inserted. detail is a JSON object and
      -- never holds a password, a session or a token (the store refuses such keys).
      CREATE TABLE audit_log (
        id     INTEGER PRIMARY KEY,
        at_ms  INTEGER NOT NULL,
        actor  TEXT NOT NULL,
        action TEXT NOT NULL,
        target TEXT,
        detail TEXT NOT NULL,
        source TEXT NOT NULL
      );
      CREATE INDEX audit_log_at ON audit_log (at_ms);
    `,
  },
  {
    version: 5,
    description: "notification outbox with its delivery log, Web Push subscriptions, the notifier's state",
    sql: `
      -- One row per message, recipient and channel (src/store/outbox.ts). dedup_key is
      -- event | recipient | channel: one advisory transition (or escalation step, reminder ...)
      -- never makes two rows for a recipient on a channel, however often it is handed in.
      -- state: pending (not tried yet), failed (tried; tried again at next_attempt_ms), sent,
      -- dead (given up: not worth retrying, too many attempts or too old). body is the message
      -- as JSON; neither it nor last_error ever holds a secret.
      CREATE TABLE notify_outbox (
        id              INTEGER PRIMARY KEY,
        dedup_key       TEXT NOT NULL UNIQUE,
        event_key       TEXT NOT NULL,
        channel         TEXT NOT NULL,
        recipient       TEXT NOT NULL,
        address         TEXT,
        kind            TEXT NOT NULL,
        tier            TEXT,
        advisory_id     TEXT,
        body            TEXT NOT NULL,
        state           TEXT NOT NULL CHECK (state IN ('pending', 'sent', 'failed', 'dead')),
        attempts        INTEGER NOT NULL DEFAULT 0,
        created_at_ms   INTEGER NOT NULL,
        next_attempt_ms INTEGER NOT NULL,
        last_attempt_ms INTEGER,
        sent_at_ms      INTEGER,
        last_error      TEXT
      );
      CREATE INDEX notify_outbox_due ON notify_outbox (state, next_attempt_ms);
      CREATE INDEX notify_outbox_created ON notify_outbox (created_at_ms);

      -- The delivery log: one row per attempt, inserted only (pruned with its outbox row).
      CREATE TABLE notify_deliveries (
        id          INTEGER PRIMARY KEY,
        outbox_id   INTEGER NOT NULL REFERENCES notify_outbox (id),
        channel     TEXT NOT NULL,
        at_ms       INTEGER NOT NULL,
        attempt     INTEGER NOT NULL,
        outcome     TEXT NOT NULL CHECK (outcome IN ('sent', 'retry', 'dead')),
        error       TEXT,
        duration_ms INTEGER NOT NULL
      );
      CREATE INDEX notify_deliveries_outbox ON notify_deliveries (outbox_id);
      CREATE INDEX notify_deliveries_channel ON notify_deliveries (channel, outcome, at_ms);

      -- Browsers subscribed to Web Push (RFC 8030), per person; p256dh and auth are the
      -- subscription's keys for the payload encryption (RFC 8291).
      CREATE TABLE push_subscriptions (
        endpoint      TEXT PRIMARY KEY,
        person_id     TEXT NOT NULL,
        p256dh        TEXT NOT NULL,
        auth          TEXT NOT NULL,
        created_at_ms INTEGER NOT NULL
      ) WITHOUT ROWID;
      CREATE INDEX push_subscriptions_person ON push_subscriptions (person_id);

      -- The notifier's state (escalations under way, digests, floods): one row, written in the
      -- same transaction as the outbox rows it produced, so a restart neither loses nor repeats.
      CREATE TABLE notify_state (
        id            INTEGER PRIMARY KEY CHECK (id = 1),
        body          TEXT NOT NULL,
        updated_at_ms INTEGER NOT NULL
      );
    `,
  },
  {
    version: 6,
    description: "acknowledge links used (single use) and a short PIN per user for acknowledging from a notification",
    sql: `
      -- One row per acknowledge link that was redeemed (src/notify/ack-link.ts): the link of an
      -- outbox entry works once. The token itself is never stored, only which entry it was for.
      CREATE TABLE notify_ack_links (
        outbox_id   INTEGER PRIMARY KEY,
        advisory_id TEXT NOT NULL,
        channel     TEXT NOT NULL,
        used_by     TEXT NOT NULL,
        used_at_ms  INTEGER NOT NULL
      );

      -- A short PIN per account, hashed like a password (scrypt), accepted only together with
      -- an acknowledge link (millwarden user pin NAME). AccountStore.removeUser removes it too.
      CREATE TABLE user_pins (
        name          TEXT PRIMARY KEY COLLATE NOCASE,
        pin_hash      TEXT NOT NULL,
        updated_at_ms INTEGER NOT NULL
      ) WITHOUT ROWID;
    `,
  },
  {
    version: 7,
    description: "republish store-and-forward queue (messages for the site broker while it is away)",
    sql: `
      -- Messages for the site's messaging broker that could not be published yet
      -- (src/store/uplink-queue.ts), drained in id order. keep_last: advisory transitions,
      -- dropped only when nothing else is left to drop. Bounded; the drops are counted.
      CREATE TABLE uplink_queue (
        id            INTEGER PRIMARY KEY,
        topic         TEXT NOT NULL,
        body          BLOB NOT NULL,
        qos           INTEGER NOT NULL,
        retain        INTEGER NOT NULL,
        keep_last     INTEGER NOT NULL,
        queued_at_ms  INTEGER NOT NULL
      );
      CREATE INDEX uplink_queue_keep ON uplink_queue (keep_last, id);
      CREATE TABLE uplink_dropped (
        keep_last INTEGER PRIMARY KEY,
        count     INTEGER NOT NULL
      );
    `,
  },
];

/** Quality codes from this one up are not usable values for roll-ups, per kind of series. */
export const UNUSABLE_CODE = { signal: 2, derived: 1 } as const;

const MIGRATION_PAGE_ROWS = 100_000;

/** Migration 2's data step: a series at a time, in pages, into chunks and roll-ups. */
function moveToChunks(db: Database.Database, select: string, kind: "signal" | "derived"): void {
  const ids = db.prepare("SELECT id FROM series WHERE kind = ? ORDER BY id").pluck().all(kind) as number[];
  const page = db.prepare(select).raw();
  const insertChunk = db.prepare("INSERT INTO chunks (series_id, t_first_ms, t_last_ms, n, data, quality) VALUES (?, ?, ?, ?, ?, ?)");
  const insertRollup = db.prepare("INSERT INTO rollups_1m (series_id, t_minute_ms, min, max, sum, count, last, quality) VALUES (?, ?, ?, ?, ?, ?, ?, ?)");
  for (const id of ids) {
    let after = Number.NEGATIVE_INFINITY;
    // Points of a minute cut by a page boundary wait for the next page.
    let carry: [number, number | null, number][] = [];
    for (;;) {
      const rows = page.all(id, after, MIGRATION_PAGE_ROWS) as [number, number | null, number][];
      const done = rows.length < MIGRATION_PAGE_ROWS;
      const all = carry.concat(rows);
      if (all.length === 0) break;
      if (rows.length > 0) after = (rows[rows.length - 1] as [number, number | null, number])[0];
      let end = all.length;
      if (!done) {
        const lastMinute = minuteOf((all[end - 1] as [number, number | null, number])[0]);
        while (end > 0 && minuteOf((all[end - 1] as [number, number | null, number])[0]) === lastMinute) end--;
        if (end === 0) {
          // One minute longer than a page: keep gathering it.
          carry = all;
          continue;
        }
      }
      const p: ChunkPoints = { timesMs: new Float64Array(end), values: new Float64Array(end), quality: new Uint8Array(end) };
      for (let i = 0; i < end; i++) {
        const [t, v, q] = all[i] as [number, number | null, number];
        p.timesMs[i] = t;
        p.values[i] = v === null ? Number.NaN : v;
        p.quality[i] = q;
      }
      for (const c of buildChunks(p, 0, end)) insertChunk.run(id, c.tFirstMs, c.tLastMs, c.n, c.data, c.quality);
      for (const r of rollupMinutes(p, 0, end, UNUSABLE_CODE[kind])) insertRollup.run(id, r.tMinuteMs, r.min, r.max, r.sum, r.count, r.last, r.quality);
      carry = all.slice(end);
      if (done) break;
    }
  }
}

export const LATEST_SCHEMA_VERSION: number = MIGRATIONS.reduce((m, x) => Math.max(m, x.version), 0);

/** Created before migration 1, in the same transaction. */
export const SCHEMA_MIGRATIONS_SQL = `
  CREATE TABLE schema_migrations (
    version       INTEGER PRIMARY KEY,
    description   TEXT NOT NULL,
    applied_at_ms INTEGER NOT NULL
  );
`;
