// A real write failure: PRAGMA max_page_count caps the file, so inserts fail with SQLITE_FULL
// ("database or disk is full", sqlite.org/rescode.html#full), the same code a full disk gives.
// sqlite.org/pragma.html#pragma_max_page_count: the limit is per connection and can be raised again.
import { join } from "node:path";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { Historian } from "../../src/store/historian.js";
import { T0, derived, sample, tempDir, transition } from "./helpers.js";

let dir: string;
let cleanup: () => void;
let h: Historian | null = null;

beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => {
  h?.close();
  h = null;
  cleanup();
});

const SIGNALS = Array.from({ length: 10 }, (_, i) => `VM2-TT-${110 + i}`);

/**
 * Pages of a new file with every migration applied: the caps below leave a fixed number of
 * pages for data above it, so a migration that adds tables does not change what they test.
 */
function schemaPages(): number {
  const { dir: d, cleanup: done } = tempDir();
  try {
    Historian.open({ path: join(d, "empty.db") }).close();
    const db = new Database(join(d, "empty.db"), { readonly: true });
    try {
      return db.pragma("page_count", { simple: true }) as number;
    } finally {
      db.close();
    }
  } finally {
    done();
  }
}
// The caps were 20 and 40 pages when the schema took about 18 (up to migration 3).
const NO_ROOM = schemaPages() + 2;
const SOME_ROOM = schemaPages() + 22;

/** Unsealed sample rows in the file (the append-only recent table). */
function countSampleRows(path: string): number {
  const db = new Database(path, { readonly: true });
  try {
    return db.prepare("SELECT count(*) FROM recent JOIN series ON series.id = recent.series_id WHERE kind = 'signal'").pluck().get() as number;
  } finally {
    db.close();
  }
}

describe("Historian on a full file", () => {
  it("turns degraded without throwing, keeps the rows queued, and recovers without losing one", () => {
    const path = join(dir, "hist.db");
    h = Historian.open({ path, maxPageCount: SOME_ROOM, maxBatchRows: 1000 });
    const n = 20_000;
    for (let i = 0; i < n; i++) h.appendSample(sample(SIGNALS[i % 10] as string, T0 + Math.floor(i / 10) * 1000, i));

    expect(() => h?.flush()).not.toThrow();
    const s1 = h.stats();
    expect(s1.state).toBe("degraded");
    expect(s1.lastError).toMatch(/SQLITE_FULL: database or disk is full/);
    expect(s1.failedBatches).toBe(1);
    // Some batches fitted before the cap; each batch committed whole or not at all.
    expect(s1.rowsWritten).toBeGreaterThan(0);
    expect(s1.rowsWritten % 1000).toBe(0);
    expect(s1.rowsWritten + s1.queueDepth).toBe(n);
    expect(countSampleRows(path)).toBe(s1.rowsWritten);
    expect(s1.lastFlushMs).toBeNull();

    // Still full: the next flush retries, fails again, and appending goes on.
    h.appendDerived(derived("dewpoint.bf1-outlet.marginK", T0, 18.2));
    h.appendTransition(transition({ atMs: T0 }));
    h.appendSample(sample("VM2-TT-199", T0, -1)); // a new series while degraded
    h.flush();
    const s2 = h.stats();
    expect(s2).toMatchObject({ state: "degraded", failedBatches: 2, rowsWritten: s1.rowsWritten, queueDepth: s1.queueDepth + 3, droppedRows: 0 });

    expect(h.setMaxPageCount(1_000_000)).toBe(1_000_000);
    h.flush();
    const s3 = h.stats();
    expect(s3).toMatchObject({ state: "ok", lastError: null, queueDepth: 0, rowsWritten: n + 3, droppedRows: 0, duplicateRows: 0 });
    expect(s3.lastFlushMs).not.toBeNull();

    // Every row is there with its own value.
    for (const [k, sig] of SIGNALS.entries()) {
      const rows = h.samples(sig, T0, T0 + n * 1000);
      expect(rows).toHaveLength(n / 10);
      expect(rows.every((r, j) => r.value === j * 10 + k && r.tMs === T0 + j * 1000)).toBe(true);
    }
    expect(h.samples("VM2-TT-199", T0, T0)).toEqual([{ tMs: T0, value: -1, quality: "good" }]);
    expect(h.derived("dewpoint.bf1-outlet.marginK", T0, T0)).toEqual([{ tMs: T0, value: 18.2, status: "ok" }]);
    expect(h.transitions({})).toEqual([transition({ atMs: T0 })]);
    expect(countSampleRows(path)).toBe(n + 1);
  });

  it("forgets the series ids a failed batch assigned (they were rolled back)", () => {
    const path = join(dir, "hist.db");
    h = Historian.open({ path, maxPageCount: NO_ROOM, maxBatchRows: 50_000 });
    // 2,000 new signals in one batch that cannot fit: their series rows are inserted, then rolled back.
    const names = Array.from({ length: 2000 }, (_, i) => `VM2-XT-${String(i).padStart(4, "0")}`);
    for (let r = 0; r < 10; r++) for (const name of names) h.appendSample(sample(name, T0 + r * 1000, r));
    h.flush();
    expect(h.stats()).toMatchObject({ state: "degraded", rowsWritten: 0, queueDepth: 20_000 });
    expect(h.knownSignals()).toEqual([]);

    h.setMaxPageCount(1_000_000);
    h.flush();
    expect(h.stats()).toMatchObject({ state: "ok", rowsWritten: 20_000 });
    expect(h.knownSignals()).toEqual(names);
    expect(h.samples("VM2-XT-1999", T0, T0 + 10_000).map((x) => x.value)).toEqual([0, 1, 2, 3, 4, 5, 6, 7, 8, 9]);
    const db = new Database(path, { readonly: true });
    try {
      // No sample points at a series id that does not exist.
      expect(db.prepare("SELECT count(*) FROM recent WHERE series_id NOT IN (SELECT id FROM series)").pluck().get()).toBe(0);
    } finally {
      db.close();
    }
  });

  it("stays bounded while degraded: the oldest samples are dropped and counted, appends never throw", () => {
    const path = join(dir, "hist.db");
    h = Historian.open({ path, maxPageCount: NO_ROOM, maxBatchRows: 100_000, maxQueueRows: 5000 });
    for (let i = 0; i < 12_000; i++) h.appendSample(sample("VM2-AT-121", T0 + i, i));
    h.flush();
    expect(h.stats()).toMatchObject({ state: "degraded", queueDepth: 5000, droppedRows: 7000, rowsWritten: 0 });
    h.setMaxPageCount(1_000_000);
    h.flush();
    const rows = h.samples("VM2-AT-121", T0, T0 + 12_000);
    expect(rows).toHaveLength(5000);
    expect(rows[0]?.value).toBe(7000);
    expect(rows.at(-1)?.value).toBe(11_999);
  });

  it("counts rows it could not write before closing as dropped", () => {
    const path = join(dir, "hist.db");
    const hh = Historian.open({ path, maxPageCount: NO_ROOM, maxBatchRows: 100_000 });
    for (let i = 0; i < 10_000; i++) hh.appendSample(sample("VM2-AT-121", T0 + i, i));
    hh.close();
    expect(hh.stats()).toMatchObject({ state: "degraded", queueDepth: 0, droppedRows: 10_000, rowsWritten: 0 });
    expect(countSampleRows(path)).toBe(0);
  });
});

describe("Historian sealing on a full file", () => {
  it("turns degraded when a seal cannot get pages, loses nothing, and seals once there is room again", () => {
    const path = join(dir, "hist.db");
    h = Historian.open({ path, sealIntervalS: 1, sealAgeS: 0 });
    // Old and new points interleaved in the same pages of the recent table (one old per three
    // new): sealing the old ones frees no page, so the chunks need new ones.
    const n = 3000;
    for (let i = 0; i < n; i++) {
      for (const sig of SIGNALS) {
        h.appendSample(sample(sig, T0 + i * 1000, i + 0.25));
        for (let k = 1; k <= 3; k++) h.appendSample(sample(sig, T0 + 10 * 86_400_000 + (i * 3 + k) * 1000, -i - k / 10));
      }
    }
    h.flush();
    expect(h.stats()).toMatchObject({ state: "ok", recentRows: 4 * n * SIGNALS.length });
    const probe = new Database(path, { readonly: true });
    const pages = probe.pragma("page_count", { simple: true }) as number;
    probe.close();
    h.setMaxPageCount(pages);

    // Seal the old points (before T0 + 5 days): no room.
    const r = h.maintain(T0 + 5 * 86_400_000);
    expect(r.error).toMatch(/SQLITE_FULL: database or disk is full/);
    expect(h.stats()).toMatchObject({ state: "degraded", failedMaintains: 1, sealedRows: 0, recentRows: 4 * n * SIGNALS.length });
    expect(h.stats().lastError).toMatch(/SQLITE_FULL/);
    // Nothing was lost or sealed halfway: the seal's transaction rolled back whole.
    const db = new Database(path, { readonly: true });
    try {
      expect(db.prepare("SELECT count(*) FROM chunks").pluck().get()).toBe(0);
      expect(db.prepare("SELECT count(*) FROM rollups_1m").pluck().get()).toBe(0);
      expect(db.prepare("SELECT count(*) FROM recent").pluck().get()).toBe(4 * n * SIGNALS.length);
    } finally {
      db.close();
    }
    expect(h.samples("VM2-TT-113", T0, T0 + n * 1000)).toHaveLength(n);
    // Appends never throw meanwhile; a retry that still finds no room stays degraded.
    h.appendSample(sample("VM2-TT-110", T0 + 10 * 86_400_000 + 99_999_000, 1));
    expect(h.maintain(T0 + 5 * 86_400_000 + 1000).error).toMatch(/SQLITE_FULL/);
    expect(h.stats().state).toBe("degraded");

    // Room again: the next maintain seals, the state is ok, every point is there once.
    h.setMaxPageCount(1_000_000);
    const r2 = h.maintain(T0 + 5 * 86_400_000 + 2000);
    expect(r2.error).toBeNull();
    expect(h.stats()).toMatchObject({ state: "ok", lastError: null, sealedRows: n * SIGNALS.length, failedMaintains: 2 });
    for (const sig of SIGNALS) {
      const old = h.samples(sig, T0, T0 + n * 1000);
      expect(old).toHaveLength(n);
      expect(old.every((p, i) => p.tMs === T0 + i * 1000 && p.value === i + 0.25)).toBe(true);
      expect(h.samples(sig, T0 + 10 * 86_400_000, Number.POSITIVE_INFINITY).length).toBe(3 * n + (sig === "VM2-TT-110" ? 1 : 0));
    }
  });

  it("turns degraded when another process holds the write lock during a seal, and recovers", () => {
    // SQLITE_BUSY after busy_timeout (sqlite.org/rescode.html#busy): a locked file, not a full one.
    const path = join(dir, "hist.db");
    h = Historian.open({ path, sealIntervalS: 1, sealAgeS: 0, busyTimeoutMs: 0 });
    for (let i = 0; i < 200; i++) h.appendSample(sample("VM2-PT-112", T0 + i * 1000, -4 - i / 100));
    h.flush();
    const other = new Database(path);
    try {
      other.prepare("BEGIN IMMEDIATE").run();
      const r = h.maintain(T0 + 3_600_000);
      expect(r.error).toMatch(/SQLITE_BUSY/);
      expect(h.stats()).toMatchObject({ state: "degraded", sealedRows: 0, recentRows: 200 });
      other.prepare("ROLLBACK").run();
    } finally {
      other.close();
    }
    expect(h.maintain(T0 + 3_600_000 + 1000).error).toBeNull();
    expect(h.stats()).toMatchObject({ state: "ok", sealedRows: 200, recentRows: 0 });
    expect(h.samples("VM2-PT-112", T0, T0 + 200_000)).toHaveLength(200);
  });
});
