// The Gorilla encoding of a time series block: delta-of-delta timestamps and XOR-coded
// floats, after T. Pelkonen et al., "Gorilla: A Fast, Scalable, In-Memory Time Series
// Database", PVLDB 8(12), 2015, section 4.1. Pure: no I/O.
//
// Each point is written as its timestamp, then its value, into one bit stream (most
// significant bit first):
//
//   timestamps (ms)  the first one whole, as 64-bit two's complement; then D = (t[i] − t[i−1])
//                    − (t[i−1] − t[i−2]), with t[−1] − t[−2] taken as 0:
//                      D = 0                '0'
//                      D in [−63, 64]       '10'   + 7 bits
//                      D in [−255, 256]     '110'  + 9 bits
//                      D in [−2047, 2048]   '1110' + 12 bits
//                      otherwise            '1111' + 32 bits
//                    a field of w bits holds D + 2^(w−1) − 1 (so each range fills it exactly).
//   values (binary64) the first one whole (64 bits); then X = bits(v[i]) XOR bits(v[i−1]):
//                      X = 0                '0'
//                      X fits inside the previous window of meaningful bits (at least as
//                      many leading and trailing zeros): '10' + the window's bits of X
//                      otherwise            '11' + 5 bits leading zeros (at most 31)
//                                                 + 6 bits length of the meaningful bits (64 as 0)
//                                                 + the meaningful bits
//
// Differences from the paper, because the paper's blocks are 2-hour windows of seconds and
// ours are chunks of milliseconds not aligned to anything: the first timestamp is stored
// whole instead of as a 14-bit offset from an aligned block start, and the first delta is
// coded as a delta-of-delta against 0. The 32-bit case then needs every delta to be below
// 2^31 ms (about 24.8 days): the caller starts a new block at a longer gap (MAX_DELTA_MS).
//
// Every 64-bit pattern round-trips bit for bit: −0, NaN payloads, ±Infinity, subnormals.
// Timestamps must be integers, strictly increasing, within ±2^53.

/** The largest gap between two consecutive timestamps of one block. */
export const MAX_DELTA_MS = 2 ** 31 - 1;

const TWO_32 = 2 ** 32;

// ---- bits ----

/** Appends bits, most significant first, to a growing buffer of 32-bit words. */
export class BitWriter {
  private words: Uint32Array;
  private len = 0;
  /** Bits of the word being filled, left-aligned. */
  private acc = 0;
  private used = 0;

  constructor(initialBytes = 256) {
    this.words = new Uint32Array(Math.max(4, Math.ceil(initialBytes / 4)));
  }

  /** Writes the low `n` bits of `value` (0 ≤ n ≤ 32), the highest of them first. */
  write(value: number, n: number): void {
    if (n === 0) return;
    const v = n === 32 ? value >>> 0 : value & ((1 << n) - 1);
    const free = 32 - this.used;
    if (n < free) {
      this.acc |= v << (free - n);
      this.used += n;
      return;
    }
    // Fill the word, then start the next with what is left (n − free bits, 0..31).
    const rest = n - free;
    this.pushWord((this.acc | (v >>> rest)) >>> 0);
    this.used = rest;
    this.acc = rest === 0 ? 0 : v << (32 - rest);
  }

  /** Writes an integer with |v| ≤ 2^53 as 64-bit two's complement. */
  int64(v: number): void {
    const hi = Math.floor(v / TWO_32);
    this.write(hi >>> 0, 32);
    this.write(v - hi * TWO_32, 32);
  }

  /**
   * Gorilla's variable-length code of a delta-of-delta, for an integer d in [−(2^31 − 1), 2^31]:
   * '0' for 0, '10' + 7 bits, '110' + 9 bits, '1110' + 12 bits, '1111' + 32 bits; a field
   * of w bits holds d + 2^(w−1) − 1.
   */
  dod(d: number): void {
    if (d === 0) this.bit(0);
    else if (d >= -63 && d <= 64) this.write((0b10 << 7) | (d + 63), 9);
    else if (d >= -255 && d <= 256) this.write((0b110 << 9) | (d + 255), 12);
    else if (d >= -2047 && d <= 2048) this.write((0b1110 << 12) | (d + 2047), 16);
    else {
      this.write(0b1111, 4);
      this.write(d + (2 ** 31 - 1), 32);
    }
  }

  /** Writes one bit: the common case, kept short. */
  bit(b: 0 | 1): void {
    if (b) this.acc |= 0x80000000 >>> this.used;
    if (++this.used === 32) {
      this.pushWord(this.acc >>> 0);
      this.acc = 0;
      this.used = 0;
    }
  }

  /** Bits written so far. */
  get bitLength(): number {
    return this.len * 32 + this.used;
  }

  /** The bytes written, the last one padded with zero bits. */
  finish(): Uint8Array {
    const out = new Uint8Array(Math.ceil(this.bitLength / 8));
    let j = 0;
    for (let i = 0; i < this.len; i++) {
      const w = this.words[i] as number;
      out[j++] = w >>> 24;
      out[j++] = (w >>> 16) & 0xff;
      out[j++] = (w >>> 8) & 0xff;
      out[j++] = w & 0xff;
    }
    for (let k = 0; j < out.length; k++) out[j++] = (this.acc >>> (24 - 8 * k)) & 0xff;
    return out;
  }

  private pushWord(w: number): void {
    if (this.len === this.words.length) {
      const next = new Uint32Array(this.words.length * 2);
      next.set(this.words);
      this.words = next;
    }
    this.words[this.len++] = w;
  }
}

/**
 * Reads what BitWriter wrote, from 32-bit words. Reads past the end see zero bits;
 * `check()` after decoding says whether the stream was long enough.
 */
export class BitReader {
  private readonly words: Uint32Array;
  private pos: number;
  private readonly endBits: number;

  constructor(bytes: Uint8Array, startByte = 0) {
    const n = bytes.length - startByte;
    this.endBits = Math.max(0, n) * 8;
    // Two words of zero padding: a read of up to 32 bits never needs a bounds check.
    const words = new Uint32Array((n >>> 2) + 3);
    let i = startByte;
    let k = 0;
    for (; i + 3 < bytes.length; i += 4) {
      words[k++] = (((bytes[i] as number) << 24) | ((bytes[i + 1] as number) << 16) | ((bytes[i + 2] as number) << 8) | (bytes[i + 3] as number)) >>> 0;
    }
    if (i < bytes.length) {
      let w = 0;
      for (let s = 24; i < bytes.length; i++, s -= 8) w |= (bytes[i] as number) << s;
      words[k] = w >>> 0;
    }
    this.words = words;
    this.pos = 0;
  }

  /** Reads `n` bits (1 ≤ n ≤ 32) as an unsigned number. */
  read(n: number): number {
    const w = this.pos >>> 5;
    const o = this.pos & 31;
    this.pos += n;
    const first = (this.words[w] as number) << o;
    if (o + n <= 32) return first >>> (32 - n);
    return ((first >>> (32 - n)) | ((this.words[w + 1] as number) >>> (64 - o - n))) >>> 0;
  }

  /** The next `n` bits (1 ≤ n ≤ 32) without consuming them. */
  peek(n: number): number {
    const v = this.read(n);
    this.pos -= n;
    return v;
  }

  skip(n: number): void {
    this.pos += n;
  }

  int64(): number {
    const hi = this.read(32) | 0;
    return hi * TWO_32 + this.read(32);
  }

  /** Reads what BitWriter.dod wrote. */
  dod(): number {
    // One look at the 4-bit prefix instead of a read per control bit.
    const p = this.peek(4);
    if (p < 0b1000) {
      this.pos += 1;
      return 0;
    }
    if (p < 0b1100) return this.read(9) - (0b10 << 7) - 63;
    if (p < 0b1110) return this.read(12) - (0b110 << 9) - 255;
    this.pos += 4;
    if (p === 0b1110) return this.read(12) - 2047;
    return this.read(32) - (2 ** 31 - 1);
  }

  bit(): 0 | 1 {
    const p = this.pos++;
    return (((this.words[p >>> 5] as number) >>> (31 - (p & 31))) & 1) as 0 | 1;
  }

  /** Bits read so far. */
  get bitPosition(): number {
    return this.pos;
  }

  /** Throws when more bits were read than the stream holds (a truncated or damaged block). */
  check(what: string): void {
    if (this.pos > this.endBits) throw new RangeError(`${what}: the stream ends after ${this.endBits} bits, ${this.pos} were needed (truncated or damaged)`);
  }
}

// ---- binary64 as two 32-bit halves ----

// Index of the high half of a binary64 in a Uint32Array view, in the platform's byte order.
const HI = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1 ? 1 : 0;
const LO = 1 - HI;

function ctz32(x: number): number {
  // x ≠ 0: the lowest set bit isolated, then its position.
  return 31 - Math.clz32(x & -x);
}

// ---- the block ----

/** Why the points cannot form one block: the index and the rule broken. */
export class GorillaInputError extends Error {
  constructor(message: string) {
    super(message);
    this.name = "GorillaInputError";
  }
}

function checkTimes(timesMs: ArrayLike<number>): void {
  for (let i = 0; i < timesMs.length; i++) {
    const t = timesMs[i] as number;
    if (!Number.isSafeInteger(t)) throw new GorillaInputError(`Gorilla block: expected timestamp ${i} to be an integer number of ms within ±2^53, found ${t}`);
    if (i > 0) {
      const d = t - (timesMs[i - 1] as number);
      if (d <= 0) throw new GorillaInputError(`Gorilla block: expected strictly increasing timestamps, found ${timesMs[i - 1]} then ${t} at index ${i}`);
      if (d > MAX_DELTA_MS) throw new GorillaInputError(`Gorilla block: expected gaps of at most ${MAX_DELTA_MS} ms, found ${d} ms before index ${i} (start a new block)`);
    }
  }
}

/**
 * Encodes points into a Gorilla stream appended to `w` (the caller may have written a
 * header before). timesMs and values must have the same length.
 */
export function writeGorilla(w: BitWriter, timesMs: ArrayLike<number>, values: Float64Array): void {
  const n = timesMs.length;
  if (values.length !== n) throw new GorillaInputError(`Gorilla block: expected as many values as timestamps, found ${values.length} values and ${n} timestamps`);
  checkTimes(timesMs);
  if (n === 0) return;
  // The values' bits are read through a 32-bit view, never as JS numbers, so that even a
  // NaN's payload is kept (an engine may change a NaN's bits when it passes through a number).
  const bits = new Uint32Array(values.buffer, values.byteOffset, n * 2);

  let prevT = timesMs[0] as number;
  let prevDelta = 0;
  let prevHi = bits[HI] as number;
  let prevLo = bits[LO] as number;
  w.int64(prevT);
  w.write(prevHi, 32);
  w.write(prevLo, 32);
  // The previous window of meaningful bits; none yet.
  let winLead = -1;
  let winTrail = 0;

  for (let i = 1; i < n; i++) {
    const t = timesMs[i] as number;
    const delta = t - prevT;
    w.dod(delta - prevDelta);
    prevDelta = delta;
    prevT = t;

    const hi = bits[2 * i + HI] as number;
    const lo = bits[2 * i + LO] as number;
    const xh = (hi ^ prevHi) >>> 0;
    const xl = (lo ^ prevLo) >>> 0;
    prevHi = hi;
    prevLo = lo;
    if (xh === 0 && xl === 0) {
      w.bit(0);
      continue;
    }
    w.bit(1);
    let lead = xh !== 0 ? Math.clz32(xh) : 32 + Math.clz32(xl);
    const trail = xl !== 0 ? ctz32(xl) : 32 + ctz32(xh);
    if (winLead >= 0 && lead >= winLead && trail >= winTrail) {
      w.bit(0);
      writeMeaningful(w, xh, xl, winTrail, 64 - winLead - winTrail);
    } else {
      if (lead > 31) lead = 31; // 5 bits: the extra zeros travel as meaningful bits
      const len = 64 - lead - trail;
      w.bit(1);
      w.write(lead, 5);
      w.write(len & 63, 6); // 64 is written as 0
      writeMeaningful(w, xh, xl, trail, len);
      winLead = lead;
      winTrail = trail;
    }
  }
}

/** Writes bits trail .. trail+len−1 of the 64-bit value (xh:xl), the highest first. */
function writeMeaningful(w: BitWriter, xh: number, xl: number, trail: number, len: number): void {
  // Shift right by `trail` into (sh:sl).
  let sh: number;
  let sl: number;
  if (trail === 0) {
    sh = xh;
    sl = xl;
  } else if (trail < 32) {
    sl = ((xl >>> trail) | (xh << (32 - trail))) >>> 0;
    sh = xh >>> trail;
  } else {
    sl = xh >>> (trail - 32);
    sh = 0;
  }
  if (len > 32) {
    w.write(sh, len - 32);
    w.write(sl, 32);
  } else w.write(sl, len);
}

/** Reads `n` points written by writeGorilla into the given arrays (from index 0). */
export function readGorilla(r: BitReader, n: number, timesMs: Float64Array | number[], values: Float64Array): void {
  if (n === 0) return;
  if (values.length < n) throw new RangeError(`Gorilla block: expected room for ${n} values, found ${values.length}`);
  const bits = new Uint32Array(values.buffer, values.byteOffset, n * 2);
  let t = r.int64();
  let delta = 0;
  let hi = r.read(32);
  let lo = r.read(32);
  bits[HI] = hi;
  bits[LO] = lo;
  timesMs[0] = t;
  let winLead = 0;
  let winTrail = 0;
  for (let i = 1; i < n; i++) {
    delta += r.dod();
    t += delta;
    timesMs[i] = t;
    if (r.bit() === 1) {
      let len: number;
      if (r.bit() === 0) {
        len = 64 - winLead - winTrail;
      } else {
        winLead = r.read(5);
        len = r.read(6) || 64;
        winTrail = 64 - winLead - len;
        if (winTrail < 0) throw new RangeError(`Gorilla block: damaged value window at point ${i} (leading ${winLead} + length ${len} > 64)`);
      }
      // The meaningful bits, shifted back left by winTrail, XORed into (hi:lo).
      let mh: number;
      let ml: number;
      if (len > 32) {
        mh = r.read(len - 32);
        ml = r.read(32);
      } else {
        mh = 0;
        ml = r.read(len);
      }
      const tr = winTrail;
      let xh: number;
      let xl: number;
      if (tr === 0) {
        xh = mh;
        xl = ml;
      } else if (tr < 32) {
        xh = ((mh << tr) | (ml >>> (32 - tr))) >>> 0;
        xl = (ml << tr) >>> 0;
      } else {
        xh = (ml << (tr - 32)) >>> 0;
        xl = 0;
      }
      hi = (hi ^ xh) >>> 0;
      lo = (lo ^ xl) >>> 0;
    }
    bits[2 * i + HI] = hi;
    bits[2 * i + LO] = lo;
  }
  r.check("Gorilla block");
}

/** One block as bytes: the points only (the caller keeps the count). */
export function encodeGorilla(timesMs: ArrayLike<number>, values: Float64Array): Uint8Array {
  const w = new BitWriter(16 + timesMs.length * 4);
  writeGorilla(w, timesMs, values);
  return w.finish();
}

export function decodeGorilla(bytes: Uint8Array, n: number): { timesMs: Float64Array; values: Float64Array } {
  const timesMs = new Float64Array(n);
  const values = new Float64Array(n);
  readGorilla(new BitReader(bytes), n, timesMs, values);
  return { timesMs, values };
}
