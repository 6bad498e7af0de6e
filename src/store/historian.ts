// The historian: raw samples, derived values and advisory transitions in one SQLite file.
//
//   core events ──append*()──▶ in-memory queues ──flush()──▶ recent (append-only table)
//                 O(1), no I/O    bounded: oldest             one transaction per batch
//                                 samples dropped, counted      │
//                                                  maintain(nowMs), e.g. once a minute:
//                                                  seal ───────┴──▶ chunks (Gorilla, per series)
//                                                                 + rollups_1m (min/max/sum/count/last)
//                                                  retention, disk budget, incremental vacuum
//   reads: samples() / derived() merge chunks and unsealed rows; trend() picks raw points or
//   roll-ups by span and reduces with LTTB; exportCsv() streams the history exchange format.
//
// Contracts:
// - append* never blocks and never does I/O. Validation errors (a caller bug) throw at once, so
//   a bad row can never sit in the queue and fail every later flush.
// - The historian keeps the appended objects until they are written: do not mutate them.
// - flush() and maintain() never throw for a database failure (disk full, I/O error, locked
//   file): nothing is lost (queued rows stay queued; a failed seal leaves its rows unsealed),
//   stats().state turns "degraded" with lastError, and the next call retries. The state is
//   "ok" again once both the last flush and the last maintain succeeded.
// - A crash loses at most the batch being flushed (and what was still queued): each batch and
//   each seal is one transaction, and a seal deletes the rows it sealed in that transaction,
//   so a point is never lost nor stored twice by sealing.
// - Reads see only what has been flushed. A later write for the same series and time replaces
//   the earlier one (counted in duplicateRows when found: at flush among unsealed rows, at seal
//   against sealed ones).
// - Values: NaN and ±Infinity are stored as missing and read back as null; every finite value
//   comes back bit for bit, −0 included. Times are stored at 1 ms resolution (fractions are
//   truncated). Receive times are not kept: history keeps source time, value and quality.
// - Not thread safe. One writing Historian per file: it keeps a copy of the unsealed rows in
//   memory (recent.ts). Another process may read the file; a Historian opened there sees the
//   unsealed rows as they were when it opened.
import { mkdirSync } from "node:fs";
import { dirname, resolve } from "node:path";
import Database from "better-sqlite3";
import type { PersistedAdvisory } from "../advisories/advisory.js";
import type { AdvisoryTransition, DerivedValue, NuisanceEvent, Quality, Sample, StateChange } from "../core/types.js";

export type PlantEvent = NuisanceEvent | StateChange;
import { AccountStore } from "./accounts.js";
import { MINUTE_MS, minuteOf, rollupMinutes, type MinuteRollup } from "./chunk.js";
import { downsample, type TrendInput } from "./downsample.js";
import { exportLines } from "./export-csv.js";
import { Fifo } from "./fifo.js";
import { APPLICATION_NAME, LATEST_SCHEMA_VERSION, MIGRATIONS, SCHEMA_MIGRATIONS_SQL, UNUSABLE_CODE } from "./migrations.js";
import { RecentIndex, type SeriesBuffer, type SeriesKind } from "./recent.js";
import { Tables, type Points, type SealItem } from "./tables.js";

export interface HistorianOptions {
  /** Database file; missing folders are created. ":memory:" gives a private in-memory database. */
  path: string;
  /**
   * Durability of commits. The file uses WAL journaling, where:
   * - NORMAL (default): the WAL is fsynced only at checkpoints, not at each commit. A crash of
   *   the process loses nothing that was committed (the OS still holds the pages). A power loss
   *   or OS crash can roll back the last transactions committed since the last checkpoint
   *   (seconds of history here), but never corrupts the file.
   * - FULL: the WAL is fsynced at every commit (once per flushed batch here), so a committed
   *   batch survives a power loss too, at the cost of one fsync per batch.
   */
  synchronous?: "NORMAL" | "FULL";
  /** Period of the flush timer started by start(). Default 250 ms. */
  flushIntervalMs?: number;
  /** Rows per transaction. Default 5000. */
  maxBatchRows?: number;
  /**
   * Rows held in memory at most (all kinds together). Beyond it the oldest queued samples are
   * dropped (then derived values, advisory transitions last) and counted in droppedRows.
   * Default 200,000.
   */
  maxQueueRows?: number;
  /** How long a write waits for a lock held by another process. Default 1000 ms (it blocks the event loop). */
  busyTimeoutMs?: number;
  /** Caps the file at this many pages (PRAGMA max_page_count), for tests and operations. */
  maxPageCount?: number;
  /** SQLite's page cache for this connection in KiB (PRAGMA cache_size = −N). Default SQLite's own, 2 MiB. */
  cacheSizeKiB?: number;
  /** Clock for stats and records; default Date.now. maintain() takes its own nowMs. */
  nowMs?: () => number;
  /** maintain() seals at most this often. Default 300 s. */
  sealIntervalS?: number;
  /**
   * A point is sealed once it is this far behind maintain's nowMs (the seal horizon is
   * floor_to_minute(nowMs − sealAgeS)), which leaves late points of the last minutes in the
   * cheap recent table. Default 60 s.
   */
  sealAgeS?: number;
  /** Raw points (chunks) are kept this long, then deleted. Fractions allowed. Default 30 days. */
  rawRetentionDays?: number;
  /** 1-minute roll-ups are kept this long (at least rawRetentionDays). Default 365 days. */
  rollupRetentionDays?: number;
  /**
   * Disk budget: bytes of the file's pages in use (freelist pages excluded). When the data
   * exceeds it, maintain() goes on deleting expired data, oldest raw chunks first, then the
   * oldest roll-ups, until it fits; it never deletes data younger than its retention period:
   * if that is not enough, stats().overBudget is true. Default: no budget.
   */
  maxDatabaseBytes?: number | null;
  /**
   * Unsealed rows held at most (they are also held in memory). Beyond it, flush() seals the
   * complete minutes older than sealAgeS before the newest point, without waiting for
   * maintain(). Default 2,000,000 (about 34 MB of memory).
   */
  maxRecentRows?: number;
  /**
   * Expired rows (chunks, then roll-ups) one maintain() deletes when within budget, so that a
   * call stays short after retention was shortened. Default 50,000.
   */
  pruneStepRows?: number;
  /** Free pages one maintain() gives back to the file system at most (incremental vacuum). Default 1024 (4 MB at 4 kB pages). */
  vacuumStepPages?: number;
  /** Free pages kept in the file, for the next seals to reuse instead of growing it again. Default 1024. */
  vacuumReservePages?: number;
}

export interface HistorianStats {
  /** "degraded" while the last flush or the last maintain failed. */
  state: "ok" | "degraded";
  /** Rows waiting in memory, all kinds. */
  queueDepth: number;
  /** Rows committed since open (duplicates included). */
  rowsWritten: number;
  /** Rows dropped because the queue was full, or still queued when close() could not write them. */
  droppedRows: number;
  /** Rows that replaced an earlier row with the same series and time (the later write is kept). */
  duplicateRows: number;
  /** Batches that failed since open. */
  failedBatches: number;
  /** Wall-clock time (epoch ms) of the last flush that wrote everything queued. */
  lastFlushMs: number | null;
  /** Duration of that flush. */
  lastFlushDurationMs: number | null;
  /** The error of the last failure (flush or maintain) while degraded; null when ok. */
  lastError: string | null;
  /** Flushed rows not sealed yet (samples and derived values). */
  recentRows: number;
  /** Rows sealed into chunks since open. */
  sealedRows: number;
  /** maintain() calls that failed since open. */
  failedMaintains: number;
  /** nowMs of the last seal and of the last successful maintain(). */
  lastSealMs: number | null;
  lastMaintainMs: number | null;
  /** Chunks and roll-up rows deleted by retention and budget since open. */
  prunedChunks: number;
  prunedRollups: number;
  /** As measured by the last maintain(): pages in use and the whole main file, in bytes. */
  dataBytes: number | null;
  fileBytes: number | null;
  maxDatabaseBytes: number | null;
  /** The data exceeded maxDatabaseBytes with nothing expired left to delete (last maintain). */
  overBudget: boolean;
  /** The file's auto_vacuum mode: "incremental" for files created since schema version 2. */
  autoVacuum: "none" | "full" | "incremental";
}

export interface SamplePoint {
  tMs: number;
  value: number | null;
  quality: Quality;
}

export interface DerivedPoint {
  tMs: number;
  value: number | null;
  status: "ok" | "unknown";
}

/**
 * A trend point. For raw data not reduced, the sample itself. For reduced raw data, the point
 * LTTB kept, with min and max over the points it stands for and their worst quality. For
 * roll-ups, value is the mean of the usable values and min / max their extremes (a band),
 * value null for a minute (or bucket) without usable value.
 */
export interface HistorianTrendPoint {
  tMs: number;
  value: number | null;
  min?: number;
  max?: number;
  /** Signals: good | uncertain | bad; derived values: ok | unknown. */
  quality: Quality | "ok" | "unknown";
}

export interface HistorianTrend {
  /** Which data the points come from. */
  source: "raw" | "rollup";
  points: HistorianTrendPoint[];
}

/** A sealed 1-minute roll-up. mean = sum / count when count > 0. REAL columns: a −0 comes back as 0. */
export interface RollupPoint {
  tMinuteMs: number;
  min: number | null;
  max: number | null;
  sum: number | null;
  count: number;
  last: number | null;
  /** Worst quality of the minute's points, usable or not. */
  quality: Quality | "ok" | "unknown";
}

/** What one maintain() call did. */
export interface MaintainReport {
  sealedRows: number;
  chunksWritten: number;
  prunedChunks: number;
  prunedRollups: number;
  vacuumedPages: number;
  overBudget: boolean;
  /** The error that stopped it (the historian is then degraded), or null. */
  error: string | null;
}

export interface TransitionQuery {
  /** Inclusive bounds on atMs. */
  fromMs?: number;
  toMs?: number;
  advisoryId?: string;
  /** Default 1000. */
  limit?: number;
  /** Default false: oldest first. */
  newestFirst?: boolean;
}

/** The file cannot be used as a historian: the message names the path and the reason. */
export class HistorianOpenError extends Error {
  constructor(
    public readonly path: string,
    detail: string,
    options?: { cause?: unknown },
  ) {
    super(`cannot open historian database "${path}": ${detail}`, options);
    this.name = "HistorianOpenError";
  }
}

// OPC UA StatusCode severity bits: 00 good, 01 uncertain, 10 bad.
const QUALITY_CODE: Record<Quality, number> = { good: 0, uncertain: 1, bad: 2 };
const QUALITY_BY_CODE: readonly Quality[] = ["good", "uncertain", "bad"];
const STATUS_CODE = { ok: 0, unknown: 1 } as const;
const STATUS_BY_CODE: readonly ("ok" | "unknown")[] = ["ok", "unknown"];

/** The Date range: anything beyond is not an epoch-ms time. */
const MAX_ABS_TIME_MS = 8.64e15;
const DAY_MS = 86_400_000;
/** Rows of one seal transaction at most. */
const MAX_SEAL_ROWS = 500_000;
/** After a failed seal forced by maxRecentRows, flush() tries again after this long. */
const OVERFLOW_RETRY_MS = 10_000;

const DEFAULTS = {
  synchronous: "NORMAL",
  flushIntervalMs: 250,
  maxBatchRows: 5000,
  maxQueueRows: 200_000,
  busyTimeoutMs: 1000,
  sealIntervalS: 300,
  sealAgeS: 60,
  rawRetentionDays: 30,
  rollupRetentionDays: 365,
  maxRecentRows: 2_000_000,
  pruneStepRows: 50_000,
  vacuumStepPages: 1024,
  vacuumReservePages: 1024,
} as const;

type Db = Database.Database;
type Stmt = Database.Statement;
type Opts = ReturnType<typeof validateOptions>;

export class Historian {
  private readonly db: Db;
  /** The file, resolved (":memory:" for an in-memory historian). */
  readonly path: string;
  /** The copy taken before this open migrated the file to a newer schema, or null. */
  migrationBackup: string | null = null;
  private readonly o: Opts;
  private readonly now: () => number;
  private readonly tables: Tables;

  private readonly samplesQ = new Fifo<Sample>();
  private readonly derivedQ = new Fifo<DerivedValue>();
  /** Advisory transitions and plant events (nuisance, state changes): the audit trail, kept longest. */
  private readonly transitionsQ = new Fifo<AdvisoryTransition | PlantEvent>();
  /** name → series id, per kind. Cleared after a failed batch (its inserts were rolled back). */
  private readonly seriesIds: Record<SeriesKind, Map<string, number>> = { signal: new Map(), derived: new Map() };
  /** The unsealed rows, as committed. */
  private readonly recent = new RecentIndex();
  /** Rows of the batch being written, applied to `recent` once it committed. */
  private pending: { id: Int32Array; kind: Uint8Array; t: Float64Array; v: Float64Array; q: Uint8Array; n: number } | null = null;

  private readonly st: {
    insertTransition: Stmt;
    insertEvent: Stmt;
    findSeries: Stmt;
    insertSeries: Stmt;
    seriesNames: Stmt;
  };
  private readonly writeBatchTx: Database.Transaction<(nT: number, nD: number, nS: number) => void>;
  private readonly sealTx: Database.Transaction<(items: SealItem[], allDue: boolean) => ReturnType<Tables["seal"]>>;
  private readonly transitionQueries = new Map<string, Stmt>();

  private timer: NodeJS.Timeout | null = null;
  private closed = false;
  private flushError: string | null = null;
  private maintainError: string | null = null;
  private lastError: string | null = null;
  private rowsWritten = 0;
  private droppedRows = 0;
  private duplicateRows = 0;
  private failedBatches = 0;
  private failedMaintains = 0;
  private sealedRows = 0;
  private prunedChunks = 0;
  private prunedRollups = 0;
  private lastFlushMs: number | null = null;
  private lastFlushDurationMs: number | null = null;
  private lastSealMs: number | null = null;
  private lastMaintainMs: number | null = null;
  private dataBytes: number | null = null;
  private fileBytes: number | null = null;
  private overBudget = false;
  private overflowRetryAtMs = Number.NEGATIVE_INFINITY;
  private autoVacuum: HistorianStats["autoVacuum"];
  private accountStore: AccountStore | null = null;

  private constructor(db: Db, path: string, o: Opts) {
    this.db = db;
    this.path = path;
    this.o = o;
    this.now = o.nowMs;
    this.tables = new Tables(db);
    this.st = {
      insertTransition: db.prepare(
        "INSERT INTO advisory_transitions (at_ms, advisory_id, rule_id, transition, from_state, to_state, tier, value, limit_value, by_user, why) " +
          "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
      ),
      insertEvent: db.prepare("INSERT INTO plant_events (at_ms, kind, name, body) VALUES (?, ?, ?, ?)"),
      findSeries: db.prepare("SELECT id FROM series WHERE kind = ? AND name = ?").pluck(),
      insertSeries: db.prepare("INSERT INTO series (kind, name) VALUES (?, ?)"),
      seriesNames: db.prepare("SELECT name FROM series WHERE kind = ? ORDER BY name").pluck(),
    };
    this.writeBatchTx = db.transaction((nT: number, nD: number, nS: number) => this.writeRows(nT, nD, nS));
    this.sealTx = db.transaction((items: SealItem[], allDue: boolean) => this.tables.seal(items, allDue));
    const av = db.pragma("auto_vacuum", { simple: true }) as number;
    this.autoVacuum = av === 2 ? "incremental" : av === 1 ? "full" : "none";
    this.tables.loadRecent(this.recent);
  }

  /** Creates missing folders, opens the file, switches to WAL and applies pending migrations. */
  static open(opts: HistorianOptions): Historian {
    const o = validateOptions(opts);
    const inMemory = o.path === ":memory:";
    const shownPath = inMemory ? o.path : resolve(o.path);
    if (!inMemory) {
      try {
        mkdirSync(dirname(shownPath), { recursive: true });
      } catch (err) {
        throw new HistorianOpenError(shownPath, `cannot create its folder "${dirname(shownPath)}": ${describe(err)}`, { cause: err });
      }
    }
    let db: Db | null = null;
    try {
      db = new Database(shownPath);
      db.pragma(`busy_timeout = ${o.busyTimeoutMs}`);
      // Check what the file is before changing anything in it (WAL mode is written to the header).
      const version = identify(db, shownPath);
      // Only possible before the first table exists (sqlite.org/pragma.html#pragma_auto_vacuum):
      // a file made by an older build needs one VACUUM for it (Historian.vacuum()).
      if (version === 0) db.pragma("auto_vacuum = INCREMENTAL");
      if (!inMemory) {
        const mode = db.pragma("journal_mode = WAL", { simple: true });
        if (mode !== "wal") throw new HistorianOpenError(shownPath, `could not switch to WAL journal mode (SQLite kept "${String(mode)}")`);
      }
      db.pragma(`synchronous = ${o.synchronous}`);
      // After a checkpoint, truncate the -wal file back to this size so that one burst does not leave it large.
      db.pragma(`journal_size_limit = ${64 * 1024 * 1024}`);
      if (o.maxPageCount !== undefined) db.pragma(`max_page_count = ${o.maxPageCount}`);
      if (o.cacheSizeKiB !== undefined) db.pragma(`cache_size = -${o.cacheSizeKiB}`);
      const backup = migrate(db, version, o.nowMs, shownPath);
      const h = new Historian(db, shownPath, o);
      h.migrationBackup = backup;
      return h;
    } catch (err) {
      db?.close();
      if (err instanceof HistorianOpenError) throw err;
      const code = (err as { code?: unknown }).code;
      const detail =
        code === "SQLITE_NOTADB"
          ? `the file is not an SQLite database (${describe(err)})`
          : code === "SQLITE_CANTOPEN"
            ? `SQLite cannot open the file: is it a folder, or are permissions missing? (${describe(err)})`
            : describe(err);
      throw new HistorianOpenError(shownPath, detail, { cause: err });
    }
  }

  appendSample(s: Sample): void {
    this.assertOpen("appendSample");
    checkSample(s);
    this.samplesQ.push(s);
    this.enforceQueueBound();
  }

  appendDerived(d: DerivedValue): void {
    this.assertOpen("appendDerived");
    checkDerived(d);
    this.derivedQ.push(d);
    this.enforceQueueBound();
  }

  appendTransition(t: AdvisoryTransition): void {
    this.assertOpen("appendTransition");
    checkTransition(t);
    this.transitionsQ.push(t);
    this.enforceQueueBound();
  }

  /** A nuisance event or a state change; written with the advisory transitions. */
  appendEvent(e: PlantEvent): void {
    this.assertOpen("appendEvent");
    if (e === null || typeof e !== "object" || (e.kind !== "nuisance" && e.kind !== "state"))
      throw new TypeError(`Historian.appendEvent: expected a NuisanceEvent or StateChange object, found ${show(e)}`);
    checkTime("appendEvent", "atMs", e.atMs, e.kind);
    this.transitionsQ.push(e);
    this.enforceQueueBound();
  }

  /** Plant events in time order (ties in the order they were appended). */
  events(fromMs = Number.MIN_SAFE_INTEGER, toMs = Number.MAX_SAFE_INTEGER): PlantEvent[] {
    this.assertOpen("events");
    const rows = this.db.prepare("SELECT body FROM plant_events WHERE at_ms >= ? AND at_ms <= ? ORDER BY at_ms, id").pluck().all(Math.trunc(fromMs), Math.trunc(toMs)) as string[];
    return rows.map((b) => JSON.parse(b) as PlantEvent);
  }

  /**
   * Replace the stored advisory states with `states` (what a restart restores), in one
   * transaction, at once: they are few and they must not wait for a batch. Returns the
   * error text instead of throwing (the historian turns degraded; the core goes on).
   */
  saveAdvisoryStates(states: readonly PersistedAdvisory[], atMs: number): string | null {
    this.assertOpen("saveAdvisoryStates");
    try {
      this.db.transaction(() => {
        this.db.prepare("DELETE FROM advisory_state").run();
        const ins = this.db.prepare("INSERT INTO advisory_state (advisory_id, body, updated_at_ms) VALUES (?, ?, ?)");
        for (const p of states) ins.run(p.id, JSON.stringify(p), Math.trunc(atMs));
      })();
      return null;
    } catch (err) {
      this.lastError = `saving advisory states: ${describe(err)}`;
      return this.lastError;
    }
  }

  /**
   * The advisory states stored before a restart. Rows that cannot be read are listed in
   * `unreadable` (by advisory id), never thrown: a restart must not fail on them. `shelvedAtStop`
   * lists the advisories whose last transition left them shelved, so that a shelve whose state
   * was lost can be ended visibly.
   */
  loadAdvisoryStates(): { states: PersistedAdvisory[]; unreadable: string[]; shelvedAtStop: string[] } {
    this.assertOpen("loadAdvisoryStates");
    const states: PersistedAdvisory[] = [];
    const unreadable: string[] = [];
    for (const [id, body] of this.db.prepare("SELECT advisory_id, body FROM advisory_state ORDER BY advisory_id").raw().all() as [string, string][]) {
      try {
        const p = JSON.parse(body) as PersistedAdvisory;
        if (p === null || typeof p !== "object" || p.id !== id || typeof p.ruleKey !== "string" || typeof p.alarmState !== "string") throw new Error("not an advisory state");
        states.push(p);
      } catch {
        unreadable.push(id);
      }
    }
    const shelvedAtStop = this.db
      .prepare(
        "SELECT t.advisory_id FROM advisory_transitions t JOIN (SELECT advisory_id, MAX(id) AS id FROM advisory_transitions GROUP BY advisory_id) l ON t.id = l.id WHERE t.to_state = 'shelved' ORDER BY t.advisory_id",
      )
      .pluck()
      .all() as string[];
    return { states, unreadable, shelvedAtStop };
  }

  /** Local accounts and the audit log in this file (src/store/accounts.ts); writes go straight to the file. */
  accounts(): AccountStore {
    this.assertOpen("accounts");
    return (this.accountStore ??= new AccountStore(this.db));
  }

  /** Writes everything queued, one transaction per batch. Never throws for a database failure. */
  flush(): void {
    if (this.closed) return;
    const t0 = this.now();
    while (this.queueDepth() > 0) {
      if (!this.writeOneBatch()) return;
    }
    this.lastFlushMs = this.now();
    this.lastFlushDurationMs = this.lastFlushMs - t0;
    if (this.recent.rows > this.o.maxRecentRows) this.sealOverflow();
  }

  /** Starts the periodic flush; the timer does not keep the process alive. maintain() is the caller's. */
  start(): void {
    this.assertOpen("start");
    if (this.timer) return;
    this.timer = setInterval(() => this.flush(), this.o.flushIntervalMs);
    this.timer.unref();
  }

  /** Stops the periodic flush and flushes what is queued. */
  stop(): void {
    if (this.timer) {
      clearInterval(this.timer);
      this.timer = null;
    }
    this.flush();
  }

  /**
   * Stops, flushes and closes the file. Rows that still cannot be written (degraded) are
   * counted in droppedRows; stats() stays readable afterwards. Unsealed rows stay in the file
   * and are sealed by a later maintain().
   */
  close(): void {
    if (this.closed) return;
    this.stop();
    const left = this.queueDepth();
    if (left > 0) {
      this.droppedRows += left;
      this.samplesQ.clear();
      this.derivedQ.clear();
      this.transitionsQ.clear();
    }
    this.closed = true;
    this.db.close();
  }

  /**
   * The housekeeping, with the time passed in (wall clock, or the data's clock in replay):
   * flush; seal when sealIntervalS has passed since the last seal; delete expired data and
   * keep to the disk budget; give free pages back in small steps. Never throws for a database
   * failure: the historian turns degraded and the next call retries.
   */
  maintain(nowMs: number): MaintainReport {
    this.assertOpen("maintain");
    checkTime("maintain", "nowMs", nowMs, "the time to maintain at");
    this.flush();
    const report: MaintainReport = { sealedRows: 0, chunksWritten: 0, prunedChunks: 0, prunedRollups: 0, vacuumedPages: 0, overBudget: false, error: null };
    try {
      if (this.lastSealMs === null || nowMs - this.lastSealMs >= this.o.sealIntervalS * 1000) {
        const r = this.sealBefore(minuteOf(nowMs - this.o.sealAgeS * 1000));
        report.sealedRows = r.rows;
        report.chunksWritten = r.chunks;
        this.lastSealMs = nowMs;
      }
      this.prune(nowMs, report);
      report.vacuumedPages = this.vacuumStep();
      this.measure();
      report.overBudget = this.overBudget;
      this.maintainError = null;
      this.lastMaintainMs = nowMs;
    } catch (err) {
      this.failedMaintains++;
      this.maintainError = describe(err);
      this.lastError = this.maintainError;
      report.error = this.maintainError;
    }
    return report;
  }

  /**
   * Rewrites the whole file once (VACUUM), switching on incremental auto-vacuum if it was off
   * (files created by schema version 1). Blocks for as long as it takes (seconds per GB) and
   * needs free disk space of about the file's size: for the command line, not a running daemon.
   */
  vacuum(): void {
    this.assertOpen("vacuum");
    this.flush();
    this.db.pragma("auto_vacuum = INCREMENTAL");
    this.db.exec("VACUUM");
    const av = this.db.pragma("auto_vacuum", { simple: true }) as number;
    this.autoVacuum = av === 2 ? "incremental" : av === 1 ? "full" : "none";
    this.measure();
  }

  /** Samples of one signal with fromMs ≤ source time ≤ toMs, ascending; at most maxRows (the earliest). */
  samples(signal: string, fromMs: number, toMs: number, maxRows?: number): SamplePoint[] {
    this.assertOpen("samples");
    const limit = checkRange("samples", fromMs, toMs, maxRows);
    const id = this.lookupSeries("signal", signal);
    if (id === undefined) return [];
    const p = this.tables.readPoints(id, this.recent.get(id), fromMs, toMs, limit);
    const out: SamplePoint[] = [];
    for (let i = 0; i < p.timesMs.length; i++) {
      const v = p.values[i] as number;
      out.push({ tMs: p.timesMs[i] as number, value: Number.isNaN(v) ? null : v, quality: QUALITY_BY_CODE[p.quality[i] as number] ?? "bad" });
    }
    return out;
  }

  /** Derived values of one key with fromMs ≤ atMs ≤ toMs, ascending; at most maxRows (the earliest). */
  derived(key: string, fromMs: number, toMs: number, maxRows?: number): DerivedPoint[] {
    this.assertOpen("derived");
    const limit = checkRange("derived", fromMs, toMs, maxRows);
    const id = this.lookupSeries("derived", key);
    if (id === undefined) return [];
    const p = this.tables.readPoints(id, this.recent.get(id), fromMs, toMs, limit);
    const out: DerivedPoint[] = [];
    for (let i = 0; i < p.timesMs.length; i++) {
      const v = p.values[i] as number;
      out.push({ tMs: p.timesMs[i] as number, value: Number.isNaN(v) ? null : v, status: STATUS_BY_CODE[p.quality[i] as number] ?? "unknown" });
    }
    return out;
  }

  /**
   * A trend of a signal (or, when no signal has that id, a derived key) over [fromMs, toMs]
   * in about `points` points. Raw data when the range holds at most 10 × points raw points,
   * else the 1-minute roll-ups (and, for the unsealed end, roll-ups computed on the spot);
   * reduced with LTTB to about `points`, each reduced point with the min and max it stands
   * for. Where the raw points have expired, roll-ups fill the start of a raw trend.
   * An unknown series gives no points.
   */
  trend(series: string, fromMs: number, toMs: number, points: number): HistorianTrend {
    this.assertOpen("trend");
    checkTime("trend", "fromMs", fromMs, `series "${String(series)}"`);
    checkTime("trend", "toMs", toMs, `series "${String(series)}"`);
    if (!Number.isSafeInteger(points) || points < 3) throw new RangeError(`Historian.trend: expected points to be a whole number ≥ 3, found ${show(points)}`);
    let kind: SeriesKind = "signal";
    let id = this.lookupSeries("signal", series);
    if (id === undefined) {
      kind = "derived";
      id = this.lookupSeries("derived", series);
    }
    if (id === undefined || fromMs > toMs) return { source: "raw", points: [] };
    const names = kind === "signal" ? QUALITY_BY_CODE : STATUS_BY_CODE;
    const name = (code: number): Quality | "ok" | "unknown" => names[code] ?? (kind === "signal" ? "bad" : "unknown");
    const recent = this.recent.get(id);

    const limit = 10 * points;
    const unsealed = recent === undefined ? 0 : Math.max(0, recent.upperBound(toMs) - recent.lowerBound(fromMs));
    const raw = unsealed > limit ? unsealed : unsealed + this.tables.countSealed(id, fromMs, toMs, limit - unsealed);

    let input: TrendInput;
    let source: HistorianTrend["source"];
    if (raw > limit) {
      source = "rollup";
      input = this.rollupInput(id, kind, recent, fromMs, toMs);
    } else {
      source = "raw";
      const p = this.tables.readPoints(id, recent, fromMs, toMs, -1);
      const rawStart = p.timesMs.length > 0 ? (p.timesMs[0] as number) : Number.POSITIVE_INFINITY;
      // Expired raw data: the roll-ups of the minutes before the first raw point.
      const before = rawStart > fromMs ? this.tables.readRollups(id, minuteOf(fromMs), Math.min(toMs, rawStart - MINUTE_MS)) : [];
      input = trendInput(before, p, kind);
    }
    const out = downsample(input, points).map((x) => ({ tMs: x.tMs, value: x.value, ...(x.min !== undefined ? { min: x.min, max: x.max } : {}), quality: name(x.code) }));
    return { source, points: out as HistorianTrendPoint[] };
  }

  /** Sealed 1-minute roll-ups of a signal (or derived key) for minutes starting in [fromMs, toMs]. */
  rollups(series: string, fromMs: number, toMs: number): RollupPoint[] {
    this.assertOpen("rollups");
    checkRange("rollups", fromMs, toMs, undefined);
    let kind: SeriesKind = "signal";
    let id = this.lookupSeries("signal", series);
    if (id === undefined) {
      kind = "derived";
      id = this.lookupSeries("derived", series);
    }
    if (id === undefined) return [];
    const names = kind === "signal" ? QUALITY_BY_CODE : STATUS_BY_CODE;
    return this.tables.readRollups(id, fromMs, toMs).map((r) => ({ ...r, quality: names[r.quality] ?? (kind === "signal" ? "bad" : "unknown") }));
  }

  /**
   * The samples of [fromMs, toMs] in the history exchange format (CSV, header
   * "time,signal,value,quality"), one line at a time without line ends, in time order
   * (equal times by signal id). Streams: memory stays small whatever the range. All signals
   * with history by default; a signal without history gives no lines. Reads flushed data;
   * rows flushed or sealed while the iteration runs may or may not appear, each at most once.
   */
  exportCsv(fromMs: number, toMs: number, signals?: readonly string[]): Generator<string, void, undefined> {
    this.assertOpen("exportCsv");
    checkRange("exportCsv", fromMs, toMs, undefined);
    if (signals !== undefined && (!Array.isArray(signals) || signals.some((s) => typeof s !== "string"))) {
      throw new TypeError(`Historian.exportCsv: expected signals to be an array of signal ids, found ${show(signals)}`);
    }
    const names = [...new Set(signals ?? this.knownSignals())].sort();
    const series: { name: string; id: number; recent: SeriesBuffer | undefined }[] = [];
    for (const name of names) {
      const id = this.lookupSeries("signal", name);
      if (id !== undefined) series.push({ name, id, recent: this.recent.get(id) });
    }
    const lines = exportLines(this.tables, series, fromMs, toMs);
    // Refuse to go on once the historian is closed, with a clear error rather than SQLite's.
    const assertOpen = (): void => this.assertOpen("exportCsv");
    return (function* () {
      for (;;) {
        assertOpen();
        const r = lines.next();
        if (r.done === true) return;
        yield r.value;
      }
    })();
  }

  /** Advisory transitions in time order (ties in the order they were appended). */
  transitions(opts: TransitionQuery = {}): AdvisoryTransition[] {
    this.assertOpen("transitions");
    const where: string[] = [];
    const params: (number | string)[] = [];
    if (opts.fromMs !== undefined) {
      checkBound("transitions", "fromMs", opts.fromMs);
      where.push("at_ms >= ?");
      params.push(opts.fromMs);
    }
    if (opts.toMs !== undefined) {
      checkBound("transitions", "toMs", opts.toMs);
      where.push("at_ms <= ?");
      params.push(opts.toMs);
    }
    if (opts.advisoryId !== undefined) {
      if (typeof opts.advisoryId !== "string") throw new TypeError(`Historian.transitions: expected advisoryId to be a string, found ${show(opts.advisoryId)}`);
      where.push("advisory_id = ?");
      params.push(opts.advisoryId);
    }
    const limit = opts.limit ?? 1000;
    checkLimit("transitions", "limit", limit);
    params.push(limit);
    const dir = opts.newestFirst ? "DESC" : "ASC";
    const sql =
      "SELECT at_ms, advisory_id, rule_id, transition, from_state, to_state, tier, value, limit_value, by_user, why FROM advisory_transitions" +
      (where.length ? ` WHERE ${where.join(" AND ")}` : "") +
      ` ORDER BY at_ms ${dir}, id ${dir} LIMIT ?`;
    let stmt = this.transitionQueries.get(sql);
    if (!stmt) {
      stmt = this.db.prepare(sql).raw();
      this.transitionQueries.set(sql, stmt);
    }
    const rows = stmt.all(...params) as [number, string, string, string, string, string, string, number | null, number | null, string, string][];
    return rows.map(([atMs, advisoryId, ruleId, transition, from, to, tier, value, limit, by, why]) => ({
      kind: "advisory",
      atMs,
      advisoryId,
      ruleId,
      // The columns hold only what appendTransition accepted from the typed contract.
      transition: transition as AdvisoryTransition["transition"],
      from: from as AdvisoryTransition["from"],
      to: to as AdvisoryTransition["to"],
      tier: tier as AdvisoryTransition["tier"],
      value,
      // A NaN limit was stored as NULL; give back NaN to keep the number type.
      limit: limit ?? Number.NaN,
      by,
      why,
    }));
  }

  /** Signal ids with at least one flushed sample, sorted. */
  /** Source time of the newest stored sample of any signal, or null when there is none. */
  lastSampleTimeMs(): number | null {
    this.assertOpen("lastSampleTimeMs");
    const fromChunks = this.db.prepare("SELECT max(c.t_last_ms) FROM chunks c JOIN series s ON s.id = c.series_id WHERE s.kind = 'signal'").pluck().get() as number | null;
    let last = fromChunks;
    // Unsealed rows: committed ones are mirrored in memory (RecentIndex), queued ones not yet written.
    const fromRecent = this.db.prepare("SELECT max(r.t_ms) FROM recent r JOIN series s ON s.id = r.series_id WHERE s.kind = 'signal'").pluck().get() as number | null;
    if (fromRecent !== null && (last === null || fromRecent > last)) last = fromRecent;
    return last;
  }

  knownSignals(): string[] {
    this.assertOpen("knownSignals");
    return this.st.seriesNames.all("signal") as string[];
  }

  /** Derived keys with at least one flushed value, sorted. */
  knownDerivedKeys(): string[] {
    this.assertOpen("knownDerivedKeys");
    return this.st.seriesNames.all("derived") as string[];
  }

  stats(): HistorianStats {
    const degraded = this.flushError !== null || this.maintainError !== null;
    return {
      state: degraded ? "degraded" : "ok",
      queueDepth: this.queueDepth(),
      rowsWritten: this.rowsWritten,
      droppedRows: this.droppedRows,
      duplicateRows: this.duplicateRows,
      failedBatches: this.failedBatches,
      lastFlushMs: this.lastFlushMs,
      lastFlushDurationMs: this.lastFlushDurationMs,
      lastError: degraded ? this.lastError : null,
      recentRows: this.recent.rows,
      sealedRows: this.sealedRows,
      failedMaintains: this.failedMaintains,
      lastSealMs: this.lastSealMs,
      lastMaintainMs: this.lastMaintainMs,
      prunedChunks: this.prunedChunks,
      prunedRollups: this.prunedRollups,
      dataBytes: this.dataBytes,
      fileBytes: this.fileBytes,
      maxDatabaseBytes: this.o.maxDatabaseBytes,
      overBudget: this.overBudget,
      autoVacuum: this.autoVacuum,
    };
  }

  /** Changes PRAGMA max_page_count on this connection; returns the limit SQLite applied (never below the current size). */
  setMaxPageCount(pages: number): number {
    this.assertOpen("setMaxPageCount");
    checkLimit("setMaxPageCount", "pages", pages);
    return this.db.pragma(`max_page_count = ${pages}`, { simple: true }) as number;
  }

  // ---- internals: writing ----

  private queueDepth(): number {
    return this.samplesQ.length + this.derivedQ.length + this.transitionsQ.length;
  }

  private enforceQueueBound(): void {
    // At most one row over the bound per append, so this drops one row: O(1).
    while (this.queueDepth() > this.o.maxQueueRows) {
      // Samples go first: they are the bulk and the least valuable one by one; the advisory
      // audit trail goes last.
      if (this.samplesQ.length > 0) this.samplesQ.dropFirst(1);
      else if (this.derivedQ.length > 0) this.derivedQ.dropFirst(1);
      else this.transitionsQ.dropFirst(1);
      this.droppedRows++;
    }
  }

  /** Writes the oldest rows of each queue in one transaction. True when it committed. */
  private writeOneBatch(): boolean {
    let room = this.o.maxBatchRows;
    const nT = Math.min(this.transitionsQ.length, room);
    room -= nT;
    const nD = Math.min(this.derivedQ.length, room);
    room -= nD;
    const nS = Math.min(this.samplesQ.length, room);
    const pend = this.pendingRows(nD + nS);
    try {
      // IMMEDIATE takes the write lock at BEGIN, so a busy file fails before any work is done.
      this.writeBatchTx.immediate(nT, nD, nS);
    } catch (err) {
      // The transaction was rolled back, series ids it assigned included.
      this.seriesIds.signal.clear();
      this.seriesIds.derived.clear();
      this.failedBatches++;
      this.flushError = describe(err);
      this.lastError = this.flushError;
      return false;
    }
    this.transitionsQ.dropFirst(nT);
    this.derivedQ.dropFirst(nD);
    this.samplesQ.dropFirst(nS);
    this.rowsWritten += nT + nD + nS;
    for (let i = 0; i < pend.n; i++) {
      const kind: SeriesKind = pend.kind[i] === 0 ? "signal" : "derived";
      if (this.recent.put(pend.id[i] as number, kind, pend.t[i] as number, pend.v[i] as number, pend.q[i] as number)) this.duplicateRows++;
    }
    this.flushError = null;
    return true;
  }

  private pendingRows(n: number): NonNullable<Historian["pending"]> {
    if (this.pending === null || this.pending.id.length < n) {
      const cap = Math.max(n, 256);
      this.pending = { id: new Int32Array(cap), kind: new Uint8Array(cap), t: new Float64Array(cap), v: new Float64Array(cap), q: new Uint8Array(cap), n: 0 };
    }
    this.pending.n = 0;
    return this.pending;
  }

  /** Runs inside the batch transaction. */
  private writeRows(nT: number, nD: number, nS: number): void {
    const st = this.st;
    const pend = this.pending as NonNullable<Historian["pending"]>;
    for (let i = 0; i < nT; i++) {
      const t = this.transitionsQ.at(i);
      if (t.kind !== "advisory") {
        st.insertEvent.run(Math.trunc(t.atMs), t.kind, t.kind === "state" ? t.key : t.type, JSON.stringify(t));
        continue;
      }
      st.insertTransition.run(
        Math.trunc(t.atMs),
        t.advisoryId,
        t.ruleId,
        t.transition,
        t.from,
        t.to,
        t.tier,
        dbValue(t.value),
        dbValue(t.limit),
        t.by,
        t.why,
      );
    }
    let k = 0;
    for (let i = 0; i < nD; i++) {
      const d = this.derivedQ.at(i);
      const id = this.seriesId("derived", d.key);
      const tMs = Math.trunc(d.atMs);
      const value = d.value !== null && Number.isFinite(d.value) ? d.value : Number.NaN;
      const code = STATUS_CODE[d.status];
      pend.id[k] = id;
      pend.kind[k] = 1;
      pend.t[k] = tMs;
      pend.v[k] = value;
      pend.q[k] = code;
      k++;
    }
    for (let i = 0; i < nS; i++) {
      const s = this.samplesQ.at(i);
      const id = this.seriesId("signal", s.signal);
      const tMs = Math.trunc(s.sourceTimeMs);
      const value = Number.isFinite(s.value) ? s.value : Number.NaN;
      const code = QUALITY_CODE[s.quality];
      pend.id[k] = id;
      pend.kind[k] = 0;
      pend.t[k] = tMs;
      pend.v[k] = value;
      pend.q[k] = code;
      k++;
    }
    pend.n = k;
    // In queue order: derived values, then samples (a later write of a time wins, in the file too).
    this.tables.insertRecent(pend.id, pend.t, pend.v, pend.q, k);
  }

  /** The id of a series, assigned on first use (inside the batch transaction). */
  private seriesId(kind: SeriesKind, name: string): number {
    const cache = this.seriesIds[kind];
    let id = cache.get(name);
    if (id === undefined) {
      id = (this.st.findSeries.get(kind, name) as number | undefined) ?? Number(this.st.insertSeries.run(kind, name).lastInsertRowid);
      cache.set(name, id);
    }
    return id;
  }

  /** The id of an existing series, or undefined; never assigns one. */
  private lookupSeries(kind: SeriesKind, name: string): number | undefined {
    if (typeof name !== "string") throw new TypeError(`Historian: expected a series name (string), found ${show(name)}`);
    const cached = this.seriesIds[kind].get(name);
    if (cached !== undefined) return cached;
    // Not cached on purpose: a failed batch could roll the id back. Reads are rare.
    return this.st.findSeries.get(kind, name) as number | undefined;
  }

  // ---- internals: sealing, retention, space ----

  /**
   * Seals every unsealed point with a time before horizonMs (minute-aligned), in
   * transactions of at most MAX_SEAL_ROWS rows. Throws what SQLite throws; what committed
   * before stays committed and leaves the in-memory copy.
   */
  private sealBefore(horizonMs: number): { rows: number; chunks: number } {
    const total = { rows: 0, chunks: 0 };
    for (;;) {
      const due: { b: SeriesBuffer; count: number }[] = [];
      for (const b of this.recent.series()) {
        if (b.len > 0 && (b.t[0] as number) < horizonMs) due.push({ b, count: b.lowerBound(horizonMs) });
      }
      if (due.length === 0) return total;
      const items: SealItem[] = [];
      let rows = 0;
      let allDue = true;
      for (const { b, count } of due) {
        if (rows > 0 && rows + count > MAX_SEAL_ROWS) {
          allDue = false;
          break;
        }
        let cutMs = horizonMs;
        let n = count;
        if (n > MAX_SEAL_ROWS) {
          // One series with a long backlog: whole minutes up to about MAX_SEAL_ROWS points.
          cutMs = Math.max(minuteOf(b.t[MAX_SEAL_ROWS] as number), minuteOf(b.t[0] as number) + MINUTE_MS);
          n = b.lowerBound(cutMs);
          allDue = false;
        }
        items.push({ buffer: b, cutMs, count: n });
        rows += n;
      }
      const r = this.sealTx.immediate(items, allDue);
      this.tables.noteSealed(r.marks);
      for (const it of items) this.recent.dropFirst(it.buffer, it.count);
      this.sealedRows += r.rows;
      this.duplicateRows += r.duplicates;
      total.rows += r.rows;
      total.chunks += r.chunksWritten;
    }
  }

  /**
   * flush() found too many unsealed rows: seal by the data's own clock. Failures degrade like
   * maintain(), and the next try waits OVERFLOW_RETRY_MS, so that a failing seal does not run
   * at every flush.
   */
  private sealOverflow(): void {
    const newest = this.recent.newestMs();
    if (newest === null || this.now() < this.overflowRetryAtMs) return;
    try {
      this.sealBefore(minuteOf(newest - this.o.sealAgeS * 1000));
      this.maintainError = null;
    } catch (err) {
      this.failedMaintains++;
      this.maintainError = describe(err);
      this.lastError = this.maintainError;
      this.overflowRetryAtMs = this.now() + OVERFLOW_RETRY_MS;
    }
  }

  /**
   * Retention and budget: deletes expired chunks (last point older than rawRetentionDays),
   * oldest first, then expired roll-ups (minute ended longer than rollupRetentionDays ago),
   * oldest first; pruneStepRows per step, one step within budget, more while over it.
   */
  private prune(nowMs: number, report: MaintainReport): void {
    const rawCut = nowMs - this.o.rawRetentionDays * DAY_MS;
    // A minute [m, m + 1 min) has expired once m + 1 min ≤ the cut.
    const rollupCut = nowMs - this.o.rollupRetentionDays * DAY_MS - MINUTE_MS + 1;
    const step = this.o.pruneStepRows;
    for (;;) {
      const { chunks, rollups } = this.db.transaction(() => {
        const c = this.tables.deleteExpiredChunks(rawCut, step);
        const r = c < step ? this.tables.deleteExpiredRollups(rollupCut, step - c) : 0;
        return { chunks: c, rollups: r };
      }).immediate();
      report.prunedChunks += chunks;
      report.prunedRollups += rollups;
      this.prunedChunks += chunks;
      this.prunedRollups += rollups;
      this.measure();
      if (chunks + rollups === 0 || !this.overBudget) return;
    }
  }

  /** Gives free pages beyond a reserve back to the file system, at most vacuumStepPages. */
  private vacuumStep(): number {
    if (this.autoVacuum !== "incremental" || this.o.vacuumStepPages === 0) return 0;
    const free = this.db.pragma("freelist_count", { simple: true }) as number;
    const n = Math.min(this.o.vacuumStepPages, free - this.o.vacuumReservePages);
    if (n <= 0) return 0;
    this.db.pragma(`incremental_vacuum(${n})`);
    return free - (this.db.pragma("freelist_count", { simple: true }) as number);
  }

  /** Updates dataBytes, fileBytes and overBudget. */
  private measure(): void {
    const pageSize = this.db.pragma("page_size", { simple: true }) as number;
    const pages = this.db.pragma("page_count", { simple: true }) as number;
    const free = this.db.pragma("freelist_count", { simple: true }) as number;
    this.fileBytes = pages * pageSize;
    this.dataBytes = (pages - free) * pageSize;
    this.overBudget = this.o.maxDatabaseBytes !== null && this.dataBytes > this.o.maxDatabaseBytes;
  }

  // ---- internals: trends ----

  /** Roll-ups of [fromMs, toMs]: sealed ones, and for minutes without one, computed from unsealed points. */
  private rollupInput(id: number, kind: SeriesKind, recent: SeriesBuffer | undefined, fromMs: number, toMs: number): TrendInput {
    const sealed = this.tables.readRollups(id, minuteOf(fromMs), toMs);
    let extra: MinuteRollup[] = [];
    if (recent !== undefined && recent.len > 0) {
      const a = recent.lowerBound(minuteOf(fromMs));
      const b = recent.upperBound(toMs);
      if (a < b) {
        const have = new Set(sealed.map((r) => r.tMinuteMs));
        // A late point in a sealed minute waits for the next seal: the sealed roll-up stands.
        extra = rollupMinutes({ timesMs: recent.t, values: recent.v, quality: recent.q }, a, b, UNUSABLE_CODE[kind]).filter((r) => !have.has(r.tMinuteMs));
      }
    }
    const all = extra.length === 0 ? sealed : [...sealed, ...extra].sort((x, y) => x.tMinuteMs - y.tMinuteMs);
    return trendInput(all, null, kind);
  }

  private assertOpen(method: string): void {
    if (this.closed) throw new Error(`Historian.${method}: the historian on "${this.path}" is closed`);
  }
}

/**
 * Trend input: roll-ups (value = mean, band = min..max), then raw points (band = the value
 * itself when usable; a bad / unknown value does not widen a band).
 */
function trendInput(rollups: readonly MinuteRollup[], raw: Points | null, kind: SeriesKind): TrendInput {
  const nr = rollups.length;
  const n = nr + (raw?.timesMs.length ?? 0);
  const input: TrendInput = { t: new Float64Array(n), v: new Float64Array(n), lo: new Float64Array(n), hi: new Float64Array(n), q: new Uint8Array(n), rollups: nr };
  rollups.forEach((r, i) => {
    const has = r.count > 0 && r.sum !== null && r.min !== null && r.max !== null;
    input.t[i] = r.tMinuteMs;
    input.v[i] = has ? (r.sum as number) / r.count : Number.NaN;
    input.lo[i] = has ? (r.min as number) : Number.NaN;
    input.hi[i] = has ? (r.max as number) : Number.NaN;
    input.q[i] = r.quality;
  });
  if (raw !== null) {
    const unusable = UNUSABLE_CODE[kind];
    input.t.set(raw.timesMs, nr);
    input.v.set(raw.values, nr);
    input.q.set(raw.quality, nr);
    for (let i = 0; i < raw.timesMs.length; i++) {
      const v = raw.values[i] as number;
      const usable = !Number.isNaN(v) && (raw.quality[i] as number) < unusable;
      input.lo[nr + i] = usable ? v : Number.POSITIVE_INFINITY;
      input.hi[nr + i] = usable ? v : Number.NEGATIVE_INFINITY;
    }
  }
  return input;
}

// ---- opening and migrations ----

/** Returns the schema version of a millwarden file (0 for an empty file); throws for anything else. */
function identify(db: Db, path: string): number {
  const tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").pluck().all() as string[];
  if (tables.length === 0) return 0;
  const found = tables.slice(0, 8).join(", ") + (tables.length > 8 ? ", ..." : "");
  const application = tables.includes("meta")
    ? (db.prepare("SELECT value FROM meta WHERE key = 'application'").pluck().get() as string | undefined)
    : undefined;
  if (application !== APPLICATION_NAME || !tables.includes("schema_migrations")) {
    throw new HistorianOpenError(
      path,
      `it is an SQLite database but not a millwarden historian (expected tables meta with application = "${APPLICATION_NAME}" and schema_migrations; found tables: ${found})`,
    );
  }
  const version = (db.prepare("SELECT max(version) FROM schema_migrations").pluck().get() as number | null) ?? 0;
  if (version > LATEST_SCHEMA_VERSION) {
    throw new HistorianOpenError(
      path,
      `its schema version is ${version}, newer than this build of millwarden knows (up to ${LATEST_SCHEMA_VERSION}); open it with a newer millwarden`,
    );
  }
  return version;
}

/**
 * Apply the migrations after `fromVersion`. A file that holds data (version ≥ 1) is first copied
 * whole with VACUUM INTO (sqlite.org/lang_vacuum.html#vacuuminto: a consistent, compacted copy
 * made from inside the open connection) to "<file>.v<from>-backup-<time>.db" beside it, so an
 * upgrade that goes wrong can be undone by putting the copy back.
 */
function migrate(db: Db, fromVersion: number, nowMs: () => number, path: string): string | null {
  let backup: string | null = null;
  if (fromVersion >= 1 && fromVersion < LATEST_SCHEMA_VERSION && path !== ":memory:") {
    const stamp = new Date(nowMs()).toISOString().replace(/[-:]/g, "").replace(/\.\d+Z$/, "Z");
    backup = `${path}.v${fromVersion}-backup-${stamp}.db`;
    db.prepare("VACUUM INTO ?").run(backup);
  }
  for (const m of MIGRATIONS) {
    if (m.version <= fromVersion) continue;
    db.transaction(() => {
      if (m.version === 1) db.exec(SCHEMA_MIGRATIONS_SQL);
      db.exec(m.sql);
      m.run?.(db);
      if (m.version === 1) {
        const meta = db.prepare("INSERT INTO meta (key, value) VALUES (?, ?)");
        meta.run("application", APPLICATION_NAME);
        meta.run("created_at_ms", String(nowMs()));
      }
      db.prepare("INSERT INTO schema_migrations (version, description, applied_at_ms) VALUES (?, ?, ?)").run(m.version, m.description, nowMs());
      db.pragma(`user_version = ${m.version}`);
    }).immediate();
  }
  return backup;
}

// ---- validation ----

function validateOptions(opts: HistorianOptions) {
  if (opts === null || typeof opts !== "object") throw new TypeError(`Historian.open: expected an options object, found ${show(opts)}`);
  if (typeof opts.path !== "string" || opts.path.length === 0) {
    throw new TypeError(`Historian.open: expected options.path to be a non-empty file path, found ${show(opts.path)}`);
  }
  const synchronous = opts.synchronous ?? DEFAULTS.synchronous;
  if (synchronous !== "NORMAL" && synchronous !== "FULL") {
    throw new TypeError(`Historian.open: expected options.synchronous to be "NORMAL" or "FULL", found ${show(synchronous)}`);
  }
  const out = {
    path: opts.path,
    synchronous,
    flushIntervalMs: opts.flushIntervalMs ?? DEFAULTS.flushIntervalMs,
    maxBatchRows: opts.maxBatchRows ?? DEFAULTS.maxBatchRows,
    maxQueueRows: opts.maxQueueRows ?? DEFAULTS.maxQueueRows,
    busyTimeoutMs: opts.busyTimeoutMs ?? DEFAULTS.busyTimeoutMs,
    nowMs: opts.nowMs ?? Date.now,
    maxPageCount: opts.maxPageCount,
    cacheSizeKiB: opts.cacheSizeKiB,
    sealIntervalS: opts.sealIntervalS ?? DEFAULTS.sealIntervalS,
    sealAgeS: opts.sealAgeS ?? DEFAULTS.sealAgeS,
    rawRetentionDays: opts.rawRetentionDays ?? DEFAULTS.rawRetentionDays,
    rollupRetentionDays: opts.rollupRetentionDays ?? DEFAULTS.rollupRetentionDays,
    maxDatabaseBytes: opts.maxDatabaseBytes ?? null,
    maxRecentRows: opts.maxRecentRows ?? DEFAULTS.maxRecentRows,
    pruneStepRows: opts.pruneStepRows ?? DEFAULTS.pruneStepRows,
    vacuumStepPages: opts.vacuumStepPages ?? DEFAULTS.vacuumStepPages,
    vacuumReservePages: opts.vacuumReservePages ?? DEFAULTS.vacuumReservePages,
  };
  if (!(Number.isFinite(out.flushIntervalMs) && out.flushIntervalMs > 0)) {
    throw new RangeError(`Historian.open: expected options.flushIntervalMs to be a positive number of milliseconds, found ${show(out.flushIntervalMs)}`);
  }
  checkLimit("open", "options.maxBatchRows", out.maxBatchRows);
  checkLimit("open", "options.maxQueueRows", out.maxQueueRows);
  if (!(Number.isSafeInteger(out.busyTimeoutMs) && out.busyTimeoutMs >= 0)) {
    throw new RangeError(`Historian.open: expected options.busyTimeoutMs to be a whole number of milliseconds ≥ 0, found ${show(out.busyTimeoutMs)}`);
  }
  if (out.maxPageCount !== undefined) checkLimit("open", "options.maxPageCount", out.maxPageCount);
  if (out.cacheSizeKiB !== undefined) checkLimit("open", "options.cacheSizeKiB", out.cacheSizeKiB);
  if (typeof out.nowMs !== "function") throw new TypeError(`Historian.open: expected options.nowMs to be a function, found ${show(out.nowMs)}`);
  const positive = (field: string, v: unknown, unit: string): void => {
    if (typeof v !== "number" || !Number.isFinite(v) || v <= 0) throw new RangeError(`Historian.open: expected options.${field} to be a positive number of ${unit}, found ${show(v)}`);
  };
  positive("sealIntervalS", out.sealIntervalS, "seconds");
  if (typeof out.sealAgeS !== "number" || !Number.isFinite(out.sealAgeS) || out.sealAgeS < 0) {
    throw new RangeError(`Historian.open: expected options.sealAgeS to be a number of seconds ≥ 0, found ${show(out.sealAgeS)}`);
  }
  positive("rawRetentionDays", out.rawRetentionDays, "days");
  positive("rollupRetentionDays", out.rollupRetentionDays, "days");
  if (out.rollupRetentionDays < out.rawRetentionDays) {
    throw new RangeError(
      `Historian.open: expected options.rollupRetentionDays (${out.rollupRetentionDays}) to be at least rawRetentionDays (${out.rawRetentionDays}): roll-ups outlive the raw data`,
    );
  }
  if (out.maxDatabaseBytes !== null) checkLimit("open", "options.maxDatabaseBytes", out.maxDatabaseBytes);
  checkLimit("open", "options.maxRecentRows", out.maxRecentRows);
  checkLimit("open", "options.pruneStepRows", out.pruneStepRows);
  for (const field of ["vacuumStepPages", "vacuumReservePages"] as const) {
    if (!(Number.isSafeInteger(out[field]) && out[field] >= 0)) throw new RangeError(`Historian.open: expected options.${field} to be a whole number ≥ 0, found ${show(out[field])}`);
  }
  return out;
}

function checkTime(method: string, field: string, v: unknown, what: string): void {
  if (typeof v !== "number" || !Number.isFinite(v) || Math.abs(v) > MAX_ABS_TIME_MS) {
    throw new TypeError(`Historian.${method}: expected ${field} to be epoch milliseconds (a finite number), found ${show(v)} (${what})`);
  }
}

function checkName(method: string, field: string, v: unknown, what: string): void {
  if (typeof v !== "string" || v.length === 0) {
    throw new TypeError(`Historian.${method}: expected ${field} to be a non-empty string, found ${show(v)}${what ? ` (${what})` : ""}`);
  }
}

function checkText(method: string, field: string, v: unknown, what: string): void {
  if (typeof v !== "string") throw new TypeError(`Historian.${method}: expected ${field} to be a string, found ${show(v)} (${what})`);
}

function checkSample(s: Sample): void {
  if (s === null || typeof s !== "object") throw new TypeError(`Historian.appendSample: expected a Sample object, found ${show(s)}`);
  checkName("appendSample", "signal", s.signal, "");
  const what = `signal "${s.signal}"`;
  if (typeof s.value !== "number") throw new TypeError(`Historian.appendSample: expected value to be a number (NaN allowed), found ${show(s.value)} (${what})`);
  if (!Object.hasOwn(QUALITY_CODE, s.quality)) {
    throw new TypeError(`Historian.appendSample: expected quality to be "good", "uncertain" or "bad", found ${show(s.quality)} (${what})`);
  }
  checkTime("appendSample", "sourceTimeMs", s.sourceTimeMs, what);
  checkTime("appendSample", "receiveTimeMs", s.receiveTimeMs, what);
}

function checkDerived(d: DerivedValue): void {
  if (d === null || typeof d !== "object") throw new TypeError(`Historian.appendDerived: expected a DerivedValue object, found ${show(d)}`);
  checkName("appendDerived", "key", d.key, "");
  const what = `key "${d.key}"`;
  checkTime("appendDerived", "atMs", d.atMs, what);
  if (d.value !== null && typeof d.value !== "number") {
    throw new TypeError(`Historian.appendDerived: expected value to be a number or null, found ${show(d.value)} (${what})`);
  }
  if (d.status !== "ok" && d.status !== "unknown") {
    throw new TypeError(`Historian.appendDerived: expected status to be "ok" or "unknown", found ${show(d.status)} (${what})`);
  }
}

function checkTransition(t: AdvisoryTransition): void {
  if (t === null || typeof t !== "object") throw new TypeError(`Historian.appendTransition: expected an AdvisoryTransition object, found ${show(t)}`);
  checkName("appendTransition", "advisoryId", t.advisoryId, "");
  const what = `advisory "${t.advisoryId}"`;
  checkTime("appendTransition", "atMs", t.atMs, what);
  checkName("appendTransition", "ruleId", t.ruleId, what);
  checkName("appendTransition", "transition", t.transition, what);
  checkName("appendTransition", "from", t.from, what);
  checkName("appendTransition", "to", t.to, what);
  checkName("appendTransition", "tier", t.tier, what);
  if (t.value !== null && typeof t.value !== "number") {
    throw new TypeError(`Historian.appendTransition: expected value to be a number or null, found ${show(t.value)} (${what})`);
  }
  if (typeof t.limit !== "number") throw new TypeError(`Historian.appendTransition: expected limit to be a number, found ${show(t.limit)} (${what})`);
  checkText("appendTransition", "by", t.by, what);
  checkText("appendTransition", "why", t.why, what);
}

function checkBound(method: string, field: string, v: unknown): void {
  // ±Infinity is allowed: "from the beginning" / "to the end".
  if (typeof v !== "number" || Number.isNaN(v)) throw new TypeError(`Historian.${method}: expected ${field} to be epoch milliseconds, found ${show(v)}`);
}

function checkLimit(method: string, field: string, v: unknown): void {
  if (typeof v !== "number" || !Number.isSafeInteger(v) || v < 1) {
    throw new RangeError(`Historian.${method}: expected ${field} to be a whole number ≥ 1, found ${show(v)}`);
  }
}

/** Validates a range query; returns the SQL LIMIT (-1: none). */
function checkRange(method: string, fromMs: number, toMs: number, maxRows: number | undefined): number {
  checkBound(method, "fromMs", fromMs);
  checkBound(method, "toMs", toMs);
  if (maxRows === undefined) return -1;
  checkLimit(method, "maxRows", maxRows);
  return maxRows;
}

/** NaN and ±Infinity are stored as NULL: the column means "a usable number, or none". */
function dbValue(v: number | null): number | null {
  return v !== null && Number.isFinite(v) ? v : null;
}

function describe(err: unknown): string {
  if (err instanceof Error) {
    const code = (err as { code?: unknown }).code;
    return typeof code === "string" && !err.message.includes(code) ? `${code}: ${err.message}` : err.message;
  }
  return String(err);
}

function show(v: unknown): string {
  if (typeof v === "string") return JSON.stringify(v);
  if (typeof v === "number" || typeof v === "boolean" || typeof v === "bigint" || v === null || v === undefined) return String(v);
  if (typeof v === "function") return "a function";
  return Array.isArray(v) ? "an array" : "an object";
}
