// Parsing and validation of what clients send. Pure functions: the current time is an
// argument, so the trend defaults are deterministic. Each failure throws an ApiError
// naming the parameter, what was expected and what was found.
import type { CommandKind } from "../core/types.js";
import type { AdvisoryCommandFields } from "./deps.js";
import { ApiError, describeFound } from "./errors.js";

export const ADVISORY_LIMIT_DEFAULT = 100;
export const ADVISORY_LIMIT_MAX = 1000;
export const TREND_DEFAULT_SPAN_MS = 60 * 60 * 1000;
export const TREND_MAX_SPAN_MS = 31 * 24 * 60 * 60 * 1000;
export const ACK_NOTE_MAX_CHARS = 500;
/** A shelve's or an out-of-service's reason, as long as a note. */
export const REASON_MAX_CHARS = 500;

type QueryValue = string | string[] | undefined;

/** One value per parameter: a repeated parameter is ambiguous, so it is refused. */
function single(name: string, raw: QueryValue): string | undefined {
  if (Array.isArray(raw)) {
    throw new ApiError("BAD_QUERY", `query parameter "${name}": expected it once, found it ${raw.length} times`);
  }
  return raw;
}

/** A misspelt parameter would silently fall back to its default, so unknown ones are refused. */
export function rejectUnknown(query: Record<string, QueryValue>, known: readonly string[]): void {
  const unknown = Object.keys(query).filter((k) => !known.includes(k));
  if (unknown.length === 0) return;
  const expected = known.length === 0 ? "no query parameters" : `only ${known.map((k) => `"${k}"`).join(", ")}`;
  throw new ApiError(
    "BAD_QUERY",
    `query parameters: expected ${expected}, found ${unknown.map((k) => `"${k.slice(0, 40)}"`).join(", ")}`,
  );
}

export function parseAdvisoryQuery(query: Record<string, QueryValue>): { limit: number } {
  rejectUnknown(query, ["limit"]);
  return { limit: parseAdvisoryLimit(query["limit"]) };
}

/** GET /api/handover?hours=8|12 (default 8): the shift lengths the handover page offers. */
export function parseHandoverQuery(query: Record<string, QueryValue>): { hours: 8 | 12 } {
  rejectUnknown(query, ["hours"]);
  const text = single("hours", query["hours"]);
  if (text === undefined) return { hours: 8 };
  if (text === "8" || text === "12") return { hours: Number(text) as 8 | 12 };
  throw new ApiError("BAD_QUERY", `query parameter "hours": expected 8 or 12, found ${describeFound(text)}`);
}

export function parseAdvisoryLimit(raw: QueryValue): number {
  const text = single("limit", raw);
  if (text === undefined) return ADVISORY_LIMIT_DEFAULT;
  const n = /^\d{1,7}$/.test(text) ? Number(text) : Number.NaN;
  if (!Number.isInteger(n) || n < 1 || n > ADVISORY_LIMIT_MAX) {
    throw new ApiError(
      "BAD_QUERY",
      `query parameter "limit": expected an integer from 1 to ${ADVISORY_LIMIT_MAX}, found ${describeFound(text)}`,
    );
  }
  return n;
}

// RFC 3339 date-time (section 5.6): full-date "T" full-time, offset Z or ±hh:mm.
// A space for "T" is allowed there too ("applications may"), so it is accepted.
const RFC3339 = /^(\d{4})-(\d{2})-(\d{2})[Tt ](\d{2}):(\d{2}):(\d{2})(\.\d+)?([Zz]|[+-]\d{2}:\d{2})$/;
// Epoch milliseconds stay below 8.64e15 (the ECMAScript time range): at most 16 digits.
const EPOCH_MS = /^\d{1,16}$/;
const MAX_TIME_MS = 8.64e15;

function daysInMonth(year: number, month: number): number {
  if (month === 2) return (year % 4 === 0 && year % 100 !== 0) || year % 400 === 0 ? 29 : 28;
  return [4, 6, 9, 11].includes(month) ? 30 : 31;
}

/**
 * A time given as epoch milliseconds (integer) or as an RFC 3339 date-time.
 * Date.parse alone is not enough: it rolls "2024-02-30" over into March.
 */
export function parseTimeMs(name: string, text: string): number {
  const expected = `query parameter "${name}": expected epoch milliseconds (an integer) or an RFC 3339 date-time such as 2024-05-01T06:00:00Z`;
  if (EPOCH_MS.test(text)) {
    const ms = Number(text);
    if (ms > MAX_TIME_MS) throw new ApiError("BAD_QUERY", `${expected}, found ${describeFound(text)} (beyond the year 275760)`);
    return ms;
  }
  const m = RFC3339.exec(text);
  if (!m) throw new ApiError("BAD_QUERY", `${expected}, found ${describeFound(text)}`);
  const [year, month, day, hour, minute, second] = m.slice(1, 7).map(Number) as [number, number, number, number, number, number];
  const fraction = m[7] ?? "";
  const offset = m[8] ?? "Z";
  const bad = (what: string): never => {
    throw new ApiError("BAD_QUERY", `${expected}, found ${describeFound(text)} (${what})`);
  };
  if (year < 1970) bad("year before 1970");
  if (month < 1 || month > 12) bad(`month ${month}`);
  if (day < 1 || day > daysInMonth(year, month)) bad(`day ${day} of month ${month}`);
  if (hour > 23) bad(`hour ${hour}`);
  if (minute > 59) bad(`minute ${minute}`);
  // RFC 3339 allows a leap second (60); epoch time has none, so it maps onto the next second.
  if (second > 60) bad(`second ${second}`);
  let offsetMin = 0;
  if (offset !== "Z" && offset !== "z") {
    const oh = Number(offset.slice(1, 3));
    const om = Number(offset.slice(4, 6));
    if (oh > 23 || om > 59) bad(`offset ${offset}`);
    offsetMin = (offset[0] === "-" ? -1 : 1) * (oh * 60 + om);
  }
  // Sub-millisecond digits are truncated: the historian stores whole milliseconds.
  const ms = fraction === "" ? 0 : Number(fraction.slice(1, 4).padEnd(3, "0"));
  return Date.UTC(year, month - 1, day, hour, minute, second, ms) - offsetMin * 60_000;
}

/** ISO text for messages; falls back to the number outside the Date range. */
function showTime(ms: number): string {
  return Math.abs(ms) <= MAX_TIME_MS ? new Date(ms).toISOString() : `${ms} ms`;
}

export interface TrendQuery {
  signal: string;
  fromMs: number;
  toMs: number;
  /** About how many points to return (the historian downsamples, keeping minima and maxima). */
  points: number;
}

export const TREND_DEFAULT_POINTS = 1000;
export const TREND_MAX_POINTS = 10_000;

/**
 * signal is required. "to" defaults to now, "from" to one hour before "to". now is
 * the daemon's time (never the wall clock), asked for only when "to" is missing.
 */
export function parseTrendQuery(query: Record<string, QueryValue>, nowMs: () => number): TrendQuery {
  rejectUnknown(query, ["signal", "from", "to", "points"]);
  const signal = single("signal", query["signal"]);
  if (signal === undefined || signal.trim() === "") {
    throw new ApiError(
      "BAD_QUERY",
      `query parameter "signal": expected a signal id or derived key (see GET /api/state), found ${describeFound(signal)}`,
    );
  }
  if (signal.length > 200) {
    throw new ApiError("BAD_QUERY", `query parameter "signal": expected at most 200 characters, found ${signal.length}`);
  }
  const fromText = single("from", query["from"]);
  const toText = single("to", query["to"]);
  const fromGiven = fromText !== undefined ? parseTimeMs("from", fromText) : undefined;
  const toGiven = toText !== undefined ? parseTimeMs("to", toText) : undefined;
  const toMs = toGiven ?? nowMs();
  const fromMs = fromGiven ?? toMs - TREND_DEFAULT_SPAN_MS;
  if (!(fromMs < toMs)) {
    throw new ApiError(
      "BAD_QUERY",
      `query parameters "from" and "to": expected from earlier than to, found from=${showTime(fromMs)} ` +
        `and to=${showTime(toMs)}`,
    );
  }
  if (toMs - fromMs > TREND_MAX_SPAN_MS) {
    const days = ((toMs - fromMs) / 86_400_000).toFixed(1);
    throw new ApiError(
      "BAD_QUERY",
      `query parameters "from" and "to": expected a span of at most 31 days, found ${days} days`,
    );
  }
  const pointsText = single("points", query["points"]);
  let points = TREND_DEFAULT_POINTS;
  if (pointsText !== undefined) {
    points = Number(pointsText);
    if (!/^\d+$/.test(pointsText) || points < 3 || points > TREND_MAX_POINTS) {
      throw new ApiError("BAD_QUERY", `query parameter "points": expected a whole number from 3 to ${TREND_MAX_POINTS}, found ${describeFound(pointsText)}`);
    }
  }
  return { signal, fromMs, toMs, points };
}

// Control characters would corrupt the audit trail's one-line records.
// eslint-disable-next-line no-control-regex
const CONTROL_CHARS = /[\u0000-\u001f\u007f-\u009f]/;

/** Length in characters as people count them (code points), not UTF-16 units. */
const charCount = (s: string): number => [...s].length;

interface CommandSpec {
  /** The body fields the command accepts; anything else is refused (a typo would lose it silently). */
  fields: readonly (keyof AdvisoryCommandFields)[];
  /** When the command needs a reason: what the reason says. */
  reasonFor?: string;
  example: string;
}

/**
 * The commands on an advisory (POST /api/advisories/:id/<command>) and the body each takes.
 * The shape is checked here; whether the advisory's state allows the command and the site's
 * longest shelve are the daemon's to decide (its 400/403/404/409 pass through). Who gives the
 * command and in what role come from the login session, never from the body.
 */
const COMMANDS: Record<CommandKind, CommandSpec> = {
  ack: { fields: ["note"], example: '{"note": "..."}' },
  reset: { fields: ["note"], example: '{"note": "..."}' },
  shelve: { fields: ["reason", "durationS", "oneShot"], reasonFor: "why the advisory is shelved", example: '{"reason": "...", "durationS": 3600}' },
  unshelve: { fields: ["reason"], example: '{"reason": "..."}' },
  "out-of-service": { fields: ["reason"], reasonFor: "why the advisory is taken out of service", example: '{"reason": "..."}' },
  "return-to-service": { fields: ["reason"], example: '{"reason": "..."}' },
};

/** The six command names, in the order the API documents them. */
export const ADVISORY_COMMANDS = Object.keys(COMMANDS) as CommandKind[];

/** '"a"', '"a" and "b"', '"a", "b" and "c"'. */
function quotedList(names: readonly string[]): string {
  const q = names.map((n) => `"${n}"`);
  return q.length <= 1 ? q.join("") : `${q.slice(0, -1).join(", ")} and ${q.at(-1)}`;
}

export function parseCommandName(raw: string | undefined): CommandKind {
  if (raw !== undefined && (ADVISORY_COMMANDS as string[]).includes(raw)) return raw as CommandKind;
  throw new ApiError(
    "UNKNOWN_COMMAND",
    `path /api/advisories/:id/<command>: expected one of the commands ${ADVISORY_COMMANDS.join(", ")}, found ${describeFound(raw)}`,
  );
}

/** A free text field (note, reason): trimmed; an empty optional one is dropped. */
function textField(name: string, raw: unknown, opts: { required: string | null; controlChars: boolean }): string | undefined {
  const max = name === "note" ? ACK_NOTE_MAX_CHARS : REASON_MAX_CHARS;
  if (raw === undefined && opts.required === null) return undefined;
  if (typeof raw !== "string") {
    const what = opts.required === null ? `a string of at most ${max} characters` : `${opts.required} (a string of 1 to ${max} characters)`;
    throw new ApiError("BAD_BODY", `request body field "${name}": expected ${what}, found ${describeFound(raw)}`);
  }
  if (charCount(raw) > max) {
    throw new ApiError("BAD_BODY", `request body field "${name}": expected at most ${max} characters, found ${charCount(raw)}`);
  }
  const trimmed = raw.trim();
  if (opts.controlChars && CONTROL_CHARS.test(trimmed)) {
    throw new ApiError("BAD_BODY", `request body field "${name}": expected printable characters on one line, found a control character`);
  }
  if (trimmed === "") {
    if (opts.required !== null) {
      throw new ApiError("BAD_BODY", `request body field "${name}": expected ${opts.required} (1 to ${max} characters), found ${raw === "" ? "an empty string" : "only spaces"}`);
    }
    return undefined;
  }
  return trimmed;
}

/**
 * The body of a command on an advisory. Each failure names the field, what was expected and
 * what was found. "by" and "role" are refused: they come from the login session, and a body
 * that names someone else must not look as if it were accepted.
 */
export function parseCommandBody(kind: CommandKind, body: unknown): AdvisoryCommandFields {
  const spec = COMMANDS[kind];
  if (body === null || typeof body !== "object" || Array.isArray(body)) {
    throw new ApiError("BAD_BODY", `request body for ${kind}: expected a JSON object such as ${spec.example}, found ${describeFound(body)}`);
  }
  const record = body as Record<string, unknown>;
  for (const field of ["by", "role"] as const) {
    if (Object.hasOwn(record, field)) {
      throw new ApiError(
        "BAD_BODY",
        `request body field "${field}": not accepted; who gives a command and in what role come from the login session (POST /api/login), expected only ${quotedList(spec.fields)}`,
      );
    }
  }
  // Refusing unknown fields catches typos ("notes") that would silently lose the text.
  const unknown = Object.keys(record).filter((k) => !(spec.fields as readonly string[]).includes(k));
  if (unknown.length > 0) {
    throw new ApiError(
      "BAD_BODY",
      `request body for ${kind}: expected only the field${spec.fields.length > 1 ? "s" : ""} ${quotedList(spec.fields)}, found ${unknown.map((k) => `"${k.slice(0, 40)}"`).join(", ")}`,
    );
  }
  const out: AdvisoryCommandFields = {};

  // A note may span lines (as it always could); a reason is one line of the audit trail.
  const note = textField("note", record["note"], { required: null, controlChars: false });
  if (note !== undefined) out.note = note;
  const reason = textField("reason", record["reason"], { required: spec.reasonFor ?? null, controlChars: true });
  if (reason !== undefined) out.reason = reason;

  const durationS = record["durationS"];
  if (durationS !== undefined) {
    if (typeof durationS !== "number" || !Number.isSafeInteger(durationS) || durationS < 1) {
      throw new ApiError(
        "BAD_BODY",
        `request body field "durationS": expected a whole number of seconds, at least 1 (at most the site's advisoryPolicy.maxShelveS), found ${describeFound(durationS)}`,
      );
    }
    out.durationS = durationS;
  }
  const oneShot = record["oneShot"];
  if (oneShot !== undefined) {
    if (typeof oneShot !== "boolean") {
      throw new ApiError("BAD_BODY", `request body field "oneShot": expected true or false, found ${describeFound(oneShot)}`);
    }
    out.oneShot = oneShot;
  }
  if (kind === "shelve" && out.durationS === undefined && out.oneShot !== true) {
    throw new ApiError(
      "BAD_BODY",
      `request body for shelve: expected "durationS" (whole seconds) or "oneShot": true, found ${out.oneShot === false ? '"oneShot": false and no "durationS"' : "neither"}`,
    );
  }
  return out;
}

export interface LoginBody {
  user: string;
  password: string;
}

/**
 * POST /api/login {user, password}. The messages name the field and never repeat what was
 * sent: a password typed into the wrong field must not come back in an answer or a log.
 */
export function parseLoginBody(body: unknown): LoginBody {
  if (body === null || typeof body !== "object" || Array.isArray(body)) {
    throw new ApiError("BAD_BODY", `request body for login: expected a JSON object {"user": "...", "password": "..."}, found ${Array.isArray(body) ? "an array" : body === null ? "null" : typeof body}`);
  }
  const record = body as Record<string, unknown>;
  const unknown = Object.keys(record).filter((k) => k !== "user" && k !== "password");
  if (unknown.length > 0) {
    throw new ApiError("BAD_BODY", `request body for login: expected only the fields "user" and "password", found ${unknown.length} other field${unknown.length > 1 ? "s" : ""}`);
  }
  const { user, password } = record;
  if (typeof user !== "string" || user.length === 0 || user.length > 64) {
    throw new ApiError("BAD_BODY", `request body field "user": expected an account name of 1 to 64 characters, found ${typeof user === "string" ? `${user.length} characters` : user === undefined ? "nothing" : typeof user}`);
  }
  if (typeof password !== "string" || password.length === 0 || password.length > 1024) {
    throw new ApiError("BAD_BODY", `request body field "password": expected a string of 1 to 1024 characters, found ${typeof password === "string" ? `${password.length} characters` : password === undefined ? "nothing" : typeof password}`);
  }
  return { user, password };
}

export const AUDIT_LIMIT_DEFAULT = 100;
export const AUDIT_LIMIT_MAX = 1000;

/** GET /api/audit?limit=N. */
export function parseAuditQuery(query: Record<string, QueryValue>): { limit: number } {
  rejectUnknown(query, ["limit"]);
  const text = single("limit", query["limit"]);
  if (text === undefined) return { limit: AUDIT_LIMIT_DEFAULT };
  const n = /^\d{1,7}$/.test(text) ? Number(text) : Number.NaN;
  if (!Number.isInteger(n) || n < 1 || n > AUDIT_LIMIT_MAX) {
    throw new ApiError("BAD_QUERY", `query parameter "limit": expected an integer from 1 to ${AUDIT_LIMIT_MAX}, found ${describeFound(text)}`);
  }
  return { limit: n };
}

/** Advisory ids are rule ids (plus an instance): short printable text. */
export function parseAdvisoryId(raw: string | undefined): string {
  if (raw === undefined || raw === "" || raw.length > 200 || CONTROL_CHARS.test(raw)) {
    throw new ApiError(
      "BAD_PARAM",
      `path parameter "id": expected an advisory id of 1 to 200 printable characters (see GET /api/advisories), found ${describeFound(raw)}`,
    );
  }
  return raw;
}
