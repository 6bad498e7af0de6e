// Publishes a simulator scenario to an MQTT broker, paced against simulated time.
//
//   scenario.next() ──frame──▶ one message per tag: <topicPrefix>/<tag>
//                              {"value": v, "time": "<RFC 3339 UTC, ms>", "quality": "good"}, QoS 0
//
// Pacing: frame k (counted across loops) is due at t0 + k·stepS·1000/speed on the
// monotonic clock; frames already due go out back to back. speed 0 or Infinity means
// "as fast as possible": every publish then waits for the socket's buffer to accept it
// (mqtt.js calls back on 'drain' when the write was refused), so memory stays bounded.
// QoS 0 messages are never queued while the broker is away: paced runs drop those frames
// (a live plant does not wait either), fast runs wait for the reconnection.

import mqtt from "mqtt";
import type { MqttClient } from "mqtt";
import { setTimeout as sleepMs } from "node:timers/promises";
import { createScenario, type Scenario, type SimFrame } from "./plant.js";
import { SparkplugEdge, type SparkplugNodeId } from "./sparkplug-frames.js";

export interface SimulatorOptions {
  scenario: string;
  mqttUrl: string;
  topicPrefix: string;
  /** Simulated seconds per real second; 0 or Infinity: as fast as possible. */
  speed: number;
  /** Simulated time of the first frame, epoch ms. */
  startTimeMs: number;
  stepS?: number;
  seed?: number;
  /** Restart the scenario when it ends, time continuing forward. */
  loop?: boolean;
  /** MQTT 3.1.1 (4, default: the embedded broker speaks only this) or 5. */
  protocolVersion?: 4 | 5;
  signal?: AbortSignal;
  log?: (line: string) => void;
  /** Called after each frame has been handed to the client. */
  onFrame?: (f: SimFrame) => void;
  /** json (default): one message per tag under topicPrefix; sparkplug: a Sparkplug B edge node (src/sim/sparkplug-frames.ts). */
  payload?: "json" | "sparkplug";
  /** The edge node's group and node id (default cg2 / sim-cg2). */
  sparkplug?: SparkplugNodeId;
  /** Connect, then wait for this before the first frame (e.g. until a Sparkplug host listens). */
  startAfter?: Promise<void>;
}

export async function runSimulator(opts: SimulatorOptions): Promise<{ frames: number; messages: number }> {
  const topicPrefix = checkTopicPrefix(opts.topicPrefix);
  const { speed } = opts;
  if (typeof speed !== "number" || Number.isNaN(speed) || speed < 0) {
    throw new Error(`simulator: speed: expected simulated seconds per real second (>= 0; 0 or Infinity for as fast as possible), found ${String(speed)}`);
  }
  if (typeof opts.mqttUrl !== "string" || !/^(mqtts?|wss?|tcp|ssl):\/\/./.test(opts.mqttUrl)) {
    throw new Error(`simulator: mqttUrl: expected a broker URL such as mqtt://127.0.0.1:1883, found ${JSON.stringify(opts.mqttUrl)}`);
  }
  const protocolVersion = opts.protocolVersion ?? 4;
  if (protocolVersion !== 4 && protocolVersion !== 5) {
    throw new Error(`simulator: protocolVersion: expected 4 (MQTT 3.1.1) or 5, found ${String(protocolVersion)}`);
  }
  const log = opts.log ?? (() => {});
  const signal = opts.signal;
  const fast = speed === 0 || speed === Infinity;

  // Build the first scenario before connecting: a bad name or step fails without touching the network.
  const scenarioOpts = (startTimeMs: number) => ({
    startTimeMs,
    ...(opts.stepS !== undefined ? { stepS: opts.stepS } : {}),
    ...(opts.seed !== undefined ? { seed: opts.seed } : {}),
  });
  let scenario: Scenario = createScenario(opts.scenario, scenarioOpts(opts.startTimeMs));
  const stepS = scenario.stepS;
  if (signal?.aborted) return { frames: 0, messages: 0 };

  const edge = opts.payload === "sparkplug" ? new SparkplugEdge(opts.sparkplug ?? { group: "cg2", node: "sim-cg2" }) : null;
  const client = await connect(opts.mqttUrl, protocolVersion, signal, edge?.nextSession(opts.startTimeMs));
  if (client === null) return { frames: 0, messages: 0 };
  // Sparkplug: every (re)connection is a new session: a new will (bdSeq + 1) for the next one,
  // and a birth before the next data.
  let birthDue = true;
  if (edge) {
    client.on("close", () => {
      const will = edge.nextSession(Date.now());
      client.options.will = { topic: will.topic, payload: will.payload, qos: 0, retain: false };
      birthDue = true;
    });
  }
  log(`simulator: connected to ${opts.mqttUrl} (MQTT ${protocolVersion === 4 ? "3.1.1" : "5"})`);
  let offlineLogged = false;
  client.on("offline", () => {
    if (!offlineLogged) log(`simulator: broker ${opts.mqttUrl} unreachable, ${fast ? "waiting" : "dropping frames"} until it is back`);
    offlineLogged = true;
  });
  client.on("connect", () => {
    if (offlineLogged) log(`simulator: reconnected to ${opts.mqttUrl}`);
    offlineLogged = false;
  });
  let lastError = "";
  client.on("error", (err) => {
    // Reconnection attempts repeat the same error every second: report it once.
    if (err.message !== lastError) log(`simulator: MQTT error: ${err.message}`);
    lastError = err.message;
  });
  client.on("connect", () => (lastError = ""));

  if (opts.startAfter) await Promise.race([opts.startAfter, new Promise<void>((ok) => signal?.addEventListener("abort", () => ok(), { once: true }))]);

  let frames = 0;
  let messages = 0;
  let dropped = 0;
  let loopIndex = 0;
  let loopStartMs = opts.startTimeMs;
  let framesInLoop = 0;
  const t0 = performance.now();
  log(
    `simulator: scenario "${scenario.name}" (${scenario.durationS} s at ${stepS} s steps${scenario.onsetS !== null ? `, onset at ${scenario.onsetS} s` : ""}), ` +
      `speed ${fast ? "as fast as possible" : `${speed}x`}, ${edge ? `Sparkplug B edge node ${edge.topic("NDATA")}` : `topics ${topicPrefix}/<tag>`}`,
  );

  try {
    while (!signal?.aborted) {
      let frame = scenario.next();
      if (frame === null) {
        if (!opts.loop) break;
        loopIndex++;
        loopStartMs += framesInLoop * stepS * 1000;
        framesInLoop = 0;
        scenario = createScenario(opts.scenario, scenarioOpts(loopStartMs));
        log(`simulator: loop ${loopIndex + 1}: scenario "${scenario.name}" restarts at ${new Date(loopStartMs).toISOString()}`);
        frame = scenario.next();
        if (frame === null) break;
      }

      const waitMs = fast ? 0 : t0 + (frames * stepS * 1000) / speed - performance.now();
      if (waitMs > 0) await abortableSleep(waitMs, signal);
      // Frames already due go out back to back, but socket events, timers and the abort
      // signal still get their turn between two frames.
      else await new Promise<void>((resolve) => setImmediate(resolve));
      if (fast && !client.connected) await waitForConnection(client, signal);
      if (signal?.aborted) break;

      if (edge) {
        const m = birthDue ? edge.birth(frame) : edge.data(frame);
        const ok = await publishOne(client, m.topic, m.payload, signal);
        if (ok) birthDue = false;
        messages += ok ? 1 : 0;
        dropped += ok ? 0 : frame.values.length;
      } else {
        const sent = await publishFrame(client, topicPrefix, frame, signal);
        messages += sent;
        dropped += frame.values.length - sent;
      }
      frames++;
      framesInLoop++;
      opts.onFrame?.(frame);
    }
  } finally {
    await closeClient(client);
  }
  log(`simulator: stopped after ${frames} frames, ${messages} messages${dropped > 0 ? `, ${dropped} dropped while the broker was away` : ""}`);
  return { frames, messages };
}

/** One message, waiting for the socket as publishFrame does; true when it went out. */
async function publishOne(client: MqttClient, topic: string, payload: Buffer, signal: AbortSignal | undefined): Promise<boolean> {
  let called = false;
  let ok = false;
  let wake: (() => void) | null = null;
  client.publish(topic, payload, { qos: 0 }, (err) => {
    called = true;
    ok = !err;
    wake?.();
  });
  if (!called) await untilCalledClosedOrAborted(client, (resolve) => (wake = resolve), signal);
  return ok;
}

async function publishFrame(client: MqttClient, topicPrefix: string, frame: SimFrame, signal: AbortSignal | undefined): Promise<number> {
  // mqtt.js calls back at once when the socket took the packet, on 'drain' when it had
  // to buffer, and with an error when not connected (QoS 0 is not queued). Waiting only
  // for a buffered write keeps one 'drain' listener at most and costs no promise otherwise.
  let sent = 0;
  const time = new Date(frame.tMs).toISOString();
  for (const { tag, value } of frame.values) {
    if (signal?.aborted) break;
    let called = false;
    let wake: (() => void) | null = null;
    client.publish(`${topicPrefix}/${tag}`, JSON.stringify({ value, time, quality: "good" }), { qos: 0 }, (err) => {
      called = true;
      if (!err) sent++;
      wake?.();
    });
    if (!called) await untilCalledClosedOrAborted(client, (resolve) => (wake = resolve), signal);
  }
  return sent;
}

/**
 * Wait for a deferred publish callback. A connection lost while waiting never emits
 * 'drain' on the dead socket, so 'close' ends the wait too (the message counts as dropped).
 */
function untilCalledClosedOrAborted(client: MqttClient, register: (resolve: () => void) => void, signal: AbortSignal | undefined): Promise<void> {
  return new Promise<void>((resolve) => {
    const finish = () => {
      signal?.removeEventListener("abort", finish);
      client.removeListener("close", finish);
      resolve();
    };
    signal?.addEventListener("abort", finish, { once: true });
    client.once("close", finish);
    register(finish);
  });
}

/** End the client gracefully (flushes what the socket holds); force it if the broker does not answer. */
async function closeClient(client: MqttClient): Promise<void> {
  const graceful = client.endAsync().then(
    () => true,
    () => true,
  );
  const timer = sleepMs(2000, false, { ref: false });
  if (!(await Promise.race([graceful, timer]))) await client.endAsync(true).catch(() => undefined);
}

async function connect(url: string, protocolVersion: 4 | 5, signal: AbortSignal | undefined, will?: { topic: string; payload: Buffer }): Promise<MqttClient | null> {
  const pending = mqtt.connectAsync(
    url,
    {
      protocolVersion,
      ...(will ? { will: { topic: will.topic, payload: will.payload, qos: 0 as const, retain: false } } : {}),
      clean: true,
      clientId: `millwarden-sim-${process.pid}-${Math.floor(Math.random() * 0xffffff).toString(16)}`,
      queueQoSZero: false,
      reconnectPeriod: 1000,
      connectTimeout: 10_000,
    },
    false, // fail fast on the first connection; reconnect later ones
  );
  let onAbort: (() => void) | undefined;
  const aborted = new Promise<null>((resolve) => {
    onAbort = () => resolve(null);
    signal?.addEventListener("abort", onAbort, { once: true });
  });
  try {
    const result = await Promise.race([pending, aborted]);
    if (result === null) {
      pending.then((c) => c.end(true)).catch(() => undefined);
      return null;
    }
    return result;
  } catch (err) {
    throw new Error(`simulator: could not connect to MQTT broker ${url}: ${err instanceof Error ? err.message : String(err)}`);
  } finally {
    if (onAbort) signal?.removeEventListener("abort", onAbort);
  }
}

async function abortableSleep(ms: number, signal: AbortSignal | undefined): Promise<void> {
  try {
    await sleepMs(ms, undefined, signal ? { signal } : undefined);
  } catch {
    // Aborted: the caller checks the signal.
  }
}

async function waitForConnection(client: MqttClient, signal: AbortSignal | undefined): Promise<void> {
  while (!client.connected && !signal?.aborted) await abortableSleep(100, signal);
}

function checkTopicPrefix(prefix: unknown): string {
  if (typeof prefix !== "string" || prefix.length === 0) {
    throw new Error(`simulator: topicPrefix: expected a non-empty topic such as "tarnholm/cg2", found ${JSON.stringify(prefix)}`);
  }
  if (/[+#]/.test(prefix) || prefix.includes("\0") || prefix.endsWith("/")) {
    throw new Error(`simulator: topicPrefix: expected a topic without wildcards (+, #), NUL or a trailing "/", found ${JSON.stringify(prefix)}`);
  }
  return prefix;
}
