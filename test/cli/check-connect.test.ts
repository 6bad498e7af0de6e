// `millwarden check --connect`: listens to the real sources (here the embedded broker on an
// ephemeral loopback port) and reports per signal what arrived, with its quality.
import mqtt from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { probeSources, renderProbe } from "../../src/cli/probe.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
});
afterAll(async () => {
  await broker.close();
});

const config = (url: string) => `site: { name: Testfield, plant: Line 9, barometricPressureHPa: 1013 }
sources:
  - { id: m, kind: mqtt, url: "${url}", protocolVersion: 4 }
signals:
  - { id: a.temp, name: Gas temperature, tag: TT-1, source: m, topic: probe/TT-1, unit: degC, expectedPeriodS: 1 }
  - { id: a.o2, name: O2, tag: AT-2, source: m, topic: probe/AT-2, unit: pctVol, basis: wet, expectedPeriodS: 1 }
  - { id: a.co, name: CO, tag: AT-3, source: m, topic: probe/AT-3, unit: ppm, expectedPeriodS: 1 }
units:
  - { id: u1, name: Filter, kind: bag-filter }
`;

describe("check --connect", () => {
  it("reports what each signal delivered, a bad payload with its reason, and a silent signal as nothing", async () => {
    const cfg = parseConfig(config(broker.url), "probe.yaml");
    const pub = await mqtt.connectAsync(broker.url, { protocolVersion: 4 });
    const timer = setInterval(() => {
      const time = new Date().toISOString();
      void pub.publishAsync("probe/TT-1", JSON.stringify({ value: 81.5, time, quality: "good" }));
      void pub.publishAsync("probe/AT-2", "not json at all");
    }, 100);
    try {
      const r = await probeSources(cfg, 1500, () => undefined);
      const by = Object.fromEntries(r.rows.map((x) => [x.signal, x]));
      expect(by["a.temp"]!.samples).toBeGreaterThan(0);
      expect(by["a.temp"]).toMatchObject({ lastValue: 81.5, lastQuality: "good", address: "probe/TT-1" });
      expect(by["a.o2"]!.samples).toBeGreaterThan(0);
      expect(by["a.o2"]!.lastQuality).toBe("bad");
      expect(by["a.o2"]!.lastReason).toBeTruthy();
      expect(by["a.co"]!.samples).toBe(0);
      const out = renderProbe(r, 1.5);
      expect(out.ok).toBe(false);
      expect(out.text).toMatch(/^source m \(mqtt\): delivered/m);
      expect(out.text).toMatch(/^a\.co +probe\/AT-3 +NOTHING in 1\.5 s$/m);
      expect(out.text).toMatch(/^a\.temp +probe\/TT-1 +\d+ values?, last 81\.5 \(good\)$/m);
    } finally {
      clearInterval(timer);
      await pub.endAsync();
    }
  });
});
