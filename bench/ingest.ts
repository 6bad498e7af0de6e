// MQTT ingest: small JSON samples published to Mosquitto by a second process as fast as it can,
// received (a) by a bare mqtt.js subscriber that only parses the JSON, the ceiling, and (b) by the
// daemon's own path: MqttSource → decode → core (data clock, every tick) → historian. Both in the
// same run against the same broker; the ratio b / a is the figure (target at least 0.5).
//
// The broker is a Mosquitto of our own on a free loopback port with its queue limits lifted
// (STACK.md: the default limits silently drop messages under a burst); what arrives is counted.
import { spawn, spawnSync } from "node:child_process";
import { mkdtempSync, rmSync, writeFileSync } from "node:fs";
import net from "node:net";
import { tmpdir, userInfo } from "node:os";
import { join } from "node:path";
import mqtt from "mqtt";
import { parseConfig } from "../src/config/load.js";
import { Daemon } from "../src/daemon/daemon.js";
import { memoryLogger } from "../src/daemon/log.js";
import { wholeArg } from "./args.js";
import { freePort } from "../test/sources/mosquitto.js";

const N = wholeArg("messages", 400_000);
const RUNS = wholeArg("runs", 3);
const K = wholeArg("signals", 200);
const T0 = Date.UTC(2026, 0, 12, 6, 0, 0);

if (spawnSync("sh", ["-c", "command -v mosquitto"]).status !== 0) {
  console.log("ingest: mosquitto is not on PATH; skipped (apt-get install mosquitto)");
  process.exit(0);
}


const dir = mkdtempSync(join(tmpdir(), "mw-bench-ingest-"));
const port = await freePort();
writeFileSync(
  join(dir, "mosquitto.conf"),
  [`user ${userInfo().username}`, `listener ${port} 127.0.0.1`, "allow_anonymous true", "persistence false", "max_queued_messages 0", "max_inflight_messages 0", "log_dest none"].join("\n") + "\n",
);
const broker = spawn("mosquitto", ["-c", join(dir, "mosquitto.conf")], { stdio: "ignore" });
const url = `mqtt://127.0.0.1:${port}`;
for (let i = 0; i < 100; i++) {
  const up = await new Promise<boolean>((ok) => {
    const s = net.connect({ port, host: "127.0.0.1" }, () => (s.destroy(), ok(true)));
    s.once("error", () => ok(false));
  });
  if (up) break;
  await new Promise((r) => setTimeout(r, 50));
}

function publish(prefix: string): Promise<void> {
  return new Promise((ok, fail) => {
    const p = spawn(process.execPath, ["--import", "tsx", join(import.meta.dirname, "ingest-publisher.ts"), url, String(N), String(K), prefix, String(T0)], { stdio: ["ignore", "ignore", "inherit"] });
    p.once("exit", (code) => (code === 0 ? ok() : fail(new Error(`publisher exited with ${code}`))));
  });
}

/** Wait until `count()` reaches N, or stops growing for 3 s after the publisher finished. */
async function until(count: () => number, published: Promise<void>): Promise<void> {
  let done = false;
  void published.then(() => (done = true));
  let last = -1;
  let still = 0;
  while (count() < N) {
    await new Promise((r) => setTimeout(r, 50));
    if (!done) continue;
    if (count() === last) still += 50;
    else still = 0;
    last = count();
    if (still >= 3000) break;
  }
}

async function bareRun(run: number): Promise<{ rate: number; got: number }> {
  // (a) the ceiling: a bare subscriber that parses each message.
  const bare = await mqtt.connectAsync(url, { protocolVersion: 4 });
  let got = 0;
  let first = 0;
  let lastAt = 0;
  bare.on("message", (_t, payload) => {
    JSON.parse(payload.toString());
    if (got === 0) first = performance.now();
    got++;
    lastAt = performance.now();
  });
  await bare.subscribeAsync(`bench/bare${run}/#`, { qos: 0 });
  await until(() => got, publish(`bench/bare${run}`));
  await bare.endAsync();
  const bareRate = got / ((lastAt - first) / 1000);

  return { rate: bareRate, got };
}

async function millwardenRun(run: number): Promise<{ rate: number; seen: number; stored: number; droppedRows: number; coreRejected: number; refusedByCore: string }> {
  // (b) the daemon's path.
  const signals = Array.from({ length: K }, (_, i) => `  - { id: s${i}, name: Signal ${i}, tag: TT-${i}, source: m, topic: bench/mw${run}/${i}, unit: degC, expectedPeriodS: 1 }`).join("\n");
  const cfg = parseConfig(
    `site: { name: Benchfield, plant: Line 1, barometricPressureHPa: 1013 }\nclock: data\nstorage: { path: ${join(dir, `mw${run}.db`)} }\nserver: { host: 127.0.0.1, port: 0 }\nsources:\n  - { id: m, kind: mqtt, url: "${url}", protocolVersion: 4, payload: { format: json, valuePath: value, timePath: time, qualityPath: quality } }\nsignals:\n${signals}\nunits:\n  - { id: u1, name: Mill, kind: mill }\n`,
    "bench-ingest.yaml",
  );
  const daemon = await Daemon.start({ config: cfg, log: memoryLogger(), serve: false });
  await Promise.all(daemon.sources.map((s) => s.whenReady()));
  let firstMw = 0;
  let lastMw = 0;
  let seen = 0;
  const count = () => {
    const n = daemon.sources[0]!.stats().samples;
    if (n > seen) {
      if (seen === 0) firstMw = performance.now();
      lastMw = performance.now();
      seen = n;
    }
    return n;
  };
  const poll = setInterval(count, 5);
  await until(count, publish(`bench/mw${run}`));
  clearInterval(poll);
  daemon.historian.flush();
  const hs = daemon.historian.stats();
  const stored = hs.rowsWritten;
  const droppedRows = hs.droppedRows;
  const coreRejected = daemon.health().sources[0]!.rejected;
  const metricsText = await daemon.appDeps().metrics!();
  const refusedByCore = metricsText.body.split("\n").filter((l) => l.startsWith("millwarden_core_rejected_total{")).join("; ");
  await daemon.stop();
  const mwRate = seen / ((lastMw - firstMw) / 1000);

  return { rate: mwRate, seen, stored, droppedRows, coreRejected, refusedByCore };
}

const median = (xs: number[]) => [...xs].sort((x, y) => x - y)[xs.length >> 1]!;

try {
  // Alternating runs: the machine's other load hits both sides alike.
  const bare: Awaited<ReturnType<typeof bareRun>>[] = [];
  const mw: Awaited<ReturnType<typeof millwardenRun>>[] = [];
  for (let r = 0; r < RUNS; r++) {
    bare.push(await bareRun(r));
    mw.push(await millwardenRun(r));
  }
  const bareRate = median(bare.map((x) => x.rate));
  const mwRate = median(mw.map((x) => x.rate));
  const spread = (xs: number[]) => xs.map((x) => Math.round(x).toLocaleString("en")).join(", ");
  const last = mw[mw.length - 1]!;
  console.log(`${N.toLocaleString("en")} JSON samples over ${K} topics, QoS 0, published by a second process; ${RUNS} alternating runs, medians`);
  console.log(`bare mqtt.js subscriber (JSON.parse only): ${Math.round(bareRate).toLocaleString("en")} msg/s (runs: ${spread(bare.map((x) => x.rate))}; received ${bare.map((x) => x.got).join(", ")})`);
  console.log(`millwarden source → core → historian:      ${Math.round(mwRate).toLocaleString("en")} samples/s (runs: ${spread(mw.map((x) => x.rate))}; received ${mw.map((x) => x.seen).join(", ")})`);
  console.log(`  last run: ${last.stored.toLocaleString("en")} rows stored, ${last.droppedRows} dropped by the historian's queue bound, ${last.coreRejected} refused by the source${last.refusedByCore ? `; core: ${last.refusedByCore}` : ""}`);
  console.log(`ratio: ${(mwRate / bareRate).toFixed(2)} (target ≥ 0.5)`);
} finally {
  broker.kill("SIGTERM");
  rmSync(dir, { recursive: true, force: true });
}
