// The read-only OPC UA server of a daemon on the data clock: derived values and advisory states
// can be read; a Write is refused
// (OPC UA Part 4 §5.10.4: BadNotWritable for a variable without CurrentWrite) and changes nothing.
import { AttributeIds, DataType, OPCUACertificateManager, OPCUAClient, StatusCodes, type ClientSession } from "node-opcua";
import { join } from "node:path";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { ensureOwnCertificate } from "../../src/sources/opcua-pki.js";
import { configOf, readScenarioSpec, runCore, simulatedSamples } from "../scenarios/harness.js";
import { demoConfigFor, tempDir } from "../integration/helpers.js";

let broker: EmbeddedBroker;
let dir: ReturnType<typeof tempDir>;
let daemon: Daemon;
let client: OPCUAClient;
let session: ClientSession;
let raiseAtMs: number;

beforeAll(async () => {
  broker = await startEmbeddedBroker(0, "127.0.0.1");
  dir = tempDir("mw-ua-srv-");
  const spec = readScenarioSpec("purge-after-trip");
  const scen = configOf("purge-after-trip", spec);
  const samples = simulatedSamples(spec, scen);
  raiseAtMs = runCore(scen, samples).transitions.find((t) => t.advisoryId === "o2-margin-vm2" && t.transition === "raise")!.atMs;
  const c = demoConfigFor(broker.url, `mw-ua-srv-${process.pid}`, dir.path);
  daemon = await Daemon.start({
    config: { ...c, rules: scen.rules, opcuaServer: { host: "127.0.0.1", port: 0, securityModes: ["None"], pkiFolder: join(dir.path, "server-pki"), allowAnonymous: true } },
    log: memoryLogger(),
    serve: false,
  });
  for (const s of samples) if (s.sourceTimeMs <= raiseAtMs + 1000) daemon.ingest({ ...s });
  const own = await ensureOwnCertificate(join(dir.path, "client-pki"));
  client = OPCUAClient.create({
    endpointMustExist: false,
    applicationUri: own.applicationUri,
    clientCertificateManager: new OPCUACertificateManager({ rootFolder: join(dir.path, "client-pki") }),
    certificateFile: own.certificateFile,
    privateKeyFile: own.privateKeyFile,
    connectionStrategy: { maxRetry: 0 },
  });
  await client.connect(daemon.opcuaServer!.endpointUrl);
  session = await client.createSession();
}, 90_000);

afterAll(async () => {
  await session?.close().catch(() => undefined);
  await client?.disconnect();
  await daemon?.stop();
  await broker?.close();
  dir?.remove();
}, 30_000);

const nodeId = (s: string) => `ns=1;s=${s}`;

describe("read-only OPC UA server", () => {
  it("serves the advisory state and the derived values the core computed", async () => {
    const adv = await session.read({ nodeId: nodeId("advisory/o2-margin-vm2/state"), attributeId: AttributeIds.Value });
    expect(adv.statusCode.name).toBe("Good");
    expect(adv.value.value).toBe(daemon.engine.currentAdvisories().find((a) => a.id === "o2-margin-vm2")!.state);
    const key = "o2.vm2.marginPctPt";
    const v = await session.read({ nodeId: nodeId(`derived/${key}`), attributeId: AttributeIds.Value });
    daemon.historian.flush();
    const last = daemon.historian.derived(key, raiseAtMs - 5000, raiseAtMs + 5000).at(-1)!;
    // The margin the advisory was raised on is known at the raise.
    expect(last.value).not.toBeNull();
    expect(v.statusCode.name).toBe("Good");
    expect(v.value.value).toBeCloseTo(last.value!, 9);
    const phase = await session.read({ nodeId: nodeId("state/inerting.vm2"), attributeId: AttributeIds.Value });
    expect(typeof phase.value.value).toBe("string");
  });

  it("refuses a write, and the value stays", async () => {
    const id = nodeId("advisory/o2-margin-vm2/state");
    const before = (await session.read({ nodeId: id, attributeId: AttributeIds.Value })).value.value as string;
    const status = await session.write({ nodeId: id, attributeId: AttributeIds.Value, value: { value: { dataType: DataType.String, value: "normal" } } });
    expect(status).toBe(StatusCodes.BadNotWritable);
    const d = await session.write({ nodeId: nodeId("derived/o2.vm2.marginPctPt"), attributeId: AttributeIds.Value, value: { value: { dataType: DataType.Double, value: 99 } } });
    expect(d).toBe(StatusCodes.BadNotWritable);
    expect(daemon.opcuaServer!.requestCounts().WriteRequest).toBe(2);
    expect((await session.read({ nodeId: id, attributeId: AttributeIds.Value })).value.value).toBe(before);
    expect(before).not.toBe("normal");
  });
});
