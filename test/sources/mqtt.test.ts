// The MQTT source against a real broker (the embedded one; no other service needed):
// values arrive as canonical samples; bad messages are counted per signal and reason,
// logged at most once a minute, and mark the signal bad; nothing throws.
import mqtt from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { SignalConfig, SourceConfig } from "../../src/config/schema.js";
import type { Sample } from "../../src/core/types.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { MqttSource } from "../../src/sources/mqtt.js";
import { waitFor } from "../integration/helpers.js";

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0);
});
afterAll(async () => broker.close());

const sig = (id: string, topic: string, unit: SignalConfig["unit"]): SignalConfig => ({
  id, name: id, tag: id.toUpperCase(), source: "m", topic, unit, scale: 1, offset: 0, expectedPeriodS: 1,
});

describe("MqttSource", () => {
  it("decodes, converts, counts rejects and keeps running", async () => {
    const source: SourceConfig = {
      id: "m", kind: "mqtt", url: broker.url, protocolVersion: 4, qos: 0,
      payload: { format: "json", valuePath: "value", timePath: "time" }, maxClockSkewS: 30,
    };
    const logs: string[] = [];
    const now = Date.UTC(2026, 11, 1, 12, 0, 0);
    const src = new MqttSource(source, [sig("t.a", "it/a", "K"), sig("p.b", "it/b", "kPa")], { now: () => now, log: (_l, m) => logs.push(m) });
    const got: Sample[] = [];
    await src.start((s) => got.push(s));
    await src.whenReady();
    const pub = await mqtt.connectAsync(broker.url, { protocolVersion: 4 });
    await pub.publishAsync("it/a", JSON.stringify({ value: 373.15, time: "2026-12-01T11:59:58Z" }));
    await pub.publishAsync("it/b", "not json at all");
    await pub.publishAsync("it/b", "{\"value\": \"NaN\"}");
    await pub.publishAsync("it/b", "{\"value\": \"NaN\"}");
    await pub.publishAsync("it/b", JSON.stringify({ value: 101.325 }));
    await pub.publishAsync("it/unmapped", "1");
    await waitFor(() => got.length >= 5, 5000, "five samples");
    await pub.endAsync();

    expect(got[0]).toMatchObject({ signal: "t.a", quality: "good", sourceTimeMs: now - 2000, receiveTimeMs: now });
    expect(got[0]!.value).toBeCloseTo(100, 9); // 373.15 K = 100 °C
    expect(got.slice(1, 4).map((s) => [s.quality, s.qualityReason])).toEqual([["bad", "not-json"], ["bad", "not-a-number"], ["bad", "not-a-number"]]);
    expect(got[4]!.value).toBeCloseTo(101_325, 6); // kPa -> Pa
    const st = src.stats();
    // Exact-topic subscriptions: the broker never sends it/unmapped, so nothing is unmatched.
    expect(st).toMatchObject({ connected: true, samples: 2, rejected: 3, unmatched: 0, subscriptions: ["it/a", "it/b"] });
    expect(st.rejectedBy).toEqual({ "p.b:not-json": 1, "p.b:not-a-number": 2 });
    // The second not-a-number is counted but not logged again within the minute.
    expect(logs.filter((l) => l.includes("not-a-number"))).toHaveLength(1);
    expect(logs.find((l) => l.includes("not-json"))).toMatch(/topic it\/b, signal p\.b: rejected \(not-json\)/);
    await src.stop();
    expect(src.stats().connected).toBe(false);
  });

  it("does not hold up start when the broker is down, and reports it", async () => {
    const source: SourceConfig = {
      id: "down", kind: "mqtt", url: "mqtt://127.0.0.1:9", protocolVersion: 4, qos: 0,
      payload: { format: "json", valuePath: "value" }, maxClockSkewS: 30,
    };
    const src = new MqttSource(source, [sig("x", "it/x", "degC")], { now: Date.now, log: () => undefined });
    await src.start(() => undefined);
    await waitFor(() => src.stats().lastError !== null, 5000, "a connection error");
    expect(src.stats()).toMatchObject({ connected: false });
    expect(src.stats().lastError).toMatch(/ECONNREFUSED/);
    await src.stop();
  });
});
