// Local time in the site's IANA time zone, from Intl.DateTimeFormat alone (the zone rules are
// the IANA tz database as shipped with Node's ICU: process.versions.tz). Pure: every function
// takes the instant as epoch ms; nothing reads the clock.
//
// "Wall" times are local date and time fields written as if they were UTC (Date.UTC of the
// local fields): they make calendar arithmetic (seven local days later, the same local time
// tomorrow) plain integer arithmetic, whatever daylight-saving changes lie in between.

const DAY_MS = 86_400_000;
const formatters = new Map<string, Intl.DateTimeFormat>();
const labelFormatters = new Map<string, Intl.DateTimeFormat>();

function formatter(zone: string): Intl.DateTimeFormat {
  let f = formatters.get(zone);
  if (!f) {
    f = new Intl.DateTimeFormat("en-US", {
      timeZone: zone,
      hourCycle: "h23",
      year: "numeric",
      month: "2-digit",
      day: "2-digit",
      hour: "2-digit",
      minute: "2-digit",
      second: "2-digit",
    });
    formatters.set(zone, f);
  }
  return f;
}

/** Throws a RangeError naming the zone when Intl does not know it. */
export function assertTimeZone(zone: string): void {
  try {
    formatter(zone);
  } catch {
    throw new RangeError(`unknown time zone "${zone}": expected an IANA zone name such as Europe/Berlin`);
  }
}

export interface LocalParts {
  year: number;
  month: number;
  day: number;
  hour: number;
  minute: number;
  second: number;
  /** 0 Monday … 6 Sunday. */
  weekday: number;
}

/** Local calendar fields of an instant in `zone`. */
export function localParts(zone: string, ms: number): LocalParts {
  const p: Record<string, number> = {};
  for (const part of formatter(zone).formatToParts(ms)) if (part.type !== "literal") p[part.type] = Number(part.value);
  const hour = p.hour === 24 ? 0 : p.hour!;
  const wall = Date.UTC(p.year!, p.month! - 1, p.day!);
  // 1970-01-01 was a Thursday (3 when Monday is 0).
  const weekday = (((Math.floor(wall / DAY_MS) + 3) % 7) + 7) % 7;
  return { year: p.year!, month: p.month!, day: p.day!, hour, minute: p.minute!, second: p.second!, weekday };
}

/** The local fields as a wall time (ms, as if UTC), seconds included, milliseconds kept. */
export function wallMs(zone: string, ms: number): number {
  const p = localParts(zone, ms);
  return Date.UTC(p.year, p.month - 1, p.day, p.hour, p.minute, p.second) + (((ms % 1000) + 1000) % 1000);
}

/** Offset of local time from UTC at an instant (ms; +3,600,000 for CET). */
export function offsetMs(zone: string, ms: number): number {
  return wallMs(zone, ms) - ms;
}

/**
 * The instant at which local time in `zone` reads `wall` (a wall time, see above). A wall time
 * that occurs twice (clocks set back) gives the earlier instant; one that does not occur
 * (clocks set forward) gives the instant as far after the gap as it lies after the gap's start
 * (02:30 in a 02:00→03:00 gap is 03:30), as clocks that were not changed would read it.
 * Assumes at most one change of offset within 12 hours of it (true of every zone in the database).
 */
export function wallToUtc(zone: string, wall: number): number {
  const before = offsetMs(zone, wall - DAY_MS / 2);
  const after = offsetMs(zone, wall + DAY_MS / 2);
  const candidates = [...new Set([before, after])].map((o) => wall - o).filter((u) => wallMs(zone, u) === wall);
  if (candidates.length) return Math.min(...candidates);
  // In a gap: read it with the offset before the change.
  return wall - before;
}

/** Local midnight's wall time of the day containing `ms`. */
export function wallDay(zone: string, ms: number): number {
  const p = localParts(zone, ms);
  return Date.UTC(p.year, p.month - 1, p.day);
}

/** "HH:MM" (00:00–24:00) as minutes after local midnight. */
export function minutesOf(hhmm: string): number {
  const m = /^(\d{2}):(\d{2})$/.exec(hhmm);
  if (!m) throw new RangeError(`expected a local time "HH:MM"; found "${hhmm}"`);
  return Number(m[1]) * 60 + Number(m[2]);
}

/**
 * A config time: "YYYY-MM-DDTHH:MM[:SS]" is local to `zone`; with Z or an offset it is absolute.
 * Throws a RangeError saying what was expected.
 */
export function parseSiteTime(text: string, zone: string): number {
  const m = /^(\d{4})-(\d{2})-(\d{2})T(\d{2}):(\d{2})(?::(\d{2}))?(Z|[+-]\d{2}:\d{2})?$/.exec(text);
  if (!m) throw new RangeError(`expected "YYYY-MM-DDTHH:MM" (site time) or with Z or an offset; found "${text}"`);
  const [, y, mo, d, h, mi, s, tz] = m;
  const wall = Date.UTC(Number(y), Number(mo) - 1, Number(d), Number(h), Number(mi), Number(s ?? 0));
  const back = new Date(wall);
  if (back.getUTCMonth() !== Number(mo) - 1 || back.getUTCDate() !== Number(d) || Number(h) > 23)
    throw new RangeError(`"${text}" is not a valid date and time`);
  if (tz === undefined) return wallToUtc(zone, wall);
  if (tz === "Z") return wall;
  const sign = tz.startsWith("-") ? -1 : 1;
  return wall - sign * (Number(tz.slice(1, 3)) * 60 + Number(tz.slice(4, 6))) * 60_000;
}

const pad = (n: number, w = 2) => String(n).padStart(w, "0");

/** "2026-12-01 06:15:00 CET": the local time with the zone's short name as ICU gives it. */
export function formatLocal(zone: string, ms: number): string {
  const p = localParts(zone, ms);
  let f = labelFormatters.get(zone);
  if (!f) {
    f = new Intl.DateTimeFormat("en-GB", { timeZone: zone, timeZoneName: "short" });
    labelFormatters.set(zone, f);
  }
  const name = f.formatToParts(ms).find((x) => x.type === "timeZoneName")?.value ?? zone;
  return `${p.year}-${pad(p.month)}-${pad(p.day)} ${pad(p.hour)}:${pad(p.minute)}:${pad(p.second)} ${name}`;
}

/** "2026-12-01 05:15:00 UTC". */
export function formatUtc(ms: number): string {
  return new Date(ms).toISOString().replace("T", " ").replace(/\.\d{3}Z$/, " UTC");
}

/** "2026-12-01": the local date, for keys that must be once a day. */
export function localDateText(zone: string, ms: number): string {
  const p = localParts(zone, ms);
  return `${p.year}-${pad(p.month)}-${pad(p.day)}`;
}
