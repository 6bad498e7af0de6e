// Benchmark of the computing core alone: a generated stretch of plant-like data
// through Engine.ingest and Engine.tick, as replay would drive it. Reports samples
// per second and the heap held per signal (windows must not grow with run time).
// Run with `npm run bench` (never a timed test).
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

export function benchCore(nSignals: number, seconds: number) {
  const cfg = widened(nSignals);
  global.gc?.();
  const heapBefore = process.memoryUsage().heapUsed;
  const engine = new Engine(cfg);
  const clock = new DataClock();
  const ids = cfg.signals.map((s) => s.id);
  const t0 = Date.UTC(2026, 0, 1);
  const sample: Sample = { signal: "", value: 0, quality: "good", sourceTimeMs: 0, receiveTimeMs: 0 };
  let n = 0;
  const start = process.hrtime.bigint();
  for (let k = 0; k < seconds; k++) {
    const t = t0 + k * 1000;
    for (const due of clock.due(t)) engine.tick(due);
    for (let i = 0; i < ids.length; i++) {
      sample.signal = ids[i]!;
      sample.value = 40 + ((k * 7 + i * 13) % 17) * 0.5; // bounded, in every range
      sample.sourceTimeMs = sample.receiveTimeMs = t + i;
      engine.ingest(sample);
      n++;
    }
  }
  const s = Number(process.hrtime.bigint() - start) / 1e9;
  global.gc?.();
  const heapAfter = process.memoryUsage().heapUsed;
  // Keep the engine alive until the heap has been read, so its windows are counted.
  if (engine.snapshot().signals.length !== ids.length) throw new Error("engine lost signals");
  return { signals: ids.length, samples: n, seconds: s, samplesPerS: n / s, heapPerSignalB: (heapAfter - heapBefore) / ids.length };
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
  console.log(`  1 h : ${hour.samples.toLocaleString("en")} samples in ${hour.seconds.toFixed(2)} s = ${Math.round(hour.samplesPerS).toLocaleString("en")} samples/s, heap held ${Math.round(hour.heapPerSignalB)} B/signal`);
  console.log(`  ${hours} h: ${all.samples.toLocaleString("en")} samples in ${all.seconds.toFixed(2)} s = ${Math.round(all.samplesPerS).toLocaleString("en")} samples/s, heap held ${Math.round(all.heapPerSignalB)} B/signal`);
  console.log("  target (issue): >= 1,000,000 samples/s; heap per signal must not grow with run time");
}
