// Sparkplug B reading (src/sources/sparkplug.ts) against the rules of the Eclipse Sparkplug 3.0
// specification, "Payloads" chapter (sequence numbers 0..255 with wrap, NBIRTH seq 0, bdSeq
// pairing of NBIRTH and NDEATH, aliases defined in births, Quality codes 0/192/500), with the
// messages encoded by sparkplug-payload (the Eclipse Tahu JavaScript library) or, for payloads
// that library cannot produce, by the protobuf codec it ships (sparkplug_b.proto).
import fc from "fast-check";
import sparkplugPayload from "sparkplug-payload";
import sparkplugProto from "sparkplug-payload/lib/sparkplugPayloadProto.js";
import { describe, expect, it } from "vitest";
import type { SignalConfig } from "../../src/config/schema.js";
import type { Sample } from "../../src/core/types.js";
import { edgeQuality, longToNumber, parseSparkplugTopic, SparkplugReader, type SparkplugOutcome } from "../../src/sources/sparkplug.js";

const codec = sparkplugPayload.get("spBv1.0")!;
const Raw = sparkplugProto.org.eclipse.tahu.protobuf.Payload;
type UPayload = Parameters<typeof codec.encodePayload>[0];
const enc = (p: UPayload) => Buffer.from(codec.encodePayload(p));
const raw = (p: Parameters<typeof Raw.create>[0]) => Buffer.from(Raw.encode(Raw.create(p)).finish());

const T0 = Date.UTC(2026, 10, 3, 6, 0, 0);
const G = "cg2";
const N = "edge-vm2";

const sig = (id: string, metric: string, device?: string, unit: SignalConfig["unit"] = "pctVol", node = N): SignalConfig => ({
  id, name: id, tag: id.toUpperCase(), source: "spb", unit, scale: 1, offset: 0, expectedPeriodS: 1,
  sparkplug: device === undefined ? { group: G, node, metric } : { group: G, node, device, metric },
});

const SIGNALS = [
  sig("vm2.o2", "O2/PV", "vm2-a113"),
  sig("vm2.co", "CO/PV", "vm2-a113", "ppm"),
  sig("vm2.power", "Drive/Power", undefined, "kW"),
  sig("vm2.trip", "Trip", undefined, "state"),
];

function reader() {
  const r = new SparkplugReader(SIGNALS, { maxClockSkewS: 30 });
  const samples: Sample[] = [];
  const feed = (type: string, payload: Buffer, atMs: number, device?: string): SparkplugOutcome => {
    const topic = `spBv1.0/${G}/${type}/${N}${device === undefined ? "" : `/${device}`}`;
    const out = r.handle(topic, payload, atMs);
    samples.push(...out.decoded.map((d) => d.sample));
    return out;
  };
  const last = (id: string) => samples.filter((s) => s.signal === id).at(-1);
  return { r, feed, samples, last };
}

const nbirth = (atMs: number, bdSeq = 7) =>
  enc({
    timestamp: atMs, seq: 0,
    metrics: [
      { name: "bdSeq", type: "UInt64", value: bdSeq, timestamp: atMs },
      { name: "Node Control/Rebirth", type: "Boolean", value: false, timestamp: atMs },
      { name: "Drive/Power", alias: 1, type: "Float", value: 1810.5, timestamp: atMs },
      { name: "Trip", alias: 2, type: "Boolean", value: false, timestamp: atMs },
    ],
  });
const dbirth = (atMs: number, seq = 1) =>
  enc({
    timestamp: atMs, seq,
    metrics: [
      { name: "O2/PV", alias: 10, type: "Double", value: 8.4, timestamp: atMs },
      { name: "CO/PV", alias: 11, type: "UInt16", value: 35, timestamp: atMs },
    ],
  });

describe("topics", () => {
  it("parses the spBv1.0 namespace and refuses anything else", () => {
    expect(parseSparkplugTopic("spBv1.0/cg2/NDATA/edge-vm2")).toEqual({ group: "cg2", type: "NDATA", node: "edge-vm2" });
    expect(parseSparkplugTopic("spBv1.0/cg2/DDATA/edge-vm2/vm2-a113")).toEqual({ group: "cg2", type: "DDATA", node: "edge-vm2", device: "vm2-a113" });
    expect(parseSparkplugTopic("spBv1.0/STATE/scada-host")).toBe("state");
    for (const bad of ["spBv1.0/cg2/DDATA/edge-vm2", "spBv1.0/cg2/NDATA/edge-vm2/x", "spBv1.0/cg2/XDATA/edge-vm2", "spBv1.0//NDATA/n", "tarnholm/cg2/x", "spBv1.0/cg2/NDATA/edge-vm2/"]) {
      expect(parseSparkplugTopic(bad), bad).toBeNull();
    }
  });

  it("subscribes to births, deaths and data of the mapped nodes only, never to commands", () => {
    const f = new SparkplugReader(SIGNALS, { maxClockSkewS: 30 }).filters();
    expect(f).toEqual([
      "spBv1.0/cg2/NBIRTH/edge-vm2", "spBv1.0/cg2/NDEATH/edge-vm2", "spBv1.0/cg2/NDATA/edge-vm2",
      "spBv1.0/cg2/DBIRTH/edge-vm2/+", "spBv1.0/cg2/DDEATH/edge-vm2/+", "spBv1.0/cg2/DDATA/edge-vm2/+",
    ]);
    expect(f.some((x) => x.includes("CMD"))).toBe(false);
  });
});

describe("births, data by alias or name, deaths", () => {
  it("reads the birth's values, then data by alias (DDATA) and by name (NDATA), in canonical units", () => {
    const { feed, last, r } = reader();
    expect(feed("NBIRTH", nbirth(T0), T0).notes).toEqual([]);
    expect(last("vm2.power")).toMatchObject({ value: 1810.5, quality: "good", sourceTimeMs: T0 });
    expect(last("vm2.trip")).toMatchObject({ value: 0, quality: "good" });
    feed("DBIRTH", dbirth(T0), T0, "vm2-a113");
    expect(last("vm2.o2")).toMatchObject({ value: 8.4, quality: "good" });
    expect(last("vm2.co")).toMatchObject({ value: 35, quality: "good" });

    // Aliases only, as the specification asks of data messages.
    const out = feed("DDATA", enc({ timestamp: T0 + 1000, seq: 2, metrics: [{ alias: 10, type: "Double", value: 8.9, timestamp: T0 + 1000 }, { alias: 11, type: "UInt16", value: 41, timestamp: T0 + 1000 }] }), T0 + 1100, "vm2-a113");
    expect(out.notes).toEqual([]);
    expect(last("vm2.o2")).toMatchObject({ value: 8.9, quality: "good", sourceTimeMs: T0 + 1000, receiveTimeMs: T0 + 1100 });
    expect(last("vm2.co")!.value).toBe(41);
    // By name, without a datatype in the data message (taken from the birth).
    feed("NDATA", raw({ timestamp: T0 + 2000, seq: 3, metrics: [{ name: "Trip", booleanValue: true, timestamp: T0 + 2000 }] }), T0 + 2000);
    expect(last("vm2.trip")).toMatchObject({ value: 1, quality: "good" });
    expect(r.stats()).toEqual([{ group: G, node: N, online: true, births: 1, deaths: 0, seqGaps: 0, uncertainSince: null }]);
  });

  it("NDEATH with the birth's bdSeq marks every signal of the node bad at once; one of an older session is ignored", () => {
    const { feed, last, r } = reader();
    feed("NBIRTH", nbirth(T0, 7), T0);
    feed("DBIRTH", dbirth(T0), T0, "vm2-a113");
    // The will of the previous session (bdSeq 6) arriving late.
    const stale = feed("NDEATH", enc({ timestamp: T0 - 60_000, metrics: [{ name: "bdSeq", type: "UInt64", value: 6 }] }), T0 + 500);
    expect(stale.notes.map((n) => n.reason)).toEqual(["stale-death"]);
    expect(stale.decoded).toEqual([]);
    expect(last("vm2.o2")!.quality).toBe("good");

    const out = feed("NDEATH", enc({ timestamp: T0 - 60_000, metrics: [{ name: "bdSeq", type: "UInt64", value: 7 }] }), T0 + 5000);
    expect(out.decoded.map((d) => [d.sample.signal, d.sample.quality, d.sample.qualityReason]).sort()).toEqual([
      ["vm2.co", "bad", "node death"], ["vm2.o2", "bad", "node death"], ["vm2.power", "bad", "node death"], ["vm2.trip", "bad", "node death"],
    ]);
    // Newer than the last value by the node's own clock, received now.
    expect(last("vm2.o2")).toMatchObject({ sourceTimeMs: T0 + 1, receiveTimeMs: T0 + 5000 });
    expect(out.decoded.every((d) => d.reject === undefined && Number.isNaN(d.sample.value))).toBe(true);
    expect(r.stats()[0]).toMatchObject({ online: false, deaths: 1 });

    // After the death, data are refused until the next birth (millwarden never asks for one).
    const after = feed("NDATA", enc({ timestamp: T0 + 6000, seq: 2, metrics: [{ alias: 1, type: "Float", value: 1700 }] }), T0 + 6000);
    expect(after.notes.map((n) => n.reason)).toEqual(["no-birth"]);
    expect(after.decoded).toEqual([]);
    feed("NBIRTH", nbirth(T0 + 7000, 8), T0 + 7000);
    expect(last("vm2.power")).toMatchObject({ value: 1810.5, quality: "good" });
    // The devices have not been born again yet: their data wait for their DBIRTH.
    expect(feed("DDATA", enc({ timestamp: T0 + 7100, seq: 1, metrics: [{ alias: 10, type: "Double", value: 8 }] }), T0 + 7100, "vm2-a113").notes.map((n) => n.reason)).toEqual(["no-birth"]);
  });

  it("DDEATH marks only that device's signals bad", () => {
    const { feed, last } = reader();
    feed("NBIRTH", nbirth(T0), T0);
    feed("DBIRTH", dbirth(T0), T0, "vm2-a113");
    const out = feed("DDEATH", enc({ timestamp: T0 + 3000, seq: 2 }), T0 + 3000, "vm2-a113");
    expect(out.decoded.map((d) => d.sample.signal).sort()).toEqual(["vm2.co", "vm2.o2"]);
    expect(last("vm2.o2")).toMatchObject({ quality: "bad", qualityReason: "device death" });
    expect(last("vm2.power")!.quality).toBe("good");
    expect(feed("NDATA", enc({ timestamp: T0 + 4000, seq: 3, metrics: [{ alias: 1, type: "Float", value: 1799 }] }), T0 + 4000).notes).toEqual([]);
    expect(last("vm2.power")).toMatchObject({ value: 1799, quality: "good" });
    // A later sequence gap makes the living signals uncertain; the dead device's stay bad.
    feed("NDATA", enc({ timestamp: T0 + 5000, seq: 9, metrics: [] }), T0 + 5000);
    expect(last("vm2.power")).toMatchObject({ value: 1799, quality: "uncertain" });
    expect(last("vm2.o2")).toMatchObject({ quality: "bad", qualityReason: "device death" });
  });

  it("data before any birth are refused with a reason and leave the signals without a value", () => {
    const { feed, samples } = reader();
    const out = feed("NDATA", enc({ timestamp: T0, seq: 17, metrics: [{ name: "Drive/Power", type: "Float", value: 1800 }] }), T0);
    expect(out.notes).toMatchObject([{ scope: `${G}/${N}`, reason: "no-birth" }]);
    expect(out.notes[0]!.detail).toMatch(/unknown until the node's next birth/);
    expect(samples).toEqual([]);
  });

  it("an alias the birth did not define is counted once per message; unmapped nodes, commands and STATE are not read", () => {
    const { feed, last, r } = reader();
    feed("NBIRTH", nbirth(T0), T0);
    const out = feed("NDATA", enc({ timestamp: T0 + 1000, seq: 1, metrics: [{ alias: 99, type: "Float", value: 1 }, { alias: 98, type: "Float", value: 2 }, { alias: 1, type: "Float", value: 1750 }] }), T0 + 1000);
    expect(out.notes).toMatchObject([{ reason: "unknown-alias" }]);
    expect(out.notes[0]!.detail).toMatch(/99, 98/);
    expect(last("vm2.power")!.value).toBe(1750);
    expect(r.handle(`spBv1.0/${G}/NDATA/edge-hg2`, nbirth(T0), T0)).toMatchObject({ unmatched: true, decoded: [], notes: [] });
    expect(r.handle(`spBv1.0/${G}/NCMD/${N}`, enc({ timestamp: T0, metrics: [{ name: "Node Control/Rebirth", type: "Boolean", value: true }] }), T0)).toMatchObject({ ignored: true, decoded: [], notes: [] });
    expect(r.handle("spBv1.0/STATE/scada-host", Buffer.from('{"online":true}'), T0)).toMatchObject({ ignored: true });
  });
});

describe("sequence numbers (0..255 per edge node, across the node and its devices)", () => {
  it("wraps from 255 to 0 without a gap", () => {
    const { feed, last, r } = reader();
    feed("NBIRTH", nbirth(T0), T0);
    let t = T0;
    for (let seq = 1; seq <= 300; seq++) {
      t += 100;
      const out = feed("NDATA", enc({ timestamp: t, seq: seq % 256, metrics: [{ alias: 1, type: "Float", value: seq, timestamp: t }] }), t);
      expect(out.notes).toEqual([]);
    }
    expect(last("vm2.power")).toMatchObject({ value: 300, quality: "good" });
    expect(r.stats()[0]!.seqGaps).toBe(0);
  });

  it("a gap is counted, marks the node's signals uncertain at once, and holds until the next birth", () => {
    const { feed, last, r } = reader();
    feed("NBIRTH", nbirth(T0), T0);
    feed("DBIRTH", dbirth(T0), T0, "vm2-a113");
    // seq 2 and 3 lost: the next one is 4.
    const out = feed("NDATA", enc({ timestamp: T0 + 1000, seq: 4, metrics: [{ alias: 1, type: "Float", value: 1700, timestamp: T0 + 1000 }] }), T0 + 1000);
    expect(out.notes).toMatchObject([{ reason: "seq-gap", scope: `${G}/${N}` }]);
    expect(out.notes[0]!.detail).toMatch(/sequence number 4, expected 2/);
    // Signals not in the message: their last value, uncertain, at once.
    expect(last("vm2.o2")).toMatchObject({ value: 8.4, quality: "uncertain", sourceTimeMs: T0 + 1, receiveTimeMs: T0 + 1000 });
    expect(last("vm2.o2")!.qualityReason).toMatch(/until the node's next birth/);
    expect(last("vm2.power")).toMatchObject({ value: 1700, quality: "uncertain", sourceTimeMs: T0 + 1000 });
    // The sequence continues from the new number; still uncertain, no second gap.
    const next = feed("DDATA", enc({ timestamp: T0 + 2000, seq: 5, metrics: [{ alias: 10, type: "Double", value: 8.6, timestamp: T0 + 2000 }] }), T0 + 2000, "vm2-a113");
    expect(next.notes).toEqual([]);
    expect(last("vm2.o2")).toMatchObject({ value: 8.6, quality: "uncertain" });
    expect(r.stats()[0]).toMatchObject({ seqGaps: 1, uncertainSince: expect.stringMatching(/expected 2/) });
    feed("NBIRTH", nbirth(T0 + 3000), T0 + 3000);
    feed("DBIRTH", dbirth(T0 + 3000), T0 + 3000, "vm2-a113");
    expect(last("vm2.o2")).toMatchObject({ value: 8.4, quality: "good" });
    expect(last("vm2.power")).toMatchObject({ quality: "good" });
    expect(r.stats()[0]!.uncertainSince).toBeNull();
  });

  it("a data message without a sequence number is a gap too (continuity cannot be checked)", () => {
    const { feed, last } = reader();
    feed("NBIRTH", nbirth(T0), T0);
    const out = feed("NDATA", raw({ timestamp: T0 + 1000, metrics: [{ alias: 1, datatype: 9, floatValue: 1600, timestamp: T0 + 1000 }] }), T0 + 1000);
    expect(out.notes.map((n) => n.reason)).toEqual(["seq-gap"]);
    expect(last("vm2.power")).toMatchObject({ value: 1600, quality: "uncertain" });
  });
});

describe("values and quality", () => {
  const one = (metric: Parameters<typeof Raw.create>[0] extends infer P ? P extends { metrics?: (infer M)[] | null } ? M : never : never, signal: SignalConfig = sig("x", "X", undefined, "pctVol")) => {
    const r = new SparkplugReader([signal], { maxClockSkewS: 30 });
    r.handle(`spBv1.0/${G}/NBIRTH/${N}`, raw({ timestamp: T0, seq: 0, metrics: [] }), T0);
    const out = r.handle(`spBv1.0/${G}/NDATA/${N}`, raw({ timestamp: T0 + 1000, seq: 1, metrics: [{ name: "X", timestamp: T0 + 1000, ...metric }] }), T0 + 1000);
    expect(out.decoded).toHaveLength(1);
    return out.decoded[0]!;
  };

  // Datatype enum and value fields as in sparkplug_b.proto (Sparkplug 3.0, "Datatype Details").
  it.each([
    ["Int8 -5 sign-extended to 32 bits", { datatype: 1, intValue: 0xfffffffb }, -5],
    ["Int8 -56 as its own 8 bits", { datatype: 1, intValue: 0xc8 }, -56],
    ["Int16 -300", { datatype: 2, intValue: 0xfffffed4 }, -300],
    ["Int32 -70000", { datatype: 3, intValue: -70000 >>> 0 }, -70000],
    ["Int64 -5 (two's complement uint64)", { datatype: 4, longValue: "18446744073709551611" }, -5],
    ["UInt8 200", { datatype: 5, intValue: 200 }, 200],
    ["UInt16 65000", { datatype: 6, intValue: 65000 }, 65000],
    ["UInt32 3e9 as int_value (the specification)", { datatype: 7, intValue: 3_000_000_000 }, 3_000_000_000],
    ["UInt32 3e9 as long_value (sparkplug-payload)", { datatype: 7, longValue: 3_000_000_000 }, 3_000_000_000],
    ["UInt64 2^40", { datatype: 8, longValue: 2 ** 40 }, 2 ** 40],
    ["Float 8.5", { datatype: 9, floatValue: 8.5 }, 8.5],
    ["Double 0.1", { datatype: 10, doubleValue: 0.1 }, 0.1],
    ["Boolean true", { datatype: 11, booleanValue: true }, 1],
  ])("reads %s", (_n, metric, expected) => {
    const d = one(metric as never);
    expect(d.reject).toBeUndefined();
    expect(d.sample).toMatchObject({ value: expected, quality: "good" });
  });

  it("the reference library's own encoding of negative and large integers reads back", () => {
    const r = new SparkplugReader([sig("a", "A", undefined, "state"), sig("b", "B", undefined, "state"), sig("c", "C", undefined, "state")], { maxClockSkewS: 30 });
    const out = r.handle(`spBv1.0/${G}/NBIRTH/${N}`, enc({ timestamp: T0, seq: 0, metrics: [
      { name: "A", type: "Int8", value: -5, timestamp: T0 }, { name: "B", type: "Int64", value: -123456789012, timestamp: T0 }, { name: "C", type: "UInt32", value: 4_000_000_000, timestamp: T0 },
    ] }), T0);
    expect(out.decoded.map((d) => d.sample.value)).toEqual([-5, -123456789012, 4_000_000_000]);
  });

  it.each([
    ["String", { datatype: 12, stringValue: "8.4" }, "unsupported-type"],
    ["DataSet", { datatype: 16, datasetValue: { numOfColumns: 1, columns: ["a"], types: [9] } }, "unsupported-type"],
    ["Float NaN", { datatype: 9, floatValue: Number.NaN }, "not-a-number"],
    ["Double without its value", { datatype: 10 }, "no-value"],
    ["no datatype anywhere", { doubleValue: 3 }, "unsupported-type"],
    ["a timestamp from the future", { datatype: 10, doubleValue: 3, timestamp: T0 + 3_600_000 }, "time-in-future"],
  ])("refuses %s with a reason, as a bad sample", (_n, metric, reason) => {
    const d = one(metric as never);
    expect(d.reject).toBe(reason);
    expect(d.detail).toMatch(/metric "X"/);
    expect(d.sample.quality).toBe("bad");
    expect(Number.isNaN(d.sample.value)).toBe(true);
  });

  it("is_null is a bad value, not a refusal", () => {
    const d = one({ datatype: 9, isNull: true });
    expect(d.reject).toBeUndefined();
    expect(d.sample).toMatchObject({ quality: "bad", qualityReason: "null value (is_null)" });
  });

  const withQuality = (code: number) => ({ datatype: 10, doubleValue: 8.1, properties: { keys: ["engUnit", "Quality"], values: [{ type: 12, stringValue: "%" }, { type: 3, intValue: code >>> 0 }] } });
  it.each([
    [192, "good", null],
    [0, "bad", "edge quality 0 (BAD)"],
    [500, "uncertain", "edge quality 500 (STALE)"],
    [0x44, "uncertain", "edge quality 68 (OPC uncertain)"],
    [0xd8, "good", null],
    [0x80340000, "bad", "edge status 0x80340000 (bad)"],
    [0x40920000, "uncertain", "edge status 0x40920000 (uncertain)"],
    [300, "uncertain", "edge quality 300, not a known code"],
  ])("the Quality property %i reads %s", (code, quality, reason) => {
    const d = one(withQuality(code));
    expect(d.sample.quality).toBe(quality);
    expect(d.sample.qualityReason ?? null).toBe(reason);
    expect(d.sample.value).toBe(8.1);
  });

  it("edgeQuality is null without the property", () => {
    expect(edgeQuality(Raw.Metric.create({ name: "X" }))).toBeNull();
  });

  it("longToNumber reads Longs and plain numbers", () => {
    expect(longToNumber({ low: -5, high: -1, unsigned: true }, true)).toBe(-5);
    expect(longToNumber({ low: 0, high: 1, unsigned: true })).toBe(2 ** 32);
    expect(longToNumber(12)).toBe(12);
    expect(longToNumber("12")).toBeNull();
  });
});

describe("fuzz: never throws, every refusal has a reason", () => {
  const TYPES = ["NBIRTH", "NDEATH", "NDATA", "DBIRTH", "DDEATH", "DDATA", "NCMD", "DCMD"];
  const topicArb = fc.oneof(
    { weight: 8, arbitrary: fc.tuple(fc.constantFrom(...TYPES), fc.constantFrom(N, "edge-fs2"), fc.constantFrom("vm2-a113", "other")).map(([t, n, d]) => `spBv1.0/${G}/${t}/${n}${t.startsWith("D") ? `/${d}` : ""}`) },
    { weight: 1, arbitrary: fc.string({ maxLength: 40 }).map((s) => `spBv1.0/${s}`) },
  );
  const longArb = fc.oneof(fc.nat(), fc.bigInt({ min: 0n, max: 2n ** 64n - 1n }).map((b) => b.toString()));
  const metricArb = fc.record(
    {
      name: fc.constantFrom("O2/PV", "CO/PV", "Drive/Power", "Trip", "bdSeq", "Other", ""),
      alias: fc.oneof(fc.constantFrom(1, 2, 10, 11), longArb),
      timestamp: fc.oneof(fc.constant(T0), fc.integer({ min: T0 - 1e7, max: T0 + 1e7 }), longArb),
      datatype: fc.integer({ min: 0, max: 40 }),
      isHistorical: fc.boolean(),
      isNull: fc.boolean(),
      intValue: fc.nat({ max: 0xffffffff }),
      longValue: longArb,
      floatValue: fc.float(),
      doubleValue: fc.double(),
      booleanValue: fc.boolean(),
      stringValue: fc.string({ maxLength: 10 }),
      properties: fc.record({
        keys: fc.array(fc.constantFrom("Quality", "engUnit", ""), { maxLength: 3 }),
        values: fc.array(fc.record({ type: fc.integer({ min: 0, max: 25 }), intValue: fc.nat({ max: 0xffffffff }), isNull: fc.boolean() }, { requiredKeys: [] }), { maxLength: 3 }),
      }),
    },
    { requiredKeys: [] },
  );
  const payloadArb = fc.record({ timestamp: fc.oneof(fc.constant(T0), longArb), seq: fc.oneof(fc.integer({ min: 0, max: 300 }), longArb), metrics: fc.array(metricArb, { maxLength: 6 }) }, { requiredKeys: [] });
  const bodyArb = fc.oneof(
    { weight: 3, arbitrary: payloadArb.map((p) => Buffer.from(Raw.encode(Raw.fromObject(p)).finish())) },
    { weight: 1, arbitrary: fc.uint8Array({ maxLength: 200 }).map((a) => Buffer.from(a)) },
  );

  const seen = { good: 0, refused: 0, marked: 0, notes: new Set<string>() };
  const check = (out: SparkplugOutcome) => {
    for (const n of out.notes) seen.notes.add(n.reason);
    for (const d of out.decoded) {
      if (d.reject) seen.refused++;
      else if (d.sample.quality === "good") seen.good++;
      else seen.marked++;
      const s = d.sample;
      if (d.reject) {
        expect(d.detail, "a refusal says why").toBeTruthy();
        expect(s.quality).toBe("bad");
      }
      if (s.quality === "good") expect(Number.isFinite(s.value)).toBe(true);
      if (s.quality !== "good") expect(s.qualityReason, "a bad or uncertain sample says why").toBeTruthy();
      expect(Number.isFinite(s.sourceTimeMs)).toBe(true);
    }
    for (const n of out.notes) {
      expect(n.reason).toBeTruthy();
      expect(n.detail).toBeTruthy();
    }
  };

  it("random bytes on random Sparkplug topics", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(topicArb, fc.uint8Array({ maxLength: 300 })), { maxLength: 20 }), (msgs) => {
        const r = new SparkplugReader(SIGNALS, { maxClockSkewS: 30 });
        for (const [topic, bytes] of msgs) check(r.handle(topic, bytes, T0));
      }),
      { numRuns: 3000 },
    );
  });

  // Plausible traffic of the mapped node (births, data with mostly consecutive sequence numbers,
  // deaths) interleaved with odd messages, so that every state the reader keeps is reached.
  const plausibleMetric = fc.record(
    {
      name: fc.constantFrom("O2/PV", "CO/PV", "Drive/Power", "Trip"),
      alias: fc.constantFrom(1, 2, 10, 11, 99),
      datatype: fc.integer({ min: 1, max: 12 }),
      isNull: fc.constantFrom(false, false, false, true),
      intValue: fc.nat({ max: 0xffffffff }),
      longValue: longArb,
      floatValue: fc.float(),
      doubleValue: fc.double(),
      booleanValue: fc.boolean(),
      properties: fc.record({ keys: fc.constant(["Quality"]), values: fc.tuple(fc.record({ type: fc.constant(3), intValue: fc.constantFrom(0, 192, 500, 0x44, 7) })) }),
    },
    { requiredKeys: ["datatype"] },
  );
  type Step =
    | { kind: "odd"; topic: string; body: Buffer }
    | { kind: "birth" }
    | { kind: "data"; skip: number; device: boolean; metrics: object[] }
    | { kind: "death"; device: boolean; staleBdSeq: boolean };
  const stepArb: fc.Arbitrary<Step> = fc.oneof(
    { weight: 2, arbitrary: fc.tuple(topicArb, bodyArb).map(([topic, body]) => ({ kind: "odd" as const, topic, body })) },
    { weight: 1, arbitrary: fc.constant({ kind: "birth" as const }) },
    {
      weight: 5,
      arbitrary: fc.record({
        kind: fc.constant("data" as const),
        skip: fc.oneof({ weight: 9, arbitrary: fc.constant(0) }, { weight: 1, arbitrary: fc.integer({ min: 1, max: 300 }) }),
        device: fc.boolean(),
        metrics: fc.array(plausibleMetric, { minLength: 1, maxLength: 4 }),
      }),
    },
    { weight: 1, arbitrary: fc.record({ kind: fc.constant("death" as const), device: fc.boolean(), staleBdSeq: fc.boolean() }) },
  );

  it("random valid-but-odd payloads in random order", () => {
    fc.assert(
      fc.property(fc.array(stepArb, { maxLength: 25 }), (steps) => {
        const r = new SparkplugReader(SIGNALS, { maxClockSkewS: 30 });
        let t = T0;
        let next = 0;
        const at = (type: string, device: boolean) => `spBv1.0/${G}/${type}/${N}${device ? "/vm2-a113" : ""}`;
        for (const st of steps) {
          t += 100;
          if (st.kind === "odd") check(r.handle(st.topic, st.body, t));
          else if (st.kind === "birth") {
            check(r.handle(at("NBIRTH", false), nbirth(t), t));
            check(r.handle(at("DBIRTH", true), dbirth(t), t));
            next = 2;
          } else if (st.kind === "data") {
            const seq = (next + st.skip) % 256;
            next = (seq + 1) % 256;
            const body = Buffer.from(Raw.encode(Raw.fromObject({ timestamp: t, seq, metrics: st.metrics.map((m) => ({ timestamp: t, ...m })) })).finish());
            check(r.handle(at(st.device ? "DDATA" : "NDATA", st.device), body, t));
          } else if (st.device) {
            check(r.handle(at("DDEATH", true), enc({ timestamp: t, seq: next }), t));
            next = (next + 1) % 256;
          } else check(r.handle(at("NDEATH", false), enc({ timestamp: t, metrics: [{ name: "bdSeq", type: "UInt64", value: st.staleBdSeq ? 6 : 7 }] }), t));
        }
      }),
      { numRuns: 3000 },
    );
    // The generators reach every path: values, refusals, marks and the message-level reasons.
    expect(seen.good).toBeGreaterThan(100);
    expect(seen.refused).toBeGreaterThan(100);
    expect(seen.marked).toBeGreaterThan(100);
    expect([...seen.notes].sort()).toEqual(["bad-payload", "bad-topic", "no-birth", "seq-gap", "stale-death", "unknown-alias"]);
  });
});
