// Shared by the fuzz tests: how many cases each property runs, and the count of those run.
// FUZZ_RUNS_SCALE=1 gives each property its full share of the million-case run (run-all.ts);
// unset, a small fraction so that `npm test` stays fast. FUZZ_COUNT_FILE, when set, receives
// one JSON line per property with the cases it actually ran, for run-all.ts to add up.
import { appendFileSync } from "node:fs";
import fc from "fast-check";

const scaleText = process.env["FUZZ_RUNS_SCALE"];
const scale = scaleText === undefined || scaleText === "" ? 0 : Number(scaleText);
if (!Number.isFinite(scale) || scale < 0) throw new Error(`FUZZ_RUNS_SCALE: expected a number >= 0, found ${JSON.stringify(scaleText)}`);

/** Cases for a property whose share of the full run is `full`; at default scale `small`. */
export function runs(full: number, small: number): number {
  return scale === 0 ? small : Math.max(1, Math.round(full * scale));
}

/** A seed per run unless FUZZ_SEED pins one (to replay a failure fast-check reported). */
const seedText = process.env["FUZZ_SEED"];
export const FC_PARAMS = seedText ? { seed: Number(seedText) } : {};

/**
 * fc.assert that counts the cases it ran (shrinking included) and reports them: to the console
 * and, for run-all.ts, to FUZZ_COUNT_FILE.
 */
export function assertCounted<T>(target: string, arb: fc.Arbitrary<T>, predicate: (v: T) => void, numRuns: number): void {
  let cases = 0;
  try {
    fc.assert(
      fc.property(arb, (v) => {
        cases++;
        predicate(v);
      }),
      { numRuns, ...FC_PARAMS },
    );
  } finally {
    report(target, cases);
  }
}

/** The same for an async predicate (HTTP through inject). */
export async function assertCountedAsync<T>(target: string, arb: fc.Arbitrary<T>, predicate: (v: T) => Promise<void>, numRuns: number): Promise<void> {
  let cases = 0;
  try {
    await fc.assert(
      fc.asyncProperty(arb, async (v) => {
        cases++;
        await predicate(v);
      }),
      { numRuns, ...FC_PARAMS },
    );
  } finally {
    report(target, cases);
  }
}

function report(target: string, cases: number): void {
  const file = process.env["FUZZ_COUNT_FILE"];
  if (file) appendFileSync(file, `${JSON.stringify({ target, cases })}\n`);
  else if (scale !== 0) console.log(`fuzz ${target}: ${cases} cases`);
}
