import { mkdirSync, readFileSync, statSync, writeFileSync } from "node:fs";
import { join } from "node:path";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it, vi } from "vitest";
import type { Sample } from "../../src/core/types.js";
import { Historian, HistorianOpenError } from "../../src/store/historian.js";
import { LATEST_SCHEMA_VERSION, MIGRATIONS } from "../../src/store/migrations.js";
import { decodeQualityRuns } from "../../src/store/chunk.js";
import { T0, derived, sample, tempDir, transition } from "./helpers.js";

let dir: string;
let cleanup: () => void;
const open: Historian[] = [];

beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => {
  for (const h of open.splice(0)) h.close();
  cleanup();
});

function openHistorian(file = "hist.db", extra: Partial<Parameters<typeof Historian.open>[0]> = {}): Historian {
  const h = Historian.open({ path: join(dir, file), ...extra });
  open.push(h);
  return h;
}

/** A second, independent read-only connection: what another process would see in the file. */
function peek<T>(file: string, fn: (db: Database.Database) => T): T {
  const db = new Database(join(dir, file), { readonly: true, fileMustExist: true });
  try {
    return fn(db);
  } finally {
    db.close();
  }
}

describe("Historian round trip", () => {
  it("stores samples with their quality and gives NaN back as null", () => {
    const h = openHistorian();
    h.appendSample(sample("VM2-TT-111", T0, 92.5));
    h.appendSample(sample("VM2-TT-111", T0 + 1000, 92.75, "uncertain"));
    h.appendSample({ ...sample("VM2-TT-111", T0 + 2000, Number.NaN, "bad"), qualityReason: "BadCommunicationError" });
    // 0.1 + 0.2 is not exactly representable: SQLite REAL is an IEEE 754 binary64 (sqlite.org/datatype3.html),
    // so the exact double must come back, not a rounded decimal.
    h.appendSample(sample("VM2-AT-121", T0, 0.1 + 0.2));
    h.flush();
    expect(h.samples("VM2-TT-111", T0, T0 + 2000)).toEqual([
      { tMs: T0, value: 92.5, quality: "good" },
      { tMs: T0 + 1000, value: 92.75, quality: "uncertain" },
      { tMs: T0 + 2000, value: null, quality: "bad" },
    ]);
    expect(h.samples("VM2-AT-121", T0, T0)[0]?.value).toBe(0.30000000000000004);
  });

  it("stores the quality as the OPC UA severity bits, before and after sealing", () => {
    // OPC UA Part 4, StatusCode: severity bits 00 Good, 01 Uncertain, 10 Bad.
    const h = openHistorian();
    h.appendSample(sample("VM2-PT-101", T0, -3.1, "good", T0 + 15));
    h.appendSample(sample("VM2-PT-101", T0 + 1, -3.2, "uncertain", T0 + 16));
    h.appendSample(sample("VM2-PT-101", T0 + 2, -3.3, "bad", T0 + 17));
    h.flush();
    expect(peek("hist.db", (db) => db.prepare("SELECT quality FROM recent ORDER BY t_ms").pluck().all())).toEqual([0b00, 0b01, 0b10]);
    h.maintain(T0 + 3_600_000);
    // Sealed: the quality runs (start, length, code) of the chunk, codes other than good only.
    const blob = peek("hist.db", (db) => db.prepare("SELECT quality FROM chunks").pluck().get()) as Uint8Array;
    expect([...decodeQualityRuns(blob, 3)]).toEqual([0b00, 0b01, 0b10]);
    expect(h.samples("VM2-PT-101", T0, T0 + 2).map((p) => p.quality)).toEqual(["good", "uncertain", "bad"]);
  });

  it("stores infinite values as NULL too", () => {
    const h = openHistorian();
    h.appendSample(sample("VM2-FT-131", T0, Number.POSITIVE_INFINITY, "bad"));
    h.appendDerived(derived("co.vm2-outlet.gradientPpmPerMin", T0, Number.NEGATIVE_INFINITY, "unknown"));
    h.flush();
    expect(h.samples("VM2-FT-131", T0, T0)).toEqual([{ tMs: T0, value: null, quality: "bad" }]);
    expect(h.derived("co.vm2-outlet.gradientPpmPerMin", T0, T0)).toEqual([{ tMs: T0, value: null, status: "unknown" }]);
  });

  it("stores derived values with their status", () => {
    const h = openHistorian();
    h.appendDerived(derived("dewpoint.bf1-outlet.marginK", T0, 21.4));
    h.appendDerived(derived("dewpoint.bf1-outlet.marginK", T0 + 1000, null, "unknown"));
    h.appendDerived(derived("dewpoint.bf1-outlet.marginK", T0 + 2000, Number.NaN, "unknown"));
    h.flush();
    expect(h.derived("dewpoint.bf1-outlet.marginK", T0, T0 + 2000)).toEqual([
      { tMs: T0, value: 21.4, status: "ok" },
      { tMs: T0 + 1000, value: null, status: "unknown" },
      { tMs: T0 + 2000, value: null, status: "unknown" },
    ]);
  });

  it("stores every field of an advisory transition", () => {
    const h = openHistorian();
    const raise = transition({ atMs: T0 });
    const ack = transition({ atMs: T0 + 60_000, transition: "ack", from: "unack", to: "ack", value: null, by: "j.okafor", why: "filter bypass damper checked" });
    h.appendTransition(raise);
    h.appendTransition(ack);
    h.flush();
    expect(h.transitions({})).toEqual([raise, ack]);
  });

  it("truncates fractional milliseconds (1 ms resolution)", () => {
    const h = openHistorian();
    h.appendSample(sample("VM2-TT-111", T0 + 0.9, 1));
    h.flush();
    expect(h.samples("VM2-TT-111", T0, T0)).toEqual([{ tMs: T0, value: 1, quality: "good" }]);
  });
});

describe("Historian range queries", () => {
  function filled(): Historian {
    const h = openHistorian();
    for (const t of [1000, 2000, 3000]) {
      h.appendSample(sample("VM2-TT-111", T0 + t, t / 100));
      h.appendDerived(derived("o2.vm2.marginPctPt", T0 + t, t / 1000));
    }
    h.appendSample(sample("VM2-TT-112", T0 + 2000, 7));
    h.flush();
    return h;
  }
  const times = (rows: { tMs: number }[]): number[] => rows.map((r) => r.tMs - T0);

  it("includes both bounds", () => {
    const h = filled();
    expect(times(h.samples("VM2-TT-111", T0 + 1000, T0 + 3000))).toEqual([1000, 2000, 3000]);
    expect(times(h.samples("VM2-TT-111", T0 + 1001, T0 + 2999))).toEqual([2000]);
    expect(times(h.samples("VM2-TT-111", T0 + 2000, T0 + 2000))).toEqual([2000]);
    expect(times(h.derived("o2.vm2.marginPctPt", T0 + 1000, T0 + 3000))).toEqual([1000, 2000, 3000]);
    expect(times(h.derived("o2.vm2.marginPctPt", T0 + 3000, T0 + 3000))).toEqual([3000]);
  });

  it("returns nothing for an empty or inverted range, or an unknown series", () => {
    const h = filled();
    expect(h.samples("VM2-TT-111", T0 + 3001, T0 + 9000)).toEqual([]);
    expect(h.samples("VM2-TT-111", T0 + 3000, T0 + 1000)).toEqual([]);
    expect(h.samples("VM2-XX-999", T0, T0 + 9000)).toEqual([]);
    expect(h.derived("no.such.key", T0, T0 + 9000)).toEqual([]);
  });

  it("accepts infinite bounds for everything", () => {
    const h = filled();
    expect(times(h.samples("VM2-TT-111", Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY))).toEqual([1000, 2000, 3000]);
  });

  it("keeps series apart", () => {
    const h = filled();
    expect(h.samples("VM2-TT-112", T0, T0 + 9000)).toEqual([{ tMs: T0 + 2000, value: 7, quality: "good" }]);
  });

  it("caps at maxRows, keeping the earliest", () => {
    const h = filled();
    expect(times(h.samples("VM2-TT-111", T0, T0 + 9000, 2))).toEqual([1000, 2000]);
    expect(times(h.derived("o2.vm2.marginPctPt", T0, T0 + 9000, 1))).toEqual([1000]);
  });

  it("rejects a NaN bound or a bad maxRows with a clear error", () => {
    const h = filled();
    expect(() => h.samples("VM2-TT-111", Number.NaN, T0)).toThrow("Historian.samples: expected fromMs to be epoch milliseconds, found NaN");
    expect(() => h.derived("o2.vm2.marginPctPt", T0, T0, 0)).toThrow("Historian.derived: expected maxRows to be a whole number ≥ 1, found 0");
  });
});

describe("Historian ordering", () => {
  it("returns samples by source time whatever the order of arrival", () => {
    const h = openHistorian();
    for (const t of [5, 1, 4, 2, 3]) h.appendSample(sample("VM2-AT-121", T0 + t * 1000, t, "good", T0 + 10_000 - t));
    h.flush();
    expect(h.samples("VM2-AT-121", T0, T0 + 10_000).map((r) => r.value)).toEqual([1, 2, 3, 4, 5]);
  });

  it("returns transitions oldest or newest first, filtered by advisory and time", () => {
    const h = openHistorian();
    const a1 = transition({ atMs: T0 + 1000 });
    const b1 = transition({ atMs: T0 + 2000, advisoryId: "vm2.co-gradient", ruleId: "vm2.co-gradient", tier: "notice" });
    const a2 = transition({ atMs: T0 + 3000, transition: "escalate", from: "unack", to: "unack", tier: "warning" });
    // Same time as a2: the order of appending decides.
    const a3 = transition({ atMs: T0 + 3000, transition: "ack", from: "unack", to: "ack", by: "m.lindqvist" });
    h.appendTransition(a2);
    h.appendTransition(a3);
    h.appendTransition(a1);
    h.appendTransition(b1);
    h.flush();
    expect(h.transitions({})).toEqual([a1, b1, a2, a3]);
    expect(h.transitions({ newestFirst: true })).toEqual([a3, a2, b1, a1]);
    expect(h.transitions({ advisoryId: "bf1.dewpoint-margin" })).toEqual([a1, a2, a3]);
    expect(h.transitions({ fromMs: T0 + 2000, toMs: T0 + 3000 })).toEqual([b1, a2, a3]);
    expect(h.transitions({ newestFirst: true, limit: 2 })).toEqual([a3, a2]);
    expect(h.transitions({ advisoryId: "vm2.co-gradient", fromMs: T0 + 2001 })).toEqual([]);
  });

  it("lists known signals and derived keys sorted", () => {
    const h = openHistorian();
    h.appendSample(sample("VM2-TT-112", T0, 1));
    h.appendSample(sample("VM2-AT-121", T0, 1));
    h.appendDerived(derived("o2.vm2.marginPctPt", T0, 2));
    h.appendDerived(derived("dewpoint.bf1-outlet.marginK", T0, 2));
    expect(h.knownSignals()).toEqual([]);
    h.flush();
    expect(h.knownSignals()).toEqual(["VM2-AT-121", "VM2-TT-112"]);
    expect(h.knownDerivedKeys()).toEqual(["dewpoint.bf1-outlet.marginK", "o2.vm2.marginPctPt"]);
  });
});

describe("Historian duplicates", () => {
  it("keeps the later write for the same series and time, and counts it", () => {
    const h = openHistorian();
    h.appendSample(sample("VM2-TT-111", T0, 90, "good", T0 + 10));
    h.appendSample(sample("VM2-TT-111", T0, 91, "uncertain", T0 + 20)); // same batch
    h.flush();
    h.appendSample(sample("VM2-TT-111", T0, 92, "bad", T0 + 30)); // a later batch
    h.appendDerived(derived("co.vm2-outlet.gradientPpmPerMin", T0, 1.5));
    h.appendDerived(derived("co.vm2-outlet.gradientPpmPerMin", T0, null, "unknown"));
    h.flush();
    expect(h.samples("VM2-TT-111", T0, T0)).toEqual([{ tMs: T0, value: 92, quality: "bad" }]);
    expect(h.derived("co.vm2-outlet.gradientPpmPerMin", T0, T0)).toEqual([{ tMs: T0, value: null, status: "unknown" }]);
    // The recent table is append-only: it holds every write until they are sealed into one point.
    expect(peek("hist.db", (db) => db.prepare("SELECT value FROM recent WHERE value >= 90 ORDER BY rowid").pluck().all())).toEqual([90, 91, 92]);
    const s = h.stats();
    expect(s.duplicateRows).toBe(3);
    expect(s.rowsWritten).toBe(5);
    h.maintain(T0 + 3_600_000);
    expect(peek("hist.db", (db) => db.prepare("SELECT count(*) FROM recent").pluck().get())).toBe(0);
    expect(h.samples("VM2-TT-111", T0, T0)).toEqual([{ tMs: T0, value: 92, quality: "bad" }]);
    expect(h.derived("co.vm2-outlet.gradientPpmPerMin", T0, T0)).toEqual([{ tMs: T0, value: null, status: "unknown" }]);
  });

  it("keeps every transition, even identical ones (an audit trail is never deduplicated)", () => {
    const h = openHistorian();
    h.appendTransition(transition({ atMs: T0 }));
    h.appendTransition(transition({ atMs: T0 }));
    h.flush();
    expect(h.transitions({})).toHaveLength(2);
    expect(h.stats().duplicateRows).toBe(0);
  });
});

describe("Historian batching", () => {
  it("writes nothing before flush and everything after", () => {
    const h = openHistorian("hist.db", { maxBatchRows: 7 });
    for (let i = 0; i < 100; i++) h.appendSample(sample(`VM2-TT-${100 + (i % 10)}`, T0 + i * 100, i));
    for (let i = 0; i < 5; i++) h.appendDerived(derived("dewpoint.bf1-outlet.marginK", T0 + i, i));
    h.appendTransition(transition({ atMs: T0 }));
    const count = (): number[] =>
      peek("hist.db", (db) => [
        db.prepare("SELECT count(*) FROM recent JOIN series ON series.id = recent.series_id WHERE kind = 'signal'").pluck().get() as number,
        db.prepare("SELECT count(*) FROM recent JOIN series ON series.id = recent.series_id WHERE kind = 'derived'").pluck().get() as number,
        db.prepare("SELECT count(*) FROM advisory_transitions").pluck().get() as number,
      ]);
    expect(count()).toEqual([0, 0, 0]);
    expect(h.stats()).toMatchObject({ queueDepth: 106, rowsWritten: 0, lastFlushMs: null });
    h.flush();
    expect(count()).toEqual([100, 5, 1]);
    expect(h.stats()).toMatchObject({ state: "ok", queueDepth: 0, rowsWritten: 106, droppedRows: 0, lastError: null });
  });

  it("stamps lastFlushMs from its clock", () => {
    let now = T0;
    const h = openHistorian("hist.db", { nowMs: () => (now += 5) });
    h.appendSample(sample("VM2-TT-111", T0, 1));
    h.flush();
    expect(h.stats().lastFlushMs).toBe(now);
    expect(h.stats().lastFlushDurationMs).toBe(5);
  });

  it("flushes on its timer after start() and once more on stop()", () => {
    vi.useFakeTimers({ toFake: ["setInterval", "clearInterval"] });
    try {
      const h = openHistorian("hist.db", { flushIntervalMs: 250 });
      h.start();
      h.start(); // idempotent: still one timer
      h.appendSample(sample("VM2-TT-111", T0, 1));
      vi.advanceTimersByTime(249);
      expect(h.stats().queueDepth).toBe(1);
      vi.advanceTimersByTime(1);
      expect(h.stats().queueDepth).toBe(0);
      expect(h.samples("VM2-TT-111", T0, T0)).toHaveLength(1);
      expect(vi.getTimerCount()).toBe(1);
      h.stop();
      expect(vi.getTimerCount()).toBe(0);
      h.appendSample(sample("VM2-TT-111", T0 + 1, 2));
      vi.advanceTimersByTime(1000);
      expect(h.stats().queueDepth).toBe(1); // the timer is stopped
      h.start();
      h.stop(); // stop() flushes
      expect(h.stats().queueDepth).toBe(0);
      expect(h.samples("VM2-TT-111", T0, T0 + 1)).toHaveLength(2);
    } finally {
      vi.useRealTimers();
    }
  });

  it("drops the oldest queued samples beyond maxQueueRows, never transitions first", () => {
    const h = openHistorian("hist.db", { maxQueueRows: 10 });
    h.appendTransition(transition({ atMs: T0 }));
    h.appendDerived(derived("o2.vm2.marginPctPt", T0, 3.1));
    for (let i = 0; i < 20; i++) h.appendSample(sample("VM2-TT-111", T0 + i, i));
    expect(h.stats()).toMatchObject({ queueDepth: 10, droppedRows: 12 });
    h.flush();
    expect(h.samples("VM2-TT-111", T0, T0 + 100).map((r) => r.value)).toEqual([12, 13, 14, 15, 16, 17, 18, 19]);
    expect(h.transitions({})).toHaveLength(1);
    expect(h.derived("o2.vm2.marginPctPt", T0, T0)).toHaveLength(1);
    // With no samples queued, derived values go next, then transitions.
    for (let i = 0; i < 11; i++) h.appendTransition(transition({ atMs: T0 + 1 + i }));
    h.appendDerived(derived("o2.vm2.marginPctPt", T0 + 1, 3.2));
    expect(h.stats()).toMatchObject({ queueDepth: 10, droppedRows: 14 });
    h.flush();
    expect(h.transitions({}).map((t) => t.atMs - T0)).toEqual([0, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11]);
    expect(h.derived("o2.vm2.marginPctPt", T0, T0 + 100)).toHaveLength(1);
  });
});

describe("Historian file", () => {
  it("keeps its data across close and reopen, in a folder it creates", () => {
    const file = join("plant", "line2", "hist.db");
    const h1 = Historian.open({ path: join(dir, file) });
    h1.appendSample(sample("VM2-TT-111", T0, 88.5, "uncertain"));
    h1.appendDerived(derived("dewpoint.bf1-outlet.marginK", T0, 19.5));
    h1.appendTransition(transition({ atMs: T0 }));
    h1.close();
    expect(statSync(join(dir, file)).isFile()).toBe(true);
    const h2 = openHistorian(file);
    expect(h2.samples("VM2-TT-111", T0, T0)).toEqual([{ tMs: T0, value: 88.5, quality: "uncertain" }]);
    expect(h2.derived("dewpoint.bf1-outlet.marginK", T0, T0)).toEqual([{ tMs: T0, value: 19.5, status: "ok" }]);
    expect(h2.transitions({})).toEqual([transition({ atMs: T0 })]);
    // New series after reopen get ids of their own; old ones keep theirs.
    h2.appendSample(sample("VM2-TT-112", T0, 1));
    h2.appendSample(sample("VM2-TT-111", T0 + 1, 2));
    h2.flush();
    expect(h2.knownSignals()).toEqual(["VM2-TT-111", "VM2-TT-112"]);
    expect(h2.samples("VM2-TT-111", T0, T0 + 1)).toHaveLength(2);
  });

  it("uses WAL journaling", () => {
    // sqlite.org/wal.html: WAL mode is persistent, recorded in the file, so another connection sees it.
    openHistorian();
    expect(peek("hist.db", (db) => db.pragma("journal_mode", { simple: true }))).toBe("wal");
  });

  it("records the migrations it applied, once", () => {
    let now = T0;
    Historian.open({ path: join(dir, "hist.db"), nowMs: () => now }).close();
    now = T0 + 86_400_000;
    openHistorian().close();
    // user_version: a free 4-byte integer in the file header at offset 60 (sqlite.org/fileformat.html).
    const { rows, userVersion, application } = peek("hist.db", (db) => ({
      rows: db.prepare("SELECT version, applied_at_ms FROM schema_migrations").all(),
      userVersion: db.pragma("user_version", { simple: true }),
      application: db.prepare("SELECT value FROM meta WHERE key = 'application'").pluck().get(),
    }));
    // Numbered 1, 2, 3 ... without gaps, each applied once, at the first open.
    expect(rows).toEqual(MIGRATIONS.map((_m, i) => ({ version: i + 1, applied_at_ms: T0 })));
    expect(MIGRATIONS.map((m) => m.version)).toEqual(MIGRATIONS.map((_, i) => i + 1));
    expect(userVersion).toBe(LATEST_SCHEMA_VERSION);
    expect(LATEST_SCHEMA_VERSION).toBeGreaterThanOrEqual(4);
    expect(application).toBe("millwarden");
  });

  it("creates the tables of migrations 2 and 3 as specified", () => {
    openHistorian();
    const tables = peek("hist.db", (db) =>
      db.prepare("SELECT name, sql FROM sqlite_master WHERE type IN ('table', 'index') AND name NOT LIKE 'sqlite_%' ORDER BY name").all(),
    ) as { name: string; sql: string }[];
    expect(tables.map((t) => t.name)).toEqual([
      "advisory_state",
      "advisory_transitions",
      "advisory_transitions_advisory_at",
      "advisory_transitions_at",
      "audit_log",
      "audit_log_at",
      "chunks",
      "chunks_last",
      "chunks_series_last",
      "meta",
      "notify_ack_links",
      "notify_deliveries",
      "notify_deliveries_channel",
      "notify_deliveries_outbox",
      "notify_outbox",
      "notify_outbox_created",
      "notify_outbox_due",
      "notify_state",
      "plant_events",
      "plant_events_at",
      "push_subscriptions",
      "push_subscriptions_person",
      "recent",
      "rollups_1m",
      "schema_migrations",
      "series",
      "uplink_dropped",
      "uplink_queue",
      "uplink_queue_keep",
      "user_pins",
      "users",
    ]);
    const sqlOf = (n: string): string => tables.find((t) => t.name === n)?.sql ?? "";
    // A rowid table without an index or primary key: inserts append to its last page (sqlite.org/rowidtable.html).
    expect(sqlOf("recent")).not.toMatch(/PRIMARY KEY|WITHOUT ROWID/);
    expect(tables.some((t) => t.sql?.includes("ON recent"))).toBe(false);
    // WITHOUT ROWID tables store rows in the primary-key b-tree itself (sqlite.org/withoutrowid.html).
    expect(sqlOf("rollups_1m")).toMatch(/PRIMARY KEY \(series_id, t_minute_ms\)\s*\) WITHOUT ROWID/);
    expect(sqlOf("chunks")).toMatch(/data\s+BLOB NOT NULL/);
    expect(sqlOf("chunks_series_last")).toContain("(series_id, t_last_ms, t_first_ms, n)");
    expect(sqlOf("advisory_transitions_advisory_at")).toContain("(advisory_id, at_ms)");
    // auto_vacuum = 2 is INCREMENTAL (sqlite.org/pragma.html#pragma_auto_vacuum); set before the first table.
    expect(peek("hist.db", (db) => db.pragma("auto_vacuum", { simple: true }))).toBe(2);
  });

  it("refuses a folder in place of the file, naming the path", () => {
    mkdirSync(join(dir, "hist.db"));
    expect(() => Historian.open({ path: join(dir, "hist.db") })).toThrow(HistorianOpenError);
    expect(() => Historian.open({ path: join(dir, "hist.db") })).toThrow(`cannot open historian database "${join(dir, "hist.db")}": SQLite cannot open the file`);
  });

  it("refuses a folder it cannot create", () => {
    writeFileSync(join(dir, "plain-file"), "x");
    const path = join(dir, "plain-file", "hist.db");
    expect(() => Historian.open({ path })).toThrow(`cannot open historian database "${path}": cannot create its folder`);
  });

  it("refuses a file that is not an SQLite database and leaves it alone", () => {
    const path = join(dir, "notes.db");
    const text = "VM2 shift notes: mill started 05:10\n".repeat(200);
    writeFileSync(path, text);
    expect(() => Historian.open({ path })).toThrow(`cannot open historian database "${path}": the file is not an SQLite database`);
    expect(readFileSync(path, "utf8")).toBe(text);
  });

  it("refuses an SQLite database of another application", () => {
    const path = join(dir, "other.db");
    const db = new Database(path);
    db.exec("CREATE TABLE readings (tag TEXT, t INTEGER, v REAL)");
    db.close();
    expect(() => Historian.open({ path })).toThrow(
      `cannot open historian database "${path}": it is an SQLite database but not a millwarden historian (expected tables meta with application = "millwarden" and schema_migrations; found tables: readings)`,
    );
    // Refused before anything was changed: still in the default rollback-journal mode (sqlite.org/pragma.html#pragma_journal_mode).
    expect(peek("other.db", (d) => d.pragma("journal_mode", { simple: true }))).toBe("delete");
  });

  it("refuses a newer schema version than it knows", () => {
    Historian.open({ path: join(dir, "hist.db") }).close();
    const db = new Database(join(dir, "hist.db"));
    db.prepare("INSERT INTO schema_migrations VALUES (?, ?, ?)").run(LATEST_SCHEMA_VERSION + 98, "from the future", T0);
    db.close();
    expect(() => Historian.open({ path: join(dir, "hist.db") })).toThrow(
      `its schema version is ${LATEST_SCHEMA_VERSION + 98}, newer than this build of millwarden knows (up to ${LATEST_SCHEMA_VERSION})`,
    );
  });

  it("rejects bad options with what was expected", () => {
    expect(() => Historian.open({ path: "" })).toThrow('expected options.path to be a non-empty file path, found ""');
    expect(() => Historian.open({ path: join(dir, "a.db"), maxBatchRows: 0 })).toThrow("expected options.maxBatchRows to be a whole number ≥ 1, found 0");
    expect(() => Historian.open({ path: join(dir, "a.db"), synchronous: "OFF" as "FULL" })).toThrow('expected options.synchronous to be "NORMAL" or "FULL", found "OFF"');
  });

  it("opens with synchronous FULL and an in-memory file too", () => {
    const h = openHistorian("full.db", { synchronous: "FULL" });
    h.appendSample(sample("VM2-TT-111", T0, 1));
    h.flush();
    expect(h.samples("VM2-TT-111", T0, T0)).toHaveLength(1);
    const m = Historian.open({ path: ":memory:" });
    open.push(m);
    m.appendSample(sample("VM2-TT-111", T0, 2));
    m.flush();
    expect(m.samples("VM2-TT-111", T0, T0)).toEqual([{ tMs: T0, value: 2, quality: "good" }]);
  });
});

describe("Historian input checks", () => {
  it("rejects a malformed sample at append time, naming the field and the signal", () => {
    const h = openHistorian();
    expect(() => h.appendSample(sample("", T0, 1))).toThrow('Historian.appendSample: expected signal to be a non-empty string, found ""');
    expect(() => h.appendSample(sample("VM2-TT-111", Number.NaN, 1))).toThrow(
      'Historian.appendSample: expected sourceTimeMs to be epoch milliseconds (a finite number), found NaN (signal "VM2-TT-111")',
    );
    expect(() => h.appendSample({ ...sample("VM2-TT-111", T0, 1), quality: "fair" } as unknown as Sample)).toThrow(
      'expected quality to be "good", "uncertain" or "bad", found "fair"',
    );
    expect(() => h.appendSample({ ...sample("VM2-TT-111", T0, 1), value: "92.5" } as unknown as Sample)).toThrow(
      'expected value to be a number (NaN allowed), found "92.5"',
    );
    expect(() => h.appendDerived({ ...derived("o2.vm2.marginPctPt", T0, 1), status: "bad" as "ok" })).toThrow('expected status to be "ok" or "unknown", found "bad"');
    expect(() => h.appendTransition({ ...transition({ atMs: T0 }), limit: null as unknown as number })).toThrow(
      'Historian.appendTransition: expected limit to be a number, found null (advisory "bf1.dewpoint-margin")',
    );
    expect(h.stats().queueDepth).toBe(0);
  });

  it("refuses use after close with the path", () => {
    const h = Historian.open({ path: join(dir, "hist.db") });
    h.close();
    h.close(); // idempotent
    expect(() => h.appendSample(sample("VM2-TT-111", T0, 1))).toThrow(`Historian.appendSample: the historian on "${join(dir, "hist.db")}" is closed`);
    expect(() => h.samples("VM2-TT-111", T0, T0)).toThrow("is closed");
    expect(h.stats().state).toBe("ok");
  });
});
