// Benchmark of the computing core alone: a generated stretch of plant-like data
// through Engine.ingest and Engine.tick, as replay would drive it. Reports samples
// per second and the heap held per signal (windows must not grow with run time).
// Run with `npm run bench` (never a timed test).
import { join } from "node:path";
import { loadConfig } from "../src/config/load.js";
import type { MillwardenConfig } from "../src/config/schema.js";
import { DataClock, Engine } from "../src/core/engine.js";
import type { Sample } from "../src/core/types.js";

/** The demo plant widened to `nSignals` by adding CO points that each have a rolling window. */
function widened(nSignals: number): MillwardenConfig {
  const base = loadConfig(join(import.meta.dirname, "../config/demo.yaml"));
  const extra = Math.max(0, nSignals - base.signals.length);
  const signals = [...base.signals];
  const coPoints = [...base.coPoints];
  for (let i = 0; i < extra; i++) {
    const id = `bench.co${i}`;
    signals.push({ ...base.signals.find((s) => s.id === "bf2.outlet.co")!, id, tag: `BX-AT-${1000 + i}`, topic: `bench/${id}` });
    if (i % 2 === 0) coPoints.push({ ...base.coPoints[0]!, id: `bench-co${i}`, signal: id });
  }
  return { ...base, signals, coPoints };
}

export function benchCore(nSignals: number, seconds: number) {
  const cfg = widened(nSignals);
  const engine = new Engine(cfg);
  const clock = new DataClock();
  const ids = cfg.signals.map((s) => s.id);
  const t0 = Date.UTC(2026, 0, 1);
  const sample: Sample = { signal: "", value: 0, quality: "good", sourceTimeMs: 0, receiveTimeMs: 0 };
  let n = 0;
  const heapBefore = process.memoryUsage().heapUsed;
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
  return { signals: ids.length, samples: n, seconds: s, samplesPerS: n / s, heapPerSignalB: (heapAfter - heapBefore) / ids.length };
}

if (import.meta.url === `file://${process.argv[1]}`) {
  const r = benchCore(200, 3600);
  console.log(JSON.stringify(r));
}
