// The MQTT source's settings: what the config accepts and refuses (with file:line and what was
// expected), the subscriptions a source makes, MQTT topic filter matching, the TLS files read at
// start, the security warnings, and a function-check flag carried by the value into the core.
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadConfig, parseConfig } from "../../src/config/load.js";
import type { SignalConfig, SourceConfig } from "../../src/config/schema.js";
import { Engine } from "../../src/core/engine.js";
import { makeDecoder, parseBody } from "../../src/sources/decode.js";
import { explainConnectionError, MqttSource, topicMatches } from "../../src/sources/mqtt.js";
import { lineOf, problemsOf } from "../config/helpers.js";

const EXAMPLE = join(import.meta.dirname, "../../config/example-mqtt-tls-sparkplug.yaml");
const quiet = { now: Date.now, log: () => undefined };

const yaml = (source: string, signals = "  - { id: a.temp, name: Gas temperature, tag: TT-1, source: m, topic: t/1, unit: degC, expectedPeriodS: 1 }\n") => `site:
  name: Testfield
  plant: Line 1
  barometricPressureHPa: 1013
sources:
  - id: m
    kind: mqtt
${source}signals:
${signals}units:
  - { id: u1, name: Filter, kind: bag-filter }
`;

describe("config", () => {
  it("the example config gives every new setting, and a Sparkplug signal its data topic", () => {
    const cfg = loadConfig(EXAMPLE);
    const [site, edge] = cfg.sources as SourceConfig[];
    expect(site).toMatchObject({ protocolVersion: 5, clean: false, sessionExpiryIntervalS: 3600, qos: 1, subscribe: ["tarnholm/cg2/#"], tls: { rejectUnauthorized: true } });
    expect(edge!.payload.format).toBe("sparkplug");
    const byId = new Map(cfg.signals.map((s) => [s.id, s]));
    expect(byId.get("vm2.outlet.o2")!.topic).toBe("spBv1.0/cg2/DDATA/edge-vm2/vm2-a113");
    expect(byId.get("vm2.drive.power")!.topic).toBe("spBv1.0/cg2/NDATA/edge-vm2");
    expect(byId.get("bf2.outlet.o2")!.functionCheckPath).toBe("status.functionCheck");
  });

  it("accepts MQTT 3.1.1 with a persistent session, TLS and a wildcard subscription", () => {
    const cfg = parseConfig(yaml("    url: mqtts://broker:8883\n    clientId: mw-1\n    clean: false\n    qos: 1\n    tls: { ca: ca.pem, cert: c.pem, key: k.pem }\n    subscribe: [\"t/#\", \"plant/+/x\"]\n"), "plant.yaml");
    expect(cfg.sources[0]).toMatchObject({ protocolVersion: 4, clean: false, tls: { ca: "ca.pem", rejectUnauthorized: true } });
  });

  it.each([
    ["clean: false without a clientId", "    url: mqtt://b:1883\n    clean: false\n", "clientId", /needs a fixed clientId/],
    ["a session expiry on MQTT 3.1.1", "    url: mqtt://b:1883\n    clientId: x\n    sessionExpiryIntervalS: 60\n", "sessionExpiryIntervalS", /MQTT 5 setting/],
    ["tls: on an mqtt:// url", "    url: mqtt://b:1883\n    tls: { ca: ca.pem }\n", "url", /needs an mqtts:\/\/ or wss:\/\/ url/],
    ["a certificate without its key", "    url: mqtts://b:8883\n    tls: { cert: c.pem }\n", "tls", /cert and key go together/],
    ["a password without a user name", "    url: mqtt://b:1883\n    passwordEnv: MQTT_PW\n", "username", /needs a username/],
    ["# before the last level", "    url: mqtt://b:1883\n    subscribe: [\"a/#/b\"]\n", "subscribe", /# only as the whole last level/],
    ["+ inside a level", "    url: mqtt://b:1883\n    subscribe: [\"a/b+\"]\n", "subscribe", /\+ only as a whole level/],
    ["an unknown payload format", "    url: mqtt://b:1883\n    payload: protobuf\n", "payload", /expected object|Invalid input/],
  ])("refuses %s, with the line and what was expected", (_n, source, key, message) => {
    const text = yaml(source);
    const p = problemsOf(text);
    expect(p).toHaveLength(1);
    expect(p[0]!.key).toContain(key);
    expect(p[0]!.message).toMatch(message);
    expect(p[0]!.line).toBeGreaterThanOrEqual(lineOf(text, "id: m"));
  });

  it.each([
    ["a wildcard in a signal's topic", "  - { id: a.t, name: T, tag: TT-1, source: m, topic: t/+, unit: degC, expectedPeriodS: 1 }\n", "topic", /exact, without \+ or #/],
    ["a Sparkplug signal with a topic as well", "  - { id: a.t, name: T, tag: TT-1, source: m, topic: t/1, sparkplug: { group: g, node: n, metric: m }, unit: degC, expectedPeriodS: 1 }\n", "topic", /leave out topic/],
    ["a Sparkplug id with a slash", "  - { id: a.t, name: T, tag: TT-1, source: m, sparkplug: { group: g/h, node: n, metric: m }, unit: degC, expectedPeriodS: 1 }\n", "sparkplug.group", /one topic level/],
    ["a JSON path on a Sparkplug signal", "  - { id: a.t, name: T, tag: TT-1, source: m, sparkplug: { group: g, node: n, metric: m }, functionCheckPath: s.fc, unit: degC, expectedPeriodS: 1 }\n", "sparkplug", /takes its value from its metric/],
  ])("refuses %s", (_n, signals, key, message) => {
    const p = problemsOf(yaml("    url: mqtt://b:1883\n", signals));
    expect(p).toHaveLength(1);
    expect(p[0]!.key).toContain(key);
    expect(p[0]!.message).toMatch(message);
  });

  it("payload: sparkplug is short for { format: sparkplug }", () => {
    const cfg = parseConfig(yaml("    url: mqtt://b:1883\n    payload: sparkplug\n", "  - { id: a.t, name: T, tag: TT-1, source: m, sparkplug: { group: cg2, node: edge-1, device: d1, metric: T/PV }, unit: degC, expectedPeriodS: 1 }\n"), "plant.yaml");
    expect((cfg.sources[0] as SourceConfig).payload).toEqual({ format: "sparkplug", valuePath: "value" });
  });
});

// Topic filter rules of MQTT 3.1.1 §4.7.1 and MQTT 5.0 §4.7.1-4.7.2: "sport/#" also matches
// "sport"; "+" is exactly one level (also an empty one); wildcards at the first level do not
// match topics beginning with "$".
describe("topic filters", () => {
  it.each([
    ["sport/tennis/#", "sport/tennis/player1/ranking", true],
    ["sport/#", "sport", true],
    ["#", "sport/tennis", true],
    ["sport/+/player1", "sport/tennis/player1", true],
    ["sport/+", "sport/tennis/player1", false],
    ["sport/+", "sport/", true],
    ["+/+", "/finance", true],
    ["+", "/finance", false],
    ["#", "$SYS/broker/uptime", false],
    ["+/monitor/Clients", "$SYS/monitor/Clients", false],
    ["$SYS/#", "$SYS/broker/uptime", true],
    ["spBv1.0/cg2/+/edge-vm2/#", "spBv1.0/cg2/NBIRTH/edge-vm2", true],
    ["tarnholm/cg2/VM2-TT-111", "tarnholm/cg2/VM2-TT-111", true],
    ["tarnholm/cg2/VM2-TT-111", "tarnholm/cg2/VM2-TT-112", false],
  ])("%s matches %s: %s", (filter, topic, expected) => {
    expect(topicMatches(filter, topic)).toBe(expected);
  });
});

const base: SourceConfig = { id: "m", kind: "mqtt", url: "mqtt://127.0.0.1:18831", protocolVersion: 4, qos: 0, payload: { format: "json", valuePath: "value" }, maxClockSkewS: 30 };
const jsonSig = (id: string, topic: string): SignalConfig => ({ id, name: id, tag: id.toUpperCase(), source: "m", topic, unit: "degC", scale: 1, offset: 0, expectedPeriodS: 1 });
const spSig = (id: string, node: string, device: string | undefined, metric: string): SignalConfig => ({
  ...jsonSig(id, "unused"), topic: undefined, sparkplug: device === undefined ? { group: "cg2", node, metric } : { group: "cg2", node, device, metric },
});

describe("subscriptions", () => {
  it("one per exact topic without subscribe:, one per filter with it, Sparkplug nodes only where no filter covers them", () => {
    const signals = [jsonSig("a", "tarnholm/cg2/A"), jsonSig("b", "tarnholm/cg2/B"), jsonSig("c", "other/C"), spSig("d", "edge-vm2", "dev1", "O2/PV"), spSig("e", "edge-fs2", undefined, "T")];
    expect(new MqttSource(base, signals, quiet).stats().subscriptions).toEqual([
      "tarnholm/cg2/A", "tarnholm/cg2/B", "other/C",
      "spBv1.0/cg2/NBIRTH/edge-vm2", "spBv1.0/cg2/NDEATH/edge-vm2", "spBv1.0/cg2/NDATA/edge-vm2", "spBv1.0/cg2/DBIRTH/edge-vm2/+", "spBv1.0/cg2/DDEATH/edge-vm2/+", "spBv1.0/cg2/DDATA/edge-vm2/+",
      "spBv1.0/cg2/NBIRTH/edge-fs2", "spBv1.0/cg2/NDEATH/edge-fs2", "spBv1.0/cg2/NDATA/edge-fs2", "spBv1.0/cg2/DBIRTH/edge-fs2/+", "spBv1.0/cg2/DDEATH/edge-fs2/+", "spBv1.0/cg2/DDATA/edge-fs2/+",
    ]);
    const withFilters = new MqttSource({ ...base, subscribe: ["tarnholm/cg2/#", "spBv1.0/cg2/+/edge-vm2/#"] }, signals, quiet);
    expect(withFilters.stats().subscriptions).toEqual([
      "tarnholm/cg2/#", "spBv1.0/cg2/+/edge-vm2/#", "other/C",
      "spBv1.0/cg2/NBIRTH/edge-fs2", "spBv1.0/cg2/NDEATH/edge-fs2", "spBv1.0/cg2/NDATA/edge-fs2", "spBv1.0/cg2/DBIRTH/edge-fs2/+", "spBv1.0/cg2/DDEATH/edge-fs2/+", "spBv1.0/cg2/DDATA/edge-fs2/+",
    ]);
  });

  it("a Sparkplug-only source refuses a signal without a sparkplug: mapping, naming it", () => {
    expect(() => new MqttSource({ ...base, payload: { format: "sparkplug", valuePath: "value" } }, [jsonSig("a.t", "t/1")], quiet)).toThrow(/signal "a\.t" has no sparkplug: mapping/);
  });
});

describe("TLS files and security warnings", () => {
  it("a TLS file that cannot be read stops the start with its name, before any connection", async () => {
    const src = new MqttSource({ ...base, url: "mqtts://127.0.0.1:9", tls: { ca: "no/such/ca.pem", rejectUnauthorized: true } }, [jsonSig("a", "t/a")], { ...quiet, baseDir: "/nonexistent-base" });
    await expect(src.start(() => undefined)).rejects.toThrow(/cannot read tls\.ca file \/nonexistent-base\/no\/such\/ca\.pem \(ENOENT\)/);
    expect(src.stats()).toMatchObject({ connected: false, lastError: expect.stringMatching(/tls\.ca/) });
    await src.stop();
  });

  it("warns when any broker certificate is accepted, and when a remote broker is reached without TLS", () => {
    expect(new MqttSource({ ...base, url: "mqtts://broker.tarnholm.example:8883", tls: { rejectUnauthorized: false } }, [], quiet).stats().securityWarning).toMatch(/rejectUnauthorized is false.*bench only/);
    expect(new MqttSource({ ...base, url: "mqtt://broker.tarnholm.example:1883", username: "ro" }, [], quiet).stats().securityWarning).toMatch(/no TLS .*values and the login travel in clear text/);
    expect(new MqttSource(base, [], quiet).stats().securityWarning).toBeNull(); // loopback
  });

  it("explains connection errors in terms of the settings", () => {
    const tlsCfg = { ...base, url: "mqtts://b:8883", tls: { ca: "/etc/mw/ca.pem", rejectUnauthorized: true } };
    const err = (message: string, code: string | number) => Object.assign(new Error(message), { code });
    expect(explainConnectionError(err("unable to get local issuer certificate", "UNABLE_TO_GET_ISSUER_CERT_LOCALLY"), tlsCfg)).toMatch(/not signed by a trusted CA, per tls\.ca \/etc\/mw\/ca\.pem/);
    expect(explainConnectionError(err("alert certificate required", "ERR_SSL_TLSV13_ALERT_CERTIFICATE_REQUIRED"), tlsCfg)).toMatch(/asks for a client certificate: set tls\.cert and tls\.key/);
    expect(explainConnectionError(err("Connection refused: Bad username or password", 4), { ...base, passwordEnv: "MW_PW" })).toMatch(/bad user name or password .*MW_PW/);
    expect(explainConnectionError(err("connect ECONNREFUSED 127.0.0.1:9", "ECONNREFUSED"), base)).toBe("connect ECONNREFUSED 127.0.0.1:9");
  });
});

describe("a function-check flag in the value's own message reaches the core", () => {
  it("the analyser shows function check (NAMUR NE 107 category C) and the value is not trusted", () => {
    const cfg = loadConfig(EXAMPLE);
    const engine = new Engine(cfg);
    const src = cfg.sources[0] as SourceConfig;
    // Both signals of the extractive analyser BF2-A213 (O2 and CO) carry the flag.
    const decoders = ["bf2.outlet.o2", "bf2.outlet.co"].map((id) => makeDecoder(cfg.signals.find((s) => s.id === id)!, src));
    const t0 = Date.UTC(2026, 10, 3, 6, 0, 0);
    const send = (atMs: number, fc: boolean) => {
      for (const [i, d] of decoders.entries()) {
        const body = Buffer.from(JSON.stringify({ value: i === 0 ? 8.4 : 40 + (atMs - t0) / 1000, time: new Date(atMs).toISOString(), status: { functionCheck: fc } }));
        const { parsed, error } = parseBody(body, "json");
        const r = d.decode(body, parsed, error, atMs);
        expect(r.sample.functionCheck === true).toBe(fc);
        expect(engine.ingest(r.sample)).toBe("accepted");
      }
    };
    send(t0, false);
    engine.tick(t0 + 500);
    const state = () => engine.snapshot().analysers.find((a) => a.id === "bf2-a213")!.state;
    const inerting = () => engine.snapshot().units.find((u) => u.id === "bf2")!.inerting!.state;
    expect(state()).toBe("ok");
    expect(inerting()).not.toBe("unknown");
    send(t0 + 1000, true);
    engine.tick(t0 + 1500);
    expect(state()).toBe("function-check");
    expect(inerting()).toBe("unknown");
  });
});
