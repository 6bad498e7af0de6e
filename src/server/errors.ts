// The one registry of error codes the HTTP API answers with. Every error body is
// { error: <code>, message: <what was expected, where, what was found> }.
// Codes are part of the API: add new ones, never rename or reuse a retired one.

export const API_ERRORS = {
  BAD_QUERY: { status: 400, doc: "A query parameter is missing, malformed or out of range." },
  BAD_PARAM: { status: 400, doc: "A path parameter is malformed." },
  BAD_REQUEST: { status: 400, doc: "The request itself is malformed (URL encoding, headers)." },
  BAD_BODY: { status: 400, doc: "The request body is not the JSON object the route expects." },
  BODY_TOO_LARGE: { status: 413, doc: "The request body exceeds the route's size limit." },
  UNSUPPORTED_MEDIA_TYPE: { status: 415, doc: "The request body is not application/json." },
  UPGRADE_REQUIRED: { status: 426, doc: "The path is a WebSocket endpoint; plain HTTP requests are refused." },
  NOT_FOUND: { status: 404, doc: "No route or file at this path." },
  ADVISORY_NOT_FOUND: { status: 404, doc: "No advisory has this id (for ack: none is active under this id)." },
  ADVISORY_CONFLICT: {
    status: 409,
    doc: "The advisory is not in a state that accepts the command (already acknowledged, not latched, not shelved, a warning the site does not let be shelved).",
  },
  UNKNOWN_COMMAND: {
    status: 404,
    doc: "The path names no advisory command; the commands are ack, reset, shelve, unshelve, out-of-service and return-to-service.",
  },
  BAD_COMMAND: { status: 400, doc: "The daemon refused the command as given (e.g. a shelve longer than the site's advisoryPolicy.maxShelveS)." },
  FORBIDDEN: {
    status: 403,
    doc: "The session's role may not do this: commands need operator, out of service and return to service engineer, the audit log engineer or admin.",
  },
  UNAUTHENTICATED: { status: 401, doc: "No login session, or it has ended (expired, logged out, the account changed): log in with POST /api/login." },
  CSRF_REJECTED: { status: 403, doc: "A state-changing request without the X-CSRF-Token header, or with one that is not the session's token." },
  LOGIN_FAILED: { status: 401, doc: "The user name or the password was not accepted (the answer does not say which)." },
  LOGIN_LOCKED: { status: 429, doc: "Too many failed logins for this user or from this address: logins are refused until Retry-After seconds have passed." },
  LOGIN_BUSY: { status: 503, doc: "Too many logins are being checked at this moment; try again in a second (Retry-After)." },
  ACK_LINK_INVALID: { status: 404, doc: "The acknowledge link is not one this box made (mistyped, cut short, or made with another key)." },
  ACK_LINK_USED: { status: 409, doc: "The acknowledge link has been used already: each link works once (the answer says by whom and when)." },
  ACK_LINK_EXPIRED: { status: 410, doc: "The acknowledge link is older than its lifetime; acknowledge on the dashboard instead." },
  ACK_LINK_REFUSED: { status: 401, doc: "The user name, PIN or password given with an acknowledge link was not accepted (the answer does not say which)." },
  ACK_LINK_LOCKED: { status: 429, doc: "Too many wrong PINs or passwords for this link or this user: refused until Retry-After seconds have passed." },
  PUSH_NO_PERSON: { status: 409, doc: "The logged-in account is not a person of notifications.people (an account maps to the person whose id is its name, without case)." },
  NOTIFICATIONS_OFF: { status: 404, doc: "The route needs notifications (or a Web Push channel) configured, and they are not." },
  UNKNOWN_SERIES: { status: 404, doc: "The trend series is neither a signal id nor a derived key." },
  INTERNAL: { status: 500, doc: "Unexpected failure inside the server; details are in the server log only." },
} as const satisfies Record<string, { status: number; doc: string }>;

export type ApiErrorCode = keyof typeof API_ERRORS;

export interface ApiErrorBody {
  error: ApiErrorCode;
  message: string;
}

/** Thrown by route handlers; the app's error handler turns it into the JSON body. */
export class ApiError extends Error {
  readonly statusCode: number;
  constructor(
    readonly code: ApiErrorCode,
    message: string,
  ) {
    super(message);
    this.name = "ApiError";
    this.statusCode = API_ERRORS[code].status;
  }

  toBody(): ApiErrorBody {
    return { error: this.code, message: this.message };
  }
}

/** Quote a value the client sent, shortened so an error text stays readable (and bounded). */
export function describeFound(value: unknown): string {
  if (value === undefined) return "nothing";
  if (value === null) return "null";
  if (typeof value === "string") {
    const shown = value.length > 40 ? `${value.slice(0, 40)}…` : value;
    return `"${shown}"${value.length > 40 ? ` (${value.length} characters)` : ""}`;
  }
  if (typeof value === "number" || typeof value === "boolean") return `${typeof value} ${String(value)}`;
  if (Array.isArray(value)) return `an array of ${value.length}`;
  return typeof value === "object" ? "an object" : typeof value;
}
