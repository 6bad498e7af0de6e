// Migration from every earlier schema version to the current one, with data kept: a file is
// built at each version v ≥ 2 the way that build wrote it (migrations 1..v, their meta and schema
// rows), given samples and an advisory transition, then opened by the current historian.
// (Version 1 kept samples in other tables; test/store/historian-migration.test.ts covers it.)
import { join } from "node:path";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { Historian } from "../../src/store/historian.js";
import { LATEST_SCHEMA_VERSION, MIGRATIONS } from "../../src/store/migrations.js";
import { T0, tempDir, transition, writeVersion } from "./helpers.js";

let dir: string;
let cleanup: () => void;
beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => cleanup());


describe("migration from every earlier version", () => {
  const versions = MIGRATIONS.map((m) => m.version).filter((v) => v >= 2 && v < LATEST_SCHEMA_VERSION);
  it("covers the versions after 1", () => {
    expect(versions.length).toBe(LATEST_SCHEMA_VERSION - 2);
  });
  for (const v of versions) {
    it(`version ${v} → ${LATEST_SCHEMA_VERSION}: samples and transitions kept, a backup of version ${v} beside it`, () => {
      const path = join(dir, `v${v}.db`);
      writeVersion(path, v);
      const h = Historian.open({ path, nowMs: () => T0 + 3_600_000 });
      try {
        expect(h.samples("VM2-TT-111", T0, T0 + 120_000).map((p) => p.value)).toEqual(Array.from({ length: 60 }, (_, s) => 85 + s / 100));
        expect(h.transitions()).toEqual([transition({ atMs: T0 })]);
        expect(h.migrationBackup).toMatch(new RegExp(`\\.v${v}-backup-`));
      } finally {
        h.close();
      }
      const db = new Database(path, { readonly: true });
      expect(db.pragma("user_version", { simple: true })).toBe(LATEST_SCHEMA_VERSION);
      expect(db.pragma("integrity_check")).toEqual([{ integrity_check: "ok" }]);
      db.close();
    });
  }
});
