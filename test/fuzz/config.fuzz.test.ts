// The config loader (src/config/load.ts) on random YAML text and on config/demo.yaml with lines
// changed, dropped, duplicated, re-indented or cut. The property is the loader's contract: it
// returns a config or throws a ConfigError, never anything else, and every problem names the
// file, a line within the text (1-based), a column and a non-empty message.
import { readFileSync } from "node:fs";
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { ConfigError, parseConfig } from "../../src/config/load.js";
import { assertCounted, runs } from "./budget.js";

const FILE = "plant.yaml";
const DEMO = readFileSync(new URL("../../config/demo.yaml", import.meta.url), "utf8");
const DEMO_LINES = DEMO.split("\n");


function load(text: string): void {
  try {
    parseConfig(text, FILE);
  } catch (e) {
    if (!(e instanceof ConfigError)) throw e;
    expect(e.problems.length).toBeGreaterThan(0);
    const lineCount = text.split(/\r\n|\r|\n/).length;
    for (const p of e.problems) {
      expect(p.file).toBe(FILE);
      expect(Number.isInteger(p.line) && p.line >= 1 && p.line <= lineCount + 1).toBe(true);
      expect(Number.isInteger(p.column) && p.column >= 1).toBe(true);
      expect(p.message.trim().length).toBeGreaterThan(0);
    }
  }
}

// Scalars a hand edit leaves behind: wrong types, YAML's odd forms, anchors, tags.
const ODD = ["", "~", "null", "true", "no", "0x1F", "1e400", "-.inf", ".nan", "'x'", '"', "[", "{", "]", "}", "&a", "*a", "!!str 1", "!!binary AA", "- x", "? k", ": v", "|", ">", "#", "@", "`", "%YAML 1.2", "---", "...", "<<: *a", "\t", "é", "😀", "bf2.outlet.co", "vm2", "42", "-1", "3600"];

/** One edit of demo.yaml at a line. */
const edit = fc.tuple(fc.nat(DEMO_LINES.length - 1), fc.constantFrom("value", "drop", "dup", "indent", "dedent", "insert", "cut", "key", "swap"), fc.oneof(fc.constantFrom(...ODD), fc.string({ maxLength: 8 })), fc.nat());
const demoMutant = fc.array(edit, { minLength: 1, maxLength: 4 }).map((edits) => {
  const lines = [...DEMO_LINES];
  for (const [at, how, text, n] of edits) {
    const i = at % lines.length;
    const line = lines[i]!;
    const colon = line.indexOf(":");
    switch (how) {
      case "value": lines[i] = colon < 0 ? `${line} ${text}` : `${line.slice(0, colon + 1)} ${text}`; break;
      case "drop": lines.splice(i, 1); break;
      case "dup": lines.splice(i, 0, line); break;
      case "indent": lines[i] = `  ${line}`; break;
      case "dedent": lines[i] = line.replace(/^ {1,2}/, ""); break;
      case "insert": lines.splice(i, 0, text); break;
      case "cut": lines[i] = line.slice(0, n % (line.length + 1)); break;
      case "key": lines[i] = colon < 0 ? line : `${line.slice(0, line.search(/\S|$/))}${text}${line.slice(colon)}`; break;
      default: {
        const j = n % lines.length;
        [lines[i], lines[j]] = [lines[j]!, line];
      }
    }
    if (lines.length === 0) lines.push("");
  }
  return lines.join("\n");
});

/** Random YAML-ish text: fragments of YAML syntax and of the demo's lines, and plain noise. */
const yamlish = fc.oneof(
  fc.string({ maxLength: 200 }),
  fc.array(fc.oneof(fc.constantFrom(...ODD), fc.constantFrom(...DEMO_LINES)), { maxLength: 30 }).map((l) => l.join("\n")),
  fc.jsonValue({ maxDepth: 3 }).map((v) => JSON.stringify(v)),
);

const FULL = 20_000;

describe("fuzz: config loader (load.ts)", () => {

  it("the demo config itself loads", () => {
    expect(() => parseConfig(DEMO, FILE)).not.toThrow();
  });

  it("random YAML text: a config or a ConfigError whose every problem has file, line and message", () => {
    assertCounted("config: random YAML", yamlish, load, runs(FULL * 0.4, 150));
  });

  it("config/demo.yaml with random edits: the same", () => {
    assertCounted("config: demo mutations", demoMutant, load, runs(FULL * 0.6, 150));
  });

  // Found by this fuzzing and fixed: an alias whose anchor is not defined (a hand edit that drops
  // or misspells "&name", e.g. "site: *a") passed parseDocument, then doc.toJS() threw
  // ReferenceError out of parseConfig; it is now a ConfigError at the alias's line.
  it("an alias without its anchor is a ConfigError with the alias's line, not a ReferenceError", () => {
    const alias = fc.tuple(fc.nat(DEMO_LINES.length - 1), fc.stringMatching(/^[a-z]{1,6}$/)).map(([at, name]) => {
      const lines = [...DEMO_LINES];
      const i = lines.findIndex((l, k) => k >= at && /^\s+\w+: \S/.test(l));
      const j = i < 0 ? lines.findIndex((l) => /^\s+\w+: \S/.test(l)) : i;
      lines[j] = lines[j]!.replace(/: .*/, `: *${name}`);
      return lines.join("\n");
    });
    assertCounted("config: BUG alias", alias, (text) => {
      try {
        parseConfig(text, FILE);
      } catch (e) {
        expect(e).toBeInstanceOf(ConfigError);
      }
    }, runs(200, 20));
  });
});
