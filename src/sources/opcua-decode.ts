// One OPC UA data change → one sample of the signal the monitored item belongs to. Pure:
// the receive time is an argument. Bad input never throws: it becomes a bad-quality sample
// with a reason, so the signal shows bad rather than keeping its last value.
//
//   quality        from the StatusCode's severity bits (OPC UA Part 4, StatusCode: bits 31-30,
//                  00 Good, 01 Uncertain, 10 Bad, 11 reserved and taken as Bad); the code's name
//                  (e.g. "BadSensorFailure", "UncertainLastUsableValue") is kept as qualityReason
//   sourceTimeMs   the SourceTimestamp; the ServerTimestamp where the server gives none; the
//                  receive time where it gives neither
//   value          a scalar number (any numeric DataType; Boolean as 1/0), with the signal's
//                  scale, offset and unit applied as for MQTT (scale.ts); NaN when quality is bad
import { DataType, VariantArrayType } from "node-opcua";
import type { SignalConfig } from "../config/schema.js";
import type { Quality, Sample } from "../core/types.js";
import { makeScaler } from "./scale.js";

export type OpcUaRejectReason = "not-a-number" | "time-in-future";

/** The parts of a DataValue the decoder reads (node-opcua's DataValue has them). */
export interface DataValueLike {
  value: { dataType: DataType; arrayType: VariantArrayType; value: unknown } | null;
  statusCode: { value: number; name: string };
  sourceTimestamp: Date | null;
  serverTimestamp: Date | null;
}

export interface OpcUaDecoded {
  sample: Sample;
  /** Set when millwarden refused the value; the sample then carries quality bad. */
  reject?: OpcUaRejectReason;
  detail?: string;
}

/** Quality from the severity bits of a 32-bit OPC UA StatusCode. */
export function qualityOf(statusCode: number): Quality {
  const severity = (statusCode >>> 30) & 0b11;
  return severity === 0 ? "good" : severity === 1 ? "uncertain" : "bad";
}

/** DateTime 0 (1601-01-01) means "no timestamp" on the wire; node-opcua gives null or that date. */
const OPCUA_NO_TIME_MS = Date.UTC(1601, 0, 2);

function timeMs(d: Date | null | undefined): number | null {
  if (!(d instanceof Date)) return null;
  const t = d.getTime();
  return Number.isFinite(t) && t > OPCUA_NO_TIME_MS ? t : null;
}

const NUMERIC = new Set<DataType>([
  DataType.SByte, DataType.Byte, DataType.Int16, DataType.UInt16, DataType.Int32, DataType.UInt32,
  DataType.Float, DataType.Double,
]);

/** A finite number from a scalar variant, or null (with what was found). */
export function variantNumber(v: DataValueLike["value"]): { num: number } | { found: string } {
  if (v === null || v.dataType === DataType.Null) return { found: "no value (Null)" };
  const typeName = DataType[v.dataType] ?? `DataType ${v.dataType}`;
  if (v.arrayType !== VariantArrayType.Scalar) return { found: `an array of ${typeName}` };
  let num: number | null = null;
  if (NUMERIC.has(v.dataType) && typeof v.value === "number") num = v.value;
  else if (v.dataType === DataType.Boolean && typeof v.value === "boolean") num = v.value ? 1 : 0;
  else if ((v.dataType === DataType.Int64 || v.dataType === DataType.UInt64) && Array.isArray(v.value) && v.value.length === 2) {
    // node-opcua carries 64-bit integers as [high, low] 32-bit words.
    const [hi, lo] = v.value as [number, number];
    num = hi * 2 ** 32 + lo;
  } else if ((v.dataType === DataType.Int64 || v.dataType === DataType.UInt64) && typeof v.value === "bigint") num = Number(v.value);
  if (num === null) return { found: `a ${typeName}` };
  if (!Number.isFinite(num)) return { found: `${typeName} ${String(num)}` };
  return { num };
}

export interface OpcUaDecoder {
  signal: SignalConfig;
  decode(dv: DataValueLike, receiveTimeMs: number): OpcUaDecoded;
}

export function makeOpcUaDecoder(signal: SignalConfig, opts: { maxClockSkewS: number }): OpcUaDecoder {
  const scaled = makeScaler(signal);
  const skewMs = opts.maxClockSkewS * 1000;
  return {
    signal,
    decode(dv, receiveTimeMs) {
      const sourceTimeMs = timeMs(dv.sourceTimestamp) ?? timeMs(dv.serverTimestamp) ?? receiveTimeMs;
      const bad = (reason: string, t: number): Sample => ({ signal: signal.id, value: Number.NaN, quality: "bad", qualityReason: reason, sourceTimeMs: t, receiveTimeMs });
      if (sourceTimeMs - receiveTimeMs > skewMs) {
        return {
          sample: bad("time-in-future", receiveTimeMs),
          reject: "time-in-future",
          detail: `source time ${new Date(sourceTimeMs).toISOString()} is more than ${opts.maxClockSkewS} s ahead of the box's clock`,
        };
      }
      const quality = qualityOf(dv.statusCode.value);
      if (quality === "bad") return { sample: bad(dv.statusCode.name, sourceTimeMs) };
      const n = variantNumber(dv.value);
      if (!("num" in n)) {
        return { sample: bad("not-a-number", sourceTimeMs), reject: "not-a-number", detail: `expected a scalar number, found ${n.found}` };
      }
      const sample: Sample = { signal: signal.id, value: scaled(n.num), quality, sourceTimeMs, receiveTimeMs };
      if (quality === "uncertain") sample.qualityReason = dv.statusCode.name;
      return { sample };
    },
  };
}
