// The whole path over Sparkplug B: the simulator as an edge node of its own (NBIRTH, NDATA by
// alias, an NDEATH will) → the embedded broker → the daemon reading the node's metrics → the core.
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { AdvisoryTransition } from "../../src/core/types.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { createScenario } from "../../src/sim/plant.js";
import { runSimulator } from "../../src/sim/publish.js";
import { asSparkplugConfig } from "../../src/sim/sparkplug-frames.js";
import { demoConfigFor, startTestDaemon, tempDir, waitFor } from "./helpers.js";

const START = Date.UTC(2026, 10, 30, 5, 0, 0);

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0);
});
afterAll(async () => {
  await broker.close();
});

describe("simulator (Sparkplug B edge node) -> embedded broker -> daemon", () => {
  it("the bag filter smoulder raises the CO caution and warning as over JSON", async () => {
    const node = `sim-${process.pid}-${Math.random().toString(16).slice(2, 8)}`;
    const dir = tempDir("mw-spb-");
    const cfg = asSparkplugConfig(demoConfigFor(broker.url, "mw-spb", dir.path), { group: "cg2", node });
    expect(cfg.signals.every((s) => s.sparkplug?.node === node)).toBe(true);
    const { daemon } = await startTestDaemon(cfg);
    try {
      const sc = createScenario("filter-smoulder", { startTimeMs: START, seed: 11 });
      const lastFrameMs = START + Math.floor((sc.durationS - sc.stepS) / sc.stepS) * sc.stepS * 1000;
      const r = await runSimulator({ scenario: "filter-smoulder", mqttUrl: broker.url, topicPrefix: "unused", speed: 300, startTimeMs: START, seed: 11, payload: "sparkplug", sparkplug: { group: "cg2", node } });
      expect(r.messages).toBe(r.frames); // one NBIRTH, then one NDATA per frame
      await waitFor(() => daemon.coreNowMs >= Math.floor(lastFrameMs / 1000) * 1000, 20_000, "the daemon to reach the last frame");
      daemon.historian.flush();
      const co = daemon.historian.transitions({ advisoryId: "co-gradient-bf2" }) as AdvisoryTransition[];
      const onsetMs = START + sc.onsetS! * 1000;
      const caution = co.find((t) => t.tier === "caution" && (t.transition === "raise" || t.transition === "escalate"));
      const warning = co.find((t) => t.tier === "warning" && (t.transition === "raise" || t.transition === "escalate"));
      expect(caution!.atMs - onsetMs).toBeLessThanOrEqual(10 * 60_000);
      expect(warning!.atMs - onsetMs).toBeLessThanOrEqual(20 * 60_000);
      const stats = daemon.sources[0]!.stats() as unknown as { sparkplug?: unknown };
      expect(JSON.stringify(stats)).toMatch(/births/);
    } finally {
      await daemon.stop();
      dir.remove();
    }
  }, 60_000);
});
