// `millwarden replay` end to end, through the exported command function (no child process):
// a simulated filter smoulder as a history CSV and as a historian file, through the real
// config loader and the real core.
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { replayCommand, type ReplayIo } from "../../src/cli/replay.js";
import { loadConfig } from "../../src/config/load.js";
import { DataClock, Engine } from "../../src/core/engine.js";
import type { AdvisoryTransition, Sample } from "../../src/core/types.js";
import { eventJsonLine, isWrittenEvent } from "../../src/replay/jsonl.js";
import { formatHistoryCsv } from "../../src/sources/csv.js";
import { SIM_START_MS, simulatedSamples } from "../scenarios/harness.js";

const DEMO = join(import.meta.dirname, "../../config/demo.yaml");
/** filter-smoulder (src/sim/plant.ts): steady grinding, a smouldering nest in the bag filter from 600 s. */
const ONSET_MS = SIM_START_MS + 600_000;

let dir: string;
let csv: string;
let samples: Sample[];

function io(): ReplayIo & { out: string; err: string } {
  const c = { out: "", err: "", progress: false, stdout: (t: string) => void (c.out += t), stderr: (t: string) => void (c.err += t) };
  return c;
}

async function replay(...args: string[]) {
  const c = io();
  const code = await replayCommand(args, c);
  return { code, out: c.out, err: c.err };
}

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), "mw-replay-"));
  samples = simulatedSamples({ config: DEMO, sim: "filter-smoulder", seed: 3, durationS: 2400 }, loadConfig(DEMO));
  csv = join(dir, "filter-smoulder.csv");
  writeFileSync(csv, formatHistoryCsv(samples));
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe("millwarden replay of a history CSV", () => {
  it("writes the same events file and summary on every run, with the co-gradient-bf2 raise of the smoulder", async () => {
    const out1 = join(dir, "run1.jsonl");
    const out2 = join(dir, "run2.jsonl");
    const r1 = await replay("--config", DEMO, "--input", csv, "--out", out1);
    const r2 = await replay("--config", DEMO, "--input", csv, "--out", out2);
    expect(r1.code, r1.err).toBe(0);
    expect(r2.code).toBe(0);
    const bytes1 = readFileSync(out1);
    expect(bytes1.length).toBeGreaterThan(0);
    expect(bytes1.equals(readFileSync(out2))).toBe(true);
    expect(r1.out).toBe(r2.out);

    const events = bytes1.toString("utf8").trimEnd().split("\n").map((l) => JSON.parse(l) as AdvisoryTransition);
    const raise = events.find((e) => e.kind === "advisory" && e.ruleId === "co-gradient-bf2" && e.transition === "raise");
    expect(raise).toBeDefined();
    // The nest adds 1·τ + 0.6·τ² ppm (τ in min), rising at 1 + 1.2·τ ppm/min. A slope over the
    // 5-min window reads the rate at the window's middle, τ − 2.5 min: it passes the caution
    // threshold of 5 ppm/min at τ ≈ 5.8 min; the analyser's first-order lag (τ = 40 s in
    // src/sim/model.ts) delays a ramp by its time constant, and the rule's on-delay adds 30 s:
    // about 7 min after onset. Noise and the robust slope move that by seconds.
    expect(raise!.atMs).toBeGreaterThan(ONSET_MS + 6 * 60_000);
    expect(raise!.atMs).toBeLessThan(ONSET_MS + 8 * 60_000);
    expect(raise!).toMatchObject({ tier: "caution", limit: 5, by: "millwarden" });
    expect(raise!.value).toBeGreaterThanOrEqual(5);
    expect(r1.out).toMatch(/ADVISORY ONLY/);
    expect(r1.out).toMatch(/^co-gradient-bf2 +\d+ /m); // among the most frequent rules
    expect(r1.err).toMatch(/^replayed 48,000 samples in /m); // 20 signals × 2,400 s
  });

  it("gives the events of the core run directly on the samples, as the daemon runs it on the data clock", async () => {
    const out = join(dir, "direct.jsonl");
    expect((await replay("--config", DEMO, "--input", csv, "--out", out)).code).toBe(0);
    const engine = new Engine(loadConfig(DEMO));
    const clock = new DataClock();
    const lines: string[] = [];
    for (const s of samples) {
      for (const t of clock.due(s.sourceTimeMs)) for (const e of engine.tick(t)) if (isWrittenEvent(e)) lines.push(eventJsonLine(e));
      engine.ingest({ ...s, receiveTimeMs: s.sourceTimeMs });
    }
    expect(readFileSync(out, "utf8")).toBe(lines.join("\n") + "\n");
  });

  it("prints the summary as JSON with --json, and limits it with --from, --to and --position", async () => {
    const from = new Date(ONSET_MS).toISOString();
    // 07:30 at +01:00 is 06:30Z (RFC 3339 §4.2: local time minus the offset is UTC)
    const r = await replay("--config", DEMO, "--input", csv, "--json", "--from", from, "--to", "2026-01-12T07:30:00+01:00", "--position", "control-room");
    expect(r.code, r.err).toBe(0);
    const doc = JSON.parse(r.out);
    expect(doc.advisoryOnly).toMatch(/ADVISORY ONLY/);
    // 06:10:00Z .. 06:30:00Z inclusive: 1,201 s × 20 signals
    expect(doc.replay.samples).toBe(1201 * 20);
    expect(doc.input.outsideRange).toBe(48_000 - 1201 * 20);
    expect(doc.summary.fromMs).toBe(ONSET_MS);
    expect(doc.summary.toMs).toBe(SIM_START_MS + 30 * 60_000);
    expect(doc.summary.position).toBe("control-room");
    expect(doc.summary.positions.map((p: { position: string }) => p.position)).toEqual(["control-room"]);
    expect(doc.summary.topRules.some((x: { ruleId: string }) => x.ruleId === "co-gradient-bf2")).toBe(true);
  });

  it("skips bad lines with file:line and what was expected, counts them, and stops when there are too many", async () => {
    const lines = readFileSync(csv, "utf8").split("\n").slice(0, 20 * 600 + 1); // header + the first 10 min
    lines.splice(5, 0, "2026-01-12 06:00:00,bf2.outlet.co,41,good"); // line 6: no T, no Z
    lines.splice(9, 0, "2026-01-12T06:00:00.000Z,bf2.outlet.co,41,fine"); // line 10: quality
    const bad = join(dir, "bad.csv");
    writeFileSync(bad, lines.join("\n") + "\n");
    const r = await replay("--config", DEMO, "--input", bad);
    expect(r.code, r.err).toBe(0);
    expect(r.err).toContain(`${bad}:6: time: expected an RFC 3339 UTC time such as 2026-01-12T06:00:00.000Z, found "2026-01-12 06:00:00"`);
    expect(r.err).toContain(`${bad}:10: quality: expected good, uncertain or bad (or nothing for good), found "fine"`);
    expect(r.err).toMatch(/^2 bad lines skipped/m);
    expect(r.out).toMatch(/input: 12,000 samples read \(lines in the format\), 2 bad lines skipped/); // 20 signals × 600 s

    const partial = join(dir, "stopped.jsonl");
    const stop = await replay("--config", DEMO, "--input", bad, "--max-bad-lines", "1", "--out", partial);
    expect(stop.code).toBe(1);
    expect(stop.err).toMatch(/more than 1 lines not in the history exchange format \(the last at line 10: .*\); stopping/);
    // a replay that stopped leaves no events file that looks complete
    expect(existsSync(partial)).toBe(false);
    expect(existsSync(`${partial}.partial`)).toBe(false);
  });

  it("refuses bad flags, a file without the header and a missing file, saying what was expected", async () => {
    const when = await replay("--config", DEMO, "--input", csv, "--from", "yesterday");
    expect(when.code).toBe(2);
    expect(when.err).toMatch(/^--from: expected an RFC 3339 time with Z or an offset, e\.g\. 2026-01-12T06:00:00Z.*; found "yesterday"/m);
    const feb = await replay("--config", DEMO, "--input", csv, "--to", "2026-02-30T00:00:00Z");
    expect(feb.err).toMatch(/--to: .*the day must be 01-28 in 2026-02; found "2026-02-30T00:00:00Z"/);
    const order = await replay("--config", DEMO, "--input", csv, "--from", "2026-01-12T07:00:00Z", "--to", "2026-01-12T06:00:00Z");
    expect(order.code).toBe(2);
    expect(order.err).toMatch(/--from \(2026-01-12T07:00:00.000Z\) must be earlier than --to/);
    expect((await replay("--config", DEMO)).err).toMatch(/--input FILE is required/);
    expect((await replay("--config", DEMO, "--input", csv, "--position", "roof")).err).toMatch(/--position: expected one of the operator positions of the rules \(control-room\); found "roof"/);
    expect((await replay("--config", DEMO, "--input", csv, "--speed", "2")).code).toBe(2);

    const noHeader = join(dir, "no-header.csv");
    writeFileSync(noHeader, "2026-01-12T06:00:00.000Z,bf2.outlet.co,41,good\n");
    const h = await replay("--config", DEMO, "--input", noHeader);
    expect(h.code).toBe(1);
    expect(h.err).toMatch(/no-header\.csv:1: expected the header line "time,signal,value,quality"/);
    const missing = await replay("--config", DEMO, "--input", join(dir, "nope.csv"));
    expect(missing.err).toMatch(/--input .*nope\.csv: cannot open the file/);
    const fakeDb = join(dir, "fake.db");
    writeFileSync(fakeDb, "time,signal,value,quality\n");
    expect((await replay("--config", DEMO, "--input", fakeDb)).err).toMatch(/the name says SQLite, but the file does not start with the SQLite header/);
  });
});

describe("millwarden replay: floods and chatter as the core reports them", () => {
  it("a chattering rule alone is chatter, not a flood: its periods over 10 raises show as outside a core flood", async () => {
    // co-level-bf2 without its on-delay, and the bag filter outlet CO switching between 40 and
    // 200 ppm every 10 s from 60 s to 600 s (high while floor(t / 10 s) is odd): a rise past the
    // caution threshold (150 ppm, deadband 10) at 70, 90, ..., 590 s, i.e. (590 − 70) / 20 + 1 = 27
    // raises in the first 10 minutes, each cleared 10 s later. The core calls the rule chattering
    // (3 in 60 s); from then on its raises are chatter control's, not a flood's (src/advisories/nuisance.ts),
    // so the summary's own count of periods over 10 raises finds them outside any core flood.
    const text = readFileSync(DEMO, "utf8");
    const needle = "    tiers: { caution: 150, warning: 400 }\n    deadband: 10\n    onDelayS: 20";
    expect(text).toContain(needle);
    const fast = join(dir, "fast.yaml");
    writeFileSync(fast, text.replace(needle, needle.replace("onDelayS: 20", "onDelayS: 0")));
    const square = samples.map((s) =>
      s.signal === "bf2.outlet.co" && s.sourceTimeMs >= SIM_START_MS + 60_000 && s.sourceTimeMs < SIM_START_MS + 600_000
        ? { ...s, value: Math.floor(s.sourceTimeMs / 10_000) % 2 === 1 ? 200 : 40 }
        : s,
    );
    const input = join(dir, "square.csv");
    writeFileSync(input, formatHistoryCsv(square));
    const out = join(dir, "square.jsonl");
    const r = await replay("--config", fast, "--input", input, "--json", "--out", out);
    expect(r.code, r.err).toBe(0);
    const doc = JSON.parse(r.out);
    const events = readFileSync(out, "utf8").trimEnd().split("\n").map((l) => JSON.parse(l));
    const raises = events.filter((e) => e.ruleId === "co-level-bf2" && e.transition === "raise" && e.atMs < SIM_START_MS + 600_000);
    expect(raises).toHaveLength(27);
    const p = doc.summary.positions.find((x: { position: string }) => x.position === "control-room");
    expect(p.flood.periodsOverLimit).toBeGreaterThanOrEqual(1);
    expect(p.flood.floods).toBe(0);
    expect(p.flood.periodsOverLimitOutsideCoreFlood).toBe(p.flood.periodsOverLimit);
    expect(events.some((e) => e.kind === "nuisance" && e.type === "flood-start")).toBe(false);
    expect(doc.summary.chattering.map((c: { advisoryId: string }) => c.advisoryId)).toContain("co-level-bf2");
    expect(p.verdict).toBe("over maximum manageable"); // 27 raises of co-level-bf2 alone in 40 min: over 40 per hour
  });
});

describe("millwarden replay --compare", () => {
  it("lists what each config raised that the other did not", async () => {
    // B: the bag filter CO gradient rule at ten times its thresholds: the smoulder's raise is A's only.
    const text = readFileSync(DEMO, "utf8");
    const needle = "quantity: co.bf2-outlet.gradientPpmPerMin\n    direction: high\n    tiers: { caution: 5, warning: 15 }";
    expect(text).toContain(needle);
    const other = join(dir, "less-sensitive.yaml");
    writeFileSync(other, text.replace(needle, needle.replace("{ caution: 5, warning: 15 }", "{ caution: 50, warning: 150 }")));
    const r = await replay("--config", DEMO, "--input", csv, "--compare", other, "--json");
    expect(r.code, r.err).toBe(0);
    const doc = JSON.parse(r.out);
    const c = doc.compare.comparison;
    expect(c.onlyA.map((x: { ruleId: string }) => x.ruleId)).toContain("co-gradient-bf2");
    expect(c.onlyB.filter((x: { ruleId: string }) => x.ruleId === "co-gradient-bf2")).toEqual([]);
    // every other rule is the same in both: they raise the same, matched within 0 s
    expect(c.onlyA.every((x: { ruleId: string }) => x.ruleId === "co-gradient-bf2")).toBe(true);
    expect(c.onlyB).toEqual([]);
    expect(c.matched.every((m: { dtMs: number }) => m.dtMs === 0)).toBe(true);
    expect(doc.summary.raises - doc.compare.summary.raises).toBe(c.onlyA.length);

    const t = await replay("--config", DEMO, "--input", csv, "--compare", other);
    expect(t.out).toMatch(/^Raised by A only \(.*demo\.yaml\): [1-9]/m);
    expect(t.out).toMatch(/^\d{4}-\d\d-\d\dT[\d:.]+Z +co-gradient-bf2 +caution /m);
    expect(t.out).toMatch(/^Raised by B only \(.*less-sensitive\.yaml\): 0$/m);
    expect(t.out).toMatch(/^Figures side by side$/m);
  });

  it("refuses a config with other signals", async () => {
    const text = readFileSync(DEMO, "utf8");
    const other = join(dir, "renamed.yaml");
    writeFileSync(other, text.replaceAll("ig2.flow", "ig2.n2flow"));
    const r = await replay("--config", DEMO, "--input", csv, "--compare", other);
    expect(r.code).toBe(2);
    expect(r.err).toMatch(/--compare .*renamed\.yaml: expected the same signal ids as .*demo\.yaml .*only in .*demo\.yaml: "ig2\.flow"; only in .*renamed\.yaml: "ig2\.n2flow"/);
  });
});
