// The historian: raw samples, derived values and advisory transitions in one SQLite file.
//
//   core events ──append*()──▶ in-memory queues ──flush() (timer or caller)──▶ SQLite (WAL)
//                 O(1), no I/O    bounded: oldest samples     one transaction per batch
//                                 dropped and counted         of at most maxBatchRows rows
//
// Contracts:
// - append* never blocks and never does I/O. Validation errors (a caller bug) throw at once, so
//   a bad row can never sit in the queue and fail every later flush.
// - The historian keeps the appended objects until they are written: do not mutate them.
// - flush() never throws for a database failure (disk full, I/O error, locked file): the rows
//   stay queued, stats().state turns "degraded" with lastError, and the next flush retries.
//   The first batch that commits turns the state back to "ok".
// - Reads see only what has been flushed.
// - Times are stored at 1 ms resolution (fractions are truncated). Not thread safe; one
//   Historian per file per process (other processes may read the file while it runs).
import { mkdirSync } from "node:fs";
import { dirname, resolve } from "node:path";
import Database from "better-sqlite3";
import type { AdvisoryTransition, DerivedValue, Quality, Sample } from "../core/types.js";
import { Fifo } from "./fifo.js";
import { APPLICATION_NAME, LATEST_SCHEMA_VERSION, MIGRATIONS, SCHEMA_MIGRATIONS_SQL } from "./migrations.js";

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
  /** Clock for stats and records; default Date.now. */
  nowMs?: () => number;
}

export interface HistorianStats {
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
  /** The error of the last failed batch while degraded; null when ok. */
  lastError: string | null;
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

/** The Date range: anything beyond is not an epoch-ms time. */
const MAX_ABS_TIME_MS = 8.64e15;

const DEFAULTS = {
  synchronous: "NORMAL",
  flushIntervalMs: 250,
  maxBatchRows: 5000,
  maxQueueRows: 200_000,
  busyTimeoutMs: 1000,
} as const;

type Db = Database.Database;
type Stmt = Database.Statement;
type SeriesKind = "signal" | "derived";

export class Historian {
  private readonly db: Db;
  private readonly path: string;
  private readonly flushIntervalMs: number;
  private readonly maxBatchRows: number;
  private readonly maxQueueRows: number;
  private readonly now: () => number;

  private readonly samplesQ = new Fifo<Sample>();
  private readonly derivedQ = new Fifo<DerivedValue>();
  private readonly transitionsQ = new Fifo<AdvisoryTransition>();
  /** name → series id, per kind. Cleared after a failed batch (its inserts were rolled back). */
  private readonly seriesIds: Record<SeriesKind, Map<string, number>> = { signal: new Map(), derived: new Map() };

  private readonly st: {
    insertSample: Stmt;
    updateSample: Stmt;
    insertDerived: Stmt;
    updateDerived: Stmt;
    insertTransition: Stmt;
    findSeries: Stmt;
    insertSeries: Stmt;
    samples: Stmt;
    derived: Stmt;
    seriesNames: Stmt;
  };
  private readonly writeBatchTx: Database.Transaction<(nT: number, nD: number, nS: number) => number>;
  private readonly transitionQueries = new Map<string, Stmt>();

  private timer: NodeJS.Timeout | null = null;
  private closed = false;
  private state: "ok" | "degraded" = "ok";
  private rowsWritten = 0;
  private droppedRows = 0;
  private duplicateRows = 0;
  private failedBatches = 0;
  private lastFlushMs: number | null = null;
  private lastFlushDurationMs: number | null = null;
  private lastError: string | null = null;

  private constructor(db: Db, path: string, opts: Required<Pick<HistorianOptions, "flushIntervalMs" | "maxBatchRows" | "maxQueueRows" | "nowMs">>) {
    this.db = db;
    this.path = path;
    this.flushIntervalMs = opts.flushIntervalMs;
    this.maxBatchRows = opts.maxBatchRows;
    this.maxQueueRows = opts.maxQueueRows;
    this.now = opts.nowMs;
    this.st = {
      // INSERT OR IGNORE, then UPDATE when nothing was inserted: the same end state as
      // INSERT OR REPLACE (the later write wins), but it tells us that a duplicate happened.
      insertSample: db.prepare("INSERT OR IGNORE INTO samples (signal_id, t_ms, value, quality, recv_ms) VALUES (?, ?, ?, ?, ?)"),
      updateSample: db.prepare("UPDATE samples SET value = ?, quality = ?, recv_ms = ? WHERE signal_id = ? AND t_ms = ?"),
      insertDerived: db.prepare("INSERT OR IGNORE INTO derived (series_id, t_ms, value, status) VALUES (?, ?, ?, ?)"),
      updateDerived: db.prepare("UPDATE derived SET value = ?, status = ? WHERE series_id = ? AND t_ms = ?"),
      insertTransition: db.prepare(
        "INSERT INTO advisory_transitions (at_ms, advisory_id, rule_id, transition, from_state, to_state, tier, value, limit_value, by_user, why) " +
          "VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
      ),
      findSeries: db.prepare("SELECT id FROM series WHERE kind = ? AND name = ?").pluck(),
      insertSeries: db.prepare("INSERT INTO series (kind, name) VALUES (?, ?)"),
      samples: db
        .prepare("SELECT t_ms, value, quality FROM samples WHERE signal_id = ? AND t_ms >= ? AND t_ms <= ? ORDER BY t_ms LIMIT ?")
        .raw(),
      derived: db
        .prepare("SELECT t_ms, value, status FROM derived WHERE series_id = ? AND t_ms >= ? AND t_ms <= ? ORDER BY t_ms LIMIT ?")
        .raw(),
      seriesNames: db.prepare("SELECT name FROM series WHERE kind = ? ORDER BY name").pluck(),
    };
    this.writeBatchTx = db.transaction((nT: number, nD: number, nS: number) => this.writeRows(nT, nD, nS));
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
      if (!inMemory) {
        const mode = db.pragma("journal_mode = WAL", { simple: true });
        if (mode !== "wal") throw new HistorianOpenError(shownPath, `could not switch to WAL journal mode (SQLite kept "${String(mode)}")`);
      }
      db.pragma(`synchronous = ${o.synchronous}`);
      // After a checkpoint, truncate the -wal file back to this size so that one burst does not leave it large.
      db.pragma(`journal_size_limit = ${64 * 1024 * 1024}`);
      if (o.maxPageCount !== undefined) db.pragma(`max_page_count = ${o.maxPageCount}`);
      migrate(db, version, o.nowMs);
      return new Historian(db, shownPath, o);
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

  /** Writes everything queued, one transaction per batch. Never throws for a database failure. */
  flush(): void {
    if (this.closed) return;
    const t0 = this.now();
    while (this.queueDepth() > 0) {
      if (!this.writeOneBatch()) return;
    }
    this.lastFlushMs = this.now();
    this.lastFlushDurationMs = this.lastFlushMs - t0;
  }

  /** Starts the periodic flush; the timer does not keep the process alive. */
  start(): void {
    this.assertOpen("start");
    if (this.timer) return;
    this.timer = setInterval(() => this.flush(), this.flushIntervalMs);
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
   * counted in droppedRows; stats() stays readable afterwards.
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

  /** Samples of one signal with fromMs ≤ source time ≤ toMs, ascending; at most maxRows (the earliest). */
  samples(signal: string, fromMs: number, toMs: number, maxRows?: number): SamplePoint[] {
    this.assertOpen("samples");
    const limit = checkRange("samples", fromMs, toMs, maxRows);
    const id = this.lookupSeries("signal", signal);
    if (id === undefined) return [];
    const rows = this.st.samples.all(id, fromMs, toMs, limit) as [number, number | null, number][];
    return rows.map(([tMs, value, q]) => ({ tMs, value, quality: QUALITY_BY_CODE[q] ?? "bad" }));
  }

  /** Values of one derived key with fromMs ≤ time ≤ toMs, ascending; at most maxRows (the earliest). */
  derived(key: string, fromMs: number, toMs: number, maxRows?: number): DerivedPoint[] {
    this.assertOpen("derived");
    const limit = checkRange("derived", fromMs, toMs, maxRows);
    const id = this.lookupSeries("derived", key);
    if (id === undefined) return [];
    const rows = this.st.derived.all(id, fromMs, toMs, limit) as [number, number | null, number][];
    return rows.map(([tMs, value, s]) => ({ tMs, value, status: s === STATUS_CODE.ok ? "ok" : "unknown" }));
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
    return {
      state: this.state,
      queueDepth: this.queueDepth(),
      rowsWritten: this.rowsWritten,
      droppedRows: this.droppedRows,
      duplicateRows: this.duplicateRows,
      failedBatches: this.failedBatches,
      lastFlushMs: this.lastFlushMs,
      lastFlushDurationMs: this.lastFlushDurationMs,
      lastError: this.lastError,
    };
  }

  /** Changes PRAGMA max_page_count on this connection; returns the limit SQLite applied (never below the current size). */
  setMaxPageCount(pages: number): number {
    this.assertOpen("setMaxPageCount");
    checkLimit("setMaxPageCount", "pages", pages);
    return this.db.pragma(`max_page_count = ${pages}`, { simple: true }) as number;
  }

  // ---- internals ----

  private queueDepth(): number {
    return this.samplesQ.length + this.derivedQ.length + this.transitionsQ.length;
  }

  private enforceQueueBound(): void {
    // At most one row over the bound per append, so this drops one row: O(1).
    while (this.queueDepth() > this.maxQueueRows) {
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
    let room = this.maxBatchRows;
    const nT = Math.min(this.transitionsQ.length, room);
    room -= nT;
    const nD = Math.min(this.derivedQ.length, room);
    room -= nD;
    const nS = Math.min(this.samplesQ.length, room);
    try {
      // IMMEDIATE takes the write lock at BEGIN, so a busy file fails before any work is done.
      const duplicates = this.writeBatchTx.immediate(nT, nD, nS);
      this.transitionsQ.dropFirst(nT);
      this.derivedQ.dropFirst(nD);
      this.samplesQ.dropFirst(nS);
      this.rowsWritten += nT + nD + nS;
      this.duplicateRows += duplicates;
      this.state = "ok";
      this.lastError = null;
      return true;
    } catch (err) {
      // The transaction was rolled back, series ids it assigned included.
      this.seriesIds.signal.clear();
      this.seriesIds.derived.clear();
      this.failedBatches++;
      this.state = "degraded";
      this.lastError = describe(err);
      return false;
    }
  }

  /** Runs inside the batch transaction; returns the number of duplicates it replaced. */
  private writeRows(nT: number, nD: number, nS: number): number {
    let duplicates = 0;
    const st = this.st;
    for (let i = 0; i < nT; i++) {
      const t = this.transitionsQ.at(i);
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
    for (let i = 0; i < nD; i++) {
      const d = this.derivedQ.at(i);
      const id = this.seriesId("derived", d.key);
      const tMs = Math.trunc(d.atMs);
      const value = dbValue(d.value);
      const status = STATUS_CODE[d.status];
      if (st.insertDerived.run(id, tMs, value, status).changes === 0) {
        st.updateDerived.run(value, status, id, tMs);
        duplicates++;
      }
    }
    for (let i = 0; i < nS; i++) {
      const s = this.samplesQ.at(i);
      const id = this.seriesId("signal", s.signal);
      const tMs = Math.trunc(s.sourceTimeMs);
      const value = dbValue(s.value);
      const quality = QUALITY_CODE[s.quality];
      const recvMs = Math.trunc(s.receiveTimeMs);
      if (st.insertSample.run(id, tMs, value, quality, recvMs).changes === 0) {
        st.updateSample.run(value, quality, recvMs, id, tMs);
        duplicates++;
      }
    }
    return duplicates;
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

  private assertOpen(method: string): void {
    if (this.closed) throw new Error(`Historian.${method}: the historian on "${this.path}" is closed`);
  }
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

function migrate(db: Db, fromVersion: number, nowMs: () => number): void {
  for (const m of MIGRATIONS) {
    if (m.version <= fromVersion) continue;
    db.transaction(() => {
      if (m.version === 1) db.exec(SCHEMA_MIGRATIONS_SQL);
      db.exec(m.sql);
      if (m.version === 1) {
        const meta = db.prepare("INSERT INTO meta (key, value) VALUES (?, ?)");
        meta.run("application", APPLICATION_NAME);
        meta.run("created_at_ms", String(nowMs()));
      }
      db.prepare("INSERT INTO schema_migrations (version, description, applied_at_ms) VALUES (?, ?, ?)").run(m.version, m.description, nowMs());
      db.pragma(`user_version = ${m.version}`);
    }).immediate();
  }
}

// ---- validation ----

function validateOptions(opts: HistorianOptions): Required<Omit<HistorianOptions, "maxPageCount">> & { maxPageCount?: number } {
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
    ...(opts.maxPageCount !== undefined ? { maxPageCount: opts.maxPageCount } : {}),
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
  if (typeof out.nowMs !== "function") throw new TypeError(`Historian.open: expected options.nowMs to be a function, found ${show(out.nowMs)}`);
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
