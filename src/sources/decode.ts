// Turning a message body into samples of the signals mapped to its topic. Pure:
// the receive time is an argument. Bad input never throws; it becomes a bad-quality
// sample with a reason, so the signal shows bad rather than keeping its last value.
// A signal's functionCheckPath reads an analyser's function-check flag from the same
// message, so the sample carries it (Sample.functionCheck) with its value.
// Sparkplug B bodies (protobuf, topics under spBv1.0/) are read by sparkplug.ts instead.
import type { SignalConfig, SourceConfig } from "../config/schema.js";
import { unitDef } from "../config/units.js";
import type { Quality, Sample } from "../core/types.js";

export type RejectReason =
  | "not-json"
  | "no-value"
  | "not-a-number"
  | "bad-time"
  | "time-in-future"
  | "too-large"
  /** Sparkplug B: a metric of a type that is not a number (String, DataSet, Template, arrays, ...). */
  | "unsupported-type";

export interface Decoded {
  sample: Sample;
  /** Set when the message was refused; the sample then carries quality bad. */
  reject?: RejectReason;
  detail?: string;
}

/** Messages larger than this are refused without parsing (a sane tag message is tiny). */
export const MAX_PAYLOAD_BYTES = 64 * 1024;

function getPath(obj: unknown, path: string): unknown {
  let cur: unknown = obj;
  for (const part of path.split(".")) {
    if (cur === null || typeof cur !== "object") return undefined;
    cur = (cur as Record<string, unknown>)[part];
  }
  return cur;
}

function parseTime(raw: unknown): number | null {
  // 8.64e15 ms either side of 1970 is all a JavaScript Date can hold (ECMA-262 §21.4.1.1).
  if (typeof raw === "number") return Number.isFinite(raw) && Math.abs(raw) <= 8.64e15 ? raw : null;
  if (typeof raw === "string" && raw.length <= 40) {
    // RFC 3339 only: a date alone or a local time without offset is ambiguous on a plant network.
    if (!/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d+)?(Z|[+-]\d{2}:\d{2})$/.test(raw)) return null;
    const t = Date.parse(raw);
    return Number.isFinite(t) ? t : null;
  }
  return null;
}

function parseQuality(raw: unknown): Quality | null {
  return raw === "good" || raw === "uncertain" || raw === "bad" ? raw : null;
}

/**
 * A function-check flag: true, a non-zero number or "true"/"1"/"on"/"yes" means in function
 * check; absent, null, false, 0 or "false"/"0"/"off"/"no"/"" means not. Anything else is null:
 * the flag cannot be read, and the value is then not trusted either (uncertain) rather than
 * guessed either way (a wrong "in check" would suppress advisories by design).
 */
export function parseFunctionCheckFlag(raw: unknown): boolean | null {
  if (raw === undefined || raw === null) return false;
  if (typeof raw === "boolean") return raw;
  if (typeof raw === "number") return Number.isFinite(raw) ? raw !== 0 : null;
  if (typeof raw === "string") {
    const w = raw.trim().toLowerCase();
    if (w === "true" || w === "1" || w === "on" || w === "yes") return true;
    if (w === "false" || w === "0" || w === "off" || w === "no" || w === "") return false;
  }
  return null;
}

export interface SignalDecoder {
  signal: SignalConfig;
  decode(payload: Buffer | string, parsed: unknown, parseError: string | null, receiveTimeMs: number): Decoded;
}

/** Parse a body once for all the signals of a topic. */
export function parseBody(payload: Buffer | string, format: "json" | "number"): { parsed: unknown; error: string | null } {
  if (payload.length > MAX_PAYLOAD_BYTES) return { parsed: undefined, error: "too-large" };
  const textBody = typeof payload === "string" ? payload : payload.toString("utf8");
  if (format === "number") return { parsed: textBody.trim(), error: null };
  try {
    return { parsed: JSON.parse(textBody), error: null };
  } catch {
    return { parsed: undefined, error: "not-json" };
  }
}

export function makeDecoder(signal: SignalConfig, source: SourceConfig): SignalDecoder {
  const p = source.payload;
  const valuePath = signal.valuePath ?? p.valuePath;
  const checkPath = signal.functionCheckPath;
  const toCanonical = unitDef(signal.unit).toCanonical;
  const skewMs = source.maxClockSkewS * 1000;

  const bad = (receiveTimeMs: number, reject: RejectReason, detail: string): Decoded => ({
    sample: { signal: signal.id, value: Number.NaN, quality: "bad", qualityReason: reject, sourceTimeMs: receiveTimeMs, receiveTimeMs },
    reject,
    detail,
  });

  return {
    signal,
    decode(payload, parsed, parseError, receiveTimeMs) {
      if (parseError === "too-large") return bad(receiveTimeMs, "too-large", `payload of ${payload.length} bytes exceeds ${MAX_PAYLOAD_BYTES}`);
      if (parseError) return bad(receiveTimeMs, "not-json", "payload is not valid JSON");
      let raw: unknown;
      let time: unknown;
      let quality: unknown;
      let inCheck: boolean | null = false;
      let checkRaw: unknown;
      if (p.format === "number") raw = parsed;
      else {
        raw = getPath(parsed, valuePath);
        if (p.timePath) time = getPath(parsed, p.timePath);
        if (p.qualityPath) quality = getPath(parsed, p.qualityPath);
        if (checkPath) inCheck = parseFunctionCheckFlag((checkRaw = getPath(parsed, checkPath)));
      }
      if (raw === undefined || raw === null) return bad(receiveTimeMs, "no-value", `no value at "${valuePath}"`);
      // Numbers as strings are accepted only when the whole string is a number.
      const num = typeof raw === "number" ? raw : typeof raw === "string" && raw.trim() !== "" ? Number(raw) : Number.NaN;
      if (!Number.isFinite(num)) return bad(receiveTimeMs, "not-a-number", `value at "${valuePath}" is ${JSON.stringify(raw).slice(0, 40)}, expected a finite number`);
      let sourceTimeMs = receiveTimeMs;
      if (time !== undefined) {
        const t = parseTime(time);
        if (t === null) return bad(receiveTimeMs, "bad-time", `time at "${p.timePath}" is ${JSON.stringify(time).slice(0, 40)}, expected RFC 3339 or epoch ms`);
        if (t - receiveTimeMs > skewMs) return bad(receiveTimeMs, "time-in-future", `time ${new Date(t).toISOString()} is more than ${source.maxClockSkewS} s ahead of the box's clock`);
        sourceTimeMs = t;
      }
      let q = quality === undefined ? "good" : parseQuality(quality) ?? "uncertain";
      const flagUnreadable = inCheck === null && q === "good";
      if (flagUnreadable) q = "uncertain";
      // Scale, offset and the unit's conversion can overflow a finite reading (1e308 mbar in Pa).
      const value = toCanonical(num * signal.scale + signal.offset);
      if (!Number.isFinite(value)) return bad(receiveTimeMs, "not-a-number", `value ${num} at "${valuePath}" does not fit a number once scaled and converted from ${signal.unit}`);
      const sample: Sample = {
        signal: signal.id,
        value,
        quality: q,
        sourceTimeMs,
        receiveTimeMs,
      };
      if (flagUnreadable) sample.qualityReason = `function check flag at "${checkPath}" is ${JSON.stringify(checkRaw).slice(0, 40)}, expected true/false or 1/0`;
      else if (q !== "good") sample.qualityReason = quality === undefined ? "" : `payload quality ${JSON.stringify(quality).slice(0, 20)}`;
      if (inCheck === true) sample.functionCheck = true;
      return { sample };
    },
  };
}
