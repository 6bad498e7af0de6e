// `npm run bench`: every benchmark, one after another, each in its own process so one
// cannot warm or pollute another. Numbers only; speed is never asserted in tests.
import { spawnSync } from "node:child_process";
import { join } from "node:path";
import os from "node:os";

const here = import.meta.dirname;
const benches: { name: string; file: string; args: string[] }[] = [
  { name: "core", file: "core.ts", args: ["--hours", process.env.BENCH_HOURS ?? "24"] },
  { name: "historian", file: "historian.ts", args: ["--seconds", process.env.BENCH_SECONDS ?? "200"] },
  { name: "opcua", file: "opcua.ts", args: [] },
  { name: "replay", file: "replay.ts", args: ["--hours", process.env.BENCH_REPLAY_HOURS ?? "24"] },
  { name: "glance", file: "glance.ts", args: [] },
  { name: "ingest", file: "ingest.ts", args: ["--messages", process.env.BENCH_INGEST_MESSAGES ?? "400000"] },
  { name: "notify", file: "notify.ts", args: ["--raises", process.env.BENCH_NOTIFY_RAISES ?? "40"] },
];

console.log(`millwarden benchmarks on ${os.cpus().length} × ${os.cpus()[0]?.model ?? "cpu"}, Node ${process.version}, ${new Date().toISOString()}`);
let failed = 0;
for (const b of benches) {
  console.log(`\n== ${b.name}`);
  const r = spawnSync(process.execPath, ["--expose-gc", "--import", "tsx", join(here, b.file), ...b.args], { stdio: "inherit" });
  if (r.status !== 0) {
    failed++;
    console.log(`(${b.name} exited with ${r.status ?? r.signal})`);
  }
}
process.exit(failed ? 1 : 0);
