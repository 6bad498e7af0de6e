// Notification latency: from an advisory being raised (a sample fed to the core through the
// daemon, on the data clock, so the raise happens at the tick that sample triggers) to each
// channel's receiver on loopback having the message: smtp-server (e-mail), an HMAC-checking
// webhook receiver, aedes (MQTT, QoS 1), and the HTTPS push service of the tests (Web Push, one
// subscribed browser). --raises N advisories, each its own rule (so chatter and flood
// handling do not merge them), one after another.
//
//   npx tsx bench/notify.ts [--raises 40]
//
// Prints p50, p99 and max per channel. Target: p99 under 2 s; the delivery loop runs a round at
// once after a commit and every second (DELIVER_EVERY_MS), so batching dominates only when a
// round is already under way. Numbers only; nothing here asserts a speed.
//
// The push service's certificate is self-signed: the bench re-runs itself with
// NODE_EXTRA_CA_CERTS naming it (web-push uses Node's default agent in the daemon).
import { spawnSync } from "node:child_process";
import { mkdtempSync, rmSync } from "node:fs";
import net from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { performance } from "node:perf_hooks";
import { Aedes } from "aedes";
import mqtt from "mqtt";
import { parseConfig } from "../src/config/load.js";
import { Daemon } from "../src/daemon/daemon.js";
import { memoryLogger } from "../src/daemon/log.js";
import { browserKeys, startPushService, startSmtp, startWebhookReceiver, TEST_CERT_FILE } from "../test/notify/receivers.js";
import { wholeArg } from "./args.js";

if (process.env.NODE_EXTRA_CA_CERTS !== TEST_CERT_FILE) {
  const r = spawnSync(process.execPath, [...process.execArgv, ...process.argv.slice(1)], { stdio: "inherit", env: { ...process.env, NODE_EXTRA_CA_CERTS: TEST_CERT_FILE } });
  process.exit(r.status ?? 1);
}

const RAISES = wholeArg("raises", 40);
const HOOK_KEY = "bench-hook-key-Tarnholm-2026";
process.env.MW_BENCH_HOOK_KEY = HOOK_KEY;

const pct = (xs: number[], p: number): number => {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.min(s.length - 1, Math.max(0, Math.ceil((p / 100) * s.length) - 1))]!;
};

async function main(): Promise<void> {
  const dir = mkdtempSync(join(tmpdir(), "mw-bench-notify-"));
  const broker = await Aedes.createBroker();
  const mqttServer = net.createServer(broker.handle);
  await new Promise<void>((ok) => mqttServer.listen(0, "127.0.0.1", () => ok()));
  const mqttUrl = `mqtt://127.0.0.1:${(mqttServer.address() as net.AddressInfo).port}`;
  const smtp = await startSmtp();
  const hook = await startWebhookReceiver(HOOK_KEY);
  const push = await startPushService();
  const sub = await mqtt.connectAsync(mqttUrl, { protocolVersion: 4, clientId: `bench-sub-${process.pid}` });
  let mqttCount = 0;
  sub.on("message", () => mqttCount++);
  await sub.subscribeAsync("bench/notifications", { qos: 1 });

  const signals = Array.from({ length: RAISES }, (_, i) => `  - { id: s${i}, name: Bench signal ${i}, tag: BENCH-${i}, source: m, topic: bench/s${i}, unit: pctVol, expectedPeriodS: 1 }`).join("\n");
  const rules = Array.from({ length: RAISES }, (_, i) => `  - { id: r${i}, title: Bench rule ${i}, unit: vm2, quantity: s${i}, direction: high, tiers: { warning: 10 }, cause: c, consequence: c, check: c, origin: invented for the benchmark }`).join("\n");
  const cfg = parseConfig(
    `site: { name: Tarnholm Works, plant: Coal grinding line 2 (bench), barometricPressureHPa: 1013 }
clock: data
sources:
  - { id: m, kind: mqtt, url: "${mqttUrl}", protocolVersion: 4 }
storage: { path: ${join(dir, "millwarden.db")} }
signals:
${signals}
units:
  - { id: vm2, name: Vertical roller mill 2, kind: mill }
rules:
${rules}
advisoryPolicy: { chatterCount: 1000, floodCount: 100000, floodEndCount: 5 }
notifications:
  timeZone: Europe/Berlin
  linkBase: http://127.0.0.1:8480
  channels:
    - { id: mail, kind: email, host: 127.0.0.1, port: ${smtp.port}, tls: none, from: "millwarden <millwarden@tarnholm.example>" }
    - { id: hook, kind: webhook, url: "${hook.url}", secretEnv: MW_BENCH_HOOK_KEY }
    - { id: broker, kind: mqtt, url: "${mqttUrl}", topic: bench/notifications, qos: 1 }
    - { id: push, kind: webpush, subject: "mailto:ops@tarnholm.example" }
  people:
    - { id: anna, name: Anna Berg, contacts: [{ channel: mail, address: anna.berg@tarnholm.example }, { channel: push }] }
  rosters:
    - { id: process, rotation: { startsAt: "2026-01-05T07:00", weeks: [{ primary: anna }] } }
  routes:
    - { tiers: [warning], roster: process, channels: [hook, broker] }
  escalation: { afterS: 86400 }
`,
    join(dir, "plant.yaml"),
  );
  const daemon = await Daemon.start({ config: cfg, log: memoryLogger(), serve: false });
  const keys = browserKeys();
  daemon.notify!.outbox.addSubscription({ endpoint: `${push.origin}/p/bench`, personId: "anna", p256dh: keys.p256dh, auth: keys.auth, createdAtMs: Date.now() });

  // Data time: whole seconds from a fixed Tuesday morning (no quiet hours are configured anyway).
  let t = Date.UTC(2026, 0, 6, 9);
  const feed = (raised: number | null) => {
    for (let i = 0; i < RAISES; i++) {
      daemon.ingest({ signal: `s${i}`, value: i === raised || (raised !== null && i < raised) ? 12 : 5, quality: "good", sourceTimeMs: t, receiveTimeMs: t });
    }
    t += 1000;
  };
  for (let k = 0; k < 5; k++) feed(null);

  const counts = () => ({ mail: smtp.mails.length, webhook: hook.received.length, mqtt: mqttCount, webpush: push.requests.length });
  const latency: Record<string, number[]> = { mail: [], webhook: [], mqtt: [], webpush: [] };
  for (let i = 0; i < RAISES; i++) {
    const before = counts();
    // The sample above the limit at t, then the tick at t + 1 s raises the advisory.
    feed(i);
    const t0 = performance.now();
    feed(i);
    const pending = new Set(Object.keys(latency));
    const deadline = t0 + 10_000;
    while (pending.size && performance.now() < deadline) {
      await new Promise((ok) => setImmediate(ok));
      const now = counts();
      for (const k of pending) {
        if (now[k as keyof typeof now] > before[k as keyof typeof before]) {
          latency[k]!.push(performance.now() - t0);
          pending.delete(k);
        }
      }
    }
    if (pending.size) console.log(`raise ${i}: nothing arrived within 10 s on ${[...pending].join(", ")}`);
  }

  console.log(`notifications: ${RAISES} warnings raised through the daemon (data clock), each to e-mail, webhook, MQTT (QoS 1) and one Web Push browser on loopback`);
  console.log("channel   p50 ms   p99 ms   max ms   n");
  for (const [k, xs] of Object.entries(latency)) {
    if (xs.length === 0) {
      console.log(`${k.padEnd(8)}  (nothing arrived)`);
      continue;
    }
    console.log(`${k.padEnd(8)}  ${pct(xs, 50).toFixed(1).padStart(6)}   ${pct(xs, 99).toFixed(1).padStart(6)}   ${Math.max(...xs).toFixed(1).padStart(6)}   ${xs.length}`);
  }
  const all = Object.values(latency).flat();
  console.log(`all channels: p99 ${pct(all, 99).toFixed(1)} ms (target under 2000 ms: ${pct(all, 99) < 2000 ? "met" : "not met"})`);

  await daemon.stop();
  await sub.endAsync();
  await smtp.close();
  await hook.close();
  await push.close();
  await new Promise<void>((ok) => mqttServer.close(() => ok()));
  await new Promise<void>((ok) => broker.close(() => ok()));
  rmSync(dir, { recursive: true, force: true });
}

await main();
