// MQTT source: subscribes to the configured topics (read-only: it never publishes),
// decodes each message into samples and hands them on. Bad messages are counted per
// signal and reason, logged at most once a minute per signal and reason, and never
// stop the daemon.
//
//   broker ──message(topic)──▶ spBv1.0/... and Sparkplug signals? ──▶ SparkplugReader (sparkplug.ts)
//                               exact topic of a signal?          ──▶ decode.ts, one parse per topic
//                               neither                           ──▶ counted as unmatched, not read
//
// MQTT 3.1.1 or 5; TLS with a CA, a client certificate and key (PEM files read at start); a
// user name with the password from the environment; QoS 0 or 1; a persistent session (clean:
// false with a fixed clientId; MQTT 5 with a session expiry) so that QoS 1 messages published
// during a short outage arrive after the reconnection. An outage shows in the core as stale
// signals (no receive time within 3 expected periods), never as steady values.
import { readFileSync } from "node:fs";
import { resolve } from "node:path";
import mqtt, { type IClientOptions, type MqttClient } from "mqtt";
import type { SignalConfig, SourceConfig } from "../config/schema.js";
import type { Sample } from "../core/types.js";
import { makeDecoder, parseBody, type Decoded, type SignalDecoder } from "./decode.js";
import { RateLimitedLog } from "./rate-limited-log.js";
import { NAMESPACE, SparkplugReader, type SparkplugNodeStats, type SparkplugOutcome } from "./sparkplug.js";

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

export interface MqttSourceDeps extends SourceDeps {
  /** Relative TLS file paths are resolved against this (default: the working directory). */
  baseDir?: string;
}

export interface MqttSourceStats extends SourceStats {
  url: string;
  protocolVersion: 4 | 5;
  tls: boolean;
  /** Set when the connection is not protected as it should be on a plant (no TLS, any certificate accepted). */
  securityWarning: string | null;
  /** Times the connection came back after being lost. */
  reconnections: number;
  /** Whether the broker still had our session at the last connection (clean: false). */
  sessionPresent: boolean | null;
  /** Messages on topics no signal maps (a wildcard subscription brings them): counted, never read. */
  unmatched: number;
  subscriptions: string[];
  /** Per Sparkplug B edge node: online, births, deaths, sequence gaps. */
  sparkplug: SparkplugNodeStats[];
}

const RECONNECT_MS = 2000;
/** With clean: false on MQTT 5 and no sessionExpiryIntervalS: the broker keeps the session an hour. */
const DEFAULT_SESSION_EXPIRY_S = 3600;

/** Does an MQTT topic filter match a topic? A wildcard at the first level does not match $-topics. */
export function topicMatches(filter: string, topic: string): boolean {
  const f = filter.split("/");
  const t = topic.split("/");
  if (topic.startsWith("$") && (f[0] === "+" || f[0] === "#")) return false;
  for (let i = 0; i < f.length; i++) {
    if (f[i] === "#") return true;
    if (i >= t.length) return false;
    if (f[i] !== "+" && f[i] !== t[i]) return false;
  }
  return f.length === t.length;
}

const TLS_UNTRUSTED = new Set([
  "UNABLE_TO_GET_ISSUER_CERT_LOCALLY",
  "UNABLE_TO_GET_ISSUER_CERT",
  "UNABLE_TO_VERIFY_LEAF_SIGNATURE",
  "SELF_SIGNED_CERT_IN_CHAIN",
  "DEPTH_ZERO_SELF_SIGNED_CERT",
  "CERT_SIGNATURE_FAILURE",
]);

/** A connection error in the words of the config: which setting to look at. */
export function explainConnectionError(err: Error & { code?: unknown }, cfg: SourceConfig): string {
  const code = typeof err.code === "string" || typeof err.code === "number" ? err.code : undefined;
  // OpenSSL's own text ("80CC...:error:0A00045C:SSL routines:ssl3_read_bytes:<reason>:<file>:<line>:...") down to its reason.
  const msg = err.message.trim().replace(/^[0-9A-F]+:error:[0-9A-F]+:SSL routines:[^:]*:([^:]+):.*$/s, "$1");
  const tls = cfg.tls;
  if (typeof code === "string") {
    if (TLS_UNTRUSTED.has(code)) {
      const trusted = tls?.ca ? `tls.ca ${tls.ca}` : "the system's CAs (set tls.ca to the plant's CA)";
      return `TLS: the broker's certificate is not signed by a trusted CA, per ${trusted} (${code}: ${msg})`;
    }
    if (code === "CERT_HAS_EXPIRED" || code === "CERT_NOT_YET_VALID") return `TLS: the broker's certificate is outside its validity period (${code}: ${msg})`;
    if (code === "ERR_TLS_CERT_ALTNAME_INVALID") return `TLS: the broker's certificate is not for the host in url (set the url's host to a name in the certificate, or tls.servername) (${msg})`;
    if (/CERTIFICATE_REQUIRED|HANDSHAKE_FAILURE/.test(code) || /certificate required/i.test(msg)) {
      return tls?.cert ? `TLS: the broker refused the client certificate tls.cert ${tls.cert} (${code}: ${msg})` : `TLS: the broker asks for a client certificate: set tls.cert and tls.key (${code}: ${msg})`;
    }
    if (/BAD_CERTIFICATE|UNKNOWN_CA|CERTIFICATE_UNKNOWN|UNSUPPORTED_CERTIFICATE/.test(code)) return `TLS: the broker did not accept the client certificate${tls?.cert ? ` tls.cert ${tls.cert}` : ""} (${code}: ${msg})`;
  }
  // CONNACK refusals: 4/5 in MQTT 3.1.1, 134/135 in MQTT 5.
  if (code === 4 || code === 134) return `the broker refused the login: bad user name or password (check username and the variable ${cfg.passwordEnv ?? "passwordEnv"}) (${msg})`;
  if (code === 5 || code === 135) return `the broker refused the connection: not authorized (user name, password or client certificate) (${msg})`;
  if (code === 2 || code === 133) return `the broker refused the client id ${cfg.clientId ?? "(generated)"} (${msg})`;
  return msg;
}

export class MqttSource implements Source {
  readonly id: string;
  private client: MqttClient | null = null;
  private readonly byTopic = new Map<string, SignalDecoder[]>();
  private readonly sparkplug: SparkplugReader;
  private readonly filters: string[];
  private readonly securityWarning: string | null;
  private connected = false;
  private everConnected = false;
  private reconnections = 0;
  private sessionPresent: boolean | null = null;
  private samples = 0;
  private rejected = 0;
  private unmatched = 0;
  private readonly rejectedBy: Record<string, number> = {};
  private lastError: string | null = null;
  private readonly limitedLog: RateLimitedLog;
  private markReady!: () => void;
  private readonly ready = new Promise<void>((ok) => (this.markReady = ok));

  constructor(
    private readonly cfg: SourceConfig,
    signals: SignalConfig[],
    private readonly deps: MqttSourceDeps,
  ) {
    this.id = cfg.id;
    this.limitedLog = new RateLimitedLog(deps);
    const mine = signals.filter((s) => s.source === cfg.id);
    this.sparkplug = new SparkplugReader(mine, cfg);
    for (const s of mine) {
      if (s.sparkplug) continue;
      if (cfg.payload.format === "sparkplug") {
        throw new Error(`source ${cfg.id}: signal "${s.id}" has no sparkplug: mapping, but the source reads only Sparkplug B (payload: sparkplug); give it sparkplug: { group, node, device, metric } or move it to a JSON source`);
      }
      if (!s.topic) continue;
      const list = this.byTopic.get(s.topic) ?? [];
      list.push(makeDecoder(s, cfg));
      this.byTopic.set(s.topic, list);
    }
    // One subscription per declared filter; exact topics and Sparkplug nodes only where no filter covers them.
    const declared = cfg.subscribe ?? [];
    const exact = [...this.byTopic.keys()].filter((t) => !declared.some((f) => topicMatches(f, t)));
    const sparkplugFilters = this.sparkplug.filters().filter((f) => !declared.some((d) => covers(d, f)));
    this.filters = [...new Set([...declared, ...exact, ...sparkplugFilters])];

    const warnings: string[] = [];
    const secure = /^(mqtts|wss):\/\//.test(cfg.url);
    if (!secure && !isLoopbackUrl(cfg.url)) warnings.push(`no TLS on ${cfg.url}: values${cfg.username ? " and the login" : ""} travel in clear text, anyone on the network path can read or alter them (use mqtts:// with tls:)`);
    if (cfg.tls?.rejectUnauthorized === false) warnings.push(`tls.rejectUnauthorized is false: any broker certificate is accepted, so anything on the network path can pose as the broker (for a bench only, never on a plant)`);
    this.securityWarning = warnings.length ? warnings.join("; ") : null;
  }

  /** Reads the TLS files and starts connecting; throws (naming the file) when one cannot be read. */
  async start(onSample: (s: Sample) => void): Promise<void> {
    const cfg = this.cfg;
    const opts: IClientOptions = {
      protocolVersion: cfg.protocolVersion,
      clientId: cfg.clientId ?? `millwarden-${process.pid}-${Math.random().toString(16).slice(2, 8)}`,
      reconnectPeriod: RECONNECT_MS,
      connectTimeout: 10_000,
      clean: cfg.clean ?? true,
      // We subscribe again ourselves at every connection (and check what the broker granted).
      resubscribe: false,
    };
    if (cfg.username !== undefined) opts.username = cfg.username;
    if (cfg.passwordEnv) {
      const pw = process.env[cfg.passwordEnv];
      if (pw) opts.password = pw;
      else this.deps.log("warn", `source ${this.id}: the environment variable ${cfg.passwordEnv} (passwordEnv) is not set or empty: connecting without a password`);
    }
    if (cfg.protocolVersion === 5) {
      const expiry = cfg.sessionExpiryIntervalS ?? (cfg.clean === false ? DEFAULT_SESSION_EXPIRY_S : undefined);
      if (expiry !== undefined) opts.properties = { sessionExpiryInterval: expiry };
    }
    const tls = cfg.tls;
    if (tls) {
      const base = this.deps.baseDir ?? process.cwd();
      const read = (key: "ca" | "cert" | "key", path: string) => {
        const abs = resolve(base, path);
        try {
          return readFileSync(abs);
        } catch (e) {
          const why = (e as NodeJS.ErrnoException).code ?? (e as Error).message;
          this.lastError = `cannot read tls.${key} file ${abs} (${why})`;
          throw new Error(`source ${this.id}: cannot read tls.${key} file ${abs} (${why}): expected a PEM file readable by the daemon`);
        }
      };
      if (tls.ca) opts.ca = read("ca", tls.ca);
      if (tls.cert) opts.cert = read("cert", tls.cert);
      if (tls.key) opts.key = read("key", tls.key);
      opts.rejectUnauthorized = tls.rejectUnauthorized;
      if (tls.servername) opts.servername = tls.servername;
    } else if (/^(mqtts|wss):\/\//.test(cfg.url)) opts.rejectUnauthorized = true;
    if (this.securityWarning) this.deps.log("warn", `source ${this.id}: ${this.securityWarning}`);
    if (cfg.clean === false && cfg.qos === 0) this.deps.log("info", `source ${this.id}: a persistent session keeps only QoS 1 messages for us; with qos: 0 an outage still loses what was published meanwhile`);

    const client = mqtt.connect(cfg.url, opts);
    this.client = client;
    client.on("connect", (packet) => {
      this.connected = true;
      this.lastError = null;
      if (this.everConnected) this.reconnections++;
      this.everConnected = true;
      this.sessionPresent = cfg.clean === false ? packet.sessionPresent === true : null;
      const session = cfg.clean === false ? (packet.sessionPresent ? "; session resumed" : "; new session (messages published while away, if any, are lost)") : "";
      this.deps.log("info", `source ${this.id}: connected to ${cfg.url} (MQTT ${cfg.protocolVersion === 5 ? "5" : "3.1.1"}${tls || /^(mqtts|wss):/.test(cfg.url) ? ", TLS" : ""})${session}`);
      if (this.filters.length === 0) {
        this.markReady();
        return;
      }
      client.subscribe(this.filters, { qos: cfg.qos }, (err, granted) => {
        if (err) {
          this.fail(`subscribe failed: ${err.message}`);
          return;
        }
        // A failure code (0x80 in MQTT 3.1.1; 0x80 and up in MQTT 5, e.g. 0x87 not authorized) instead of a QoS.
        const refused = (granted ?? []).filter((g) => g.qos >= 0x80).map((g) => g.topic);
        if (refused.length) this.fail(`the broker refused the subscription to ${refused.join(", ")} (is the account allowed to read it?)`);
        if (refused.length < this.filters.length) this.markReady();
      });
    });
    client.on("close", () => {
      if (this.connected) this.deps.log("warn", `source ${this.id}: connection to ${cfg.url} closed; retrying every ${RECONNECT_MS / 1000} s (signals go stale meanwhile)`);
      this.connected = false;
    });
    client.on("disconnect", (packet) => {
      this.fail(`the broker disconnected us (MQTT 5 reason ${packet.reasonCode ?? "?"}${packet.properties?.reasonString ? `: ${packet.properties.reasonString}` : ""})`);
    });
    client.on("error", (err) => this.fail(explainConnectionError(err, cfg)));
    client.on("message", (topic, payload) => this.onMessage(topic, payload, onSample));
  }

  private fail(msg: string) {
    this.lastError = msg;
    this.limitedLog.log(`error:${msg}`, "warn", `source ${this.id}: ${msg}`);
  }

  private count(key: string, msg: string) {
    this.rejected++;
    const n = (this.rejectedBy[key] = (this.rejectedBy[key] ?? 0) + 1);
    this.limitedLog.log(key, "warn", `${msg}; counted ${n} so far`);
  }

  private emit(topic: string, r: Decoded, onSample: (s: Sample) => void) {
    if (r.reject) this.count(`${r.sample.signal}:${r.reject}`, `source ${this.id}: topic ${topic}, signal ${r.sample.signal}: rejected (${r.reject}): ${r.detail}`);
    else this.samples++;
    onSample(r.sample);
  }

  private onMessage(topic: string, payload: Buffer, onSample: (s: Sample) => void) {
    const receiveTimeMs = this.deps.now();
    if (this.sparkplug.size > 0 && topic.startsWith(`${NAMESPACE}/`)) {
      const out: SparkplugOutcome = this.sparkplug.handle(topic, payload, receiveTimeMs);
      for (const n of out.notes) this.count(`${n.scope}:${n.reason}`, `source ${this.id}: Sparkplug ${n.scope}: ${n.reason}: ${n.detail}`);
      for (const d of out.decoded) this.emit(topic, d, onSample);
      if (!out.unmatched) return;
    }
    const decoders = this.cfg.payload.format === "sparkplug" ? undefined : this.byTopic.get(topic);
    if (!decoders) {
      if (this.unmatched++ === 0) this.deps.log("info", `source ${this.id}: messages on topics no signal maps (first: ${topic.slice(0, 120)}) are counted in the source's stats and not read`);
      return;
    }
    const format = this.cfg.payload.format === "number" ? "number" : "json";
    const { parsed, error } = parseBody(payload, format);
    for (const d of decoders) this.emit(topic, d.decode(payload, parsed, error, receiveTimeMs), onSample);
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

  stats(): MqttSourceStats {
    return {
      id: this.id,
      kind: "mqtt",
      connected: this.connected,
      samples: this.samples,
      rejected: this.rejected,
      rejectedBy: { ...this.rejectedBy },
      lastError: this.lastError,
      url: this.cfg.url,
      protocolVersion: this.cfg.protocolVersion,
      tls: /^(mqtts|wss):\/\//.test(this.cfg.url),
      securityWarning: this.securityWarning,
      reconnections: this.reconnections,
      sessionPresent: this.sessionPresent,
      unmatched: this.unmatched,
      subscriptions: [...this.filters],
      sparkplug: this.sparkplug.stats(),
    };
  }
}

/** Does filter `a` cover every topic filter `b` matches (b may hold wildcards)? */
function covers(a: string, b: string): boolean {
  const fa = a.split("/");
  const fb = b.split("/");
  for (let i = 0; i < fa.length; i++) {
    if (fa[i] === "#") return true;
    if (i >= fb.length || fb[i] === "#") return false;
    if (fa[i] !== "+" && fa[i] !== fb[i]) return false;
  }
  return fa.length === fb.length;
}

function isLoopbackUrl(url: string): boolean {
  try {
    const h = new URL(url).hostname;
    return h === "localhost" || h === "::1" || h === "[::1]" || h.startsWith("127.");
  } catch {
    return false;
  }
}
