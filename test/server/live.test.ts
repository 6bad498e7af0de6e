// WebSocket /api/live: the hub's backpressure rules against a scripted socket, then the
// real thing (startServer on an ephemeral loopback port, the ws package as client).
import { EventEmitter } from "node:events";
import { afterEach, describe, expect, it, vi } from "vitest";
import WebSocket from "ws";
import type { LiveMessage } from "../../src/core/types.js";
import { LiveHub, type LiveSocket } from "../../src/server/live.js";
import { startServer, type RunningServer } from "../../src/server/listen.js";
import { FakeDeps } from "./fake-deps.js";

/** A socket whose send buffer the test sets by hand (ws readyState numbers, RFC 6455 close codes). */
class ScriptedSocket extends EventEmitter implements LiveSocket {
  readyState = 1;
  bufferedAmount = 0;
  sent: LiveMessage[] = [];
  closedWith: number | null = null;
  terminated = false;
  pings = 0;
  send(data: string): void {
    this.sent.push(JSON.parse(data) as LiveMessage);
  }
  close(code?: number): void {
    this.closedWith = code ?? 1005;
    this.readyState = 3;
    queueMicrotask(() => this.emit("close"));
  }
  terminate(): void {
    this.terminated = true;
    this.readyState = 3;
    queueMicrotask(() => this.emit("close"));
  }
  ping(): void {
    this.pings += 1;
  }
}

const silentLog = { warn: () => {}, error: () => {} };
const MB = 1024 * 1024;

function coDelta(deps: FakeDeps, ppm: number): void {
  const coPoints = deps.state.coPoints.map((p) => (p.id === "bf2-outlet" ? { ...p, coPpm: ppm } : p));
  deps.update({ coPoints }, 1000);
}

describe("LiveHub", () => {
  afterEach(() => {
    vi.useRealTimers();
  });

  it("sends a snapshot on joining, then every message; subscribes once for all clients", () => {
    const deps = new FakeDeps();
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 0 });
    const a = new ScriptedSocket();
    const b = new ScriptedSocket();
    hub.add(a);
    hub.add(b);
    expect(deps.listenerCount).toBe(1);
    expect(a.sent[0]).toEqual({ type: "snapshot", state: JSON.parse(JSON.stringify(deps.state)) });
    coDelta(deps, 150);
    expect(a.sent.map((m) => m.type)).toEqual(["snapshot", "delta"]);
    expect(b.sent.map((m) => m.type)).toEqual(["snapshot", "delta"]);
  });

  it("unsubscribes when the last client leaves", async () => {
    const deps = new FakeDeps();
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 0 });
    const a = new ScriptedSocket();
    const b = new ScriptedSocket();
    hub.add(a);
    hub.add(b);
    a.emit("close");
    expect(deps.listenerCount).toBe(1);
    b.emit("close");
    expect(deps.listenerCount).toBe(0);
    expect(hub.stats().clients).toBe(0);
  });

  it("drops deltas for a client above the high-water mark, then resynchronises it with a fresh snapshot", () => {
    vi.useFakeTimers();
    const deps = new FakeDeps();
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 0, highWaterBytes: MB, lowWaterBytes: 64 * 1024, drainCheckMs: 250 });
    const slow = new ScriptedSocket();
    const fast = new ScriptedSocket();
    hub.add(slow);
    hub.add(fast);
    slow.bufferedAmount = 2 * MB;
    for (let i = 0; i < 500; i += 1) coDelta(deps, 150 + i);
    // The slow client got nothing more, however many deltas passed; the fast one got all.
    expect(slow.sent).toHaveLength(1);
    expect(fast.sent).toHaveLength(501);
    expect(hub.stats().droppedDeltas).toBe(500);
    // Still above the low-water mark: no snapshot yet.
    slow.bufferedAmount = 100 * 1024;
    vi.advanceTimersByTime(1000);
    expect(slow.sent).toHaveLength(1);
    // Drained: one fresh snapshot carrying the latest state, which supersedes the lost deltas.
    slow.bufferedAmount = 0;
    vi.advanceTimersByTime(250);
    expect(slow.sent).toHaveLength(2);
    const resync = slow.sent[1];
    expect(resync?.type).toBe("snapshot");
    if (resync?.type !== "snapshot") throw new Error("unreachable");
    expect(resync.state.nowMs).toBe(deps.state.nowMs);
    expect(resync.state.coPoints.find((p) => p.id === "bf2-outlet")?.coPpm).toBe(649);
    // From then on it is an ordinary client again.
    coDelta(deps, 700);
    expect(slow.sent.at(-1)?.type).toBe("delta");
    expect(hub.stats().resyncSnapshots).toBe(1);
  });

  it("resynchronises a drained client on the next message even before its timer fires", () => {
    vi.useFakeTimers();
    const deps = new FakeDeps();
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 0, drainCheckMs: 60_000 });
    const slow = new ScriptedSocket();
    hub.add(slow);
    slow.bufferedAmount = 2 * MB;
    coDelta(deps, 200);
    slow.bufferedAmount = 0;
    coDelta(deps, 210);
    expect(slow.sent.map((m) => m.type)).toEqual(["snapshot", "snapshot"]);
  });

  it("stops the drain timer of a client that leaves while stale", () => {
    vi.useFakeTimers();
    const deps = new FakeDeps();
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 0 });
    const slow = new ScriptedSocket();
    hub.add(slow);
    slow.bufferedAmount = 2 * MB;
    coDelta(deps, 200);
    expect(vi.getTimerCount()).toBe(1);
    slow.emit("close");
    expect(vi.getTimerCount()).toBe(0);
  });

  it("drops a client that answers no ping within one period", () => {
    vi.useFakeTimers();
    const deps = new FakeDeps();
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 30_000 });
    const quiet = new ScriptedSocket();
    const lively = new ScriptedSocket();
    lively.ping = () => {
      lively.pings += 1;
      lively.emit("pong");
    };
    hub.add(quiet);
    hub.add(lively);
    vi.advanceTimersByTime(30_000);
    expect(quiet.pings).toBe(1);
    expect(quiet.terminated).toBe(false);
    vi.advanceTimersByTime(30_000);
    expect(quiet.terminated).toBe(true);
    expect(lively.terminated).toBe(false);
    expect(lively.pings).toBe(2);
  });

  it("closes with 1011 when the state cannot be read, and does not subscribe", () => {
    const deps = new FakeDeps();
    deps.getState = () => {
      throw new Error("engine not started");
    };
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 0 });
    const s = new ScriptedSocket();
    hub.add(s);
    // RFC 6455 7.4.1: 1011 = server hit an unexpected condition.
    expect(s.closedWith).toBe(1011);
    expect(deps.listenerCount).toBe(0);
  });

  it("closeAll sends 1001 (going away) and cuts clients that do not finish the handshake", async () => {
    const deps = new FakeDeps();
    const hub = new LiveHub(deps, silentLog, { heartbeatMs: 0, closeGraceMs: 50 });
    const polite = new ScriptedSocket();
    const stuck = new ScriptedSocket();
    stuck.close = (code?: number) => {
      stuck.closedWith = code ?? 1005; // never emits 'close'
    };
    hub.add(polite);
    hub.add(stuck);
    await hub.closeAll();
    expect(polite.closedWith).toBe(1001);
    expect(stuck.closedWith).toBe(1001);
    expect(stuck.terminated).toBe(true);
    expect(deps.listenerCount).toBe(0);
    const late = new ScriptedSocket();
    hub.add(late);
    expect(late.closedWith).toBe(1001);
  });
});

describe("WebSocket /api/live on a real port", () => {
  let server: RunningServer | null = null;
  afterEach(async () => {
    await server?.close();
    server = null;
  });

  /** Collects messages; next() waits for the next one not yet taken. */
  function inbox(ws: WebSocket) {
    const queue: LiveMessage[] = [];
    const waiters: ((m: LiveMessage) => void)[] = [];
    ws.on("message", (data) => {
      const msg = JSON.parse(String(data)) as LiveMessage;
      const w = waiters.shift();
      if (w) w(msg);
      else queue.push(msg);
    });
    return {
      next: (timeoutMs = 2000) =>
        new Promise<LiveMessage>((resolve, reject) => {
          const queued = queue.shift();
          if (queued) return resolve(queued);
          const timer = setTimeout(() => reject(new Error(`no message within ${timeoutMs} ms`)), timeoutMs);
          waiters.push((m) => {
            clearTimeout(timer);
            resolve(m);
          });
        }),
    };
  }

  it("snapshot on connect, deltas as pushed, unsubscribe on close, clean shutdown", async () => {
    const deps = new FakeDeps();
    await deps.addUser("a.operator", "operator", "pw-a.operator-Tarnholm-2024!");
    server = await startServer(deps, { host: "127.0.0.1", port: 0 });
    expect(server.url).toMatch(/^http:\/\/127\.0\.0\.1:\d+$/);
    const ws = new WebSocket(`${server.url.replace("http", "ws")}/api/live`);
    const box = inbox(ws);
    await new Promise<void>((resolve, reject) => {
      ws.once("open", () => resolve());
      ws.once("error", reject);
    });

    const first = await box.next();
    expect(first).toEqual({ type: "snapshot", state: JSON.parse(JSON.stringify(deps.state)) });
    expect(deps.listenerCount).toBe(1);

    coDelta(deps, 163);
    const second = await box.next();
    expect(second.type).toBe("delta");
    if (second.type !== "delta") throw new Error("unreachable");
    expect(second.nowMs).toBe(deps.state.nowMs);
    expect(second.coPoints?.find((p) => p.id === "bf2-outlet")?.coPpm).toBe(163);

    // An acknowledgement over HTTP (logged in) reaches the socket as a delta with the whole advisory list.
    const login = await fetch(`${server.url}/api/login`, {
      method: "POST",
      headers: { "content-type": "application/json" },
      body: JSON.stringify({ user: "a.operator", password: "pw-a.operator-Tarnholm-2024!" }),
    });
    const cookie = login.headers.get("set-cookie")!.split(";")[0]!;
    const { csrfToken } = (await login.json()) as { csrfToken: string };
    const res = await fetch(`${server.url}/api/advisories/co-rate-bf2-outlet/ack`, {
      method: "POST",
      headers: { "content-type": "application/json", cookie, "x-csrf-token": csrfToken },
      body: JSON.stringify({}),
    });
    expect(res.status).toBe(200);
    const third = await box.next();
    expect(third.type === "delta" && third.advisories?.find((a) => a.id === "co-rate-bf2-outlet")?.state).toBe("ack");

    const closed = new Promise<number>((resolve) => ws.once("close", (code) => resolve(code)));
    ws.close(1000);
    expect(await closed).toBe(1000);
    await vi.waitFor(() => expect(deps.listenerCount).toBe(0), { timeout: 2000 });
  });

  it("server.close() with a client still connected ends it with 1001 and does not hang", async () => {
    const deps = new FakeDeps();
    server = await startServer(deps, { host: "127.0.0.1", port: 0 });
    const ws = new WebSocket(`${server.url.replace("http", "ws")}/api/live`);
    const box = inbox(ws);
    await box.next();
    const closed = new Promise<number>((resolve) => ws.once("close", (code) => resolve(code)));
    const started = Date.now();
    await server.close();
    server = null;
    // RFC 6455 7.4.1: 1001 = endpoint going away (server shutting down).
    expect(await closed).toBe(1001);
    expect(Date.now() - started).toBeLessThan(3000);
    expect(deps.listenerCount).toBe(0);
  });
});
