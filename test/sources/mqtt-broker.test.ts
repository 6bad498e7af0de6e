// The MQTT source against real Mosquitto brokers of our own on loopback (test/sources/mosquitto.ts):
// TLS with the plant's CA and with a client certificate, a wrong CA, a user name login, MQTT
// 3.1.1 and 5, a wildcard subscription, a broker restart with a persistent session (QoS 1
// messages published while the source was away arrive after the reconnection, and the core
// shows the signals unknown meanwhile), and Sparkplug B births, data, a sequence gap and a death.
import mqtt from "mqtt";
import sparkplugPayload from "sparkplug-payload";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { loadConfig, parseConfig } from "../../src/config/load.js";
import type { SignalConfig, SourceConfig } from "../../src/config/schema.js";
import { Engine } from "../../src/core/engine.js";
import type { Sample } from "../../src/core/types.js";
import { MqttSource } from "../../src/sources/mqtt.js";
import { tempDir, waitFor } from "../integration/helpers.js";
import { CutProxy, freePort, makePasswordFile, makePki, makeReadOnlyAcl, MISSING, OwnMosquitto, type Pki } from "./mosquitto.js";

const why = MISSING.length ? ` (skipped: ${MISSING.join(", ")} not on PATH; CI has them)` : "";
const spb = sparkplugPayload.get("spBv1.0")!;

const signal = (id: string, topic: string, unit: SignalConfig["unit"] = "degC"): SignalConfig => ({
  id, name: id, tag: id.toUpperCase(), source: "m", topic, unit, scale: 1, offset: 0, expectedPeriodS: 1,
});
const sourceFor = (url: string, extra: Partial<SourceConfig> = {}): SourceConfig => ({
  id: "m", kind: "mqtt", url, protocolVersion: 4, qos: 1, payload: { format: "json", valuePath: "value", timePath: "time" }, maxClockSkewS: 30, ...extra,
});

function collect(cfg: SourceConfig, signals: SignalConfig[]) {
  const got: Sample[] = [];
  const logs: string[] = [];
  const src = new MqttSource(cfg, signals, { now: Date.now, log: (l, m) => logs.push(`${l}: ${m}`) });
  return { src, got, logs, start: () => src.start((s) => got.push(s)) };
}

const value = (v: number, atMs = Date.now()) => JSON.stringify({ value: v, time: new Date(atMs).toISOString() });

describe.skipIf(MISSING.length > 0)(`MQTT source against our own Mosquitto${why}`, () => {
  let dir: { path: string; remove: () => void };
  let pki: Pki;
  let broker: OwnMosquitto;
  let plainUrl: string;
  const PASSWORD = "Tarnholm-test-only-7f3a";
  const PW_ENV = `MW_TEST_MQTT_PASSWORD_${process.pid}`;

  beforeAll(async () => {
    dir = tempDir("mw-mosquitto-");
    pki = makePki(dir.path);
    const passwordFile = makePasswordFile(dir.path, "millwarden-ro", PASSWORD);
    const [plain, tls, mtls, password] = [await freePort(), await freePort(), await freePort(), await freePort()];
    broker = new OwnMosquitto(dir.path, [
      { kind: "plain", port: plain },
      { kind: "tls", port: tls, pki },
      { kind: "tls", port: mtls, pki, requireClientCert: true },
      { kind: "password", port: password, passwordFile, aclFile: makeReadOnlyAcl(dir.path, "millwarden-ro", ["auth/#"]) },
    ]);
    await broker.start();
    plainUrl = `mqtt://127.0.0.1:${plain}`;
    process.env[PW_ENV] = PASSWORD;
  }, 60_000);

  afterAll(async () => {
    delete process.env[PW_ENV];
    await broker?.stop();
    dir?.remove();
  });

  async function publish(topic: string, payloads: string[], qos: 0 | 1 = 1) {
    const pub = await mqtt.connectAsync(plainUrl, { protocolVersion: 4 });
    for (const p of payloads) await pub.publishAsync(topic, p, { qos });
    await pub.endAsync();
  }

  it.each([4, 5] as const)("TLS with the plant's CA: connects over MQTT %s and reads values", async (protocolVersion) => {
    const topic = `tls/v${protocolVersion}/TT-1`;
    const c = collect(sourceFor(`mqtts://127.0.0.1:${broker.port("tls")}`, { protocolVersion, tls: { ca: pki.ca, rejectUnauthorized: true } }), [signal("tt", topic)]);
    await c.start();
    await c.src.whenReady();
    await publish(topic, [value(61.5)]);
    await waitFor(() => c.got.length >= 1, 5000, "a value over TLS");
    expect(c.got[0]).toMatchObject({ signal: "tt", value: 61.5, quality: "good" });
    expect(c.src.stats()).toMatchObject({ connected: true, tls: true, protocolVersion, lastError: null, securityWarning: null });
    expect(c.logs.join("\n")).toMatch(new RegExp(`connected to mqtts://127\\.0\\.0\\.1:\\d+ \\(MQTT ${protocolVersion === 5 ? "5" : "3\\.1\\.1"}, TLS\\)`));
    await c.src.stop();
  });

  it("refused with a wrong CA: the error in stats.lastError says which setting to look at", async () => {
    const c = collect(sourceFor(`mqtts://127.0.0.1:${broker.port("tls")}`, { tls: { ca: pki.otherCa, rejectUnauthorized: true } }), [signal("tt", "tls/x")]);
    await c.start();
    await waitFor(() => c.src.stats().lastError !== null, 5000, "a TLS error");
    expect(c.src.stats().connected).toBe(false);
    expect(c.src.stats().lastError).toMatch(/^TLS: the broker's certificate is not signed by a trusted CA, per tls\.ca .*other-ca\.crt/);
    await c.src.stop();
  });

  it("rejectUnauthorized: false connects despite the wrong CA, and says so in the log and the stats", async () => {
    const c = collect(sourceFor(`mqtts://127.0.0.1:${broker.port("tls")}`, { tls: { ca: pki.otherCa, rejectUnauthorized: false } }), [signal("tt", "tls/y")]);
    await c.start();
    await c.src.whenReady();
    expect(c.src.stats().connected).toBe(true);
    expect(c.src.stats().securityWarning).toMatch(/rejectUnauthorized is false/);
    expect(c.logs.filter((l) => l.startsWith("warn:") && l.includes("rejectUnauthorized is false"))).toHaveLength(1);
    await c.src.stop();
  });

  it("a listener that requires a client certificate: refused without one, with a clear error; connects with it", async () => {
    const url = `mqtts://127.0.0.1:${broker.port("tls", true)}`;
    const without = collect(sourceFor(url, { tls: { ca: pki.ca, rejectUnauthorized: true } }), [signal("tt", "mtls/a")]);
    await without.start();
    await waitFor(() => without.src.stats().lastError !== null, 5000, "a refusal");
    expect(without.src.stats().connected).toBe(false);
    expect(without.src.stats().lastError).toMatch(/^TLS: the broker asks for a client certificate: set tls\.cert and tls\.key \(ERR_SSL_TLSV13_ALERT_CERTIFICATE_REQUIRED: tlsv13 alert certificate required\)$/);
    await without.src.stop();

    const withCert = collect(sourceFor(url, { protocolVersion: 5, tls: { ca: pki.ca, cert: pki.clientCert, key: pki.clientKey, rejectUnauthorized: true } }), [signal("tt", "mtls/a")]);
    await withCert.start();
    await withCert.src.whenReady();
    await publish("mtls/a", [value(70.25)]);
    await waitFor(() => withCert.got.length >= 1, 5000, "a value over mutual TLS");
    expect(withCert.got[0]).toMatchObject({ value: 70.25, quality: "good" });
    await withCert.src.stop();
  });

  it("user name with the password from the environment; a wrong password is refused with a clear error", async () => {
    const url = `mqtt://127.0.0.1:${broker.port("password")}`;
    // A read-only account: the broker's ACL lets it read auth/# and nothing else.
    const ok = collect(sourceFor(url, { username: "millwarden-ro", passwordEnv: PW_ENV }), [signal("tt", "auth/a")]);
    await ok.start();
    await ok.src.whenReady();
    expect(ok.src.stats()).toMatchObject({ connected: true, lastError: null });
    await publish("auth/a", [value(12.5)]);
    await waitFor(() => ok.got.length >= 1, 5000, "a value with the user name login");
    expect(ok.got[0]).toMatchObject({ value: 12.5, quality: "good" });
    await ok.src.stop();

    const WRONG = `${PW_ENV}_WRONG`;
    process.env[WRONG] = "not-the-password";
    try {
      const bad = collect(sourceFor(url, { username: "millwarden-ro", passwordEnv: WRONG }), [signal("tt", "auth/a")]);
      await bad.start();
      await waitFor(() => bad.src.stats().lastError !== null, 5000, "a refused login");
      expect(bad.src.stats().lastError).toMatch(/^the broker refused the connection: not authorized/);
      expect(bad.src.stats().connected).toBe(false);
      // The password never reaches a log line or an error text.
      expect([...bad.logs, bad.src.stats().lastError].join("\n")).not.toContain("not-the-password");
      await bad.src.stop();
    } finally {
      delete process.env[WRONG];
    }
  });

  it("a wildcard subscription: routed by exact topic, unmatched topics counted, no error storm", async () => {
    const c = collect(sourceFor(plainUrl, { subscribe: ["wild/cg2/#"] }), [signal("a", "wild/cg2/TT-1"), signal("b", "wild/cg2/area/TT-2")]);
    await c.start();
    await c.src.whenReady();
    expect(c.src.stats().subscriptions).toEqual(["wild/cg2/#"]);
    const pub = await mqtt.connectAsync(plainUrl, { protocolVersion: 4 });
    for (let i = 0; i < 200; i++) await pub.publishAsync(`wild/cg2/other/${i % 7}`, "not even json", { qos: 1 });
    await pub.publishAsync("wild/cg2/TT-1", value(1), { qos: 1 });
    await pub.publishAsync("wild/cg2/area/TT-2", value(2), { qos: 1 });
    await pub.endAsync();
    await waitFor(() => c.got.length >= 2 && c.src.stats().unmatched >= 200, 5000, "two values and 200 unmatched");
    expect(c.got.map((s) => [s.signal, s.value])).toEqual([["a", 1], ["b", 2]]);
    expect(c.src.stats()).toMatchObject({ unmatched: 200, rejected: 0, samples: 2 });
    expect(c.logs.filter((l) => l.includes("no signal maps"))).toHaveLength(1);
    await c.src.stop();
  });
});

const O2_CONFIG = (url: string, protocolVersion: 4 | 5) => `site: { name: Tarnholm Works, plant: Coal grinding line 2, barometricPressureHPa: 1002 }
clock: wall
sources:
  - { id: m, kind: mqtt, url: "${url}", protocolVersion: ${protocolVersion}, clientId: mw-restart-${protocolVersion}-${process.pid}, clean: false, qos: 1, payload: { format: json, valuePath: value, timePath: time } }
signals:
  - { id: fs2.o2, name: Fine-coal silo O2 (dry), tag: FS2-AT-313, source: m, topic: restart/v${protocolVersion}/FS2-AT-313, unit: pctVol, basis: dry, range: [0, 25], expectedPeriodS: 1 }
units:
  - id: fs2
    name: Fine-coal silo FS2
    kind: silo
    oxygen: { signal: fs2.o2, loc: { pctVol: 15, basis: dry, monitoring: continuous, origin: "test value" } }
`;

describe.skipIf(MISSING.length > 0)(`broker restart and persistent session${why}`, () => {
  it.each([4, 5] as const)("MQTT %s: reconnects, the core shows unknown meanwhile, and QoS 1 messages sent while away arrive", async (protocolVersion) => {
    const dir = tempDir("mw-restart-");
    const port = await freePort();
    const broker = new OwnMosquitto(dir.path, [{ kind: "plain", port }]);
    await broker.start();
    const proxy = await CutProxy.start(port);
    try {
      const cfg = parseConfig(O2_CONFIG(`mqtt://127.0.0.1:${proxy.port}`, protocolVersion), "restart.yaml");
      const engine = new Engine(cfg);
      const srcCfg = cfg.sources[0] as SourceConfig;
      const topic = cfg.signals[0]!.topic!;
      const got: Sample[] = [];
      const logs: string[] = [];
      const src = new MqttSource(srcCfg, cfg.signals, { now: Date.now, log: (_l, m) => logs.push(m) });
      await src.start((s) => {
        got.push(s);
        engine.ingest(s);
      });
      await src.whenReady();
      const direct = `mqtt://127.0.0.1:${port}`;
      const send = async (values: number[]) => {
        const pub = await mqtt.connectAsync(direct, { protocolVersion: 4 });
        for (const v of values) await pub.publishAsync(topic, value(v), { qos: 1 });
        await pub.endAsync();
      };
      const inerting = () => engine.snapshot().units.find((u) => u.id === "fs2")!.inerting!;
      const o2View = () => engine.snapshot().signals.find((s) => s.id === "fs2.o2")!;

      await send([5.0]);
      await waitFor(() => got.length === 1, 5000, "the first value");
      engine.tick(Date.now());
      expect(o2View().stale).toBe(false);
      expect(inerting().state).toBe("inert"); // 5 % O2 dry against the LOC 15 % - 2 %-pt (NFPA 69, continuous monitoring)

      // The source is cut off; the broker is killed and started again on the same port.
      proxy.cut();
      await waitFor(() => !src.stats().connected, 5000, "the source to notice the outage");
      await broker.stop();
      await broker.start();
      // Published while the source is away: the broker keeps them in the persistent session.
      await send([5.1, 5.2, 5.3]);
      const lastReceiveMs = got[0]!.receiveTimeMs;
      await waitFor(() => Date.now() - lastReceiveMs > 3500, 10_000, "three expected periods without data");
      engine.tick(Date.now());
      expect(o2View().stale).toBe(true);
      expect(inerting().state).toBe("unknown");

      proxy.open();
      await waitFor(() => got.length >= 4, 15_000, "the queued messages after the reconnection");
      expect(got.slice(1).map((s) => s.value)).toEqual([5.1, 5.2, 5.3]);
      expect(got.every((s) => s.quality === "good")).toBe(true);
      expect(src.stats()).toMatchObject({ connected: true, sessionPresent: true });
      expect(src.stats().reconnections).toBeGreaterThanOrEqual(1);
      expect(logs.join("\n")).toMatch(/session resumed/);
      engine.tick(Date.now());
      expect(o2View().stale).toBe(false);
      expect(inerting().state).toBe("inert");
      await src.stop();
    } finally {
      await proxy.close();
      await broker.stop();
      dir.remove();
    }
  }, 60_000);
});

describe.skipIf(MISSING.length > 0)(`Sparkplug B through Mosquitto${why}`, () => {
  it("births with aliases, data by alias, a sequence gap (uncertain until the next birth) and the node's death (bad at once)", async () => {
    const dir = tempDir("mw-spb-");
    const port = await freePort();
    const broker = new OwnMosquitto(dir.path, [{ kind: "plain", port }]);
    await broker.start();
    const url = `mqtt://127.0.0.1:${port}`;
    try {
      // The example config's Sparkplug source, pointed at this broker without TLS.
      const example = loadConfig(new URL("../../config/example-mqtt-tls-sparkplug.yaml", import.meta.url).pathname);
      const edgeCfg = example.sources.find((s) => s.id === "edge-spb") as SourceConfig;
      const srcCfg: SourceConfig = { ...edgeCfg, url, tls: undefined, username: undefined, passwordEnv: undefined, clientId: `mw-spb-${process.pid}` };
      const engine = new Engine({ ...example, sources: [srcCfg] });
      const got: Sample[] = [];
      const src = new MqttSource(srcCfg, example.signals, { now: Date.now, log: () => undefined });
      await src.start((s) => {
        got.push(s);
        engine.ingest(s);
      });
      await src.whenReady();

      const T = (type: string, device?: string) => `spBv1.0/cg2/${type}/edge-vm2${device ? `/${device}` : ""}`;
      const edge = await mqtt.connectAsync(url, {
        protocolVersion: 4, clientId: `edge-vm2-${process.pid}`, reconnectPeriod: 0,
        will: { topic: T("NDEATH"), payload: Buffer.from(spb.encodePayload({ timestamp: Date.now(), metrics: [{ name: "bdSeq", type: "UInt64", value: 4 }] })), qos: 1, retain: false },
      });
      const pub = (topic: string, p: Parameters<typeof spb.encodePayload>[0]) => edge.publishAsync(topic, Buffer.from(spb.encodePayload(p)), { qos: 0 });
      const o2 = () => got.filter((s) => s.signal === "vm2.outlet.o2").at(-1);
      const power = () => got.filter((s) => s.signal === "vm2.drive.power").at(-1);
      let t = Date.now();

      await pub(T("NBIRTH"), { timestamp: t, seq: 0, metrics: [{ name: "bdSeq", type: "UInt64", value: 4, timestamp: t }, { name: "Node Control/Rebirth", type: "Boolean", value: false, timestamp: t }, { name: "Drive/Power", alias: 1, type: "Float", value: 1805, timestamp: t }] });
      await pub(T("DBIRTH", "vm2-a113"), { timestamp: t, seq: 1, metrics: [{ name: "O2/PV", alias: 20, type: "Double", value: 9.1, timestamp: t }] });
      await waitFor(() => o2() !== undefined && power() !== undefined, 5000, "the births' values");
      expect(power()).toMatchObject({ value: 1805, quality: "good" });
      expect(o2()).toMatchObject({ value: 9.1, quality: "good" });

      t += 1000;
      await pub(T("DDATA", "vm2-a113"), { timestamp: t, seq: 2, metrics: [{ alias: 20, type: "Double", value: 9.4, timestamp: t }] });
      await waitFor(() => o2()!.value === 9.4, 5000, "data by alias");
      expect(o2()!.quality).toBe("good");

      // seq 3 and 4 never sent: a gap.
      t += 1000;
      await pub(T("NDATA"), { timestamp: t, seq: 5, metrics: [{ alias: 1, type: "Float", value: 1790, timestamp: t }] });
      await waitFor(() => power()!.value === 1790, 5000, "the message after the gap");
      expect(power()!.quality).toBe("uncertain");
      expect(o2()).toMatchObject({ value: 9.4, quality: "uncertain" });
      expect(src.stats().rejectedBy).toMatchObject({ "cg2/edge-vm2:seq-gap": 1 });
      expect(src.stats().sparkplug.find((n) => n.node === "edge-vm2")).toMatchObject({ online: true, seqGaps: 1, births: 1 });

      // A new birth ends the uncertainty.
      t += 1000;
      await pub(T("NBIRTH"), { timestamp: t, seq: 0, metrics: [{ name: "bdSeq", type: "UInt64", value: 4, timestamp: t }, { name: "Drive/Power", alias: 1, type: "Float", value: 1800, timestamp: t }] });
      await pub(T("DBIRTH", "vm2-a113"), { timestamp: t, seq: 1, metrics: [{ name: "O2/PV", alias: 20, type: "Double", value: 9.0, timestamp: t }] });
      await waitFor(() => o2()!.value === 9.0, 5000, "the new births");
      expect([o2()!.quality, power()!.quality]).toEqual(["good", "good"]);

      // The edge node's connection breaks: the broker sends its will, the NDEATH.
      edge.stream.destroy();
      await waitFor(() => o2()!.quality === "bad", 10_000, "the node's death");
      expect(o2()!.qualityReason).toBe("node death");
      expect(power()).toMatchObject({ quality: "bad", qualityReason: "node death" });
      engine.tick(Date.now());
      const view = engine.snapshot().signals.find((s) => s.id === "vm2.outlet.o2")!;
      expect(view).toMatchObject({ quality: "bad", qualityReason: "node death", value: null });
      expect(src.stats().sparkplug.find((n) => n.node === "edge-vm2")).toMatchObject({ online: false, deaths: 1 });
      edge.end(true);
      await src.stop();
    } finally {
      await broker.stop();
      dir.remove();
    }
  }, 60_000);
});
