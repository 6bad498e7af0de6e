// Accounts and the audit log in the historian's file (migration 4), and the password hashes
// stored there (src/server/passwords.ts). Invented people of Tarnholm Works, line 2.
import { join } from "node:path";
import Database from "better-sqlite3";
import { afterEach, beforeEach, describe, expect, it } from "vitest";
import { hashParams, hashPassword, passwordProblem, verifyPassword, type ScryptParams } from "../../src/server/passwords.js";
import { AccountError, type AccountStore } from "../../src/store/accounts.js";
import { Historian } from "../../src/store/historian.js";
import { APPLICATION_NAME, MIGRATIONS, SCHEMA_MIGRATIONS_SQL } from "../../src/store/migrations.js";
import { T0, tempDir, transition } from "./helpers.js";

/** The lowest cost passwords.ts accepts: these tests check the logic, not the cost. */
const CHEAP: ScryptParams = { logN: 10, r: 8, p: 1 };

let dir: string;
let cleanup: () => void;
beforeEach(() => {
  ({ dir, cleanup } = tempDir());
});
afterEach(() => cleanup());

describe("passwords (scrypt)", () => {
  // RFC 7914 §12, the third test vector: scrypt(P="pleaseletmein", S="SodiumChloride", N=16384, r=8, p=1, dkLen=64).
  it("checks against the RFC 7914 test vector written as a stored hash", async () => {
    const key = "7023bdcb3afd7348461c06cd81fd38ebfda8fbba904f8e3ea9b543f6545da1f2d5432955613f0fcf62d49705242a9af9e61e85dc0d651e40dfcf017b45575887";
    const stored = ["scrypt", 14, 8, 1, Buffer.from("SodiumChloride").toString("base64url"), Buffer.from(key, "hex").toString("base64url")].join("$");
    expect(await verifyPassword("pleaseletmein", stored)).toBe(true);
    expect(await verifyPassword("pleaseletmeim", stored)).toBe(false);
  });

  it("hashes with a fresh salt each time and the parameters in the text; the right password verifies, a wrong one fails", async () => {
    const a = await hashPassword("coal-mill-vm2-night", CHEAP);
    const b = await hashPassword("coal-mill-vm2-night", CHEAP);
    expect(a).toMatch(/^scrypt\$10\$8\$1\$[A-Za-z0-9_-]{22}\$[A-Za-z0-9_-]{43}$/);
    expect(a).not.toBe(b);
    expect(a).not.toContain("coal-mill");
    expect(hashParams(a)).toEqual(CHEAP);
    expect(await verifyPassword("coal-mill-vm2-night", a)).toBe(true);
    expect(await verifyPassword("coal-mill-vm2-nighT", a)).toBe(false);
    expect(await verifyPassword("", a)).toBe(false);
  });

  it("uses the default cost N = 2^15, r = 8, p = 3 (OWASP's list of equivalent scrypt settings, from memory)", async () => {
    const h = await hashPassword("silo-fs2-long-standstill");
    expect(hashParams(h)).toEqual({ logN: 15, r: 8, p: 3 });
    expect(await verifyPassword("silo-fs2-long-standstill", h)).toBe(true);
  });

  it.each([
    ["not a hash", "plain text"],
    ["another scheme", "bcrypt$10$abc"],
    ["a cost beyond the bounds", "scrypt$30$8$1$c2FsdHNhbHQ$a2V5a2V5a2V5a2V5a2V5a2V5"],
    ["a short key", "scrypt$10$8$1$c2FsdHNhbHQ$a2V5"],
  ])("refuses %s without throwing", async (_what, stored) => {
    expect(await verifyPassword("whatever-password", stored)).toBe(false);
  });

  it("says why a password is too short or too long, without repeating it", () => {
    expect(passwordProblem("short-pw")).toBe("password: expected at least 12 characters, found 8");
    expect(passwordProblem("x".repeat(257))).toBe("password: expected at most 256 characters, found 257");
    expect(passwordProblem("twelve-chars")).toBeNull();
  });
});

describe("accounts", () => {
  let h: Historian;
  let accounts: AccountStore;
  beforeEach(() => {
    h = Historian.open({ path: join(dir, "h.db"), nowMs: () => T0 });
    accounts = h.accounts();
  });
  afterEach(() => h.close());

  it("round-trips a user, names compare without case, and a change raises the version", async () => {
    const hash = await hashPassword("filter-bf2-inlet", CHEAP);
    expect(accounts.addUser("j.ferris", "operator", hash, T0)).toEqual({ name: "j.ferris", role: "operator", version: 1, createdAtMs: T0, updatedAtMs: T0 });
    expect(accounts.findUser("J.Ferris")).toEqual({ name: "j.ferris", role: "operator", passwordHash: hash, version: 1, createdAtMs: T0, updatedAtMs: T0 });
    expect(() => accounts.addUser("J.FERRIS", "admin", hash, T0)).toThrow(/an account named "j.ferris" exists already \(names compare without case\)/);
    const hash2 = await hashPassword("filter-bf2-outlet", CHEAP);
    expect(accounts.setPasswordHash("j.ferris", hash2, T0 + 1000)).toMatchObject({ version: 2, updatedAtMs: T0 + 1000, createdAtMs: T0 });
    expect(await verifyPassword("filter-bf2-outlet", accounts.findUser("j.ferris")!.passwordHash)).toBe(true);
    accounts.addUser("m.okafor", "engineer", hash, T0);
    expect(accounts.listUsers().map((u) => [u.name, u.role])).toEqual([
      ["j.ferris", "operator"],
      ["m.okafor", "engineer"],
    ]);
    expect(JSON.stringify(accounts.listUsers())).not.toContain("scrypt");
    expect(accounts.removeUser("M.OKAFOR")).toMatchObject({ name: "m.okafor" });
    expect(accounts.findUser("m.okafor")).toBeNull();
    expect(() => accounts.removeUser("m.okafor")).toThrow(AccountError);
  });

  it.each([
    ["", /user name: expected 1 to 64 characters/],
    ["two words", /found "two words"/],
    [".dot-first", /starting with a letter or digit/],
    ["x".repeat(65), /expected 1 to 64 characters/],
  ])("refuses the name %j", async (name, why) => {
    expect(() => accounts.addUser(name, "viewer", "scrypt$x", T0)).toThrow(why);
  });

  it("refuses a role the schema does not know and a hash that is not scrypt", () => {
    expect(() => accounts.addUser("p.lindqvist", "superuser" as never, "scrypt$x", T0)).toThrow(/role: expected one of viewer, operator, engineer, admin, found "superuser"/);
    expect(() => accounts.addUser("p.lindqvist", "viewer", "plain-password", T0)).toThrow(/expected a scrypt\$\.\.\. hash/);
  });

  it("keeps the audit log newest first, one printable line per text", () => {
    expect(accounts.appendAudit({ atMs: T0, actor: "daemon", action: "config.loaded", target: "/etc/millwarden/plant.yaml", detail: { sha256: "ab".repeat(32) }, source: "daemon" })).toBeNull();
    expect(accounts.appendAudit({ atMs: T0 + 1, actor: "j.ferris", action: "advisory.shelve", target: "co-rate-bf2-outlet", detail: { reason: "analyser\npurge", durationS: 900, oneShot: false }, source: "http" })).toBeNull();
    const log = accounts.auditLog(10);
    expect(log.map((e) => e.action)).toEqual(["advisory.shelve", "config.loaded"]);
    expect(log[0]).toMatchObject({ atMs: T0 + 1, actor: "j.ferris", target: "co-rate-bf2-outlet", source: "http", detail: { reason: "analyser purge", durationS: 900, oneShot: false } });
    expect(accounts.auditLog(1)).toHaveLength(1);
  });

  it("refuses an audit detail whose key names a secret (a caller bug), before writing anything", () => {
    for (const key of ["password", "newPassword", "csrfToken", "sessionId", "cookie", "passwordHash"]) {
      expect(() => accounts.appendAudit({ atMs: T0, actor: "x", action: "login.ok", target: null, detail: { [key]: "v" }, source: "http" })).toThrow(/names a secret/);
    }
    expect(accounts.auditLog(10)).toEqual([]);
  });

  it("answers a failed audit write with its error text instead of throwing", () => {
    h.close();
    const err = accounts.appendAudit({ atMs: T0, actor: "j.ferris", action: "logout", target: "j.ferris", detail: {}, source: "http" });
    expect(err).toMatch(/^writing the audit log: /);
    // Reopened for afterEach.
    h = Historian.open({ path: join(dir, "h.db") });
  });
});

describe("migration 3 → 4", () => {
  /** A file as a build at schema version 3 left it (migrations 1 to 3 only), with a row in each of its tables. */
  function writeVersion3(path: string): void {
    const db = new Database(path);
    db.pragma("journal_mode = WAL");
    db.transaction(() => {
      db.exec(SCHEMA_MIGRATIONS_SQL);
      for (const m of MIGRATIONS.filter((x) => x.version <= 3)) {
        db.exec(m.sql);
        m.run?.(db);
        db.prepare("INSERT INTO schema_migrations (version, description, applied_at_ms) VALUES (?, ?, ?)").run(m.version, m.description, T0);
      }
      db.prepare("INSERT INTO meta (key, value) VALUES (?, ?)").run("application", APPLICATION_NAME);
      db.prepare("INSERT INTO series (id, kind, name) VALUES (1, 'signal', 'VM2-TT-111')").run();
      const recent = db.prepare("INSERT INTO recent (series_id, t_ms, value, quality) VALUES (1, ?, ?, 0)");
      for (let s = 0; s < 90; s++) recent.run(T0 + s * 1000, 80 + s / 10);
      const tr = transition({ atMs: T0 + 2000 });
      db.prepare(
        "INSERT INTO advisory_transitions (at_ms, advisory_id, rule_id, transition, from_state, to_state, tier, value, limit_value, by_user, why) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
      ).run(tr.atMs, tr.advisoryId, tr.ruleId, tr.transition, tr.from, tr.to, tr.tier, tr.value, tr.limit, tr.by, tr.why);
      db.prepare("INSERT INTO plant_events (at_ms, kind, name, body) VALUES (?, 'state', 'phase.vm2', ?)").run(T0 + 3000, JSON.stringify({ kind: "state", atMs: T0 + 3000, key: "phase.vm2" }));
      db.prepare("INSERT INTO advisory_state (advisory_id, body, updated_at_ms) VALUES (?, ?, ?)").run(
        "bf1.dewpoint-margin",
        JSON.stringify({ id: "bf1.dewpoint-margin", ruleKey: "k", alarmState: "ack" }),
        T0 + 4000,
      );
    })();
    db.pragma("user_version = 3");
    db.close();
  }

  it("adds users and audit_log and keeps the samples, transitions, events and advisory states", () => {
    const path = join(dir, "v3.db");
    writeVersion3(path);
    const h = Historian.open({ path, nowMs: () => T0 + 86_400_000 });
    try {
      expect(h.samples("VM2-TT-111", T0, T0 + 100_000).map((p) => p.value)).toEqual(Array.from({ length: 90 }, (_, s) => 80 + s / 10));
      expect(h.transitions()).toEqual([transition({ atMs: T0 + 2000 })]);
      expect(h.events()).toHaveLength(1);
      expect(h.loadAdvisoryStates().states.map((s) => s.id)).toEqual(["bf1.dewpoint-margin"]);
      expect(h.accounts().listUsers()).toEqual([]);
      expect(h.accounts().auditLog(10)).toEqual([]);
      h.accounts().addUser("j.ferris", "operator", "scrypt$placeholder", T0);
      expect(h.accounts().appendAudit({ atMs: T0, actor: "cli-user", action: "user.add", target: "j.ferris", detail: { role: "operator" }, source: "cli" })).toBeNull();
    } finally {
      h.close();
    }
    const check = new Database(path, { readonly: true });
    try {
      expect(check.prepare("SELECT version, applied_at_ms FROM schema_migrations WHERE version = 4").get()).toEqual({ version: 4, applied_at_ms: T0 + 86_400_000 });
      expect(check.prepare("SELECT name, role FROM users").all()).toEqual([{ name: "j.ferris", role: "operator" }]);
      expect(check.prepare("SELECT count(*) FROM audit_log").pluck().get()).toBe(1);
      expect(check.pragma("integrity_check")).toEqual([{ integrity_check: "ok" }]);
    } finally {
      check.close();
    }
  });
});
