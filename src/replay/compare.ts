// What one config raised that another did not, over the same input (`millwarden replay --compare`).
//
// Raises are matched by rule id and time: a raise of the same rule on the other side within
// the tolerance (default 60 s) counts as the same advisory. Per rule both sides are taken in
// time order and paired greedily, the earlier unpaired raise giving way first; for points on a
// line with a fixed tolerance this pairs as many raises as any matching can.
// Pure: no I/O, no clock.
import type { AdvisoryTransition, Tier } from "../core/types.js";
import type { ReplayEvent } from "./summary.js";

export const DEFAULT_MATCH_TOLERANCE_MS = 60_000;

export interface RaiseRef {
  atMs: number;
  ruleId: string;
  advisoryId: string;
  tier: Tier;
  value: number | null;
  limit: number;
}

export interface MatchedRaise {
  a: RaiseRef;
  b: RaiseRef;
  /** b.atMs − a.atMs. */
  dtMs: number;
}

export interface RaiseComparison {
  toleranceMs: number;
  raisesA: number;
  raisesB: number;
  matched: MatchedRaise[];
  /** Raised by A with no raise of the same rule by B within the tolerance; in time order. */
  onlyA: RaiseRef[];
  onlyB: RaiseRef[];
}

function raisesOf(events: readonly ReplayEvent[]): RaiseRef[] {
  return events
    .filter((e): e is AdvisoryTransition => e.kind === "advisory" && e.transition === "raise")
    .map((e) => ({ atMs: e.atMs, ruleId: e.ruleId, advisoryId: e.advisoryId, tier: e.tier, value: e.value, limit: e.limit }));
}

function byRule(raises: readonly RaiseRef[]): Map<string, RaiseRef[]> {
  const m = new Map<string, RaiseRef[]>();
  for (const r of raises) {
    let list = m.get(r.ruleId);
    if (list === undefined) m.set(r.ruleId, (list = []));
    list.push(r);
  }
  for (const list of m.values()) list.sort((x, y) => x.atMs - y.atMs);
  return m;
}

const inOrder = (x: RaiseRef, y: RaiseRef): number => x.atMs - y.atMs || (x.ruleId < y.ruleId ? -1 : x.ruleId > y.ruleId ? 1 : 0);

export function compareRaises(a: readonly ReplayEvent[], b: readonly ReplayEvent[], toleranceMs = DEFAULT_MATCH_TOLERANCE_MS): RaiseComparison {
  if (!(Number.isFinite(toleranceMs) && toleranceMs >= 0)) throw new RangeError(`compareRaises: expected a tolerance of 0 ms or more, found ${String(toleranceMs)}`);
  const ra = raisesOf(a);
  const rb = raisesOf(b);
  const ma = byRule(ra);
  const mb = byRule(rb);
  const matched: MatchedRaise[] = [];
  const onlyA: RaiseRef[] = [];
  const onlyB: RaiseRef[] = [];
  for (const rule of new Set([...ma.keys(), ...mb.keys()])) {
    const xs = ma.get(rule) ?? [];
    const ys = mb.get(rule) ?? [];
    let i = 0;
    let j = 0;
    while (i < xs.length && j < ys.length) {
      const x = xs[i]!;
      const y = ys[j]!;
      const dt = y.atMs - x.atMs;
      if (Math.abs(dt) <= toleranceMs) {
        matched.push({ a: x, b: y, dtMs: dt });
        i++;
        j++;
      } else if (dt > 0) {
        // y is too late for x, and every later y is later still: x has no partner.
        onlyA.push(x);
        i++;
      } else {
        onlyB.push(y);
        j++;
      }
    }
    for (; i < xs.length; i++) onlyA.push(xs[i]!);
    for (; j < ys.length; j++) onlyB.push(ys[j]!);
  }
  matched.sort((p, q) => inOrder(p.a, q.a));
  return { toleranceMs, raisesA: ra.length, raisesB: rb.length, matched, onlyA: onlyA.sort(inOrder), onlyB: onlyB.sort(inOrder) };
}
