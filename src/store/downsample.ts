// Trend points from raw points or 1-minute roll-ups: about `points` of them, chosen with
// LTTB (lttb.ts), each carrying the min and max of what it stands for, so that a spike the
// line skips still shows in the band. Pure: no I/O.
//
// Gaps stay gaps: LTTB runs on each stretch of present values separately (the point budget
// shared in proportion to their lengths), and each run of missing values gives one point
// with value null.
import { lttb, lttbBuckets } from "./lttb.js";

/** Input: raw points (lo = hi = value) or roll-ups (value = mean, lo = min, hi = max). */
export interface TrendInput {
  t: Float64Array;
  /** NaN when missing. */
  v: Float64Array;
  lo: Float64Array;
  hi: Float64Array;
  /** Quality code; the worst (highest) of a bucket is kept. */
  q: Uint8Array;
  /** The first `rollups` points are roll-ups: they carry their band even when not reduced. */
  rollups: number;
}

export interface TrendOut {
  tMs: number;
  value: number | null;
  min?: number;
  max?: number;
  /** Worst quality code of what the point stands for. */
  code: number;
}

export function downsample(inp: TrendInput, points: number): TrendOut[] {
  const n = inp.t.length;
  if (n <= points) {
    const out: TrendOut[] = [];
    for (let i = 0; i < n; i++) out.push(single(inp, i));
    return out;
  }
  // Stretches of present values [start, end) and runs of missing ones.
  const stretches: { start: number; end: number }[] = [];
  const gaps: { start: number; end: number }[] = [];
  for (let i = 0; i < n; ) {
    const missing = Number.isNaN(inp.v[i] as number);
    let j = i + 1;
    while (j < n && Number.isNaN(inp.v[j] as number) === missing) j++;
    (missing ? gaps : stretches).push({ start: i, end: j });
    i = j;
  }
  const present = stretches.reduce((s, x) => s + x.end - x.start, 0);
  const budget = Math.max(points - gaps.length, 3 * stretches.length);

  const out: TrendOut[] = [];
  for (const g of gaps) {
    let code = 0;
    for (let i = g.start; i < g.end; i++) code = Math.max(code, inp.q[i] as number);
    out.push({ tMs: inp.t[g.start] as number, value: null, code });
  }
  for (const s of stretches) {
    const len = s.end - s.start;
    const m = Math.max(3, Math.round((len * budget) / present));
    if (len <= m) {
      for (let i = s.start; i < s.end; i++) out.push(single(inp, i));
      continue;
    }
    const xs = inp.t.subarray(s.start, s.end);
    const ys = inp.v.subarray(s.start, s.end);
    const kept = lttb(xs, ys, m);
    const buckets = [{ start: 0, end: 1 }, ...lttbBuckets(len, m), { start: len - 1, end: len }];
    for (let k = 0; k < m; k++) {
      const b = buckets[k] as { start: number; end: number };
      const i = s.start + (kept[k] as number);
      let lo = Number.POSITIVE_INFINITY;
      let hi = Number.NEGATIVE_INFINITY;
      let code = 0;
      for (let j = s.start + b.start; j < s.start + b.end; j++) {
        lo = Math.min(lo, inp.lo[j] as number);
        hi = Math.max(hi, inp.hi[j] as number);
        code = Math.max(code, inp.q[j] as number);
      }
      // A band when the point stands for several, and only over usable values.
      const banded = (s.start + b.start < inp.rollups || b.end - b.start > 1) && lo <= hi;
      out.push({ tMs: inp.t[i] as number, value: inp.v[i] as number, ...(banded ? { min: lo, max: hi } : {}), code });
    }
  }
  return out.sort((a, b) => a.tMs - b.tMs);
}

function single(inp: TrendInput, i: number): TrendOut {
  const v = inp.v[i] as number;
  if (Number.isNaN(v)) return { tMs: inp.t[i] as number, value: null, code: inp.q[i] as number };
  return { tMs: inp.t[i] as number, value: v, ...(i < inp.rollups ? { min: inp.lo[i] as number, max: inp.hi[i] as number } : {}), code: inp.q[i] as number };
}
