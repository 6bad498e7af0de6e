// Benchmark of the computing core alone: a generated stretch of plant-like data (the mill
// grinding steadily, every value in its range) through Engine.ingest and Engine.tick, as
// replay would drive it. Reports samples per second and the heap held per signal (windows
// must not grow with run time). Run with `npm run bench` (never a timed test).
import { join } from "node:path";
import { loadConfig } from "../src/config/load.js";
import type { MillwardenConfig } from "../src/config/schema.js";
import { DataClock, Engine } from "../src/core/engine.js";
import type { Sample } from "../src/core/types.js";

/**
 * The demo plant widened to `nSignals` the way a real plant's tag list is: mostly plain
 * process values, with a few more CO measuring points (8 in all, each with its windows).
 */
function widened(nSignals: number): MillwardenConfig {
  const base = loadConfig(join(import.meta.dirname, "../config/demo.yaml"));
  const extra = Math.max(0, nSignals - base.signals.length);
  const signals = [...base.signals];
  const coPoints = [...base.coPoints];
  for (let i = 0; i < extra; i++) {
    const id = `bench.co${i}`;
    // Plain process values, except the extra CO points, which get an analyser of their own.
    const co = coPoints.length < 8;
    const template = base.signals.find((s) => s.id === "bf2.outlet.co")!;
    signals.push({ ...template, id, tag: `BX-AT-${1000 + i}`, topic: `bench/${id}`, analyser: co ? "bf2-a213" : undefined });
    if (co) coPoints.push({ ...base.coPoints[0]!, id: `bench-co${i}`, signal: id });
  }
  return { ...base, signals, coPoints };
}

/**
 * Where each demo signal sits while the plant grinds steadily (canonical units: °C, Pa, % vol,
 * ppm, kW, t/h, Nm³/h), from the simulated plant's first frame of wet-coal-surge. The extra
 * signals are CO points at 30 ppm; state signals (analyser status) read 0. Every value stays
 * inside its signal's range, so analysers are healthy, the phase is grinding, and every window
 * and trend really computes.
 */
const GRINDING: Readonly<Record<string, number>> = {
  "hg2.outlet.temp": 395.9,
  "vm2.inlet.temp": 158.2,
  "vm2.outlet.temp": 88.15,
  "vm2.outlet.press": -1992,
  "vm2.outlet.o2": 8.93,
  "vm2.outlet.co": 30,
  "vm2.drive.power": 1806.1,
  "vm2.feed": 30.15,
  "bf2.inlet.temp": 86.52,
  "bf2.outlet.temp": 83.47,
  "bf2.outlet.press": -3491,
  "bf2.outlet.o2": 10.51,
  "bf2.outlet.co": 31.6,
  "bf2.outlet.h2o": 14.29,
  "fs2.temp": 71.64,
  "fs2.o2": 10.45,
  "fs2.co": 24.8,
  "ig2.flow": 11456,
};

export function benchCore(nSignals: number, seconds: number) {
  const cfg = widened(nSignals);
  global.gc?.();
  const heapBefore = process.memoryUsage().heapUsed;
  const engine = new Engine(cfg);
  const clock = new DataClock();
  const ids = cfg.signals.map((s) => s.id);
  const isState = cfg.signals.map((s) => s.unit === "state");
  const level = ids.map((id, i) => GRINDING[id] ?? (isState[i] ? 0 : 30));
  // A bounded wobble of 0.5 % (at least 0.1) around the level: no analyser reads frozen.
  const swing = level.map((v, i) => (isState[i] ? 0 : Math.max(0.1, Math.abs(v) * 0.005)));
  const t0 = Date.UTC(2026, 0, 1);
  const sample: Sample = { signal: "", value: 0, quality: "good", sourceTimeMs: 0, receiveTimeMs: 0 };
  let n = 0;
  const start = process.hrtime.bigint();
  const cpu0 = process.cpuUsage();
  for (let k = 0; k < seconds; k++) {
    const t = t0 + k * 1000;
    for (const due of clock.due(t)) engine.tick(due);
    for (let i = 0; i < ids.length; i++) {
      sample.signal = ids[i]!;
      sample.value = level[i]! + (swing[i]! * (((k * 7 + i * 13) % 17) - 8)) / 8;
      sample.sourceTimeMs = sample.receiveTimeMs = t + i;
      engine.ingest(sample);
      n++;
    }
  }
  const s = Number(process.hrtime.bigint() - start) / 1e9;
  // CPU time of this process: on the shared two-core box the wall time also counts waiting for a core.
  const cpu = process.cpuUsage(cpu0);
  const cpuS = (cpu.user + cpu.system) / 1e6;
  global.gc?.();
  const heapAfter = process.memoryUsage().heapUsed;
  // Keep the engine alive until the heap has been read, so its windows are counted.
  if (engine.snapshot().signals.length !== ids.length) throw new Error("engine lost signals");
  return { signals: ids.length, samples: n, seconds: s, samplesPerS: n / s, cpuS, samplesPerCpuS: n / cpuS, heapPerSignalB: (heapAfter - heapBefore) / ids.length };
}

function arg(name: string, dflt: number): number {
  const i = process.argv.indexOf(`--${name}`);
  if (i < 0) return dflt;
  const v = Number(process.argv[i + 1]);
  if (!Number.isFinite(v) || v <= 0) throw new Error(`--${name}: expected a positive number, found "${process.argv[i + 1] ?? ""}"`);
  return v;
}

if (import.meta.url === `file://${process.argv[1]}`) {
  // Memory per signal is measured after an hour and after the whole run: bounded windows keep them equal.
  const signals = arg("signals", 200);
  const hours = arg("hours", 24);
  const hour = benchCore(signals, 3600);
  const all = benchCore(signals, Math.round(hours * 3600));
  console.log(`core alone, ${signals} signals at 1 Hz (demo plant widened to a plant-sized tag list, 8 CO points), one core`);
  const line = (label: string, r: ReturnType<typeof benchCore>) =>
    `  ${label}: ${r.samples.toLocaleString("en")} samples in ${r.seconds.toFixed(2)} s (CPU ${r.cpuS.toFixed(2)} s) = ` +
    `${Math.round(r.samplesPerS).toLocaleString("en")} samples/s (${Math.round(r.samplesPerCpuS).toLocaleString("en")} per CPU second), heap held ${Math.round(r.heapPerSignalB)} B/signal`;
  console.log(line("1 h ", hour));
  console.log(line(`${hours} h`, all));
  console.log("  target (issue): >= 1,000,000 samples/s; heap per signal must not grow with run time");
}
