// What a restart restores: the advisory states, plant events (nuisance, state changes), and the
// migration that added their tables (version 2 → 3) keeping everything already stored.
import { join } from "node:path";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import type { PersistedAdvisory } from "../../src/advisories/advisory.js";
import type { NuisanceEvent, StateChange } from "../../src/core/types.js";
import { Historian } from "../../src/store/historian.js";
import { MIGRATIONS } from "../../src/store/migrations.js";
import { T0, tempDir, transition, writeVersion } from "./helpers.js";

let dir: string;
let cleanup: () => void;
beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => cleanup());

const saved = (id: string, over: Partial<PersistedAdvisory> = {}): PersistedAdvisory => ({
  id,
  ruleKey: `["${id}"]`,
  alarmState: "ack",
  activeTier: "caution",
  lastTier: "caution",
  value: 1.5,
  raisedAtMs: T0,
  lastChangeMs: T0 + 60_000,
  ackedBy: "k.schichtleiter",
  ackedAtMs: T0 + 60_000,
  shelf: null,
  outOfService: null,
  ...over,
});

describe("advisory states", () => {
  it("are replaced as a whole and read back after reopening", () => {
    const path = join(dir, "h.db");
    const h = Historian.open({ path });
    expect(h.saveAdvisoryStates([saved("o2-margin-vm2"), saved("co-gradient-bf2")], T0)).toBeNull();
    expect(h.saveAdvisoryStates([saved("o2-margin-vm2", { alarmState: "unack" })], T0 + 1000)).toBeNull();
    h.close();
    const h2 = Historian.open({ path });
    try {
      const r = h2.loadAdvisoryStates();
      expect(r.states).toEqual([saved("o2-margin-vm2", { alarmState: "unack" })]);
      expect(r.unreadable).toEqual([]);
    } finally {
      h2.close();
    }
  });

  it("an unreadable row is listed, not thrown; a shelve in the log with no state is reported", () => {
    const path = join(dir, "h.db");
    const h = Historian.open({ path });
    h.appendTransition(transition({ atMs: T0, advisoryId: "co-silo-fs2", transition: "shelve", from: "unack", to: "shelved" }));
    h.appendTransition(transition({ atMs: T0 + 1, advisoryId: "co-gradient-bf2", transition: "shelve", from: "unack", to: "shelved" }));
    h.appendTransition(transition({ atMs: T0 + 2, advisoryId: "co-gradient-bf2", transition: "unshelve", from: "shelved", to: "unack" }));
    h.close();
    const db = new Database(path);
    db.prepare("INSERT INTO advisory_state (advisory_id, body, updated_at_ms) VALUES (?, ?, ?)").run("co-silo-fs2", "{not json", T0);
    db.close();
    const h2 = Historian.open({ path });
    try {
      expect(h2.loadAdvisoryStates()).toEqual({ states: [], unreadable: ["co-silo-fs2"], shelvedAtStop: ["co-silo-fs2"] });
    } finally {
      h2.close();
    }
  });
});

describe("plant events", () => {
  it("nuisance events and state changes are stored in order with the transitions", () => {
    const h = Historian.open({ path: join(dir, "h.db") });
    try {
      const flood: NuisanceEvent = { kind: "nuisance", atMs: T0 + 5000, type: "flood-start", position: "control-room", advisoryId: "co-gradient-bf2", count: 11, why: "11 advisories" };
      const phase: StateChange = { kind: "state", atMs: T0, key: "phase.vm2", value: "grinding" };
      h.appendEvent(phase);
      h.appendEvent(flood);
      h.flush();
      expect(h.events()).toEqual([phase, flood]);
      expect(h.events(T0 + 1, T0 + 10_000)).toEqual([flood]);
      expect(() => h.appendEvent({ kind: "derived" } as never)).toThrow(/expected a NuisanceEvent or StateChange/);
    } finally {
      h.close();
    }
  });
});

describe("migration from version 2", () => {
  it("adds the tables of version 3 on, keeps samples and transitions, and takes a backup first", () => {
    const path = join(dir, "h.db");
    writeVersion(path, 2);
    const tr = transition({ atMs: T0 });

    const h2 = Historian.open({ path, nowMs: () => T0 + 3_600_000 });
    try {
      // A copy of the version-2 file was taken first, beside it, named after the version and time.
      expect(h2.migrationBackup).toBe(`${path}.v2-backup-20250304T060000Z.db`);
      const copy = new Database(h2.migrationBackup!, { readonly: true });
      expect(copy.pragma("user_version", { simple: true })).toBe(2);
      expect(copy.prepare("SELECT count(*) FROM recent").pluck().get()).toBe(60);
      copy.close();
      expect(h2.samples("VM2-TT-111", T0, T0 + 200_000)).toHaveLength(60);
      expect(h2.transitions()).toEqual([tr]);
      expect(h2.loadAdvisoryStates().states).toEqual([]);
      expect(h2.events()).toEqual([]);
    } finally {
      h2.close();
    }
    const check = new Database(path, { readonly: true });
    expect(check.prepare("SELECT version FROM schema_migrations ORDER BY version").pluck().all()).toEqual(MIGRATIONS.map((m) => m.version));
    expect(check.pragma("integrity_check")).toEqual([{ integrity_check: "ok" }]);
    check.close();
  });
});
