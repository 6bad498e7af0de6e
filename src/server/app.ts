// The HTTP API and dashboard host. buildApp only builds (no listen), so tests drive it
// with inject(); listen.ts binds it to a port. The server keeps no plant state: every
// route reads through AppDeps.
//
//   POST /api/login {user,password} session cookie + {user, role, csrfToken}     (auth.ts)
//   POST /api/logout, GET /api/session, GET /api/audit?limit=N (engineer, admin)   (auth.ts)
//   GET  /api/health               deps.health()          200 ok / 503 degraded
//   GET  /api/state                deps.getState()
//   GET  /api/advisories?limit=N   deps.advisories()
//   POST /api/advisories/:id/<command>   deps.command()  200 {advisory} (null once normal);
//        command: ack | reset | shelve | unshelve | out-of-service | return-to-service
//        who and in what role: the login session's (operator; engineer for out of service)
//        the daemon's 400 BAD_COMMAND / 403 FORBIDDEN / 404 ADVISORY_NOT_FOUND / 409 ADVISORY_CONFLICT
//        pass through; another name is 404 UNKNOWN_COMMAND
//   GET  /api/trend?signal&from&to&points deps.trend()
//   GET|POST /api/ack-link, GET /api/notifications/deliveries, GET /api/push/key,
//   POST|DELETE /api/push/subscribe                            (notify-routes.ts)
//   GET  /api/rules                deps.rules()           the configured rules, every tier's limit
//   GET  /api/handover?hours=8|12  deps.handover()        the shift handover (src/server/handover.ts)
//   WS   /api/live                 snapshot, then deps.subscribe() messages (live.ts)
//   GET  /vendor/uplot/uPlot.esm.js, uPlot.min.css   the trends page's plotting library
//   GET  /*                        files from deps.dashboardDir
//
// Every request passes the gate of auth.ts first: a POST (but login) needs a session and its
// X-CSRF-Token (401 / 403); the views need a session only with server.requireLoginForViews.
// Security headers come from helmet, with a Content-Security-Policy that allows the dashboard's
// own files only (it has no inline script or style).
import { existsSync } from "node:fs";
import { createRequire } from "node:module";
import { dirname, join } from "node:path";
import fastifyCookie from "@fastify/cookie";
import helmet from "@fastify/helmet";
import fastifyStatic from "@fastify/static";
import websocket from "@fastify/websocket";
import Fastify, { type FastifyError, type FastifyInstance, type FastifyReply } from "fastify";
import { COMMAND_ROLE, registerAuth, type AuthOptions } from "./auth.js";
import { UnknownSeriesError, type AppDeps } from "./deps.js";
import { ApiError, describeFound, type ApiErrorBody, type ApiErrorCode } from "./errors.js";
import { LiveHub, type LiveHubOptions } from "./live.js";
import { registerNotifyRoutes, type NotifyRouteOptions } from "./notify-routes.js";
import {
  ADVISORY_COMMANDS,
  parseAdvisoryId,
  parseAdvisoryQuery,
  parseCommandBody,
  parseCommandName,
  parseHandoverQuery,
  parseTrendQuery,
  rejectUnknown,
} from "./params.js";

export interface BuildAppOptions {
  /** Passed to fastify: false (default) for tests, true or a pino options object in the daemon. */
  logger?: boolean | object;
  live?: LiveHubOptions;
  /** Logins and sessions: requireLoginForViews (server.requireLoginForViews), clock, lockout. */
  auth?: AuthOptions;
  /**
   * Behind a TLS-terminating proxy: take the client's address and protocol from its
   * X-Forwarded-* headers (the session cookie is then Secure). Never on a box reachable directly:
   * anyone could then claim any address and walk around the per-address lockout.
   */
  trustProxy?: boolean;
  /** Acknowledge links: lockout per link and per user (notify-routes.ts). */
  notify?: NotifyRouteOptions;
}

/** GET /api/trend answers with compact tuples: [tMs, value, quality]. */
export interface TrendResponse {
  signal: string;
  fromMs: number;
  toMs: number;
  /** [tMs, value, quality], plus [min, max] when a point stands for a bucket of samples. */
  points: ([number, number | null, string] | [number, number | null, string, number | null, number | null])[];
}

type Query = Record<string, string | string[] | undefined>;

/** GET /vendor/uplot/<file>: the files the trends page loads (node_modules/uplot/dist). */
const UPLOT_FILES = new Set(["/uPlot.esm.js", "/uPlot.min.css"]);

/** The daemon's refusals of a command, by status. */
const COMMAND_ERRORS = {
  400: "BAD_COMMAND",
  403: "FORBIDDEN",
  404: "ADVISORY_NOT_FOUND",
  409: "ADVISORY_CONFLICT",
} as const satisfies Record<400 | 403 | 404 | 409, ApiErrorCode>;

// The dashboard loads only its own files (scripts as modules, its stylesheets, a data: icon)
// and talks to its own origin ('self' covers ws: and wss: there, CSP Level 3 §6.7.2.5);
// everything else, framing included, is refused.
const CSP_DIRECTIVES: Record<string, string[]> = {
  "default-src": ["'self'"],
  "script-src": ["'self'"],
  "script-src-attr": ["'none'"],
  "style-src": ["'self'"],
  "img-src": ["'self'", "data:"],
  "connect-src": ["'self'"],
  "object-src": ["'none'"],
  "base-uri": ["'none'"],
  "form-action": ["'self'"],
  "frame-ancestors": ["'none'"],
};
const CSP = Object.entries(CSP_DIRECTIVES)
  .map(([k, v]) => `${k} ${v.join(" ")}`)
  .join("; ");

// Router errors (bad URL encoding, an over-long parameter) are answered before any hook runs,
// helmet's included: they get the essential headers here.
const FALLBACK_HEADERS: Record<string, string> = {
  "x-content-type-options": "nosniff",
  "x-frame-options": "DENY",
  "content-security-policy": CSP,
  "referrer-policy": "no-referrer",
  "cross-origin-opener-policy": "same-origin",
};

function sendError(reply: FastifyReply, status: number, code: ApiErrorCode, message: string): FastifyReply {
  const body: ApiErrorBody = { error: code, message };
  return reply.code(status).type("application/json; charset=utf-8").send(body);
}

function sendRouterError(reply: FastifyReply, status: number, code: ApiErrorCode, message: string): FastifyReply {
  for (const [name, value] of Object.entries(FALLBACK_HEADERS)) reply.header(name, value);
  return sendError(reply, status, code, message);
}

export async function buildApp(deps: AppDeps, opts: BuildAppOptions = {}): Promise<FastifyInstance> {
  const app = Fastify({
    logger: opts.logger ?? false,
    trustProxy: opts.trustProxy ?? false,
    // The only bodies are commands on an advisory (a name and a note or reason of at most 500 characters).
    bodyLimit: 16 * 1024,
    // Longer than any advisory id we accept, so params.ts gives the precise message.
    routerOptions: { maxParamLength: 256 },
    // Errors the router raises before any route runs get the same JSON body.
    frameworkErrors: (err, request, reply) => {
      if (err.code === "FST_ERR_MAX_PARAM_LENGTH") {
        return sendRouterError(reply, 400, "BAD_PARAM", `path parameter: expected at most 200 characters, found a longer one in ${request.method} ${request.url.slice(0, 80)}…`);
      }
      return sendRouterError(reply, 400, "BAD_REQUEST", `request URL: expected valid percent-encoding, found ${describeFound(request.url)}`);
    },
  });
  const hub = new LiveHub(deps, app.log, opts.live);

  await app.register(helmet, {
    contentSecurityPolicy: { useDefaults: false, directives: CSP_DIRECTIVES },
    frameguard: { action: "deny" },
    referrerPolicy: { policy: "no-referrer" },
    // Strict-Transport-Security is the TLS terminator's to send: over plain HTTP it means
    // nothing, and on a self-signed box it would make a certificate warning impossible to pass.
    strictTransportSecurity: false,
  });
  await app.register(fastifyCookie);

  app.addHook("onSend", async (request, reply, payload) => {
    // Plant data must never be served from a cache after the fact.
    if (request.url.startsWith("/api/")) reply.header("cache-control", "no-store");
    return payload;
  });

  app.setErrorHandler((err: FastifyError, request, reply) => {
    if (err instanceof ApiError) return sendError(reply, err.statusCode, err.code, err.message);
    switch (err.code) {
      case "FST_ERR_CTP_INVALID_MEDIA_TYPE":
        return sendError(
          reply,
          415,
          "UNSUPPORTED_MEDIA_TYPE",
          `request body: expected Content-Type application/json, found ${describeFound(request.headers["content-type"])}`,
        );
      case "FST_ERR_CTP_EMPTY_JSON_BODY":
        return sendError(reply, 400, "BAD_BODY", "request body: expected a JSON object, found an empty body");
      case "FST_ERR_CTP_INVALID_JSON_BODY":
        return sendError(reply, 400, "BAD_BODY", "request body: expected valid JSON, found text that does not parse as JSON");
      case "FST_ERR_CTP_BODY_TOO_LARGE":
        return sendError(reply, 413, "BODY_TOO_LARGE", "request body: expected at most 16 KiB, found more");
      default:
        break;
    }
    const status = typeof err.statusCode === "number" ? err.statusCode : 500;
    if (status >= 400 && status < 500) {
      return sendError(reply, status, "BAD_REQUEST", `request: ${err.message}`);
    }
    // Internals stay in the log; the client gets a pointer, not a stack.
    request.log.error({ err }, "request failed");
    return sendError(reply, 500, "INTERNAL", "internal error while handling the request; the server log has the details");
  });

  app.setNotFoundHandler((request, reply) =>
    sendError(
      reply,
      404,
      "NOT_FOUND",
      `${request.method} ${request.url.split("?")[0]}: no such route or file` +
        (request.url.startsWith("/api/")
          ? `; expected one of /api/health, /api/state, /api/advisories, /api/advisories/:id/<command> (POST; command: ${ADVISORY_COMMANDS.join(", ")}), /api/trend, /api/rules, /api/handover, /api/live, /api/login (POST), /api/logout (POST), /api/session, /api/audit, /api/ack-link, /api/notifications/deliveries, /api/push/key, /api/push/subscribe`
          : ""),
    ),
  );

  await app.register(websocket, {
    // Clients only listen; anything they send is small or a mistake.
    options: { maxPayload: 4096 },
    // Replaces the plugin's default: close our clients (with a deadline) so app.close() cannot hang.
    preClose: async () => {
      await hub.closeAll();
      app.websocketServer.close();
    },
  });

  // After the websocket plugin: its own onRequest hook must have marked an upgrade request
  // before the gate can refuse it, or the refused socket is never closed.
  const auth = registerAuth(app, deps.accounts, opts.auth);
  registerNotifyRoutes(app, deps, auth, opts.notify);

  app.get("/api/health", async (request, reply) => {
    rejectUnknown(request.query as Query, []);
    const health = deps.health();
    return reply.code(health.status === "ok" ? 200 : 503).send(health);
  });

  // Prometheus text format for the site's monitoring; read-only, no login (like /api/health).
  app.get("/metrics", async (request, reply) => {
    rejectUnknown(request.query as Query, []);
    if (!deps.metrics) return sendError(reply, 404, "NOT_FOUND", "no metrics in this build: expected GET /metrics from the daemon");
    const m = await deps.metrics();
    return reply.code(200).header("content-type", m.contentType).send(m.body);
  });

  app.get("/api/state", async (request) => {
    rejectUnknown(request.query as Query, []);
    return deps.getState();
  });

  app.get("/api/advisories", async (request) => {
    const { limit } = parseAdvisoryQuery(request.query as Query);
    return deps.advisories({ limit });
  });

  // Commands on an advisory, all timed by the daemon (never by the client). Who gives them and
  // in what role come from the session (the gate has checked it and its CSRF token); the path,
  // the role and the content type are checked before the body is read. Each command is written
  // to the audit log with its outcome, refusals by role included.
  app.post<{ Params: { id: string; command: string } }>(
    "/api/advisories/:id/:command",
    {
      onRequest: async (request) => {
        const kind = parseCommandName(request.params.command);
        const id = parseAdvisoryId(request.params.id);
        const session = auth.requireSession(request);
        const needed = COMMAND_ROLE[kind];
        try {
          auth.requireRole(session, needed, `${kind} of advisory "${id}"`);
        } catch (err) {
          auth.audit(request, { actor: session.user, action: `advisory.${kind}`, target: id, detail: { role: session.role, outcome: "forbidden", needed } });
          throw err;
        }
        // Only JSON: a text/plain POST is a "simple" cross-site request a browser sends without asking.
        const contentType = request.headers["content-type"] ?? "";
        if (!/^application\/json\s*(;|$)/i.test(contentType)) {
          throw new ApiError(
            "UNSUPPORTED_MEDIA_TYPE",
            `request body: expected Content-Type application/json, found ${describeFound(contentType || undefined)}`,
          );
        }
      },
    },
    async (request, reply) => {
      const kind = parseCommandName(request.params.command);
      const id = parseAdvisoryId(request.params.id);
      const session = auth.requireSession(request);
      const fields = parseCommandBody(kind, request.body);
      const result = deps.command(id, kind, { ...fields, by: session.user, role: session.role });
      auth.audit(request, {
        actor: session.user,
        action: `advisory.${kind}`,
        target: id,
        detail: {
          role: session.role,
          ...fields,
          ...(result.ok ? { outcome: "ok" } : { outcome: "refused", status: result.status, error: result.error }),
        },
      });
      if (result.ok) return reply.code(200).send({ advisory: result.advisory });
      return sendError(reply, result.status, COMMAND_ERRORS[result.status], result.error);
    },
  );

  app.get("/api/trend", async (request): Promise<TrendResponse> => {
    const { signal, fromMs, toMs, points: wanted } = parseTrendQuery(request.query as Query, () => deps.getState().nowMs);
    try {
      const points = deps.trend(signal, fromMs, toMs, wanted);
      return {
        signal,
        fromMs,
        toMs,
        points: points.map((p) => (p.min === undefined && p.max === undefined ? [p.tMs, p.value, p.quality] : [p.tMs, p.value, p.quality, p.min ?? null, p.max ?? null])),
      };
    } catch (err) {
      if (err instanceof UnknownSeriesError) throw new ApiError("UNKNOWN_SERIES", err.message);
      throw err;
    }
  });

  // Read-only, with the login rule of the other views (auth.ts VIEW_PATHS).
  app.get("/api/rules", async (request, reply) => {
    rejectUnknown(request.query as Query, []);
    if (!deps.rules) return sendError(reply, 404, "NOT_FOUND", "no rules in this build: expected GET /api/rules from the daemon");
    return { rules: deps.rules() };
  });

  app.get("/api/handover", async (request, reply) => {
    const { hours } = parseHandoverQuery(request.query as Query);
    if (!deps.handover) return sendError(reply, 404, "NOT_FOUND", "no handover in this build: expected GET /api/handover from the daemon");
    return deps.handover(hours);
  });

  app.route({
    method: "GET",
    url: "/api/live",
    handler: async (_request, reply) =>
      sendError(reply, 426, "UPGRADE_REQUIRED", "GET /api/live: expected a WebSocket upgrade request, found a plain HTTP request"),
    wsHandler: (socket, request) => {
      auth.trackSocket(request, socket);
      hub.add(socket);
    },
  });

  // The API works without the dashboard, so a missing folder is a warning, not a failure.
  if (!existsSync(join(deps.dashboardDir, "index.html"))) {
    app.log.warn({ dashboardDir: deps.dashboardDir }, "dashboard folder: expected index.html there, found none; / will answer 404");
  }
  await app.register(fastifyStatic, {
    root: deps.dashboardDir,
    prefix: "/",
    index: ["index.html"],
    // Revalidate every time: after an upgrade the browser must not mix old and new files.
    maxAge: 0,
  });
  // The trends page's plotting library, served from the installed package (nothing from outside
  // the box); only its ES module and its stylesheet.
  await app.register(fastifyStatic, {
    root: dirname(createRequire(import.meta.url).resolve("uplot")),
    prefix: "/vendor/uplot/",
    decorateReply: false,
    allowedPath: (pathName) => UPLOT_FILES.has(pathName),
    maxAge: 0,
  });

  return app;
}
