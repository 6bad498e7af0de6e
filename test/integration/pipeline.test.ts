// The whole path, for real: the simulator publishes over MQTT, the daemon subscribes,
// computes, stores in SQLite and serves HTTP; the test reads only over HTTP.
// Runs against the embedded broker always, and against the machine's Mosquitto on
// 127.0.0.1:1883 when one is listening (CI starts it).
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { AdvisoryTransition, PlantState } from "../../src/core/types.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { createScenario } from "../../src/sim/plant.js";
import { runSimulator } from "../../src/sim/publish.js";
import { demoConfigFor, listening, startTestDaemon, tempDir, waitFor } from "./helpers.js";

const START = Date.UTC(2026, 10, 30, 5, 0, 0);
const SPEED = 300; // simulated seconds per real second

async function runThrough(brokerUrl: string, scenario: string) {
  const prefix = `mw-it/${process.pid}-${Math.random().toString(16).slice(2, 8)}`;
  const dir = tempDir("mw-it-");
  const { daemon } = await startTestDaemon(demoConfigFor(brokerUrl, prefix, dir.path));
  try {
    const sc = createScenario(scenario, { startTimeMs: START, seed: 11 });
    const lastFrameMs = START + Math.floor((sc.durationS - sc.stepS) / sc.stepS) * sc.stepS * 1000;
    await runSimulator({ scenario, mqttUrl: brokerUrl, topicPrefix: prefix, speed: SPEED, startTimeMs: START, seed: 11 });
    await waitFor(() => daemon.coreNowMs >= Math.floor(lastFrameMs / 1000) * 1000, 20_000, `the daemon to reach the last frame of "${scenario}"`);
    const get = async <T>(path: string): Promise<T> => {
      const r = await fetch(daemon.url + path);
      expect(r.status, path).toBe(200);
      return (await r.json()) as T;
    };
    const adv = await get<{ active: unknown[]; history: AdvisoryTransition[] }>("/api/advisories?limit=1000");
    const state = await get<PlantState>("/api/state");
    const trend = await get<{ points: unknown[] }>(`/api/trend?signal=bf2.outlet.co&from=${START}&to=${lastFrameMs}&points=10000`);
    return { onsetMs: sc.onsetS === null ? null : START + sc.onsetS * 1000, transitions: adv.history.slice().reverse(), state, trendPoints: trend.points.length, durationS: sc.durationS };
  } finally {
    await daemon.stop();
    dir.remove();
  }
}

function checkSmoulder(r: Awaited<ReturnType<typeof runThrough>>) {
  const co = r.transitions.filter((t) => t.advisoryId === "co-gradient-bf2");
  expect(r.onsetMs).not.toBeNull();
  // Nothing before the onset; caution first, then warning.
  expect(co.filter((t) => t.atMs < r.onsetMs!)).toEqual([]);
  const caution = co.find((t) => t.tier === "caution" && (t.transition === "raise" || t.transition === "escalate"));
  const warning = co.find((t) => t.tier === "warning" && (t.transition === "raise" || t.transition === "escalate"));
  expect(caution, "a caution on the bag filter CO gradient").toBeDefined();
  expect(warning, "a warning on the bag filter CO gradient").toBeDefined();
  // Bounds in simulated time after the onset: the window (300 s, needs half full), the
  // on-delay (30 s) and the smoulder's own growth (slope 1 + 1.2 tau ppm/min) set them.
  expect(caution!.atMs - r.onsetMs!).toBeLessThanOrEqual(10 * 60_000);
  expect(warning!.atMs - r.onsetMs!).toBeLessThanOrEqual(20 * 60_000);
  expect(warning!.atMs).toBeGreaterThan(caution!.atMs);
  // The mill outlet saw no such rise.
  expect(r.transitions.filter((t) => t.advisoryId === "co-gradient-vm2")).toEqual([]);
  // The advisory is on /api/state and says it is advisory only.
  const onScreen = r.state.advisories.find((a) => a.id === "co-gradient-bf2");
  expect(onScreen?.message).toMatch(/ADVISORY ONLY/);
  // Samples reached SQLite: about one per simulated second of the scenario.
  expect(r.trendPoints).toBeGreaterThan(r.durationS * 0.95);
}

function checkStartup(r: Awaited<ReturnType<typeof runThrough>>) {
  // No CO advisory annunciated (the silo rule's suppression outside standstill is no annunciation).
  expect(r.transitions.filter((t) => t.advisoryId.startsWith("co-") && t.to === "unack")).toEqual([]);
  expect(r.trendPoints).toBeGreaterThan(r.durationS * 0.95);
  // The daemon did see the plant: grinding at the end, the mill inert.
  expect(r.state.units.find((u) => u.id === "vm2")!.inerting!.state).toBe("inert");
}

describe("simulator -> embedded broker -> daemon -> SQLite -> HTTP", () => {
  let broker: EmbeddedBroker;
  beforeAll(async () => {
    broker = await startEmbeddedBroker(0);
  });
  afterAll(async () => broker?.close());

  it("the bag filter smoulder raises a CO caution, then a warning, within bounds after onset", async () => {
    checkSmoulder(await runThrough(broker.url, "filter-smoulder"));
  }, 60_000);

  it("a normal start-up into grinding raises no CO advisory", async () => {
    checkStartup(await runThrough(broker.url, "startup"));
  }, 60_000);
});

const mosquitto = await listening(1883);
describe("the real broker", () => {
  it("is listening when running in CI (.ci/run starts Mosquitto)", () => {
    expect(mosquitto || !process.env.CI).toBe(true);
  });
});
describe.runIf(mosquitto)("simulator -> Mosquitto (127.0.0.1:1883) -> daemon -> SQLite -> HTTP", () => {
  it("the bag filter smoulder raises a CO caution, then a warning", async () => {
    checkSmoulder(await runThrough("mqtt://127.0.0.1:1883", "filter-smoulder"));
  }, 60_000);

  it("a normal start-up raises no CO advisory", async () => {
    checkStartup(await runThrough("mqtt://127.0.0.1:1883", "startup"));
  }, 60_000);
});
