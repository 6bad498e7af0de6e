// The live hub behind WebSocket /api/live.
//
//   deps.subscribe ──LiveMessage──▶ hub ──JSON (serialised once)──▶ each client
//
// Lifecycle: the hub subscribes to the daemon when the first client joins and
// unsubscribes when the last one leaves. Each client gets a snapshot on joining,
// then every message.
//
// Backpressure: a slow client must not make the server buffer without bound. When a
// client's bufferedAmount is above highWaterBytes, deltas for it are dropped and it is
// marked stale; once its buffer falls to lowWaterBytes it gets a fresh snapshot, which
// supersedes every delta it missed. Memory per client therefore stays near the high
// water mark plus one message.
import type { LiveMessage, PlantState } from "../core/types.js";
import type { AppDeps } from "./deps.js";

/** The part of a ws WebSocket the hub uses (a narrow port, so tests can drive it). */
export interface LiveSocket {
  readonly readyState: number;
  readonly bufferedAmount: number;
  send(data: string): void;
  close(code?: number, reason?: string): void;
  terminate(): void;
  ping(): void;
  on(event: string, listener: (...args: unknown[]) => void): unknown;
}

export interface LiveHubOptions {
  /** Drop deltas for a client whose send buffer is above this (bytes). */
  highWaterBytes?: number;
  /** A stale client gets its fresh snapshot once its buffer is at or below this (bytes). */
  lowWaterBytes?: number;
  /** How often a stale client's buffer is checked (ms). */
  drainCheckMs?: number;
  /** Ping period; a client that missed a whole period's pong is dropped. 0 disables. */
  heartbeatMs?: number;
  /** How long closeAll waits for the closing handshake before cutting connections (ms). */
  closeGraceMs?: number;
}

interface Logger {
  warn(obj: object, msg: string): void;
  error(obj: object, msg: string): void;
}

const OPEN = 1;

interface Client {
  socket: LiveSocket;
  /** True after a dropped delta: the next thing it gets is a full snapshot. */
  needsSnapshot: boolean;
  drainTimer: ReturnType<typeof setInterval> | null;
  alive: boolean;
  closed: Promise<void>;
}

export interface LiveHubStats {
  clients: number;
  droppedDeltas: number;
  resyncSnapshots: number;
}

export class LiveHub {
  private readonly clients = new Set<Client>();
  private unsubscribe: (() => void) | null = null;
  private heartbeat: ReturnType<typeof setInterval> | null = null;
  private closing = false;
  private droppedDeltas = 0;
  private resyncSnapshots = 0;
  private readonly highWaterBytes: number;
  private readonly lowWaterBytes: number;
  private readonly drainCheckMs: number;
  private readonly heartbeatMs: number;
  private readonly closeGraceMs: number;

  constructor(
    private readonly deps: Pick<AppDeps, "getState" | "subscribe">,
    private readonly log: Logger,
    opts: LiveHubOptions = {},
  ) {
    this.highWaterBytes = opts.highWaterBytes ?? 1024 * 1024;
    this.lowWaterBytes = opts.lowWaterBytes ?? 64 * 1024;
    this.drainCheckMs = opts.drainCheckMs ?? 250;
    this.heartbeatMs = opts.heartbeatMs ?? 30_000;
    this.closeGraceMs = opts.closeGraceMs ?? 1000;
  }

  stats(): LiveHubStats {
    return { clients: this.clients.size, droppedDeltas: this.droppedDeltas, resyncSnapshots: this.resyncSnapshots };
  }

  /** Take over a freshly opened socket: snapshot now, messages from then on. */
  add(socket: LiveSocket): void {
    if (this.closing) {
      socket.close(1001, "server shutting down");
      return;
    }
    let resolveClosed!: () => void;
    const client: Client = {
      socket,
      needsSnapshot: false,
      drainTimer: null,
      alive: true,
      closed: new Promise<void>((resolve) => (resolveClosed = resolve)),
    };
    socket.on("close", () => {
      this.remove(client);
      resolveClosed();
    });
    // Without a listener an 'error' event would crash the process.
    socket.on("error", (err) => {
      this.log.warn({ err }, "live client socket error; dropping the client");
      socket.terminate();
    });
    socket.on("pong", () => {
      client.alive = true;
    });
    // The hub only talks; anything a client sends is ignored (ws limits its size).
    socket.on("message", () => {});

    const snapshot = this.serialiseSnapshot();
    if (snapshot === null) {
      socket.close(1011, "plant state unavailable");
      return;
    }
    this.clients.add(client);
    if (this.unsubscribe === null) this.unsubscribe = this.deps.subscribe((msg) => this.broadcast(msg));
    if (this.heartbeat === null && this.heartbeatMs > 0) {
      this.heartbeat = setInterval(() => this.beat(), this.heartbeatMs);
      this.heartbeat.unref();
    }
    this.trySend(client, snapshot);
  }

  /** Close every client (going away), cut those that do not finish the handshake in time. */
  async closeAll(): Promise<void> {
    this.closing = true;
    const waiting = [...this.clients].map((c) => c.closed);
    for (const c of this.clients) c.socket.close(1001, "server shutting down");
    let timer: ReturnType<typeof setTimeout> | undefined;
    const grace = new Promise<"timeout">((resolve) => {
      timer = setTimeout(() => resolve("timeout"), this.closeGraceMs);
    });
    const outcome = await Promise.race([Promise.all(waiting), grace]);
    clearTimeout(timer);
    if (outcome === "timeout") for (const c of this.clients) c.socket.terminate();
    // terminate() emits 'close' asynchronously; the clients must not outlive the hub.
    // remove() deletes from the set while iterating; Set iteration allows that.
    for (const c of this.clients) this.remove(c);
  }

  private remove(client: Client): void {
    if (!this.clients.delete(client)) return;
    if (client.drainTimer !== null) clearInterval(client.drainTimer);
    client.drainTimer = null;
    if (this.clients.size === 0) {
      this.unsubscribe?.();
      this.unsubscribe = null;
      if (this.heartbeat !== null) clearInterval(this.heartbeat);
      this.heartbeat = null;
    }
  }

  private broadcast(msg: LiveMessage): void {
    const data = JSON.stringify(msg);
    // A fresh snapshot for stale clients is built at most once per message.
    let snapshot: string | null | undefined = msg.type === "snapshot" ? data : undefined;
    for (const client of this.clients) {
      if (client.socket.readyState !== OPEN) continue;
      if (client.needsSnapshot) {
        if (client.socket.bufferedAmount > this.lowWaterBytes) {
          this.droppedDeltas += msg.type === "delta" ? 1 : 0;
          continue;
        }
        snapshot ??= this.serialiseSnapshot();
        if (snapshot !== null) this.resync(client, snapshot);
        continue;
      }
      if (client.socket.bufferedAmount > this.highWaterBytes) {
        this.droppedDeltas += msg.type === "delta" ? 1 : 0;
        this.markStale(client);
        continue;
      }
      this.trySend(client, data);
    }
  }

  private markStale(client: Client): void {
    client.needsSnapshot = true;
    if (client.drainTimer !== null) return;
    client.drainTimer = setInterval(() => {
      if (client.socket.readyState !== OPEN || client.socket.bufferedAmount > this.lowWaterBytes) return;
      const snapshot = this.serialiseSnapshot();
      if (snapshot !== null) this.resync(client, snapshot);
    }, this.drainCheckMs);
    client.drainTimer.unref();
  }

  private resync(client: Client, snapshot: string): void {
    client.needsSnapshot = false;
    if (client.drainTimer !== null) clearInterval(client.drainTimer);
    client.drainTimer = null;
    this.resyncSnapshots += 1;
    this.trySend(client, snapshot);
  }

  private serialiseSnapshot(): string | null {
    let state: PlantState;
    try {
      state = this.deps.getState();
    } catch (err) {
      this.log.error({ err }, "getState failed while building a live snapshot");
      return null;
    }
    const msg: LiveMessage = { type: "snapshot", state };
    return JSON.stringify(msg);
  }

  private trySend(client: Client, data: string): void {
    try {
      client.socket.send(data);
    } catch (err) {
      this.log.warn({ err }, "sending to a live client failed; dropping the client");
      client.socket.terminate();
    }
  }

  private beat(): void {
    for (const client of this.clients) {
      if (!client.alive) {
        client.socket.terminate();
        continue;
      }
      client.alive = false;
      try {
        client.socket.ping();
      } catch {
        client.socket.terminate();
      }
    }
  }
}
