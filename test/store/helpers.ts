// Shared fixtures for the historian tests: temp folders and event builders (Tarnholm Works, line 2).
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import Database from "better-sqlite3";
import type { AdvisoryTransition, DerivedValue, Quality, Sample } from "../../src/core/types.js";
import { APPLICATION_NAME, MIGRATIONS, SCHEMA_MIGRATIONS_SQL } from "../../src/store/migrations.js";

export function tempDir(): { dir: string; cleanup: () => void } {
  const dir = mkdtempSync(join(tmpdir(), "millwarden-historian-"));
  return { dir, cleanup: () => rmSync(dir, { recursive: true, force: true }) };
}

export function sample(signal: string, sourceTimeMs: number, value: number, quality: Quality = "good", receiveTimeMs = sourceTimeMs + 40): Sample {
  return { signal, value, quality, sourceTimeMs, receiveTimeMs };
}

export function derived(key: string, atMs: number, value: number | null, status: "ok" | "unknown" = value === null ? "unknown" : "ok"): DerivedValue {
  return { kind: "derived", key, atMs, value, status, ...(status === "unknown" ? { reason: "O2 analyser in function check" } : {}) };
}

export function transition(overrides: Partial<AdvisoryTransition> & Pick<AdvisoryTransition, "atMs">): AdvisoryTransition {
  return {
    kind: "advisory",
    advisoryId: "bf1.dewpoint-margin",
    ruleId: "bf1.dewpoint-margin",
    transition: "raise",
    from: "normal",
    to: "unack",
    tier: "caution",
    value: 14.2,
    limit: 15,
    by: "millwarden",
    why: "dew point margin at filter outlet 14.2 K below caution limit 15 K",
    ...overrides,
  };
}

/** Epoch ms of 2025-03-04T05:00:00Z, a shift at Tarnholm Works. */
export const T0 = Date.UTC(2025, 2, 4, 5, 0, 0);

/**
 * A file at schema `version` (≥ 2) the way that build wrote it: migrations 1..version with their
 * meta and schema rows, 60 samples of VM2-TT-111 from T0 (85.00, 85.01, ...) unsealed, and one
 * advisory transition at T0.
 */
export function writeVersion(path: string, version: number): void {
  const db = new Database(path);
  db.pragma("journal_mode = WAL");
  db.exec(SCHEMA_MIGRATIONS_SQL);
  for (const m of MIGRATIONS.filter((x) => x.version <= version)) {
    db.exec(m.sql);
    m.run?.(db);
    db.prepare("INSERT INTO schema_migrations (version, description, applied_at_ms) VALUES (?, ?, ?)").run(m.version, m.description, T0);
  }
  db.prepare("INSERT INTO meta (key, value) VALUES (?, ?)").run("application", APPLICATION_NAME);
  db.prepare("INSERT INTO meta (key, value) VALUES (?, ?)").run("created_at_ms", String(T0));
  db.pragma(`user_version = ${version}`);
  db.prepare("INSERT INTO series (kind, name) VALUES ('signal', 'VM2-TT-111')").run();
  const ins = db.prepare("INSERT INTO recent (series_id, t_ms, value, quality) VALUES (1, ?, ?, 0)");
  for (let s = 0; s < 60; s++) ins.run(T0 + s * 1000, 85 + s / 100);
  const tr = transition({ atMs: T0 });
  db.prepare(
    "INSERT INTO advisory_transitions (at_ms, advisory_id, rule_id, transition, from_state, to_state, tier, value, limit_value, by_user, why) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
  ).run(tr.atMs, tr.advisoryId, tr.ruleId, tr.transition, tr.from, tr.to, tr.tier, tr.value, tr.limit, tr.by, tr.why);
  db.close();
}
