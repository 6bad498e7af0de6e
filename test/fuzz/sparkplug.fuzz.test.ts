// Sparkplug B bodies through SparkplugReader.handle: random bytes, random but well-formed
// payloads (encoded with the protobuf codec sparkplug-payload ships, sparkplug_b.proto), and those
// payloads cut or with a byte changed, over random sequences of message types so that births,
// deaths and sequence gaps interleave. The property is the reader's contract ("Never throws:
// whatever cannot be read is a note or a refused sample with its reason").
import fc from "fast-check";
import sparkplugProto from "sparkplug-payload/lib/sparkplugPayloadProto.js";
import { describe, expect, it } from "vitest";
import type { SignalConfig } from "../../src/config/schema.js";
import { SparkplugReader, type SparkplugOutcome } from "../../src/sources/sparkplug.js";
import { assertCounted, runs } from "./budget.js";

const Raw = sparkplugProto.org.eclipse.tahu.protobuf.Payload;
const NOW = Date.UTC(2026, 10, 3, 6, 0, 0);
const G = "cg2";
const N = "edge-vm2";
const D = "vm2-a113";

const sig = (id: string, metric: string, device?: string, unit: SignalConfig["unit"] = "pctVol"): SignalConfig => ({
  id, name: id, tag: id.toUpperCase(), source: "spb", unit, scale: 1, offset: 0, expectedPeriodS: 1,
  sparkplug: device === undefined ? { group: G, node: N, metric } : { group: G, node: N, device, metric },
});
const SIGNALS = [sig("vm2.o2", "O2/PV", D), sig("vm2.co", "CO/PV", D, "ppm"), sig("vm2.power", "Drive/Power", undefined, "kW"), sig("vm2.trip", "Trip", undefined, "state"), sig("vm2.temp", "T/PV", undefined, "degC")];
const IDS = new Set(SIGNALS.map((s) => s.id));
const NAMES = ["bdSeq", "O2/PV", "CO/PV", "Drive/Power", "Trip", "T/PV", "Other", ""];
const REFUSALS = new Set(["bad-topic", "too-large", "bad-payload", "no-birth", "unknown-alias", "seq-gap", "stale-death"]);
const REJECTS = new Set(["no-value", "not-a-number", "bad-time", "time-in-future", "unsupported-type"]);

const TYPES = ["NBIRTH", "NDEATH", "NDATA", "NCMD", "DBIRTH", "DDEATH", "DDATA", "DCMD"] as const;
const topicOf = (type: string) => (type.startsWith("D") ? `spBv1.0/${G}/${type}/${N}/${D}` : `spBv1.0/${G}/${type}/${N}`);

/** A uint64 as protobufjs takes it; timestamps within the ECMAScript time range (see BUG 3). */
const long64 = fc.oneof(
  fc.integer({ min: 0, max: 300 }),
  fc.constantFrom(NOW, NOW + 30_001, 0, 2 ** 32, 2 ** 31),
  // {low, high} is the Long shape protobufjs writes as a uint64.
  fc.tuple(fc.nat({ max: 0xffffffff }), fc.nat({ max: 0xffffffff })).map(([low, high]) => ({ low: low | 0, high: high | 0, unsigned: true })),
);
const safeTime = fc.oneof(fc.constantFrom(NOW, NOW - 1000, NOW + 30_001, 0, 1), fc.integer({ min: 0, max: 8_640_000_000_000_000 }));

const property = fc.record(
  { type: fc.integer({ min: 0, max: 25 }), isNull: fc.boolean(), intValue: fc.nat(), longValue: long64, stringValue: fc.string({ maxLength: 6 }) },
  { requiredKeys: [] },
);
const metric = fc.record(
  {
    name: fc.constantFrom(...NAMES),
    alias: long64,
    timestamp: safeTime,
    datatype: fc.integer({ min: 0, max: 40 }),
    isHistorical: fc.boolean(),
    isTransient: fc.boolean(),
    isNull: fc.boolean(),
    intValue: fc.oneof(fc.nat(), fc.constantFrom(0, 1, 0xffffffff, 0x7fffffff)),
    longValue: long64,
    floatValue: fc.float(),
    doubleValue: fc.double(),
    booleanValue: fc.boolean(),
    stringValue: fc.string({ maxLength: 10 }),
    bytesValue: fc.uint8Array({ maxLength: 8 }),
    properties: fc.record({ keys: fc.array(fc.constantFrom("Quality", "engUnit", ""), { maxLength: 3 }), values: fc.array(property, { maxLength: 3 }) }),
  },
  { requiredKeys: [] },
);
const payload = fc.record({ timestamp: safeTime, seq: fc.oneof(fc.integer({ min: 0, max: 300 }), long64), uuid: fc.string({ maxLength: 5 }), metrics: fc.array(metric, { maxLength: 8 }) }, { requiredKeys: [] });

const encode = (p: object) => Buffer.from(Raw.encode(Raw.create(p as Parameters<typeof Raw.create>[0])).finish());

/** A body: well formed, cut, a byte changed, or random bytes. */
const body = fc.oneof(
  { weight: 5, arbitrary: payload.map(encode) },
  { weight: 2, arbitrary: fc.tuple(payload.map(encode), fc.nat(), fc.integer({ min: 0, max: 255 }), fc.boolean()).map(([b, at, v, cut]) => (b.length === 0 ? b : cut ? b.subarray(0, at % b.length) : (b.fill(v, at % b.length, (at % b.length) + 1), b))) },
  { weight: 2, arbitrary: fc.uint8Array({ maxLength: 200 }).map((a) => Buffer.from(a)) },
);
const message = fc.record({ type: fc.constantFrom(...TYPES), body, dtMs: fc.integer({ min: 0, max: 5000 }) });

function check(out: SparkplugOutcome, atMs: number): void {
  for (const n of out.notes) {
    expect(REFUSALS.has(n.reason)).toBe(true);
    expect(n.detail.length).toBeGreaterThan(0);
  }
  for (const d of out.decoded) {
    const s = d.sample;
    expect(IDS.has(s.signal)).toBe(true);
    expect(s.receiveTimeMs).toBe(atMs);
    expect(["good", "uncertain", "bad"]).toContain(s.quality);
    if (d.reject !== undefined) {
      expect(REJECTS.has(d.reject)).toBe(true);
      expect(s.quality).toBe("bad");
      expect(d.detail && d.detail.length > 0).toBe(true);
    }
    if (s.quality !== "bad") expect(Number.isFinite(s.value)).toBe(true);
    expect(Number.isFinite(s.sourceTimeMs)).toBe(true);
  }
}

const FULL = 270_000;

describe("fuzz: Sparkplug B payloads (sparkplug.ts)", () => {
  it("random sessions of well-formed, damaged and random bodies never throw", () => {
    // One case is a session of up to 6 messages to one reader: the state machine sees them in order.
    assertCounted("sparkplug: sessions", fc.array(message, { minLength: 1, maxLength: 6 }), (msgs) => {
      const r = new SparkplugReader(SIGNALS, { maxClockSkewS: 30 });
      let at = NOW;
      for (const m of msgs) {
        at += m.dtMs;
        const out: SparkplugOutcome = r.handle(topicOf(m.type), m.body, at);
        check(out, at);
      }
    }, runs(FULL * 0.6, 600));
  });

  it("random bytes on random topics never throw", () => {
    const topic = fc.oneof(fc.string({ maxLength: 40 }), fc.constantFrom(...TYPES).map(topicOf), fc.array(fc.constantFrom("spBv1.0", G, N, D, "STATE", "NDATA", "DDATA", "", "+"), { maxLength: 6 }).map((p) => p.join("/")));
    assertCounted("sparkplug: random bytes and topics", fc.tuple(topic, fc.uint8Array({ maxLength: 300 })), ([t, b]) => {
      const r = new SparkplugReader(SIGNALS, { maxClockSkewS: 30 });
      check(r.handle(t, b, NOW), NOW);
    }, runs(FULL * 0.4, 600));
  });

  // Found by this fuzzing and fixed: a metric timestamp that is a safe integer above the
  // ECMAScript time range (8.64e15 < t <= 2^53-1) made the detail text throw RangeError out of
  // handle(), against its "never throws"; it is now a bad-time refusal.
  it("a metric timestamp between 8.64e15 and 2^53 is refused, not thrown", () => {
    const t = fc.integer({ min: 8_640_000_000_000_001, max: Number.MAX_SAFE_INTEGER });
    assertCounted("sparkplug: BUG huge timestamp", t, (ts) => {
      const r = new SparkplugReader(SIGNALS, { maxClockSkewS: 30 });
      const birth = encode({ seq: 0, timestamp: NOW, metrics: [{ name: "Drive/Power", alias: 1, datatype: 9, floatValue: 1810.5, timestamp: ts }] });
      check(r.handle(topicOf("NBIRTH"), birth, NOW), NOW);
    }, runs(1000, 100));
  });
});
