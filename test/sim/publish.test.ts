import net from "node:net";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { Aedes } from "aedes";
import mqtt from "mqtt";
import type { MqttClient } from "mqtt";
import { runSimulator } from "../../src/sim/publish.js";
import { SIM_TAGS, type SimFrame } from "../../src/sim/plant.js";

// RFC 3339 date-time in UTC with milliseconds, e.g. 2025-03-03T06:00:00.000Z (RFC 3339 §5.6).
const RFC3339_UTC_MS = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}\.\d{3}Z$/;
const START_MS = Date.UTC(2025, 2, 3, 6, 0, 0);

interface Received {
  topic: string;
  payload: string;
}

async function subscriber(url: string, filter: string): Promise<{ client: MqttClient; received: Received[] }> {
  const client = await mqtt.connectAsync(url, { protocolVersion: 4, reconnectPeriod: 0 });
  const received: Received[] = [];
  client.on("message", (topic, payload) => received.push({ topic, payload: payload.toString("utf8") }));
  await client.subscribeAsync(filter, { qos: 0 });
  return { client, received };
}

async function waitFor(pred: () => boolean, timeoutMs: number): Promise<void> {
  const until = Date.now() + timeoutMs;
  while (!pred()) {
    if (Date.now() > until) return;
    await new Promise((r) => setTimeout(r, 10));
  }
}

/** Check every received message against the frames the simulator reported. */
function checkMessages(received: Received[], prefix: string, seen: SimFrame[]): void {
  const expected = new Map<string, { value: number; time: string }>();
  for (const f of seen) for (const v of f.values) expected.set(`${prefix}/${v.tag}@${new Date(f.tMs).toISOString()}`, { value: v.value, time: new Date(f.tMs).toISOString() });
  const topics = new Set<string>();
  for (const m of received) {
    topics.add(m.topic);
    const body = JSON.parse(m.payload) as Record<string, unknown>;
    expect(Object.keys(body)).toEqual(["value", "time", "quality"]);
    expect(typeof body.value).toBe("number");
    expect(body.time).toMatch(RFC3339_UTC_MS);
    expect(body.quality).toBe("good");
    const want = expected.get(`${m.topic}@${String(body.time)}`);
    expect(want, `${m.topic} ${String(body.time)}`).toBeDefined();
    expect(body.value).toBe(want?.value);
  }
  expect([...topics].sort()).toEqual(SIM_TAGS.map((t) => `${prefix}/${t.tag}`).sort());
}

describe("runSimulator against an embedded aedes broker", () => {
  let broker: Aedes;
  let server: net.Server;
  let url = "";

  beforeAll(async () => {
    broker = await Aedes.createBroker();
    server = net.createServer(broker.handle);
    await new Promise<void>((resolve) => server.listen(0, "127.0.0.1", resolve));
    const addr = server.address();
    if (addr === null || typeof addr === "string") throw new Error("no TCP address");
    url = `mqtt://127.0.0.1:${addr.port}`;
  });

  afterAll(async () => {
    await new Promise<void>((resolve) => broker.close(() => resolve()));
    await new Promise<void>((resolve) => server.close(() => resolve()));
  });

  it("publishes one message per tag per frame with simulated times, then stops on abort", async () => {
    const prefix = "tarnholm/cg2";
    const sub = await subscriber(url, `${prefix}/#`);
    const ac = new AbortController();
    const seen: SimFrame[] = [];
    const lines: string[] = [];
    const result = await runSimulator({
      scenario: "startup",
      mqttUrl: url,
      topicPrefix: prefix,
      speed: Infinity,
      startTimeMs: START_MS,
      seed: 3,
      signal: ac.signal,
      log: (l) => lines.push(l),
      onFrame: (f) => {
        seen.push(f);
        if (seen.length === 25) ac.abort();
      },
    });
    expect(result).toEqual({ frames: 25, messages: 25 * SIM_TAGS.length });
    await waitFor(() => sub.received.length >= 25 * SIM_TAGS.length, 5000);
    expect(sub.received.length).toBe(25 * SIM_TAGS.length);
    seen.forEach((f, k) => expect(f.tMs).toBe(START_MS + k * 1000));
    checkMessages(sub.received, prefix, seen);
    expect(lines.some((l) => l.includes("connected to"))).toBe(true);
    expect(lines.at(-1)).toMatch(new RegExp(`stopped after 25 frames, ${25 * SIM_TAGS.length} messages`));
    // The simulator's client has gone: only the subscriber is left.
    await waitFor(() => broker.connectedClients === 1, 2000);
    expect(broker.connectedClients).toBe(1);
    await sub.client.endAsync();
  });

  it("runs a whole scenario to its end as fast as possible", async () => {
    const prefix = "t/whole";
    const sub = await subscriber(url, `${prefix}/#`);
    let last: SimFrame | null = null;
    const result = await runSimulator({
      scenario: "filter-smoulder",
      mqttUrl: url,
      topicPrefix: prefix,
      speed: 0,
      stepS: 10,
      startTimeMs: START_MS,
      onFrame: (f) => (last = f),
    });
    expect(result).toEqual({ frames: 240, messages: 240 * SIM_TAGS.length });
    await waitFor(() => sub.received.length >= result.messages, 5000);
    expect(sub.received.length).toBe(result.messages);
    expect((last as SimFrame | null)?.tMs).toBe(START_MS + 239 * 10_000);
    await sub.client.endAsync();
  });

  it("paces frames by speed: N simulated seconds per real second", async () => {
    const ac = new AbortController();
    const stamps: number[] = [];
    const t0 = performance.now();
    await runSimulator({
      scenario: "startup",
      mqttUrl: url,
      topicPrefix: "t/paced",
      speed: 20, // 1 s steps at 20x: one frame every 50 ms
      startTimeMs: START_MS,
      signal: ac.signal,
      onFrame: () => {
        stamps.push(performance.now() - t0);
        if (stamps.length === 6) ac.abort();
      },
    });
    expect(stamps.length).toBe(6);
    // Frame k is due k·50 ms after the simulator's start, which comes after t0 here; timers
    // never fire early (1 ms slack for timer rounding).
    stamps.forEach((ms, k) => expect(ms).toBeGreaterThanOrEqual(k * 50 - 1));
    // And it does not dawdle: six frames at 50 ms spacing take well under a second after connecting.
    expect((stamps[5] ?? 0) - (stamps[0] ?? 0)).toBeLessThan(1000);
    expect((stamps[5] ?? 0) - (stamps[0] ?? 0)).toBeGreaterThan(100);
  });

  it("loops with time continuing forward", async () => {
    const ac = new AbortController();
    const seen: SimFrame[] = [];
    const lines: string[] = [];
    const result = await runSimulator({
      scenario: "filter-smoulder",
      mqttUrl: url,
      topicPrefix: "t/loop",
      speed: Infinity,
      stepS: 60, // 40 frames per pass
      startTimeMs: START_MS,
      loop: true,
      signal: ac.signal,
      log: (l) => lines.push(l),
      onFrame: (f) => {
        seen.push(f);
        if (seen.length === 100) ac.abort();
      },
    });
    expect(result.frames).toBe(100);
    seen.forEach((f, k) => expect(f.tMs).toBe(START_MS + k * 60_000));
    // The second pass starts again from the scenario's own beginning (same seed, same values).
    expect(seen[40]?.values).toEqual(seen[0]?.values);
    expect(seen[80]?.values).toEqual(seen[0]?.values);
    expect(lines.filter((l) => l.includes("restarts at")).length).toBe(2);
  });

  it("returns at once when the signal is already aborted", async () => {
    const ac = new AbortController();
    ac.abort();
    expect(
      await runSimulator({ scenario: "demo", mqttUrl: url, topicPrefix: "t/x", speed: 1, startTimeMs: START_MS, signal: ac.signal }),
    ).toEqual({ frames: 0, messages: 0 });
  });

  it("stops during a long wait between frames when aborted", async () => {
    const ac = new AbortController();
    let n = 0;
    const t0 = performance.now();
    setTimeout(() => ac.abort(), 150);
    const result = await runSimulator({
      scenario: "startup",
      mqttUrl: url,
      topicPrefix: "t/slow",
      speed: 0.01, // next frame due in 100 s
      startTimeMs: START_MS,
      signal: ac.signal,
      onFrame: () => n++,
    });
    expect(result.frames).toBe(1);
    expect(n).toBe(1);
    expect(performance.now() - t0).toBeLessThan(5000);
  });
});

/** An aedes broker whose listener can be taken down and brought back on the same port. */
class FlakyBroker {
  private broker: Aedes | null = null;
  private server: net.Server | null = null;
  private sockets = new Set<net.Socket>();
  port = 0;

  async up(): Promise<void> {
    this.broker = await Aedes.createBroker();
    const broker = this.broker;
    this.server = net.createServer((sock) => {
      this.sockets.add(sock);
      sock.on("close", () => this.sockets.delete(sock));
      broker.handle(sock);
    });
    const server = this.server;
    await new Promise<void>((resolve) => server.listen(this.port, "127.0.0.1", resolve));
    const addr = server.address();
    if (addr === null || typeof addr === "string") throw new Error("no TCP address");
    this.port = addr.port;
  }

  async down(): Promise<void> {
    for (const sock of this.sockets) sock.destroy();
    const { server, broker } = this;
    if (server) await new Promise<void>((resolve) => server.close(() => resolve()));
    if (broker) await new Promise<void>((resolve) => broker.close(() => resolve()));
    this.server = null;
    this.broker = null;
  }
}

describe("runSimulator when the broker goes away and comes back", () => {
  it("paced: drops the frames that fall due while the broker is away, then carries on", async () => {
    const fb = new FlakyBroker();
    await fb.up();
    const ac = new AbortController();
    const lines: string[] = [];
    let n = 0;
    let downAt = -1;
    const run = runSimulator({
      scenario: "startup",
      mqttUrl: `mqtt://127.0.0.1:${fb.port}`,
      topicPrefix: "t/flaky",
      speed: 50, // a frame every 20 ms
      startTimeMs: START_MS,
      signal: ac.signal,
      log: (l) => lines.push(l),
      onFrame: () => n++,
    });
    await waitFor(() => n >= 10, 5000);
    await fb.down();
    downAt = n;
    await new Promise((r) => setTimeout(r, 400));
    expect(n).toBeGreaterThan(downAt + 5); // paced frames keep coming (and are dropped)
    await fb.up();
    await waitFor(() => lines.some((l) => l.includes("reconnected")), 5000);
    const atReconnect = n;
    await waitFor(() => n >= atReconnect + 10, 5000);
    ac.abort();
    const result = await run;
    expect(lines.some((l) => l.includes("unreachable") && l.includes("dropping frames"))).toBe(true);
    expect(lines.some((l) => l.includes("reconnected"))).toBe(true);
    expect(result.frames).toBe(n);
    // Some frames were dropped, and those after the reconnection went out again.
    expect(result.messages).toBeLessThan(result.frames * SIM_TAGS.length);
    expect(result.messages).toBeGreaterThanOrEqual((downAt + 10) * SIM_TAGS.length);
    expect(lines.at(-1)).toMatch(/dropped while the broker was away/);
    await fb.down();
  });

  it("as fast as possible: waits for the broker instead of dropping", async () => {
    const fb = new FlakyBroker();
    await fb.up();
    const ac = new AbortController();
    let n = 0;
    let takeDown: Promise<void> | null = null;
    const run = runSimulator({
      scenario: "filter-smoulder",
      mqttUrl: `mqtt://127.0.0.1:${fb.port}`,
      topicPrefix: "t/flaky-fast",
      speed: Infinity,
      stepS: 10,
      startTimeMs: START_MS,
      loop: true,
      signal: ac.signal,
      onFrame: () => {
        n++;
        if (n === 50) takeDown = fb.down();
      },
    });
    await waitFor(() => takeDown !== null, 5000);
    await takeDown;
    await new Promise((r) => setTimeout(r, 300));
    const whileDown = n;
    await new Promise((r) => setTimeout(r, 300));
    expect(n).toBeLessThanOrEqual(whileDown + 1); // stalled, not spinning through frames
    await fb.up();
    await waitFor(() => n >= whileDown + 50, 5000);
    ac.abort();
    const result = await run;
    expect(result.frames).toBeGreaterThanOrEqual(whileDown + 50);
    // At most the frame in flight when the connection broke can have lost messages.
    expect(result.frames * SIM_TAGS.length - result.messages).toBeLessThanOrEqual(2 * SIM_TAGS.length);
    await fb.down();
  });
});

describe("runSimulator input checks", () => {
  const base = { scenario: "startup", mqttUrl: "mqtt://127.0.0.1:9", topicPrefix: "t/p", speed: 1, startTimeMs: START_MS };

  it("rejects bad options before connecting, saying what was expected", async () => {
    await expect(runSimulator({ ...base, scenario: "nope" })).rejects.toThrow(/unknown simulator scenario "nope".*"startup"/);
    await expect(runSimulator({ ...base, speed: -1 })).rejects.toThrow(/speed: expected .*found -1/);
    await expect(runSimulator({ ...base, speed: Number.NaN })).rejects.toThrow(/speed: expected .*found NaN/);
    await expect(runSimulator({ ...base, topicPrefix: "" })).rejects.toThrow(/topicPrefix: expected a non-empty topic/);
    await expect(runSimulator({ ...base, topicPrefix: "a/#" })).rejects.toThrow(/without wildcards/);
    await expect(runSimulator({ ...base, topicPrefix: "a/" })).rejects.toThrow(/trailing/);
    await expect(runSimulator({ ...base, mqttUrl: "127.0.0.1:1883" })).rejects.toThrow(/mqttUrl: expected a broker URL/);
    await expect(runSimulator({ ...base, stepS: 0 })).rejects.toThrow(/stepS: expected/);
  });

  it("reports a broker that refuses the connection", async () => {
    // Take an ephemeral port and free it again, so nothing listens there.
    const probe = net.createServer();
    await new Promise<void>((resolve) => probe.listen(0, "127.0.0.1", resolve));
    const addr = probe.address();
    if (addr === null || typeof addr === "string") throw new Error("no TCP address");
    await new Promise<void>((resolve) => probe.close(() => resolve()));
    await expect(runSimulator({ ...base, mqttUrl: `mqtt://127.0.0.1:${addr.port}` })).rejects.toThrow(
      new RegExp(`could not connect to MQTT broker mqtt://127.0.0.1:${addr.port}`),
    );
  });
});

// The real Mosquitto on 127.0.0.1:1883 (provided by this machine); skipped only when it is not listening.
async function listening(host: string, port: number): Promise<boolean> {
  return new Promise((resolve) => {
    const socket = net.connect({ host, port });
    const done = (ok: boolean) => {
      socket.destroy();
      resolve(ok);
    };
    socket.setTimeout(1000, () => done(false));
    socket.once("connect", () => done(true));
    socket.once("error", () => done(false));
  });
}
const mosquittoUp = await listening("127.0.0.1", 1883);

describe.skipIf(!mosquittoUp)("runSimulator against Mosquitto on 127.0.0.1:1883", () => {
  it("delivers every tag under a unique topic prefix", async () => {
    const prefix = `millwarden-test/sim-${process.pid}-${Date.now()}`;
    const url = "mqtt://127.0.0.1:1883";
    const sub = await subscriber(url, `${prefix}/#`);
    const ac = new AbortController();
    const seen: SimFrame[] = [];
    const result = await runSimulator({
      scenario: "demo",
      mqttUrl: url,
      topicPrefix: prefix,
      speed: Infinity,
      startTimeMs: START_MS,
      signal: ac.signal,
      onFrame: (f) => {
        seen.push(f);
        if (seen.length === 10) ac.abort();
      },
    });
    expect(result).toEqual({ frames: 10, messages: 10 * SIM_TAGS.length });
    await waitFor(() => sub.received.length >= result.messages, 5000);
    expect(sub.received.length).toBe(result.messages);
    checkMessages(sub.received, prefix, seen);
    await sub.client.endAsync();
  });
});
