// OPC UA source: one session on one server, one subscription, monitored items grouped by
// (sampling interval, queue size). Each data change becomes a sample (opcua-decode.ts).
//
//   start ─▶ own certificate ─▶ connect ─▶ session ─▶ read units and EURange (once)
//                ▲                                          │
//                │ backoff (1 s … 30 s)                      ▼
//             failure ◀──────────────── subscription + monitored items ─▶ samples
//
// READ-ONLY BY CONSTRUCTION. millwarden stands beside the control system and never
// writes to it (DESIGN.md §7): this file never calls the Write, Call, HistoryUpdate,
// AddNodes/DeleteNodes or any other service that changes a server. The session is used
// only through ReadOnlySession below (Read, TranslateBrowsePathsToNodeIds, the
// subscription services), so a write does not even type-check here; the tests count the
// requests that reach a server over a full run and find none of them.
//
// Connection loss: the client's own reconnection repairs the channel, reactivates or
// recreates the session and transfers or recreates the subscription with its monitored
// items (node-opcua). From "connection lost" until "session restored" the source reports
// connected=false and delivers nothing, so the daemon's signals go stale rather than
// keep steady values. A subscription the server has ended, or a first connection that
// fails, is rebuilt from scratch here with a backoff. A watchdog marks the source
// disconnected when neither data nor a keep-alive came for three keep-alive periods
// (a cable pulled without the socket noticing).
import {
  AttributeIds,
  DataChangeFilter,
  DataChangeTrigger,
  DeadbandType,
  MessageSecurityMode,
  OPCUAClient,
  SecurityPolicy,
  TimestampsToReturn,
  UserTokenType,
  makeBrowsePath,
  type BrowsePath,
  type BrowsePathResult,
  type ClientMonitoredItemGroup,
  type ClientSession,
  type ClientSubscription,
  type DataValue,
  type OPCUACertificateManager,
  type ReadValueIdOptions,
  type UserIdentityInfo,
} from "node-opcua";
import { resolve } from "node:path";
import type { OpcUaSourceConfig, SignalConfig } from "../config/schema.js";
import type { Sample } from "../core/types.js";
import type { Source, SourceDeps, SourceStats } from "./mqtt.js";
import { makeOpcUaDecoder, type OpcUaDecoder } from "./opcua-decode.js";
import { ensureOwnCertificate, openCertificateManager } from "./opcua-pki.js";
import { unitMismatch } from "./opcua-units.js";
import { RateLimitedLog } from "./rate-limited-log.js";

/** The only services the source uses: reading and subscribing. */
export interface ReadOnlySession {
  read(nodesToRead: ReadValueIdOptions[]): Promise<DataValue[]>;
  translateBrowsePath(browsePaths: BrowsePath[]): Promise<BrowsePathResult[]>;
  createSubscription2(options: {
    requestedPublishingInterval: number;
    requestedLifetimeCount: number;
    requestedMaxKeepAliveCount: number;
    maxNotificationsPerPublish: number;
    publishingEnabled: boolean;
    priority: number;
  }): Promise<ClientSubscription>;
}
const readOnly = (s: ClientSession): ReadOnlySession => s;

export interface OpcUaSourceStats extends SourceStats {
  endpointUrl: string;
  securityMode: OpcUaSourceConfig["securityMode"];
  securityPolicy: OpcUaSourceConfig["securityPolicy"];
  /** Set when the connection runs without security (mode None). */
  securityWarning: string | null;
  /** Units or ranges on the server that differ from the config (read once per connection). */
  unitWarnings: string[];
  /** Times the connection was lost and came back. */
  reconnections: number;
  /** Notifications flagged Overflow: the server's queue for the item was full and dropped values. */
  queueOverflows: number;
}

export interface OpcUaSourceDeps extends SourceDeps {
  /** Relative pkiFolder paths are resolved against this (default: the working directory). */
  baseDir?: string;
}

interface Group {
  samplingIntervalMs: number;
  queueSize: number;
  decoders: OpcUaDecoder[];
}

const BACKOFF_MIN_MS = 1000;
const BACKOFF_MAX_MS = 30_000;
/** The server keeps the session and subscription (with queued values) this long without us. */
const SESSION_TIMEOUT_MS = 5 * 60_000;
const KEEPALIVE_TARGET_MS = 5000;
const MAX_UNIT_WARNINGS = 100;
const BROWSE_CHUNK = 250;
const READ_CHUNK = 500;

export class OpcUaSource implements Source {
  readonly id: string;
  private readonly groups: Group[] = [];
  private readonly decoders: OpcUaDecoder[] = [];
  private readonly pkiFolder: string;
  private readonly securityWarning: string | null;
  private onSample: ((s: Sample) => void) | null = null;
  private client: OPCUAClient | null = null;
  private cm: OPCUACertificateManager | null = null;
  private subscription: ClientSubscription | null = null;
  private connected = false;
  private stopping = false;
  private running: Promise<void> | null = null;
  private readonly wake = new AbortController();
  private rebuild: (() => void) | null = null;
  private samples = 0;
  private rejected = 0;
  private readonly rejectedBy: Record<string, number> = {};
  private lastError: string | null = null;
  private unitWarnings: string[] = [];
  private reconnections = 0;
  private queueOverflows = 0;
  private readonly limitedLog: RateLimitedLog;
  private lastActivity = 0;
  private keepAliveMs = KEEPALIVE_TARGET_MS;
  private watchdog: NodeJS.Timeout | null = null;
  private markReady!: () => void;
  private readonly ready = new Promise<void>((ok) => (this.markReady = ok));

  constructor(
    private readonly cfg: OpcUaSourceConfig,
    signals: SignalConfig[],
    private readonly deps: OpcUaSourceDeps,
  ) {
    this.id = cfg.id;
    this.limitedLog = new RateLimitedLog(deps);
    this.pkiFolder = resolve(deps.baseDir ?? process.cwd(), cfg.pkiFolder);
    const byParams = new Map<string, Group>();
    for (const s of signals) {
      if (s.source !== cfg.id || !s.nodeId) continue;
      const samplingIntervalMs = s.samplingIntervalMs ?? cfg.samplingIntervalMs;
      // Enough room for every sample of one publishing interval (plus one), unless set.
      const queueSize = s.queueSize ?? Math.min(1000, Math.ceil(cfg.publishingIntervalMs / Math.max(samplingIntervalMs, 1)) + 1);
      const key = `${samplingIntervalMs}/${queueSize}`;
      let g = byParams.get(key);
      if (!g) byParams.set(key, (g = { samplingIntervalMs, queueSize, decoders: [] }));
      const d = makeOpcUaDecoder(s, cfg);
      g.decoders.push(d);
      this.decoders.push(d);
    }
    this.groups = [...byParams.values()];
    this.securityWarning =
      cfg.securityMode === "None"
        ? `security None on ${cfg.endpointUrl}: values travel unsigned and unencrypted, anyone on the network path can read or alter them` +
          (cfg.username ? "; the user name login is sent without channel security" : "")
        : null;
  }

  async start(onSample: (s: Sample) => void): Promise<void> {
    if (this.running) throw new Error(`source ${this.id}: already started`);
    this.onSample = onSample;
    if (this.securityWarning) this.deps.log("warn", `source ${this.id}: ${this.securityWarning}`);
    this.running = this.run();
    this.watchdog = setInterval(() => this.checkLiveness(), 1000);
    this.watchdog.unref();
  }

  whenReady(): Promise<void> {
    return this.ready;
  }

  async stop(): Promise<void> {
    this.stopping = true;
    this.connected = false;
    this.wake.abort();
    if (this.watchdog) clearInterval(this.watchdog);
    this.watchdog = null;
    this.rebuild?.(); // ends the loop's wait on the live subscription
    await this.teardown();
    await this.running?.catch(() => undefined);
    this.running = null;
    const cm = this.cm;
    this.cm = null;
    await cm?.dispose().catch(() => undefined);
  }

  stats(): OpcUaSourceStats {
    return {
      id: this.id,
      kind: "opcua",
      connected: this.connected,
      samples: this.samples,
      rejected: this.rejected,
      rejectedBy: { ...this.rejectedBy },
      lastError: this.lastError,
      endpointUrl: this.cfg.endpointUrl,
      securityMode: this.cfg.securityMode,
      securityPolicy: this.cfg.securityPolicy,
      securityWarning: this.securityWarning,
      unitWarnings: [...this.unitWarnings],
      reconnections: this.reconnections,
      queueOverflows: this.queueOverflows,
    };
  }

  // ---- the connection loop ----

  private async run(): Promise<void> {
    let delayMs = BACKOFF_MIN_MS;
    while (!this.stopping) {
      try {
        const broken = await this.connectOnce();
        delayMs = BACKOFF_MIN_MS;
        await broken;
      } catch (e) {
        if (this.stopping) break;
        this.fail(this.explain(e as Error));
      }
      this.connected = false;
      await this.teardown();
      if (this.stopping) break;
      await sleep(delayMs, this.wake.signal);
      delayMs = Math.min(BACKOFF_MAX_MS, delayMs * 2);
    }
  }

  /** Connect and subscribe; resolves with a promise that settles when the subscription is gone for good. */
  private async connectOnce(): Promise<Promise<void>> {
    const own = await ensureOwnCertificate(this.pkiFolder);
    this.cm ??= openCertificateManager(this.pkiFolder, this.cfg.trustUnknownServerCertificates);
    const identity = this.identity();
    const client = OPCUAClient.create({
      applicationName: "millwarden",
      applicationUri: own.applicationUri,
      clientName: `millwarden-${this.id}`,
      clientCertificateManager: this.cm,
      certificateFile: own.certificateFile,
      privateKeyFile: own.privateKeyFile,
      securityMode: MessageSecurityMode[this.cfg.securityMode],
      securityPolicy: SecurityPolicy[this.cfg.securityPolicy],
      endpointMustExist: false,
      keepSessionAlive: true,
      requestedSessionTimeout: SESSION_TIMEOUT_MS,
      // The first connection fails fast, with its reason, into the loop above;
      // once connected, the client's own reconnection takes over (see below).
      connectionStrategy: { maxRetry: 0, initialDelay: BACKOFF_MIN_MS, maxDelay: 10_000 },
    });
    this.client = client;
    let broke!: () => void;
    const broken = new Promise<void>((ok) => (broke = ok));
    this.rebuild = broke;

    client.on("connection_lost", () => {
      if (this.connected) this.deps.log("warn", `source ${this.id}: connection to ${this.cfg.endpointUrl} lost; reconnecting (signals go stale meanwhile)`);
      this.connected = false;
      this.lastError = "connection lost";
    });
    client.on("reconnection_attempt_has_failed", (err, message) => this.fail(`reconnection failed: ${message} ${err.message}`.trim()));

    await client.connect(this.cfg.endpointUrl);
    // Reconnect for ever after a drop, with the client's backoff (initialDelay … maxDelay).
    client.connectionStrategy.maxRetry = -1;
    const session = await client.createSession(identity);
    session.on("session_restored", () => {
      this.reconnections++;
      this.lastActivity = performance.now();
      this.connected = true;
      this.deps.log("info", `source ${this.id}: connection to ${this.cfg.endpointUrl} restored, subscription recovered`);
    });
    session.on("keepalive_failure", () => this.fail("session keep-alive failed"));
    const ro = readOnly(session);

    await this.readUnits(ro).catch((e: Error) => this.fail(`reading engineering units failed: ${e.message}`));
    await this.subscribe(ro, broke);
    if (this.stopping) throw new Error("stopped while connecting");
    this.connected = true;
    this.lastError = null;
    this.lastActivity = performance.now();
    this.deps.log(
      "info",
      `source ${this.id}: connected to ${this.cfg.endpointUrl} (${this.cfg.securityMode}, ${this.cfg.securityPolicy}), ${this.decoders.length} monitored items`,
    );
    this.markReady();
    return broken;
  }

  private identity(): UserIdentityInfo {
    if (!this.cfg.username) return { type: UserTokenType.Anonymous };
    const env = this.cfg.passwordEnv!;
    const password = process.env[env];
    if (password === undefined) throw new Error(`the password environment variable ${env} is not set (expected the password of user "${this.cfg.username}")`);
    return { type: UserTokenType.UserName, userName: this.cfg.username, password };
  }

  private async subscribe(session: ReadOnlySession, broke: () => void): Promise<void> {
    const pubMs = this.cfg.publishingIntervalMs;
    const keepAliveCount = Math.max(1, Math.ceil(KEEPALIVE_TARGET_MS / pubMs));
    const sub = await session.createSubscription2({
      requestedPublishingInterval: pubMs,
      requestedMaxKeepAliveCount: keepAliveCount,
      requestedLifetimeCount: Math.max(3 * keepAliveCount, Math.ceil(SESSION_TIMEOUT_MS / pubMs)),
      // No limit from our side. A server may cap one response (node-opcua: 1000) and send
      // the rest in further responses; values it had to drop show as queueOverflows.
      maxNotificationsPerPublish: 0,
      publishingEnabled: true,
      priority: 10,
    });
    this.subscription = sub;
    this.keepAliveMs = sub.publishingInterval * sub.maxKeepAliveCount;
    sub.on("keepalive", () => (this.lastActivity = performance.now()));
    sub.on("terminated", () => {
      if (!this.stopping) this.fail("the server ended the subscription; subscribing again");
      broke();
    });
    sub.on("internal_error", (err: Error) => {
      this.fail(`subscription error: ${err.message}; subscribing again`);
      broke();
    });

    for (const g of this.groups) {
      const items: ReadValueIdOptions[] = g.decoders.map((d) => ({ nodeId: d.signal.nodeId!, attributeId: AttributeIds.Value }));
      // No deadband: a deadband can hide a slow CO rise. The trigger includes the source
      // timestamp, so a value that holds steady (a stopped drive reading 0 kW) still reports
      // at each scan and is not mistaken for stale data.
      const filter = new DataChangeFilter({ trigger: DataChangeTrigger.StatusValueTimestamp, deadbandType: DeadbandType.None, deadbandValue: 0 });
      const group: ClientMonitoredItemGroup = await sub.monitorItems(
        items,
        { samplingInterval: g.samplingIntervalMs, queueSize: g.queueSize, discardOldest: true, filter },
        TimestampsToReturn.Both,
      );
      group.on("changed", (_item, dv, index) => this.onChange(g.decoders[index], dv));
      group.monitoredItems.forEach((item, i) => {
        const sc = item.statusCode;
        if (sc.isGood()) return;
        const d = g.decoders[i]!;
        this.count(d, sc.name, `node ${d.signal.nodeId}: the server refused the monitored item (${sc.name})`);
        const now = this.deps.now();
        this.onSample?.({ signal: d.signal.id, value: Number.NaN, quality: "bad", qualityReason: sc.name, sourceTimeMs: now, receiveTimeMs: now });
      });
    }
  }

  private onChange(d: OpcUaDecoder | undefined, dv: DataValue) {
    if (!d || this.stopping) return;
    this.lastActivity = performance.now();
    if (dv.statusCode.hasOverflowBit) {
      this.queueOverflows++;
      this.rateLimitedLog("overflow", "warn", `source ${this.id}: the server's queue overflowed (signal ${d.signal.id} and maybe others): values were dropped; ${this.queueOverflows} so far`);
    }
    const r = d.decode(dv, this.deps.now());
    if (r.reject) this.count(d, r.reject, r.detail ?? r.reject);
    else this.samples++;
    // One publish response carries several values per item, item after item. Hand them on in
    // source-time order across items, so that a consumer following the data's own clock never
    // sees one item run ahead of the others (and take them for stale).
    this.batch.push(r.sample);
    if (this.batch.length === 1) setImmediate(() => this.flushBatch());
  }

  private batch: Sample[] = [];

  private flushBatch() {
    const out = this.batch;
    this.batch = [];
    out.sort((a, b) => a.sourceTimeMs - b.sourceTimeMs);
    for (const s of out) this.onSample?.(s);
  }

  private count(d: OpcUaDecoder, reason: string, detail: string) {
    this.rejected++;
    const k = `${d.signal.id}:${reason}`;
    this.rejectedBy[k] = (this.rejectedBy[k] ?? 0) + 1;
    this.rateLimitedLog(k, "warn", `source ${this.id}: signal ${d.signal.id}: rejected (${reason}): ${detail}; counted ${this.rejectedBy[k]} so far`);
  }

  /** Engineering units and EURange of every node (HasProperty children), compared with the config. */
  private async readUnits(session: ReadOnlySession): Promise<void> {
    const warnings: string[] = [];
    for (let i = 0; i < this.decoders.length; i += BROWSE_CHUNK) {
      const chunk = this.decoders.slice(i, i + BROWSE_CHUNK);
      const paths = chunk.flatMap((d) => [makeBrowsePath(d.signal.nodeId!, ".EngineeringUnits"), makeBrowsePath(d.signal.nodeId!, ".EURange")]);
      const found = await session.translateBrowsePath(paths);
      const reads: { d: OpcUaDecoder; what: "unit" | "range"; nodeId: ReadValueIdOptions["nodeId"] }[] = [];
      found.forEach((r, k) => {
        const target = r.statusCode.isGood() ? r.targets?.[0]?.targetId : undefined;
        if (target) reads.push({ d: chunk[k >> 1]!, what: k % 2 === 0 ? "unit" : "range", nodeId: target });
      });
      for (let j = 0; j < reads.length; j += READ_CHUNK) {
        const part = reads.slice(j, j + READ_CHUNK);
        const values = await session.read(part.map((p) => ({ nodeId: p.nodeId, attributeId: AttributeIds.Value })));
        values.forEach((dv, k) => {
          const w = this.compare(part[k]!.d.signal, part[k]!.what, dv);
          if (w) warnings.push(w);
        });
      }
    }
    this.unitWarnings = warnings.slice(0, MAX_UNIT_WARNINGS);
    for (const w of warnings.slice(0, 20)) this.deps.log("warn", `source ${this.id}: ${w}`);
    if (warnings.length > 20) this.deps.log("warn", `source ${this.id}: ${warnings.length - 20} more unit or range differences (see the source's stats)`);
  }

  private compare(s: SignalConfig, what: "unit" | "range", dv: DataValue): string | null {
    if (!dv.statusCode.isGood()) return null;
    const v = dv.value.value as Record<string, unknown> | null;
    if (!v || typeof v !== "object") return null;
    if (what === "unit") {
      const displayName = (v.displayName as { text?: string | null } | undefined)?.text ?? null;
      const unitId = typeof v.unitId === "number" ? v.unitId : null;
      const m = unitMismatch(s.unit, { unitId, displayName });
      return m ? `signal ${s.id} (${s.nodeId}): ${m}` : null;
    }
    const low = v.low;
    const high = v.high;
    if (typeof low !== "number" || typeof high !== "number" || !s.range) return null;
    // EURange is in the server's unit: the config's range is after scale and offset.
    const a = low * s.scale + s.offset;
    const b = high * s.scale + s.offset;
    const [lo, hi] = a <= b ? [a, b] : [b, a];
    if (s.range[0] >= lo && s.range[1] <= hi) return null;
    return `signal ${s.id} (${s.nodeId}): the configured range [${s.range.join(", ")}] ${s.unit} reaches beyond the server's EURange [${low}, ${high}]` +
      (s.scale !== 1 || s.offset !== 0 ? ` (that is [${lo}, ${hi}] after scale and offset)` : "");
  }

  private checkLiveness() {
    if (!this.connected || this.stopping) return;
    const silentMs = performance.now() - this.lastActivity;
    const limitMs = Math.max(3 * this.keepAliveMs, 10_000);
    if (silentMs > limitMs) {
      this.connected = false;
      this.fail(`no data and no keep-alive from the server for ${Math.round(silentMs / 1000)} s`);
      // A silent link is repaired from scratch (the client may not notice a dead socket).
      this.rebuild?.();
    }
  }

  private async teardown(): Promise<void> {
    const client = this.client;
    this.client = null;
    this.subscription = null;
    this.rebuild = null;
    if (!client) return;
    // Closing the session deletes the subscription on the server; bounded in time, the
    // server may be gone.
    await Promise.race([client.disconnect().catch(() => undefined), sleep(5000)]);
  }

  private explain(e: Error): string {
    const msg = e.message.replace(/\s+/g, " ").trim();
    if (/certificate/i.test(msg) && this.cfg.securityMode !== "None") {
      return `${msg}; if this is the right server, trust its certificate (millwarden pki list, then millwarden pki trust <file>; the PKI folder is ${this.pkiFolder})`;
    }
    return msg;
  }

  private fail(msg: string) {
    this.lastError = msg;
    this.rateLimitedLog(`error:${msg}`, "warn", `source ${this.id}: ${msg}`);
  }

  private rateLimitedLog(key: string, level: "warn" | "error", msg: string) {
    this.limitedLog.log(key, level, msg);
  }
}

function sleep(ms: number, signal?: AbortSignal): Promise<void> {
  return new Promise((ok) => {
    if (signal?.aborted) return ok();
    const t = setTimeout(done, ms);
    function done() {
      clearTimeout(t);
      signal?.removeEventListener("abort", done);
      ok();
    }
    signal?.addEventListener("abort", done, { once: true });
  });
}
