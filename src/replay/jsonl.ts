// Events as JSON lines (`millwarden replay --out events.jsonl`), one event per line.
//
// Byte for byte the same for the same input: the keys come in a fixed order per kind (the
// order of the types in src/core/types.ts), whatever order the object was built in; keys a
// later version adds follow in alphabetical order. Times are the core's epoch ms, nothing of
// the wall clock. A non-finite number (NaN limit, endless time) is written as null, as
// JSON.stringify does.
import type { AdvisoryTransition, NuisanceEvent } from "../core/types.js";

const ADVISORY_KEYS = ["kind", "atMs", "advisoryId", "ruleId", "transition", "from", "to", "tier", "value", "limit", "by", "why"] as const satisfies readonly (keyof AdvisoryTransition)[];
const NUISANCE_KEYS = ["kind", "atMs", "type", "position", "advisoryId", "count", "why"] as const satisfies readonly (keyof NuisanceEvent)[];

function ordered(e: object, keys: readonly string[]): Record<string, unknown> {
  const src = e as Record<string, unknown>;
  const out: Record<string, unknown> = {};
  for (const k of keys) if (Object.hasOwn(src, k)) out[k] = src[k];
  for (const k of Object.keys(src).filter((k) => !keys.includes(k)).sort()) out[k] = src[k];
  return out;
}

/** One event as a line of JSON, without the line end. */
export function eventJsonLine(e: AdvisoryTransition | NuisanceEvent): string {
  return JSON.stringify(ordered(e, e.kind === "advisory" ? ADVISORY_KEYS : NUISANCE_KEYS));
}

/** The events a replay writes to its events file: advisory transitions and nuisance events. */
export function isWrittenEvent(e: { kind: string }): e is AdvisoryTransition | NuisanceEvent {
  return e.kind === "advisory" || e.kind === "nuisance";
}
