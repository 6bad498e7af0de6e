// The republisher: core events → RepublishPlan → the site's messaging broker (never the
// control system), with a retained liveness topic (birth "online", Last Will "offline") and
// store-and-forward through the historian file while the broker is away.
//
//   record(events) ─▶ plan.messages() ─▶ connected and nothing queued? publish : UplinkQueue.push
//   on (re)connect: birth "online" ─▶ drain the queue in order (remove after the broker took each batch)
//
// Publishing only: the client subscribes to nothing, so nothing can reach the box this way.
import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import mqtt, { type IClientOptions, type MqttClient } from "mqtt";
import type { RepublishConfig } from "../config/sections/republish.js";
import { republishRoot } from "../config/sections/republish.js";
import type { AdvisoryView, CoreEvent } from "../core/types.js";
import { UplinkQueue, type UplinkMessage, type UplinkQueueStats } from "../store/uplink-queue.js";
import { RepublishPlan, type BoxInfo } from "./topics.js";
import { SparkplugNodePlan, type SparkplugMetricSpec } from "./sparkplug-node.js";

export interface RepublisherDeps {
  config: RepublishConfig;
  info: BoxInfo;
  /** The historian's file: the queue lives beside its tables. */
  historianPath: string;
  baseDir?: string | undefined;
  log: (level: "info" | "warn" | "error", msg: string) => void;
  /** Wall clock, for the liveness topic and queue times. */
  now: () => number;
  advisories: () => AdvisoryView[];
  /** The Sparkplug B metrics (derived, state and advisory), when republish.sparkplug is set. */
  sparkplugMetrics?: SparkplugMetricSpec[];
}

export interface RepublisherStats extends UplinkQueueStats {
  connected: boolean;
  published: number;
  lastError: string | null;
}

const DRAIN_BATCH = 200;

export class Republisher {
  private readonly plan: RepublishPlan;
  private readonly queue: UplinkQueue;
  private client: MqttClient | null = null;
  private connected = false;
  private draining = false;
  private published = 0;
  private lastError: string | null = null;
  private heartbeat: NodeJS.Timeout | null = null;
  private readonly spPlan: SparkplugNodePlan | null;
  private spClient: MqttClient | null = null;
  private spConnected = false;

  constructor(private readonly d: RepublisherDeps) {
    const c = d.config;
    this.plan = new RepublishPlan({ root: republishRoot(c), box: c.box, qos: c.qos, retainStates: c.retainStates, derived: c.derived });
    this.queue = UplinkQueue.openBeside(d.historianPath, c.queueMaxMessages);
    this.spPlan = c.sparkplug ? new SparkplugNodePlan(c.sparkplug.group, c.sparkplug.node, d.sparkplugMetrics ?? [], c.derived.minIntervalS) : null;
  }

  private options(sparkplugWill?: { topic: string; payload: Buffer }): IClientOptions {
    const c = this.d.config;
    const will = this.plan.status("offline", this.d.info, this.d.now());
    const clientId = c.clientId ?? `millwarden-${c.box}`;
    const opts: IClientOptions = {
      clientId: sparkplugWill ? `${clientId}-spb` : clientId,
      protocolVersion: c.protocolVersion,
      clean: true,
      reconnectPeriod: 2000,
      connectTimeout: 10_000,
      // Sparkplug 3.0: the NDEATH will is QoS 1, not retained.
      will: sparkplugWill ? { topic: sparkplugWill.topic, payload: sparkplugWill.payload, qos: 1, retain: false } : { topic: will.topic, payload: will.body, qos: c.qos, retain: true },
    };
    if (c.username !== undefined) opts.username = c.username;
    if (c.passwordEnv) {
      const pw = process.env[c.passwordEnv];
      if (pw) opts.password = pw;
      else this.d.log("warn", `republish: the environment variable ${c.passwordEnv} (passwordEnv) is not set or empty: connecting without a password`);
    }
    if (c.tls) {
      const base = this.d.baseDir ?? process.cwd();
      const read = (key: string, p: string) => {
        const abs = resolve(base, p);
        try {
          return readFileSync(abs);
        } catch (e) {
          throw new Error(`republish: cannot read tls.${key} file ${abs} (${(e as NodeJS.ErrnoException).code ?? (e as Error).message}): expected a PEM file readable by the daemon`);
        }
      };
      if (c.tls.ca) opts.ca = read("ca", c.tls.ca);
      if (c.tls.cert) opts.cert = read("cert", c.tls.cert);
      if (c.tls.key) opts.key = read("key", c.tls.key);
      opts.rejectUnauthorized = c.tls.rejectUnauthorized;
      if (c.tls.servername) opts.servername = c.tls.servername;
      if (!c.tls.rejectUnauthorized) this.d.log("warn", "republish: tls.rejectUnauthorized is false: any broker certificate is accepted (for a bench only)");
    }
    return opts;
  }

  start(): void {
    const c = this.d.config;
    const client = mqtt.connect(c.url, this.options());
    this.client = client;
    client.on("connect", () => {
      this.connected = true;
      this.lastError = null;
      this.d.log("info", `republish: connected to ${c.url} as ${republishRoot(c)} (${this.queue.depth} messages queued)`);
      this.publishNow([this.plan.status("online", this.d.info, this.d.now())]);
      void this.drain();
    });
    client.on("close", () => {
      if (this.connected) this.d.log("warn", `republish: lost the connection to ${c.url}; messages queue in the historian until it returns`);
      this.connected = false;
    });
    client.on("error", (e) => {
      this.lastError = e.message;
    });
    this.heartbeat = setInterval(() => {
      if (this.connected) this.publishNow([this.plan.status("online", this.d.info, this.d.now())]);
    }, c.heartbeatS * 1000);
    this.heartbeat.unref();
    if (this.spPlan) this.startSparkplug(this.spPlan);
  }

  /** The Sparkplug session: a will per connection (bdSeq + 1), NBIRTH after each connection. */
  private startSparkplug(plan: SparkplugNodePlan): void {
    const c = this.d.config;
    const client = mqtt.connect(c.url, this.options(plan.nextSession(this.d.now())));
    this.spClient = client;
    client.on("connect", () => {
      this.spConnected = true;
      const b = plan.birth(this.d.now());
      client.publish(b.topic, b.payload, { qos: 0, retain: false });
      this.d.log("info", `republish: Sparkplug B edge node ${plan.group}/${plan.node} born`);
    });
    client.on("close", () => {
      if (!this.spConnected) return;
      this.spConnected = false;
      // The next connection is a new session: a new will with the next bdSeq.
      const w = plan.nextSession(this.d.now());
      client.options.will = { topic: w.topic, payload: w.payload, qos: 1, retain: false };
    });
    client.on("error", (e) => {
      this.lastError = `sparkplug: ${e.message}`;
    });
  }

  /** Core events from the daemon's record(). */
  record(events: readonly CoreEvent[]): void {
    let views: Map<string, AdvisoryView> | null = null;
    const view = (id: string) => (views ??= new Map(this.d.advisories().map((v) => [v.id, v]))).get(id);
    if (this.spPlan) {
      const nd = this.spPlan.data(events, view, this.spConnected);
      if (nd) this.spClient!.publish(nd.topic, nd.payload, { qos: 0, retain: false });
    }
    const msgs = this.plan.messages(events, view);
    if (msgs.length === 0) return;
    if (this.connected && !this.draining && this.queue.depth === 0) this.publishNow(msgs);
    else {
      this.queue.push(msgs, this.d.now());
      if (this.connected) void this.drain();
    }
  }

  /** Publish; what the client fails to send goes to the queue (the liveness topic is never queued: it would be stale). */
  private publishNow(msgs: readonly UplinkMessage[]): void {
    const client = this.client!;
    for (const m of msgs) {
      client.publish(m.topic, m.body, { qos: m.qos, retain: m.retain }, (err) => {
        if (!err) this.published++;
        else if (this.client !== null && !m.topic.endsWith("/status")) this.queue.push([m], this.d.now());
      });
    }
  }

  private async drain(): Promise<void> {
    if (this.draining) return;
    this.draining = true;
    try {
      while (this.connected && this.queue.depth > 0) {
        const client = this.client;
        if (!client) break;
        const batch = this.queue.peek(DRAIN_BATCH);
        const ok = await Promise.all(
          batch.map((m) => new Promise<boolean>((done) => client.publish(m.topic, m.body, { qos: m.qos, retain: m.retain }, (err) => done(!err)))),
        );
        // Remove only what the broker took (QoS 1: acknowledged); the rest is tried again, in order.
        const firstFail = ok.indexOf(false);
        const taken = firstFail === -1 ? batch : batch.slice(0, firstFail);
        if (this.client === null) break;
        this.queue.remove(taken.map((m) => m.id));
        this.published += taken.length;
        if (firstFail !== -1) break;
      }
    } finally {
      this.draining = false;
    }
  }

  stats(): RepublisherStats {
    return { ...this.queue.stats(), connected: this.connected, published: this.published, lastError: this.lastError };
  }

  /** A clean stop says "offline" itself (the broker sends the will only when the connection is lost). */
  async stop(): Promise<void> {
    if (this.heartbeat) clearInterval(this.heartbeat);
    this.heartbeat = null;
    const sp = this.spClient;
    this.spClient = null;
    if (sp && this.spPlan) {
      if (this.spConnected) {
        const dth = this.spPlan.death(this.d.now());
        await new Promise<void>((done) => {
          const t = setTimeout(done, 2000);
          sp.publish(dth.topic, dth.payload, { qos: 1, retain: false }, () => {
            clearTimeout(t);
            done();
          });
        });
      }
      this.spConnected = false;
      await sp.endAsync(true).catch(() => undefined);
    }
    const client = this.client;
    this.client = null;
    if (client) {
      if (this.connected) {
        const m = this.plan.status("offline", this.d.info, this.d.now());
        await new Promise<void>((done) => {
          const t = setTimeout(done, 2000);
          client.publish(m.topic, m.body, { qos: m.qos, retain: true }, () => {
            clearTimeout(t);
            done();
          });
        });
      }
      this.connected = false;
      await client.endAsync(true).catch(() => undefined);
    }
    this.queue.close();
  }
}
