// Daemon.reload in process: which sources are reconnected, the fresh core warm-started from the
// historian, the sections read at start only, and a config the core refuses.
import mqtt from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { tempDir, waitFor } from "../integration/helpers.js";

let broker: EmbeddedBroker;
let pub: mqtt.MqttClient;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
  pub = await mqtt.connectAsync(broker.url, { protocolVersion: 4 });
});
afterAll(async () => {
  await pub.endAsync();
  await broker.close();
});

const PREFIX = `mw-reload/${process.pid}`;

function config(dir: string, opts: { topic: string; noticeC: number; sealIntervalS?: number }) {
  return parseConfig(
    `site: { name: Tarnholm Works, plant: Coal grinding line 2 (test), barometricPressureHPa: 1013 }
storage: { path: ${dir}/millwarden.db, sealIntervalS: ${opts.sealIntervalS ?? 300} }
sources:
  - { id: m, kind: mqtt, url: "${broker.url}" }
signals:
  - { id: bf2.inlet.temp, name: Bag filter inlet temperature, tag: BF2-TT-201, source: m, topic: ${PREFIX}/${opts.topic}, unit: degC, range: [0, 300], expectedPeriodS: 1 }
units:
  - { id: bf2, name: Bag filter 2, kind: bag-filter }
rules:
  - { id: bf2-inlet-hot, title: Bag filter inlet hot, unit: bf2, quantity: bf2.inlet.temp, direction: high, tiers: { notice: ${opts.noticeC} }, cause: test, consequence: test, check: test, origin: test threshold }
`,
    "plant.yaml",
  );
}

const valueOf = (d: Daemon) => d.engine.snapshot().signals.find((s) => s.id === "bf2.inlet.temp")?.value ?? null;

describe("Daemon.reload", { timeout: 60_000 }, () => {
  it("reconnects only a changed source, warm-starts the new core and keeps start-only sections", async () => {
    const dir = tempDir("mw-reload-");
    const log = memoryLogger();
    const d = await Daemon.start({ config: config(dir.path, { topic: "a", noticeC: 500 }), log, serve: false });
    try {
      await Promise.all(d.sources.map((s) => s.whenReady()));
      await pub.publishAsync(`${PREFIX}/a`, JSON.stringify({ value: 120.5 }));
      await waitFor(() => valueOf(d) === 120.5, 10_000, "the first sample");

      // Rules only: the source keeps its connection (same object); the new core has the stored value back.
      const source = d.sources[0];
      const oldEngine = d.engine;
      const r1 = await d.reload(config(dir.path, { topic: "a", noticeC: 100 }));
      expect(r1).toEqual({ ok: true, restartedSources: [], keptUntilRestart: [] });
      expect(d.sources[0]).toBe(source);
      expect(d.engine).not.toBe(oldEngine);
      expect(valueOf(d)).toBe(120.5);
      expect(log.lines.some((l) => /warm start: 1 stored samples/.test(l))).toBe(true);
      // The new rule set judges the same value: 120.5 is above the new notice threshold of 100.
      await waitFor(() => d.engine.currentAdvisories().some((a) => a.id === "bf2-inlet-hot"), 10_000, "the advisory of the reloaded rule");

      // A signal's topic changed: its source is made anew and listens on the new topic only.
      const r2 = await d.reload(config(dir.path, { topic: "b", noticeC: 100, sealIntervalS: 600 }));
      expect(r2).toEqual({ ok: true, restartedSources: ["m"], keptUntilRestart: ["storage"] });
      expect(d.sources).toHaveLength(1);
      expect(d.sources[0]).not.toBe(source);
      await d.sources[0]!.whenReady();
      await pub.publishAsync(`${PREFIX}/a`, JSON.stringify({ value: 130 }));
      await pub.publishAsync(`${PREFIX}/b`, JSON.stringify({ value: 140 }));
      await waitFor(() => valueOf(d) === 140, 10_000, "a sample on the new topic");
      expect(d.historian.stats().state).toBe("ok");
      expect(log.lines.some((l) => /warn reload: storage changed; read at start only/.test(l))).toBe(true);
    } finally {
      await d.stop();
      dir.remove();
    }
  });

  it("a config the core refuses leaves the running one in place", async () => {
    const dir = tempDir("mw-reload-");
    const log = memoryLogger();
    const good = config(dir.path, { topic: "c", noticeC: 500 });
    const d = await Daemon.start({ config: good, log, serve: false });
    try {
      const engine = d.engine;
      // Past the loader (built by hand here): a threshold rule without a threshold, which the core refuses.
      const bad = { ...good, rules: good.rules.map((r) => ({ ...r, tiers: {} })) };
      const r = await d.reload(bad);
      expect(r.ok).toBe(false);
      expect(d.engine).toBe(engine);
      expect(r).toMatchObject({ ok: false, error: expect.stringMatching(/bf2-inlet-hot.*expected tiers with at least one threshold/) });
      expect(log.lines.some((l) => l.startsWith("error reload refused, the running config stays"))).toBe(true);
    } finally {
      await d.stop();
      dir.remove();
    }
  });
});
