// Sparkplug B (Eclipse Sparkplug 3.0, topic namespace spBv1.0) for the MQTT source. Pure: the
// receive time is an argument, nothing here touches the network. One SparkplugReader per source
// keeps, per edge node the config maps, what the specification asks a host application to keep:
//
//   NBIRTH ─▶ node online; metric names, aliases and types; bdSeq; seq 0
//     └▶ DBIRTH per device (aliases, types) ─▶ NDATA / DDATA by alias or name, seq + 1 mod 256
//   NDEATH with the birth's bdSeq ─▶ every signal of the node bad "node death" at once
//   DDEATH ─▶ the device's signals bad "device death" at once
//   a sequence gap ─▶ counted, and the node's signals uncertain until its next NBIRTH
//
// Read-only: a host application may ask an edge node for a new birth with an NCMD
// ("Node Control/Rebirth"). That is a write towards the plant's edge, so millwarden never sends
// it. Data from a node whose birth it has not seen (it started, or its session was lost, after the
// birth) are refused and counted: those signals stay unknown until the node's next birth.
//
// Decoding uses the generated protobuf reader of sparkplug-payload directly rather than its
// decodePayload, which throws on odd DataSets and reads a UInt32 above 2^31 as negative; here a
// metric nobody maps is never converted, and one bad metric never costs the rest of the message.
import type { SignalConfig, SourceConfig } from "../config/schema.js";
import type { Quality, Sample } from "../core/types.js";
import type { Decoded, RejectReason } from "./decode.js";
import { makeScaler } from "./scale.js";
import sparkplugProto from "sparkplug-payload/lib/sparkplugPayloadProto.js";

const PayloadCodec = sparkplugProto.org.eclipse.tahu.protobuf.Payload;
type RawPayload = ReturnType<typeof PayloadCodec.decode>;
type RawMetric = NonNullable<RawPayload["metrics"]>[number];

export const NAMESPACE = "spBv1.0";
/** A birth lists every metric of a node with its properties: allow far more than a JSON tag message. */
export const SPARKPLUG_MAX_PAYLOAD_BYTES = 4 * 1024 * 1024;

/** Sparkplug data types (the DataType enum of sparkplug_b.proto). */
const T = { Int8: 1, Int16: 2, Int32: 3, Int64: 4, UInt8: 5, UInt16: 6, UInt32: 7, UInt64: 8, Float: 9, Double: 10, Boolean: 11 } as const;
const TYPE_NAMES = ["Unknown", "Int8", "Int16", "Int32", "Int64", "UInt8", "UInt16", "UInt32", "UInt64", "Float", "Double", "Boolean", "String", "DateTime", "Text", "UUID", "DataSet", "Bytes", "File", "Template", "PropertySet", "PropertySetList"];
const typeName = (t: number) => TYPE_NAMES[t] ?? (t >= 22 && t <= 34 ? "an array type" : `type ${t}`);

/** Why a whole message was not read; counted per edge node (or topic) and reason. */
export type SparkplugRefusal =
  | "bad-topic"
  | "too-large"
  | "bad-payload"
  /** Data from a node or device whose birth has not been seen since it was last dead. */
  | "no-birth"
  /** A metric given only by an alias its birth did not define. */
  | "unknown-alias"
  /** The sequence number is not the one after the previous message's (a message lost or reordered). */
  | "seq-gap"
  /** An NDEATH whose bdSeq is not the current birth's: the will of an older session, ignored. */
  | "stale-death";

export interface SparkplugNote {
  /** group/node, group/node/device, or spBv1.0 for a topic that does not parse. */
  scope: string;
  reason: SparkplugRefusal;
  detail: string;
}

export interface SparkplugOutcome {
  /** One per mapped signal the message gave a value for, refused a value of, or marked. */
  decoded: Decoded[];
  /** Refusals and sequence gaps, to be counted and logged (rate-limited) by the source. */
  notes: SparkplugNote[];
  /** No configured signal comes from this edge node: nothing was read. */
  unmatched?: boolean;
  /** A command (NCMD, DCMD) or a host's STATE: not data, not counted. */
  ignored?: boolean;
}

export interface SparkplugNodeStats {
  group: string;
  node: string;
  online: boolean;
  births: number;
  deaths: number;
  seqGaps: number;
  /** Why the node's signals are uncertain until its next birth (a sequence gap), or null. */
  uncertainSince: string | null;
}

interface Target {
  signal: SignalConfig;
  scale: (raw: number) => number;
  lastValue: number | null;
  lastSourceTimeMs: number | null;
}

/** The node's own metrics, or one device's. */
interface Scope {
  label: string;
  born: boolean;
  /** alias (decimal string of the uint64) → metric name, from the birth. */
  aliases: Map<string, string>;
  /** metric name → datatype, from the birth (data messages may leave the datatype out). */
  types: Map<string, number>;
  /** metric name → signals mapped to it (from the config, fixed). */
  targets: Map<string, Target[]>;
}

interface NodeState {
  group: string;
  node: string;
  own: Scope;
  devices: Map<string, Scope>;
  bdSeq: string | null;
  nextSeq: number | null;
  uncertain: string | null;
  births: number;
  deaths: number;
  seqGaps: number;
}

type MessageType = "NBIRTH" | "NDEATH" | "NDATA" | "NCMD" | "DBIRTH" | "DDEATH" | "DDATA" | "DCMD";
const NODE_TYPES = new Set(["NBIRTH", "NDEATH", "NDATA", "NCMD"]);
const DEVICE_TYPES = new Set(["DBIRTH", "DDEATH", "DDATA", "DCMD"]);

export interface SparkplugTopic {
  group: string;
  type: MessageType;
  node: string;
  device?: string;
}

/** spBv1.0/<group>/<type>/<node>[/<device>]; "state" for spBv1.0/STATE/<host>; null when it is neither. */
export function parseSparkplugTopic(topic: string): SparkplugTopic | "state" | null {
  const parts = topic.split("/");
  if (parts[0] !== NAMESPACE) return null;
  if (parts[1] === "STATE" && parts.length === 3) return "state";
  if (parts.some((p) => p === "")) return null;
  const [, group, type, node, device] = parts;
  if (!group || !type || !node) return null;
  if (parts.length === 4 && NODE_TYPES.has(type)) return { group, type: type as MessageType, node };
  if (parts.length === 5 && DEVICE_TYPES.has(type) && device) return { group, type: type as MessageType, node, device };
  return null;
}

/** A protobuf uint64/int64 (a Long or a plain number) as a number; null when it is neither. */
export function longToNumber(v: unknown, signed = false): number | null {
  if (typeof v === "number") return Number.isFinite(v) ? v : null;
  if (v !== null && typeof v === "object" && "low" in v && "high" in v) {
    const { low, high } = v as { low: unknown; high: unknown };
    if (typeof low !== "number" || typeof high !== "number") return null;
    const big = (BigInt(high >>> 0) << 32n) | BigInt(low >>> 0);
    return Number(signed ? BigInt.asIntN(64, big) : big);
  }
  return null;
}

const has = (o: object, k: string) => Object.prototype.hasOwnProperty.call(o, k);
const aliasKey = (v: unknown): string | null => {
  const n = longToNumber(v);
  return n === null ? null : String(n);
};

type Converted = { ok: true; value: number } | { ok: false; reject: RejectReason; detail: string };

/** The numeric value of a metric of type `datatype`; Boolean reads as 1 or 0 (a state signal). */
export function metricValue(m: RawMetric, datatype: number): Converted {
  const int = has(m, "intValue") && typeof m.intValue === "number" ? m.intValue : null;
  const long = has(m, "longValue") ? m.longValue : null;
  const missing = (field: string): Converted => ({ ok: false, reject: "no-value", detail: `${typeName(datatype)} metric without its ${field}` });
  switch (datatype) {
    // Signed types travel as uint32: take the type's own low bits and sign-extend them, which reads
    // both encoders that sign-extend to 32 bits and those that do not.
    case T.Int8:
      return int === null ? missing("int_value") : { ok: true, value: (int << 24) >> 24 };
    case T.Int16:
      return int === null ? missing("int_value") : { ok: true, value: (int << 16) >> 16 };
    case T.Int32:
      return int === null ? missing("int_value") : { ok: true, value: int | 0 };
    case T.UInt8:
    case T.UInt16:
    case T.UInt32: {
      // UInt32 is an int_value in the specification; some encoders (sparkplug-payload among them) use long_value.
      if (int !== null) return { ok: true, value: int >>> 0 };
      const n = long === null ? null : longToNumber(long);
      return n === null ? missing("int_value") : { ok: true, value: n };
    }
    case T.Int64:
    case T.UInt64: {
      const n = long === null ? null : longToNumber(long, datatype === T.Int64);
      if (n !== null) return { ok: true, value: n };
      return int === null ? missing("long_value") : { ok: true, value: datatype === T.Int64 ? int | 0 : int >>> 0 };
    }
    case T.Float:
    case T.Double: {
      const field = datatype === T.Float ? "floatValue" : "doubleValue";
      const v = has(m, field) ? m[field] : has(m, "floatValue") ? m.floatValue : has(m, "doubleValue") ? m.doubleValue : null;
      if (typeof v !== "number") return missing(datatype === T.Float ? "float_value" : "double_value");
      if (!Number.isFinite(v)) return { ok: false, reject: "not-a-number", detail: `${typeName(datatype)} metric value ${v}, expected a finite number` };
      return { ok: true, value: v };
    }
    case T.Boolean:
      return has(m, "booleanValue") && typeof m.booleanValue === "boolean" ? { ok: true, value: m.booleanValue ? 1 : 0 } : missing("boolean_value");
    default:
      return { ok: false, reject: "unsupported-type", detail: `metric of ${typeName(datatype)}, expected Int8..UInt64, Float, Double or Boolean` };
  }
}

/**
 * The quality a metric's "Quality" property states (Sparkplug 3.0, Quality Codes: 0 BAD,
 * 192 GOOD, 500 STALE, a signed 32-bit integer). Other codes are read as OPC-style codes: below
 * 256 the OPC DA quality bits (0xC0 good, 0x40 uncertain, 0x00 bad), from 2^16 up an OPC UA
 * StatusCode's severity bits. null when the metric has no such property.
 */
export function edgeQuality(m: RawMetric): { quality: Quality; reason: string | null } | null {
  const props = has(m, "properties") ? m.properties : null;
  if (!props || !Array.isArray(props.keys) || !Array.isArray(props.values)) return null;
  const i = props.keys.indexOf("Quality");
  if (i < 0) return null;
  const pv = props.values[i];
  if (!pv || pv.isNull === true) return null;
  const code = typeof pv.intValue === "number" ? pv.intValue | 0 : longToNumber(pv.longValue ?? null, true);
  if (code === null) return { quality: "uncertain", reason: "edge quality property without a code" };
  if (code === 192) return { quality: "good", reason: null };
  if (code === 0) return { quality: "bad", reason: "edge quality 0 (BAD)" };
  if (code === 500) return { quality: "uncertain", reason: "edge quality 500 (STALE)" };
  if (code > 0 && code < 256) {
    const bits = code & 0xc0;
    if (bits === 0xc0) return { quality: "good", reason: null };
    return bits === 0x40 ? { quality: "uncertain", reason: `edge quality ${code} (OPC uncertain)` } : { quality: "bad", reason: `edge quality ${code} (OPC bad)` };
  }
  const u = code >>> 0;
  if (u >= 0x10000) {
    const severity = u >>> 30;
    if (severity === 0) return { quality: "good", reason: null };
    const hex = `0x${u.toString(16).toUpperCase().padStart(8, "0")}`;
    return severity === 1 ? { quality: "uncertain", reason: `edge status ${hex} (uncertain)` } : { quality: "bad", reason: `edge status ${hex} (bad)` };
  }
  return { quality: "uncertain", reason: `edge quality ${code}, not a known code` };
}

const worse = (a: Quality, b: Quality): Quality => (a === "bad" || b === "bad" ? "bad" : a === "uncertain" || b === "uncertain" ? "uncertain" : "good");

const newScope = (label: string): Scope => ({ label, born: false, aliases: new Map(), types: new Map(), targets: new Map() });

export class SparkplugReader {
  private readonly nodes = new Map<string, NodeState>();
  private readonly skewMs: number;

  /** `signals`: those of this source with a sparkplug: mapping (others are left out). */
  constructor(signals: SignalConfig[], source: Pick<SourceConfig, "maxClockSkewS">) {
    this.skewMs = source.maxClockSkewS * 1000;
    for (const s of signals) {
      const sp = s.sparkplug;
      if (!sp) continue;
      const key = `${sp.group}/${sp.node}`;
      let n = this.nodes.get(key);
      if (!n) {
        n = { group: sp.group, node: sp.node, own: newScope(key), devices: new Map(), bdSeq: null, nextSeq: null, uncertain: null, births: 0, deaths: 0, seqGaps: 0 };
        this.nodes.set(key, n);
      }
      let scope = n.own;
      if (sp.device !== undefined) {
        scope = n.devices.get(sp.device) ?? newScope(`${key}/${sp.device}`);
        n.devices.set(sp.device, scope);
      }
      const list = scope.targets.get(sp.metric) ?? [];
      list.push({ signal: s, scale: makeScaler(s), lastValue: null, lastSourceTimeMs: null });
      scope.targets.set(sp.metric, list);
    }
  }

  /** Whether any signal is mapped (the source then reads topics under spBv1.0/). */
  get size(): number {
    return this.nodes.size;
  }

  /** One filter per message type a mapped edge node publishes: births, deaths and data, never commands. */
  filters(): string[] {
    const out: string[] = [];
    for (const { group, node } of this.nodes.values()) {
      const p = `${NAMESPACE}/${group}`;
      out.push(`${p}/NBIRTH/${node}`, `${p}/NDEATH/${node}`, `${p}/NDATA/${node}`, `${p}/DBIRTH/${node}/+`, `${p}/DDEATH/${node}/+`, `${p}/DDATA/${node}/+`);
    }
    return out;
  }

  stats(): SparkplugNodeStats[] {
    return [...this.nodes.values()].map((n) => ({ group: n.group, node: n.node, online: n.own.born, births: n.births, deaths: n.deaths, seqGaps: n.seqGaps, uncertainSince: n.uncertain }));
  }

  /** Read one message. Never throws: whatever cannot be read is a note or a refused sample with its reason. */
  handle(topic: string, payload: Uint8Array, receiveTimeMs: number): SparkplugOutcome {
    const out: SparkplugOutcome = { decoded: [], notes: [] };
    const t = parseSparkplugTopic(topic);
    if (t === "state") return { ...out, ignored: true };
    if (t === null) {
      // One scope for all such topics: a wildcard subscription must not grow the counters without bound.
      out.notes.push({ scope: NAMESPACE, reason: "bad-topic", detail: `topic ${JSON.stringify(topic.slice(0, 120))} is not spBv1.0/<group>/<NBIRTH|NDEATH|NDATA|DBIRTH|DDEATH|DDATA>/<node>[/<device>]` });
      return out;
    }
    const node = this.nodes.get(`${t.group}/${t.node}`);
    if (!node) return { ...out, unmatched: true };
    if (t.type === "NCMD" || t.type === "DCMD") return { ...out, ignored: true };
    const where = t.device === undefined ? node.own.label : `${node.own.label}/${t.device}`;
    if (payload.length > SPARKPLUG_MAX_PAYLOAD_BYTES) {
      out.notes.push({ scope: where, reason: "too-large", detail: `${t.type} of ${payload.length} bytes exceeds ${SPARKPLUG_MAX_PAYLOAD_BYTES}` });
      return out;
    }
    let p: RawPayload;
    try {
      p = PayloadCodec.decode(payload);
    } catch (e) {
      out.notes.push({ scope: where, reason: "bad-payload", detail: `${t.type} is not a Sparkplug B payload: ${String((e as Error)?.message ?? e).slice(0, 120)}` });
      return out;
    }
    const metrics = Array.isArray(p.metrics) ? p.metrics : [];
    const payloadTimeMs = has(p, "timestamp") ? longToNumber(p.timestamp) : null;
    const ctx = { receiveTimeMs, payloadTimeMs, out };

    switch (t.type) {
      case "NBIRTH": {
        node.births++;
        node.own.born = true;
        node.uncertain = null;
        node.bdSeq = this.bdSeqOf(metrics);
        // The devices follow with their own births; until then their data are not read.
        for (const d of node.devices.values()) this.unborn(d);
        this.learn(node.own, metrics);
        const seq = has(p, "seq") ? longToNumber(p.seq) : null;
        if (seq === null || !Number.isInteger(seq) || seq < 0 || seq > 255) {
          node.nextSeq = null;
          this.gap(node, `the birth's sequence number is ${seq === null ? "missing" : seq}`, ctx, where);
        } else node.nextSeq = (seq + 1) % 256;
        this.values(node, node.own, metrics, ctx);
        return out;
      }
      case "NDEATH": {
        const bd = this.bdSeqOf(metrics);
        if (node.bdSeq !== null && bd !== null && bd !== node.bdSeq) {
          out.notes.push({ scope: where, reason: "stale-death", detail: `NDEATH with bdSeq ${bd}, the current birth has bdSeq ${node.bdSeq}: the will of an older session, ignored` });
          return out;
        }
        node.deaths++;
        this.unborn(node.own);
        for (const d of node.devices.values()) this.unborn(d);
        node.nextSeq = null;
        node.uncertain = null;
        this.mark(node.own, "bad", "node death", receiveTimeMs, out);
        for (const d of node.devices.values()) this.mark(d, "bad", "node death", receiveTimeMs, out);
        return out;
      }
      default:
        break;
    }

    // NDATA, DBIRTH, DDATA, DDEATH: only after the node's birth, each with the next sequence number.
    if (!node.own.born) {
      out.notes.push({ scope: where, reason: "no-birth", detail: `${t.type} before the node's NBIRTH (or after its NDEATH): not read; its signals stay unknown until the node's next birth` });
      return out;
    }
    this.checkSeq(node, p, t.type, ctx, where);
    let scope = node.own;
    if (t.device !== undefined) {
      const d = node.devices.get(t.device);
      if (!d) return out; // a device no signal maps: its sequence number counted, nothing else to read
      scope = d;
    }
    if (t.type === "DBIRTH") {
      scope.born = true;
      this.learn(scope, metrics);
    } else if (t.type === "DDEATH") {
      this.unborn(scope);
      this.mark(scope, "bad", "device death", receiveTimeMs, out);
      return out;
    } else if (!scope.born) {
      out.notes.push({ scope: where, reason: "no-birth", detail: `DDATA before the device's DBIRTH (or after its DDEATH): not read; its signals stay unknown until the device's next birth` });
      return out;
    }
    this.values(node, scope, metrics, ctx);
    return out;
  }

  private unborn(scope: Scope) {
    scope.born = false;
    scope.aliases.clear();
    scope.types.clear();
  }

  private bdSeqOf(metrics: RawMetric[]): string | null {
    const m = metrics.find((x) => has(x, "name") && x.name === "bdSeq");
    if (!m) return null;
    const v = has(m, "longValue") ? longToNumber(m.longValue) : has(m, "intValue") && typeof m.intValue === "number" ? m.intValue >>> 0 : null;
    return v === null ? null : String(v);
  }

  /** Names, aliases and types from a birth. */
  private learn(scope: Scope, metrics: RawMetric[]) {
    scope.aliases.clear();
    scope.types.clear();
    for (const m of metrics) {
      if (!has(m, "name") || typeof m.name !== "string") continue;
      if (has(m, "alias")) {
        const a = aliasKey(m.alias);
        if (a !== null) scope.aliases.set(a, m.name);
      }
      if (has(m, "datatype") && typeof m.datatype === "number") scope.types.set(m.name, m.datatype);
    }
  }

  private checkSeq(node: NodeState, p: RawPayload, type: string, ctx: Ctx, where: string) {
    const seq = has(p, "seq") ? longToNumber(p.seq) : null;
    const valid = seq !== null && Number.isInteger(seq) && seq >= 0 && seq <= 255;
    if (valid && node.nextSeq !== null && seq === node.nextSeq) {
      node.nextSeq = (seq + 1) % 256;
      return;
    }
    const expected = node.nextSeq;
    node.nextSeq = valid ? (seq + 1) % 256 : null;
    // Already uncertain without a sequence to follow (missing or broken in an earlier message): one note is enough.
    if (expected === null && node.uncertain !== null) return;
    this.gap(node, `${type} has sequence number ${seq === null ? "none" : seq}, expected ${expected === null ? "a valid one" : expected}`, ctx, where);
  }

  /** A lost or reordered message: counted, and every signal of the node uncertain until its next birth. */
  private gap(node: NodeState, why: string, ctx: Ctx, where: string) {
    node.seqGaps++;
    node.uncertain = `sequence gap: ${why}; uncertain until the node's next birth`;
    ctx.out.notes.push({ scope: where, reason: "seq-gap", detail: node.uncertain });
    // Only scopes alive now: a dead device's signals stay bad, not "uncertain" at their last value.
    for (const scope of [node.own, ...node.devices.values()]) if (scope.born) this.mark(scope, "uncertain", node.uncertain, ctx.receiveTimeMs, ctx.out);
  }

  /**
   * Every signal of `scope` that has a value gets a sample saying so at once. Its source time is
   * 1 ms after its last value's, so a later value of the node (by its own clock) is still newer
   * and accepted; the receive time is now. A signal that never had a value stays "no data yet".
   */
  private mark(scope: Scope, quality: "bad" | "uncertain", reason: string, receiveTimeMs: number, out: SparkplugOutcome) {
    for (const list of scope.targets.values()) {
      for (const tg of list) {
        if (tg.lastSourceTimeMs === null) continue;
        const value = quality === "bad" ? Number.NaN : tg.lastValue ?? Number.NaN;
        const sourceTimeMs = tg.lastSourceTimeMs + 1;
        tg.lastSourceTimeMs = sourceTimeMs;
        out.decoded.push({ sample: { signal: tg.signal.id, value, quality: Number.isNaN(value) ? "bad" : quality, qualityReason: reason, sourceTimeMs, receiveTimeMs } });
      }
    }
  }

  /** The mapped metrics of a birth or data message as samples. */
  private values(node: NodeState, scope: Scope, metrics: RawMetric[], ctx: Ctx) {
    const unknownAliases: string[] = [];
    for (const m of metrics) {
      let name: string | null = has(m, "name") && typeof m.name === "string" ? m.name : null;
      if (name === null) {
        const a = has(m, "alias") ? aliasKey(m.alias) : null;
        name = a === null ? null : scope.aliases.get(a) ?? null;
        if (name === null) {
          if (unknownAliases.length < 5) unknownAliases.push(a ?? "none");
          else if (unknownAliases.length === 5) unknownAliases.push("...");
          continue;
        }
      }
      const targets = scope.targets.get(name);
      if (!targets) continue;
      // Store-and-forward history is not a current value; the core takes values in time order.
      if (has(m, "isHistorical") && m.isHistorical === true) continue;
      for (const tg of targets) ctx.out.decoded.push(this.sample(node, scope, tg, name, m, ctx));
    }
    if (unknownAliases.length) {
      ctx.out.notes.push({ scope: scope.label, reason: "unknown-alias", detail: `metric alias${unknownAliases.length > 1 ? "es" : ""} ${unknownAliases.join(", ")} not defined by the birth: those metrics not read` });
    }
  }

  private sample(node: NodeState, scope: Scope, tg: Target, name: string, m: RawMetric, ctx: Ctx): Decoded {
    const { receiveTimeMs } = ctx;
    const id = tg.signal.id;
    const refuse = (reject: RejectReason, detail: string): Decoded => {
      // Just after the last value, like a mark: the node's next value by its own clock stays newer.
      const sourceTimeMs = tg.lastSourceTimeMs === null ? receiveTimeMs : tg.lastSourceTimeMs + 1;
      tg.lastSourceTimeMs = sourceTimeMs;
      return { sample: { signal: id, value: Number.NaN, quality: "bad", qualityReason: reject, sourceTimeMs, receiveTimeMs }, reject, detail: `metric "${name}" of ${scope.label}: ${detail}` };
    };
    let sourceTimeMs = receiveTimeMs;
    const rawTime = has(m, "timestamp") ? longToNumber(m.timestamp) : ctx.payloadTimeMs;
    if (rawTime !== null) {
      // 8.64e15 ms is the last instant a JavaScript Date can hold (ECMA-262 §21.4.1.1).
      if (!Number.isSafeInteger(rawTime) || rawTime <= 0 || rawTime > 8.64e15) return refuse("bad-time", `timestamp ${rawTime}, expected milliseconds since 1970 (UTC)`);
      if (rawTime - receiveTimeMs > this.skewMs) return refuse("time-in-future", `timestamp ${new Date(rawTime).toISOString()} is more than ${this.skewMs / 1000} s ahead of the box's clock`);
      sourceTimeMs = rawTime;
    }
    let quality: Quality = "good";
    let reason: string | null = null;
    let value: number;
    if (has(m, "isNull") && m.isNull === true) {
      quality = "bad";
      reason = "null value (is_null)";
      value = Number.NaN;
    } else {
      const datatype = has(m, "datatype") && typeof m.datatype === "number" ? m.datatype : scope.types.get(name);
      if (datatype === undefined) return refuse("unsupported-type", "no datatype in the message nor in the birth");
      const v = metricValue(m, datatype);
      if (!v.ok) return refuse(v.reject, v.detail);
      value = tg.scale(v.value);
      if (!Number.isFinite(value)) return refuse("not-a-number", `value ${v.value} gives ${value} after scale and unit conversion`);
      const q = edgeQuality(m);
      if (q) {
        quality = q.quality;
        reason = q.reason;
      }
    }
    if (node.uncertain !== null && quality !== "bad") {
      quality = worse(quality, "uncertain");
      reason = reason ? `${reason}; ${node.uncertain}` : node.uncertain;
    }
    const sample: Sample = { signal: id, value, quality, sourceTimeMs, receiveTimeMs };
    if (reason !== null) sample.qualityReason = reason;
    if (tg.lastSourceTimeMs === null || sourceTimeMs > tg.lastSourceTimeMs) {
      tg.lastSourceTimeMs = sourceTimeMs;
      tg.lastValue = Number.isFinite(value) ? value : tg.lastValue;
    }
    return { sample };
  }
}

interface Ctx {
  receiveTimeMs: number;
  payloadTimeMs: number | null;
  out: SparkplugOutcome;
}
