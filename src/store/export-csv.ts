// Streaming export in the history exchange format (DESIGN.md; read by src/sources/csv.ts):
//
//   time,signal,value,quality
//   2025-03-04T05:00:00.000Z,VM2-TT-111,86.91,good
//
// One line per sample, in time order across signals (equal times by signal id), times in
// RFC 3339 UTC with milliseconds. A missing value is an empty field; the format allows
// that only with quality bad, so such a sample is written as bad whatever its stored
// quality (the historian keeps NaN and ±Infinity as missing).
//
// Memory stays small whatever the range: one decoded chunk per signal at a time, plus a copy
// of the signal's unsealed points in the range taken when the export starts.
import type { ChunkPoints } from "./chunk.js";
import type { SeriesBuffer } from "./recent.js";
import type { Tables } from "./tables.js";

export const EXPORT_CSV_HEADER = "time,signal,value,quality";

const QUALITY_NAME = ["good", "uncertain", "bad"] as const;
/** RFC 3339 years are four digits: 0000-01-01T00:00:00.000Z .. 9999-12-31T23:59:59.999Z. */
const MIN_RFC3339_MS = -62_167_219_200_000;
const MAX_RFC3339_MS = 253_402_300_799_999;

export function rfc3339(tMs: number): string {
  if (tMs < MIN_RFC3339_MS || tMs > MAX_RFC3339_MS) {
    throw new RangeError(`exportCsv: expected times within years 0000-9999 (RFC 3339 has four-digit years), found ${tMs} ms`);
  }
  return new Date(tMs).toISOString();
}

/** RFC 4180 quoting when the field holds a comma, a quote, a line break or edge spaces. */
export function csvField(s: string): string {
  return /[",\r\n]|^\s|\s$/.test(s) ? `"${s.replaceAll('"', '""')}"` : s;
}

export function csvValue(v: number): string {
  return Object.is(v, -0) ? "-0" : String(v);
}

/** One signal's points in time order: its chunks, merged with its unsealed points. */
class SeriesCursor {
  private chunk: ChunkPoints | null = null;
  private ci = 0;
  private lastTLastMs = Number.NEGATIVE_INFINITY;
  private chunksDone = false;
  private ri = 0;
  /** The last time given out: a signal's lines strictly ascend, so none can come twice (a chunk rewritten by a seal meanwhile). */
  private lastT = Number.NEGATIVE_INFINITY;
  t = 0;
  v = 0;
  q = 0;

  constructor(
    readonly name: string,
    private readonly id: number,
    private readonly tables: Tables,
    private readonly fromMs: number,
    private readonly toMs: number,
    private readonly recent: { t: Float64Array; v: Float64Array; q: Uint8Array },
  ) {}

  /** Moves to the next point; false at the end. */
  advance(): boolean {
    while (this.ri < this.recent.t.length && (this.recent.t[this.ri] as number) <= this.lastT) this.ri++;
    const ct = this.peekChunkTime();
    const rt = this.ri < this.recent.t.length ? (this.recent.t[this.ri] as number) : Number.POSITIVE_INFINITY;
    if (ct === Number.POSITIVE_INFINITY && rt === Number.POSITIVE_INFINITY) return false;
    if (rt <= ct) {
      this.t = rt;
      this.v = this.recent.v[this.ri] as number;
      this.q = this.recent.q[this.ri] as number;
      this.ri++;
      if (rt === ct) this.ci++; // the unsealed point is the later write
    } else {
      const c = this.chunk as ChunkPoints;
      this.t = ct;
      this.v = c.values[this.ci] as number;
      this.q = c.quality[this.ci] as number;
      this.ci++;
    }
    this.lastT = this.t;
    return true;
  }

  private peekChunkTime(): number {
    for (;;) {
      if (this.chunk !== null) {
        const c = this.chunk.timesMs;
        while (this.ci < c.length && ((c[this.ci] as number) < this.fromMs || (c[this.ci] as number) <= this.lastT)) this.ci++;
        if (this.ci < this.chunk.timesMs.length) {
          const t = this.chunk.timesMs[this.ci] as number;
          return t <= this.toMs ? t : Number.POSITIVE_INFINITY;
        }
        this.chunk = null;
      }
      if (this.chunksDone) return Number.POSITIVE_INFINITY;
      const next = this.tables.nextChunk(this.id, this.lastTLastMs, this.fromMs, this.toMs);
      if (next === null) {
        this.chunksDone = true;
        return Number.POSITIVE_INFINITY;
      }
      this.lastTLastMs = next.tLastMs;
      this.chunk = next.points;
      this.ci = 0;
    }
  }
}

/** A min-heap of cursors by (time, signal id). */
function less(a: SeriesCursor, b: SeriesCursor): boolean {
  return a.t < b.t || (a.t === b.t && a.name < b.name);
}

export function* exportLines(
  tables: Tables,
  series: { name: string; id: number; recent: SeriesBuffer | undefined }[],
  fromMs: number,
  toMs: number,
): Generator<string, void, undefined> {
  yield EXPORT_CSV_HEADER;
  const heap: SeriesCursor[] = [];
  for (const s of series) {
    const r = s.recent;
    const a = r === undefined ? 0 : r.lowerBound(fromMs);
    const b = r === undefined ? 0 : r.upperBound(toMs);
    const snap = r === undefined || a >= b ? { t: new Float64Array(0), v: new Float64Array(0), q: new Uint8Array(0) } : { t: r.t.slice(a, b), v: r.v.slice(a, b), q: r.q.slice(a, b) };
    const c = new SeriesCursor(s.name, s.id, tables, fromMs, toMs, snap);
    if (c.advance()) push(heap, c);
  }
  const names = new Map(series.map((s) => [s.name, csvField(s.name)]));
  while (heap.length > 0) {
    const c = heap[0] as SeriesCursor;
    const missing = !Number.isFinite(c.v);
    yield `${rfc3339(c.t)},${names.get(c.name) as string},${missing ? "" : csvValue(c.v)},${missing ? "bad" : (QUALITY_NAME[c.q] ?? "bad")}`;
    if (c.advance()) siftDown(heap, 0);
    else {
      const last = heap.pop() as SeriesCursor;
      if (heap.length > 0) {
        heap[0] = last;
        siftDown(heap, 0);
      }
    }
  }
}

function push(heap: SeriesCursor[], c: SeriesCursor): void {
  heap.push(c);
  let i = heap.length - 1;
  while (i > 0) {
    const p = (i - 1) >> 1;
    if (!less(heap[i] as SeriesCursor, heap[p] as SeriesCursor)) break;
    [heap[i], heap[p]] = [heap[p] as SeriesCursor, heap[i] as SeriesCursor];
    i = p;
  }
}

function siftDown(heap: SeriesCursor[], i: number): void {
  for (;;) {
    const l = 2 * i + 1;
    const r = l + 1;
    let m = i;
    if (l < heap.length && less(heap[l] as SeriesCursor, heap[m] as SeriesCursor)) m = l;
    if (r < heap.length && less(heap[r] as SeriesCursor, heap[m] as SeriesCursor)) m = r;
    if (m === i) return;
    [heap[i], heap[m]] = [heap[m] as SeriesCursor, heap[i] as SeriesCursor];
    i = m;
  }
}
