// The fleet view: every box under one prefix on the site broker, read from the republish topic
// tree (src/republish/topics.ts). FleetModel is pure (times are arguments); FleetWatcher is the
// MQTT client (subscribe only) and serveFleet the small page.
//
// Liveness of a box: "offline" when its status says so (a clean stop, or its Last Will when the
// connection was lost); "silent" when nothing from it arrived within timeoutS (a bridge or broker
// on the way that died sends no will of the box: the age of its last message tells); else "online".
import http from "node:http";
import mqtt, { type MqttClient } from "mqtt";
import { ADVISORY_ONLY } from "../core/types.js";

export type BoxLiveness = "online" | "offline" | "silent";

export interface FleetAdvisory {
  id: string;
  state: string;
  tier: string;
  unitId: string | null;
  title: string;
  lastChangeMs: number | null;
}

export interface FleetBox {
  box: string;
  liveness: BoxLiveness;
  /** As the box's status said, before the timeout is applied. */
  reported: "online" | "offline" | null;
  site: string | null;
  plant: string | null;
  units: { id: string; name: string; kind: string }[];
  /** Receive time (the watcher's clock) of the last message from the box. */
  lastMessageMs: number;
  states: Record<string, string | null>;
  /** Advisories not in the normal state. */
  advisories: FleetAdvisory[];
  derivedKeys: number;
}

interface BoxRecord {
  reported: "online" | "offline" | null;
  site: string | null;
  plant: string | null;
  units: FleetBox["units"];
  lastMessageMs: number;
  states: Map<string, string | null>;
  advisories: Map<string, FleetAdvisory>;
  derived: Set<string>;
}

const obj = (v: unknown): Record<string, unknown> | null => (v !== null && typeof v === "object" && !Array.isArray(v) ? (v as Record<string, unknown>) : null);
const str = (v: unknown): string | null => (typeof v === "string" ? v : null);

export class FleetModel {
  private readonly boxes = new Map<string, BoxRecord>();
  /** Messages under the prefix that are not of our tree or not JSON: counted, never fatal. */
  unreadable = 0;

  constructor(
    readonly prefix: string,
    readonly timeoutS: number,
  ) {}

  /** One message from the broker; `atMs` is when it arrived. */
  message(topic: string, payload: Buffer, atMs: number): void {
    if (!topic.startsWith(`${this.prefix}/`)) return;
    const levels = topic.slice(this.prefix.length + 1).split("/");
    const [box, kind, ...rest] = levels;
    if (!box || !kind) return void this.unreadable++;
    if (payload.length === 0) return; // a retained topic being cleared
    let body: Record<string, unknown> | null;
    try {
      body = obj(JSON.parse(payload.toString("utf8")));
    } catch {
      body = null;
    }
    if (!body) return void this.unreadable++;
    let b = this.boxes.get(box);
    if (!b) {
      b = { reported: null, site: null, plant: null, units: [], lastMessageMs: atMs, states: new Map(), advisories: new Map(), derived: new Set() };
      this.boxes.set(box, b);
    }
    b.lastMessageMs = Math.max(b.lastMessageMs, atMs);
    const name = rest.join("/");
    if (kind === "status") {
      b.reported = body.state === "offline" ? "offline" : body.state === "online" ? "online" : b.reported;
      b.site = str(body.site) ?? b.site;
      b.plant = str(body.plant) ?? b.plant;
      if (Array.isArray(body.units)) b.units = body.units.map(obj).filter((u): u is Record<string, unknown> => u !== null).map((u) => ({ id: String(u.id), name: String(u.name ?? u.id), kind: String(u.kind ?? "") }));
    } else if (kind === "state" && name) b.states.set(name, str(body.value));
    else if (kind === "advisory" && name) {
      const state = str(body.state) ?? "unknown";
      if (state === "normal") b.advisories.delete(name);
      else
        b.advisories.set(name, {
          id: name,
          state,
          tier: str(body.tier) ?? "",
          unitId: str(body.unitId),
          title: str(body.title) ?? name,
          lastChangeMs: typeof body.lastChangeMs === "number" ? body.lastChangeMs : null,
        });
    } else if (kind === "derived" && name) b.derived.add(name);
  }

  view(nowMs: number): FleetBox[] {
    return [...this.boxes.entries()]
      .sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0))
      .map(([box, b]) => ({
        box,
        liveness: b.reported === "offline" ? "offline" : nowMs - b.lastMessageMs > this.timeoutS * 1000 ? "silent" : "online",
        reported: b.reported,
        site: b.site,
        plant: b.plant,
        units: b.units,
        lastMessageMs: b.lastMessageMs,
        states: Object.fromEntries([...b.states.entries()].sort(([x], [y]) => (x < y ? -1 : 1))),
        advisories: [...b.advisories.values()].sort((x, y) => (x.id < y.id ? -1 : 1)),
        derivedKeys: b.derived.size,
      }));
  }
}

/** The fleet as text: a block per box. */
export function renderFleet(boxes: readonly FleetBox[], nowMs: number): string {
  if (boxes.length === 0) return `no box seen yet\n${ADVISORY_ONLY}\n`;
  const lines: string[] = [];
  for (const b of boxes) {
    const ageS = Math.max(0, Math.round((nowMs - b.lastMessageMs) / 1000));
    lines.push(`${b.box}  ${b.liveness.toUpperCase()}  last message ${ageS} s ago  ${b.site ?? "?"}, ${b.plant ?? "?"}  (${b.derivedKeys} derived values)`);
    for (const u of b.units) {
      const st = ["phase", "inerting"].map((k) => b.states[`${k}.${u.id}`]).map((v, i) => (v === undefined ? null : `${i === 0 ? "phase" : "inerting"} ${v ?? "unknown"}`)).filter((x) => x !== null);
      lines.push(`  ${u.id.padEnd(8)} ${u.name}${st.length ? `: ${st.join(", ")}` : ""}`);
    }
    for (const [k, v] of Object.entries(b.states)) if (k.startsWith("analyser.") && v !== "ok") lines.push(`  ${k}: ${v ?? "unknown"}`);
    if (b.advisories.length === 0) lines.push("  no advisory active");
    for (const a of b.advisories) lines.push(`  ! ${a.tier.padEnd(7)} ${a.state.padEnd(12)} ${a.id}: ${a.title}`);
  }
  lines.push(ADVISORY_ONLY);
  return `${lines.join("\n")}\n`;
}

export interface FleetWatcherOptions {
  url: string;
  prefix: string;
  timeoutS: number;
  username?: string;
  password?: string;
  now?: () => number;
  onChange?: () => void;
}

/** Subscribes to <prefix>/+/# and keeps a FleetModel. Reads only. */
export class FleetWatcher {
  readonly model: FleetModel;
  private client: MqttClient | null = null;
  private readonly now: () => number;
  connected = false;

  constructor(private readonly o: FleetWatcherOptions) {
    this.model = new FleetModel(o.prefix, o.timeoutS);
    this.now = o.now ?? Date.now;
  }

  async start(): Promise<void> {
    const client = mqtt.connect(this.o.url, {
      clientId: `millwarden-fleet-${process.pid}-${Math.random().toString(16).slice(2, 8)}`,
      reconnectPeriod: 2000,
      ...(this.o.username !== undefined ? { username: this.o.username } : {}),
      ...(this.o.password !== undefined ? { password: this.o.password } : {}),
    });
    this.client = client;
    client.on("message", (topic, payload) => {
      this.model.message(topic, payload, this.now());
      this.o.onChange?.();
    });
    client.on("close", () => (this.connected = false));
    await new Promise<void>((ok, fail) => {
      const t = setTimeout(() => fail(new Error(`fleet: no connection to ${this.o.url} within 10 s`)), 10_000);
      client.once("connect", () => {
        this.connected = true;
        client.subscribe(`${this.o.prefix}/+/#`, { qos: 1 }, (err) => {
          clearTimeout(t);
          if (err) fail(new Error(`fleet: subscribing to ${this.o.prefix}/+/# failed: ${err.message}`));
          else ok();
        });
      });
    });
    client.on("connect", () => (this.connected = true));
  }

  view(): FleetBox[] {
    return this.model.view(this.now());
  }

  async stop(): Promise<void> {
    await this.client?.endAsync(true).catch(() => undefined);
    this.client = null;
  }
}

const PAGE = `<!doctype html><html lang="en"><head><meta charset="utf-8"><title>millwarden fleet</title>
<style>body{font:14px system-ui,sans-serif;margin:1rem;background:#f6f6f2;color:#1d1d1b}section{background:#fff;border:1px solid #ccc;margin:.5rem 0;padding:.5rem .8rem}
.online{color:#176b2c}.offline,.silent{color:#8a1c1c;font-weight:bold}.adv{margin:.1rem 0}.foot{font-size:12px;color:#555}</style></head>
<body><h1>Fleet</h1><div id="boxes">loading…</div><p class="foot" id="foot"></p>
<script type="module">
const esc = (s) => String(s ?? "").replace(/[&<>"]/g, (c) => ({ "&": "&amp;", "<": "&lt;", ">": "&gt;", '"': "&quot;" })[c]);
async function load() {
  const r = await fetch("api/fleet"); const f = await r.json();
  document.getElementById("foot").textContent = f.advisoryOnly;
  document.getElementById("boxes").innerHTML = f.boxes.length === 0 ? "no box seen yet" : f.boxes.map((b) => \`<section><h2>\${esc(b.box)} <span class="\${b.liveness}">\${b.liveness}</span></h2>
  <div>\${esc(b.site)}, \${esc(b.plant)}; last message \${Math.round((f.nowMs - b.lastMessageMs) / 1000)} s ago</div>
  <ul>\${b.units.map((u) => \`<li>\${esc(u.id)} \${esc(u.name)}: phase \${esc(b.states["phase." + u.id] ?? "–")}, inerting \${esc(b.states["inerting." + u.id] ?? "–")}</li>\`).join("")}</ul>
  \${b.advisories.map((a) => \`<div class="adv">\${esc(a.tier)} · \${esc(a.state)} · \${esc(a.id)}: \${esc(a.title)}</div>\`).join("") || "<div>no advisory active</div>"}</section>\`).join("");
}
load(); setInterval(load, 2000);
</script></body></html>`;

/** GET / (the page) and GET /api/fleet (JSON); nothing else, and nothing that writes. */
export async function serveFleet(watcher: FleetWatcher, host: string, port: number): Promise<{ url: string; close(): Promise<void> }> {
  const server = http.createServer((req, res) => {
    if (req.method !== "GET") {
      res.writeHead(405, { allow: "GET" }).end("read only\n");
      return;
    }
    const path = (req.url ?? "/").split("?")[0];
    if (path === "/") res.writeHead(200, { "content-type": "text/html; charset=utf-8" }).end(PAGE);
    else if (path === "/api/fleet") res.writeHead(200, { "content-type": "application/json" }).end(JSON.stringify({ advisoryOnly: ADVISORY_ONLY, nowMs: Date.now(), boxes: watcher.view() }));
    else res.writeHead(404).end("not found\n");
  });
  await new Promise<void>((ok, fail) => {
    server.once("error", fail);
    server.listen(port, host, () => ok());
  });
  const a = server.address() as import("node:net").AddressInfo;
  return { url: `http://${host}:${a.port}/`, close: () => new Promise<void>((ok) => server.close(() => ok())) };
}
