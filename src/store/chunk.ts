// A sealed chunk: the points of one series over a stretch of time, compressed. Pure: no I/O.
//
//   chunks(series_id, t_first_ms, t_last_ms, n, data BLOB, quality BLOB)
//
// data, byte 0 = format:
//   1  Gorilla (gorilla.ts): delta-of-delta timestamps and XOR-coded binary64 values.
//   2  Gorilla timestamps; values as decimal integers. When every value v of the chunk is
//      m / 10^d for an integer m and one d in 0..15 (bit for bit: the values a transmitter
//      reports with a fixed number of decimals are of this kind), byte 1 holds d, then come
//      the runs of missing values (varint count, then start and length of each), then the
//      bit stream: per point its timestamp as in format 1 and, for a point with a value,
//      the first m whole (64 bits) or the difference from the previous m in Gorilla's
//      timestamp code ('0', '10'+7, '110'+9, '1110'+12, '1111'+32 bits). Turning decimal
//      values into integers is the idea of ALP (A. Afroozeh, L. X. Kuffó, P. Boncz, "ALP:
//      Adaptive Lossless floating-Point Compression", SIGMOD 2023); Gorilla's XOR code spends
//      about 6 B on each value of a noisy reading with two decimals, this about 1 B.
//   The encoder writes both when format 2 applies and keeps the smaller.
// quality: NULL when every point has code 0 (good, or "ok" for derived values); else the
//   runs of other codes: varint count, then (start index, length, code) as varints.
//
// Values: a missing value is NaN in the arrays here (the historian's null). Both formats
// give back exactly the bits that went in, −0 and NaN payloads included (format 2 is used
// only when every NaN is the canonical one, 0x7FF8000000000000).
import { BitReader, BitWriter, MAX_DELTA_MS, readGorilla, writeGorilla } from "./gorilla.js";

export const FORMAT_GORILLA = 1;
export const FORMAT_DECIMAL = 2;

export interface ChunkPoints {
  /** Integer ms, strictly increasing, consecutive gaps ≤ MAX_DELTA_MS. */
  timesMs: Float64Array;
  /** NaN for a missing value. */
  values: Float64Array;
  /** 0 good; other codes as the series kind defines them. */
  quality: Uint8Array;
}

export interface EncodedChunk {
  data: Uint8Array;
  quality: Uint8Array | null;
}

export { MAX_DELTA_MS };

// ---- varints (unsigned LEB128) ----

export function writeVarint(out: number[], v: number): void {
  while (v >= 0x80) {
    out.push((v % 0x80) | 0x80);
    v = Math.floor(v / 0x80);
  }
  out.push(v);
}

export class ByteReader {
  pos: number;
  constructor(
    private readonly bytes: Uint8Array,
    start = 0,
  ) {
    this.pos = start;
  }
  byte(): number {
    if (this.pos >= this.bytes.length) throw new RangeError(`chunk: read past the end of ${this.bytes.length} bytes`);
    return this.bytes[this.pos++] as number;
  }
  varint(): number {
    let v = 0;
    let mul = 1;
    for (;;) {
      const b = this.byte();
      v += (b & 0x7f) * mul;
      if (b < 0x80) return v;
      mul *= 0x80;
      if (mul > 2 ** 56) throw new RangeError("chunk: varint too long");
    }
  }
}

// ---- binary64 bits ----

const HI = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1 ? 1 : 0;
const LO = 1 - HI;
const CANONICAL_NAN_HI = 0x7ff80000;

// ---- format 2: decimal integers ----

const MAX_DECIMALS = 15;
/** |m| stays below this so that m and the differences used are exact. */
const MAX_MANTISSA = 2 ** 52;

/**
 * The smallest d for which every present value is m / 10^d with an integer m (and the
 * differences fit the 32-bit case), or -1.
 */
export function decimalsOf(values: Float64Array): number {
  const bits = new Uint32Array(values.buffer, values.byteOffset, values.length * 2);
  let d = 0;
  let scale = 1;
  let prevM: number | null = null;
  for (let i = 0; i < values.length; ) {
    const v = values[i] as number;
    if (Number.isNaN(v)) {
      if (bits[2 * i + HI] !== CANONICAL_NAN_HI || bits[2 * i + LO] !== 0) return -1;
      i++;
      continue;
    }
    // −0 would come back as +0; ±Infinity has no decimal form.
    if (!Number.isFinite(v) || Object.is(v, -0)) return -1;
    const m = Math.round(v * scale);
    if (Math.abs(m) < MAX_MANTISSA && m / scale === v && (prevM === null || Math.abs(m - prevM) < 2 ** 31 - 1)) {
      prevM = m;
      i++;
      continue;
    }
    // Not at this d (or the step is too large for it): try more decimals from the start.
    if (++d > MAX_DECIMALS) return -1;
    scale = 10 ** d;
    prevM = null;
    i = 0;
  }
  return d;
}

function encodeDecimal(p: ChunkPoints, decimals: number): Uint8Array {
  const { timesMs, values } = p;
  const n = timesMs.length;
  const head: number[] = [FORMAT_DECIMAL, decimals];
  const runs: number[] = [];
  for (let i = 0; i < n; ) {
    if (!Number.isNaN(values[i] as number)) {
      i++;
      continue;
    }
    let j = i;
    while (j < n && Number.isNaN(values[j] as number)) j++;
    runs.push(i, j - i);
    i = j;
  }
  writeVarint(head, runs.length / 2);
  for (const x of runs) writeVarint(head, x);

  const w = new BitWriter(head.length + n * 2);
  for (const b of head) w.write(b, 8);
  const scale = 10 ** decimals;
  let prevT = 0;
  let prevDelta = 0;
  let prevM: number | null = null;
  for (let i = 0; i < n; i++) {
    const t = timesMs[i] as number;
    if (i === 0) w.int64(t);
    else {
      const delta = t - prevT;
      w.dod(delta - prevDelta);
      prevDelta = delta;
    }
    prevT = t;
    const v = values[i] as number;
    if (Number.isNaN(v)) continue;
    const m = Math.round(v * scale);
    if (prevM === null) w.int64(m);
    else w.dod(m - prevM);
    prevM = m;
  }
  return w.finish();
}

function decodeDecimal(data: Uint8Array, n: number, timesMs: Float64Array, values: Float64Array): void {
  const br = new ByteReader(data, 1);
  const decimals = br.byte();
  if (decimals > MAX_DECIMALS) throw new RangeError(`chunk: format 2 with ${decimals} decimals (at most ${MAX_DECIMALS})`);
  const runCount = br.varint();
  const missing = new Uint8Array(n);
  for (let k = 0; k < runCount; k++) {
    const start = br.varint();
    const len = br.varint();
    if (start + len > n) throw new RangeError(`chunk: missing-value run ${start}+${len} beyond ${n} points`);
    missing.fill(1, start, start + len);
  }
  const r = new BitReader(data, br.pos);
  const scale = 10 ** decimals;
  let t = 0;
  let delta = 0;
  let m = 0;
  let first = true;
  for (let i = 0; i < n; i++) {
    if (i === 0) t = r.int64();
    else {
      delta += r.dod();
      t += delta;
    }
    timesMs[i] = t;
    if (missing[i] === 1) {
      values[i] = Number.NaN;
      continue;
    }
    if (first) {
      m = r.int64();
      first = false;
    } else m += r.dod();
    values[i] = m / scale;
  }
  r.check("chunk (format 2)");
}

// ---- quality runs ----

export function encodeQualityRuns(quality: Uint8Array): Uint8Array | null {
  const runs: number[] = [];
  let count = 0;
  for (let i = 0; i < quality.length; ) {
    const q = quality[i] as number;
    let j = i + 1;
    while (j < quality.length && quality[j] === q) j++;
    if (q !== 0) {
      writeVarint(runs, i);
      writeVarint(runs, j - i);
      writeVarint(runs, q);
      count++;
    }
    i = j;
  }
  if (count === 0) return null;
  const out: number[] = [];
  writeVarint(out, count);
  return Uint8Array.from([...out, ...runs]);
}

export function decodeQualityRuns(blob: Uint8Array | null, n: number, out: Uint8Array = new Uint8Array(n)): Uint8Array {
  out.fill(0, 0, n);
  if (blob === null || blob.length === 0) return out;
  const br = new ByteReader(blob);
  const count = br.varint();
  for (let k = 0; k < count; k++) {
    const start = br.varint();
    const len = br.varint();
    const code = br.varint();
    if (start + len > n || code > 255) throw new RangeError(`chunk: quality run ${start}+${len} (code ${code}) does not fit ${n} points`);
    out.fill(code, start, start + len);
  }
  return out;
}

// ---- the chunk ----

export function encodeChunk(p: ChunkPoints): EncodedChunk {
  const n = p.timesMs.length;
  if (p.values.length !== n || p.quality.length !== n) {
    throw new RangeError(`chunk: expected as many values and quality codes as times (${n}), found ${p.values.length} and ${p.quality.length}`);
  }
  const w = new BitWriter(16 + n * 4);
  w.write(FORMAT_GORILLA, 8);
  writeGorilla(w, p.timesMs, p.values);
  let data = w.finish();
  const d = decimalsOf(p.values);
  if (d >= 0) {
    const dec = encodeDecimal(p, d);
    if (dec.length < data.length) data = dec;
  }
  return { data, quality: encodeQualityRuns(p.quality) };
}

export function decodeChunk(data: Uint8Array, quality: Uint8Array | null, n: number): ChunkPoints {
  const timesMs = new Float64Array(n);
  const values = new Float64Array(n);
  if (n > 0) {
    const format = data[0];
    if (format === FORMAT_GORILLA) readGorilla(new BitReader(data, 1), n, timesMs, values);
    else if (format === FORMAT_DECIMAL) decodeDecimal(data, n, timesMs, values);
    else throw new RangeError(`chunk: unknown format ${String(format)} (expected ${FORMAT_GORILLA} or ${FORMAT_DECIMAL})`);
  }
  return { timesMs, values, quality: decodeQualityRuns(quality, n) };
}

// ---- cutting a series into chunks ----

/** Points per chunk at most: a read decodes whole chunks, so they stay small. */
export const CHUNK_MAX_POINTS = 4096;
/** Time one chunk may span at most; range reads rely on it (t_last − t_first ≤ this). */
export const CHUNK_MAX_SPAN_MS = 3_600_000;

export interface ChunkRow extends EncodedChunk {
  tFirstMs: number;
  tLastMs: number;
  n: number;
}

/**
 * Cuts points [from, to) (strictly increasing times) into chunks of at most CHUNK_MAX_POINTS
 * points spanning at most CHUNK_MAX_SPAN_MS, cut at a minute boundary where one is at hand,
 * so that a minute's points stay in one chunk (retention then removes whole minutes).
 */
export function buildChunks(p: ChunkPoints, from: number, to: number): ChunkRow[] {
  const out: ChunkRow[] = [];
  let start = from;
  while (start < to) {
    const t0 = p.timesMs[start] as number;
    let end = start + 1;
    // The first index (after start) where a new minute begins, latest seen.
    let lastMinuteCut = -1;
    while (end < to && end - start < CHUNK_MAX_POINTS && (p.timesMs[end] as number) - t0 <= CHUNK_MAX_SPAN_MS) {
      if (minuteOf(p.timesMs[end] as number) !== minuteOf(p.timesMs[end - 1] as number)) lastMinuteCut = end;
      end++;
    }
    if (end < to && lastMinuteCut > start && minuteOf(p.timesMs[end] as number) === minuteOf(p.timesMs[end - 1] as number)) {
      // Cut by a limit inside a minute: go back to the last minute boundary.
      end = lastMinuteCut;
    }
    const sub: ChunkPoints = { timesMs: p.timesMs.subarray(start, end), values: p.values.subarray(start, end), quality: p.quality.subarray(start, end) };
    const enc = encodeChunk(sub);
    out.push({ tFirstMs: t0, tLastMs: p.timesMs[end - 1] as number, n: end - start, data: enc.data, quality: enc.quality });
    start = end;
  }
  return out;
}

// ---- 1-minute roll-ups ----

export const MINUTE_MS = 60_000;

export interface MinuteRollup {
  tMinuteMs: number;
  /** Over the usable values of the minute; null when it has none. */
  min: number | null;
  max: number | null;
  /** Summed in time order. */
  sum: number | null;
  count: number;
  last: number | null;
  /** The worst quality code of any point of the minute, usable or not. */
  quality: number;
}

export const minuteOf = (tMs: number): number => Math.floor(tMs / MINUTE_MS) * MINUTE_MS;

/**
 * Roll-ups of the minutes that points [from, to) touch, which must hold every point of those
 * minutes, in time order. A value is usable when present and its code is below `badCode`.
 */
export function rollupMinutes(p: ChunkPoints, from: number, to: number, badCode: number): MinuteRollup[] {
  const out: MinuteRollup[] = [];
  let cur: MinuteRollup | null = null;
  for (let i = from; i < to; i++) {
    const m = minuteOf(p.timesMs[i] as number);
    if (cur === null || cur.tMinuteMs !== m) {
      cur = { tMinuteMs: m, min: null, max: null, sum: null, count: 0, last: null, quality: 0 };
      out.push(cur);
    }
    const q = p.quality[i] as number;
    if (q > cur.quality) cur.quality = q;
    const v = p.values[i] as number;
    if (Number.isNaN(v) || q >= badCode) continue;
    cur.min = cur.min === null || v < cur.min ? v : cur.min;
    cur.max = cur.max === null || v > cur.max ? v : cur.max;
    cur.sum = cur.sum === null ? v : cur.sum + v;
    cur.count++;
    cur.last = v;
  }
  return out;
}
