// The history exchange format (DESIGN.md §6), used by replay and export:
//
//   time,signal,value,quality
//   2026-01-12T06:00:00.000Z,bf2.outlet.co,41.2,good
//   2026-01-12T06:00:01.000Z,bf2.outlet.h2o,,bad
//
// - a header line first (the quality column may be left out of it: "time,signal,value");
// - time: RFC 3339 in UTC ("Z", or the offset +00:00), seconds with an optional fraction;
//   samples keep whole milliseconds (further digits are cut off, not rounded);
// - signal: the signal id of the config (not the plant tag); a field may be quoted the
//   RFC 4180 way ("a,b" or "say ""x""") when it holds a comma or a quote;
// - value: a decimal number in the signal's canonical unit; empty only with quality bad
//   (the sample then carries NaN);
// - quality: good | uncertain | bad, optional (missing or empty is good).
// Blank lines are skipped; CRLF line ends and a leading byte-order mark are accepted.
// A file carries these four columns only: a sample's qualityReason and functionCheck are
// not part of the format. The receive time of a parsed sample is its source time (replay
// runs on the data's own clock).
//
// Pure: no I/O. For a large file read it line by line (node:readline) and hand each line
// to parseHistoryCsvHeader / parseHistoryCsvLine; parseHistoryCsv does that for a string.
import type { Quality, Sample } from "../core/types.js";

export const HISTORY_CSV_COLUMNS = ["time", "signal", "value", "quality"] as const;
export const HISTORY_CSV_HEADER = HISTORY_CSV_COLUMNS.join(",");
export type HistoryCsvColumn = (typeof HISTORY_CSV_COLUMNS)[number];

/** A line that does not follow the format: where (file:line, column), what was expected, what was found. */
export class HistoryCsvError extends Error {
  constructor(
    readonly file: string,
    readonly line: number,
    /** The column at fault, or null when the line as a whole is (column count, header). */
    readonly column: HistoryCsvColumn | null,
    readonly expected: string,
    readonly found: string,
  ) {
    super(`${file}:${line}: ${column === null ? "" : `${column}: `}expected ${expected}, found ${found}`);
    this.name = "HistoryCsvError";
  }
}

/** How a found text is shown in an error: quoted, shortened. */
function shown(text: string): string {
  if (text === "") return "nothing";
  const s = JSON.stringify(text.length > 60 ? `${text.slice(0, 60)}…` : text);
  return s;
}

/**
 * Split one line into fields: commas separate, a field that starts with a double quote
 * runs to the matching quote ("" inside is one quote). Unquoted fields are trimmed.
 * Returns an error text instead of throwing, so the caller can name file and line.
 */
function splitFields(line: string): string[] | { error: string } {
  const fields: string[] = [];
  let i = 0;
  for (;;) {
    while (line[i] === " " || line[i] === "\t") i++;
    if (line[i] === '"') {
      let value = "";
      i++;
      for (;;) {
        const q = line.indexOf('"', i);
        if (q < 0) return { error: `an unterminated quoted field (column ${fields.length + 1})` };
        value += line.slice(i, q);
        if (line[q + 1] === '"') {
          value += '"';
          i = q + 2;
          continue;
        }
        i = q + 1;
        break;
      }
      while (line[i] === " " || line[i] === "\t") i++;
      if (i < line.length && line[i] !== ",") return { error: `text after the closing quote of column ${fields.length + 1}: ${shown(line.slice(i))}` };
      fields.push(value);
    } else {
      const comma = line.indexOf(",", i);
      const end = comma < 0 ? line.length : comma;
      fields.push(line.slice(i, end).trim());
      i = end;
    }
    if (i >= line.length) return fields;
    i++; // the comma
  }
}

function stripLineEnd(line: string): string {
  return line.endsWith("\r") ? line.slice(0, -1) : line;
}

/**
 * Check the header line. Accepts "time,signal,value,quality" and "time,signal,value"
 * (case and spaces around names do not matter; a leading byte-order mark is dropped).
 */
export function parseHistoryCsvHeader(line: string, lineNo: number, file: string): void {
  const text = stripLineEnd(line.startsWith("\uFEFF") ? line.slice(1) : line);
  const fields = splitFields(text);
  const names = Array.isArray(fields) ? fields.map((f) => f.toLowerCase()) : null;
  const ok = names !== null && (names.length === 3 || names.length === 4) && names.every((n, i) => n === HISTORY_CSV_COLUMNS[i]);
  if (!ok) throw new HistoryCsvError(file, lineNo, null, `the header line "${HISTORY_CSV_HEADER}" (quality optional)`, shown(text));
}

const RFC3339_UTC = /^(\d{4})-(\d{2})-(\d{2})[Tt](\d{2}):(\d{2}):(\d{2})(?:\.(\d{1,9}))?(?:[Zz]|\+00:00)$/;
const DECIMAL = /^[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?$/;
const QUALITIES: readonly Quality[] = ["good", "uncertain", "bad"];
const TIME_EXPECTED = "an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z";

/** Days since 1970-01-01 of a proleptic Gregorian date (H. Hinnant's days_from_civil). */
function daysFromCivil(y: number, m: number, d: number): number {
  const yy = m <= 2 ? y - 1 : y;
  const era = Math.floor(yy / 400);
  const yoe = yy - era * 400;
  const doy = Math.floor((153 * (m + (m > 2 ? -3 : 9)) + 2) / 5) + d - 1;
  const doe = yoe * 365 + Math.floor(yoe / 4) - Math.floor(yoe / 100) + doy;
  return era * 146097 + doe - 719468;
}

function daysInMonth(y: number, m: number): number {
  if (m === 2) return (y % 4 === 0 && y % 100 !== 0) || y % 400 === 0 ? 29 : 28;
  return [4, 6, 9, 11].includes(m) ? 30 : 31;
}

/** Epoch ms of an RFC 3339 UTC time, or an error text saying what is wrong with it. */
function parseTime(text: string): number | { error: string } {
  const m = RFC3339_UTC.exec(text);
  if (!m) return { error: TIME_EXPECTED };
  const [y, mo, d, h, mi, s] = m.slice(1, 7).map(Number) as [number, number, number, number, number, number];
  if (mo < 1 || mo > 12) return { error: `${TIME_EXPECTED} (month 01-12)` };
  if (d < 1 || d > daysInMonth(y, mo)) return { error: `${TIME_EXPECTED} (day 01-${daysInMonth(y, mo)} in ${m[1]}-${m[2]})` };
  if (h > 23 || mi > 59) return { error: `${TIME_EXPECTED} (hour 00-23, minute 00-59)` };
  if (s > 59) return { error: `${TIME_EXPECTED} (second 00-59; leap seconds are not supported)` };
  const ms = m[7] === undefined ? 0 : Number(m[7].slice(0, 3).padEnd(3, "0"));
  return ((daysFromCivil(y, mo, d) * 24 + h) * 60 + mi) * 60_000 + s * 1000 + ms;
}

/**
 * One data line. Returns null for a blank line; throws HistoryCsvError (file:line, the
 * column, what was expected, what was found) for anything that is not a sample.
 */
export function parseHistoryCsvLine(line: string, lineNo: number, file: string): Sample | null {
  const text = stripLineEnd(line);
  if (text.trim() === "") return null;
  const fields = splitFields(text);
  if (!Array.isArray(fields)) throw new HistoryCsvError(file, lineNo, null, "fields separated by commas", fields.error);
  if (fields.length < 3 || fields.length > 4) {
    throw new HistoryCsvError(file, lineNo, null, `3 or 4 columns (${HISTORY_CSV_HEADER}, quality optional)`, `${fields.length} in ${shown(text)}`);
  }
  const [timeText, signal, valueText, qualityText = ""] = fields as [string, string, string, string?];

  const t = parseTime(timeText);
  if (typeof t !== "number") throw new HistoryCsvError(file, lineNo, "time", t.error, shown(timeText));
  if (signal === "") throw new HistoryCsvError(file, lineNo, "signal", "a signal id", "nothing");

  let quality: Quality = "good";
  if (qualityText !== "") {
    const q = qualityText.toLowerCase();
    if (!(QUALITIES as readonly string[]).includes(q)) throw new HistoryCsvError(file, lineNo, "quality", "good, uncertain or bad (or nothing for good)", shown(qualityText));
    quality = q as Quality;
  }

  let value: number;
  if (valueText === "") {
    if (quality !== "bad") throw new HistoryCsvError(file, lineNo, "value", `a number (empty only with quality bad; quality is ${quality})`, "nothing");
    value = Number.NaN;
  } else {
    value = DECIMAL.test(valueText) ? Number(valueText) : Number.NaN;
    if (!Number.isFinite(value)) throw new HistoryCsvError(file, lineNo, "value", "a finite decimal number such as 41.2 or -3.5e2", shown(valueText));
  }
  return { signal, value, quality, sourceTimeMs: t, receiveTimeMs: t };
}

/** A whole file held in a string: header first, then one sample per line, in file order. */
export function parseHistoryCsv(text: string, file: string): { samples: Sample[] } {
  const lines = text.split("\n");
  // The header is the first line; a file that is empty (or only blank lines) has none.
  if (lines.every((l) => l.trim() === "" || l === "\uFEFF")) {
    throw new HistoryCsvError(file, 1, null, `the header line "${HISTORY_CSV_HEADER}" (quality optional)`, "an empty file");
  }
  parseHistoryCsvHeader(lines[0]!, 1, file);
  const samples: Sample[] = [];
  for (let i = 1; i < lines.length; i++) {
    const s = parseHistoryCsvLine(lines[i]!, i + 1, file);
    if (s !== null) samples.push(s);
  }
  return { samples };
}

/** Times RFC 3339 can carry with a four-digit year: 0000-01-01 to 9999-12-31. */
const MIN_TIME_MS = daysFromCivil(0, 1, 1) * 86_400_000;
const MAX_TIME_MS = daysFromCivil(10_000, 1, 1) * 86_400_000 - 1;

function formatTime(ms: number): string {
  const days = Math.floor(ms / 86_400_000);
  let rest = ms - days * 86_400_000;
  // civil_from_days (H. Hinnant), the inverse of daysFromCivil.
  const z = days + 719468;
  const era = Math.floor(z / 146097);
  const doe = z - era * 146097;
  const yoe = Math.floor((doe - Math.floor(doe / 1460) + Math.floor(doe / 36524) - Math.floor(doe / 146096)) / 365);
  const doy = doe - (365 * yoe + Math.floor(yoe / 4) - Math.floor(yoe / 100));
  const mp = Math.floor((5 * doy + 2) / 153);
  const d = doy - Math.floor((153 * mp + 2) / 5) + 1;
  const m = mp < 10 ? mp + 3 : mp - 9;
  const y = yoe + era * 400 + (m <= 2 ? 1 : 0);
  const h = Math.floor(rest / 3_600_000);
  rest -= h * 3_600_000;
  const mi = Math.floor(rest / 60_000);
  rest -= mi * 60_000;
  const s = Math.floor(rest / 1000);
  const milli = rest - s * 1000;
  const p = (n: number, w: number) => String(n).padStart(w, "0");
  return `${p(y, 4)}-${p(m, 2)}-${p(d, 2)}T${p(h, 2)}:${p(mi, 2)}:${p(s, 2)}.${p(milli, 3)}Z`;
}

function formatField(text: string): string {
  return /[",]|^\s|\s$/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
}

/** One sample as a data line (no line end). Throws for a sample the format cannot carry. */
export function formatHistoryCsvLine(s: Sample): string {
  const where = `history CSV: sample of ${JSON.stringify(s.signal)} at ${String(s.sourceTimeMs)}`;
  if (!Number.isInteger(s.sourceTimeMs) || s.sourceTimeMs < MIN_TIME_MS || s.sourceTimeMs > MAX_TIME_MS) {
    throw new Error(`${where}: sourceTimeMs: expected whole epoch milliseconds within the years 0000-9999, found ${String(s.sourceTimeMs)}`);
  }
  if (typeof s.signal !== "string" || s.signal === "" || /[\r\n]/.test(s.signal)) {
    throw new Error(`${where}: signal: expected a non-empty id without line breaks, found ${JSON.stringify(s.signal)}`);
  }
  if (!(QUALITIES as readonly string[]).includes(s.quality)) {
    throw new Error(`${where}: quality: expected good, uncertain or bad, found ${JSON.stringify(s.quality)}`);
  }
  let value: string;
  if (Number.isNaN(s.value)) {
    if (s.quality !== "bad") throw new Error(`${where}: value: expected a finite number (NaN only with quality bad), found NaN with quality ${s.quality}`);
    value = "";
  } else if (!Number.isFinite(s.value)) {
    throw new Error(`${where}: value: expected a finite number, found ${String(s.value)}`);
  } else {
    // The shortest text that reads back as the same double; -0 keeps its sign.
    value = Object.is(s.value, -0) ? "-0" : String(s.value);
  }
  return `${formatTime(s.sourceTimeMs)},${formatField(s.signal)},${value},${s.quality}`;
}

/** A whole file: the header and one line per sample, in the given order, each line ending in "\n". */
export function formatHistoryCsv(samples: Iterable<Sample>): string {
  const lines = [HISTORY_CSV_HEADER];
  for (const s of samples) lines.push(formatHistoryCsvLine(s));
  return `${lines.join("\n")}\n`;
}
