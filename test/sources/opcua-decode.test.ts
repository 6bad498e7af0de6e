// The OPC UA data change → sample mapping, fed with real node-opcua DataValues and
// StatusCodes (node-opcua is the reference library for the wire types here).
import fc from "fast-check";
import { DataType, DataValue, StatusCodes, Variant, VariantArrayType, standardUnits } from "node-opcua";
import { describe, expect, it } from "vitest";
import type { SignalConfig, SourceConfig } from "../../src/config/schema.js";
import { UNIT_NAMES } from "../../src/config/units.js";
import { makeDecoder } from "../../src/sources/decode.js";
import { makeOpcUaDecoder, qualityOf } from "../../src/sources/opcua-decode.js";
import { codeOfUnitId, OPCUA_UNITS, uneceUnitId, unitMismatch } from "../../src/sources/opcua-units.js";
import { makeScaler } from "../../src/sources/scale.js";

const sig = (over: Partial<SignalConfig> = {}): SignalConfig => ({
  id: "vm2.outlet.temp", name: "Mill outlet", tag: "VM2-TT-111", source: "plc", nodeId: "ns=1;s=VM2-TT-111",
  unit: "degC", scale: 1, offset: 0, expectedPeriodS: 1, ...over,
});
const RECV = Date.UTC(2026, 0, 12, 6, 0, 0);
const dv = (value: Variant, statusCode = StatusCodes.Good, sourceTimestamp: Date | null = new Date(RECV - 1500), serverTimestamp: Date | null = new Date(RECV - 1000)) =>
  new DataValue({ value, statusCode, sourceTimestamp, serverTimestamp });
const dbl = (v: number) => new Variant({ dataType: DataType.Double, value: v });

describe("quality from the StatusCode severity", () => {
  // OPC UA Part 4 (OPC 10000-4), StatusCode: bits 31-30 are the severity,
  // 00 Good, 01 Uncertain, 10 Bad (11 reserved, taken as Bad here).
  it.each([
    ["Good", "good"],
    ["GoodClamped", "good"],
    ["GoodLocalOverride", "good"],
    ["UncertainLastUsableValue", "uncertain"],
    ["UncertainSensorNotAccurate", "uncertain"],
    ["UncertainEngineeringUnitsExceeded", "uncertain"],
    ["BadSensorFailure", "bad"],
    ["BadCommunicationError", "bad"],
    ["BadNodeIdUnknown", "bad"],
    ["BadOutOfService", "bad"],
  ])("%s is %s", (name, quality) => {
    const code = (StatusCodes as unknown as Record<string, { value: number }>)[name]!;
    expect(qualityOf(code.value)).toBe(quality);
  });
  it("the reserved severity 11 counts as bad", () => {
    expect(qualityOf(0xc0000000)).toBe("bad");
  });
});

describe("makeOpcUaDecoder", () => {
  const d = makeOpcUaDecoder(sig(), { maxClockSkewS: 30 });

  it("takes the value and the source timestamp; receive time is the argument", () => {
    expect(d.decode(dv(dbl(88.25)), RECV)).toEqual({
      sample: { signal: "vm2.outlet.temp", value: 88.25, quality: "good", sourceTimeMs: RECV - 1500, receiveTimeMs: RECV },
    });
  });

  it("falls back to the server timestamp, then to the receive time", () => {
    expect(d.decode(dv(dbl(1), StatusCodes.Good, null), RECV).sample.sourceTimeMs).toBe(RECV - 1000);
    expect(d.decode(dv(dbl(1), StatusCodes.Good, null, null), RECV).sample.sourceTimeMs).toBe(RECV);
    // DateTime 0 on the wire is 1601-01-01: "no timestamp".
    expect(d.decode(dv(dbl(1), StatusCodes.Good, new Date(Date.UTC(1601, 0, 1)), null), RECV).sample.sourceTimeMs).toBe(RECV);
  });

  it("a Bad status gives quality bad, NaN and the code's name, even when a value came along", () => {
    const r = d.decode(dv(dbl(42), StatusCodes.BadSensorFailure), RECV);
    expect(r.reject).toBeUndefined();
    expect(r.sample).toMatchObject({ quality: "bad", qualityReason: "BadSensorFailure", sourceTimeMs: RECV - 1500 });
    expect(r.sample.value).toBeNaN();
  });

  it("an Uncertain status keeps the value and names the reason", () => {
    const r = d.decode(dv(dbl(71.5), StatusCodes.UncertainLastUsableValue), RECV);
    expect(r.sample).toMatchObject({ value: 71.5, quality: "uncertain", qualityReason: "UncertainLastUsableValue" });
  });

  it("numbers of every width, booleans as 1/0, 64-bit integers from their two words", () => {
    const cases: [Variant, number][] = [
      [new Variant({ dataType: DataType.Float, value: 2.5 }), 2.5],
      [new Variant({ dataType: DataType.Int16, value: -7 }), -7],
      [new Variant({ dataType: DataType.UInt32, value: 4_000_000_000 }), 4_000_000_000],
      [new Variant({ dataType: DataType.Byte, value: 200 }), 200],
      [new Variant({ dataType: DataType.Boolean, value: true }), 1],
      [new Variant({ dataType: DataType.Boolean, value: false }), 0],
      // 2^32 + 5 as [high, low] words (node-opcua's Int64 form)
      [new Variant({ dataType: DataType.UInt64, arrayType: VariantArrayType.Scalar, value: [1, 5] }), 4_294_967_301],
    ];
    for (const [v, want] of cases) expect(d.decode(dv(v), RECV).sample.value).toBe(want);
  });

  it("strings, arrays, Null and NaN are refused with what was found", () => {
    const cases: [Variant, RegExp][] = [
      [new Variant({ dataType: DataType.String, value: "88.1" }), /found a String/],
      [new Variant({ dataType: DataType.Double, arrayType: VariantArrayType.Array, value: [1, 2] }), /found an array of Double/],
      [new Variant({ dataType: DataType.Null }), /found no value/],
      [dbl(Number.NaN), /found Double NaN/],
    ];
    for (const [v, detail] of cases) {
      const r = d.decode(dv(v), RECV);
      expect(r.reject).toBe("not-a-number");
      expect(r.detail).toMatch(detail);
      expect(r.sample).toMatchObject({ quality: "bad", qualityReason: "not-a-number" });
    }
  });

  it("a source time more than maxClockSkewS ahead of the box is refused", () => {
    const r = d.decode(dv(dbl(1), StatusCodes.Good, new Date(RECV + 31_000)), RECV);
    expect(r.reject).toBe("time-in-future");
    expect(r.sample.sourceTimeMs).toBe(RECV);
    expect(d.decode(dv(dbl(1), StatusCodes.Good, new Date(RECV + 29_000)), RECV).reject).toBeUndefined();
  });

  it("applies scale, offset and unit exactly as the MQTT decoder does", () => {
    // Same arithmetic whichever source carries a signal: compared with decode.ts over random values.
    const mqttSource: SourceConfig = { id: "plc", kind: "mqtt", url: "mqtt://127.0.0.1:1", protocolVersion: 4, qos: 0, payload: { format: "number", valuePath: "value" }, maxClockSkewS: 30 };
    fc.assert(
      fc.property(
        fc.constantFrom(...UNIT_NAMES),
        fc.double({ min: -1e6, max: 1e6, noNaN: true }),
        fc.double({ min: -100, max: 100, noNaN: true }),
        fc.double({ min: -1000, max: 1000, noNaN: true }),
        (unit, raw, scale, offset) => {
          const s = sig({ unit, scale, offset });
          const viaMqtt = makeDecoder(s, mqttSource).decode(String(raw), String(raw), null, RECV).sample.value;
          const viaOpcUa = makeOpcUaDecoder(s, { maxClockSkewS: 30 }).decode(dv(dbl(raw)), RECV).sample.value;
          expect(Object.is(viaOpcUa, viaMqtt)).toBe(true);
          expect(makeScaler(s)(raw)).toBe(viaOpcUa);
        },
      ),
    );
    // A worked case: a transmitter in °F read as degF: 212 °F = 100 °C (definition of the Fahrenheit scale).
    expect(makeOpcUaDecoder(sig({ unit: "degF" }), { maxClockSkewS: 30 }).decode(dv(dbl(212)), RECV).sample.value).toBeCloseTo(100, 12);
  });
});

describe("engineering units", () => {
  it("unitIds from UNECE codes match node-opcua's standardUnits table", () => {
    // OPC UA Part 8: unitId packs the UNECE Rec. 20 common code, one byte per character.
    const table: [string, { unitId: number }][] = [
      ["CEL", standardUnits.degree_celsius], ["KEL", standardUnits.kelvin], ["FAH", standardUnits.degree_fahrenheit],
      ["PAL", standardUnits.pascal], ["A97", standardUnits.hectopascal], ["MBR", standardUnits.millibar],
      ["KPA", standardUnits.kilopascal], ["BAR", standardUnits.bar], ["P1", standardUnits.percent],
      ["59", standardUnits.part_per_million], ["MQH", standardUnits.cubic_metre_per_hour], ["KWT", standardUnits.kilowatt],
    ];
    for (const [code, unit] of table) {
      expect(uneceUnitId(code)).toBe(unit.unitId);
      expect(codeOfUnitId(unit.unitId)).toBe(code);
    }
    expect(() => uneceUnitId("cel")).toThrow(/expected 1 to 4 characters A-Z or 0-9, found "cel"/);
  });

  it("every config unit has its OPC UA entry", () => {
    expect(Object.keys(OPCUA_UNITS).sort()).toEqual([...UNIT_NAMES].sort());
  });

  it("a matching unit is quiet, a different one is described, a silent server is not blamed", () => {
    expect(unitMismatch("degC", { unitId: standardUnits.degree_celsius.unitId, displayName: "°C" })).toBeNull();
    expect(unitMismatch("pctVol", { unitId: -1, displayName: "% vol" })).toBeNull();
    expect(unitMismatch("degC", { unitId: -1, displayName: null })).toBeNull();
    expect(unitMismatch("state", { unitId: standardUnits.percent.unitId, displayName: "%" })).toBeNull();
    expect(unitMismatch("kPa", { unitId: standardUnits.millibar.unitId, displayName: "mbar" })).toBe(
      'the server gives the engineering unit as "mbar", UNECE MBR, the config says kPa (expected UNECE KPA); the config\'s unit is used',
    );
  });
});
