// Times on the replay command line: RFC 3339 date-times (with Z or a numeric offset), or epoch
// milliseconds as `millwarden export` also takes them.
export const TIME_EXPECTED = "an RFC 3339 time with Z or an offset, e.g. 2026-01-12T06:00:00Z or 2026-01-12T07:00:00+01:00 (or epoch ms)";

const RFC3339 = /^(\d{4})-(\d{2})-(\d{2})[Tt](\d{2}):(\d{2}):(\d{2})(?:\.(\d{1,9}))?(?:([Zz])|([+-])(\d{2}):(\d{2}))$/;

function daysInMonth(y: number, m: number): number {
  if (m === 2) return (y % 4 === 0 && y % 100 !== 0) || y % 400 === 0 ? 29 : 28;
  return [4, 6, 9, 11].includes(m) ? 30 : 31;
}

/** Epoch ms of an RFC 3339 time or of epoch ms digits; an error text saying what is wrong otherwise. */
export function parseTimeArg(text: string): number | { error: string } {
  if (/^\d{1,16}$/.test(text)) return Number(text);
  const m = RFC3339.exec(text);
  if (!m) return { error: TIME_EXPECTED };
  const [y, mo, d, h, mi, s] = m.slice(1, 7).map(Number) as [number, number, number, number, number, number];
  if (mo < 1 || mo > 12) return { error: `${TIME_EXPECTED}; the month must be 01-12` };
  if (d < 1 || d > daysInMonth(y, mo)) return { error: `${TIME_EXPECTED}; the day must be 01-${daysInMonth(y, mo)} in ${m[1]}-${m[2]}` };
  if (h > 23 || mi > 59 || s > 59) return { error: `${TIME_EXPECTED}; hour 00-23, minute 00-59, second 00-59` };
  const offH = m[9] !== undefined ? Number(m[10]) : 0;
  const offM = m[9] !== undefined ? Number(m[11]) : 0;
  if (offH > 23 || offM > 59) return { error: `${TIME_EXPECTED}; the offset must be -23:59 to +23:59` };
  const sign = m[9] === "-" ? -1 : 1;
  const ms = m[7] === undefined ? 0 : Number(m[7].slice(0, 3).padEnd(3, "0"));
  // setUTCFullYear, not Date.UTC: Date.UTC takes the years 0-99 as 1900-1999.
  const t = new Date(0);
  t.setUTCFullYear(y, mo - 1, d);
  t.setUTCHours(h, mi, s, ms);
  return t.getTime() - sign * (offH * 60 + offM) * 60_000;
}

/** RFC 3339 UTC with milliseconds, as the history exchange format writes times. */
export function utc(ms: number): string {
  return new Date(ms).toISOString();
}
