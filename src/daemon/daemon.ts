// The daemon: the edges around the pure core.
//
//   sources (MQTT) ─Sample─▶ clock ─Tick─▶ Engine ─events─▶ historian (SQLite, batched)
//                                            ▲            └▶ change feed ─▶ WebSocket clients
//                                 Command ───┘ (HTTP API)
//
// With `clock: wall` the core is ticked once a second from the box's clock; with
// `clock: data` it is ticked at each whole second of the samples' own time, which is
// what replay and accelerated simulation need. Either way the core sees time only as
// an argument.
import { fileURLToPath } from "node:url";
import { dirname, resolve } from "node:path";
import type { MillwardenConfig } from "../config/schema.js";
import { DataClock, Engine } from "../core/engine.js";
import type { AdvisoryTransition, AdvisoryView, Command, CoreEvent, Sample } from "../core/types.js";
import { ADVISORY_ONLY } from "../core/types.js";
import type { AuditInput } from "../store/accounts.js";
import { Historian } from "../store/historian.js";
import { historianInput } from "../replay/input.js";
import { ruleViews } from "../server/rules.js";
import { handoverFromHistorian } from "./handover-deps.js";
import { daemonMetrics } from "./metrics.js";
import type { Registry } from "prom-client";
import { MqttSource, type Source } from "../sources/mqtt.js";
import { ChangeFeed } from "./change-feed.js";
import { UnknownSeriesError, type AppDeps, type HealthView, type NotifyPort } from "../server/deps.js";
import { startServer } from "../server/listen.js";
import type { Logger } from "./log.js";
import { NotifyService } from "../notify/service.js";
import { Republisher } from "../republish/republisher.js";
import { sparkplugMetrics } from "../republish/sparkplug-node.js";
import type { AdvisoryOpcUaServer } from "../republish/opcua-server.js";
import { derivedQuantities, stateKeys } from "../core/quantities.js";

/** The history a warm start needs: the longest window the config uses, at least an hour. */
export function warmStartSpanS(cfg: MillwardenConfig): number {
  const windows = [
    3600,
    ...cfg.coPoints.flatMap((c) => [c.longWindowS, c.baseline?.windowS ?? 0]),
    ...cfg.dewPoints.map((d) => d.trendWindowS),
    ...cfg.analysers.map((a) => a.frozenWindowS),
  ];
  return Math.max(...windows);
}

/** How often the historian seals, prunes and reclaims space. */
const MAINTAIN_EVERY_MS = 60_000;

export const DASHBOARD_DIR = resolve(dirname(fileURLToPath(import.meta.url)), "../../dashboard");

export interface DaemonOptions {
  config: MillwardenConfig;
  log: Logger;
  /** Wall clock; injectable for tests. */
  now?: () => number;
  /** Start the HTTP server (default true). */
  serve?: boolean;
  /** Base folder for a relative storage path (default: the working folder). */
  baseDir?: string;
  /** The config file as read: its path and the SHA-256 of its bytes go into the audit log at start. */
  configFile?: { path: string; sha256: string };
}

export class Daemon {
  /** Replaced only on the data clock when the data turns out older than the stored history (see ingest). */
  engine: Engine;
  readonly historian: Historian;
  readonly feed: ChangeFeed;
  /** Notifications (outbox → channels), when the config has a notifications: section. */
  readonly notify: NotifyService | null;
  /** Publishing to the site's messaging broker, when the config has a republish: section. */
  readonly republish: Republisher | null;
  /** The read-only OPC UA server of derived values and advisory states, when the config has an opcuaServer: section. */
  opcuaServer: AdvisoryOpcUaServer | null = null;
  private readonly metrics: Registry;
  sources: Source[] = [];
  url: string | null = null;
  private server: { close(): Promise<void> } | null = null;
  private timer: NodeJS.Timeout | null = null;
  private dataClock: DataClock | null;
  /** Data clock: where the warm start ended, until the first sample says whether the data goes on from there. */
  private warmEndMs: number | null = null;
  private readonly now: () => number;
  private readonly startedAtMs: number;
  private lastTickMs = 0;
  private lastMaintainMs: number | null = null;
  private maintainTimer: NodeJS.Timeout | null = null;
  private readonly rejectedByCore: Record<string, number> = {};
  /** The series the trend route knows; rebuilt after a reload. */
  private series: Set<string> | null = null;
  /** A reload in progress: the next one waits for it. */
  private reloading: Promise<unknown> = Promise.resolve();

  /** `opts.config` is replaced by a reload (see reload()); everything else stays as started. */
  private constructor(private opts: DaemonOptions) {
    const cfg = opts.config;
    this.now = opts.now ?? Date.now;
    this.startedAtMs = this.now();
    this.engine = new Engine(cfg);
    const st = cfg.storage;
    this.historian = Historian.open({
      path: resolve(opts.baseDir ?? process.cwd(), st.path),
      synchronous: st.synchronous,
      rawRetentionDays: st.rawRetentionDays,
      rollupRetentionDays: st.rollupRetentionDays,
      sealIntervalS: st.sealIntervalS,
      ...(st.maxDatabaseBytes !== undefined ? { maxDatabaseBytes: st.maxDatabaseBytes } : {}),
    });
    if (this.historian.migrationBackup) opts.log.info(`historian migrated to a newer schema; the file as it was is kept in ${this.historian.migrationBackup}`);
    this.feed = new ChangeFeed(() => this.engine.snapshot());
    this.notify = cfg.notifications
      ? NotifyService.create({ config: cfg, historianPath: this.historian.path, baseDir: opts.baseDir, log: opts.log, now: this.now, advisories: () => this.engine.currentAdvisories() })
      : null;
    this.republish = cfg.republish
      ? new Republisher({
          config: cfg.republish,
          info: { site: cfg.site.name, plant: cfg.site.plant, units: cfg.units.map((u) => ({ id: u.id, name: u.name, kind: u.kind })) },
          historianPath: this.historian.path,
          baseDir: opts.baseDir,
          log: (level, msg) => opts.log[level](msg),
          now: this.now,
          advisories: () => this.engine.currentAdvisories(),
          sparkplugMetrics: sparkplugMetrics(derivedQuantities(cfg).map((q) => q.key), stateKeys(cfg).map((k) => k.key), cfg.rules.map((r) => r.id)),
        })
      : null;
    this.metrics = daemonMetrics({
      sources: () => this.sources.map((s) => s.stats()),
      rejectedByCore: () => this.rejectedByCore,
      ...(cfg.clock === "data" ? {} : { coreLagS: () => (this.now() - this.lastTickMs) / 1000 }),
      historian: () => this.historian.stats(),
      advisories: () => this.engine.currentAdvisories(),
      positions: () => [...new Set(this.opts.config.rules.map((r) => r.position))].sort(),
      inFlood: (p) => this.engine.inFlood(p),
      ...(this.notify ? { notifications: () => this.notify!.health() } : {}),
    });
    this.dataClock = cfg.clock === "data" ? new DataClock() : null;
  }

  /** Build the sources; node-opcua is loaded only when an OPC UA source is configured (it is large). */
  private async makeSources(cfg: MillwardenConfig = this.opts.config): Promise<Source[]> {
    const deps = { now: this.now, log: (level: "info" | "warn" | "error", msg: string) => this.opts.log[level](msg), baseDir: this.opts.baseDir };
    const opcua = cfg.sources.some((s) => s.kind === "opcua") ? await import("../sources/opcua.js") : null;
    return cfg.sources.map((s) => {
      // On the data clock the box's own clock says nothing about the data's time.
      const src = this.dataClock ? { ...s, maxClockSkewS: Number.POSITIVE_INFINITY } : s;
      return src.kind === "mqtt" ? new MqttSource(src, cfg.signals, deps) : new opcua!.OpcUaSource(src, cfg.signals, deps);
    });
  }

  static async start(opts: DaemonOptions): Promise<Daemon> {
    const d = new Daemon(opts);
    await d.begin();
    return d;
  }

  private async begin(): Promise<void> {
    const { config: cfg, log } = this.opts;
    this.sources = await this.makeSources();
    this.warmStart();
    this.restoreAdvisories();
    this.auditConfigLoaded();
    this.historian.start();
    this.feed.start();
    this.notify?.start();
    this.republish?.start();
    if (cfg.opcuaServer) {
      // node-opcua is loaded only when configured (it is large).
      const { startAdvisoryOpcUaServer } = await import("../republish/opcua-server.js");
      this.opcuaServer = await startAdvisoryOpcUaServer({
        config: cfg.opcuaServer,
        baseDir: this.opts.baseDir,
        derivedKeys: derivedQuantities(cfg).map((q) => q.key),
        stateKeys: stateKeys(cfg).map((k) => k.key),
        ruleIds: cfg.rules.map((r) => r.id),
        site: `${cfg.site.name}, ${cfg.site.plant}`,
        log: (m) => log.info(m),
      });
    }
    if (!this.dataClock) {
      this.tick(this.now());
      this.timer = setInterval(() => this.tick(this.now()), 1000);
      this.maintainTimer = setInterval(() => this.maintain(this.now()), MAINTAIN_EVERY_MS);
      this.maintainTimer.unref();
    }
    for (const s of this.sources) await s.start((sample) => this.ingest(sample));
    if (this.opts.serve !== false) {
      const srv = await startServer(this.appDeps(), { host: cfg.server.host, port: cfg.server.port, auth: { requireLoginForViews: cfg.server.requireLoginForViews } });
      this.server = srv;
      this.url = srv.url;
      log.info(`dashboard at ${srv.url}`);
    }
    log.info(`monitoring ${cfg.site.name}, ${cfg.site.plant}: ${cfg.signals.length} signals, ${cfg.rules.length} rules, clock ${cfg.clock}. ${ADVISORY_ONLY}`);
  }

  /**
   * Refill the core's rolling windows and baselines from recent history, so that after a
   * restart a CO gradient does not start blind. The samples go through the core exactly as in
   * a replay, with rules off (nothing is raised from the past; the advisory states come back
   * from the historian next) and nothing re-stored.
   */
  private warmStart(): void {
    const cfg = this.opts.config;
    const lastMs = this.historian.lastSampleTimeMs();
    if (lastMs === null) return;
    const spanS = Math.min(cfg.storage.warmStartMaxS, warmStartSpanS(cfg));
    if (spanS <= 0) return;
    const input = historianInput(this.historian, { fromMs: lastMs - spanS * 1000, toMs: lastMs, signals: cfg.signals, maxBadLines: 0 });
    const clock = new DataClock();
    let n = 0;
    try {
      input.forEach((s) => {
        for (const t of clock.due(s.sourceTimeMs)) this.engine.tick(t, { rules: false });
        this.engine.ingest(s);
        n++;
      });
      this.engine.tick(Math.floor(lastMs / 1000) * 1000, { rules: false });
    } finally {
      input.close();
    }
    this.lastTickMs = Math.floor(lastMs / 1000) * 1000;
    // On the data clock the next sample continues from here; live, the wall clock takes over.
    // On the data clock the first sample decides (ingest): data going on from here continues this
    // state; older data (a replay of another day into the same file) starts the core afresh.
    if (this.dataClock) this.warmEndMs = lastMs;
    this.opts.log.info(`warm start: ${n} stored samples of the last ${Math.round(spanS / 60)} min up to ${new Date(lastMs).toISOString()} refilled the windows and baselines`);
  }

  /** Which configuration ran from when is on record: the file's SHA-256 at every start. */
  private auditConfigLoaded(): void {
    const cfg = this.opts.config;
    const f = this.opts.configFile;
    this.audit({
      atMs: this.now(),
      actor: "daemon",
      action: "config.loaded",
      target: f?.path ?? null,
      detail: { sha256: f?.sha256 ?? null, site: cfg.site.name, signals: cfg.signals.length, rules: cfg.rules.length, requireLoginForViews: cfg.server.requireLoginForViews },
      source: "daemon",
    });
  }

  /** One audit entry, also as a log line (without its detail); a failure to write is logged, never thrown. */
  private audit(e: AuditInput): string | null {
    const err = this.historian.accounts().appendAudit(e);
    this.opts.log.info(`audit: ${e.action} by ${e.actor}${e.target === null ? "" : ` on ${e.target}`} (${e.source})`);
    if (err !== null) this.opts.log.warn(err);
    return err;
  }

  /**
   * Take back the advisory states stored before a restart (acknowledgements, latches, shelves,
   * out of service), so that an acknowledged advisory does not ring again. On the data clock
   * the data's time is not known yet: shelves then expire at the first ticks instead.
   */
  private restoreAdvisories(): void {
    const log = this.opts.log;
    const { states, unreadable, shelvedAtStop } = this.historian.loadAdvisoryStates();
    if (states.length === 0 && unreadable.length === 0 && shelvedAtStop.length === 0) return;
    const nowMs = this.dataClock ? Math.max(0, ...states.map((p) => p.lastChangeMs)) : this.now();
    const r = this.engine.restoreAdvisories(states, nowMs, shelvedAtStop);
    this.record(r.events);
    if (r.restored.length) log.info(`restored the state of ${r.restored.length} advisories: ${r.restored.join(", ")}`);
    if (r.dropped.length) log.warn(`advisory states not restored (rule removed or changed): ${r.dropped.join(", ")}`);
    if (unreadable.length) log.warn(`advisory states unreadable in the historian, judged afresh: ${unreadable.join(", ")}`);
  }

  /** Data time of the last tick (the core's "now"). */
  get coreNowMs(): number {
    return this.lastTickMs;
  }

  ingest(sample: Sample): void {
    if (this.dataClock) {
      // A message refused by the decoder carries the box's time; on the data clock it belongs at the data's now.
      if (sample.quality === "bad" && sample.sourceTimeMs === sample.receiveTimeMs && this.lastTickMs && sample.qualityReason) {
        sample.sourceTimeMs = sample.receiveTimeMs = this.lastTickMs;
      } else sample.receiveTimeMs = sample.sourceTimeMs;
      if (this.warmEndMs !== null) this.continueOrRestart(sample.sourceTimeMs);
      for (const t of this.dataClock.due(sample.sourceTimeMs)) this.tick(t);
    }
    const outcome = this.engine.ingest(sample);
    if (outcome === "accepted") this.historian.appendSample(sample);
    else this.rejectedByCore[outcome] = (this.rejectedByCore[outcome] ?? 0) + 1;
  }

  /** Data clock, first sample after a warm start: go on from the stored state, or start afresh before it. */
  private continueOrRestart(firstMs: number): void {
    const endMs = this.warmEndMs!;
    this.warmEndMs = null;
    if (firstMs >= endMs) {
      this.dataClock!.due(endMs);
      return;
    }
    this.opts.log.warn(
      `the data (from ${new Date(firstMs).toISOString()}) is older than the stored history (up to ${new Date(endMs).toISOString()}): ` +
        "the core starts afresh, without the warm start and the restored advisory states",
    );
    this.engine = new Engine(this.opts.config);
    this.dataClock = new DataClock();
    this.lastTickMs = 0;
  }

  tick(nowMs: number): void {
    this.lastTickMs = nowMs;
    const events = this.engine.tick(nowMs);
    this.record(events);
    this.notify?.tick(nowMs);
    // On the data clock, retention and sealing follow the data's own time (a replay of last
    // month must not be pruned as if it were old); live, a timer does it.
    if (this.dataClock && (this.lastMaintainMs === null || nowMs - this.lastMaintainMs >= MAINTAIN_EVERY_MS)) this.maintain(nowMs);
  }

  /** Seal recent rows into chunks, apply retention and the disk budget (never throws). */
  maintain(nowMs: number): void {
    this.lastMaintainMs = nowMs;
    const r = this.historian.maintain(nowMs);
    if (r.error) this.opts.log.warn(`historian maintenance: ${r.error}`);
  }

  private record(events: CoreEvent[]): void {
    const transitions: AdvisoryTransition[] = [];
    for (const e of events) {
      if (e.kind === "derived") this.historian.appendDerived(e);
      else if (e.kind === "advisory") {
        this.historian.appendTransition(e);
        transitions.push(e);
        this.opts.log[e.tier === "warning" && e.transition !== "clear" ? "warn" : "info"](
          `advisory ${e.advisoryId} ${e.transition} (${e.from} -> ${e.to}, ${e.tier}) at ${new Date(e.atMs).toISOString()}: ${e.why} [advisory only]`,
        );
      } else {
        this.historian.appendEvent(e);
        if (e.kind === "nuisance") this.opts.log.warn(`${e.type} at ${e.position}: ${e.why} [advisory only]`);
      }
    }
    if (transitions.length) {
      const err = this.historian.saveAdvisoryStates(this.engine.persistAdvisories(), transitions[transitions.length - 1]!.atMs);
      if (err) this.opts.log.warn(`advisory states not saved (a restart would judge them afresh): ${err}`);
    }
    this.feed.changed(transitions);
    this.notify?.record(events, this.lastTickMs);
    this.republish?.record(events);
    if (this.opcuaServer) {
      let views: Map<string, AdvisoryView> | null = null;
      this.opcuaServer.record(events, (id) => (views ??= new Map(this.engine.currentAdvisories().map((v) => [v.id, v]))).get(id));
    }
  }

  health(): HealthView {
    const h = this.historian.stats();
    const sources = this.sources.map((s) => {
      const st = s.stats();
      return { id: st.id, kind: st.kind, connected: st.connected, samples: st.samples, rejected: st.rejected, lastError: st.lastError };
    });
    const ok = h.state === "ok" && sources.every((s) => s.connected);
    return {
      status: ok ? "ok" : "degraded",
      advisoryOnly: ADVISORY_ONLY,
      startedAtMs: this.startedAtMs,
      nowMs: this.lastTickMs,
      sources,
      historian: { state: h.state, queueDepth: h.queueDepth, rowsWritten: h.rowsWritten, lastError: h.lastError },
      ...(this.notify ? { notifications: this.notify.health() } : {}),
    };
  }

  /** Acknowledge links, the delivery log and Web Push sign-up for the HTTP side. */
  private notifyPort(n: NotifyService): NotifyPort {
    return {
      inspectAckLink: (token) => n.inspectAckLink(token),
      useAckLink: (token, by) => n.useAckLink(token, by),
      // The notifier runs on the core's time, like the command that acknowledged on the board.
      acknowledged: (advisoryId, by) => n.acknowledge({ advisoryId, by, atMs: this.dataClock ? this.lastTickMs : this.now() }),
      pinHash: (user) => this.historian.accounts().findPinHash(user),
      deliveries: (limit) => n.deliveries(limit),
      vapidPublicKey: () => n.vapidPublicKey,
      personOf: (user) => n.personOf(user),
      subscribe: (personId, sub) => n.subscribe(personId, sub),
      unsubscribe: (personId, endpoint) => n.unsubscribe(personId, endpoint),
    };
  }

  appDeps(): AppDeps {
    return {
      getState: () => this.engine.snapshot(),
      health: () => this.health(),
      advisories: ({ limit }) => {
        this.historian.flush();
        return { active: this.engine.currentAdvisories(), history: this.historian.transitions({ limit, newestFirst: true }) };
      },
      command: (advisoryId, kind, body) => {
        const atMs = this.dataClock ? this.lastTickMs : this.now();
        // The server has checked the account's role; the core knows operator and engineer, and an admin acts as engineer.
        if (body.role === "viewer") return { ok: false, status: 403, error: `${kind} of advisory "${advisoryId}" needs the operator role or above; "${body.by}" is a viewer` };
        const base = { advisoryId, by: body.by, atMs, role: body.role === "admin" || body.role === "engineer" ? ("engineer" as const) : ("operator" as const) };
        const cmd: Command =
          kind === "ack" || kind === "reset"
            ? { ...base, kind, ...(body.note !== undefined ? { note: body.note } : {}) }
            : kind === "shelve"
              ? { ...base, kind, reason: body.reason ?? "", ...(body.durationS !== undefined ? { durationS: body.durationS } : {}), ...(body.oneShot !== undefined ? { oneShot: body.oneShot } : {}) }
              : kind === "out-of-service"
                ? { ...base, kind, reason: body.reason ?? "" }
                : { ...base, kind, ...(body.reason !== undefined ? { reason: body.reason } : {}) };
        const r = this.engine.command(cmd);
        if (!r.ok) return r;
        this.record(r.events);
        return { ok: true, advisory: r.advisory };
      },
      trend: (name, fromMs, toMs, points) => {
        if (!(this.series ??= new Set(this.engine.seriesNames())).has(name)) throw new UnknownSeriesError(name);
        this.historian.flush();
        return this.historian.trend(name, fromMs, toMs, points).points;
      },
      subscribe: (l) => this.feed.subscribe(l),
      dashboardDir: DASHBOARD_DIR,
      accounts: {
        findUser: (name) => this.historian.accounts().findUser(name),
        auditLog: (limit) => this.historian.accounts().auditLog(limit),
        appendAudit: (e) => this.audit(e),
      },
      ...(this.notify ? { notify: this.notifyPort(this.notify) } : {}),
      metrics: async () => ({ contentType: this.metrics.contentType, body: await this.metrics.metrics() }),
      // From the config in force (a reload replaces it).
      rules: () => ruleViews(this.opts.config),
      handover: (hours) => handoverFromHistorian(this.historian, this.engine.snapshot(), this.opts.config, hours),
    };
  }

  /**
   * Swap in a new config while running (SIGHUP, `millwarden reload`). `next` has been parsed and
   * cross-checked by the caller; a new Engine is built from it here before anything changes, so a
   * config the core refuses leaves the running one in place. Then, like a restart without losing
   * the process: sources whose settings or signals changed are stopped and made anew (the others
   * keep their connections), the core is replaced by a fresh engine warm-started from the
   * historian (windows and baselines refilled), and the advisory states are restored (a rule that
   * changed is judged afresh, as after a restart). `server`, `storage`, `clock`, `notifications`,
   * `republish` and `opcuaServer` are read at start only: a change there is applied at the next
   * restart (logged).
   */
  reload(next: MillwardenConfig, configFile?: { path: string; sha256: string }): Promise<{ ok: true; restartedSources: string[]; keptUntilRestart: string[] } | { ok: false; error: string }> {
    const run = this.reloading.then(() => this.reloadNow(next, configFile));
    this.reloading = run.catch(() => undefined);
    return run;
  }

  private async reloadNow(next: MillwardenConfig, configFile?: { path: string; sha256: string }): Promise<{ ok: true; restartedSources: string[]; keptUntilRestart: string[] } | { ok: false; error: string }> {
    const { log } = this.opts;
    const prev = this.opts.config;
    const same = (a: unknown, b: unknown) => JSON.stringify(a) === JSON.stringify(b);
    // Built once at start (the HTTP server, the historian, the clock, the notifier, the republishers).
    const keptUntilRestart = (["server", "storage", "clock", "notifications", "republish", "opcuaServer"] as const).filter((k) => !same(prev[k], next[k]));
    const sourceKey = (cfg: MillwardenConfig, id: string) => ({ source: cfg.sources.find((s) => s.id === id), signals: cfg.signals.filter((s) => s.source === id) });
    const changed = next.sources.filter((s) => !same(sourceKey(prev, s.id), sourceKey(next, s.id))).map((s) => s.id);
    let engine: Engine;
    let fresh: Source[];
    try {
      engine = new Engine(next);
      fresh = await this.makeSources({ ...next, sources: next.sources.filter((s) => changed.includes(s.id)) });
    } catch (e) {
      const error = `the core refused the new config: ${(e as Error).message}`;
      log.error(`reload refused, the running config stays: ${error}`);
      return { ok: false, error };
    }
    const nextIds = new Set(next.sources.map((s) => s.id));
    const leaving = this.sources.filter((s) => changed.includes(s.id) || !nextIds.has(s.id));
    for (const s of leaving) await s.stop().catch((e: Error) => log.warn(`source ${s.id} did not stop cleanly: ${e.message}`));
    // From here on synchronous: no sample or tick lands between the old engine and the new one.
    // The advisory states are already stored (record() saves them at every transition); the
    // queued samples are written now so that the warm start sees them.
    this.historian.flush();
    this.opts = { ...this.opts, config: { ...next, ...Object.fromEntries(keptUntilRestart.map((k) => [k, prev[k]])) }, ...(configFile ? { configFile } : {}) };
    this.engine = engine;
    this.series = null;
    this.warmStart();
    this.restoreAdvisories();
    this.sources = [...this.sources.filter((s) => !leaving.includes(s)), ...fresh];
    this.auditConfigLoaded();
    for (const s of fresh) await s.start((sample) => this.ingest(sample));
    if (keptUntilRestart.length) log.warn(`reload: ${keptUntilRestart.join(", ")} changed; read at start only, applied at the next restart`);
    log.info(`reload: config applied: ${next.signals.length} signals, ${next.rules.length} rules (${next.rules.map((r) => r.id).join(", ")}); sources restarted: ${changed.length ? changed.join(", ") : "none"}`);
    return { ok: true, restartedSources: changed, keptUntilRestart };
  }

  async stop(): Promise<void> {
    // A reload under way finishes first, so that it cannot start sources after the stop.
    await this.reloading;
    if (this.timer) clearInterval(this.timer);
    if (this.maintainTimer) clearInterval(this.maintainTimer);
    this.timer = this.maintainTimer = null;
    for (const s of this.sources) await s.stop().catch(() => undefined);
    this.feed.stop();
    if (this.server) await this.server.close();
    this.server = null;
    await this.notify?.stop();
    await this.republish?.stop();
    await this.opcuaServer?.close();
    this.opcuaServer = null;
    // The advisory states are saved at every transition (record()); close() flushes the queued rows.
    this.historian.close();
  }
}
