// Notification routes: acknowledge from a notification, the delivery log, Web Push sign-up.
//
//   GET    /api/ack-link            X-Ack-Token: <token>   what the link stands for (no side effect)
//   POST   /api/ack-link            {token, user, secret}   acknowledge: PIN or password, no session
//   GET    /api/notifications/deliveries?limit=N          the delivery log, newest first (engineer, admin)
//   GET    /api/push/key                                   the VAPID public key browsers subscribe with
//   POST   /api/push/subscribe      {endpoint, keys: {p256dh, auth}}   session + CSRF (the gate)
//   DELETE /api/push/subscribe      {endpoint}                          session + CSRF (the gate)
//
// The acknowledge POST needs no session and no CSRF token: the token binds the form (only who
// holds the link can post it), and the body must be application/json, which a cross-site page
// cannot send without a CORS preflight this server never grants. The token comes in a header or
// the body, never the URL, so it stays out of access logs; it is never logged or audited.
//
// Guessing: wrong secrets count per link and per user (LoginThrottle, DEFAULT_ACK_LOCKOUT); once
// either has too many, the link (or every link of the user) is refused until the lock ends.
//
// Accounts and roster people: an account stands for the person of notifications.people whose
// id equals its name (without case), e.g. account "a.berg" for person a.berg. Only such an
// account can subscribe a browser.
import type { FastifyInstance, FastifyRequest } from "fastify";
import { ADVISORY_ONLY } from "../core/types.js";
import type { Auth, LockoutPolicy } from "./auth.js";
import { COMMAND_ROLE, hasRole, LoginThrottle } from "./auth.js";
import type { AckLinkLookup, AppDeps, NotifyPort } from "./deps.js";
import { ApiError, describeFound } from "./errors.js";
import { parseAuditQuery, rejectUnknown } from "./params.js";
import { dummyHash, verifyPassword, type ScryptParams } from "./passwords.js";

export const ACK_LINK_PATH = "/api/ack-link";
export const ACK_TOKEN_HEADER = "x-ack-token";

/** Per link: a few tries (a PIN is short); per user: across links. A quarter of an hour (common practice). */
export const DEFAULT_ACK_LOCKOUT: LockoutPolicy = { userFailures: 5, addressFailures: 5, windowMs: 15 * 60_000, lockMs: 15 * 60_000 };

/** Reading the delivery log. */
export const DELIVERIES_ROLE = "engineer" as const;

export interface NotifyRouteOptions {
  /** userFailures: per user; addressFailures: per link. */
  lockout?: Partial<LockoutPolicy>;
  dummyScrypt?: ScryptParams;
  /** PIN or password checks running at once at most (each scrypt check takes 32 MiB); default 2. */
  maxConcurrentChecks?: number;
}

type Body = Record<string, unknown>;

function jsonOnly(request: FastifyRequest): void {
  const contentType = request.headers["content-type"] ?? "";
  if (!/^application\/json\s*(;|$)/i.test(contentType)) {
    throw new ApiError("UNSUPPORTED_MEDIA_TYPE", `request body: expected Content-Type application/json, found ${describeFound(contentType || undefined)}`);
  }
}

function objectBody(body: unknown, what: string): Body {
  if (body === null || typeof body !== "object" || Array.isArray(body)) throw new ApiError("BAD_BODY", `${what}: expected a JSON object, found ${describeFound(body)}`);
  return body as Body;
}

function text(b: Body, key: string, what: string, max: number): string {
  const v = b[key];
  if (typeof v !== "string" || v.length === 0 || v.length > max) throw new ApiError("BAD_BODY", `${what}: expected "${key}" as a text of 1 to ${max} characters, found ${describeFound(v)}`);
  return v;
}

function linkError(r: Extract<AckLinkLookup, { ok: false }>): ApiError {
  return new ApiError(r.status === 404 ? "ACK_LINK_INVALID" : r.status === 409 ? "ACK_LINK_USED" : "ACK_LINK_EXPIRED", r.error);
}

function port(deps: AppDeps): NotifyPort {
  if (!deps.notify) throw new ApiError("NOTIFICATIONS_OFF", "notifications are not configured on this box: expected a notifications: section in the config");
  return deps.notify;
}

export function registerNotifyRoutes(app: FastifyInstance, deps: AppDeps, auth: Auth, opts: NotifyRouteOptions = {}): void {
  const policy: LockoutPolicy = { ...DEFAULT_ACK_LOCKOUT, ...opts.lockout };
  const throttle = new LoginThrottle(policy);
  const dummyParams = opts.dummyScrypt;
  const maxChecks = opts.maxConcurrentChecks ?? 2;
  let checking = 0;

  const lookup = (n: NotifyPort, token: string) => {
    const r = n.inspectAckLink(token);
    if (!r.ok) throw linkError(r);
    return r;
  };

  app.get(ACK_LINK_PATH, async (request) => {
    rejectUnknown(request.query as Record<string, string | string[] | undefined>, []);
    const n = port(deps);
    const header = request.headers[ACK_TOKEN_HEADER];
    if (typeof header !== "string" || header === "") throw new ApiError("BAD_REQUEST", `GET ${ACK_LINK_PATH}: expected the link's token in the X-Ack-Token header, found ${Array.isArray(header) ? "it more than once" : "none"}`);
    const r = lookup(n, header);
    const advisory = deps.advisories({ limit: 1 }).active.find((a) => a.id === r.advisoryId) ?? null;
    return { advisoryId: r.advisoryId, subject: r.subject, channel: r.channel, channelKind: r.channelKind, expiresAtMs: r.expiresAtMs, advisory, advisoryOnly: ADVISORY_ONLY };
  });

  app.post(ACK_LINK_PATH, { onRequest: async (request) => jsonOnly(request) }, async (request, reply) => {
    const n = port(deps);
    const b = objectBody(request.body, `POST ${ACK_LINK_PATH}`);
    for (const k of Object.keys(b)) if (!["token", "user", "secret"].includes(k)) throw new ApiError("BAD_BODY", `POST ${ACK_LINK_PATH}: unknown field "${k.slice(0, 40)}": expected token, user, secret`);
    const token = text(b, "token", `POST ${ACK_LINK_PATH}`, 200);
    const typed = text(b, "user", `POST ${ACK_LINK_PATH}`, 64);
    const secret = text(b, "secret", `POST ${ACK_LINK_PATH}`, 1024);
    const link = lookup(n, token);
    const linkKey = `link:${link.outboxId}`;
    const userKey = `user:${typed.toLowerCase()}`;
    const at = auth.now();
    const lockedMs = throttle.lockedForMs([linkKey, userKey], at);
    if (lockedMs > 0) {
      const retryS = Math.ceil(lockedMs / 1000);
      reply.header("retry-after", String(retryS));
      throw new ApiError("ACK_LINK_LOCKED", `acknowledge link: refused for ${retryS} s more after repeated wrong PINs or passwords for this link or this user; nothing was checked`);
    }
    if (checking >= maxChecks) {
      reply.header("retry-after", "1");
      throw new ApiError("LOGIN_BUSY", `acknowledge link: ${checking} PINs or passwords are being checked; try again in a second`);
    }
    const account = deps.accounts.findUser(typed);
    const pin = account ? n.pinHash(account.name) : null;
    // Either the PIN or the password; a name without an account is checked against a stand-in (about the same time).
    let ok = false;
    checking += 1;
    try {
      if (account === null) await verifyPassword(secret, await dummyHash(dummyParams));
      else ok = (pin !== null && (await verifyPassword(secret, pin))) || (await verifyPassword(secret, account.passwordHash));
    } finally {
      checking -= 1;
    }
    const who = account?.name ?? "(unknown user)";
    const detail = { channel: link.channel, channelKind: link.channelKind, outboxId: link.outboxId, address: request.ip };
    if (!ok) {
      const started = throttle.fail(
        [
          { key: linkKey, limit: policy.addressFailures },
          { key: userKey, limit: policy.userFailures },
        ],
        auth.now(),
      );
      audit(deps, auth, request, { actor: who, action: "advisory.ack-link-failed", target: link.advisoryId, detail: { ...detail, reason: account === null ? "unknown user" : "wrong PIN or password" } });
      for (const key of started) {
        audit(deps, auth, request, { actor: who, action: "advisory.ack-link-locked", target: link.advisoryId, detail: { ...detail, scope: key === linkKey ? "link" : "user", lockedForS: Math.round(policy.lockMs / 1000) } });
      }
      throw new ApiError("ACK_LINK_REFUSED", "acknowledge link: the user name, PIN or password was not accepted");
    }
    throttle.clear(userKey);
    throttle.clear(linkKey);
    if (account === null) throw new ApiError("ACK_LINK_REFUSED", "acknowledge link: the user name, PIN or password was not accepted");
    if (!hasRole(account.role, COMMAND_ROLE.ack)) {
      audit(deps, auth, request, { actor: account.name, action: "advisory.ack", target: link.advisoryId, detail: { ...detail, role: account.role, outcome: "forbidden", needed: COMMAND_ROLE.ack } });
      throw new ApiError("FORBIDDEN", `acknowledging needs the ${COMMAND_ROLE.ack} role or above; "${account.name}" has ${account.role}`);
    }
    const used = n.useAckLink(token, account.name);
    if (!used.ok) throw linkError(used);
    const result = deps.command(link.advisoryId, "ack", { by: account.name, role: account.role, note: `acknowledged from a notification (${link.channelKind} "${link.channel}")` });
    // The escalation stops either way: the person has answered (an advisory acknowledged on the
    // dashboard meanwhile, or returned to normal, has ended its chain already).
    n.acknowledged(link.advisoryId, account.name);
    audit(deps, auth, request, {
      actor: account.name,
      action: "advisory.ack",
      target: link.advisoryId,
      detail: { ...detail, role: account.role, ...(result.ok ? { outcome: "ok" } : { outcome: "refused", status: result.status, error: result.error }) },
    });
    if (result.ok) return reply.code(200).send({ acknowledged: true, by: account.name, advisory: result.advisory, advisoryOnly: ADVISORY_ONLY });
    // Acknowledged on the dashboard meanwhile (409), or no longer active (404): the link has done its part.
    if (result.status === 409 || result.status === 404) return reply.code(200).send({ acknowledged: false, by: account.name, advisory: null, note: result.error, advisoryOnly: ADVISORY_ONLY });
    throw new ApiError(result.status === 403 ? "FORBIDDEN" : "BAD_COMMAND", result.error);
  });

  app.get("/api/notifications/deliveries", async (request) => {
    const s = auth.requireSession(request);
    auth.requireRole(s, DELIVERIES_ROLE, "reading the delivery log");
    const { limit } = parseAuditQuery(request.query as Record<string, string | string[] | undefined>);
    return { deliveries: port(deps).deliveries(limit) };
  });

  app.get("/api/push/key", async (request) => {
    rejectUnknown(request.query as Record<string, string | string[] | undefined>, []);
    const key = port(deps).vapidPublicKey();
    if (key === null) throw new ApiError("NOTIFICATIONS_OFF", "no Web Push channel is configured: expected a channel of kind webpush under notifications.channels");
    return { publicKey: key };
  });

  app.post("/api/push/subscribe", { onRequest: async (request) => jsonOnly(request) }, async (request) => {
    const s = auth.requireSession(request);
    const n = port(deps);
    if (n.vapidPublicKey() === null) throw new ApiError("NOTIFICATIONS_OFF", "no Web Push channel is configured: expected a channel of kind webpush under notifications.channels");
    const b = objectBody(request.body, "POST /api/push/subscribe");
    const endpoint = text(b, "endpoint", "POST /api/push/subscribe", 2000);
    if (!endpoint.startsWith("https://")) throw new ApiError("BAD_BODY", `POST /api/push/subscribe: expected "endpoint" as an https:// URL, found ${describeFound(endpoint)}`);
    const keys = objectBody(b["keys"], "POST /api/push/subscribe: keys");
    const p256dh = text(keys, "p256dh", "POST /api/push/subscribe: keys", 200);
    const authKey = text(keys, "auth", "POST /api/push/subscribe: keys", 100);
    const person = n.personOf(s.user);
    if (person === null) throw new ApiError("PUSH_NO_PERSON", `POST /api/push/subscribe: the account "${s.user}" is no person of notifications.people; expected a person whose id is the account's name`);
    try {
      n.subscribe(person, { endpoint, p256dh, auth: authKey });
    } catch (err) {
      if (err instanceof ApiError) throw err;
      throw new ApiError("BAD_BODY", `POST /api/push/subscribe: ${(err as Error).message}`);
    }
    auth.audit(request, { actor: s.user, action: "push.subscribe", target: s.user, detail: { service: new URL(endpoint).host } });
    return { subscribed: true, person };
  });

  app.delete("/api/push/subscribe", { onRequest: async (request) => jsonOnly(request) }, async (request) => {
    const s = auth.requireSession(request);
    const b = objectBody(request.body, "DELETE /api/push/subscribe");
    const endpoint = text(b, "endpoint", "DELETE /api/push/subscribe", 2000);
    const n = port(deps);
    const person = n.personOf(s.user);
    const removed = person !== null && n.unsubscribe(person, endpoint);
    auth.audit(request, { actor: s.user, action: "push.unsubscribe", target: s.user, detail: { removed } });
    return { removed };
  });
}

/** An audit entry from the acknowledge link (source "link"); a write failure is logged, never thrown. */
function audit(deps: AppDeps, auth: Auth, request: FastifyRequest, e: { actor: string; action: string; target: string | null; detail: Record<string, string | number | boolean | null> }): void {
  const err = deps.accounts.appendAudit({ ...e, atMs: auth.now(), source: "link" });
  if (err !== null) request.log.warn({ action: e.action }, err);
}
