// Parsing and validation of what clients send. Pure functions: the current time is an
// argument, so the trend defaults are deterministic. Each failure throws an ApiError
// naming the parameter, what was expected and what was found.
import { ApiError, describeFound } from "./errors.js";

export const ADVISORY_LIMIT_DEFAULT = 100;
export const ADVISORY_LIMIT_MAX = 1000;
export const TREND_DEFAULT_SPAN_MS = 60 * 60 * 1000;
export const TREND_MAX_SPAN_MS = 31 * 24 * 60 * 60 * 1000;
export const ACK_BY_MAX_CHARS = 64;
export const ACK_NOTE_MAX_CHARS = 500;

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

export interface AckBody {
  by: string;
  note?: string;
}

// Control characters would corrupt the audit trail's one-line records.
// eslint-disable-next-line no-control-regex
const CONTROL_CHARS = /[\u0000-\u001f\u007f-\u009f]/;

/** Length in characters as people count them (code points), not UTF-16 units. */
const charCount = (s: string): number => [...s].length;

export function parseAckBody(body: unknown): AckBody {
  if (body === null || typeof body !== "object" || Array.isArray(body)) {
    throw new ApiError(
      "BAD_BODY",
      `request body: expected a JSON object such as {"by": "A. Operator", "note": "..."}, found ${describeFound(body)}`,
    );
  }
  const record = body as Record<string, unknown>;
  // Refusing unknown fields catches typos ("notes") that would silently lose the note.
  const unknown = Object.keys(record).filter((k) => k !== "by" && k !== "note");
  if (unknown.length > 0) {
    throw new ApiError(
      "BAD_BODY",
      `request body: expected only the fields "by" and "note", found ${unknown.map((k) => `"${k}"`).join(", ")}`,
    );
  }
  const by = record["by"];
  if (typeof by !== "string") {
    throw new ApiError(
      "BAD_BODY",
      `request body field "by": expected the name of the person acknowledging (a string of 1 to ${ACK_BY_MAX_CHARS} characters), found ${describeFound(by)}`,
    );
  }
  const byTrimmed = by.trim();
  if (byTrimmed === "" || charCount(byTrimmed) > ACK_BY_MAX_CHARS || CONTROL_CHARS.test(byTrimmed)) {
    const what = CONTROL_CHARS.test(byTrimmed)
      ? "a control character"
      : `${charCount(byTrimmed)} characters after trimming spaces`;
    throw new ApiError(
      "BAD_BODY",
      `request body field "by": expected 1 to ${ACK_BY_MAX_CHARS} printable characters, found ${what}`,
    );
  }
  const note = record["note"];
  if (note === undefined) return { by: byTrimmed };
  if (typeof note !== "string") {
    throw new ApiError(
      "BAD_BODY",
      `request body field "note": expected a string of at most ${ACK_NOTE_MAX_CHARS} characters, found ${describeFound(note)}`,
    );
  }
  if (charCount(note) > ACK_NOTE_MAX_CHARS) {
    throw new ApiError(
      "BAD_BODY",
      `request body field "note": expected at most ${ACK_NOTE_MAX_CHARS} characters, found ${charCount(note)}`,
    );
  }
  const noteTrimmed = note.trim();
  return noteTrimmed === "" ? { by: byTrimmed } : { by: byTrimmed, note: noteTrimmed };
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
