// The glance screen on loopback, in Debian's Chromium (playwright-core), against the demo's
// pieces at the demo's own pace: the embedded broker and the simulator (1×, the "demo"
// scenario, one update per second and signal) in this process, the daemon (wall clock) in a
// child process so that its CPU time is its own.
//
//   npx tsx bench/glance.ts [--runs 5] [--screens 20] [--seconds 20] [--cycles 3] [--clients browser|ws]
//
// first render  navigation start → the screen's first values on screen (its User Timing mark
//               "millwarden:first-values"), and the first contentful paint; a fresh browser
//               context each run (empty cache). Medians of --runs.
// size          every response the page loads (HTML, CSS, modules, GET /api/state, the CO
//               history seeds) and the WebSocket's first frame (the snapshot): bytes as sent
//               (the server's Content-Encoding, if any) and gzip -6 of the same bytes, for what
//               compression would give. The trends page likewise, with its plotting library.
// CPU           the daemon's user+system CPU over --seconds with no screen, then with --screens
//               glance screens open (each its own browser context and WebSocket; or plain
//               WebSocket clients doing what the page does, with --clients ws), as a share of
//               one core; --cycles times, the added share is the median.
//               Targets: < 250 kB compressed; < 5 % CPU added.
// Numbers only; nothing here asserts a speed.
import { fork, type ChildProcess } from "node:child_process";
import { existsSync, mkdtempSync, rmSync } from "node:fs";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { gzipSync } from "node:zlib";
import { chromium, type Browser, type BrowserContext } from "playwright-core";
import WebSocket from "ws";
import { loadConfig } from "../src/config/load.js";
import type { MillwardenConfig } from "../src/config/schema.js";
import { Daemon } from "../src/daemon/daemon.js";
import { startEmbeddedBroker } from "../src/daemon/embedded-broker.js";
import { memoryLogger } from "../src/daemon/log.js";
import { runSimulator } from "../src/sim/publish.js";
import { wholeArg } from "./args.js";

const CHROMIUM = "/usr/bin/chromium";
const CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync"];
const DEMO_CONFIG = join(import.meta.dirname, "../config/demo.yaml");
const PREFIX = "tarnholm/cg2";

const arg = wholeArg;
function choice(name: string, options: string[], dflt: string): string {
  const i = process.argv.indexOf(`--${name}`);
  const v = i < 0 ? dflt : (process.argv[i + 1] ?? "");
  if (!options.includes(v)) throw new Error(`--${name}: expected one of ${options.join(", ")}, found "${v}"`);
  return v;
}

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  const m = Math.floor(s.length / 2);
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
};
const kB = (n: number): string => `${(n / 1000).toFixed(1)} kB`;

// ---- the daemon (child process) ----

interface DaemonReply {
  url?: string;
  cpu?: NodeJS.CpuUsage;
}

async function runDaemon(brokerUrl: string, dataDir: string): Promise<void> {
  const base = loadConfig(DEMO_CONFIG);
  const cfg: MillwardenConfig = {
    ...base,
    clock: "wall",
    storage: { ...base.storage, path: join(dataDir, "millwarden.db") },
    server: { ...base.server, host: "127.0.0.1", port: 0, requireLoginForViews: false },
    sources: base.sources.map((s) => (s.kind === "mqtt" ? { ...s, url: brokerUrl } : s)),
  };
  const daemon = await Daemon.start({ config: cfg, log: memoryLogger() });
  const send = (m: DaemonReply) => process.send!(m);
  process.on("message", (m: string) => {
    if (m === "cpu") send({ cpu: process.cpuUsage() });
    if (m === "stop") void daemon.stop().then(() => process.exit(0));
  });
  send({ url: daemon.url! });
}

function startDaemonChild(brokerUrl: string, dataDir: string): Promise<{ child: ChildProcess; url: string; cpu(): Promise<number> }> {
  const child = fork(import.meta.filename, ["--daemon", brokerUrl, dataDir], { execArgv: ["--import", "tsx"], stdio: ["ignore", "inherit", "inherit", "ipc"] });
  const replies: ((m: DaemonReply) => void)[] = [];
  return new Promise((ok, fail) => {
    child.once("exit", (code) => fail(new Error(`daemon child exited with ${code} before serving`)));
    child.on("message", (m: DaemonReply) => {
      if (m.url) {
        ok({
          child,
          url: m.url,
          cpu: () =>
            new Promise((resolve) => {
              replies.push((r) => resolve((r.cpu!.user + r.cpu!.system) / 1e6));
              child.send("cpu");
            }),
        });
      } else replies.shift()?.(m);
    });
  });
}

// ---- measurements ----

async function firstRender(browser: Browser, url: string): Promise<{ firstValuesMs: number; fcpMs: number }> {
  const context = await browser.newContext({ viewport: { width: 1920, height: 1080 } });
  try {
    const page = await context.newPage();
    await page.goto(url);
    await page.waitForFunction(() => performance.getEntriesByName("millwarden:first-values").length > 0, null, { timeout: 30_000 });
    return await page.evaluate(() => ({
      firstValuesMs: performance.getEntriesByName("millwarden:first-values")[0]!.startTime,
      fcpMs: performance.getEntriesByName("first-contentful-paint")[0]?.startTime ?? Number.NaN,
    }));
  } finally {
    await context.close();
  }
}

interface Transfer {
  what: string;
  sentBytes: number;
  rawBytes: number;
  gzipBytes: number;
  encoding: string;
}

/** Everything a fresh page loads until `ready` holds, with the first WebSocket frame. */
async function transfers(browser: Browser, url: string, ready: () => boolean): Promise<Transfer[]> {
  const context = await browser.newContext({ viewport: { width: 1920, height: 1080 } });
  const out: Transfer[] = [];
  const pending: Promise<void>[] = [];
  try {
    const page = await context.newPage();
    page.on("response", (response) => {
      pending.push(
        (async () => {
          const body = await response.body().catch(() => null);
          if (body === null) return;
          const sizes = await response.request().sizes().catch(() => null);
          const encoding = (await response.allHeaders())["content-encoding"] ?? "none";
          out.push({ what: new URL(response.url()).pathname + new URL(response.url()).search.slice(0, 40), sentBytes: sizes?.responseBodySize ?? body.length, rawBytes: body.length, gzipBytes: gzipSync(body, { level: 6 }).length, encoding });
        })(),
      );
    });
    page.on("websocket", (ws) => {
      let first = true;
      ws.on("framereceived", ({ payload }) => {
        if (!first) return;
        first = false;
        const body = Buffer.from(payload);
        out.push({ what: `${new URL(ws.url()).pathname} (first frame)`, sentBytes: body.length, rawBytes: body.length, gzipBytes: gzipSync(body, { level: 6 }).length, encoding: "none (no permessage-deflate)" });
      });
    });
    await page.goto(url);
    await page.waitForFunction(ready, null, { timeout: 30_000 });
    await page.waitForTimeout(1500);
    await Promise.all(pending);
  } finally {
    await context.close();
  }
  return out;
}

function printTransfers(title: string, list: Transfer[]): void {
  console.log(`\n${title}`);
  console.log(`  ${"what".padEnd(58)} ${"as sent".padStart(10)} ${"gzip -6".padStart(10)}  encoding`);
  for (const t of list) console.log(`  ${t.what.padEnd(58)} ${kB(t.sentBytes).padStart(10)} ${kB(t.gzipBytes).padStart(10)}  ${t.encoding}`);
  const sent = list.reduce((n, t) => n + t.sentBytes, 0);
  const gz = list.reduce((n, t) => n + t.gzipBytes, 0);
  console.log(`  ${"total".padEnd(58)} ${kB(sent).padStart(10)} ${kB(gz).padStart(10)}  (target < 250 kB compressed)`);
}

/** A plain WebSocket client doing what a glance screen does: GET /api/state, the CO history seeds, then listen. */
async function wsScreen(url: string, coSignals: string[]): Promise<WebSocket> {
  await (await fetch(`${url}/api/state`)).arrayBuffer();
  const now = Date.now();
  await Promise.all(coSignals.map(async (s) => (await fetch(`${url}/api/trend?signal=${s}&from=${now - 900_000}&to=${now}`)).arrayBuffer()));
  const ws = new WebSocket(`${url.replace("http", "ws")}/api/live`);
  ws.on("message", (data) => JSON.parse(String(data)));
  await new Promise((ok, fail) => ws.once("open", ok).once("error", fail));
  return ws;
}

/** The daemon's CPU seconds per wall second over `seconds`. */
async function cpuShare(cpu: () => Promise<number>, seconds: number): Promise<number> {
  const a = await cpu();
  const t0 = process.hrtime.bigint();
  await new Promise((r) => setTimeout(r, seconds * 1000));
  const b = await cpu();
  return (b - a) / (Number(process.hrtime.bigint() - t0) / 1e9);
}

async function main(): Promise<void> {
  if (!existsSync(CHROMIUM)) {
    console.log(`glance: skipped, ${CHROMIUM} is missing (apt-get install chromium)`);
    return;
  }
  const RUNS = arg("runs", 5);
  const SCREENS = arg("screens", 20);
  const SECONDS = arg("seconds", 20);
  const CLIENTS = choice("clients", ["browser", "ws"], "browser");
  const CYCLES = arg("cycles", 3);
  const dir = mkdtempSync(join(tmpdir(), "mw-bench-glance-"));
  const broker = await startEmbeddedBroker(0);
  const abort = new AbortController();
  const sim = runSimulator({ scenario: "demo", mqttUrl: broker.url, topicPrefix: PREFIX, speed: 1, startTimeMs: Date.now(), loop: true, signal: abort.signal });
  const daemon = await startDaemonChild(broker.url, dir);
  const browser = await chromium.launch({ executablePath: CHROMIUM, args: CHROMIUM_ARGS });
  try {
    console.log(`glance screen at ${daemon.url}: demo scenario at 1× (wall clock), daemon in its own process`);
    // Let the daemon warm up and the first seconds of history build up, as on a screen opened mid-shift.
    await new Promise((r) => setTimeout(r, 15_000));

    const renders: { firstValuesMs: number; fcpMs: number }[] = [];
    for (let i = 0; i < RUNS; i += 1) renders.push(await firstRender(browser, `${daemon.url}/`));
    console.log(
      `\nfirst render (median of ${RUNS}, fresh context each): first values on screen ${median(renders.map((r) => r.firstValuesMs)).toFixed(0)} ms ` +
        `(${renders.map((r) => r.firstValuesMs.toFixed(0)).join(", ")}), first contentful paint ${median(renders.map((r) => r.fcpMs)).toFixed(0)} ms`,
    );

    printTransfers("glance screen, everything loaded up to its first values:", await transfers(browser, `${daemon.url}/`, () => performance.getEntriesByName("millwarden:first-values").length > 0));
    printTransfers("trends page (default series, 8 h), everything loaded up to its plots:", await transfers(browser, `${daemon.url}/trends.html`, () => Number(document.body.dataset.plotted) > 0));

    // The daemon's own load moves (history sealing every minute, the scenario's phases): windows
    // without and with the screens alternate, and the added share is the median of the cycles.
    const state = (await (await fetch(`${daemon.url}/api/state`)).json()) as { coPoints: { signal: string }[] };
    const pct = (x: number) => `${(x * 100).toFixed(2)} %`;
    const added: number[] = [];
    for (let c = 0; c < CYCLES; c += 1) {
      const idle = await cpuShare(daemon.cpu, SECONDS);
      const screens: (BrowserContext | WebSocket)[] = [];
      for (let i = 0; i < SCREENS; i += 1) {
        if (CLIENTS === "ws") screens.push(await wsScreen(daemon.url, state.coPoints.map((p) => p.signal)));
        else {
          const context = await browser.newContext({ viewport: { width: 1920, height: 1080 } });
          const page = await context.newPage();
          await page.goto(`${daemon.url}/`);
          await page.waitForFunction(() => performance.getEntriesByName("millwarden:first-values").length > 0, null, { timeout: 30_000 });
          screens.push(context);
        }
      }
      await new Promise((r) => setTimeout(r, 5000));
      const busy = await cpuShare(daemon.cpu, SECONDS);
      added.push(busy - idle);
      console.log(`  cycle ${c + 1}: daemon CPU ${pct(idle)} with no screen, ${pct(busy)} with ${screens.length} ${CLIENTS === "ws" ? "WebSocket clients" : "glance screens"} (${SECONDS} s each)`);
      for (const s of screens) {
        if (s instanceof WebSocket) s.close();
        else await s.close();
      }
    }
    console.log(`daemon CPU added by ${SCREENS} screens at the demo's update rate (share of one core, median of ${CYCLES} cycles): ${pct(median(added))} (target < 5 %)`);
  } finally {
    await browser.close();
    abort.abort();
    await sim.catch(() => undefined);
    daemon.child.send("stop");
    await new Promise((r) => daemon.child.once("exit", r));
    await broker.close();
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[2] === "--daemon") await runDaemon(process.argv[3]!, process.argv[4]!);
else await main();
