// SQL of the historian's layout (migration 2): the recent rows, the chunks and the roll-ups.
// The Historian decides when; this file knows how. Every method that writes runs inside a
// transaction opened by the caller.
//
//   recent (append-only) ──seal──▶ chunks (compressed, per series) + rollups_1m
//                                    └─ retention / budget delete the oldest first
import type Database from "better-sqlite3";
import { CHUNK_MAX_SPAN_MS, MINUTE_MS, buildChunks, decodeChunk, minuteOf, rollupMinutes, type ChunkPoints, type MinuteRollup } from "./chunk.js";
import { UNUSABLE_CODE } from "./migrations.js";
import type { RecentIndex, SeriesBuffer, SeriesKind } from "./recent.js";

type Db = Database.Database;
type Stmt = Database.Statement;

/** Bit 4 of recent.quality: the value was −0 (a REAL column keeps it as 0). */
export const NEGATIVE_ZERO_FLAG = 16;
const CODE_MASK = 3;

/** Points of one series in time order; NaN for a missing value. */
export type Points = ChunkPoints;

export interface SealItem {
  buffer: SeriesBuffer;
  /** Points with a time below this are sealed. */
  cutMs: number;
  /** How many points of the buffer that is. */
  count: number;
}

export interface SealResult {
  /** Per series, the last minute sealed: apply with noteSealed() once the transaction committed. */
  marks: [id: number, minuteMs: number][];
  rows: number;
  chunksWritten: number;
  chunksRewritten: number;
  /** Sealed points that replaced a sealed point of the same time. */
  duplicates: number;
}

/** Rows per multi-row INSERT: one statement step for many rows costs far less than a step per row. */
const INSERT_ROWS = 64;

export class Tables {
  private readonly insertParams: (number | null)[] = Array.from({ length: INSERT_ROWS * 4 }, () => null);
  private readonly st: {
    insertRecent: Stmt;
    insertRecentMany: Stmt;
    loadRecent: Stmt;
    chunksInRange: Stmt;
    chunkCounts: Stmt;
    chunkAfter: Stmt;
    overlapping: Stmt;
    deleteChunk: Stmt;
    insertChunk: Stmt;
    rollupsInRange: Stmt;
    upsertRollup: Stmt;
    deleteRecentBefore: Stmt;
    deleteRecentByCut: Stmt;
    insertCut: Stmt;
    clearCuts: Stmt;
    oldestExpiredChunks: Stmt;
    seriesIds: Stmt;
    oldestRollup: Stmt;
    deleteRollupsBefore: Stmt;
    firstChunkTime: Stmt;
    firstRollupTime: Stmt;
    lastRollupMinute: Stmt;
  };
  /**
   * Per series, the last minute with a roll-up, as far as known (loaded on first use). Every
   * sealed point lies in a minute with a roll-up, so points after that minute overlap no chunk
   * and no kept roll-up: the seal can skip looking. Deleting the oldest data leaves it valid.
   */
  private readonly lastSealedMinute = new Map<number, number>();

  constructor(private readonly db: Db) {
    // Per-series cut times of a seal that does not cover every series; in the temp database.
    db.exec("CREATE TEMP TABLE IF NOT EXISTS seal_cut (series_id INTEGER PRIMARY KEY, cut_ms INTEGER NOT NULL)");
    const rangeOnIndex = "series_id = ? AND t_last_ms >= ? AND t_last_ms <= ? AND t_first_ms <= ?";
    this.st = {
      insertRecent: db.prepare("INSERT INTO recent (series_id, t_ms, value, quality) VALUES (?, ?, ?, ?)"),
      insertRecentMany: db.prepare(`INSERT INTO recent (series_id, t_ms, value, quality) VALUES ${Array.from({ length: INSERT_ROWS }, () => "(?, ?, ?, ?)").join(", ")}`),
      loadRecent: db.prepare("SELECT r.series_id, s.kind, r.t_ms, r.value, r.quality FROM recent r JOIN series s ON s.id = r.series_id ORDER BY r.rowid").raw(),
      chunksInRange: db.prepare(`SELECT t_first_ms, n, data, quality FROM chunks WHERE ${rangeOnIndex} ORDER BY t_last_ms`).raw(),
      chunkCounts: db.prepare(`SELECT n FROM chunks WHERE ${rangeOnIndex} ORDER BY t_last_ms`).pluck(),
      chunkAfter: db
        .prepare("SELECT t_last_ms, n, data, quality FROM chunks WHERE series_id = ? AND t_last_ms > ? AND t_last_ms >= ? AND t_first_ms <= ? ORDER BY t_last_ms LIMIT 1")
        .raw(),
      overlapping: db.prepare(`SELECT id, n, data, quality FROM chunks WHERE ${rangeOnIndex} ORDER BY t_last_ms`).raw(),
      deleteChunk: db.prepare("DELETE FROM chunks WHERE id = ?"),
      insertChunk: db.prepare("INSERT INTO chunks (series_id, t_first_ms, t_last_ms, n, data, quality) VALUES (?, ?, ?, ?, ?, ?)"),
      rollupsInRange: db
        .prepare("SELECT t_minute_ms, min, max, sum, count, last, quality FROM rollups_1m WHERE series_id = ? AND t_minute_ms >= ? AND t_minute_ms <= ? ORDER BY t_minute_ms")
        .raw(),
      upsertRollup: db.prepare("INSERT OR REPLACE INTO rollups_1m (series_id, t_minute_ms, min, max, sum, count, last, quality) VALUES (?, ?, ?, ?, ?, ?, ?, ?)"),
      deleteRecentBefore: db.prepare("DELETE FROM recent WHERE t_ms < ?"),
      deleteRecentByCut: db.prepare("DELETE FROM recent WHERE t_ms < (SELECT c.cut_ms FROM temp.seal_cut c WHERE c.series_id = recent.series_id)"),
      insertCut: db.prepare("INSERT INTO temp.seal_cut (series_id, cut_ms) VALUES (?, ?)"),
      clearCuts: db.prepare("DELETE FROM temp.seal_cut"),
      oldestExpiredChunks: db.prepare("DELETE FROM chunks WHERE id IN (SELECT id FROM chunks WHERE t_last_ms < ? ORDER BY t_last_ms LIMIT ?)"),
      seriesIds: db.prepare("SELECT id FROM series ORDER BY id").pluck(),
      oldestRollup: db.prepare("SELECT t_minute_ms FROM rollups_1m WHERE series_id = ? ORDER BY t_minute_ms LIMIT 1").pluck(),
      deleteRollupsBefore: db.prepare("DELETE FROM rollups_1m WHERE series_id = ? AND t_minute_ms < ?"),
      firstChunkTime: db.prepare("SELECT t_first_ms FROM chunks WHERE series_id = ? ORDER BY t_last_ms LIMIT 1").pluck(),
      firstRollupTime: db.prepare("SELECT t_minute_ms FROM rollups_1m WHERE series_id = ? ORDER BY t_minute_ms LIMIT 1").pluck(),
      lastRollupMinute: db.prepare("SELECT t_minute_ms FROM rollups_1m WHERE series_id = ? ORDER BY t_minute_ms DESC LIMIT 1").pluck(),
    };
  }

  // ---- recent rows ----

  /**
   * Inserts rows [0, n) of the arrays, in that order (inside the batch transaction). NaN and
   * ±Infinity are NULL; −0 is 0 plus a flag.
   */
  insertRecent(id: Int32Array, t: Float64Array, v: Float64Array, q: Uint8Array, n: number): void {
    const p = this.insertParams;
    let i = 0;
    for (; i + INSERT_ROWS <= n; i += INSERT_ROWS) {
      for (let k = 0; k < INSERT_ROWS; k++) {
        const j = i + k;
        const value = v[j] as number;
        const finite = Number.isFinite(value);
        p[4 * k] = id[j] as number;
        p[4 * k + 1] = t[j] as number;
        p[4 * k + 2] = finite ? value : null;
        p[4 * k + 3] = (q[j] as number) | (finite && Object.is(value, -0) ? NEGATIVE_ZERO_FLAG : 0);
      }
      this.st.insertRecentMany.run(p);
    }
    for (; i < n; i++) {
      const value = v[i] as number;
      const finite = Number.isFinite(value);
      this.st.insertRecent.run(id[i], t[i], finite ? value : null, (q[i] as number) | (finite && Object.is(value, -0) ? NEGATIVE_ZERO_FLAG : 0));
    }
  }

  /** Fills the in-memory copy from the table, in write order. */
  loadRecent(into: RecentIndex): void {
    for (const [id, kind, tMs, value, q] of this.st.loadRecent.iterate() as IterableIterator<[number, SeriesKind, number, number | null, number]>) {
      const v = value === null ? Number.NaN : (q & NEGATIVE_ZERO_FLAG) !== 0 ? -0 : value;
      into.put(id, kind, tMs, v, q & CODE_MASK);
    }
  }

  // ---- reading points ----

  /**
   * Points of a series with fromMs ≤ t ≤ toMs from the chunks and the recent copy, a recent
   * point winning over a sealed one of the same time; the earliest `limit` (−1: all).
   */
  readPoints(id: number, recent: SeriesBuffer | undefined, fromMs: number, toMs: number, limit: number): Points {
    // The chunks' points in range, as [chunk, first, end) spans, then copied once.
    const spans: { p: ChunkPoints; a: number; b: number }[] = [];
    let sealed = 0;
    if (fromMs <= toMs) {
      for (const [tFirst, n, data, quality] of this.st.chunksInRange.iterate(id, fromMs, toMs + CHUNK_MAX_SPAN_MS, toMs) as IterableIterator<
        [number, number, Uint8Array, Uint8Array | null]
      >) {
        const p = decodeChunk(data, quality, n);
        const a = fromMs > tFirst ? lowerBound(p.timesMs, fromMs) : 0;
        let b = n;
        if ((p.timesMs[n - 1] as number) > toMs) b = upperBound(p.timesMs, toMs);
        if (b > a) {
          spans.push({ p, a, b });
          sealed += b - a;
        }
        // Later chunks hold later times only: enough for the earliest `limit` points.
        if (limit >= 0 && sealed >= limit) break;
      }
    }
    const rFrom = recent === undefined || fromMs > toMs ? 0 : recent.lowerBound(fromMs);
    const rTo = recent === undefined || fromMs > toMs ? 0 : recent.upperBound(toMs);
    const unsealed = Math.max(0, rTo - rFrom);
    let total = sealed + unsealed;
    if (limit >= 0 && total > limit) total = limit;
    const c: Points = { timesMs: new Float64Array(sealed), values: new Float64Array(sealed), quality: new Uint8Array(sealed) };
    let k = 0;
    for (const { p, a, b } of spans) {
      c.timesMs.set(p.timesMs.subarray(a, b), k);
      c.values.set(p.values.subarray(a, b), k);
      c.quality.set(p.quality.subarray(a, b), k);
      k += b - a;
    }
    if (unsealed === 0) return cut(c, total);
    const r = recent as SeriesBuffer;
    const out: Points = { timesMs: new Float64Array(total), values: new Float64Array(total), quality: new Uint8Array(total) };
    let i = 0;
    let j = rFrom;
    k = 0;
    while (k < total && (i < sealed || j < rTo)) {
      const tc = i < sealed ? (c.timesMs[i] as number) : Number.POSITIVE_INFINITY;
      const tr = j < rTo ? (r.t[j] as number) : Number.POSITIVE_INFINITY;
      if (tr <= tc) {
        out.timesMs[k] = tr;
        out.values[k] = r.v[j] as number;
        out.quality[k] = r.q[j] as number;
        j++;
        if (tr === tc) i++; // the later write wins
      } else {
        out.timesMs[k] = tc;
        out.values[k] = c.values[i] as number;
        out.quality[k] = c.quality[i] as number;
        i++;
      }
      k++;
    }
    return cut(out, k);
  }

  /** Sum of the points of the chunks touching the range, counting stops once above `stopAbove`. */
  countSealed(id: number, fromMs: number, toMs: number, stopAbove: number): number {
    let total = 0;
    for (const n of this.st.chunkCounts.iterate(id, fromMs, toMs + CHUNK_MAX_SPAN_MS, toMs) as IterableIterator<number>) {
      total += n;
      if (total > stopAbove) break;
    }
    return total;
  }

  /** Sealed roll-ups of minutes starting in [fromMs, toMs]. */
  readRollups(id: number, fromMs: number, toMs: number): MinuteRollup[] {
    const rows = this.st.rollupsInRange.all(id, fromMs, toMs) as [number, number | null, number | null, number | null, number, number | null, number][];
    return rows.map(([tMinuteMs, min, max, sum, count, last, quality]) => ({ tMinuteMs, min, max, sum, count, last, quality }));
  }

  /** Time of the earliest sealed point of a series, or null. */
  firstSealedMs(id: number): number | null {
    return (this.st.firstChunkTime.get(id) as number | undefined) ?? null;
  }

  firstRollupMs(id: number): number | null {
    return (this.st.firstRollupTime.get(id) as number | undefined) ?? null;
  }

  /** Cursor over the chunks of a series after a given t_last, one at a time (for streaming). */
  nextChunk(id: number, afterLastMs: number, fromMs: number, toMs: number): { tLastMs: number; points: ChunkPoints } | null {
    const row = this.st.chunkAfter.get(id, afterLastMs, fromMs, toMs) as [number, number, Uint8Array, Uint8Array | null] | undefined;
    if (row === undefined) return null;
    const [tLastMs, n, data, quality] = row;
    return { tLastMs, points: decodeChunk(data, quality, n) };
  }

  // ---- sealing ----

  /**
   * Seals the given points (inside the caller's transaction): the recent rows become chunks
   * and roll-ups. Late points in time already sealed are merged with the chunks they fall
   * in. Everything is read first, then deleted, then written, so that a full file can still
   * be sealed into the pages the deleted rows free.
   */
  seal(items: SealItem[], allDue: boolean): SealResult {
    const result: SealResult = { marks: [], rows: 0, chunksWritten: 0, chunksRewritten: 0, duplicates: 0 };
    const plans: { id: number; merged: ChunkPoints; rollups: MinuteRollup[]; oldIds: number[] }[] = [];
    for (const { buffer: b, count } of items) {
      if (count === 0) continue;
      const loMs = minuteOf(b.t[0] as number);
      const hiMs = minuteOf(b.t[count - 1] as number) + MINUTE_MS - 1;
      const fresh: ChunkPoints = { timesMs: b.t.slice(0, count), values: b.v.slice(0, count), quality: b.q.slice(0, count) };
      const after = loMs > this.lastMinute(b.id);
      const old = after ? [] : (this.st.overlapping.all(b.id, loMs, hiMs + CHUNK_MAX_SPAN_MS, hiMs) as [number, number, Uint8Array, Uint8Array | null][]);
      let merged = fresh;
      const oldMinutes = new Set<number>();
      if (old.length > 0) {
        const parts = old.map(([, n, data, quality]) => decodeChunk(data, quality, n));
        const o = concat(parts);
        for (const t of o.timesMs) oldMinutes.add(minuteOf(t));
        const m = mergePoints(o, fresh);
        merged = m.points;
        result.duplicates += m.duplicates;
      }
      // Roll-ups of the minutes the fresh points touch: every point of those minutes is in
      // `merged` (any chunk holding one overlaps [loMs, hiMs]).
      const freshMinutes = new Set<number>();
      for (let i = 0; i < count; i++) freshMinutes.add(minuteOf(b.t[i] as number));
      let rollups = rollupMinutes(merged, 0, merged.timesMs.length, UNUSABLE_CODE[b.kind]).filter((r) => freshMinutes.has(r.tMinuteMs));
      // A minute whose raw points are gone (retention) but whose roll-up is kept: fold the
      // late points into it rather than replace it.
      const kept = after ? [] : this.readRollups(b.id, loMs, hiMs).filter((r) => freshMinutes.has(r.tMinuteMs) && !oldMinutes.has(r.tMinuteMs));
      if (kept.length > 0) {
        const byMinute = new Map(kept.map((r) => [r.tMinuteMs, r]));
        rollups = rollups.map((r) => {
          const k = byMinute.get(r.tMinuteMs);
          return k === undefined ? r : foldRollup(k, r);
        });
      }
      plans.push({ id: b.id, merged, rollups, oldIds: old.map(([id]) => id) });
      result.marks.push([b.id, Math.max(this.lastMinute(b.id), hiMs - MINUTE_MS + 1)]);
      result.rows += count;
      result.chunksRewritten += old.length;
    }

    // Delete: the sealed recent rows, the chunks being rewritten.
    if (allDue && items.length > 0) {
      // Every series with rows before the cut is in this seal, all with the same cut.
      this.st.deleteRecentBefore.run((items[0] as SealItem).cutMs);
    } else {
      this.st.clearCuts.run();
      for (const it of items) this.st.insertCut.run(it.buffer.id, it.cutMs);
      this.st.deleteRecentByCut.run();
      this.st.clearCuts.run();
    }
    for (const p of plans) for (const id of p.oldIds) this.st.deleteChunk.run(id);

    // Write.
    for (const p of plans) {
      for (const c of buildChunks(p.merged, 0, p.merged.timesMs.length)) {
        this.st.insertChunk.run(p.id, c.tFirstMs, c.tLastMs, c.n, c.data, c.quality);
        result.chunksWritten++;
      }
      for (const r of p.rollups) this.st.upsertRollup.run(p.id, r.tMinuteMs, r.min, r.max, r.sum, r.count, r.last, r.quality);
    }
    return result;
  }

  /** Records the marks of a committed seal. */
  noteSealed(marks: readonly [number, number][]): void {
    for (const [id, m] of marks) this.lastSealedMinute.set(id, m);
  }

  private lastMinute(id: number): number {
    let m = this.lastSealedMinute.get(id);
    if (m === undefined) {
      m = (this.st.lastRollupMinute.get(id) as number | undefined) ?? Number.NEGATIVE_INFINITY;
      this.lastSealedMinute.set(id, m);
    }
    return m;
  }

  // ---- retention ----

  /** Deletes at most `limit` chunks whose last point is before `cutMs`, the oldest first. */
  deleteExpiredChunks(cutMs: number, limit: number): number {
    return this.st.oldestExpiredChunks.run(cutMs, limit).changes;
  }

  /**
   * Deletes about `limit` roll-ups of minutes starting before `cutMs`, the oldest first
   * (in slices of an hour across all series). Returns the number deleted.
   */
  deleteExpiredRollups(cutMs: number, limit: number): number {
    const ids = this.st.seriesIds.all() as number[];
    let oldest = Number.POSITIVE_INFINITY;
    for (const id of ids) {
      const t = this.st.oldestRollup.get(id) as number | undefined;
      if (t !== undefined && t < oldest) oldest = t;
    }
    let deleted = 0;
    let sliceEnd = oldest;
    while (deleted < limit && sliceEnd < cutMs) {
      sliceEnd = Math.min(cutMs, sliceEnd + 60 * MINUTE_MS);
      for (const id of ids) deleted += this.st.deleteRollupsBefore.run(id, sliceEnd).changes;
    }
    return deleted;
  }
}

// ---- helpers ----

/** The first n points (a view). */
function cut(p: Points, n: number): Points {
  if (p.timesMs.length <= n) return p;
  return { timesMs: p.timesMs.subarray(0, n), values: p.values.subarray(0, n), quality: p.quality.subarray(0, n) };
}

export function lowerBound(xs: ArrayLike<number>, x: number): number {
  let lo = 0;
  let hi = xs.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if ((xs[mid] as number) < x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** The first index whose value is > x. */
export function upperBound(xs: ArrayLike<number>, x: number): number {
  let lo = 0;
  let hi = xs.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if ((xs[mid] as number) <= x) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

function concat(parts: ChunkPoints[]): ChunkPoints {
  const n = parts.reduce((s, p) => s + p.timesMs.length, 0);
  const out: ChunkPoints = { timesMs: new Float64Array(n), values: new Float64Array(n), quality: new Uint8Array(n) };
  let k = 0;
  for (const p of parts) {
    out.timesMs.set(p.timesMs, k);
    out.values.set(p.values, k);
    out.quality.set(p.quality, k);
    k += p.timesMs.length;
  }
  return out;
}

/** Merges two sorted point sets; on equal times the fresh point wins. */
function mergePoints(old: ChunkPoints, fresh: ChunkPoints): { points: ChunkPoints; duplicates: number } {
  const a = old.timesMs.length;
  const b = fresh.timesMs.length;
  const out: ChunkPoints = { timesMs: new Float64Array(a + b), values: new Float64Array(a + b), quality: new Uint8Array(a + b) };
  let i = 0;
  let j = 0;
  let k = 0;
  let duplicates = 0;
  while (i < a || j < b) {
    const to = i < a ? (old.timesMs[i] as number) : Number.POSITIVE_INFINITY;
    const tf = j < b ? (fresh.timesMs[j] as number) : Number.POSITIVE_INFINITY;
    if (tf <= to) {
      out.timesMs[k] = tf;
      out.values[k] = fresh.values[j] as number;
      out.quality[k] = fresh.quality[j] as number;
      j++;
      if (tf === to) {
        i++;
        duplicates++;
      }
    } else {
      out.timesMs[k] = to;
      out.values[k] = old.values[i] as number;
      out.quality[k] = old.quality[i] as number;
      i++;
    }
    k++;
  }
  return {
    points: { timesMs: out.timesMs.subarray(0, k), values: out.values.subarray(0, k), quality: out.quality.subarray(0, k) },
    duplicates,
  };
}

/**
 * A kept roll-up with late points folded in. min, max, sum and count combine exactly; the
 * kept `last` stays (the late points' order against the expired ones is unknown) unless the
 * kept roll-up had no usable value.
 */
function foldRollup(kept: MinuteRollup, late: MinuteRollup): MinuteRollup {
  const pick = (a: number | null, b: number | null, f: (x: number, y: number) => number): number | null => (a === null ? b : b === null ? a : f(a, b));
  return {
    tMinuteMs: kept.tMinuteMs,
    min: pick(kept.min, late.min, Math.min),
    max: pick(kept.max, late.max, Math.max),
    sum: pick(kept.sum, late.sum, (x, y) => x + y),
    count: kept.count + late.count,
    last: kept.count > 0 ? kept.last : late.last,
    quality: Math.max(kept.quality, late.quality),
  };
}
