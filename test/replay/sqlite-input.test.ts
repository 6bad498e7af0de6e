// Replay from the historian's SQLite file: the samples written with the Historian come back in
// the order and with the values `millwarden export` gives them, so a replay of the file and a
// replay of its export raise the same events, byte for byte.
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { replayCommand, type ReplayIo } from "../../src/cli/replay.js";
import { loadConfig } from "../../src/config/load.js";
import type { Sample } from "../../src/core/types.js";
import { detectInputKind, openReplayInput, type InputOptions } from "../../src/replay/input.js";
import { formatHistoryCsv } from "../../src/sources/csv.js";
import { Historian } from "../../src/store/historian.js";
import { SIM_START_MS, simulatedSamples } from "../scenarios/harness.js";

const DEMO = join(import.meta.dirname, "../../config/demo.yaml");
const cfg = loadConfig(DEMO);

let dir: string;
let samples: Sample[];

function io(): ReplayIo & { out: string; err: string } {
  const c = { out: "", err: "", progress: false, stdout: (t: string) => void (c.out += t), stderr: (t: string) => void (c.err += t) };
  return c;
}

/** A historian file holding `list`: most of it sealed into chunks, the last minutes left unsealed. */
function historianWith(path: string, list: readonly Sample[]): void {
  const h = Historian.open({ path });
  for (const s of list) h.appendSample(s);
  h.flush();
  // Seals everything before the minute that starts a minute before the last sample (sealAgeS 60 s).
  const r = h.maintain(Math.max(...list.map((s) => s.sourceTimeMs)));
  expect(r.error).toBeNull();
  expect(r.sealedRows).toBeGreaterThan(0);
  expect(h.stats().recentRows).toBeGreaterThan(0);
  h.close();
}

function exportOf(db: string, csv: string, fromMs = Number.NEGATIVE_INFINITY, toMs = Number.POSITIVE_INFINITY): void {
  const h = Historian.open({ path: db });
  try {
    writeFileSync(csv, [...h.exportCsv(fromMs, toMs, cfg.signals.map((s) => s.id))].join("\n") + "\n");
  } finally {
    h.close();
  }
}

function read(path: string, opts: Partial<InputOptions> = {}): Sample[] {
  const input = openReplayInput(path, { fromMs: null, toMs: null, signals: cfg.signals, maxBadLines: 0, ...opts });
  const out: Sample[] = [];
  try {
    input.forEach((s) => out.push(s));
  } finally {
    input.close();
  }
  return out;
}

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), "mw-replay-db-"));
  samples = simulatedSamples({ config: DEMO, sim: "filter-smoulder", seed: 3, durationS: 2400 }, cfg);
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe("replay from the historian's SQLite file", () => {
  it("raises byte for byte the same events as a replay of the file's CSV export and of the original samples", async () => {
    const db = join(dir, "smoulder.db");
    // One stored signal the config does not have: not read, and named in the report.
    historianWith(db, [...samples, { signal: "lab.moisture", value: 11.5, quality: "good", sourceTimeMs: SIM_START_MS, receiveTimeMs: SIM_START_MS }]);
    expect(detectInputKind(db)).toBe("sqlite");
    const exported = join(dir, "smoulder-export.csv");
    exportOf(db, exported);
    const original = join(dir, "smoulder.csv");
    writeFileSync(original, formatHistoryCsv(samples));

    const run = async (input: string, out: string) => {
      const c = io();
      const code = await replayCommand(["--config", DEMO, "--input", input, "--out", out], c);
      expect(code, c.err).toBe(0);
      return c.out;
    };
    const fromDb = await run(db, join(dir, "db.jsonl"));
    await run(exported, join(dir, "export.jsonl"));
    await run(original, join(dir, "original.jsonl"));
    const a = readFileSync(join(dir, "db.jsonl"));
    expect(a.toString("utf8")).toContain('"ruleId":"co-gradient-bf2","transition":"raise"');
    expect(a.equals(readFileSync(join(dir, "export.jsonl")))).toBe(true);
    expect(a.equals(readFileSync(join(dir, "original.jsonl")))).toBe(true);
    expect(fromDb).toMatch(/over .*smoulder\.db \(historian, SQLite\)/);
    expect(fromDb).toMatch(/^input: 48,000 stored samples read$/m); // 20 signals × 2,400 s
    expect(fromDb).toMatch(/^stored signals not in the config \(not read\): lab\.moisture$/m);
  });

  it("reads window by window across a gap and a time range in the export's order, a missing value as a bad sample", () => {
    const gapFrom = SIM_START_MS + 600_000;
    const gapTo = SIM_START_MS + 1_500_000;
    const list = samples.filter((s) => s.sourceTimeMs < gapFrom || s.sourceTimeMs >= gapTo);
    // A stored NaN is a missing value: it comes back as a bad sample, as the export writes it.
    const k = list.findIndex((s) => s.sourceTimeMs === SIM_START_MS + 300_000 && s.signal === "vm2.feed");
    list[k] = { ...list[k]!, value: Number.NaN, quality: "good" };
    const db = join(dir, "gap.db");
    historianWith(db, list);
    const fromMs = SIM_START_MS + 120_500; // inside a second: the sample at 120.000 s is out, 121.000 s in
    const toMs = SIM_START_MS + 2_000_000;
    const csv = join(dir, "gap.csv");
    exportOf(db, csv, fromMs, toMs);

    const viaCsv = read(csv);
    // One-minute windows from 120.5 s: 8 up to the gap at 600 s, one empty window from which the
    // reader jumps to the next sample (1,500 s), then 9 to 2,000 s.
    const viaDb = read(db, { fromMs, toMs, windowMs: 60_000 });
    expect(viaDb.length).toBe(viaCsv.length);
    expect(viaDb).toEqual(viaCsv);
    // the default window (one hour for 20 signals at 1 Hz) reads the same
    expect(read(db, { fromMs, toMs })).toEqual(viaCsv);

    // 20 signals × (seconds 121 .. 599 and 1,500 .. 2,000) = 20 × (479 + 501)
    expect(viaDb.length).toBe(20 * (479 + 501));
    expect(viaDb[0]!.sourceTimeMs).toBe(SIM_START_MS + 121_000);
    expect(viaDb.at(-1)!.sourceTimeMs).toBe(toMs);
    expect(viaDb.some((s) => s.sourceTimeMs >= gapFrom && s.sourceTimeMs < gapTo)).toBe(false);
    // equal times come in signal id order, as the export writes them
    const firstSecond = viaDb.filter((s) => s.sourceTimeMs === SIM_START_MS + 121_000).map((s) => s.signal);
    expect(firstSecond).toEqual([...firstSecond].sort());
    const missing = viaDb.find((s) => s.sourceTimeMs === SIM_START_MS + 300_000 && s.signal === "vm2.feed")!;
    expect(missing.quality).toBe("bad");
    expect(Number.isNaN(missing.value)).toBe(true);
    expect(() => read(db, { windowMs: 0 })).toThrow(/windowMs: expected a whole number of milliseconds ≥ 1/);
  });

  it("refuses an SQLite file that is not a historian, saying what it found", async () => {
    const other = join(dir, "other.db");
    const Database = (await import("better-sqlite3")).default;
    const d = new Database(other);
    d.exec("CREATE TABLE readings (t INTEGER, v REAL)");
    d.close();
    const c = io();
    expect(await replayCommand(["--config", DEMO, "--input", other], c)).toBe(1);
    expect(c.err).toMatch(/not a millwarden historian .*found tables: readings/);
  });
});
