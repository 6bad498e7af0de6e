// JSON payloads through decode.ts: random bytes, random JSON and structured-but-odd JSON.
// The property is the module's own contract (its head comment): bad input never throws, it
// becomes a bad-quality sample with a reason; a sample that is not refused has a finite value.
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import type { SignalConfig, SourceConfig } from "../../src/config/schema.js";
import { makeDecoder, MAX_PAYLOAD_BYTES, parseBody, type Decoded } from "../../src/sources/decode.js";
import { assertCounted, runs } from "./budget.js";

const NOW = Date.UTC(2026, 11, 1, 12, 0, 0);
const source: SourceConfig = {
  id: "m", kind: "mqtt", url: "mqtt://127.0.0.1:18831", protocolVersion: 4, qos: 0,
  payload: { format: "json", valuePath: "value", timePath: "time", qualityPath: "quality" }, maxClockSkewS: 30,
};
const numberSource: SourceConfig = { ...source, payload: { format: "number", valuePath: "value" } };
const signal: SignalConfig = {
  id: "bf2.outlet.press", name: "Filter outlet pressure", tag: "BF2-PT-212", source: "m", topic: "t", unit: "mbar",
  scale: 1, offset: 0, expectedPeriodS: 1, functionCheckPath: "status.fc",
};
const tempSignal: SignalConfig = { ...signal, id: "vm2.outlet.temp", unit: "degC", valuePath: "pv.v", functionCheckPath: undefined };
const decoders = [makeDecoder(signal, source), makeDecoder(tempSignal, source), makeDecoder(signal, numberSource)];

const REASONS = new Set(["not-json", "no-value", "not-a-number", "bad-time", "time-in-future", "too-large"]);

function check(d: Decoded): void {
  const s = d.sample;
  expect(s.receiveTimeMs).toBe(NOW);
  expect(["good", "uncertain", "bad"]).toContain(s.quality);
  if (d.reject !== undefined) {
    expect(REASONS.has(d.reject)).toBe(true);
    expect(s.quality).toBe("bad");
    expect(Number.isNaN(s.value)).toBe(true);
    expect(d.detail && d.detail.length > 0).toBe(true);
  } else {
    // A value that overflows in the unit conversion is refused (found by this fuzzing, fixed).
    expect(Number.isFinite(s.value)).toBe(true);
    expect(Number.isFinite(s.sourceTimeMs)).toBe(true);
    // The clock-skew limit of the source: never a source time more than 30 s ahead.
    expect(s.sourceTimeMs - NOW).toBeLessThanOrEqual(30_000);
    if (s.quality !== "good") expect(typeof s.qualityReason).toBe("string");
  }
}

function decodeAll(payload: Buffer | string): void {
  for (const [i, dec] of decoders.entries()) {
    const { parsed, error } = parseBody(payload, i === 2 ? "number" : "json");
    check(dec.decode(payload, parsed, error, NOW));
  }
}

/** Odd values where a number, a time, a quality or a flag is expected. */
const oddScalar = fc.oneof(
  fc.double(),
  fc.integer(),
  fc.constantFrom(0, -0, 1e308, -1e308, 5e-324, Number.MAX_SAFE_INTEGER, 2 ** 53 + 1, 1e16, -1e16),
  fc.string({ maxLength: 30 }),
  fc.constantFrom("", " ", "1e3", " 42 ", "0x1F", "Infinity", "NaN", "-", "1,5", "true", "null", "good", "bad", "uncertain", "GOOD"),
  fc.boolean(),
  fc.constant(null),
  fc.array(fc.integer(), { maxLength: 3 }),
  fc.dictionary(fc.string({ maxLength: 4 }), fc.integer(), { maxKeys: 3 }),
);
/** Times within the ECMAScript time range (±8.64e15 ms) and RFC 3339 texts, good and broken. */
const oddTime = fc.oneof(
  fc.integer({ min: -8.64e15, max: 8.64e15 }),
  fc.double({ min: -8.64e15, max: 8.64e15 }),
  fc.constantFrom(NOW, NOW + 30_000, NOW + 30_001, NOW - 1, 0, -1),
  fc.date({ min: new Date(-8.64e15), max: new Date(8.64e15), noInvalidDate: true }).map((d) => d.toISOString()),
  fc.constantFrom("2026-12-01T12:00:00Z", "2026-12-01T12:00:31Z", "2026-02-30T00:00:00Z", "2026-12-01T25:00:00+01:00", "9999-12-31T23:59:59.999-23:59", "2026-12-01T12:00:00", "2026-12-01", ""),
  fc.string({ maxLength: 45 }),
  fc.constant(null),
  fc.boolean(),
);
const structured = fc.record(
  {
    value: oddScalar,
    time: oddTime,
    quality: oddScalar,
    status: fc.oneof(fc.record({ fc: oddScalar }, { requiredKeys: [] }), oddScalar),
    pv: fc.oneof(fc.record({ v: oddScalar }, { requiredKeys: [] }), oddScalar),
    extra: fc.jsonValue({ maxDepth: 2 }),
  },
  { requiredKeys: [] },
);

const FULL = 400_000;

describe("fuzz: JSON payload decoding (decode.ts)", () => {
  it("random bytes never throw; every refusal is bad with a reason", () => {
    assertCounted("decode: random bytes", fc.uint8Array({ maxLength: 400 }), (a) => decodeAll(Buffer.from(a)), runs(FULL * 0.25, 800));
  });

  it("random JSON (any value, any depth, unicode) never throws", () => {
    assertCounted("decode: random JSON", fc.json({ maxDepth: 4 }), (j) => decodeAll(Buffer.from(j)), runs(FULL * 0.25, 800));
  });

  it("structured but odd JSON (odd values, times, qualities, flags) never throws", () => {
    assertCounted("decode: structured JSON", structured, (o) => decodeAll(Buffer.from(JSON.stringify(o))), runs(FULL * 0.35, 1200));
  });

  it("structured JSON cut, with a byte changed, or as a string body never throws", () => {
    const mutated = fc.tuple(structured, fc.nat(), fc.integer({ min: 0, max: 255 }), fc.constantFrom("cut", "byte", "string")).map(([o, at, byte, how]) => {
      const b = Buffer.from(JSON.stringify(o));
      if (how === "string") return b.toString("utf8");
      if (b.length === 0) return b;
      if (how === "cut") return b.subarray(0, at % b.length);
      b[at % b.length] = byte;
      return b;
    });
    assertCounted("decode: mutated JSON", mutated, (p) => decodeAll(p), runs(FULL * 0.15, 600));
  });

  it("a body over the size limit is refused as too-large without being parsed", () => {
    const big = Buffer.alloc(MAX_PAYLOAD_BYTES + 1, 0x7b);
    for (const dec of decoders.slice(0, 2)) {
      const { parsed, error } = parseBody(big, "json");
      expect(dec.decode(big, parsed, error, NOW).reject).toBe("too-large");
    }
  });

  // Found by this fuzzing and fixed: the value was checked for finiteness before scale, offset
  // and unit conversion; {"value":1e308} for a signal in mbar (×100 to Pa) came out a good Infinity.
  it("a value that overflows in the unit conversion is refused, never a good Infinity", () => {
    const big = fc.double({ min: 1.8e306, max: 1.7e308, noNaN: true }).chain((v) => fc.constantFrom(v, -v));
    assertCounted("decode: BUG overflow", big, (v) => {
      const body = Buffer.from(JSON.stringify({ value: v }));
      const { parsed, error } = parseBody(body, "json");
      const d = decoders[0]!.decode(body, parsed, error, NOW);
      if (d.reject === undefined) expect(Number.isFinite(d.sample.value)).toBe(true);
      else expect(d.reject).toBe("not-a-number");
    }, runs(1000, 100));
  });

  // Found by this fuzzing and fixed: a numeric time beyond the ECMAScript time range (|t| > 8.64e15
  // ms, e.g. {"value":1,"time":1e16}) threw RangeError from the detail text instead of bad-time.
  it("a numeric time beyond ±8.64e15 ms is refused, not thrown", () => {
    const huge = fc.oneof(fc.double({ min: 8.64e15, max: 1e308, noNaN: true, minExcluded: true }), fc.constantFrom(1e16, 8.7e15, Number.MAX_VALUE));
    assertCounted("decode: BUG huge time", huge, (t) => decodeAll(Buffer.from(JSON.stringify({ value: 1, time: t }))), runs(1000, 100));
  });
});
