// Shared set-up for the fault suite: repetition counts, and small statistics for the printed figures.
//
// Each fault test runs a small default count so `npx vitest run test/faults` stays near a minute;
// FAULT_REPEAT=20 gives the full counts of the issue ("Proof under load, faults and bad input").

/** How many times a fault is repeated: FAULT_REPEAT if set (a positive integer), else `fallback`. */
export function repeatCount(fallback: number): number {
  const raw = process.env.FAULT_REPEAT;
  if (raw === undefined || raw === "") return fallback;
  const n = Number(raw);
  if (!Number.isInteger(n) || n < 1) throw new Error(`FAULT_REPEAT: expected a positive integer, found ${JSON.stringify(raw)}`);
  return n;
}

/** min / median / max of a non-empty list, for the report lines the tests print. */
export function spread(values: readonly number[]): { min: number; median: number; max: number } {
  if (values.length === 0) throw new Error("spread: expected at least one value");
  const s = [...values].sort((a, b) => a - b);
  const mid = Math.floor(s.length / 2);
  const median = s.length % 2 ? s[mid]! : (s[mid - 1]! + s[mid]!) / 2;
  return { min: s[0]!, median, max: s.at(-1)! };
}

export const sleep = (ms: number) => new Promise<void>((r) => setTimeout(r, ms));
