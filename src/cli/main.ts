#!/usr/bin/env node
// millwarden command line: parses arguments and calls the parts; no logic of its own.
import { createHash } from "node:crypto";
import { readFileSync, rmSync, writeFileSync } from "node:fs";
import { parseArgs } from "node:util";
import { resolve } from "node:path";
import { fileURLToPath } from "node:url";
import { ConfigError, loadConfig, parseConfig } from "../config/load.js";
import type { MillwardenConfig } from "../config/schema.js";
import { Daemon } from "../daemon/daemon.js";
import { startEmbeddedBroker } from "../daemon/embedded-broker.js";
import { makeLogger } from "../daemon/log.js";
import { ADVISORY_ONLY } from "../core/types.js";
import { runSimulator } from "../sim/publish.js";
import { scenarioNames } from "../sim/plant.js";
import { summarizeConfig } from "./summary.js";
import { asSparkplugConfig } from "../sim/sparkplug-frames.js";
import { probeSources, renderProbe } from "./probe.js";
import { replayCommand } from "./replay.js";
import { UserCommandError, userCommand } from "./user.js";
import { FleetUsageError, fleetCommand } from "./fleet.js";
import { backupCommand, reloadCommand } from "./operate.js";

const ROOT = resolve(fileURLToPath(import.meta.url), "../../..");
export const DEMO_CONFIG = resolve(ROOT, "config/demo.yaml");
const DEMO_BROKER_PORT = 18830;

const USAGE = `millwarden: advisory-only monitoring for coal grinding plants

usage:
  millwarden run --config FILE [--log json|text] [--pid-file FILE]
                                                SIGTERM/SIGINT: graceful stop (a second one forces it); SIGHUP: reload the config
  millwarden reload --pid-file FILE [--config FILE]
                                                check the config (when given), then tell the running daemon to reload it
  millwarden backup --config FILE --to FILE     a consistent copy of the historian while the daemon runs
  millwarden demo [--source mqtt|sparkplug|opcua] [--speed N] [--scenario NAME] [--port N] [--broker-port N] [--data DIR]
  millwarden check --config FILE [--connect [--wait S]]   validate; with --connect also listen to each source and report each signal
  millwarden simulate --scenario NAME --mqtt URL [--speed N] [--prefix TOPIC] [--loop] [--seed N] [--payload json|sparkplug [--group G --node N]]
  millwarden export --config FILE --from T --to T [--signals ID,ID] > FILE.csv   history as CSV (time,signal,value,quality)
  millwarden replay --config FILE --input FILE [--from T --to T] [--out events.jsonl] [--compare OTHER.yaml] [--position NAME] [--json]
                                                history (CSV or historian) through the core: events and the alarm-management summary
  millwarden pki list|show [--pki DIR]          OPC UA certificates: trusted and rejected servers, our own
  millwarden pki trust FILE [--pki DIR]         trust a server certificate (compare its thumbprint first)
  millwarden fleet --mqtt URL [--prefix P] [--timeout S] [--once] [--serve PORT]
                                                every box republishing to the site broker: units, states, advisories, liveness
  millwarden user add NAME --role viewer|operator|engineer|admin --config FILE
  millwarden user list|passwd NAME|remove NAME --config FILE
                                                local accounts; the password is asked for (not shown) or read from stdin

${ADVISORY_ONLY}`;

class UsageError extends Error {}

function num(v: string | undefined, name: string, dflt: number): number {
  if (v === undefined) return dflt;
  const n = Number(v);
  if (!Number.isFinite(n) || n < 0) throw new UsageError(`--${name} expects a non-negative number; found "${v}"`);
  return n;
}

function waitForSignal(): Promise<string> {
  return new Promise((ok) => {
    const on = (sig: string) => ok(sig);
    process.once("SIGINT", () => on("SIGINT"));
    process.once("SIGTERM", () => on("SIGTERM"));
  });
}

function requireConfig(path: string | undefined): MillwardenConfig {
  if (!path) throw new UsageError("--config FILE is required");
  return loadConfig(path);
}

/** The config parsed from the very bytes whose SHA-256 goes into the audit log. */
function configWithHash(path: string | undefined): { cfg: MillwardenConfig; configFile: { path: string; sha256: string } } {
  if (!path) throw new UsageError("--config FILE is required");
  let bytes: Buffer;
  try {
    bytes = readFileSync(path);
  } catch (e) {
    throw new ConfigError([{ file: path, line: 1, column: 1, key: "", message: `cannot read the file: ${(e as Error).message}` }]);
  }
  const cfg = parseConfig(bytes.toString("utf8"), path);
  return { cfg, configFile: { path: resolve(path), sha256: createHash("sha256").update(bytes).digest("hex") } };
}

async function cmdRun(args: string[]): Promise<number> {
  const { values } = parseArgs({ args, options: { config: { type: "string" }, log: { type: "string", default: "json" }, "pid-file": { type: "string" } } });
  const { cfg, configFile } = configWithHash(values.config);
  const log = makeLogger(values.log === "text" ? "text" : "json");
  // SIGHUP: parse and cross-check the file again, then the daemon builds a new core from it and
  // swaps it in; a bad file leaves the running config in place, its problems logged with file:line.
  let daemon: Daemon | null = null;
  let hupDuringStart = false;
  const onHup = () => {
    if (!daemon) {
      hupDuringStart = true;
      return;
    }
    let next: ReturnType<typeof configWithHash>;
    try {
      next = configWithHash(values.config);
    } catch (e) {
      log.error(`reload refused, the running config stays:\n${(e as Error).message}`);
      return;
    }
    daemon.reload(next.cfg, next.configFile).catch((e: Error) => log.error(`reload failed part way (${e.message}): restart the service to start clean`));
  };
  // Before the start: SIGHUP's default action would end the process.
  process.on("SIGHUP", onHup);
  const running = (daemon = await Daemon.start({ config: cfg, log, configFile }));
  if (hupDuringStart) onHup();
  const pidFile = values["pid-file"] ? resolve(values["pid-file"]) : null;
  if (pidFile) writeFileSync(pidFile, `${process.pid}\n`);
  const sig = await waitForSignal();
  log.info(`${sig}: stopping (flushing the historian, closing sources and sessions; a second SIGTERM or SIGINT forces the exit)`);
  const force = (s: string) => {
    log.error(`${s} again: exit without a clean stop (the historian keeps what was committed)`);
    process.exit(1);
  };
  process.once("SIGINT", force);
  process.once("SIGTERM", force);
  // Not the default action (which ends the process) while stopping: ignored, with a word.
  process.off("SIGHUP", onHup);
  process.on("SIGHUP", () => log.warn("SIGHUP while stopping: no reload"));
  await running.stop();
  if (pidFile) rmSync(pidFile, { force: true });
  log.info("stopped");
  return 0;
}

async function cmdDemo(args: string[]): Promise<number> {
  const { values } = parseArgs({
    args,
    options: {
      speed: { type: "string" },
      scenario: { type: "string", default: "demo" },
      port: { type: "string" },
      "broker-port": { type: "string" },
      data: { type: "string", default: "data/demo" },
      source: { type: "string", default: "mqtt" },
    },
  });
  const speed = num(values.speed, "speed", 1);
  if (speed === 0) throw new UsageError("--speed must be above 0 for the demo");
  if (values.source !== "mqtt" && values.source !== "sparkplug" && values.source !== "opcua") throw new UsageError(`--source expects mqtt, sparkplug or opcua; found "${values.source}"`);
  const log = makeLogger("text");
  const base = loadConfig(DEMO_CONFIG);
  const abort = new AbortController();
  const plant = values.source === "opcua" ? await demoOverOpcUa(base, values, speed, abort.signal, log) : await demoOverMqtt(base, values, speed, abort.signal, log, values.source === "sparkplug");
  const cfg: MillwardenConfig = {
    ...plant.config,
    // Faster than real time, the box's clock no longer matches the data: follow the data's own time.
    clock: speed === 1 ? "wall" : "data",
    storage: { ...base.storage, path: resolve(values.data, "millwarden.db") },
    server: { ...base.server, port: num(values.port, "port", base.server.port) },
  };
  // The demo runs demo.yaml with its source, storage and port replaced; the record names the file it started from.
  const configFile = { path: DEMO_CONFIG, sha256: createHash("sha256").update(readFileSync(DEMO_CONFIG)).digest("hex") };
  const daemon = await Daemon.start({ config: cfg, log, configFile });
  if (plant.release) {
    await Promise.all(daemon.sources.map((s) => s.whenReady()));
    plant.release();
  }
  process.stdout.write(
    `\nmillwarden demo: simulated plant "Tarnholm Works, coal grinding line 2", scenario "${values.scenario}" at ${speed}x\n` +
      `  ${plant.describe}\n  database              ${cfg.storage.path}\n  dashboard             ${daemon.url}\n` +
      `\n${ADVISORY_ONLY}\nPress Ctrl-C to stop.\n\n`,
  );
  await waitForSignal();
  log.info("stopping the demo");
  abort.abort();
  await plant.stopped;
  await daemon.stop();
  await plant.close();
  return 0;
}

interface DemoPlant {
  config: MillwardenConfig;
  describe: string;
  stopped: Promise<unknown>;
  close(): Promise<void>;
  /** Sparkplug B: the simulator waits for this, so the daemon is subscribed before the node's birth. */
  release?: () => void;
}

/** The simulator publishes over MQTT into a broker inside this process. */
async function demoOverMqtt(
  base: MillwardenConfig,
  values: { scenario: string; "broker-port"?: string },
  speed: number,
  signal: AbortSignal,
  log: ReturnType<typeof makeLogger>,
  sparkplugB = false,
): Promise<DemoPlant> {
  const broker = await startEmbeddedBroker(num(values["broker-port"], "broker-port", DEMO_BROKER_PORT));
  // A Sparkplug host that comes after the birth reads nothing until the next one (and never asks
  // for one, which would be a write): the simulator starts once the daemon listens.
  let release = () => {};
  const gate = sparkplugB ? new Promise<void>((ok) => (release = ok)) : undefined;
  const stopped = runSimulator({
    scenario: values.scenario,
    mqttUrl: broker.url,
    topicPrefix: "tarnholm/cg2",
    speed,
    startTimeMs: Date.now(),
    loop: true,
    signal,
    log: (m) => log.info(m),
    ...(sparkplugB ? { payload: "sparkplug" as const, startAfter: gate } : {}),
  }).catch((e: Error) => log.error(`simulator stopped: ${e.message}`));
  const onBroker: MillwardenConfig = { ...base, sources: base.sources.map((s) => (s.kind === "mqtt" ? { ...s, url: broker.url } : s)) };
  return {
    // Sparkplug B: the same tags as metrics of the simulator's edge node (src/sim/sparkplug-frames.ts).
    config: sparkplugB ? asSparkplugConfig(onBroker) : onBroker,
    describe: `embedded MQTT broker  ${broker.url}${sparkplugB ? " (Sparkplug B)" : ""}`,
    release: () => release(),
    stopped,
    close: () => broker.close(),
  };
}

/**
 * The simulator serves the plant over OPC UA; the daemon connects with SignAndEncrypt
 * (Basic256Sha256). Each side trusts the other's certificate explicitly, as on a plant.
 */
async function demoOverOpcUa(base: MillwardenConfig, values: { scenario: string; data: string }, speed: number, signal: AbortSignal, log: ReturnType<typeof makeLogger>): Promise<DemoPlant> {
  const { startSimOpcUaServer, simNodeId } = await import("../sim/opcua-server.js");
  const { ensureOwnCertificate, trustServerCertificate } = await import("../sources/opcua-pki.js");
  const clientPki = resolve(values.data, "pki");
  const srv = await startSimOpcUaServer({
    port: 0,
    scenario: values.scenario,
    speed,
    startTimeMs: Date.now(),
    loop: true,
    signal,
    pkiFolder: resolve(values.data, "sim-pki"),
    log: (m) => log.info(`OPC UA simulator: ${m}`),
  });
  const own = await ensureOwnCertificate(clientPki);
  await trustServerCertificate(clientPki, srv.certificateFile);
  await srv.trustClientCertificate(own.certificateFile);
  // The server changes each tag once per simulated second: sample as fast, so a faster demo
  // is not thinned out (on a plant, sampling follows the instrument, not a speed factor).
  const samplingIntervalMs = Math.max(20, Math.round(1000 / speed));
  const publishingIntervalMs = Math.max(100, Math.min(1000, samplingIntervalMs * 10));
  const queueSize = Math.ceil(publishingIntervalMs / samplingIntervalMs) + 10;
  const source = {
    id: "plant-opcua",
    kind: "opcua" as const,
    endpointUrl: srv.endpointUrl,
    securityMode: "SignAndEncrypt" as const,
    securityPolicy: "Basic256Sha256" as const,
    pkiFolder: clientPki,
    trustUnknownServerCertificates: false,
    publishingIntervalMs,
    samplingIntervalMs,
    maxClockSkewS: 30,
  };
  return {
    config: {
      ...base,
      sources: [source],
      signals: base.signals.map(({ topic: _topic, ...s }) => ({ ...s, source: source.id, nodeId: simNodeId(s.tag), samplingIntervalMs, queueSize })),
    },
    describe: `OPC UA simulator      ${srv.endpointUrl} (SignAndEncrypt, Basic256Sha256)`,
    stopped: srv.done,
    close: () => srv.close(),
  };
}

/** A time on the command line: RFC 3339 (with Z or an offset) or epoch milliseconds. */
function timeArg(v: string | undefined, name: string): number {
  if (v === undefined) throw new UsageError(`--${name} is required (RFC 3339, e.g. 2026-12-01T06:00:00Z, or epoch ms)`);
  const t = /^\d+$/.test(v) ? Number(v) : /(Z|[+-]\d{2}:\d{2})$/.test(v) ? Date.parse(v) : Number.NaN;
  if (!Number.isFinite(t)) throw new UsageError(`--${name} expects RFC 3339 with Z or an offset, or epoch ms; found "${v}"`);
  return t;
}

/** Write the stored history in the exchange format that replay reads (streamed, line by line). */
async function cmdExport(args: string[]): Promise<number> {
  const { values } = parseArgs({ args, options: { config: { type: "string" }, from: { type: "string" }, to: { type: "string" }, signals: { type: "string" } } });
  const cfg = requireConfig(values.config);
  const fromMs = timeArg(values.from, "from");
  const toMs = timeArg(values.to, "to");
  if (!(fromMs < toMs)) throw new UsageError("--from must be earlier than --to");
  const known = new Set(cfg.signals.map((s) => s.id));
  const signals = values.signals?.split(",").map((s) => s.trim()).filter(Boolean);
  const unknown = signals?.filter((s) => !known.has(s)) ?? [];
  if (unknown.length) throw new UsageError(`--signals: unknown signal ${unknown.map((s) => `"${s}"`).join(", ")}; expected ids from ${values.config}`);
  // A reader that stops early (| head) is not an error.
  process.stdout.on("error", (e: NodeJS.ErrnoException) => {
    if (e.code === "EPIPE") process.exit(0);
    throw e;
  });
  const { Historian } = await import("../store/historian.js");
  const h = Historian.open({ path: resolve(cfg.storage.path), synchronous: cfg.storage.synchronous });
  try {
    for (const line of h.exportCsv(fromMs, toMs, signals)) {
      if (!process.stdout.write(line + "\n")) await new Promise((ok) => process.stdout.once("drain", ok));
    }
  } finally {
    h.close();
  }
  return 0;
}

async function cmdPki(args: string[]): Promise<number> {
  const { values, positionals } = parseArgs({ args, allowPositionals: true, options: { pki: { type: "string", default: "data/pki" } } });
  const [verb, file] = positionals;
  const pki = await import("../sources/opcua-pki.js");
  const show = (c: { status: string; subject: string; applicationUri: string | null; thumbprint: string; notAfter: string; file: string }) =>
    `${c.status.padEnd(8)} ${c.subject}  uri ${c.applicationUri ?? "-"}  thumbprint ${c.thumbprint}  valid to ${c.notAfter}\n         ${c.file}`;
  if (verb === "list") {
    const certs = pki.listServerCertificates(values.pki);
    process.stdout.write(certs.length ? certs.map(show).join("\n") + "\n" : `no server certificates under ${values.pki} yet (a server's certificate lands in rejected/ at the first connection)\n`);
    return 0;
  }
  if (verb === "show") {
    const own = await pki.ensureOwnCertificate(values.pki);
    process.stdout.write(`${show(own.info)}\ngive ${own.certificateFile} to the server's administrator to trust\n`);
    return 0;
  }
  if (verb === "trust") {
    if (!file) throw new UsageError("pki trust needs the certificate file (for example one listed under rejected/ by `millwarden pki list`)");
    const c = await pki.trustServerCertificate(values.pki, file);
    process.stdout.write(`trusted: ${show(c)}\ncompare the thumbprint with the one the server's administrator reads off the server\n`);
    return 0;
  }
  throw new UsageError(`pki expects list, show or trust; found ${verb === undefined ? "nothing" : `"${verb}"`}`);
}

async function cmdCheck(args: string[]): Promise<number> {
  const { values } = parseArgs({ args, options: { config: { type: "string" }, connect: { type: "boolean", default: false }, wait: { type: "string", default: "10" } } });
  const cfg = requireConfig(values.config);
  process.stdout.write(summarizeConfig(cfg, values.config!) + "\n");
  if (!values.connect) return 0;
  const waitS = Number(values.wait);
  if (!(Number.isFinite(waitS) && waitS > 0 && waitS <= 600)) throw new UsageError(`--wait: expected seconds between 1 and 600, found "${values.wait}"`);
  process.stdout.write(`\nconnecting to ${cfg.sources.length} source(s), listening ${waitS} s (read-only) ...\n`);
  const r = await probeSources(cfg, waitS * 1000, (level, msg) => process.stderr.write(`${level}: ${msg}\n`));
  const out = renderProbe(r, waitS);
  process.stdout.write(out.text + "\n");
  return out.ok ? 0 : 1;
}

async function cmdSimulate(args: string[]): Promise<number> {
  const { values } = parseArgs({
    args,
    options: {
      scenario: { type: "string" },
      mqtt: { type: "string" },
      speed: { type: "string" },
      prefix: { type: "string", default: "tarnholm/cg2" },
      loop: { type: "boolean", default: false },
      seed: { type: "string" },
      payload: { type: "string", default: "json" },
      group: { type: "string", default: "cg2" },
      node: { type: "string", default: "sim-cg2" },
    },
  });
  if (!values.scenario) throw new UsageError(`--scenario is required: one of ${scenarioNames().join(", ")}`);
  if (values.payload !== "json" && values.payload !== "sparkplug") throw new UsageError(`--payload expects json or sparkplug; found "${values.payload}"`);
  if (!values.mqtt) throw new UsageError("--mqtt URL is required, e.g. mqtt://127.0.0.1:1883");
  const abort = new AbortController();
  process.once("SIGINT", () => abort.abort());
  process.once("SIGTERM", () => abort.abort());
  const r = await runSimulator({
    scenario: values.scenario,
    mqttUrl: values.mqtt,
    topicPrefix: values.prefix,
    speed: num(values.speed, "speed", 1),
    seed: values.seed === undefined ? undefined : num(values.seed, "seed", 1),
    startTimeMs: Date.now(),
    loop: values.loop,
    signal: abort.signal,
    log: (m) => process.stderr.write(m + "\n"),
    payload: values.payload,
    sparkplug: { group: values.group, node: values.node },
  });
  process.stderr.write(`published ${r.messages} messages in ${r.frames} frames\n`);
  return 0;
}

export async function main(argv: string[]): Promise<number> {
  const [cmd, ...rest] = argv;
  try {
    switch (cmd) {
      case "run":
        return await cmdRun(rest);
      case "demo":
        return await cmdDemo(rest);
      case "check":
        return await cmdCheck(rest);
      case "simulate":
        return await cmdSimulate(rest);
      case "pki":
        return await cmdPki(rest);
      case "export":
        return await cmdExport(rest);
      case "replay":
        return await replayCommand(rest);
      case "fleet":
        return await fleetCommand(rest, waitForSignal());
      case "user":
        return await userCommand(rest);
      case "reload":
        return await reloadCommand(rest);
      case "backup":
        return await backupCommand(rest);
      case undefined:
      case "help":
      case "--help":
      case "-h":
        process.stdout.write(USAGE + "\n");
        return cmd === undefined ? 2 : 0;
      default:
        throw new UsageError(`unknown command "${cmd}"`);
    }
  } catch (e) {
    if (e instanceof UserCommandError) {
      process.stderr.write(`millwarden user: ${e.message}\n`);
      return 1;
    }
    if (e instanceof ConfigError) {
      process.stderr.write(`config errors:\n${e.message}\n`);
      return 1;
    }
    if (e instanceof UsageError || e instanceof FleetUsageError || (e as NodeJS.ErrnoException).code === "ERR_PARSE_ARGS_UNKNOWN_OPTION") {
      process.stderr.write(`${(e as Error).message}\n\n${USAGE}\n`);
      return 2;
    }
    process.stderr.write(`millwarden: ${(e as Error).message}\n`);
    return 1;
  }
}

// Run directly (tsx src/cli/main.ts); bin/millwarden.js imports main() instead.
if (process.argv[1] && resolve(process.argv[1]) === fileURLToPath(import.meta.url)) {
  main(process.argv.slice(2)).then(
    (code) => process.exit(code),
    (e: Error) => {
      process.stderr.write(`millwarden: ${e.stack ?? e.message}\n`);
      process.exit(1);
    },
  );
}
