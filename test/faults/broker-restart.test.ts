// The broker killed and started again N times under load: our own Mosquitto on a free loopback
// port, the simulator publishing the demo plant ten frames a second (about 200 messages/s), and a
// daemon in process on the wall clock subscribed with a persistent session (clean: false). Each
// time: during the outage /api/state shows every signal stale and no dew point margin (unknown,
// never the last steady value); after the restart the source reconnects and values flow again.
// The reconnect times are printed (min / median / max); FAULT_REPEAT sets N (default 3).
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { PlantState } from "../../src/core/types.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { runSimulator } from "../../src/sim/publish.js";
import type { MqttSource } from "../../src/sources/mqtt.js";
import { demoConfigFor, tempDir, waitFor } from "../integration/helpers.js";
import { freePort, MISSING, OwnMosquitto } from "../sources/mosquitto.js";
import { repeatCount, sleep, spread } from "./helpers.js";

const PREFIX = `mw-fault-broker/${process.pid}`;

describe.skipIf(MISSING.length > 0 && !process.env.CI)("broker killed and restarted under load", () => {
  const rounds = repeatCount(3);
  let dir: ReturnType<typeof tempDir>;
  let broker: OwnMosquitto;
  let url: string;
  beforeAll(async () => {
    dir = tempDir("mw-fault-broker-");
    const port = await freePort();
    broker = new OwnMosquitto(dir.path, [{ kind: "plain", port }]);
    await broker.start();
    url = `mqtt://127.0.0.1:${port}`;
  });
  afterAll(async () => {
    await broker?.stop();
    dir?.remove();
  });

  it(`reconnects each of ${rounds} times; stale during the outage, fresh after`, { timeout: 30_000 + rounds * 15_000 }, async () => {
    const base = demoConfigFor(url, PREFIX, dir.path);
    const cfg = { ...base, clock: "wall" as const, sources: base.sources.map((s) => ({ ...s, clean: false })) };
    const d = await Daemon.start({ config: cfg, log: memoryLogger() });
    const stop = new AbortController();
    let frames = 0;
    const sim = runSimulator({ scenario: "demo", mqttUrl: url, topicPrefix: PREFIX, speed: 1, stepS: 0.1, startTimeMs: Date.now(), loop: true, signal: stop.signal, onFrame: () => frames++ });
    const state = async () => (await (await fetch(`${d.url}/api/state`)).json()) as PlantState;
    const allFresh = async () => (await state()).signals.every((s) => !s.stale && s.value !== null);
    const connected = () => d.health().sources.every((s) => s.connected);
    try {
      await waitFor(connected, 10_000, "the first connection");
      const until = Date.now() + 15_000;
      while (!(await allFresh()) && Date.now() < until) await sleep(100);
      expect(await allFresh()).toBe(true);

      const reconnectMs: number[] = [];
      const staleAfterMs: number[] = [];
      for (let i = 0; i < rounds; i++) {
        const down = Date.now();
        await broker.stop();
        await waitFor(() => !connected(), 5000, "the source to see the broker gone");
        // Stale within 3 expected periods (1 s here) plus a tick; poll the HTTP view meanwhile.
        let st = await state();
        while (!st.signals.every((s) => s.stale) && Date.now() - down < 8000) {
          await sleep(100);
          st = await state();
        }
        staleAfterMs.push(Date.now() - down);
        expect(st.signals.every((s) => s.stale), "every signal stale during the outage").toBe(true);
        // Unknown, never the last steady value: no dew point margin while the data is stale.
        expect(st.dewPoints.every((p) => p.marginK === null), "dew point margins unknown during the outage").toBe(true);
        const up = Date.now();
        await broker.start();
        await waitFor(connected, 10_000, `reconnection ${i + 1}`);
        reconnectMs.push(Date.now() - up);
        const fresh = Date.now() + 10_000;
        while (!(await allFresh()) && Date.now() < fresh) await sleep(100);
        expect(await allFresh(), `values flow again after restart ${i + 1}`).toBe(true);
      }
      const r = spread(reconnectMs);
      const s = spread(staleAfterMs);
      console.info(
        `broker restarts: ${rounds}; reconnect after the broker listens min/median/max ${r.min}/${r.median}/${r.max} ms; ` +
          `stale after the kill ${s.min}/${s.median}/${s.max} ms; source reconnections ${(d.sources[0] as MqttSource).stats().reconnections}; frames published ${frames}`,
      );
      expect((d.sources[0] as MqttSource).stats().reconnections).toBe(rounds);
      // mqtt.js retries every 2 s (src/sources/mqtt.ts RECONNECT_MS): one period plus the connect itself.
      expect(r.max).toBeLessThan(5000);
    } finally {
      stop.abort();
      await sim.catch(() => undefined);
      await d.stop();
    }
  });
});
