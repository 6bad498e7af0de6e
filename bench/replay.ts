// Benchmark of `millwarden replay`, in-process: a day of 200 signals at 1 Hz (17.3 million
// samples) through Replay (DataClock + Engine + event collection) and the summary, on one core.
// The demo plant's 18 signals carry the simulator's "demo" scenario (start-up, grinding, a filter
// smoulder, recovery; 80 min, looped), so the default rule set raises and clears advisories;
// the other 182 are the widening of bench/core.ts. Then the two input readers alone on one
// hour of the same data, written as a history CSV and as a historian file.
//
//   npx tsx bench/replay.ts [--hours H]      (or BENCH_REPLAY_HOURS=H; default 24)
// Reports time and peak RSS; the target (issue) is under 30 s for the day. Never a timed test.
import { closeSync, mkdtempSync, openSync, rmSync, statSync, writeSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { loadConfig } from "../src/config/load.js";
import type { MillwardenConfig } from "../src/config/schema.js";
import type { Sample } from "../src/core/types.js";
import { openReplayInput } from "../src/replay/input.js";
import { renderSummary } from "../src/replay/render.js";
import { Replay } from "../src/replay/run.js";
import { summarize } from "../src/replay/summary.js";
import { formatHistoryCsvLine, HISTORY_CSV_HEADER } from "../src/sources/csv.js";
import { Historian } from "../src/store/historian.js";
import { simulatedSamples } from "../test/scenarios/harness.js";

const DEMO = join(import.meta.dirname, "../config/demo.yaml");
const T0 = Date.UTC(2026, 0, 12, 0, 0, 0);

/** The demo plant widened to `nSignals`, as bench/core.ts widens it (8 CO points in all). */
function widened(nSignals: number): MillwardenConfig {
  const base = loadConfig(DEMO);
  const extra = Math.max(0, nSignals - base.signals.length);
  const signals = [...base.signals];
  const coPoints = [...base.coPoints];
  const template = base.signals.find((s) => s.id === "bf2.outlet.co")!;
  for (let i = 0; i < extra; i++) {
    const id = `bench.co${i}`;
    const co = coPoints.length < 8;
    signals.push({ ...template, id, tag: `BX-AT-${1000 + i}`, topic: `bench/${id}`, analyser: co ? "bf2-a213" : undefined });
    if (co) coPoints.push({ ...base.coPoints[0]!, id: `bench-co${i}`, signal: id });
  }
  return { ...base, signals, coPoints };
}

/** Samples of second k, in config order, all at the whole second (as the simulator publishes them). */
class DayOfData {
  readonly ids: string[];
  private readonly frames: number;
  private readonly sim: Float64Array;
  private readonly nSim: number;

  constructor(cfg: MillwardenConfig) {
    this.ids = cfg.signals.map((s) => s.id);
    const base = loadConfig(DEMO);
    const durationS = 4800;
    const list = simulatedSamples({ config: DEMO, sim: "demo", seed: 3, durationS }, base);
    this.nSim = base.signals.length;
    this.frames = durationS;
    this.sim = new Float64Array(durationS * this.nSim);
    const col = new Map(this.ids.map((id, i) => [id, i]));
    for (const s of list) this.sim[Math.round((s.sourceTimeMs - list[0]!.sourceTimeMs) / 1000) * this.nSim + col.get(s.signal)!] = s.value;
  }

  each(k: number, emit: (s: Sample) => void): void {
    const t = T0 + k * 1000;
    const f = k % this.frames;
    for (let i = 0; i < this.ids.length; i++) {
      // The widened signals: bounded, in range, changing every second (bench/core.ts's pattern).
      const value = i < this.nSim ? (this.sim[f * this.nSim + i] as number) : 40 + ((k * 7 + i * 13) % 17) * 0.5;
      emit({ signal: this.ids[i]!, value, quality: "good", sourceTimeMs: t, receiveTimeMs: t });
    }
  }
}

function arg(name: string, dflt: number): number {
  const i = process.argv.indexOf(`--${name}`);
  const text = i >= 0 ? process.argv[i + 1] : process.env.BENCH_REPLAY_HOURS;
  if (text === undefined) return dflt;
  const v = Number(text);
  if (!Number.isFinite(v) || v <= 0) throw new Error(`--${name} (or BENCH_REPLAY_HOURS): expected a positive number of hours, found "${text}"`);
  return v;
}

const mb = (kib: number) => (kib / 1024).toFixed(0);
const fmt = (n: number) => Math.round(n).toLocaleString("en");

const hours = arg("hours", 24);
const signals = 200;
const cfg = widened(signals);
const data = new DayOfData(cfg);
const seconds = Math.round(hours * 3600);

global.gc?.();
const replay = new Replay(cfg);
const start = process.hrtime.bigint();
const cpu0 = process.cpuUsage();
const push = (s: Sample) => replay.push(s);
for (let k = 0; k < seconds; k++) data.each(k, push);
const replayS = Number(process.hrtime.bigint() - start) / 1e9;
const cpu = process.cpuUsage(cpu0);
// CPU time of this process: on the shared two-core box the wall time also counts waiting for a core.
const cpuS = (cpu.user + cpu.system) / 1e6;
const s0 = process.hrtime.bigint();
const positions = new Map(cfg.rules.map((r) => [r.id, r.position ?? "control-room"]));
const summary = summarize(replay.events, { fromMs: replay.firstSampleMs!, toMs: replay.lastSampleMs! }, (id) => positions.get(id) ?? "control-room");
const text = renderSummary(summary);
const summaryS = Number(process.hrtime.bigint() - s0) / 1e9;
const rssReplayKiB = process.resourceUsage().maxRSS;
const n = replay.counts.samples;

console.log(`replay in-process, ${signals} signals at 1 Hz for ${hours} h (demo plant on the simulator's "demo" scenario, widened as bench/core.ts), one core`);
console.log(`  ${fmt(n)} samples, ${fmt(replay.counts.ticks)} ticks in ${replayS.toFixed(2)} s (CPU ${cpuS.toFixed(2)} s) = ${fmt(n / replayS)} samples/s; summary of ${fmt(replay.events.length)} events (${fmt(summary.raises)} raises) in ${(summaryS * 1000).toFixed(0)} ms (${text.length} chars)`);
console.log(`  peak RSS ${mb(rssReplayKiB)} MB`);
const dayS = (replayS * 86_400) / seconds;
const dayCpuS = (cpuS * 86_400) / seconds;
const scaled = hours === 24 ? "" : " (scaled to a day; a short run carries the JIT warm-up)";
console.log(
  `  target (issue): a day (17.3 M samples) in under 30 s on one core: wall ${dayS.toFixed(1)} s, CPU ${dayCpuS.toFixed(1)} s${scaled}: ${dayS < 30 ? "met" : dayCpuS < 30 ? "met by CPU time, not by wall time (shared box)" : "not met"}`,
);

// ---- the readers alone, on one hour (or the whole run when shorter) ----
const readerS = Math.min(seconds, 3600);
const dir = mkdtempSync(join(tmpdir(), "mw-bench-replay-"));
try {
  const csv = join(dir, "hour.csv");
  const fd = openSync(csv, "w");
  writeSync(fd, HISTORY_CSV_HEADER + "\n");
  for (let k = 0; k < readerS; k++) {
    const lines: string[] = [];
    data.each(k, (s) => lines.push(formatHistoryCsvLine(s)));
    writeSync(fd, lines.join("\n") + "\n");
  }
  closeSync(fd);
  const db = join(dir, "hour.db");
  const h = Historian.open({ path: db, maxQueueRows: 1_000_000 });
  for (let k = 0; k < readerS; k++) {
    data.each(k, (s) => h.appendSample(s));
    if (k % 600 === 599) h.flush();
  }
  h.flush();
  h.maintain(T0 + readerS * 1000 + 120_000);
  h.close();
  for (const [name, path] of [
    ["history CSV", csv],
    ["historian (SQLite)", db],
  ] as const) {
    const input = openReplayInput(path, { fromMs: null, toMs: null, signals: cfg.signals, maxBadLines: 0 });
    let count = 0;
    const t = process.hrtime.bigint();
    input.forEach(() => count++);
    const s = Number(process.hrtime.bigint() - t) / 1e9;
    input.close();
    console.log(`  reader alone, ${name} (${(statSync(path).size / 1e6).toFixed(0)} MB): ${fmt(count)} samples in ${s.toFixed(2)} s = ${fmt(count / s)} samples/s (a day would add ${((86_400 * signals) / (count / s)).toFixed(0)} s)`);
  }
  console.log(`  peak RSS with the readers ${mb(process.resourceUsage().maxRSS)} MB`);
} finally {
  rmSync(dir, { recursive: true, force: true });
}
