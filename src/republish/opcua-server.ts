// Derived values, discrete states and advisory states served over OPC UA, read only.
//
//   Objects/
//     Millwarden                                  ns=1;s=millwarden
//       Derived/<key>     Double  (CurrentRead)   ns=1;s=derived/<key>     e.g. derived/dewpoint.bf2-outlet.marginK
//       States/<key>      String  (CurrentRead)   ns=1;s=state/<key>       phase.<unit>, inerting.<unit>, analyser.<id>
//       Advisories/<rule> State, Tier (String)    ns=1;s=advisory/<rule>/state, .../tier
//
// Every variable is CurrentRead only and there are no methods: a Write is answered
// BadNotWritable and nothing reaches the core. A value that cannot be computed is served with
// StatusCode Bad (an unknown indicator is never shown as good); +Infinity (not approaching) as is.
// The server keeps its certificate and trust lists in pkiFolder, never under the home folder.
import { DataType, MessageSecurityMode, OPCUACertificateManager, OPCUAServer, SecurityPolicy, StatusCodes, Variant, type UAVariable } from "node-opcua";
import { existsSync, mkdirSync } from "node:fs";
import { join, resolve } from "node:path";
import type { OpcUaServerConfig } from "../config/sections/republish.js";
import type { AdvisoryView, CoreEvent } from "../core/types.js";

export const MILLWARDEN_NAMESPACE_URI = "urn:millwarden:advisory";

export interface AdvisoryOpcUaServer {
  endpointUrl: string;
  /** Requests received, by service (a test proves no write got through). */
  requestCounts(): Record<string, number>;
  record(events: readonly CoreEvent[], advisory: (id: string) => AdvisoryView | undefined): void;
  close(): Promise<void>;
}

export interface AdvisoryOpcUaServerOptions {
  config: OpcUaServerConfig;
  baseDir?: string | undefined;
  derivedKeys: readonly string[];
  stateKeys: readonly string[];
  ruleIds: readonly string[];
  site: string;
  log?: (msg: string) => void;
}

export async function startAdvisoryOpcUaServer(o: AdvisoryOpcUaServerOptions): Promise<AdvisoryOpcUaServer> {
  const c = o.config;
  const pki = resolve(o.baseDir ?? process.cwd(), c.pkiFolder);
  mkdirSync(pki, { recursive: true });
  const serverCM = new OPCUACertificateManager({ rootFolder: join(pki, "server"), automaticallyAcceptUnknownCertificate: false });
  const userCM = new OPCUACertificateManager({ rootFolder: join(pki, "users"), automaticallyAcceptUnknownCertificate: false });
  const certificateFile = join(pki, "server", "own", "certs", "certificate.pem");
  const privateKeyFile = join(pki, "server", "own", "private", "private_key.pem");
  const applicationUri = "urn:millwarden:advisory-server";
  await serverCM.initialize();
  if (!existsSync(certificateFile)) {
    await serverCM.createSelfSignedCertificate({ applicationUri, dns: ["localhost"], ip: ["127.0.0.1"], subject: "/CN=millwarden advisory server", startDate: new Date(), validity: 5 * 365, outputFile: certificateFile });
  }
  const server = new OPCUAServer({
    port: c.port,
    host: c.host,
    hostname: c.host,
    serverCertificateManager: serverCM,
    userCertificateManager: userCM,
    certificateFile,
    privateKeyFile,
    skipOwnNamespace: true,
    serverInfo: { applicationUri, productUri: "urn:millwarden", applicationName: { text: `millwarden advisory values, ${o.site} (read only)` } },
    buildInfo: { productName: "millwarden", manufacturerName: "millwarden" },
    securityModes: c.securityModes.map((m) => MessageSecurityMode[m]),
    securityPolicies: [...(c.securityModes.includes("None") ? [SecurityPolicy.None] : []), ...(c.securityModes.some((m) => m !== "None") ? [SecurityPolicy.Basic256Sha256, SecurityPolicy.Aes128_Sha256_RsaOaep, SecurityPolicy.Aes256_Sha256_RsaPss] : [])],
    allowAnonymous: c.allowAnonymous,
    isAuditing: false,
  });
  await server.initialize();
  const addressSpace = server.engine.addressSpace!;
  const ns = addressSpace.registerNamespace(MILLWARDEN_NAMESPACE_URI);
  const root = ns.addFolder(addressSpace.rootFolder.objects, { browseName: "Millwarden", nodeId: "s=millwarden", description: "ADVISORY ONLY: not a safety system; the plant's certified protection system governs" });
  const folder = (name: string) => ns.addFolder(root, { browseName: name, nodeId: `s=${name.toLowerCase()}` });
  const variables = new Map<string, UAVariable>();
  const add = (parent: ReturnType<typeof folder>, browseName: string, nodeId: string, dataType: "Double" | "String") => {
    const v = ns.addVariable({
      componentOf: parent,
      browseName,
      nodeId: `s=${nodeId}`,
      dataType,
      accessLevel: "CurrentRead",
      userAccessLevel: "CurrentRead",
      minimumSamplingInterval: 0,
    });
    v.setValueFromSource(new Variant({ dataType: DataType.Null }), StatusCodes.BadWaitingForInitialData);
    variables.set(nodeId, v);
  };
  const derived = folder("Derived");
  for (const k of o.derivedKeys) add(derived, k, `derived/${k}`, "Double");
  const states = folder("States");
  for (const k of o.stateKeys) add(states, k, `state/${k}`, "String");
  const advisories = folder("Advisories");
  for (const r of o.ruleIds) {
    const f = ns.addFolder(advisories, { browseName: r, nodeId: `s=advisory/${r}` });
    add(f, "State", `advisory/${r}/state`, "String");
    add(f, "Tier", `advisory/${r}/tier`, "String");
  }
  const counts: Record<string, number> = {};
  server.on("request", (req) => {
    const name = req.schema.name;
    counts[name] = (counts[name] ?? 0) + 1;
  });
  await server.start();
  const endpointUrl = `opc.tcp://${c.host}:${server.endpoints[0]!.port}`;
  o.log?.(`OPC UA server (read only) at ${endpointUrl}: ${variables.size} variables`);

  const set = (id: string, dataType: DataType, value: number | string | null, atMs: number) => {
    const v = variables.get(id);
    if (!v) return;
    const when = new Date(atMs);
    if (value === null) v.setValueFromSource(new Variant({ dataType: DataType.Null }), StatusCodes.Bad, when);
    else v.setValueFromSource(new Variant({ dataType, value }), StatusCodes.Good, when);
  };
  return {
    endpointUrl,
    requestCounts: () => ({ ...counts }),
    record(events, advisory) {
      for (const e of events) {
        if (e.kind === "derived") set(`derived/${e.key}`, DataType.Double, e.value, e.atMs);
        else if (e.kind === "state") set(`state/${e.key}`, DataType.String, e.value, e.atMs);
        else if (e.kind === "advisory") {
          const v = advisory(e.advisoryId);
          set(`advisory/${e.ruleId}/state`, DataType.String, v?.state ?? e.to, e.atMs);
          set(`advisory/${e.ruleId}/tier`, DataType.String, v?.tier ?? e.tier, e.atMs);
        }
      }
    },
    async close() {
      await server.shutdown(0);
      await serverCM.dispose().catch(() => undefined);
      await userCM.dispose().catch(() => undefined);
    },
  };
}
