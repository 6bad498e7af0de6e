// Logins, sessions, CSRF and roles for the HTTP API.
//
//   POST /api/login {user, password} ─▶ throttle ─▶ scrypt check ─▶ session (memory) ─▶ cookie + csrfToken
//   every request ─▶ gate (onRequest): cookie ─▶ session ─▶ account still the same? ─▶ request's session
//        POST (but login): no session → 401; X-CSRF-Token ≠ session's token → 403
//        views (state, advisories, trend, health, live): 401 without a session when requireLoginForViews
//
// Sessions live in the daemon's memory, not in the database: a copy of the historian file (made
// for a replay, a backup, a support case) must not carry tokens that open a live session. The
// price: a restart of the daemon logs everybody out.
//
// A session is checked against its account at every request (one primary-key read), so a
// password change or a removal from the CLI (another process) ends it at once.
//
// Roles, each with what the one before may do: viewer (read), operator (ack, reset, shelve,
// unshelve), engineer (out of service, return to service, the audit log), admin (the same;
// accounts are managed with `millwarden user`, by whoever may write the historian file).
import { createHash, randomBytes, timingSafeEqual } from "node:crypto";
import type {} from "@fastify/cookie";
import type { FastifyInstance, FastifyReply, FastifyRequest } from "fastify";
import type { CommandKind } from "../core/types.js";
import type { AccountRole, AuditInput, StoredUser } from "../store/accounts.js";
import type { AccountsPort } from "./deps.js";
import { ApiError, describeFound } from "./errors.js";
import { parseAuditQuery, parseLoginBody, rejectUnknown } from "./params.js";
import { DEFAULT_SCRYPT, dummyHash, verifyPassword, type ScryptParams } from "./passwords.js";

export const SESSION_COOKIE = "millwarden_session";
export const CSRF_HEADER = "x-csrf-token";

/** A shift and its handover: long enough not to log a control room out mid-shift. */
export const SESSION_TTL_MS = 12 * 3600_000;

const RANK: Record<AccountRole, number> = { viewer: 0, operator: 1, engineer: 2, admin: 3 };

/** The least role each command needs. */
export const COMMAND_ROLE: Record<CommandKind, AccountRole> = {
  ack: "operator",
  reset: "operator",
  shelve: "operator",
  unshelve: "operator",
  "out-of-service": "engineer",
  "return-to-service": "engineer",
};

/** Reading the audit log. */
export const AUDIT_ROLE: AccountRole = "engineer";

export function hasRole(role: AccountRole, needed: AccountRole): boolean {
  return RANK[role] >= RANK[needed];
}

/** The read-only routes that need a login when server.requireLoginForViews is set. */
const VIEW_PATHS = new Set(["/api/state", "/api/advisories", "/api/trend", "/api/health", "/api/live", "/api/rules", "/api/handover"]);

export interface LockoutPolicy {
  /** Failed logins for one account name within windowMs that lock it. */
  userFailures: number;
  /** Failed logins from one address within windowMs that lock the address. */
  addressFailures: number;
  windowMs: number;
  /** How long a lock lasts. */
  lockMs: number;
}

/** Common practice: a few tries for a person, more for a shared terminal; a quarter of an hour. */
export const DEFAULT_LOCKOUT: LockoutPolicy = { userFailures: 5, addressFailures: 20, windowMs: 15 * 60_000, lockMs: 15 * 60_000 };

export interface AuthOptions {
  /** server.requireLoginForViews: the read-only routes need a session too. */
  requireLoginForViews?: boolean;
  /** The wall clock (sessions and lockouts are people's time, never the data's); injectable for tests. */
  now?: () => number;
  sessionTtlMs?: number;
  /** Sessions held at most; beyond, the oldest ends. Default 1000. */
  maxSessions?: number;
  lockout?: Partial<LockoutPolicy>;
  /** Password checks running at once at most (each takes 32 MiB and a quarter second); default 2. */
  maxConcurrentChecks?: number;
  /** Cost of the stand-in hash checked for names without an account; default the production cost. */
  dummyScrypt?: ScryptParams;
}

export interface Session {
  /** SHA-256 of the cookie's token: the token itself is not kept. */
  key: string;
  user: string;
  role: AccountRole;
  /** The account as it was at login (version and hash digest): any change ends the session. */
  accountTag: string;
  csrfToken: string;
  createdAtMs: number;
  expiresAtMs: number;
  /** Live sockets opened with this session, closed when it ends (requireLoginForViews). */
  sockets: Set<{ close(code?: number, reason?: string): void }>;
}

/** A short digest of what makes an account the same account (a re-added name is another account). */
function accountTag(u: StoredUser): string {
  return createHash("sha256").update(`${u.version}\n${u.role}\n${u.passwordHash}`).digest("base64url").slice(0, 22);
}

const tokenKey = (token: string): string => createHash("sha256").update(token).digest("base64url");

/** Constant-time comparison of two texts (different lengths compare unequal at once; lengths are not secret). */
function sameText(a: string, b: string): boolean {
  const x = Buffer.from(a);
  const y = Buffer.from(b);
  return x.length === y.length && timingSafeEqual(x, y);
}

export class SessionStore {
  private readonly byKey = new Map<string, Session>();

  constructor(
    private readonly ttlMs: number,
    private readonly maxSessions: number,
  ) {}

  get size(): number {
    return this.byKey.size;
  }

  create(user: StoredUser, nowMs: number): { token: string; session: Session } {
    const token = randomBytes(32).toString("base64url");
    const session: Session = {
      key: tokenKey(token),
      user: user.name,
      role: user.role,
      accountTag: accountTag(user),
      csrfToken: randomBytes(32).toString("base64url"),
      createdAtMs: nowMs,
      expiresAtMs: nowMs + this.ttlMs,
      sockets: new Set(),
    };
    // Map order is insertion order: the first entry is the oldest session.
    while (this.byKey.size >= this.maxSessions) {
      const oldest = this.byKey.values().next().value as Session;
      this.end(oldest, "too many sessions");
    }
    this.byKey.set(session.key, session);
    return { token, session };
  }

  /** The live session for a cookie's token, or null (an expired one is ended on the way). */
  find(token: string | undefined, nowMs: number): Session | null {
    if (token === undefined || token === "" || token.length > 200) return null;
    const s = this.byKey.get(tokenKey(token));
    if (s === undefined) return null;
    if (nowMs >= s.expiresAtMs) {
      this.end(s, "session expired");
      return null;
    }
    return s;
  }

  end(s: Session, reason: string): void {
    if (!this.byKey.delete(s.key)) return;
    // 4401: an application close code (RFC 6455 §7.4.2 leaves 4000–4999 to applications).
    for (const socket of s.sockets) socket.close(4401, reason);
    s.sockets.clear();
  }

  /** Ends the expired sessions. */
  sweep(nowMs: number): void {
    for (const s of this.byKey.values()) if (nowMs >= s.expiresAtMs) this.end(s, "session expired");
  }

  endAll(reason: string): void {
    for (const s of this.byKey.values()) this.end(s, reason);
  }
}

interface Counter {
  failures: number;
  firstMs: number;
  lockedUntilMs: number;
}

/** Failed logins per key ("user:<name>", "addr:<ip>"), with a lock once a key has too many. Bounded in memory. */
export class LoginThrottle {
  private readonly counters = new Map<string, Counter>();
  private static readonly MAX_KEYS = 10_000;

  constructor(private readonly policy: LockoutPolicy) {}

  /** Milliseconds until the longest lock on these keys ends; 0 when none is locked. */
  lockedForMs(keys: readonly string[], nowMs: number): number {
    let ms = 0;
    for (const k of keys) {
      const c = this.counters.get(k);
      if (c !== undefined && c.lockedUntilMs > nowMs) ms = Math.max(ms, c.lockedUntilMs - nowMs);
    }
    return ms;
  }

  /** Counts a failure; returns the keys whose lock it started. */
  fail(keys: readonly { key: string; limit: number }[], nowMs: number): string[] {
    const started: string[] = [];
    for (const { key, limit } of keys) {
      let c = this.counters.get(key);
      if (c === undefined || nowMs - c.firstMs > this.policy.windowMs || (c.lockedUntilMs !== 0 && c.lockedUntilMs <= nowMs)) {
        c = { failures: 0, firstMs: nowMs, lockedUntilMs: 0 };
      }
      c.failures += 1;
      if (c.failures >= limit && c.lockedUntilMs <= nowMs) {
        c.lockedUntilMs = nowMs + this.policy.lockMs;
        started.push(key);
      }
      // Re-inserted at the end: the first entry is the one touched longest ago.
      this.counters.delete(key);
      this.counters.set(key, c);
    }
    while (this.counters.size > LoginThrottle.MAX_KEYS) this.counters.delete(this.counters.keys().next().value as string);
    return started;
  }

  clear(key: string): void {
    this.counters.delete(key);
  }
}

const sessions = new WeakMap<FastifyRequest, Session | null>();

/** The request's session as the gate found it (null: none). */
export function sessionOf(request: FastifyRequest): Session | null {
  return sessions.get(request) ?? null;
}

export interface Auth {
  readonly sessions: SessionStore;
  /** The request's session, or 401. */
  requireSession(request: FastifyRequest): Session;
  /** The session's role is at least `needed`, or 403 naming what is needed. */
  requireRole(session: Session, needed: AccountRole, doing: string): void;
  /** Writes an audit entry from an HTTP request; a failure to write is logged, never thrown. */
  audit(request: FastifyRequest, entry: Omit<AuditInput, "atMs" | "source">): void;
  /** Remember a live socket opened with the request's session, to close it when the session ends. */
  trackSocket(request: FastifyRequest, socket: { close(code?: number, reason?: string): void; on(event: string, listener: () => void): unknown }): void;
  now(): number;
}

/**
 * Adds the gate and the routes POST /api/login, POST /api/logout, GET /api/session and
 * GET /api/audit to `app` (which has @fastify/cookie registered).
 */
export function registerAuth(app: FastifyInstance, accounts: AccountsPort, opts: AuthOptions = {}): Auth {
  const now = opts.now ?? Date.now;
  const requireLoginForViews = opts.requireLoginForViews ?? false;
  const policy: LockoutPolicy = { ...DEFAULT_LOCKOUT, ...opts.lockout };
  const store = new SessionStore(opts.sessionTtlMs ?? SESSION_TTL_MS, opts.maxSessions ?? 1000);
  const throttle = new LoginThrottle(policy);
  const maxChecks = opts.maxConcurrentChecks ?? 2;
  const dummyParams = opts.dummyScrypt ?? DEFAULT_SCRYPT;
  let checking = 0;

  const sweeper = setInterval(() => store.sweep(now()), 60_000);
  sweeper.unref();
  app.addHook("onClose", async () => {
    clearInterval(sweeper);
    store.endAll("server shutting down");
  });

  const audit: Auth["audit"] = (request, entry) => {
    const err = accounts.appendAudit({ ...entry, atMs: now(), source: "http" });
    if (err !== null) request.log.warn({ action: entry.action }, err);
  };

  /** The cookie's session, if it is live and its account unchanged. */
  const resolve = (request: FastifyRequest): Session | null => {
    const s = store.find(request.cookies[SESSION_COOKIE], now());
    if (s === null) return null;
    let user: StoredUser | null;
    try {
      user = accounts.findUser(s.user);
    } catch (err) {
      // The account cannot be read: no session is better than a session nobody can check.
      request.log.warn({ err }, "reading the account of a session failed; the request goes on without the session");
      return null;
    }
    if (user === null || accountTag(user) !== s.accountTag) {
      store.end(s, user === null ? "account removed" : "account changed");
      return null;
    }
    return s;
  };

  const requireSession = (request: FastifyRequest): Session => {
    const s = sessionOf(request);
    if (s === null) {
      throw new ApiError("UNAUTHENTICATED", `${request.method} ${request.url.split("?")[0]}: expected a login session (log in with POST /api/login), found ${request.cookies[SESSION_COOKIE] === undefined ? "no session cookie" : "a session that has ended"}`);
    }
    return s;
  };

  const requireRole: Auth["requireRole"] = (session, needed, doing) => {
    if (!hasRole(session.role, needed)) {
      throw new ApiError("FORBIDDEN", `${doing} needs the ${needed} role or above; "${session.user}" is logged in as ${session.role}`);
    }
  };

  app.addHook("onRequest", async (request) => {
    const session = resolve(request);
    sessions.set(request, session);
    const path = request.url.split("?")[0] ?? "";
    if (request.method === "GET" || request.method === "HEAD") {
      if (requireLoginForViews && VIEW_PATHS.has(path)) requireSession(request);
      return;
    }
    // Everything else may change state: a session and its CSRF token, except to log in and to
    // acknowledge with a link (the link's token binds that form; notify-routes.ts).
    if (request.method === "POST" && (path === "/api/login" || path === "/api/ack-link")) return;
    const s = requireSession(request);
    const header = request.headers[CSRF_HEADER];
    const sent = Array.isArray(header) ? undefined : header;
    if (sent === undefined || !sameText(sent, s.csrfToken)) {
      throw new ApiError(
        "CSRF_REJECTED",
        `${request.method} ${path}: expected the header X-CSRF-Token with the token of this session (from POST /api/login or GET /api/session), found ${sent === undefined ? (Array.isArray(header) ? "it more than once" : "none") : "a different token"}`,
      );
    }
  });

  const setSessionCookie = (request: FastifyRequest, reply: FastifyReply, token: string, session: Session): void => {
    reply.setCookie(SESSION_COOKIE, token, {
      path: "/",
      httpOnly: true,
      sameSite: "strict",
      // Over plain HTTP (a box on loopback, a bench) a Secure cookie would never come back.
      secure: request.protocol === "https",
      maxAge: Math.floor((session.expiresAtMs - now()) / 1000),
      expires: new Date(session.expiresAtMs),
    });
  };

  const sessionBody = (s: Session | null) =>
    s === null
      ? { user: null, role: null, csrfToken: null, expiresAtMs: null, requireLoginForViews }
      : { user: s.user, role: s.role, csrfToken: s.csrfToken, expiresAtMs: s.expiresAtMs, requireLoginForViews };

  app.post(
    "/api/login",
    {
      onRequest: async (request) => {
        // Only JSON: a form or text/plain POST is a "simple" cross-site request a browser sends without asking.
        const contentType = request.headers["content-type"] ?? "";
        if (!/^application\/json\s*(;|$)/i.test(contentType)) {
          throw new ApiError("UNSUPPORTED_MEDIA_TYPE", `request body: expected Content-Type application/json, found ${describeFound(contentType || undefined)}`);
        }
      },
    },
    async (request, reply) => {
      const { user: typed, password } = parseLoginBody(request.body);
      const address = request.ip;
      const userKey = `user:${typed.toLowerCase()}`;
      const addrKey = `addr:${address}`;
      const t = now();
      const lockedMs = throttle.lockedForMs([userKey, addrKey], t);
      if (lockedMs > 0) {
        const retryS = Math.ceil(lockedMs / 1000);
        reply.header("retry-after", String(retryS));
        throw new ApiError("LOGIN_LOCKED", `login: refused for ${retryS} s more after repeated failures for this user or from this address; the password was not checked`);
      }
      if (checking >= maxChecks) {
        reply.header("retry-after", "1");
        throw new ApiError("LOGIN_BUSY", `login: ${checking} logins are being checked; try again in a second`);
      }
      const account = accounts.findUser(typed);
      let ok: boolean;
      checking += 1;
      try {
        // Names without an account are checked against a stand-in hash: the same time either way.
        ok = (await verifyPassword(password, account?.passwordHash ?? (await dummyHash(dummyParams)))) && account !== null;
      } finally {
        checking -= 1;
      }
      // A name that has no account is not written anywhere: it may be a password typed into the wrong field.
      const who = account?.name ?? "(unknown user)";
      if (!ok) {
        const started = throttle.fail(
          [
            { key: userKey, limit: policy.userFailures },
            { key: addrKey, limit: policy.addressFailures },
          ],
          now(),
        );
        audit(request, { actor: who, action: "login.failed", target: account?.name ?? null, detail: { address, reason: account === null ? "unknown user" : "wrong password" } });
        for (const key of started) {
          audit(request, {
            actor: who,
            action: "login.locked",
            target: account?.name ?? null,
            detail: { address, scope: key === userKey ? "user" : "address", lockedForS: Math.round(policy.lockMs / 1000) },
          });
        }
        throw new ApiError("LOGIN_FAILED", "login: the user name or the password was not accepted");
      }
      throttle.clear(userKey);
      // A new token at every login (no session fixation); the one the browser had ends.
      const previous = sessionOf(request);
      if (previous !== null) store.end(previous, "logged in again");
      const { token, session } = store.create(account!, now());
      sessions.set(request, session);
      setSessionCookie(request, reply, token, session);
      audit(request, { actor: session.user, action: "login.ok", target: session.user, detail: { address, role: session.role } });
      return reply.code(200).send(sessionBody(session));
    },
  );

  app.post("/api/logout", async (request, reply) => {
    const s = requireSession(request);
    store.end(s, "logged out");
    sessions.set(request, null);
    reply.clearCookie(SESSION_COOKIE, { path: "/", httpOnly: true, sameSite: "strict", secure: request.protocol === "https" });
    audit(request, { actor: s.user, action: "logout", target: s.user, detail: { address: request.ip } });
    return reply.code(200).send(sessionBody(null));
  });

  app.get("/api/session", async (request) => {
    rejectUnknown(request.query as Record<string, string | string[] | undefined>, []);
    return sessionBody(sessionOf(request));
  });

  app.get("/api/audit", async (request) => {
    const s = requireSession(request);
    requireRole(s, AUDIT_ROLE, "reading the audit log");
    const { limit } = parseAuditQuery(request.query as Record<string, string | string[] | undefined>);
    return { entries: accounts.auditLog(limit) };
  });

  return {
    sessions: store,
    requireSession,
    requireRole,
    audit,
    trackSocket: (request, socket) => {
      const s = sessionOf(request);
      if (s === null || !requireLoginForViews) return;
      s.sockets.add(socket);
      socket.on("close", () => s.sockets.delete(socket));
    },
    now,
  };
}
