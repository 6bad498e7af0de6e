// OPC UA notifications per second through OpcUaSource, beside a bare node-opcua client
// subscription on the same server in the same run.
//
//   npx tsx bench/opcua.ts [--items 1000] [--sampling-ms 100] [--publishing-ms 100] [--seconds 10] [--runs 3]
//
// The server runs in a child process (so the client side's CPU is its own): `items` Double
// variables, every one changed every sampling interval. Each case subscribes to all of them
// (one monitored item each, no deadband, queue big enough for one publishing interval),
// waits 3 s, then counts notifications for `seconds`, beside the changes the server made
// in that window (its update timer falls behind when the CPU is busy). The cases
// alternate, run after run; figures are medians. Publishing every 100 ms and every
// 1000 ms unless --publishing-ms is given: at 1000 ms one cycle holds up to 10,000 changes,
// more than the 1000 a node-opcua server puts in one publish response (it then sends
// several); "overflows" counts values the server's queues dropped. The "% of the changes
// made" can pass 100 % by up to one publishing interval's worth (the two counts are read
// a little apart). CPU is this process's user+system time over the counting window.
// It prints numbers only; nothing here asserts a speed.
import { spawn, type ChildProcess } from "node:child_process";
import { mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { createInterface } from "node:readline";
import {
  AttributeIds,
  DataType,
  OPCUACertificateManager,
  OPCUAClient,
  OPCUAServer,
  MessageSecurityMode,
  SecurityPolicy,
  StatusCodes,
  TimestampsToReturn,
  Variant,
  type UAVariable,
} from "node-opcua";
import type { OpcUaSourceConfig, SignalConfig } from "../src/config/schema.js";
import { OpcUaSource } from "../src/sources/opcua.js";
import { ensureOwnCertificate } from "../src/sources/opcua-pki.js";
import { wholeArg } from "./args.js";

const arg = wholeArg;

const ITEMS = arg("items", 1000);
const SAMPLING_MS = arg("sampling-ms", 100);
const PUBLISHING: number[] = process.argv.includes("--publishing-ms") ? [arg("publishing-ms", 100)] : [100, 1000];
const SECONDS = arg("seconds", 10);
const RUNS = arg("runs", 3);
const WARMUP_MS = 3000;
const tagOf = (i: number) => `BENCH-XT-${String(i).padStart(4, "0")}`;

// ---- the server (child process) ----

async function serve(pki: string): Promise<void> {
  const server = new OPCUAServer({
    port: 0,
    host: "127.0.0.1",
    hostname: "127.0.0.1",
    serverCertificateManager: new OPCUACertificateManager({ rootFolder: join(pki, "server") }),
    userCertificateManager: new OPCUACertificateManager({ rootFolder: join(pki, "users") }),
    securityModes: [MessageSecurityMode.None],
    securityPolicies: [SecurityPolicy.None],
    serverCapabilities: { maxMonitoredItemsPerSubscription: 100_000, operationLimits: { maxMonitoredItemsPerCall: 10_000, maxNodesPerRead: 10_000, maxNodesPerTranslateBrowsePathsToNodeIds: 10_000 } },
    maxConnectionsPerEndpoint: 10,
    isAuditing: false,
  });
  await server.initialize();
  const addressSpace = server.engine.addressSpace!;
  const ns = addressSpace.getOwnNamespace();
  const vars: UAVariable[] = [];
  for (let i = 0; i < ITEMS; i++) {
    vars.push(ns.addVariable({ browseName: tagOf(i), nodeId: `s=${tagOf(i)}`, organizedBy: addressSpace.rootFolder.objects, dataType: "Double", minimumSamplingInterval: SAMPLING_MS }));
  }
  let k = 0;
  setInterval(() => {
    k++;
    const now = new Date();
    for (let i = 0; i < vars.length; i++) vars[i]!.setValueFromSource(new Variant({ dataType: DataType.Double, value: k + i / 1e4 }), StatusCodes.Good, now);
  }, SAMPLING_MS);
  await server.start();
  // The changes actually made (under CPU contention the update timer falls behind).
  setInterval(() => process.stdout.write(`${JSON.stringify({ changes: k * ITEMS })}\n`), 100).unref();
  process.stdout.write(`${JSON.stringify({ port: server.endpoints[0]!.port })}\n`);
}

// ---- the two clients ----

interface Result {
  perS: number;
  /** Notifications received per change the server made in the same window. */
  ofMade: number;
  cpuMsPerS: number;
  overflows: number;
}

/** Cumulative changes the server reports having made. */
let serverChanges = 0;

async function measure(count: () => number, overflows: () => number): Promise<Result> {
  await new Promise((r) => setTimeout(r, WARMUP_MS));
  const n0 = count();
  const o0 = overflows();
  const m0 = serverChanges;
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  await new Promise((r) => setTimeout(r, SECONDS * 1000));
  const dtS = (performance.now() - t0) / 1000;
  const c = process.cpuUsage(c0);
  const n = count() - n0;
  return { perS: n / dtS, ofMade: n / Math.max(1, serverChanges - m0), cpuMsPerS: (c.user + c.system) / 1000 / dtS, overflows: overflows() - o0 };
}

async function viaSource(endpointUrl: string, pki: string, publishingMs: number): Promise<Result> {
  const cfg: OpcUaSourceConfig = {
    id: "bench", kind: "opcua", endpointUrl, securityMode: "None", securityPolicy: "None", pkiFolder: pki,
    trustUnknownServerCertificates: false, publishingIntervalMs: publishingMs, samplingIntervalMs: SAMPLING_MS, maxClockSkewS: 30,
  };
  const signals: SignalConfig[] = Array.from({ length: ITEMS }, (_, i) => ({
    id: `bench.${i}`, name: tagOf(i), tag: tagOf(i), source: "bench", nodeId: `ns=1;s=${tagOf(i)}`, unit: "degC", scale: 1, offset: 0, expectedPeriodS: 1,
  }));
  let n = 0;
  const src = new OpcUaSource(cfg, signals, { now: Date.now, log: () => undefined });
  await src.start(() => n++);
  await src.whenReady();
  const r = await measure(() => n, () => src.stats().queueOverflows);
  await src.stop();
  return r;
}

async function viaBareClient(endpointUrl: string, pki: string, publishingMs: number): Promise<Result> {
  const own = await ensureOwnCertificate(pki);
  const client = OPCUAClient.create({
    endpointMustExist: false,
    applicationUri: own.applicationUri,
    clientCertificateManager: new OPCUACertificateManager({ rootFolder: pki }),
    certificateFile: own.certificateFile,
    privateKeyFile: own.privateKeyFile,
    connectionStrategy: { maxRetry: 0 },
  });
  await client.connect(endpointUrl);
  const session = await client.createSession();
  const sub = await session.createSubscription2({ requestedPublishingInterval: publishingMs, requestedMaxKeepAliveCount: 10, requestedLifetimeCount: 100, maxNotificationsPerPublish: 0, publishingEnabled: true, priority: 10 });
  const group = await sub.monitorItems(
    Array.from({ length: ITEMS }, (_, i) => ({ nodeId: `ns=1;s=${tagOf(i)}`, attributeId: AttributeIds.Value })),
    { samplingInterval: SAMPLING_MS, queueSize: Math.ceil(publishingMs / SAMPLING_MS) + 1, discardOldest: true, filter: null },
    TimestampsToReturn.Both,
  );
  let n = 0;
  let overflows = 0;
  group.on("changed", (_item, dv) => {
    n++;
    if (dv.statusCode.hasOverflowBit) overflows++;
  });
  const r = await measure(() => n, () => overflows);
  await session.close();
  await client.disconnect();
  return r;
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;

async function main(): Promise<void> {
  if (process.argv.includes("--serve")) return serve(process.argv[process.argv.indexOf("--serve") + 1]!);
  const dir = mkdtempSync(join(tmpdir(), "mw-bench-opcua-"));
  let child: ChildProcess | null = null;
  try {
    child = spawn(process.execPath, ["--import", "tsx", import.meta.filename, "--serve", join(dir, "server-pki"), ...process.argv.slice(2)], { stdio: ["ignore", "pipe", "inherit"] });
    const port = await new Promise<number>((ok, fail) => {
      const rl = createInterface({ input: child!.stdout! });
      rl.on("line", (l) => {
        try {
          const m = JSON.parse(l) as { port?: number; changes?: number };
          if (m.port) ok(m.port);
          if (m.changes !== undefined) serverChanges = m.changes;
        } catch {
          // node-opcua's own log lines
        }
      });
      child!.once("exit", (code) => fail(new Error(`the bench server exited with ${code}`)));
    });
    const url = `opc.tcp://127.0.0.1:${port}`;
    const offered = (ITEMS * 1000) / SAMPLING_MS;
    console.log(`OPC UA: ${ITEMS} monitored items at ${SAMPLING_MS} ms sampling (the server changes every item every ${SAMPLING_MS} ms: ${offered} changes/s offered); medians of ${RUNS} runs of ${SECONDS} s`);
    const row = (name: string, rs: Result[]) => {
      const perS = median(rs.map((x) => x.perS));
      const cpu = median(rs.map((x) => x.cpuMsPerS));
      console.log(
        `  ${name.padEnd(26)} ${Math.round(perS).toLocaleString("en").padStart(7)} notifications/s, ${(100 * median(rs.map((x) => x.ofMade))).toFixed(1)} % of the changes made` +
          ` (${Math.round(median(rs.map((x) => x.perS / x.ofMade))).toLocaleString("en")}/s made), overflows ${median(rs.map((x) => x.overflows))}` +
          `, CPU ${cpu.toFixed(1)} ms/s = ${((cpu * 1000) / perS).toFixed(2)} µs per notification; runs ${rs.map((x) => Math.round(x.perS)).join(", ")}`,
      );
    };
    for (const publishingMs of PUBLISHING) {
      console.log(`publishing every ${publishingMs} ms, queue ${Math.ceil(publishingMs / SAMPLING_MS) + 1} per item:`);
      const src: Result[] = [];
      const bare: Result[] = [];
      for (let r = 0; r < RUNS; r++) {
        bare.push(await viaBareClient(url, join(dir, "client-pki"), publishingMs));
        src.push(await viaSource(url, join(dir, "client-pki"), publishingMs));
      }
      row("bare node-opcua client", bare);
      row("OpcUaSource (to samples)", src);
    }
  } finally {
    child?.kill();
    rmSync(dir, { recursive: true, force: true });
  }
}

await main();
