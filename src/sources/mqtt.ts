// MQTT source: subscribes to the configured topics (read-only: it never publishes),
// decodes each message into samples and hands them on. Bad messages are counted per
// signal and reason, logged at most once a minute per signal and reason, and never
// stop the daemon.
import mqtt, { type MqttClient } from "mqtt";
import type { SignalConfig, SourceConfig } from "../config/schema.js";
import type { Sample } from "../core/types.js";
import { makeDecoder, parseBody, type SignalDecoder } from "./decode.js";
import { RateLimitedLog } from "./rate-limited-log.js";

export interface SourceStats {
  id: string;
  kind: string;
  connected: boolean;
  samples: number;
  rejected: number;
  rejectedBy: Record<string, number>;
  lastError: string | null;
}

export interface Source {
  readonly id: string;
  /** Starts connecting and returns at once: a broker that is down must not hold up the daemon. */
  start(onSample: (s: Sample) => void): Promise<void>;
  /** Resolves once the source is connected and subscribed (for tests and `check`). */
  whenReady(): Promise<void>;
  stop(): Promise<void>;
  stats(): SourceStats;
}

export interface SourceDeps {
  /** Wall clock for receive times; injected so tests can control it. */
  now: () => number;
  log: (level: "info" | "warn" | "error", msg: string) => void;
}


export class MqttSource implements Source {
  readonly id: string;
  private client: MqttClient | null = null;
  private readonly byTopic = new Map<string, SignalDecoder[]>();
  private connected = false;
  private samples = 0;
  private rejected = 0;
  private readonly rejectedBy: Record<string, number> = {};
  private lastError: string | null = null;
  private readonly limitedLog: RateLimitedLog;
  private markReady!: () => void;
  private readonly ready = new Promise<void>((ok) => (this.markReady = ok));

  constructor(
    private readonly cfg: SourceConfig,
    signals: SignalConfig[],
    private readonly deps: SourceDeps,
  ) {
    this.id = cfg.id;
    this.limitedLog = new RateLimitedLog(deps);
    for (const s of signals) {
      if (s.source !== cfg.id || !s.topic) continue;
      const list = this.byTopic.get(s.topic) ?? [];
      list.push(makeDecoder(s, cfg));
      this.byTopic.set(s.topic, list);
    }
  }

  async start(onSample: (s: Sample) => void): Promise<void> {
    const password = this.cfg.passwordEnv ? process.env[this.cfg.passwordEnv] : undefined;
    const client = mqtt.connect(this.cfg.url, {
      protocolVersion: this.cfg.protocolVersion,
      clientId: this.cfg.clientId ?? `millwarden-${process.pid}-${Math.random().toString(16).slice(2, 8)}`,
      username: this.cfg.username,
      password,
      reconnectPeriod: 2000,
      connectTimeout: 10_000,
      clean: true,
    });
    this.client = client;
    client.on("connect", () => {
      this.connected = true;
      this.deps.log("info", `source ${this.id}: connected to ${this.cfg.url}`);
      client.subscribe([...this.byTopic.keys()], { qos: this.cfg.qos }, (err) => {
        if (err) this.fail(`subscribe failed: ${err.message}`);
        else this.markReady();
      });
    });
    client.on("close", () => {
      if (this.connected) this.deps.log("warn", `source ${this.id}: connection to ${this.cfg.url} closed; retrying`);
      this.connected = false;
    });
    client.on("error", (err) => this.fail(err.message));
    client.on("message", (topic, payload) => this.onMessage(topic, payload, onSample));
  }

  private fail(msg: string) {
    this.lastError = msg;
    this.rateLimitedLog(`error:${msg}`, "warn", `source ${this.id}: ${msg}`);
  }

  private rateLimitedLog(key: string, level: "warn" | "error", msg: string) {
    this.limitedLog.log(key, level, msg);
  }

  private onMessage(topic: string, payload: Buffer, onSample: (s: Sample) => void) {
    const decoders = this.byTopic.get(topic);
    if (!decoders) return; // a wildcard-free subscription only brings mapped topics
    const receiveTimeMs = this.deps.now();
    const format = this.cfg.payload.format;
    const { parsed, error } = parseBody(payload, format);
    for (const d of decoders) {
      const r = d.decode(payload, parsed, error, receiveTimeMs);
      if (r.reject) {
        this.rejected++;
        const k = `${d.signal.id}:${r.reject}`;
        this.rejectedBy[k] = (this.rejectedBy[k] ?? 0) + 1;
        this.rateLimitedLog(k, "warn", `source ${this.id}: topic ${topic}, signal ${d.signal.id}: rejected (${r.reject}): ${r.detail}; counted ${this.rejectedBy[k]} so far`);
      } else this.samples++;
      onSample(r.sample);
    }
  }

  whenReady(): Promise<void> {
    return this.ready;
  }

  async stop(): Promise<void> {
    const c = this.client;
    this.client = null;
    this.connected = false;
    if (c) await c.endAsync(true);
  }

  stats(): SourceStats {
    return {
      id: this.id,
      kind: "mqtt",
      connected: this.connected,
      samples: this.samples,
      rejected: this.rejected,
      rejectedBy: { ...this.rejectedBy },
      lastError: this.lastError,
    };
  }
}
