// The full fuzz run: vitest on test/fuzz with FUZZ_RUNS_SCALE (default 1, about a million cases),
// then the cases each property ran, per target and in total. Usage:
//   npx tsx test/fuzz/run-all.ts [scale]
// Exit status: vitest's, or 1 when fewer than a million cases ran at scale >= 1.
import { spawnSync } from "node:child_process";
import { mkdtempSync, readFileSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";

const scale = process.argv[2] ?? process.env["FUZZ_RUNS_SCALE"] ?? "1";
if (!(Number(scale) > 0)) throw new Error(`scale: expected a number > 0, found ${JSON.stringify(scale)}`);
const dir = mkdtempSync(join(tmpdir(), "millwarden-fuzz-"));
const countFile = join(dir, "counts.jsonl");
const startedMs = Date.now();
const run = spawnSync("npx", ["vitest", "run", "test/fuzz", "--testTimeout=3600000"], {
  stdio: "inherit",
  env: { ...process.env, FUZZ_RUNS_SCALE: scale, FUZZ_COUNT_FILE: countFile },
});
const seconds = (Date.now() - startedMs) / 1000;

let lines: string[] = [];
try {
  lines = readFileSync(countFile, "utf8").split("\n").filter(Boolean);
} catch {
  // No property ran (vitest failed before the tests): the total is 0.
}
rmSync(dir, { recursive: true, force: true });
const byTarget = new Map<string, number>();
for (const l of lines) {
  const { target, cases } = JSON.parse(l) as { target: string; cases: number };
  byTarget.set(target, (byTarget.get(target) ?? 0) + cases);
}
const total = [...byTarget.values()].reduce((a, b) => a + b, 0);
const width = Math.max(...[...byTarget.keys()].map((k) => k.length), 5);
for (const [target, cases] of byTarget) console.log(`${target.padEnd(width)}  ${String(cases).padStart(9)}`);
console.log(`${"total".padEnd(width)}  ${String(total).padStart(9)}  in ${seconds.toFixed(0)} s (${(total / seconds).toFixed(0)} cases/s), FUZZ_RUNS_SCALE=${scale}`);
const short = Number(scale) >= 1 && total < 1_000_000;
if (short) console.log(`fewer than a million cases: ${total}`);
process.exit(run.status !== 0 ? (run.status ?? 1) : short ? 1 : 0);
