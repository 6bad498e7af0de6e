// A stalled WebSocket client: it opens /api/live and never reads. The live hub
// (src/server/live.ts) stops sending deltas to a client whose send buffer is above its high water
// mark and gives it a fresh snapshot once the buffer has drained, so the server's buffer for it
// stays near the high water mark plus one message. Here the daemon's own app deps behind buildApp
// with a high water mark small enough to reach within seconds (the default is 1 MiB); the server
// side of the stalled connection is watched directly (socket.writableLength, which is what ws's
// bufferedAmount counts) and a healthy client beside it must keep its pace. On loopback the
// kernel's buffers take what this test sends (hundreds of kB), so the hub's own bound is checked
// in the second test with a socket that never drains, driven by the same daemon.
import { spawn, spawnSync, type ChildProcess } from "node:child_process";
import type net from "node:net";
import type { Duplex } from "node:stream";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import WebSocket from "ws";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { buildApp } from "../../src/server/app.js";
import { LiveHub, type LiveSocket } from "../../src/server/live.js";
import { configOf, readScenarioSpec, simulatedSamples } from "../scenarios/harness.js";
import { demoConfigFor, tempDir, waitFor } from "../integration/helpers.js";
import { sleep } from "./helpers.js";

let broker: EmbeddedBroker;
beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
});
afterAll(async () => {
  await broker.close();
});

const HIGH_WATER_BYTES = 16 * 1024;
const LOW_WATER_BYTES = 4 * 1024;

/**
 * The stalled client: a WebSocket handshake on a raw socket with a small receive buffer
 * (SO_RCVBUF 4 KiB, set before connecting, which Node's net cannot do: a few lines of Python),
 * then nothing read until told on stdin; then it reads for a while and prints how many bytes it got
 * and whether a snapshot was among them. Without the small buffer the loopback kernel buffers
 * would hold megabytes, and the server's own buffer would never fill within a test.
 */
const STALLED_CLIENT_PY = `
import socket, sys, time
s = socket.socket()
s.setsockopt(socket.SOL_SOCKET, socket.SO_RCVBUF, 4096)
s.connect(("127.0.0.1", int(sys.argv[1])))
s.sendall(b"GET /api/live HTTP/1.1\\r\\nHost: 127.0.0.1\\r\\nUpgrade: websocket\\r\\nConnection: Upgrade\\r\\nSec-WebSocket-Key: dGFybmhvbG0tZmF1bHQtMQ==\\r\\nSec-WebSocket-Version: 13\\r\\n\\r\\n")
head = s.recv(12)
print("handshake " + head.decode("latin1"), flush=True)
sys.stdin.readline()
s.settimeout(0.5)
got = b""
end = time.time() + 3
while time.time() < end:
    try:
        b = s.recv(65536)
    except socket.timeout:
        continue
    if not b:
        break
    got += b
print("read %d %s" % (len(got), "snapshot" if b'"type":"snapshot"' in got else "no-snapshot"), flush=True)
`;

interface Stalled {
  proc: ChildProcess;
  out: () => string;
}

function stalledClient(port: number): Stalled {
  const proc = spawn("python3", ["-c", STALLED_CLIENT_PY, String(port)], { stdio: ["pipe", "pipe", "pipe"] });
  let text = "";
  proc.stdout!.on("data", (b: Buffer) => (text += b.toString()));
  proc.stderr!.on("data", (b: Buffer) => (text += b.toString()));
  return { proc, out: () => text };
}

const NO_PYTHON = spawnSync("sh", ["-c", "command -v python3"]).status !== 0;

describe.skipIf(NO_PYTHON && !process.env.CI)("a stalled /api/live client", { timeout: 60_000 }, () => {
  it("keeps the server's buffer for it bounded and does not slow the other clients", async () => {
    const spec = readScenarioSpec("purge-after-trip");
    const cfg = configOf("purge-after-trip", spec);
    const samples = simulatedSamples(spec, cfg);
    const dir = tempDir("mw-fault-ws-");
    const c = demoConfigFor(broker.url, `mw-faults-ws/${process.pid}`, dir.path);
    const d = await Daemon.start({ config: { ...c, rules: cfg.rules }, log: memoryLogger(), serve: false });
    const app = await buildApp(d.appDeps(), { live: { highWaterBytes: HIGH_WATER_BYTES, lowWaterBytes: LOW_WATER_BYTES, drainCheckMs: 50 } });
    const serverSockets: Duplex[] = [];
    app.server.on("upgrade", (_req, socket: Duplex) => serverSockets.push(socket));
    await app.listen({ host: "127.0.0.1", port: 0 });
    const port = (app.server.address() as net.AddressInfo).port;
    let healthy: WebSocket | null = null;
    let stalled: Stalled | null = null;
    try {
      stalled = stalledClient(port);
      const st = stalled;
      await waitFor(() => st.out().includes("handshake") || st.proc.exitCode !== null, 10_000, "the stalled client's handshake");
      expect(st.out()).toContain("handshake HTTP/1.1 101");
      await waitFor(() => serverSockets.length === 1, 5000, "the stalled client's upgrade");
      const stalledServerSide = serverSockets[0]!;
      healthy = new WebSocket(`ws://127.0.0.1:${port}/api/live`);
      const arrivals: { atMs: number; bytes: number }[] = [];
      let largestMessage = 0;
      healthy.on("message", (data: Buffer) => {
        arrivals.push({ atMs: Date.now(), bytes: data.length });
        largestMessage = Math.max(largestMessage, data.length);
      });
      await new Promise<void>((ok, fail) => {
        healthy!.once("open", () => ok());
        healthy!.once("error", fail);
      });
      const heapBefore = process.memoryUsage().heapUsed;
      // Feed the hour of the scenario in slices, yielding so the hub sends (at most 4 messages a second).
      const startMs = Date.now();
      let maxBuffered = 0;
      const slice = Math.ceil(samples.length / 200);
      for (let i = 0; i < samples.length; i += slice) {
        for (const s of samples.slice(i, i + slice)) d.ingest({ ...s });
        await sleep(25);
        maxBuffered = Math.max(maxBuffered, stalledServerSide.writableLength);
      }
      const feedMs = Date.now() - startMs;
      const heapAfter = process.memoryUsage().heapUsed;
      const healthyBytes = arrivals.reduce((n, a) => n + a.bytes, 0);
      // The healthy client's largest pause between messages while the other one stalled.
      let worstGapMs = 0;
      for (let i = 1; i < arrivals.length; i++) worstGapMs = Math.max(worstGapMs, arrivals[i]!.atMs - arrivals[i - 1]!.atMs);
      console.info(
        `stalled client: ${feedMs} ms of feeding; healthy client got ${arrivals.length} messages, ${healthyBytes} bytes (largest ${largestMessage}), ` +
          `worst gap ${worstGapMs} ms; server buffer for the stalled client at most ${maxBuffered} bytes (high water ${HIGH_WATER_BYTES}); heap ${((heapAfter - heapBefore) / 1e6).toFixed(1)} MB change`,
      );
      // The loopback kernel buffers (the server's send buffer grows to tcp_wmem's 4 MiB) may take
      // all of it, so the buffer in the process may stay empty here; the hub's own bound under a
      // socket that never drains is checked in the next test.
      expect(healthyBytes).toBeGreaterThan(10 * largestMessage);
      // The bound of src/server/live.ts: the high water mark plus one message (a delta or a snapshot).
      expect(maxBuffered).toBeLessThanOrEqual(HIGH_WATER_BYTES + largestMessage);
      // The other client kept its pace (4 a second at most; a pause over 2 s would be the stall leaking).
      expect(arrivals.length).toBeGreaterThan((feedMs / 1000) * 2);
      expect(worstGapMs).toBeLessThan(2000);

      // The stalled client reads at last: what it gets ends with the state as it is now.
      st.proc.stdin!.write("read\n");
      await waitFor(() => /read \d+/.test(st.out()), 10_000, "the stalled client's reading");
      const [, bytes, snap] = /read (\d+) (\S+)/.exec(st.out())!;
      console.info(`stalled client, reading at last: ${bytes} bytes, ${snap}`);
      expect(Number(bytes)).toBeGreaterThan(0);
      expect(snap).toBe("snapshot");
    } finally {
      healthy?.close();
      stalled?.proc.kill();
      await app.close();
      await d.stop();
      dir.remove();
    }
  });
});

describe("the live hub under a socket that never drains", { timeout: 60_000 }, () => {
  it("holds at most the high water mark plus one message for it, and resyncs it with a snapshot when it drains", async () => {
    const spec = readScenarioSpec("purge-after-trip");
    const cfg = configOf("purge-after-trip", spec);
    const samples = simulatedSamples(spec, cfg);
    const dir = tempDir("mw-fault-hub-");
    const c = demoConfigFor(broker.url, `mw-faults-hub/${process.pid}`, dir.path);
    const d = await Daemon.start({ config: { ...c, rules: cfg.rules }, log: memoryLogger(), serve: false });
    const hub = new LiveHub(d.appDeps(), { warn: () => {}, error: () => {} }, { highWaterBytes: HIGH_WATER_BYTES, lowWaterBytes: LOW_WATER_BYTES, drainCheckMs: 20, heartbeatMs: 0 });
    // A socket whose kernel never takes anything: every send stays in bufferedAmount until drain().
    const sent: string[] = [];
    let buffered = 0;
    let maxBuffered = 0;
    let largest = 0;
    const listeners = new Map<string, ((...a: unknown[]) => void)[]>();
    const socket: LiveSocket = {
      readyState: 1,
      get bufferedAmount() {
        return buffered;
      },
      send(data: string) {
        sent.push(data);
        buffered += Buffer.byteLength(data);
        largest = Math.max(largest, Buffer.byteLength(data));
        maxBuffered = Math.max(maxBuffered, buffered);
      },
      close() {},
      terminate() {},
      ping() {},
      on(event, l) {
        listeners.set(event, [...(listeners.get(event) ?? []), l]);
        return socket;
      },
    };
    try {
      hub.add(socket);
      const slice = Math.ceil(samples.length / 100);
      for (let i = 0; i < samples.length; i += slice) {
        for (const s of samples.slice(i, i + slice)) d.ingest({ ...s });
        await sleep(30);
      }
      const stats = hub.stats();
      console.info(`live hub, socket never drained: ${sent.length} messages queued, at most ${maxBuffered} bytes (high water ${HIGH_WATER_BYTES}, largest message ${largest}); deltas dropped ${stats.droppedDeltas}`);
      expect(stats.droppedDeltas).toBeGreaterThan(0);
      expect(maxBuffered).toBeGreaterThan(HIGH_WATER_BYTES);
      expect(maxBuffered).toBeLessThanOrEqual(HIGH_WATER_BYTES + largest);
      // It drains: the next thing it gets is a snapshot of the state as it is now.
      const before = sent.length;
      buffered = 0;
      await waitFor(() => sent.length > before, 2000, "the resync snapshot");
      const first = JSON.parse(sent[before]!) as { type: string };
      expect(first.type).toBe("snapshot");
      expect(hub.stats().resyncSnapshots).toBeGreaterThan(0);
    } finally {
      for (const l of listeners.get("close") ?? []) l();
      await d.stop();
      dir.remove();
    }
  });
});
