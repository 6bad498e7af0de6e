// Sealed chunks (src/store/chunk.ts): both value formats round-trip bit for bit; the decimal
// format is chosen for values reported with a fixed number of decimals; the quality runs; the
// cutting of a series into chunks; the 1-minute roll-ups against a straightforward computation.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import {
  buildChunks,
  CHUNK_MAX_POINTS,
  CHUNK_MAX_SPAN_MS,
  decimalsOf,
  decodeChunk,
  decodeQualityRuns,
  encodeChunk,
  encodeQualityRuns,
  FORMAT_DECIMAL,
  FORMAT_GORILLA,
  minuteOf,
  rollupMinutes,
  type ChunkPoints,
} from "../../src/store/chunk.js";

const T0 = Date.UTC(2025, 2, 4, 5, 0, 0);

function points(times: readonly number[], values: readonly number[] | Float64Array, quality?: readonly number[]): ChunkPoints {
  return {
    timesMs: Float64Array.from(times),
    values: values instanceof Float64Array ? values : Float64Array.from(values),
    quality: Uint8Array.from(quality ?? times.map(() => 0)),
  };
}

function bits(v: Float64Array): number[] {
  return Array.from(new Uint32Array(v.buffer, v.byteOffset, v.length * 2));
}

function roundTrip(p: ChunkPoints): ChunkPoints & { format: number } {
  const enc = encodeChunk(p);
  const back = decodeChunk(enc.data, enc.quality, p.timesMs.length);
  return { ...back, format: enc.data[0] as number };
}

const increasingTimes = (n: number): fc.Arbitrary<number[]> =>
  fc.array(fc.oneof(fc.constant(1000), fc.integer({ min: 1, max: 5000 })), { minLength: n, maxLength: n }).map((gaps) => {
    const out: number[] = [];
    let t = T0;
    for (const g of gaps) out.push((t += g));
    return out;
  });

describe("chunk formats", () => {
  it("round-trip any binary64 values bit for bit, with their quality codes", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 400 }).chain((n) =>
          fc.tuple(increasingTimes(n), fc.array(fc.tuple(fc.integer({ min: 0, max: 2 ** 32 - 1 }), fc.integer({ min: 0, max: 2 ** 32 - 1 })), { minLength: n, maxLength: n }), fc.array(fc.integer({ min: 0, max: 2 }), { minLength: n, maxLength: n })),
        ),
        ([times, pairs, q]) => {
          const values = new Float64Array(times.length);
          const u = new Uint32Array(values.buffer);
          pairs.forEach(([hi, lo], i) => {
            u[2 * i + 1] = hi;
            u[2 * i] = lo;
          });
          const back = roundTrip(points(times, values, q));
          expect(Array.from(back.timesMs)).toEqual(times);
          expect(bits(back.values)).toEqual(bits(values));
          expect(Array.from(back.quality)).toEqual(q);
        },
      ),
      { numRuns: 200 },
    );
  });

  it("use the decimal format for values with a fixed number of decimals, exactly", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 500 }).chain((n) =>
          fc.tuple(
            increasingTimes(n),
            fc.integer({ min: 0, max: 6 }),
            fc.integer({ min: -5_000_000, max: 5_000_000 }),
            fc.array(fc.integer({ min: -3000, max: 3000 }), { minLength: n, maxLength: n }),
            fc.array(fc.boolean(), { minLength: n, maxLength: n }),
          ),
        ),
        ([times, d, base, steps, missing]) => {
          // A noisy reading rounded to d decimals, the way a transmitter reports it; some missing.
          let m = base;
          const values = steps.map((s, i) => {
            m += s;
            return missing[i] && i % 3 === 0 ? Number.NaN : m / 10 ** d;
          });
          const p = points(times, values);
          const back = roundTrip(p);
          expect(bits(back.values)).toEqual(bits(p.values));
          expect(Array.from(back.timesMs)).toEqual(times);
          // The encoder keeps the smaller format; past a few points of values with decimals that
          // change at every step, that is the decimal one (at most 36 bits a value against about 50
          // for XOR-coded noisy mantissas). Whole numbers and repeated values can XOR-code smaller
          // (a repeat costs one bit), so the claim is not made for them.
          const changing = values.every((v, i) => i === 0 || (!Number.isNaN(v) && v !== values[i - 1]));
          if (d >= 1 && values.length >= 16 && changing) expect(back.format).toBe(FORMAT_DECIMAL);
        },
      ),
      { numRuns: 200 },
    );
  });

  it("find the fewest decimals that give the values back exactly", () => {
    expect(decimalsOf(Float64Array.from([86.91, 86.63, 86.7]))).toBe(2);
    expect(decimalsOf(Float64Array.from([1504, 1532, Number.NaN, -3]))).toBe(0);
    // 0.1 + 0.2 = 0.30000000000000004 is no m / 10^d for d ≤ 15 (its shortest form has 17 digits).
    expect(decimalsOf(Float64Array.from([0.1 + 0.2]))).toBe(-1);
    expect(decimalsOf(Float64Array.from([-0, 1]))).toBe(-1); // −0 would come back as +0
    expect(decimalsOf(Float64Array.from([Number.POSITIVE_INFINITY]))).toBe(-1);
    expect(decimalsOf(Float64Array.from([5e-324]))).toBe(-1);
    // A NaN with a payload keeps its bits only in the Gorilla format.
    const nan = new Float64Array(1);
    new Uint32Array(nan.buffer).set([1, 0x7ff00000]);
    expect(decimalsOf(nan)).toBe(-1);
  });

  it("fall back to Gorilla for −0 and keep its sign", () => {
    const back = roundTrip(points([T0, T0 + 1000, T0 + 2000], [-0, 0, -0]));
    expect(back.format).toBe(FORMAT_GORILLA);
    expect([...back.values].map((v) => Object.is(v, -0))).toEqual([true, false, true]);
  });

  it("cost about 1 byte per point for a 2-decimal reading at 1 Hz against about 6 for XOR-coded floats", () => {
    // A reading with 0.15 K noise and 0.01 K resolution, as the simulator's VM2-TT-111.
    let seed = 7;
    const rand = (): number => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31) * 2 - 1;
    const n = 300;
    const times = Array.from({ length: n }, (_, i) => T0 + i * 1000);
    const values = times.map((_, i) => Math.round((86 + Math.sin(i / 50) + 0.3 * rand()) * 100) / 100);
    const enc = encodeChunk(points(times, values));
    expect(enc.data[0]).toBe(FORMAT_DECIMAL);
    expect(enc.data.length / n).toBeLessThan(1.6);
    expect(enc.quality).toBeNull();
  });

  it("refuse an unknown format", () => {
    expect(() => decodeChunk(Uint8Array.from([9, 0, 0]), null, 1)).toThrow("chunk: unknown format 9 (expected 1 or 2)");
  });
});

describe("quality runs", () => {
  it("encode runs of codes other than 0 as (start, length, code) and nothing when all are 0", () => {
    expect(encodeQualityRuns(new Uint8Array(50))).toBeNull();
    const q = Uint8Array.from([0, 0, 2, 2, 2, 1, 0, 0, 0, 0]);
    // varints: 2 runs; (2, 3, 2); (5, 1, 1)
    expect([...(encodeQualityRuns(q) as Uint8Array)]).toEqual([2, 2, 3, 2, 5, 1, 1]);
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 0, max: 2 }), { maxLength: 5000 }), (codes) => {
        const u = Uint8Array.from(codes);
        expect(Array.from(decodeQualityRuns(encodeQualityRuns(u), u.length))).toEqual(codes);
      }),
    );
  });

  it("refuse a run beyond the chunk", () => {
    expect(() => decodeQualityRuns(Uint8Array.from([1, 8, 5, 2]), 10)).toThrow("chunk: quality run 8+5 (code 2) does not fit 10 points");
  });
});

describe("buildChunks", () => {
  it("cuts a series into chunks within the limits, at minute boundaries, losing nothing", () => {
    fc.assert(
      fc.property(
        fc.array(fc.oneof(fc.constant(1000), fc.integer({ min: 1, max: 40 }), fc.integer({ min: 1, max: 20 * 60_000 })), { minLength: 1, maxLength: 12_000 }),
        (gaps) => {
          const times: number[] = [];
          let t = T0;
          for (const g of gaps) times.push((t += g));
          const p = points(times, times.map((x) => (x % 977) / 10));
          const chunks = buildChunks(p, 0, times.length);
          const all: number[] = [];
          for (const c of chunks) {
            expect(c.n).toBeLessThanOrEqual(CHUNK_MAX_POINTS);
            expect(c.tLastMs - c.tFirstMs).toBeLessThanOrEqual(CHUNK_MAX_SPAN_MS);
            const back = decodeChunk(c.data, c.quality, c.n);
            expect(back.timesMs[0]).toBe(c.tFirstMs);
            expect(back.timesMs[c.n - 1]).toBe(c.tLastMs);
            all.push(...back.timesMs);
          }
          expect(all).toEqual(times);
          // A minute is split only when it alone holds more than a chunk can.
          for (let k = 1; k < chunks.length; k++) {
            const prev = chunks[k - 1] as { tLastMs: number; n: number };
            const next = chunks[k] as { tFirstMs: number };
            if (minuteOf(prev.tLastMs) === minuteOf(next.tFirstMs)) {
              const inMinute = times.filter((x) => minuteOf(x) === minuteOf(next.tFirstMs)).length;
              expect(inMinute).toBeGreaterThan(CHUNK_MAX_POINTS / 2);
            }
          }
        },
      ),
      { numRuns: 40 },
    );
  });
});

describe("rollupMinutes", () => {
  it("equals min, max, sum (in time order), count and last of the usable values per minute, computed directly", () => {
    fc.assert(
      fc.property(
        fc.array(fc.tuple(fc.integer({ min: 1, max: 45_000 }), fc.oneof(fc.double({ noNaN: false, noDefaultInfinity: true }), fc.constant(Number.NaN)), fc.integer({ min: 0, max: 2 })), {
          maxLength: 600,
        }),
        ([...rows]) => {
          const times: number[] = [];
          let t = T0 - 7;
          for (const [g] of rows) times.push((t += g));
          const p = points(times, rows.map(([, v]) => v), rows.map(([, , q]) => q));
          const got = rollupMinutes(p, 0, times.length, 2);
          // Direct: group by ⌊t / 60 000⌋ · 60 000, usable = present and not bad.
          const groups = new Map<number, { v: number; q: number }[]>();
          times.forEach((x, i) => {
            const m = Math.floor(x / 60_000) * 60_000;
            if (!groups.has(m)) groups.set(m, []);
            groups.get(m)?.push({ v: p.values[i] as number, q: p.quality[i] as number });
          });
          const expected = [...groups].map(([m, pts]) => {
            const use = pts.filter((x) => !Number.isNaN(x.v) && x.q < 2).map((x) => x.v);
            let sum: number | null = null;
            for (const v of use) sum = sum === null ? v : sum + v;
            return {
              tMinuteMs: m,
              min: use.length ? use.reduce((a, b) => (b < a ? b : a)) : null,
              max: use.length ? use.reduce((a, b) => (b > a ? b : a)) : null,
              sum,
              count: use.length,
              last: use.length ? (use.at(-1) as number) : null,
              quality: Math.max(...pts.map((x) => x.q)),
            };
          });
          expect(got).toEqual(expected);
        },
      ),
    );
  });
});
