// A file at schema version 1 (samples and derived values in WITHOUT ROWID tables) with data:
// opening it applies migration 2, which moves every row into chunks and roll-ups, keeps the
// advisory trail, and leaves a file that reads the same through the historian.
import { join } from "node:path";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { Historian } from "../../src/store/historian.js";
import { APPLICATION_NAME, MIGRATIONS, SCHEMA_MIGRATIONS_SQL } from "../../src/store/migrations.js";
import { T0, sample, tempDir, transition } from "./helpers.js";

let dir: string;
let cleanup: () => void;
beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => cleanup());

const MIN = 60_000;
const SIGNALS = ["VM2-TT-111", "VM2-AT-113", "BF2-AT-214"];
const KEY = "dewpoint.bf1-outlet.marginK";

/** Writes a version-1 file the way build 1 did: migration 1's SQL, its meta and schema rows. */
function writeVersion1(path: string, seconds: number): void {
  const db = new Database(path);
  db.pragma("journal_mode = WAL");
  const v1 = MIGRATIONS.find((m) => m.version === 1);
  if (!v1) throw new Error("migration 1 is missing");
  db.exec(SCHEMA_MIGRATIONS_SQL);
  db.exec(v1.sql);
  db.prepare("INSERT INTO meta (key, value) VALUES (?, ?)").run("application", APPLICATION_NAME);
  db.prepare("INSERT INTO meta (key, value) VALUES (?, ?)").run("created_at_ms", String(T0));
  db.prepare("INSERT INTO schema_migrations (version, description, applied_at_ms) VALUES (1, ?, ?)").run(v1.description, T0);
  db.pragma("user_version = 1");
  const series = db.prepare("INSERT INTO series (kind, name) VALUES (?, ?)");
  SIGNALS.forEach((s) => series.run("signal", s));
  series.run("derived", KEY);
  const ins = db.prepare("INSERT INTO samples (signal_id, t_ms, value, quality, recv_ms) VALUES (?, ?, ?, ?, ?)");
  const insD = db.prepare("INSERT INTO derived (series_id, t_ms, value, status) VALUES (?, ?, ?, ?)");
  db.transaction(() => {
    for (let s = 0; s < seconds; s++) {
      SIGNALS.forEach((_, i) => {
        const bad = s % 97 === 13;
        ins.run(i + 1, T0 + s * 1000, bad ? null : v1Value(i, s), bad ? 2 : s % 50 === 0 ? 1 : 0, T0 + s * 1000 + 35);
      });
      insD.run(4, T0 + s * 1000, s % 61 === 0 ? null : 20 - s / 1000, s % 61 === 0 ? 1 : 0);
    }
    const tr = transition({ atMs: T0 + 5000 });
    db.prepare(
      "INSERT INTO advisory_transitions (at_ms, advisory_id, rule_id, transition, from_state, to_state, tier, value, limit_value, by_user, why) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
    ).run(tr.atMs, tr.advisoryId, tr.ruleId, tr.transition, tr.from, tr.to, tr.tier, tr.value, tr.limit, tr.by, tr.why);
  })();
  db.close();
}

const v1Value = (i: number, s: number): number => Math.round((80 + i * 5 + Math.sin(s / 30) * 3 + (s % 7) * 0.013) * 100) / 100;

describe("migration 1 → 2", () => {
  it("keeps every sample, derived value and transition of a version-1 file, as chunks and roll-ups", () => {
    const path = join(dir, "hist.db");
    const seconds = 2 * 3600 + 17;
    writeVersion1(path, seconds);
    const h = Historian.open({ path, nowMs: () => T0 + 3 * 3_600_000 });
    try {
      for (const [i, sig] of SIGNALS.entries()) {
        const want = Array.from({ length: seconds }, (_, s) => {
          const bad = s % 97 === 13;
          return { tMs: T0 + s * 1000, value: bad ? null : v1Value(i, s), quality: bad ? "bad" : s % 50 === 0 ? "uncertain" : "good" };
        });
        expect(h.samples(sig, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY)).toEqual(want);
      }
      const d = h.derived(KEY, Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY);
      expect(d).toHaveLength(seconds);
      expect(d[61]).toEqual({ tMs: T0 + 61_000, value: null, status: "unknown" });
      expect(d[62]).toEqual({ tMs: T0 + 62_000, value: 20 - 62 / 1000, status: "ok" });
      expect(h.transitions({})).toEqual([transition({ atMs: T0 + 5000 })]);
      // Roll-ups for every minute, from the moved rows.
      const r = h.rollups("VM2-TT-111", Number.NEGATIVE_INFINITY, Number.POSITIVE_INFINITY);
      expect(r).toHaveLength(Math.ceil(seconds / 60));
      const first = h.samples("VM2-TT-111", T0, T0 + MIN - 1).filter((p) => p.quality !== "bad");
      expect(r[0]).toMatchObject({ tMinuteMs: T0, count: first.length, min: Math.min(...first.map((p) => p.value as number)), max: Math.max(...first.map((p) => p.value as number)) });
      expect(h.knownSignals()).toEqual([...SIGNALS].sort());
      expect(h.stats()).toMatchObject({ recentRows: 0, autoVacuum: "none" });
      // Writing goes on where it stopped, into the new layout.
      h.appendSample(sample("VM2-TT-111", T0 + seconds * 1000, 81.5));
      h.flush();
      expect(h.samples("VM2-TT-111", T0 + (seconds - 1) * 1000, Number.POSITIVE_INFINITY)).toHaveLength(2);
    } finally {
      h.close();
    }
    const db = new Database(path, { readonly: true });
    try {
      const tables = db.prepare("SELECT name FROM sqlite_master WHERE type = 'table' ORDER BY name").pluck().all();
      expect(tables).not.toContain("samples");
      expect(tables).not.toContain("derived");
      expect(db.prepare("SELECT version FROM schema_migrations ORDER BY version").pluck().all()).toEqual(MIGRATIONS.map((m) => m.version));
      expect(db.prepare("SELECT sum(n) FROM chunks").pluck().get()).toBe(4 * seconds);
      expect(db.pragma("integrity_check")).toEqual([{ integrity_check: "ok" }]);
    } finally {
      db.close();
    }
  });

  it("leaves auto_vacuum off in a migrated file until one vacuum() switches it to incremental", () => {
    // sqlite.org/pragma.html#pragma_auto_vacuum: changing it on a file with tables takes a VACUUM.
    const path = join(dir, "hist.db");
    writeVersion1(path, 600);
    const h = Historian.open({ path });
    try {
      expect(h.stats().autoVacuum).toBe("none");
      expect(h.maintain(T0 + 3_600_000).vacuumedPages).toBe(0);
      h.vacuum();
      expect(h.stats().autoVacuum).toBe("incremental");
      expect(h.samples("VM2-AT-113", T0, T0 + 600_000)).toHaveLength(600);
    } finally {
      h.close();
    }
    const db = new Database(path, { readonly: true });
    try {
      expect(db.pragma("auto_vacuum", { simple: true })).toBe(2);
    } finally {
      db.close();
    }
  });
});
