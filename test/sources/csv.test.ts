// The history exchange format (DESIGN.md §6): CSV time,signal,value,quality.
// Times are checked against RFC 3339 (its §5.6 grammar and §5.8 examples) and against
// ECMAScript's own Date (Date.UTC, Date.prototype.toISOString), quoting against RFC 4180.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import type { Sample } from "../../src/core/types.js";
import {
  HISTORY_CSV_HEADER,
  HistoryCsvError,
  formatHistoryCsv,
  formatHistoryCsvLine,
  parseHistoryCsv,
  parseHistoryCsvHeader,
  parseHistoryCsvLine,
} from "../../src/sources/csv.js";

const F = "history.csv";

function errorOf(fn: () => unknown): HistoryCsvError {
  try {
    fn();
  } catch (e) {
    expect(e).toBeInstanceOf(HistoryCsvError);
    return e as HistoryCsvError;
  }
  throw new Error("expected a HistoryCsvError, but nothing was thrown");
}

const line = (text: string, no = 2) => parseHistoryCsvLine(text, no, F);

describe("parsing", () => {
  it("reads a file: header, 3- and 4-column lines, optional quality, CRLF, byte-order mark, blank lines", () => {
    const text =
      "\uFEFFtime,signal,value,quality\r\n" +
      "2026-01-12T06:00:00.000Z,bf2.outlet.co,41.2,good\r\n" +
      "\r\n" +
      "2026-01-12T06:00:01Z,bf2.outlet.co,41.5\n" +
      "2026-01-12T06:00:02.5Z,bf2.outlet.co,-3.5e2,\n" +
      "2026-01-12T06:00:03.000Z,bf2.outlet.h2o,,bad\n" +
      "2026-01-12t06:00:04.250z,vm2.outlet.o2,9.01,uncertain\n" +
      "2026-01-12T06:00:05.000+00:00,vm2.outlet.o2,9.02,GOOD\n";
    const { samples } = parseHistoryCsv(text, F);
    const t0 = Date.UTC(2026, 0, 12, 6, 0, 0);
    expect(samples).toEqual([
      { signal: "bf2.outlet.co", value: 41.2, quality: "good", sourceTimeMs: t0, receiveTimeMs: t0 },
      { signal: "bf2.outlet.co", value: 41.5, quality: "good", sourceTimeMs: t0 + 1000, receiveTimeMs: t0 + 1000 },
      { signal: "bf2.outlet.co", value: -350, quality: "good", sourceTimeMs: t0 + 2500, receiveTimeMs: t0 + 2500 },
      { signal: "bf2.outlet.h2o", value: Number.NaN, quality: "bad", sourceTimeMs: t0 + 3000, receiveTimeMs: t0 + 3000 },
      { signal: "vm2.outlet.o2", value: 9.01, quality: "uncertain", sourceTimeMs: t0 + 4250, receiveTimeMs: t0 + 4250 },
      { signal: "vm2.outlet.o2", value: 9.02, quality: "good", sourceTimeMs: t0 + 5000, receiveTimeMs: t0 + 5000 },
    ]);
    expect(Number.isNaN(samples[3]!.value)).toBe(true);
  });

  it("accepts the header without the quality column", () => {
    expect(parseHistoryCsv("time,signal,value\n2026-01-12T06:00:00Z,a,1\n", F).samples).toHaveLength(1);
    expect(parseHistoryCsv("time,signal,value,quality\n", F).samples).toEqual([]);
  });

  it("reads the RFC 3339 §5.8 examples that are in UTC, and refuses those with a local offset", () => {
    // RFC 3339 §5.8: "1985-04-12T23:20:50.52Z" is 20 minutes and 50.52 seconds after the 23rd hour of April 12th, 1985 in UTC.
    expect(line("1985-04-12T23:20:50.52Z,a,1")!.sourceTimeMs).toBe(Date.UTC(1985, 3, 12, 23, 20, 50, 520));
    // "1996-12-19T16:39:57-08:00" is a local time: the format wants UTC.
    expect(errorOf(() => line("1996-12-19T16:39:57-08:00,a,1")).message).toBe(
      `${F}:2: time: expected an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z, found "1996-12-19T16:39:57-08:00"`,
    );
    // "1990-12-31T23:59:60Z" is a leap second, which epoch milliseconds cannot carry.
    expect(errorOf(() => line("1990-12-31T23:59:60Z,a,1")).message).toMatch(/time: expected .*leap seconds are not supported.*found "1990-12-31T23:59:60Z"/);
    // The epoch itself (ECMAScript: time value 0 is 1970-01-01T00:00:00Z).
    expect(line("1970-01-01T00:00:00Z,a,1")!.sourceTimeMs).toBe(0);
    // Before the epoch, and the Gregorian leap-year rule: 2000 and 2024 have a 29 February, 1900 and 2023 do not.
    expect(line("1969-12-31T23:59:59.999Z,a,1")!.sourceTimeMs).toBe(-1);
    expect(line("2000-02-29T00:00:00Z,a,1")!.sourceTimeMs).toBe(Date.UTC(2000, 1, 29));
    expect(line("2024-02-29T12:00:00Z,a,1")!.sourceTimeMs).toBe(Date.UTC(2024, 1, 29, 12));
    expect(errorOf(() => line("1900-02-29T00:00:00Z,a,1")).message).toMatch(/day 01-28 in 1900-02/);
    expect(errorOf(() => line("2023-02-29T00:00:00Z,a,1")).message).toMatch(/day 01-28 in 2023-02/);
    // Sub-millisecond digits are cut off (samples carry whole milliseconds).
    expect(line("2026-01-12T06:00:00.123987Z,a,1")!.sourceTimeMs).toBe(Date.UTC(2026, 0, 12, 6, 0, 0, 123));
  });

  it("unquotes RFC 4180 fields", () => {
    expect(line('2026-01-12T06:00:00Z,"a,b ""x""",1')!.signal).toBe('a,b "x"');
    expect(line('2026-01-12T06:00:00Z, "sp" ,"2.5", "bad" ')).toMatchObject({ signal: "sp", value: 2.5, quality: "bad" });
  });

  it("agrees line by line with the whole-file parser (the streaming path)", () => {
    const text = formatHistoryCsv([
      { signal: "x", value: 1, quality: "good", sourceTimeMs: 1000, receiveTimeMs: 1000 },
      { signal: "y", value: Number.NaN, quality: "bad", sourceTimeMs: 2000, receiveTimeMs: 2000 },
    ]);
    const lines = text.split("\n");
    parseHistoryCsvHeader(lines[0]!, 1, F);
    const streamed = lines.slice(1).flatMap((l, i) => parseHistoryCsvLine(l, i + 2, F) ?? []);
    expect(streamed).toEqual(parseHistoryCsv(text, F).samples);
    expect(parseHistoryCsvLine("   ", 9, F)).toBeNull();
  });
});

describe("errors name file:line, the column, what was expected and what was found", () => {
  const cases: [string, string, string][] = [
    // [line, column, full message after "history.csv:2: "]
    ["2026-01-12 06:00:00Z,a,1", "time", 'time: expected an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z, found "2026-01-12 06:00:00Z"'],
    ["2026-01-12T06:00:00,a,1", "time", 'time: expected an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z, found "2026-01-12T06:00:00"'],
    ["2026-13-01T06:00:00Z,a,1", "time", 'time: expected an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z (month 01-12), found "2026-13-01T06:00:00Z"'],
    ["2026-01-12T24:00:00Z,a,1", "time", 'time: expected an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z (hour 00-23, minute 00-59), found "2026-01-12T24:00:00Z"'],
    ["1768197600000,a,1", "time", 'time: expected an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z, found "1768197600000"'],
    ["2026-01-12T06:00:00Z,,1", "signal", "signal: expected a signal id, found nothing"],
    ["2026-01-12T06:00:00Z,a,abc", "value", 'value: expected a finite decimal number such as 41.2 or -3.5e2, found "abc"'],
    ["2026-01-12T06:00:00Z,a,0x10", "value", 'value: expected a finite decimal number such as 41.2 or -3.5e2, found "0x10"'],
    ["2026-01-12T06:00:00Z,a,NaN,bad", "value", 'value: expected a finite decimal number such as 41.2 or -3.5e2, found "NaN"'],
    ["2026-01-12T06:00:00Z,a,1e999", "value", 'value: expected a finite decimal number such as 41.2 or -3.5e2, found "1e999"'],
    ["2026-01-12T06:00:00Z,a,,good", "value", "value: expected a number (empty only with quality bad; quality is good), found nothing"],
    ["2026-01-12T06:00:00Z,a,", "value", "value: expected a number (empty only with quality bad; quality is good), found nothing"],
    ["2026-01-12T06:00:00Z,a,1,ok", "quality", 'quality: expected good, uncertain or bad (or nothing for good), found "ok"'],
  ];
  for (const [text, column, message] of cases) {
    it(`${column}: ${text}`, () => {
      const e = errorOf(() => line(text));
      expect(e.message).toBe(`${F}:2: ${message}`);
      expect([e.file, e.line, e.column]).toEqual([F, 2, column]);
    });
  }

  it("wrong column count", () => {
    const e = errorOf(() => line("2026-01-12T06:00:00Z,a", 7));
    expect(e.message).toBe(`${F}:7: expected 3 or 4 columns (time,signal,value,quality, quality optional), found 2 in "2026-01-12T06:00:00Z,a"`);
    expect(e.column).toBeNull();
    expect(errorOf(() => line("2026-01-12T06:00:00Z,a,1,good,extra")).message).toMatch(/expected 3 or 4 columns.*found 5 in/);
    expect(errorOf(() => line('2026-01-12T06:00:00Z,"a,1')).message).toBe(`${F}:2: expected fields separated by commas, found an unterminated quoted field (column 2)`);
  });

  it("missing or wrong header, empty file; the line number counts from 1 at the header", () => {
    expect(errorOf(() => parseHistoryCsv("2026-01-12T06:00:00Z,a,1\n", F)).message).toBe(
      `${F}:1: expected the header line "time,signal,value,quality" (quality optional), found "2026-01-12T06:00:00Z,a,1"`,
    );
    expect(errorOf(() => parseHistoryCsv("", F)).message).toBe(`${F}:1: expected the header line "time,signal,value,quality" (quality optional), found an empty file`);
    expect(errorOf(() => parseHistoryCsv("\n\n", F)).message).toMatch(/found an empty file/);
    expect(errorOf(() => parseHistoryCsv("signal,time,value\n", F)).message).toMatch(/^history\.csv:1: expected the header line/);
    const e = errorOf(() => parseHistoryCsv(`${HISTORY_CSV_HEADER}\n2026-01-12T06:00:00Z,a,1\n\n2026-01-12T06:00:01Z,a,x\n`, F));
    expect([e.line, e.column, e.found]).toEqual([4, "value", '"x"']);
  });

  it("shortens a long found text", () => {
    const e = errorOf(() => line(`2026-01-12T06:00:00Z,a,${"9".repeat(400)}x`));
    expect(e.found.length).toBeLessThan(70);
  });
});

describe("formatting", () => {
  it("writes the header and one line per sample, times as Date.prototype.toISOString writes them", () => {
    const t = Date.UTC(2026, 0, 12, 6, 0, 0, 5);
    const text = formatHistoryCsv([
      { signal: "bf2.outlet.co", value: 41.2, quality: "good", sourceTimeMs: t, receiveTimeMs: t + 80 },
      { signal: "a,b", value: Number.NaN, quality: "bad", qualityReason: "decode-error", sourceTimeMs: t, receiveTimeMs: t },
      { signal: "c", value: -0, quality: "uncertain", sourceTimeMs: t, receiveTimeMs: t },
    ]);
    expect(text).toBe(
      "time,signal,value,quality\n" +
        "2026-01-12T06:00:00.005Z,bf2.outlet.co,41.2,good\n" +
        '2026-01-12T06:00:00.005Z,"a,b",,bad\n' +
        "2026-01-12T06:00:00.005Z,c,-0,uncertain\n",
    );
  });

  it("refuses samples the format cannot carry, saying what and why", () => {
    const ok: Sample = { signal: "a", value: 1, quality: "good", sourceTimeMs: 0, receiveTimeMs: 0 };
    expect(() => formatHistoryCsvLine({ ...ok, value: Number.NaN })).toThrow(/value: expected a finite number \(NaN only with quality bad\), found NaN with quality good/);
    expect(() => formatHistoryCsvLine({ ...ok, value: Infinity })).toThrow(/value: expected a finite number, found Infinity/);
    expect(() => formatHistoryCsvLine({ ...ok, sourceTimeMs: 1.5 })).toThrow(/sourceTimeMs: expected whole epoch milliseconds within the years 0000-9999, found 1.5/);
    expect(() => formatHistoryCsvLine({ ...ok, sourceTimeMs: Date.UTC(10000, 0, 1) })).toThrow(/years 0000-9999/);
    expect(() => formatHistoryCsvLine({ ...ok, signal: "" })).toThrow(/signal: expected a non-empty id without line breaks, found ""/);
    expect(() => formatHistoryCsvLine({ ...ok, signal: "a\nb" })).toThrow(/signal: expected a non-empty id without line breaks/);
  });
});

/** 0000-01-01T00:00:00Z as an ECMAScript time value (proleptic Gregorian); checked below with toISOString. */
const YEAR_ZERO_MS = -62167219200000;
const LAST_MS = Date.UTC(9999, 11, 31, 23, 59, 59, 999);
// Every epoch ms of the years 0000-9999.
const timeMs = fc.integer({ min: YEAR_ZERO_MS, max: LAST_MS });
const sampleArb: fc.Arbitrary<Sample> = fc
  .record({
    signal: fc.string({ minLength: 1, maxLength: 20, unit: "grapheme" }).filter((s) => !/[\r\n]/.test(s)),
    quality: fc.constantFrom("good" as const, "uncertain" as const, "bad" as const),
    value: fc.double({ noNaN: true, noDefaultInfinity: true }),
    nan: fc.boolean(),
    t: timeMs,
  })
  .map(({ signal, quality, value, nan, t }) => ({
    signal,
    quality,
    value: quality === "bad" && nan ? Number.NaN : value,
    sourceTimeMs: t,
    receiveTimeMs: t,
  }));

describe("properties", () => {
  it("the generators span 0000-01-01 to 9999-12-31 (ECMAScript toISOString of the bounds)", () => {
    expect(new Date(YEAR_ZERO_MS).toISOString()).toBe("0000-01-01T00:00:00.000Z");
    expect(new Date(LAST_MS).toISOString()).toBe("9999-12-31T23:59:59.999Z");
    // And one step beyond either end is refused by the formatter.
    for (const t of [YEAR_ZERO_MS - 1, LAST_MS + 1]) {
      expect(() => formatHistoryCsvLine({ signal: "a", value: 1, quality: "good", sourceTimeMs: t, receiveTimeMs: t })).toThrow(/years 0000-9999/);
    }
  });

  it("round trip: format then parse gives the same samples (ms times, exact doubles, -0, NaN with bad)", () => {
    fc.assert(
      fc.property(fc.array(sampleArb, { maxLength: 30 }), (samples) => {
        const back = parseHistoryCsv(formatHistoryCsv(samples), F).samples;
        expect(back).toEqual(samples);
        back.forEach((s, i) => expect(Object.is(s.value, samples[i]!.value) || (Number.isNaN(s.value) && Number.isNaN(samples[i]!.value))).toBe(true));
      }),
      { numRuns: 300 },
    );
  });

  it("times over the full four-digit year range: written as toISOString writes them, read as Date.parse reads them", () => {
    fc.assert(
      fc.property(timeMs, (t) => {
        const text = formatHistoryCsvLine({ signal: "a", value: 1, quality: "good", sourceTimeMs: t, receiveTimeMs: t });
        const iso = new Date(t).toISOString();
        expect(text.startsWith(`${iso},`)).toBe(true);
        expect(parseHistoryCsvLine(text, 2, F)!.sourceTimeMs).toBe(Date.parse(iso));
      }),
      { numRuns: 2000 },
    );
  });

  // Lines from CSV-ish characters reach deep into the parser; plain random strings test the rest.
  const csvChar = fc.constantFrom(..."0123456789-:.TZtz+,\" eE\r\tagoodbadNn".split(""));
  const garbage = fc.oneof(fc.string({ maxLength: 60 }), fc.string({ unit: csvChar, maxLength: 60 }), fc.string({ unit: "grapheme", maxLength: 40 }));

  it("garbage lines never crash: a sample, a blank line, or the documented HistoryCsvError", () => {
    fc.assert(
      fc.property(garbage, fc.integer({ min: 1, max: 1e6 }), (text, no) => {
        let s: Sample | null;
        try {
          s = parseHistoryCsvLine(text, no, F);
        } catch (e) {
          expect(e).toBeInstanceOf(HistoryCsvError);
          const err = e as HistoryCsvError;
          expect(err.message.startsWith(`${F}:${no}: `)).toBe(true);
          expect(err.message).toMatch(/expected .*, found /);
          expect(err.line).toBe(no);
          return;
        }
        if (s === null) expect(text.replace(/\r$/, "").trim()).toBe("");
        else {
          expect(Number.isInteger(s.sourceTimeMs)).toBe(true);
          expect(Number.isFinite(s.value) || (Number.isNaN(s.value) && s.quality === "bad")).toBe(true);
          expect(s.signal.length).toBeGreaterThan(0);
        }
      }),
      { numRuns: 3000 },
    );
  });

  it("garbage files never crash either", () => {
    fc.assert(
      fc.property(fc.array(garbage, { maxLength: 8 }), fc.boolean(), (lines, withHeader) => {
        const text = (withHeader ? [HISTORY_CSV_HEADER, ...lines] : lines).join("\n");
        try {
          parseHistoryCsv(text, F);
        } catch (e) {
          expect(e).toBeInstanceOf(HistoryCsvError);
        }
      }),
      { numRuns: 1000 },
    );
  });
});
