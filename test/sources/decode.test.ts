// Decoding MQTT message bodies: bad input never throws, always becomes a bad-quality
// sample with a counted reason. Times follow RFC 3339 (the history exchange format).
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { makeDecoder, parseBody } from "../../src/sources/decode.js";
import type { SignalConfig, SourceConfig } from "../../src/config/schema.js";

const source: SourceConfig = {
  id: "m", kind: "mqtt", url: "mqtt://127.0.0.1:18831", protocolVersion: 4, qos: 0,
  payload: { format: "json", valuePath: "value", timePath: "time", qualityPath: "quality" }, maxClockSkewS: 30,
};
const signal: SignalConfig = {
  id: "bf2.outlet.press", name: "Filter outlet pressure", tag: "BF2-PT-212", source: "m", topic: "t", unit: "mbar",
  scale: 1, offset: 0, expectedPeriodS: 1,
};
const NOW = Date.UTC(2026, 11, 1, 12, 0, 0);
const dec = makeDecoder(signal, source);
const run = (body: string | Buffer) => {
  const { parsed, error } = parseBody(typeof body === "string" ? Buffer.from(body) : body, "json");
  return dec.decode(typeof body === "string" ? Buffer.from(body) : body, parsed, error, NOW);
};

describe("JSON payloads", () => {
  it("reads value, time and quality and converts to canonical units (mbar -> Pa)", () => {
    const r = run(JSON.stringify({ value: -3.2, time: "2026-12-01T11:59:59.500Z", quality: "good" }));
    expect(r.reject).toBeUndefined();
    expect(r.sample.value).toBeCloseTo(-320, 9);
    expect(r.sample.sourceTimeMs).toBe(NOW - 500);
    expect(r.sample.receiveTimeMs).toBe(NOW);
    expect(r.sample.quality).toBe("good");
  });

  it.each([
    ["not json", "{value: 3", "not-json"],
    ["no value", JSON.stringify({ v: 3 }), "no-value"],
    ["a string value", JSON.stringify({ value: "high" }), "not-a-number"],
    ["an object value", JSON.stringify({ value: { x: 1 } }), "not-a-number"],
    ["a bad time", JSON.stringify({ value: 1, time: "yesterday" }), "bad-time"],
    ["a local time without offset", JSON.stringify({ value: 1, time: "2026-12-01T11:59:59" }), "bad-time"],
    ["a time from the future", JSON.stringify({ value: 1, time: "2026-12-01T12:05:00Z" }), "time-in-future"],
  ])("refuses %s with a reason", (_name, body, reason) => {
    const r = run(body);
    expect(r.reject).toBe(reason);
    expect(r.sample.quality).toBe("bad");
    expect(Number.isNaN(r.sample.value)).toBe(true);
    expect(r.detail).toBeTruthy();
  });

  it("refuses oversized messages without parsing them", () => {
    expect(run(Buffer.alloc(70_000, 0x20)).reject).toBe("too-large");
  });

  it("an unknown quality word is uncertain, never good", () => {
    expect(run(JSON.stringify({ value: 1, quality: "fine" })).sample.quality).toBe("uncertain");
  });

  it("property: random bytes and random JSON never throw and never yield a non-finite good value", () => {
    fc.assert(
      fc.property(fc.oneof(fc.uint8Array({ maxLength: 300 }).map((a) => Buffer.from(a)), fc.json().map((j) => Buffer.from(j))), (buf) => {
        const r = run(buf);
        if (r.sample.quality === "good") expect(Number.isFinite(r.sample.value)).toBe(true);
        if (r.reject) expect(r.sample.quality).toBe("bad");
      }),
      { numRuns: 2000 },
    );
  });
});

describe("function check flag in the value's own message (functionCheckPath)", () => {
  const fcDec = makeDecoder({ ...signal, functionCheckPath: "status.fc" }, source);
  const runFc = (body: unknown) => {
    const buf = Buffer.from(JSON.stringify(body));
    const { parsed, error } = parseBody(buf, "json");
    return fcDec.decode(buf, parsed, error, NOW);
  };

  it.each([
    [true, true], [1, true], ["true", true], ["ON", true], ["yes", true],
    [false, false], [0, false], ["false", false], ["off", false], ["", false], [null, false],
  ])("flag %j: in function check %s, the value still arrives", (flag, inCheck) => {
    const r = runFc({ value: -3.2, status: { fc: flag } });
    expect(r.reject).toBeUndefined();
    expect(r.sample.quality).toBe("good");
    expect(r.sample.value).toBeCloseTo(-320, 9);
    expect(r.sample.functionCheck === true).toBe(inCheck);
  });

  it("an absent flag means not in function check", () => {
    const r = runFc({ value: 1 });
    expect(r.sample.functionCheck).toBeUndefined();
    expect(r.sample.quality).toBe("good");
  });

  it("a flag that cannot be read makes the value uncertain (never a guess either way) and says where", () => {
    for (const flag of ["maybe", { on: true }, [1]]) {
      const r = runFc({ value: 1, status: { fc: flag } });
      expect(r.sample.quality).toBe("uncertain");
      expect(r.sample.functionCheck).toBeUndefined();
      expect(r.sample.qualityReason).toMatch(/function check flag at "status\.fc"/);
    }
  });

  it("a signal without functionCheckPath ignores such a field", () => {
    expect(run(JSON.stringify({ value: 1, status: { fc: true } })).sample.functionCheck).toBeUndefined();
  });
});
