// Beyond one box, on loopback: two daemons on the data clock (fed samples directly), each
// republishing to its own private Mosquitto; both Mosquittos bridge our topic tree out to a
// third, where the fleet view reads. The fleet sees both boxes; when box A's connection is lost
// its Last Will ("offline") reaches the fleet through the bridge; when box B's Mosquitto is killed
// (SIGKILL: no will of the box can come through) the fleet marks B silent by the age of its last
// message; when that Mosquitto returns, B's queued messages are drained in order and reach the fleet.
import { spawn, type ChildProcess } from "node:child_process";
import { mkdirSync, writeFileSync } from "node:fs";
import { userInfo } from "node:os";
import { join } from "node:path";
import mqtt from "mqtt";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { republishSchema } from "../../src/config/sections/republish.js";
import type { Sample } from "../../src/core/types.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { FleetWatcher, renderFleet } from "../../src/republish/fleet.js";
import { configOf, readScenarioSpec, runCore, simulatedSamples } from "../scenarios/harness.js";
import { demoConfigFor, listening, tempDir, waitFor } from "../integration/helpers.js";
import { CutProxy, freePort, MISSING } from "../sources/mosquitto.js";

const PREFIX = `mw-fleet-${process.pid}`;

/** A Mosquitto on a loopback port, with extra config lines (the bridge). */
class Mosq {
  proc: ChildProcess | null = null;
  output = "";
  constructor(
    readonly dir: string,
    readonly port: number,
    private readonly extra: string[] = [],
  ) {
    writeFileSync(join(dir, "mosquitto.conf"), [`user ${userInfo().username}`, "log_dest stdout", "log_type error", "log_type warning", "max_queued_messages 0", `listener ${port} 127.0.0.1`, "allow_anonymous true", ...this.extra, ""].join("\n"));
  }
  async start(): Promise<void> {
    const p = spawn("mosquitto", ["-c", join(this.dir, "mosquitto.conf")], { stdio: ["ignore", "pipe", "pipe"] });
    this.proc = p;
    p.stdout!.on("data", (b: Buffer) => (this.output += b.toString()));
    p.stderr!.on("data", (b: Buffer) => (this.output += b.toString()));
    const end = Date.now() + 10_000;
    while (!(await listening(this.port))) {
      if (p.exitCode !== null || Date.now() > end) throw new Error(`mosquitto on ${this.port} did not start: ${this.output}`);
      await new Promise((r) => setTimeout(r, 50));
    }
  }
  async stop(signal: NodeJS.Signals = "SIGTERM"): Promise<void> {
    const p = this.proc;
    this.proc = null;
    if (!p || p.exitCode !== null) return;
    await new Promise<void>((ok) => {
      p.once("exit", () => ok());
      p.kill(signal);
    });
  }
}

const bridgeTo = (name: string, port: number) => [
  `connection ${name}`,
  `address 127.0.0.1:${port}`,
  `topic ${PREFIX}/# out 1`,
  "cleansession true",
  "restart_timeout 1",
];

let broker: EmbeddedBroker;
let dir: ReturnType<typeof tempDir>;
let central: Mosq, siteA: Mosq, siteB: Mosq;

describe.skipIf(MISSING.includes("mosquitto"))("fleet view over bridged Mosquittos", () => {
  beforeAll(async () => {
    broker = await startEmbeddedBroker(0, "127.0.0.1");
    dir = tempDir("mw-fleet-");
    for (const d of ["c", "a", "b", "da", "db"]) mkdirSync(join(dir.path, d));
    const [pc, pa, pb] = [await freePort(), await freePort(), await freePort()];
    central = new Mosq(join(dir.path, "c"), pc);
    siteA = new Mosq(join(dir.path, "a"), pa, bridgeTo("cg2-a-uplink", pc));
    siteB = new Mosq(join(dir.path, "b"), pb, bridgeTo("cg2-b-uplink", pc));
    await central.start();
    await siteA.start();
    await siteB.start();
  });
  afterAll(async () => {
    for (const m of [siteA, siteB, central]) await m?.stop();
    await broker?.close();
    dir?.remove();
  });

  it("sees both boxes, A's will through the bridge, B silent while its broker is dead, then B's queued messages", async () => {
    const spec = readScenarioSpec("purge-after-trip");
    const scen = configOf("purge-after-trip", spec);
    const samples = simulatedSamples(spec, scen);
    const raise = runCore(scen, samples).transitions.find((t) => t.advisoryId === "o2-margin-vm2" && t.transition === "raise")!;
    const t0 = samples[0]!.sourceTimeMs;

    const proxyA = await CutProxy.start(siteA.port);
    const daemonFor = (box: string, url: string, data: string) => {
      const c = demoConfigFor(broker.url, `${PREFIX}-src-${box}`, join(dir.path, data));
      const republish = republishSchema.parse({ url, box, prefix: PREFIX, heartbeatS: 1, derived: { minIntervalS: 5, everyS: 30 } });
      return Daemon.start({ config: { ...c, rules: scen.rules, republish }, log: memoryLogger(), serve: false });
    };
    const feed = (d: Daemon, from: number, to: number) => {
      for (const s of samples) if (s.sourceTimeMs >= from && s.sourceTimeMs < to) d.ingest({ ...s } as Sample);
    };

    // Every transition of B as the centre receives it (the bridge forwards QoS 1 in order).
    const seenAtCentre: string[] = [];
    const sub = mqtt.connect(`mqtt://127.0.0.1:${central.port}`, { clientId: `order-${process.pid}` });
    await new Promise<void>((ok) => sub.once("connect", () => sub.subscribe(`${PREFIX}/cg2-b/transition/#`, { qos: 1 }, () => ok())));
    sub.on("message", (_t, p) => {
      const t = JSON.parse(p.toString()) as { atMs: number; advisoryId: string; transition: string };
      seenAtCentre.push(`${t.atMs} ${t.advisoryId} ${t.transition}`);
    });
    const fleet = new FleetWatcher({ url: `mqtt://127.0.0.1:${central.port}`, prefix: PREFIX, timeoutS: 3 });
    await fleet.start();
    const box = (id: string) => fleet.view().find((b) => b.box === id);
    const a = await daemonFor("cg2-a", `mqtt://127.0.0.1:${proxyA.port}`, "da");
    const b = await daemonFor("cg2-b", `mqtt://127.0.0.1:${siteB.port}`, "db");
    try {
      feed(a, t0, raise.atMs + 1000);
      feed(b, t0, t0 + 60_000);
      await waitFor(() => box("cg2-a")?.advisories.some((x) => x.id === "o2-margin-vm2") === true && box("cg2-b")?.liveness === "online", 15_000, "both boxes in the fleet view, A with its advisory");
      const seenA = box("cg2-a")!;
      expect(seenA).toMatchObject({ liveness: "online", site: "Tarnholm Works" });
      expect(seenA.units.map((u) => u.id)).toContain("vm2");
      expect(Object.keys(seenA.states).some((k) => k.startsWith("phase."))).toBe(true);
      expect(box("cg2-b")!.advisories.some((x) => x.id === "o2-margin-vm2")).toBe(false);
      expect(renderFleet(fleet.view(), Date.now())).toMatch(/cg2-a {2}ONLINE[\s\S]*o2-margin-vm2[\s\S]*cg2-b {2}ONLINE/);

      // Box A's connection is lost (no DISCONNECT): Mosquitto A publishes its will, bridged to the centre.
      proxyA.cut();
      await waitFor(() => box("cg2-a")?.liveness === "offline", 10_000, "A's will (offline) through the bridge");
      expect(box("cg2-a")!.reported).toBe("offline");

      // Box B's Mosquitto is killed: the bridge dies with it, no will of B can come; the fleet's timeout tells.
      await siteB.stop("SIGKILL");
      await waitFor(() => box("cg2-b")?.liveness === "silent", 10_000, "B silent after the timeout");
      // Meanwhile B raises the advisory; its messages wait in B's historian.
      await waitFor(() => !b.republish!.stats().connected, 5000, "B's republisher notices the broker is gone");
      feed(b, t0 + 60_000, raise.atMs + 1000);
      const queued = b.republish!.stats().depth;
      expect(queued).toBeGreaterThan(0);

      b.historian.flush();
      const stored = b.historian.transitions().map((t) => `${t.atMs} ${t.advisoryId} ${t.transition}`);
      expect(stored.length).toBeGreaterThan(seenAtCentre.length);

      await siteB.start();
      await waitFor(() => box("cg2-b")?.liveness === "online" && box("cg2-b")!.advisories.some((x) => x.id === "o2-margin-vm2"), 20_000, "B back, with the advisory raised while away");
      await waitFor(() => b.republish!.stats().depth === 0 && seenAtCentre.length >= stored.length, 10_000, "B's queue drained to the centre");
      expect(b.republish!.stats()).toMatchObject({ droppedOrdinary: 0, droppedKeepLast: 0 });
      // Every transition B made, before and during the outage, reached the centre once and in order.
      expect(seenAtCentre).toEqual(stored);
      expect(box("cg2-a")!.liveness).toBe("offline");
    } finally {
      await a.stop();
      await b.stop();
      await fleet.stop();
      await sub.endAsync(true);
      await proxyA.close();
    }
  }, 90_000);
});
