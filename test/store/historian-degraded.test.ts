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

function countRows(path: string, table: string): number {
  const db = new Database(path, { readonly: true });
  try {
    return db.prepare(`SELECT count(*) FROM ${table}`).pluck().get() as number;
  } finally {
    db.close();
  }
}

describe("Historian on a full file", () => {
  it("turns degraded without throwing, keeps the rows queued, and recovers without losing one", () => {
    const path = join(dir, "hist.db");
    h = Historian.open({ path, maxPageCount: 40, maxBatchRows: 1000 });
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
    expect(countRows(path, "samples")).toBe(s1.rowsWritten);
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
    expect(countRows(path, "samples")).toBe(n + 1);
  });

  it("forgets the series ids a failed batch assigned (they were rolled back)", () => {
    const path = join(dir, "hist.db");
    h = Historian.open({ path, maxPageCount: 20, maxBatchRows: 50_000 });
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
      expect(db.prepare("SELECT count(*) FROM samples WHERE signal_id NOT IN (SELECT id FROM series)").pluck().get()).toBe(0);
    } finally {
      db.close();
    }
  });

  it("stays bounded while degraded: the oldest samples are dropped and counted, appends never throw", () => {
    const path = join(dir, "hist.db");
    h = Historian.open({ path, maxPageCount: 20, maxBatchRows: 100_000, maxQueueRows: 5000 });
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
    const hh = Historian.open({ path, maxPageCount: 20, maxBatchRows: 100_000 });
    for (let i = 0; i < 10_000; i++) hh.appendSample(sample("VM2-AT-121", T0 + i, i));
    hh.close();
    expect(hh.stats()).toMatchObject({ state: "degraded", queueDepth: 0, droppedRows: 10_000, rowsWritten: 0 });
    expect(countRows(path, "samples")).toBe(0);
  });
});
