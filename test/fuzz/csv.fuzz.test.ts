// The history exchange CSV reader used by replay (src/sources/csv.ts): random lines, and good
// lines with a field changed, cut, quoted or a character inserted. The property is the
// module's contract: a line is a sample, null (blank), or a HistoryCsvError naming file, line,
// what was expected and what was found; nothing else is ever thrown. An accepted line is checked
// against the format (DESIGN.md §6): a finite value unless quality bad, whole-ms time.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { HistoryCsvError, parseHistoryCsv, parseHistoryCsvHeader, parseHistoryCsvLine } from "../../src/sources/csv.js";
import { assertCounted, runs } from "./budget.js";

const FILE = "tarnholm-line2.csv";
const COLUMNS = new Set([null, "time", "signal", "value", "quality"]);

function checkRefusal(e: unknown, lineNo: number): void {
  if (!(e instanceof HistoryCsvError)) throw e;
  expect(e.file).toBe(FILE);
  expect(e.line).toBe(lineNo);
  expect(COLUMNS.has(e.column)).toBe(true);
  expect(e.expected.length).toBeGreaterThan(0);
  expect(e.found.length).toBeGreaterThan(0);
  expect(e.message.startsWith(`${FILE}:${lineNo}: `)).toBe(true);
}

function parseLine(line: string, lineNo: number): void {
  try {
    const s = parseHistoryCsvLine(line, lineNo, FILE);
    if (s === null) {
      expect(line.replace(/\r$/, "").trim()).toBe("");
      return;
    }
    expect(s.signal.length).toBeGreaterThan(0);
    expect(["good", "uncertain", "bad"]).toContain(s.quality);
    expect(Number.isInteger(s.sourceTimeMs)).toBe(true);
    expect(s.receiveTimeMs).toBe(s.sourceTimeMs);
    if (Number.isNaN(s.value)) expect(s.quality).toBe("bad");
    else expect(Number.isFinite(s.value)).toBe(true);
  } catch (e) {
    checkRefusal(e, lineNo);
  }
}

const SIGNALS = ["bf2.outlet.co", "bf2.outlet.h2o", "vm2.outlet.temp", "hgg2.o2", "fs2.level", "a,b", 'say "x"', ""];
const goodTime = fc.date({ min: new Date("0000-01-01T00:00:00Z"), max: new Date("9999-12-31T23:59:59.999Z"), noInvalidDate: true }).map((d) => d.toISOString());
const goodValue = fc.oneof(fc.double({ noNaN: true, noDefaultInfinity: true }).map(String), fc.integer().map(String), fc.constantFrom("41.2", "-3.5e2", ".5", "5.", "+1", "1e308", "1e309", ""));
const quote = (f: string) => `"${f.replace(/"/g, '""')}"`;
const goodLine = fc
  .tuple(goodTime, fc.constantFrom(...SIGNALS), goodValue, fc.constantFrom("good", "uncertain", "bad", "", "BAD", undefined), fc.boolean(), fc.boolean())
  .map(([t, s, v, q, quoteSignal, crlf]) => [t, quoteSignal || /[",]/.test(s) ? quote(s) : s, v, ...(q === undefined ? [] : [q])].join(",") + (crlf ? "\r" : ""));

/** Edits a good line as a hand edit or a damaged file would. */
const mutated = fc.tuple(goodLine, fc.nat(), fc.nat(), fc.constantFrom("insert", "delete", "replace", "cut", "dup", "field")).chain(([line, a, b, how]) =>
  fc.oneof(fc.constantFrom(",", '"', " ", "\t", "\r", "\uFEFF", "Z", "T", "+00:00", "e", "-", ".", "9", "\u0000", "é", "😀"), fc.string({ maxLength: 4 })).map((ins) => {
    const i = line.length === 0 ? 0 : a % (line.length + 1);
    const j = Math.min(line.length, i + (b % 6));
    switch (how) {
      case "insert": return line.slice(0, i) + ins + line.slice(i);
      case "delete": return line.slice(0, i) + line.slice(j);
      case "replace": return line.slice(0, i) + ins + line.slice(j);
      case "cut": return line.slice(0, i);
      case "dup": return line + "," + line.slice(i);
      default: {
        const fields = line.split(",");
        fields[a % fields.length] = ins;
        return fields.join(",");
      }
    }
  }),
);

const FULL = 270_000;

describe("fuzz: history CSV reader (csv.ts)", () => {
  it("random text lines: a sample, blank, or a HistoryCsvError naming line and expectation", () => {
    assertCounted("csv: random lines", fc.tuple(fc.oneof(fc.string({ maxLength: 80 }), fc.string({ maxLength: 80, unit: "binary" })), fc.integer({ min: 1, max: 1_000_000 })), ([l, n]) => parseLine(l, n), runs(FULL * 0.3, 800));
  });

  it("good lines read back; mutated good lines never throw anything else", () => {
    assertCounted("csv: good lines", goodLine, (l) => parseLine(l, 2), runs(FULL * 0.2, 500));
    assertCounted("csv: mutated lines", mutated, (l) => parseLine(l, 7), runs(FULL * 0.3, 800));
  });

  it("header lines and whole files: only HistoryCsvError, at the line at fault", () => {
    const header = fc.oneof(fc.constantFrom("time,signal,value,quality", "time,signal,value", "\uFEFFTime , Signal,VALUE\r", "time,signal", "time;signal;value"), fc.string({ maxLength: 30 }));
    assertCounted("csv: headers", header, (h) => {
      try {
        parseHistoryCsvHeader(h, 1, FILE);
      } catch (e) {
        checkRefusal(e, 1);
      }
    }, runs(FULL * 0.05, 200));
    const file = fc.tuple(fc.constantFrom("time,signal,value,quality", "time,signal,value", "x"), fc.array(fc.oneof(goodLine, mutated, fc.constant("")), { maxLength: 8 }));
    assertCounted("csv: files", file, ([h, lines]) => {
      try {
        const { samples } = parseHistoryCsv([h, ...lines].join("\n"), FILE);
        expect(samples.length).toBeLessThanOrEqual(lines.length);
      } catch (e) {
        if (!(e instanceof HistoryCsvError)) throw e;
        expect(e.line).toBeGreaterThanOrEqual(1);
        expect(e.line).toBeLessThanOrEqual(lines.length + 1);
        checkRefusal(e, e.line);
      }
    }, runs(FULL * 0.15, 300));
  });
});
