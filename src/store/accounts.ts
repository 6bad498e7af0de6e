// Local accounts and the audit log, in the historian's file (migration 4).
//
//   CLI (user add|passwd|remove) ──▶ users ◀── login (src/server/auth.ts) reads
//   server, CLI, daemon ──append()──▶ audit_log (inserted only, newest read first)
//
// Contracts:
// - The store keeps password hashes as given (src/server/passwords.ts makes them); it never
//   sees a password.
// - Every user change raises the user's version, which ends the sessions opened before it.
// - appendAudit never throws for a database failure: it returns the error text (the caller
//   logs it and goes on; an advisory command must not fail because the record could not be
//   written). It does throw for a caller bug: a detail key that names a secret.
// - Writes are single statements, each its own transaction, on the historian's connection;
//   a CLI in another process writes the same file (WAL; busy_timeout waits for the lock).
import type Database from "better-sqlite3";

export type AccountRole = "viewer" | "operator" | "engineer" | "admin";
export const ACCOUNT_ROLES: readonly AccountRole[] = ["viewer", "operator", "engineer", "admin"];

export type AuditSource = "http" | "cli" | "link" | "daemon";
export const AUDIT_SOURCES: readonly AuditSource[] = ["http", "cli", "link", "daemon"];

export interface StoredUser {
  name: string;
  role: AccountRole;
  /** scrypt$... (src/server/passwords.ts). */
  passwordHash: string;
  /** Raised at every change; a session remembers the version it was opened with. */
  version: number;
  createdAtMs: number;
  updatedAtMs: number;
}

/** A user as listed: everything but the hash. */
export type UserSummary = Omit<StoredUser, "passwordHash">;

export type AuditDetail = Record<string, string | number | boolean | null>;

export interface AuditInput {
  atMs: number;
  /** Who: an account name, "daemon", or the operating-system user behind a CLI call. */
  actor: string;
  /** What, as dotted words: login.ok, login.failed, login.locked, logout, advisory.ack, user.add, config.loaded ... */
  action: string;
  /** On what: an advisory id, an account name, a config file; null when nothing. */
  target: string | null;
  detail: AuditDetail;
  source: AuditSource;
}

export interface AuditEntry extends AuditInput {
  id: number;
}

/** Account names: what a person types at a login, and what stands as "by" in the records. */
export const USER_NAME_PATTERN = /^[A-Za-z0-9][A-Za-z0-9._@-]{0,63}$/;
export const USER_NAME_RULE = "1 to 64 characters: letters, digits and . _ @ -, starting with a letter or digit";

/** Keys an audit detail may never have: a record must not become the place a secret leaks to. */
const SECRET_KEY = /pass|secret|token|cookie|csrf|session|hash|salt/i;

/** Audit texts are one line of bounded length. */
const AUDIT_TEXT_MAX = 500;
// eslint-disable-next-line no-control-regex
const CONTROL_CHARS = /[\u0000-\u001f\u007f-\u009f]/g;

export class AccountError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "AccountError";
  }
}

type Stmt = Database.Statement;

export class AccountStore {
  private readonly st: {
    find: Stmt;
    list: Stmt;
    insert: Stmt;
    setHash: Stmt;
    remove: Stmt;
    audit: Stmt;
    auditNewest: Stmt;
    pin: Stmt;
    setPin: Stmt;
    removePin: Stmt;
  };

  constructor(db: Database.Database) {
    this.st = {
      find: db.prepare("SELECT name, role, password_hash, version, created_at_ms, updated_at_ms FROM users WHERE name = ?"),
      list: db.prepare("SELECT name, role, version, created_at_ms, updated_at_ms FROM users ORDER BY name COLLATE NOCASE"),
      insert: db.prepare("INSERT INTO users (name, role, password_hash, version, created_at_ms, updated_at_ms) VALUES (?, ?, ?, 1, ?, ?)"),
      setHash: db.prepare("UPDATE users SET password_hash = ?, version = version + 1, updated_at_ms = ? WHERE name = ?"),
      remove: db.prepare("DELETE FROM users WHERE name = ?"),
      audit: db.prepare("INSERT INTO audit_log (at_ms, actor, action, target, detail, source) VALUES (?, ?, ?, ?, ?, ?)"),
      auditNewest: db.prepare("SELECT id, at_ms, actor, action, target, detail, source FROM audit_log ORDER BY id DESC LIMIT ?"),
      // Migration 6: a short PIN per account, for acknowledge links only.
      pin: db.prepare("SELECT pin_hash FROM user_pins WHERE name = ?").pluck(),
      setPin: db.prepare("INSERT INTO user_pins (name, pin_hash, updated_at_ms) VALUES (?, ?, ?) ON CONFLICT (name) DO UPDATE SET pin_hash = excluded.pin_hash, updated_at_ms = excluded.updated_at_ms"),
      removePin: db.prepare("DELETE FROM user_pins WHERE name = ?"),
    };
  }

  /** The account with this name (any case), or null. */
  findUser(name: string): StoredUser | null {
    if (typeof name !== "string" || !USER_NAME_PATTERN.test(name)) return null;
    const row = this.st.find.get(name) as
      | { name: string; role: AccountRole; password_hash: string; version: number; created_at_ms: number; updated_at_ms: number }
      | undefined;
    if (row === undefined) return null;
    return {
      name: row.name,
      role: row.role,
      passwordHash: row.password_hash,
      version: row.version,
      createdAtMs: row.created_at_ms,
      updatedAtMs: row.updated_at_ms,
    };
  }

  listUsers(): UserSummary[] {
    return (this.st.list.all() as { name: string; role: AccountRole; version: number; created_at_ms: number; updated_at_ms: number }[]).map((r) => ({
      name: r.name,
      role: r.role,
      version: r.version,
      createdAtMs: r.created_at_ms,
      updatedAtMs: r.updated_at_ms,
    }));
  }

  /** Adds an account; throws AccountError when the name is taken (in any case) or malformed. */
  addUser(name: string, role: AccountRole, passwordHash: string, atMs: number): UserSummary {
    checkUserName(name);
    if (!ACCOUNT_ROLES.includes(role)) throw new AccountError(`role: expected one of ${ACCOUNT_ROLES.join(", ")}, found "${String(role)}"`);
    checkHash(passwordHash);
    const existing = this.findUser(name);
    if (existing !== null) {
      throw new AccountError(`user "${name}": an account named "${existing.name}" exists already (names compare without case); use "user passwd" or "user remove"`);
    }
    this.st.insert.run(name, role, passwordHash, Math.trunc(atMs), Math.trunc(atMs));
    return { name, role, version: 1, createdAtMs: Math.trunc(atMs), updatedAtMs: Math.trunc(atMs) };
  }

  /** Replaces the password hash (and so ends the user's sessions); throws AccountError for an unknown user. */
  setPasswordHash(name: string, passwordHash: string, atMs: number): UserSummary {
    checkHash(passwordHash);
    const user = this.requireUser(name);
    this.st.setHash.run(passwordHash, Math.trunc(atMs), user.name);
    const { passwordHash: _hash, ...rest } = this.requireUser(user.name);
    return rest;
  }

  /** Removes the account; throws AccountError for an unknown user. Its audit entries stay. */
  removeUser(name: string): UserSummary {
    const { passwordHash: _hash, ...user } = this.requireUser(name);
    this.st.remove.run(user.name);
    this.st.removePin.run(user.name);
    return user;
  }

  /**
   * Sets the account's PIN for acknowledge links (a scrypt hash, like a password). It does not
   * end the account's sessions: a PIN opens no session. Throws AccountError for an unknown user.
   */
  setPinHash(name: string, pinHash: string, atMs: number): void {
    checkHash(pinHash);
    const user = this.requireUser(name);
    this.st.setPin.run(user.name, pinHash, Math.trunc(atMs));
  }

  /** Removes the account's PIN; false when it had none. */
  clearPin(name: string): boolean {
    const user = this.requireUser(name);
    return this.st.removePin.run(user.name).changes > 0;
  }

  /** The hash of the account's PIN, or null (no such account, or no PIN set). */
  findPinHash(name: string): string | null {
    if (typeof name !== "string" || !USER_NAME_PATTERN.test(name)) return null;
    return (this.st.pin.get(name) as string | undefined) ?? null;
  }

  /** Writes one audit entry at once. Returns null, or the database's error text. */
  appendAudit(entry: AuditInput): string | null {
    const row = auditRow(entry);
    try {
      this.st.audit.run(row.atMs, row.actor, row.action, row.target, row.detail, row.source);
      return null;
    } catch (err) {
      return `writing the audit log: ${err instanceof Error ? err.message : String(err)}`;
    }
  }

  /** The newest entries first. */
  auditLog(limit: number): AuditEntry[] {
    if (!Number.isSafeInteger(limit) || limit < 1) throw new RangeError(`AccountStore.auditLog: expected limit to be a whole number ≥ 1, found ${String(limit)}`);
    return (this.st.auditNewest.all(limit) as { id: number; at_ms: number; actor: string; action: string; target: string | null; detail: string; source: AuditSource }[]).map(
      (r) => ({ id: r.id, atMs: r.at_ms, actor: r.actor, action: r.action, target: r.target, detail: parseDetail(r.detail), source: r.source }),
    );
  }

  private requireUser(name: string): StoredUser {
    const user = this.findUser(name);
    if (user === null) throw new AccountError(`user "${name}": no such account (see "millwarden user list")`);
    return user;
  }
}

export function checkUserName(name: string): void {
  if (typeof name !== "string" || !USER_NAME_PATTERN.test(name)) {
    const shown = typeof name === "string" ? `"${name.slice(0, 40).replace(CONTROL_CHARS, "?")}"` : String(name);
    throw new AccountError(`user name: expected ${USER_NAME_RULE}, found ${shown}`);
  }
}

function checkHash(hash: string): void {
  if (typeof hash !== "string" || !hash.startsWith("scrypt$")) throw new AccountError("password hash: expected a scrypt$... hash made by src/server/passwords.ts");
}

/** One printable line of bounded length: the audit log is read by people and by grep. */
function auditText(v: string): string {
  const clean = v.replace(CONTROL_CHARS, " ");
  return clean.length > AUDIT_TEXT_MAX ? `${clean.slice(0, AUDIT_TEXT_MAX)}…` : clean;
}

function auditRow(e: AuditInput): { atMs: number; actor: string; action: string; target: string | null; detail: string; source: AuditSource } {
  if (e === null || typeof e !== "object") throw new TypeError("AccountStore.appendAudit: expected an audit entry object");
  if (typeof e.atMs !== "number" || !Number.isFinite(e.atMs)) throw new TypeError(`AccountStore.appendAudit: expected atMs to be epoch milliseconds, found ${String(e.atMs)}`);
  if (typeof e.actor !== "string" || e.actor === "") throw new TypeError("AccountStore.appendAudit: expected actor to be a non-empty string");
  if (typeof e.action !== "string" || !/^[a-z][a-z-]*(\.[a-z][a-z-]*)*$/.test(e.action)) {
    throw new TypeError(`AccountStore.appendAudit: expected action as dotted lower-case words (login.ok), found ${JSON.stringify(String(e.action).slice(0, 40))}`);
  }
  if (!AUDIT_SOURCES.includes(e.source)) throw new TypeError(`AccountStore.appendAudit: expected source ${AUDIT_SOURCES.join(", ")}, found ${String(e.source)}`);
  const detail: AuditDetail = {};
  for (const [k, v] of Object.entries(e.detail ?? {})) {
    if (SECRET_KEY.test(k)) throw new TypeError(`AccountStore.appendAudit: detail key "${k}" names a secret; secrets never go into the audit log`);
    detail[k] = typeof v === "string" ? auditText(v) : v;
  }
  return {
    atMs: Math.trunc(e.atMs),
    actor: auditText(e.actor),
    action: e.action,
    target: e.target === null ? null : auditText(e.target),
    detail: JSON.stringify(detail),
    source: e.source,
  };
}

function parseDetail(text: string): AuditDetail {
  try {
    const v = JSON.parse(text) as unknown;
    return v !== null && typeof v === "object" && !Array.isArray(v) ? (v as AuditDetail) : { unreadable: text.slice(0, 80) };
  } catch {
    return { unreadable: text.slice(0, 80) };
  }
}
