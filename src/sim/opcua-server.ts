// The simulated plant (plant.ts) served over OPC UA, for the demo and for tests of the
// OPC UA source against a real peer.
//
//   Objects/
//     CG2 "Tarnholm Works, coal grinding line 2"     ns=1;s=CG2
//       HG2 hot-gas generator                        ns=1;s=HG2
//         HG2-TT-011  AnalogItem (Double, read only) ns=1;s=HG2-TT-011
//           EngineeringUnits (EUInformation, UNECE code), EURange
//       VM2 mill, BF2 bag filter, FS2 fine-coal silo, IG2 inert gas …
//       the status outputs (VM2-UZ-130 trip, BF2-AS-213 analyser function check) are
//       AnalogItems too: 0 or 1, EURange 0–1, no engineering unit
//
// Namespace 1 is ours, "urn:tarnholm:cg2:sim". Every frame of the scenario sets every tag
// with the frame's time as its SourceTimestamp. Pacing as in publish.ts: frame k (counted
// across loops) is due at t0 + k·stepS·1000/speed on the monotonic clock; speed 0 or
// Infinity runs frames back to back. The server listens on 127.0.0.1 only, and keeps its
// certificate and trust lists in the folder it is given (never under the home folder).
// The variables are read only; the server counts the requests it receives per service, so
// tests can prove that a client never wrote or called anything.
import {
  DataType,
  MessageSecurityMode,
  OPCUAServer,
  OPCUACertificateManager,
  SecurityPolicy,
  StatusCodes,
  Variant,
  type StatusCode,
  type UAVariable,
} from "node-opcua";
import { X509Certificate } from "node:crypto";
import { existsSync, mkdirSync, readFileSync } from "node:fs";
import { join, resolve } from "node:path";
import { setTimeout as sleepMs } from "node:timers/promises";
import { createScenario, SIM_TAGS, type Scenario, type SimFrame } from "./plant.js";
import { UNECE_NAMESPACE_URI, uneceUnitId } from "../sources/opcua-units.js";

export const SIM_NAMESPACE_URI = "urn:tarnholm:cg2:sim";
export const SIM_APPLICATION_URI = "urn:tarnholm:cg2:sim-server";

type Mode = "None" | "Sign" | "SignAndEncrypt";
type Policy = "Basic256Sha256" | "Aes128_Sha256_RsaOaep" | "Aes256_Sha256_RsaPss";

export interface SimOpcUaServerOptions {
  /** TCP port on 127.0.0.1; 0 picks a free one. */
  port: number;
  scenario: string;
  /** Simulated seconds per real second; 0 or Infinity: as fast as possible. */
  speed: number;
  /** Simulated time of the first frame, epoch ms. */
  startTimeMs: number;
  stepS?: number;
  seed?: number;
  /** Restart the scenario when it ends, time continuing forward. */
  loop?: boolean;
  /** Aborting stops the frames and shuts the server down. */
  signal?: AbortSignal;
  /** Security modes offered (default all three). */
  securityModes?: Mode[];
  /** Policies offered with Sign and SignAndEncrypt (default the three current ones). */
  securityPolicies?: Policy[];
  /** The server's own PKI: <pkiFolder>/server (certificate, trusted clients), <pkiFolder>/users. */
  pkiFolder: string;
  /** Accept any client certificate (loopback demos); default false: clients are trusted explicitly. */
  acceptUnknownClientCertificates?: boolean;
  /** Offer anonymous login (default true). */
  allowAnonymous?: boolean;
  /** User name logins accepted, name → password. */
  users?: Record<string, string>;
  log?: (line: string) => void;
  onFrame?: (f: SimFrame) => void;
}

export interface SimOpcUaServer {
  endpointUrl: string;
  port: number;
  /** The server's certificate (PEM), for a client to trust. */
  certificateFile: string;
  /** Frames served so far. */
  frames(): number;
  /** Requests received so far, by service (e.g. "ReadRequest", "CreateMonitoredItemsRequest"). */
  requestCounts(): Record<string, number>;
  /** Serve a tag with this StatusCode from the next frame on (fault injection); null restores Good. */
  setTagStatus(tag: string, statusName: string | null): void;
  /** Trust a client's certificate (DER or PEM file) on the running server. */
  trustClientCertificate(file: string): Promise<void>;
  /** Settles when the frames stop (scenario over without loop, abort, or close). */
  readonly done: Promise<{ frames: number }>;
  close(): Promise<void>;
}

export function simNodeId(tag: string): string {
  return `ns=1;s=${tag}`;
}

const UNIT_FOLDERS: Record<string, string> = {
  HG2: "hot-gas generator",
  VM2: "vertical roller mill",
  BF2: "bag filter",
  FS2: "fine-coal silo",
  IG2: "inert gas supply",
};

/** Simulator units (plant.ts) → UNECE Recommendation 20 code and the symbol shown. */
const SIM_UNITS: Record<string, { code: string; symbol: string; description: string }> = {
  "°C": { code: "CEL", symbol: "°C", description: "degree Celsius" },
  mbar: { code: "MBR", symbol: "mbar", description: "millibar" },
  "% vol": { code: "P1", symbol: "% vol", description: "percent by volume" },
  ppm: { code: "59", symbol: "ppm", description: "part per million" },
  kW: { code: "KWT", symbol: "kW", description: "kilowatt" },
  "t/h": { code: "E18", symbol: "t/h", description: "tonne per hour" },
  "Nm³/h": { code: "MQH", symbol: "Nm³/h", description: "normal cubic metre per hour" },
};

/** Instrument ranges of the simulated transmitters (our own choice for the invented plant). */
function euRange(tag: string, unit: string): { low: number; high: number } {
  if (tag.startsWith("HG2-TT")) return { low: 0, high: 800 };
  if (tag === "VM2-TT-101") return { low: 0, high: 450 }; // mill inlet: hot gas
  if (/-AT-\d*5$/.test(tag) && unit === "% vol") return { low: 0, high: 50 }; // H2O analyser
  switch (unit) {
    case "°C": return { low: 0, high: 200 };
    case "mbar": return { low: -50, high: 50 };
    case "% vol": return { low: 0, high: 25 };
    case "ppm": return { low: 0, high: 2000 };
    case "kW": return { low: 0, high: 3000 };
    case "t/h": return { low: 0, high: 50 };
    case "Nm³/h": return { low: 0, high: 20000 };
    case "state": return { low: 0, high: 1 }; // discrete status outputs (trip, analyser function check)
    default: return { low: 0, high: 100 };
  }
}

export async function startSimOpcUaServer(opts: SimOpcUaServerOptions): Promise<SimOpcUaServer> {
  const { speed } = opts;
  if (typeof speed !== "number" || Number.isNaN(speed) || speed < 0) {
    throw new Error(`OPC UA simulator: speed: expected simulated seconds per real second (>= 0; 0 or Infinity for as fast as possible), found ${String(speed)}`);
  }
  if (!Number.isInteger(opts.port) || opts.port < 0 || opts.port > 65535) {
    throw new Error(`OPC UA simulator: port: expected an integer 0..65535 (0 for a free one), found ${String(opts.port)}`);
  }
  if (typeof opts.pkiFolder !== "string" || opts.pkiFolder === "") {
    throw new Error(`OPC UA simulator: pkiFolder: expected a folder for the server's certificate and trust lists, found ${JSON.stringify(opts.pkiFolder)}`);
  }
  const modes = opts.securityModes ?? ["None", "Sign", "SignAndEncrypt"];
  const policies = opts.securityPolicies ?? ["Basic256Sha256", "Aes128_Sha256_RsaOaep", "Aes256_Sha256_RsaPss"];
  if (modes.length === 0) throw new Error("OPC UA simulator: securityModes: expected at least one of None, Sign, SignAndEncrypt, found none");
  const log = opts.log ?? (() => {});
  const scenarioOpts = (startTimeMs: number) => ({
    startTimeMs,
    ...(opts.stepS !== undefined ? { stepS: opts.stepS } : {}),
    ...(opts.seed !== undefined ? { seed: opts.seed } : {}),
  });
  // Built before any socket: a bad scenario name or step fails at once.
  let scenario: Scenario = createScenario(opts.scenario, scenarioOpts(opts.startTimeMs));

  const pki = resolve(opts.pkiFolder);
  mkdirSync(pki, { recursive: true });
  const serverCM = new OPCUACertificateManager({
    rootFolder: join(pki, "server"),
    automaticallyAcceptUnknownCertificate: opts.acceptUnknownClientCertificates ?? false,
  });
  const userCM = new OPCUACertificateManager({ rootFolder: join(pki, "users"), automaticallyAcceptUnknownCertificate: false });
  // Our own certificate (node-opcua's default one would carry its vendor's name).
  const certificateFile = join(pki, "server", "own", "certs", "certificate.pem");
  const privateKeyFile = join(pki, "server", "own", "private", "private_key.pem");
  await serverCM.initialize();
  if (!existsSync(certificateFile)) {
    await serverCM.createSelfSignedCertificate({
      applicationUri: SIM_APPLICATION_URI,
      dns: ["localhost"],
      ip: ["127.0.0.1"],
      subject: "/CN=Tarnholm Works CG2 simulator/O=Tarnholm Works",
      startDate: new Date(),
      validity: 10 * 365,
      outputFile: certificateFile,
    });
  }
  const users = opts.users ?? {};
  const server = new OPCUAServer({
    port: opts.port,
    host: "127.0.0.1",
    hostname: "127.0.0.1",
    serverCertificateManager: serverCM,
    userCertificateManager: userCM,
    certificateFile,
    privateKeyFile,
    skipOwnNamespace: true,
    serverInfo: { applicationUri: SIM_APPLICATION_URI, productUri: "urn:tarnholm:cg2:sim", applicationName: { text: "Tarnholm Works CG2 simulator" } },
    buildInfo: { productName: "Tarnholm Works CG2 simulator", manufacturerName: "millwarden" },
    securityModes: modes.map((m) => MessageSecurityMode[m]),
    securityPolicies: [...(modes.includes("None") ? [SecurityPolicy.None] : []), ...policies.map((p) => SecurityPolicy[p])],
    allowAnonymous: opts.allowAnonymous ?? true,
    userManager: { isValidUser: (u: string, p: string) => Object.hasOwn(users, u) && users[u] === p },
    serverCapabilities: {
      operationLimits: { maxNodesPerRead: 1000, maxNodesPerBrowse: 1000, maxMonitoredItemsPerCall: 1000, maxNodesPerTranslateBrowsePathsToNodeIds: 1000 },
    },
    isAuditing: false,
  });
  await server.initialize();

  const addressSpace = server.engine.addressSpace!;
  const ns = addressSpace.registerNamespace(SIM_NAMESPACE_URI);
  if (ns.index !== 1) throw new Error(`OPC UA simulator: expected our namespace at index 1, found ${ns.index}`);
  const plant = ns.addFolder(addressSpace.rootFolder.objects, { browseName: "CG2", nodeId: "s=CG2", displayName: "Tarnholm Works, coal grinding line 2" });
  const folders = new Map<string, ReturnType<typeof ns.addFolder>>();
  const variables = new Map<string, UAVariable>();
  for (const t of SIM_TAGS) {
    const prefix = t.tag.split("-")[0]!;
    let folder = folders.get(prefix);
    if (!folder) {
      folder = ns.addFolder(plant, { browseName: prefix, nodeId: `s=${prefix}`, description: UNIT_FOLDERS[prefix] ?? prefix });
      folders.set(prefix, folder);
    }
    const u = SIM_UNITS[t.unit];
    const v = ns.addAnalogDataItem({
      browseName: t.tag,
      nodeId: `s=${t.tag}`,
      description: t.description,
      organizedBy: folder,
      dataType: "Double",
      accessLevel: "CurrentRead",
      userAccessLevel: "CurrentRead",
      // Changes are reported as they are set (once per frame), not sampled on a timer.
      minimumSamplingInterval: 0,
      engineeringUnitsRange: euRange(t.tag, t.unit),
      ...(u
        ? { engineeringUnits: { namespaceUri: UNECE_NAMESPACE_URI, unitId: uneceUnitId(u.code), displayName: { text: u.symbol }, description: { text: u.description } } }
        : {}),
    });
    variables.set(t.tag, v);
  }

  const counts: Record<string, number> = {};
  server.on("request", (req) => {
    const name = req.schema.name;
    counts[name] = (counts[name] ?? 0) + 1;
  });
  await server.start();
  const port = server.endpoints[0]!.port;
  const endpointUrl = `opc.tcp://127.0.0.1:${port}`;
  log(`OPC UA simulator: listening on ${endpointUrl} (${modes.join(", ")}), ${SIM_TAGS.length} tags in namespace ${SIM_NAMESPACE_URI}`);

  const statusOverride = new Map<string, StatusCode>();
  const stop = new AbortController();
  const onAbort = () => void close();
  opts.signal?.addEventListener("abort", onAbort, { once: true });
  let frames = 0;
  const fast = speed === 0 || speed === Infinity;
  const stepS = scenario.stepS;

  const serve = (frame: SimFrame) => {
    const when = new Date(frame.tMs);
    for (const { tag, value } of frame.values) {
      const v = variables.get(tag);
      if (!v) continue;
      const status = statusOverride.get(tag) ?? StatusCodes.Good;
      // A bad value carries no number (as field devices report it); uncertain keeps it.
      const variant = status.isBad() ? new Variant({ dataType: DataType.Null }) : new Variant({ dataType: DataType.Double, value });
      v.setValueFromSource(variant, status, when);
    }
  };

  const run = async (): Promise<{ frames: number }> => {
    let loopStartMs = opts.startTimeMs;
    let framesInLoop = 0;
    const t0 = performance.now();
    while (!stop.signal.aborted) {
      let frame = scenario.next();
      if (frame === null) {
        if (!opts.loop) break;
        loopStartMs += framesInLoop * stepS * 1000;
        framesInLoop = 0;
        scenario = createScenario(opts.scenario, scenarioOpts(loopStartMs));
        frame = scenario.next();
        if (frame === null) break;
      }
      const waitMs = fast ? 0 : t0 + (frames * stepS * 1000) / speed - performance.now();
      if (waitMs > 0) await sleepMs(waitMs, undefined, { signal: stop.signal }).catch(() => undefined);
      else await new Promise<void>((ok) => setImmediate(ok));
      if (stop.signal.aborted) break;
      serve(frame);
      frames++;
      framesInLoop++;
      opts.onFrame?.(frame);
    }
    return { frames };
  };
  const done = run();

  let closing: Promise<void> | null = null;
  function close(): Promise<void> {
    closing ??= (async () => {
      stop.abort();
      opts.signal?.removeEventListener("abort", onAbort);
      await done;
      await server.shutdown(0);
      await serverCM.dispose().catch(() => undefined);
      await userCM.dispose().catch(() => undefined);
      log(`OPC UA simulator: stopped after ${frames} frames`);
    })();
    return closing;
  }

  return {
    endpointUrl,
    port,
    certificateFile,
    frames: () => frames,
    requestCounts: () => ({ ...counts }),
    setTagStatus(tag, statusName) {
      if (!variables.has(tag)) throw new Error(`OPC UA simulator: unknown tag "${tag}": expected one of ${[...variables.keys()].join(", ")}`);
      if (statusName === null) {
        statusOverride.delete(tag);
        return;
      }
      const sc = Object.hasOwn(StatusCodes, statusName) ? (StatusCodes as unknown as Record<string, StatusCode>)[statusName] : undefined;
      if (!sc) throw new Error(`OPC UA simulator: unknown StatusCode "${statusName}": expected a name such as BadSensorFailure or UncertainLastUsableValue`);
      statusOverride.set(tag, sc);
    },
    async trustClientCertificate(file) {
      await serverCM.trustCertificate(new X509Certificate(readFileSync(file)).raw);
    },
    done,
    close,
  };
}
