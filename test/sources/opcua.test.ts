// The OPC UA source against a real peer: the simulator's node-opcua server in this process,
// on 127.0.0.1 with an ephemeral port. Values are checked against the frames the server
// served (each frame is recorded by its time, which the server sends as SourceTimestamp);
// unit conversions against their definitions (1 mbar = 100 Pa; °F = °C·1.8 + 32).
import { AttributeIds, DataType, OPCUACertificateManager, OPCUAClient, StatusCodes } from "node-opcua";
import { mkdtempSync, rmSync } from "node:fs";
import net from "node:net";
import { tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import type { OpcUaSourceConfig, SignalConfig } from "../../src/config/schema.js";
import type { Sample } from "../../src/core/types.js";
import type { SimFrame } from "../../src/sim/plant.js";
import { simNodeId, startSimOpcUaServer, type SimOpcUaServer, type SimOpcUaServerOptions } from "../../src/sim/opcua-server.js";
import { OpcUaSource } from "../../src/sources/opcua.js";
import { ensureOwnCertificate, inspectCertificate, listServerCertificates, trustServerCertificate, type OwnCertificate } from "../../src/sources/opcua-pki.js";
import { waitFor } from "../integration/helpers.js";

// Services that change a server. None may ever reach one from millwarden (DESIGN.md §7).
const CHANGING_SERVICES = [
  "WriteRequest", "CallRequest", "HistoryUpdateRequest", "AddNodesRequest", "DeleteNodesRequest",
  "AddReferencesRequest", "DeleteReferencesRequest",
];

let dir: string;
let own: OwnCertificate;
let srv: SimOpcUaServer;
/** Every frame served, by its time: the oracle for values and source timestamps. */
const served = new Map<number, Map<string, number>>();
/** A receive clock far from the data's time, so receive and source times cannot be confused. */
const RECV_MS = Date.UTC(2030, 5, 1, 12, 0, 0);
const START_MS = Date.UTC(2026, 0, 12, 6, 0, 0);

const simOpts = (port: number): SimOpcUaServerOptions => ({
  port,
  scenario: "filter-smoulder",
  speed: 20,
  startTimeMs: START_MS,
  seed: 7,
  loop: true,
  pkiFolder: join(dir, "server-pki"),
  users: { operator: "tarnholm-cg2" },
  onFrame: (f: SimFrame) => served.set(f.tMs, new Map(f.values.map((v) => [v.tag, v.value]))),
});

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), "mw-opcua-"));
  own = await ensureOwnCertificate(join(dir, "client-pki"));
  srv = await startSimOpcUaServer(simOpts(0));
  // The server trusts us explicitly too (it refuses unknown clients).
  await srv.trustClientCertificate(own.certificateFile);
}, 60_000);
afterAll(async () => {
  await srv?.close();
  rmSync(dir, { recursive: true, force: true });
}, 30_000);

const sourceCfg = (over: Partial<OpcUaSourceConfig> = {}): OpcUaSourceConfig => ({
  id: "plc",
  kind: "opcua",
  endpointUrl: srv.endpointUrl,
  securityMode: "None",
  securityPolicy: "None",
  pkiFolder: join(dir, "client-pki"),
  trustUnknownServerCertificates: false,
  publishingIntervalMs: 200,
  samplingIntervalMs: 0,
  maxClockSkewS: 30,
  ...over,
});
const sig = (id: string, tag: string, unit: SignalConfig["unit"], over: Partial<SignalConfig> = {}): SignalConfig => ({
  id, name: id, tag, source: "plc", nodeId: simNodeId(tag), unit, scale: 1, offset: 0, expectedPeriodS: 1, ...over,
});

function collect() {
  const got: Sample[] = [];
  const logs: string[] = [];
  return { got, logs, deps: { now: () => RECV_MS, log: (_l: string, m: string) => void logs.push(m) } };
}
const servedValue = (s: Sample, tag: string) => served.get(s.sourceTimeMs)?.get(tag);

/** A TCP relay in front of the server whose link can be cut (sockets destroyed, new ones refused). */
async function startRelay(targetPort: number) {
  const sockets = new Set<net.Socket>();
  let cut = false;
  const server = net.createServer((inbound) => {
    if (cut) return void inbound.destroy();
    const outbound = net.connect({ host: "127.0.0.1", port: targetPort });
    for (const s of [inbound, outbound]) {
      sockets.add(s);
      s.on("close", () => sockets.delete(s));
      s.on("error", () => undefined);
    }
    inbound.pipe(outbound).pipe(inbound);
    inbound.on("close", () => outbound.destroy());
    outbound.on("close", () => inbound.destroy());
  });
  await new Promise<void>((ok) => server.listen(0, "127.0.0.1", ok));
  return {
    port: (server.address() as net.AddressInfo).port,
    cut() {
      cut = true;
      for (const s of sockets) s.destroy();
    },
    restore() {
      cut = false;
    },
    close: () => new Promise<void>((ok) => server.close(() => ok())),
  };
}

describe("OpcUaSource", () => {
  it("receives values with their source timestamps, converted like MQTT, and compares units with the server", async () => {
    const signals = [
      sig("vm2.outlet.temp", "VM2-TT-111", "degC", { range: [-30, 450] }),
      sig("vm2.outlet.press", "VM2-PT-112", "mbar"),
      // A raw count scaled in the config: value = raw·0.5 + 2 (in ppm).
      sig("bf2.outlet.co", "BF2-AT-214", "ppm", { scale: 0.5, offset: 2 }),
      // Declared as a °F transmitter with scale/offset turning °C into °F: back in °C it is the served value.
      sig("vm2.outlet.temp-f", "VM2-TT-111", "degF", { scale: 1.8, offset: 32 }),
    ];
    const { got, logs, deps } = collect();
    const src = new OpcUaSource(sourceCfg(), signals, deps);
    await src.start((s) => got.push(s));
    await src.whenReady();
    await waitFor(() => signals.every((s) => got.filter((g) => g.signal === s.id).length >= 10), 15_000, "ten samples per signal");
    await src.stop();

    for (const s of got) {
      expect(s).toMatchObject({ quality: "good", receiveTimeMs: RECV_MS });
      expect(s.qualityReason).toBeUndefined();
      // Source time is a frame time: START + k seconds.
      expect((s.sourceTimeMs - START_MS) % 1000).toBe(0);
    }
    const check = (id: string, tag: string, f: (v: number) => number) => {
      const mine = got.filter((g) => g.signal === id);
      for (const s of mine) {
        const raw = servedValue(s, tag);
        expect(raw, `${id} at ${new Date(s.sourceTimeMs).toISOString()} was served`).toBeDefined();
        expect(s.value).toBeCloseTo(f(raw!), 9);
      }
    };
    check("vm2.outlet.temp", "VM2-TT-111", (v) => v);
    check("vm2.outlet.press", "VM2-PT-112", (v) => v * 100); // 1 mbar = 100 Pa
    check("bf2.outlet.co", "BF2-AT-214", (v) => v * 0.5 + 2);
    check("vm2.outlet.temp-f", "VM2-TT-111", (v) => v);

    const st = src.stats();
    expect(st).toMatchObject({ kind: "opcua", connected: false, rejected: 0, securityMode: "None" });
    expect(st.samples).toBe(got.length);
    // Security None is allowed, and said out loud.
    expect(st.securityWarning).toMatch(/security None .* unsigned and unencrypted/);
    expect(logs.some((l) => l.includes("security None"))).toBe(true);
    // The server serves °C (UNECE CEL) with EURange 0..200: the °F declaration and the wider range are reported.
    expect(st.unitWarnings).toHaveLength(2);
    expect(st.unitWarnings.find((w) => w.startsWith("signal vm2.outlet.temp-f"))).toMatch(/"°C", UNECE CEL, the config says degF/);
    expect(st.unitWarnings.find((w) => w.startsWith("signal vm2.outlet.temp "))).toMatch(/configured range \[-30, 450\] degC reaches beyond the server's EURange \[0, 200\]/);
  }, 30_000);

  it("turns Bad and Uncertain status codes into qualities with the code's name; an unknown node is bad", async () => {
    const signals = [sig("bf2.outlet.co", "BF2-AT-214", "ppm"), sig("missing", "NOPE-TT-999", "degC")];
    const { got, deps } = collect();
    const src = new OpcUaSource(sourceCfg(), signals, deps);
    await src.start((s) => got.push(s));
    await src.whenReady();
    const co = () => got.filter((s) => s.signal === "bf2.outlet.co");
    try {
      await waitFor(() => co().length >= 3, 10_000, "good CO samples");
      srv.setTagStatus("BF2-AT-214", "BadSensorFailure");
      await waitFor(() => co().some((s) => s.quality === "bad"), 10_000, "a bad CO sample");
      srv.setTagStatus("BF2-AT-214", "UncertainLastUsableValue");
      await waitFor(() => co().some((s) => s.quality === "uncertain"), 10_000, "an uncertain CO sample");
      srv.setTagStatus("BF2-AT-214", null);
      const n = co().length;
      await waitFor(() => co().slice(n).some((s) => s.quality === "good"), 10_000, "good again");
    } finally {
      srv.setTagStatus("BF2-AT-214", null);
      await src.stop();
    }
    const bad = co().find((s) => s.quality === "bad")!;
    expect(bad.qualityReason).toBe("BadSensorFailure");
    expect(bad.value).toBeNaN();
    expect(served.has(bad.sourceTimeMs)).toBe(true);
    const unc = co().find((s) => s.quality === "uncertain")!;
    expect(unc.qualityReason).toBe("UncertainLastUsableValue");
    expect(unc.value).toBe(servedValue(unc, "BF2-AT-214")); // uncertain keeps its value
    const missing = got.filter((s) => s.signal === "missing");
    expect(missing).toHaveLength(1);
    expect(missing[0]).toMatchObject({ quality: "bad", qualityReason: "BadNodeIdUnknown" });
    expect(src.stats().rejectedBy).toEqual({ "missing:BadNodeIdUnknown": 1 });
  }, 30_000);

  it("SignAndEncrypt with Basic256Sha256: refuses an unknown server certificate until it is trusted explicitly", async () => {
    process.env.MW_TEST_OPCUA_PASSWORD = "tarnholm-cg2";
    const pki = join(dir, "client-pki");
    const { got, logs, deps } = collect();
    const src = new OpcUaSource(
      sourceCfg({ securityMode: "SignAndEncrypt", securityPolicy: "Basic256Sha256", username: "operator", passwordEnv: "MW_TEST_OPCUA_PASSWORD" }),
      [sig("vm2.outlet.temp", "VM2-TT-111", "degC")],
      deps,
    );
    await src.start((s) => got.push(s));
    try {
      await waitFor(() => src.stats().lastError !== null, 15_000, "the certificate refusal");
      expect(src.stats().connected).toBe(false);
      expect(src.stats().lastError).toMatch(/BadCertificateUntrusted.*millwarden pki trust/);
      expect(logs.some((l) => l.includes("BadCertificateUntrusted"))).toBe(true);
      expect(got).toHaveLength(0);
      // The refused certificate is kept for a person to look at: it is the server's.
      const serverCert = inspectCertificate(srv.certificateFile);
      await waitFor(() => listServerCertificates(pki).some((c) => c.status === "rejected"), 5000, "a rejected certificate on file");
      expect(listServerCertificates(pki).find((c) => c.status === "rejected")?.thumbprint).toBe(serverCert.thumbprint);

      // Trust it from the file the server's administrator hands over.
      const trusted = await trustServerCertificate(pki, srv.certificateFile);
      expect(trusted).toMatchObject({ status: "trusted", thumbprint: serverCert.thumbprint, applicationUri: "urn:tarnholm:cg2:sim-server" });
      await src.whenReady();
      await waitFor(() => got.length >= 3, 10_000, "samples over the secure channel");
      expect(src.stats()).toMatchObject({ connected: true, securityMode: "SignAndEncrypt", securityPolicy: "Basic256Sha256", securityWarning: null });
      expect(got[0]!.value).toBe(servedValue(got[0]!, "VM2-TT-111"));
      expect(listServerCertificates(pki).map((c) => c.status)).toEqual(["trusted"]);
    } finally {
      await src.stop();
      delete process.env.MW_TEST_OPCUA_PASSWORD;
    }
  }, 45_000);

  it("counts values the server dropped from a full queue", async () => {
    // 20 frames/s into a queue of 2 emptied once a second: the server must drop values and
    // flag the next one with the Overflow bit (OPC UA Part 4, MonitoredItem queue: not for queue size 1).
    const { got, logs, deps } = collect();
    const src = new OpcUaSource(sourceCfg({ publishingIntervalMs: 1000 }), [sig("vm2.outlet.temp", "VM2-TT-111", "degC", { queueSize: 2 })], deps);
    try {
      await src.start((s) => got.push(s));
      await src.whenReady();
      await waitFor(() => src.stats().queueOverflows >= 2, 15_000, "overflow flags");
    } finally {
      await src.stop();
    }
    expect(logs.some((l) => /queue overflowed .* values were dropped/.test(l))).toBe(true);
    expect(got.every((s) => s.quality === "good")).toBe(true);
  }, 30_000);

  it("rides out a network drop: disconnected meanwhile, then the same subscription goes on", async () => {
    const relay = await startRelay(srv.port);
    const { got, logs, deps } = collect();
    const src = new OpcUaSource(sourceCfg({ endpointUrl: `opc.tcp://127.0.0.1:${relay.port}` }), [sig("vm2.outlet.temp", "VM2-TT-111", "degC")], deps);
    try {
      await src.start((s) => got.push(s));
      await src.whenReady();
      await waitFor(() => got.length >= 3, 10_000, "samples before the drop");
      const subscriptionsBefore = srv.requestCounts().CreateSubscriptionRequest ?? 0;
      relay.cut();
      await waitFor(() => !src.stats().connected, 10_000, "the source to notice the drop");
      const atDrop = got.length;
      await new Promise((r) => setTimeout(r, 2000));
      expect(src.stats().connected).toBe(false);
      relay.restore();
      await waitFor(() => src.stats().connected, 25_000, "the source to reconnect");
      await waitFor(() => got.length >= atDrop + 3, 10_000, "samples after the drop");
      expect(src.stats().reconnections).toBe(1);
      // The server kept the session and its subscription: nothing was created anew.
      expect(srv.requestCounts().CreateSubscriptionRequest ?? 0).toBe(subscriptionsBefore);
      expect(logs.some((l) => /restored, subscription recovered/.test(l))).toBe(true);
      for (const s of got) expect(s.value).toBe(servedValue(s, "VM2-TT-111"));
    } finally {
      await src.stop();
      await relay.close();
    }
  }, 60_000);

  it("goes disconnected while the server is away, recovers its subscription after a restart, and never writes or calls", async () => {
    const port = srv.port;
    const signals = [sig("vm2.outlet.temp", "VM2-TT-111", "degC"), sig("bf2.outlet.co", "BF2-AT-214", "ppm")];
    const { got, logs, deps } = collect();
    const src = new OpcUaSource(sourceCfg(), signals, deps);
    await src.start((s) => got.push(s));
    await src.whenReady();
    await waitFor(() => got.length >= 6, 10_000, "samples before the restart");
    const before = srv.requestCounts();

    await srv.close();
    await waitFor(() => !src.stats().connected, 10_000, "the source to notice the server is gone");
    const atOutage = got.length;
    await new Promise((r) => setTimeout(r, 1000));
    expect(got.length).toBe(atOutage); // nothing during the outage: signals go stale, not steady
    expect(src.stats().connected).toBe(false);

    srv = await startSimOpcUaServer(simOpts(port));
    await srv.trustClientCertificate(own.certificateFile);
    await waitFor(() => src.stats().connected, 25_000, "the source to reconnect");
    await waitFor(() => signals.every((s) => got.slice(atOutage).filter((g) => g.signal === s.id).length >= 3), 10_000, "samples after the restart");
    expect(src.stats().reconnections).toBe(1);
    expect(logs.some((l) => /lost; reconnecting/.test(l))).toBe(true);
    for (const s of got.slice(atOutage)) expect(s.value).toBe(servedValue(s, s.signal === "vm2.outlet.temp" ? "VM2-TT-111" : "BF2-AT-214"));
    await src.stop();

    // A full run (connect, read units, subscribe, receive, lose the server, recover, stop):
    // the subscription services reached both servers, and no service that changes one did.
    const after = srv.requestCounts();
    for (const counts of [before, after]) {
      expect(counts.CreateSubscriptionRequest ?? 0).toBeGreaterThanOrEqual(1);
      expect(counts.CreateMonitoredItemsRequest ?? 0).toBeGreaterThanOrEqual(1);
      for (const name of CHANGING_SERVICES) expect(counts[name] ?? 0, name).toBe(0);
    }
    expect(before.ReadRequest ?? 0).toBeGreaterThanOrEqual(1); // units and ranges were read
  }, 60_000);

  it("the request count does see a write (and the simulator refuses it): the zero above is real", async () => {
    const client = OPCUAClient.create({
      endpointMustExist: false,
      applicationUri: own.applicationUri,
      clientCertificateManager: new OPCUACertificateManager({ rootFolder: join(dir, "client-pki") }),
      certificateFile: own.certificateFile,
      privateKeyFile: own.privateKeyFile,
      connectionStrategy: { maxRetry: 0 },
    });
    await client.connect(srv.endpointUrl);
    const session = await client.createSession();
    const status = await session.write({ nodeId: simNodeId("VM2-TT-111"), attributeId: AttributeIds.Value, value: { value: { dataType: DataType.Double, value: 1 } } });
    await session.close();
    await client.disconnect();
    expect([StatusCodes.BadNotWritable.name, StatusCodes.BadUserAccessDenied.name]).toContain(status.name);
    expect(srv.requestCounts().WriteRequest).toBe(1);
  }, 30_000);

  it("does not hold up start when the server is down, and says why", async () => {
    const { deps } = collect();
    const src = new OpcUaSource(sourceCfg({ endpointUrl: "opc.tcp://127.0.0.1:9" }), [sig("x", "VM2-TT-111", "degC")], deps);
    const t0 = Date.now();
    await src.start(() => undefined);
    expect(Date.now() - t0).toBeLessThan(500);
    await waitFor(() => src.stats().lastError !== null, 15_000, "a connection error");
    expect(src.stats()).toMatchObject({ connected: false });
    expect(src.stats().lastError).toMatch(/ECONNREFUSED/);
    await src.stop();
  }, 30_000);
});
