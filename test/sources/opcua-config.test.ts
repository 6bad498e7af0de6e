// The opcua source kind in the config: defaults that are safe (SignAndEncrypt with
// Basic256Sha256, unknown server certificates refused), and clear errors for what does not fit.
import { describe, expect, it } from "vitest";
import { ConfigError, parseConfig, type ConfigProblem } from "../../src/config/load.js";

const config = (source: string, signal = "nodeId: ns=1;s=VM2-TT-111") => `site:
  name: Tarnholm Works
  plant: Coal grinding line 2
  barometricPressureHPa: 1013
sources:
  - id: plc
    kind: opcua
${source}
signals:
  - { id: vm2.outlet.temp, name: Mill outlet gas temperature, tag: VM2-TT-111, source: plc, ${signal}, unit: degC, expectedPeriodS: 1 }
units:
  - { id: vm2, name: Mill, kind: mill }
`;

function problemsOf(text: string): ConfigProblem[] {
  try {
    parseConfig(text, "plant.yaml");
  } catch (e) {
    expect(e).toBeInstanceOf(ConfigError);
    return (e as ConfigError).problems;
  }
  throw new Error("expected a ConfigError");
}

describe("opcua sources in the config", () => {
  it("defaults to a signed and encrypted session that trusts no unknown server", () => {
    const cfg = parseConfig(config("    endpointUrl: opc.tcp://10.20.0.5:4840"), "plant.yaml");
    expect(cfg.sources[0]).toEqual({
      id: "plc", kind: "opcua", endpointUrl: "opc.tcp://10.20.0.5:4840",
      securityMode: "SignAndEncrypt", securityPolicy: "Basic256Sha256", pkiFolder: "data/pki",
      trustUnknownServerCertificates: false, publishingIntervalMs: 1000, samplingIntervalMs: 1000, maxClockSkewS: 30,
    });
    expect(cfg.signals[0]!.nodeId).toBe("ns=1;s=VM2-TT-111");
  });

  it("takes user name login, per-signal sampling and queue size", () => {
    const cfg = parseConfig(
      config(
        "    endpointUrl: opc.tcp://scada-gw.cg2.local:4840/UA/Server\n    securityMode: Sign\n    securityPolicy: Aes256_Sha256_RsaPss\n    username: millwarden\n    passwordEnv: MW_OPCUA_PASSWORD",
        "nodeId: nsu=urn:tarnholm:cg2:sim;s=VM2-TT-111, samplingIntervalMs: 250, queueSize: 8",
      ),
      "plant.yaml",
    );
    expect(cfg.sources[0]).toMatchObject({ securityMode: "Sign", securityPolicy: "Aes256_Sha256_RsaPss", username: "millwarden", passwordEnv: "MW_OPCUA_PASSWORD" });
    expect(cfg.signals[0]).toMatchObject({ samplingIntervalMs: 250, queueSize: 8 });
  });

  it("refuses a security mode without its policy, a login without its password variable, and a wrong URL", () => {
    const p1 = problemsOf(config("    endpointUrl: opc.tcp://10.20.0.5:4840\n    securityMode: None"));
    expect(p1[0]).toMatchObject({ key: "sources[0].securityPolicy" });
    expect(p1[0]!.message).toMatch(/securityMode None goes with securityPolicy None/);
    const p2 = problemsOf(config("    endpointUrl: opc.tcp://10.20.0.5:4840\n    username: millwarden"));
    expect(p2[0]).toMatchObject({ key: "sources[0].passwordEnv" });
    expect(p2[0]!.message).toMatch(/username and passwordEnv go together/);
    const p3 = problemsOf(config("    endpointUrl: http://10.20.0.5:4840"));
    expect(p3[0]).toMatchObject({ key: "sources[0].endpointUrl", line: 8 });
    expect(p3[0]!.message).toMatch(/expected an opc\.tcp:\/\/host:port URL; found string "http:\/\/10\.20\.0\.5:4840"/);
  });

  it("an opcua signal needs a node id, in OPC UA syntax", () => {
    const missing = problemsOf(config("    endpointUrl: opc.tcp://10.20.0.5:4840", "topic: x/y"));
    expect(missing[0]).toMatchObject({ key: "signals[0]", line: 10 });
    expect(missing[0]!.message).toBe('signal "vm2.outlet.temp" from an OPC UA source needs a nodeId (e.g. ns=1;s=VM2-TT-111)');
    const bad = problemsOf(config("    endpointUrl: opc.tcp://10.20.0.5:4840", "nodeId: VM2-TT-111"));
    expect(bad[0]).toMatchObject({ key: "signals[0].nodeId" });
    expect(bad[0]!.message).toMatch(/expected an OPC UA node id such as ns=1;s=VM2-TT-111.*found string "VM2-TT-111"/);
  });

  it("an unknown source kind is refused", () => {
    const p = problemsOf(config("    endpointUrl: opc.tcp://10.20.0.5:4840").replace("kind: opcua", "kind: modbus"));
    expect(p[0]).toMatchObject({ key: "sources[0].kind", line: 7 });
    expect(p[0]!.message).toMatch(/Expected 'mqtt' \| 'opcua'; found string "modbus"/);
  });
});
