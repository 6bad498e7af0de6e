// The simulated plant over OPC UA, read with a bare node-opcua client: our namespace at
// index 1, a folder per unit, every tag an AnalogItem with its EngineeringUnits and
// EURange, values and source timestamps equal to the scenario's own frames (computed
// here independently with createScenario), read-only variables, loopback only.
import { AttributeIds, BrowseDirection, DataType, OPCUACertificateManager, OPCUAClient, makeBrowsePath, standardUnits, type ClientSession } from "node-opcua";
import { mkdtempSync, rmSync } from "node:fs";
import net from "node:net";
import { networkInterfaces, tmpdir } from "node:os";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { SIM_NAMESPACE_URI, simNodeId, startSimOpcUaServer, type SimOpcUaServer } from "../../src/sim/opcua-server.js";
import { SIM_TAGS } from "../../src/sim/plant.js";
import { ensureOwnCertificate } from "../../src/sources/opcua-pki.js";
import { runScenario, valueOf } from "./frames.js";

const START_MS = Date.UTC(2026, 0, 12, 6, 0, 0);
let dir: string;
let srv: SimOpcUaServer;
let client: OPCUAClient;
let session: ClientSession;

beforeAll(async () => {
  dir = mkdtempSync(join(tmpdir(), "mw-simua-"));
  const own = await ensureOwnCertificate(join(dir, "client-pki"));
  // speed 0: all frames back to back, so the end state is known: the scenario's last frame.
  srv = await startSimOpcUaServer({ port: 0, scenario: "filter-smoulder", speed: 0, startTimeMs: START_MS, seed: 3, pkiFolder: join(dir, "server-pki"), securityModes: ["None"] });
  await srv.done;
  client = OPCUAClient.create({
    endpointMustExist: false,
    applicationUri: own.applicationUri,
    clientCertificateManager: new OPCUACertificateManager({ rootFolder: join(dir, "client-pki") }),
    certificateFile: own.certificateFile,
    privateKeyFile: own.privateKeyFile,
    connectionStrategy: { maxRetry: 0 },
  });
  await client.connect(srv.endpointUrl);
  session = await client.createSession();
}, 90_000);
afterAll(async () => {
  await session?.close().catch(() => undefined);
  await client?.disconnect();
  await srv?.close();
  rmSync(dir, { recursive: true, force: true });
}, 30_000);

describe("startSimOpcUaServer", () => {
  it("listens on 127.0.0.1 at the port it was given (0: a free one)", async () => {
    expect(srv.port).toBeGreaterThan(0);
    expect(srv.endpointUrl).toBe(`opc.tcp://127.0.0.1:${srv.port}`);
    // Not reachable on another interface of this machine, where it has one.
    const other = Object.values(networkInterfaces()).flat().find((i) => i && i.family === "IPv4" && !i.internal);
    if (other) {
      const reached = await new Promise<boolean>((ok) => {
        const s = net.connect({ host: other.address, port: srv.port });
        s.once("connect", () => (s.destroy(), ok(true)));
        s.once("error", () => ok(false));
      });
      expect(reached).toBe(false);
    }
  });

  it("serves every tag once per frame: the last frame's values, with its time as source timestamp", async () => {
    const frames = runScenario("filter-smoulder", { startTimeMs: START_MS, seed: 3 });
    expect(srv.frames()).toBe(frames.length);
    const last = frames.at(-1)!;
    const values = await session.read(SIM_TAGS.map((t) => ({ nodeId: simNodeId(t.tag), attributeId: AttributeIds.Value })));
    SIM_TAGS.forEach((t, i) => {
      const v = values[i]!;
      expect(v.statusCode.name, t.tag).toBe("Good");
      expect(v.value.dataType).toBe(DataType.Double);
      expect(v.value.value, t.tag).toBe(valueOf(last, t.tag));
      expect(v.sourceTimestamp?.getTime(), t.tag).toBe(last.tMs);
    });
  });

  it("our namespace at index 1, a folder per unit, AnalogItems with units and ranges", async () => {
    const ns = await session.read({ nodeId: "ns=0;i=2255", attributeId: AttributeIds.Value }); // Server_NamespaceArray
    expect((ns.value.value as string[])[1]).toBe(SIM_NAMESPACE_URI);
    const browsed = await session.browse({ nodeId: "ns=1;s=CG2", referenceTypeId: "Organizes", includeSubtypes: true, browseDirection: BrowseDirection.Forward, resultMask: 63 });
    expect(browsed.references!.map((r) => r.browseName.name).sort()).toEqual(["BF2", "FS2", "HG2", "IG2", "VM2"]);
    const vm2 = await session.browse({ nodeId: "ns=1;s=VM2", referenceTypeId: "Organizes", includeSubtypes: true, browseDirection: BrowseDirection.Forward, resultMask: 63 });
    expect(vm2.references!.map((r) => r.nodeId.toString())).toContain("ns=1;s=VM2-TT-111");

    const paths = await session.translateBrowsePath([makeBrowsePath("ns=1;s=VM2-TT-111", ".EngineeringUnits"), makeBrowsePath("ns=1;s=VM2-TT-111", ".EURange"), makeBrowsePath("ns=1;s=BF2-AT-214", ".EngineeringUnits")]);
    const [eu, range, coEu] = await session.read(paths.map((p) => ({ nodeId: p.targets![0]!.targetId, attributeId: AttributeIds.Value })));
    // UNECE codes as node-opcua's standardUnits table has them: CEL for °C, 59 for ppm.
    expect(eu!.value.value.unitId).toBe(standardUnits.degree_celsius.unitId);
    expect(eu!.value.value.displayName.text).toBe("°C");
    expect({ low: range!.value.value.low, high: range!.value.value.high }).toEqual({ low: 0, high: 200 });
    expect(coEu!.value.value.unitId).toBe(standardUnits.part_per_million.unitId);
  });

  it("variables are read only: a write is refused and counted", async () => {
    const status = await session.write({ nodeId: simNodeId("VM2-TT-111"), attributeId: AttributeIds.Value, value: { value: { dataType: DataType.Double, value: 0 } } });
    expect(["BadNotWritable", "BadUserAccessDenied"]).toContain(status.name);
    expect(srv.requestCounts().WriteRequest).toBe(1);
    const after = await session.read({ nodeId: simNodeId("VM2-TT-111"), attributeId: AttributeIds.Value });
    expect(after.value.value).not.toBe(0);
  });

  it("fault injection refuses unknown tags and StatusCode names", () => {
    expect(() => srv.setTagStatus("VM2-TT-111", "NoSuchCode")).toThrow(/unknown StatusCode "NoSuchCode": expected a name such as BadSensorFailure/);
    expect(() => srv.setTagStatus("XX-1", "BadSensorFailure")).toThrow(/unknown tag "XX-1": expected one of HG2-TT-011/);
    srv.setTagStatus("VM2-TT-111", "BadSensorFailure");
    srv.setTagStatus("VM2-TT-111", null);
  });

  it("bad options fail before any socket opens, saying what was expected", async () => {
    const base = { port: 0, scenario: "filter-smoulder", speed: 1, startTimeMs: START_MS, pkiFolder: join(dir, "x") };
    await expect(startSimOpcUaServer({ ...base, scenario: "nope" })).rejects.toThrow(/unknown simulator scenario "nope"/);
    await expect(startSimOpcUaServer({ ...base, speed: -1 })).rejects.toThrow(/speed: expected simulated seconds per real second/);
    await expect(startSimOpcUaServer({ ...base, port: 70000 })).rejects.toThrow(/port: expected an integer 0\.\.65535/);
    await expect(startSimOpcUaServer({ ...base, pkiFolder: "" })).rejects.toThrow(/pkiFolder: expected a folder/);
  });
});
