// The Gorilla block codec against T. Pelkonen et al., "Gorilla: A Fast, Scalable, In-Memory
// Time Series Database", PVLDB 8(12), 2015, section 4.1: delta-of-delta timestamps in the
// buckets '0' / '10'+7 / '110'+9 / '1110'+12 / '1111'+32 bits, and XOR-coded values
// ('0' equal; '10' + bits in the previous window; '11' + 5 bits leading zeros + 6 bits length
// + meaningful bits). Round trips must be bit for bit for any 64-bit pattern (IEEE 754-2019
// binary64: −0, NaN payloads, ±Infinity, subnormals).
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { BitReader, BitWriter, decodeGorilla, encodeGorilla, GorillaInputError, MAX_DELTA_MS } from "../../src/store/gorilla.js";

/** A Float64Array holding exactly the given (hi, lo) bit patterns. */
function fromBits(pairs: readonly [number, number][]): Float64Array {
  const out = new Float64Array(pairs.length);
  const u = new Uint32Array(out.buffer);
  // Little-endian platforms (x86-64, arm64 here): the high half is the second word.
  pairs.forEach(([hi, lo], i) => {
    u[2 * i + 1] = hi;
    u[2 * i] = lo;
  });
  return out;
}

function bitsOf(values: Float64Array): number[] {
  return Array.from(new Uint32Array(values.buffer, values.byteOffset, values.length * 2));
}

/** Strictly increasing integer times with the given gaps. */
function timesFrom(start: number, gaps: readonly number[]): number[] {
  const out = [start];
  for (const g of gaps) out.push((out.at(-1) as number) + g);
  return out;
}

const u32 = fc.integer({ min: 0, max: 2 ** 32 - 1 });
const gap = fc.oneof(
  fc.constant(1000), // a regular 1 Hz signal
  fc.integer({ min: 990, max: 1010 }), // with jitter
  fc.integer({ min: 1, max: 100 }),
  fc.integer({ min: 1, max: MAX_DELTA_MS }),
);

describe("BitWriter / BitReader", () => {
  it("read back any sequence of fields of 1 to 32 bits", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(u32, fc.integer({ min: 1, max: 32 })), { maxLength: 200 }), (fields) => {
        const w = new BitWriter(4);
        for (const [v, n] of fields) w.write(v, n);
        const bytes = w.finish();
        const total = fields.reduce((s, [, n]) => s + n, 0);
        expect(bytes.length).toBe(Math.ceil(total / 8));
        const r = new BitReader(bytes);
        for (const [v, n] of fields) expect(r.read(n)).toBe(n === 32 ? v : v % 2 ** n);
        r.check("test stream");
      }),
    );
  });

  it("writes most significant bits first", () => {
    const w = new BitWriter();
    w.bit(1);
    w.write(0b01, 2);
    w.write(0x1f, 5);
    w.write(0xabc, 12);
    expect([...w.finish()]).toEqual([0b1011_1111, 0xab, 0xc0]);
  });

  it("says when a stream was too short for what was read", () => {
    const r = new BitReader(Uint8Array.from([0xff]));
    r.read(8);
    r.check("a one-byte stream");
    r.bit();
    expect(() => r.check("a one-byte stream")).toThrow("a one-byte stream: the stream ends after 8 bits, 9 were needed (truncated or damaged)");
  });
});

describe("Gorilla block", () => {
  it("decodes to exactly the points that went in, for any bit patterns and increasing times", () => {
    fc.assert(
      fc.property(fc.integer({ min: -(2 ** 52), max: 2 ** 52 }), fc.array(fc.tuple(gap, u32, u32), { maxLength: 300 }), fc.tuple(u32, u32), (start, rest, first) => {
        const times = timesFrom(start, rest.map(([g]) => g));
        const values = fromBits([first, ...rest.map(([, hi, lo]) => [hi, lo] as [number, number])]);
        const block = encodeGorilla(times, values);
        const back = decodeGorilla(block, times.length);
        expect(Array.from(back.timesMs)).toEqual(times);
        expect(bitsOf(back.values)).toEqual(bitsOf(values));
      }),
      { numRuns: 300 },
    );
  });

  it("keeps −0, +0, NaN payloads, ±Infinity, subnormals and the extremes bit for bit", () => {
    // IEEE 754 binary64 patterns (hi, lo).
    const special: [number, number][] = [
      [0x80000000, 0], // −0
      [0, 0], // +0
      [0x7ff80000, 0], // the canonical quiet NaN
      [0x7ff00000, 1], // a signalling NaN, payload 1
      [0xfff80000, 0xdeadbeef], // a negative quiet NaN with a payload
      [0x7ff00000, 0], // +Infinity
      [0xfff00000, 0], // −Infinity
      [0, 1], // 5e-324, the smallest subnormal
      [0x000fffff, 0xffffffff], // the largest subnormal
      [0x00100000, 0], // 2.2250738585072014e-308, the smallest normal
      [0x7fefffff, 0xffffffff], // Number.MAX_VALUE
      [0xffefffff, 0xffffffff], // −Number.MAX_VALUE
      [0x3ff00000, 1], // 1 + 2^-52 (Number.EPSILON apart from 1)
    ];
    const values = fromBits([...special, ...special.slice().reverse(), ...special]);
    const times = timesFrom(-8.64e15, Array.from({ length: values.length - 1 }, (_, i) => (i % 3 === 0 ? MAX_DELTA_MS : 1 + i)));
    const back = decodeGorilla(encodeGorilla(times, values), values.length);
    expect(bitsOf(back.values)).toEqual(bitsOf(values));
    expect(Object.is(back.values[0], -0)).toBe(true);
    expect(Array.from(back.timesMs)).toEqual(times);
    // The extremes of the Date range (±8.64e15 ms, ECMA-262 §21.4.1.1) as first timestamps.
    for (const t0 of [-8.64e15, 8.64e15 - 2000]) {
      expect(Array.from(decodeGorilla(encodeGorilla([t0, t0 + 1000, t0 + 2000], new Float64Array(3)), 3).timesMs)).toEqual([t0, t0 + 1000, t0 + 2000]);
    }
  });

  it("writes the bits the paper's rules give for a small block", () => {
    // Hand-derived from section 4.1 of the paper (not from the code): four points a minute
    // apart (the last one a millisecond late) with values 12, 12, 24, 25, 24.
    const T = Date.UTC(2015, 2, 24, 2, 1, 2); // the paper's example day, from memory
    const times = [T, T + 60_000, T + 120_000, T + 180_001, T + 240_001];
    const values = Float64Array.from([12, 12, 24, 25, 24]);
    const b = (v: number, n: number): string => v.toString(2).padStart(n, "0");
    const hi = Math.floor(T / 2 ** 32);
    const expected = [
      b(hi, 32) + b(T - hi * 2 ** 32, 32), // first time, 64 bits
      b(0x40280000, 32) + b(0, 32), // 12.0 = 0x4028000000000000
      // point 1: Δ = 60000, D = 60000 − 0 beyond ±2048: '1111' + 32 bits of D + 2^31 − 1
      "1111" + b(60_000 + 2 ** 31 - 1, 32),
      "0", // 12 XOR 12 = 0
      // point 2: D = 0
      "0",
      // 24.0 = 0x4038000000000000; XOR 0x0010000000000000: 11 leading zeros, 52 trailing,
      // 1 meaningful bit; no window yet: '11' + 01011 + 000001 + '1'
      "11" + b(11, 5) + b(1, 6) + "1",
      // point 3: Δ = 60001, D = 1: '10' + 7 bits of 1 + 63
      "10" + b(64, 7),
      // 25.0 = 0x4039000000000000; XOR with 24: 0x0001000000000000: 15 leading, 48 trailing;
      // fewer trailing zeros than the window (52): a new window
      "11" + b(15, 5) + b(1, 6) + "1",
      // point 4: Δ = 60000, D = −1: '10' + 7 bits of −1 + 63
      "10" + b(62, 7),
      // 24 again: the same XOR, inside the window (15, 48): '10' + its 1 bit
      "10" + "1",
    ].join("");
    const block = encodeGorilla(times, values);
    const got = Array.from(block, (x) => b(x, 8)).join("");
    expect(got.slice(0, expected.length)).toBe(expected);
    expect(got.length).toBe(Math.ceil(expected.length / 8) * 8);
    expect(got.slice(expected.length)).toMatch(/^0*$/);
  });

  it("spends 2 bits per point on a constant value at a constant rate", () => {
    // Paper, 4.1.1 and 4.1.2: D = 0 is '0', an unchanged value is '0'. The second point costs
    // 16 + 1 bits: its delta (1000 ms) is coded against 0, in the 12-bit bucket.
    const n = 1000;
    const times = timesFrom(1_700_000_000_000, Array.from({ length: n - 1 }, () => 1000));
    const block = encodeGorilla(times, new Float64Array(n).fill(92.5));
    expect(block.length).toBe(Math.ceil((128 + 17 + 2 * (n - 2)) / 8));
  });

  it("rejects times that are not increasing integers with gaps of at most 2^31 − 1 ms", () => {
    const v = new Float64Array(2);
    expect(() => encodeGorilla([1000, 1000], v)).toThrow(GorillaInputError);
    expect(() => encodeGorilla([1000, 1000], v)).toThrow("expected strictly increasing timestamps, found 1000 then 1000 at index 1");
    expect(() => encodeGorilla([0, MAX_DELTA_MS + 1], v)).toThrow(`expected gaps of at most ${MAX_DELTA_MS} ms, found ${MAX_DELTA_MS + 1} ms before index 1`);
    expect(() => encodeGorilla([0.5, 2], v)).toThrow("expected timestamp 0 to be an integer number of ms within ±2^53, found 0.5");
    expect(() => encodeGorilla([0, 1], new Float64Array(3))).toThrow("expected as many values as timestamps, found 3 values and 2 timestamps");
  });

  it("refuses a truncated block", () => {
    const times = timesFrom(0, [1000, 1000, 7]);
    const block = encodeGorilla(times, Float64Array.from([1.5, 2.25, -7.125, 1e300]));
    expect(() => decodeGorilla(block.subarray(0, block.length - 4), 4)).toThrow(/Gorilla block: the stream ends after \d+ bits/);
  });
});
