// The box as a Sparkplug B edge node (Eclipse Sparkplug 3.0, spBv1.0), checked by decoding with
// sparkplug-payload (the Eclipse Tahu JavaScript library): NBIRTH with bdSeq, seq 0 and every
// metric by name and alias; NDATA with seq + 1 by alias only; NDEATH as the will with the
// session's bdSeq when the connection is lost, and the next session born with bdSeq + 1.
import mqtt from "mqtt";
import sparkplugPayload from "sparkplug-payload";
import { afterAll, beforeAll, describe, expect, it } from "vitest";
import { republishSchema } from "../../src/config/sections/republish.js";
import { derivedQuantities, stateKeys } from "../../src/core/quantities.js";
import { Daemon } from "../../src/daemon/daemon.js";
import { startEmbeddedBroker, type EmbeddedBroker } from "../../src/daemon/embedded-broker.js";
import { memoryLogger } from "../../src/daemon/log.js";
import { configOf, readScenarioSpec, simulatedSamples } from "../scenarios/harness.js";
import { demoConfigFor, tempDir, waitFor } from "../integration/helpers.js";
import { CutProxy, freePort, MISSING, OwnMosquitto } from "../sources/mosquitto.js";
import { lineOf, problemsOf, SITE_AND_SOURCE } from "../config/helpers.js";

const codec = sparkplugPayload.get("spBv1.0")!;
type Decoded = ReturnType<typeof codec.decodePayload>;
const num = (v: unknown) => (typeof v === "number" ? v : Number((v as { toNumber(): number }).toNumber()));

describe("republish.sparkplug: config", () => {
  it("refuses the node id of a plant edge node the box reads, at its line", () => {
    const text = `${SITE_AND_SOURCE}    payload: sparkplug
signals:
  - { id: a.temp, name: Gas temperature, tag: TT-1, source: m, sparkplug: { group: cg2, node: edge-vm2, metric: TT-1 }, unit: degC, expectedPeriodS: 1 }
units:
  - { id: u1, name: Filter, kind: bag-filter }
republish:
  url: mqtt://127.0.0.1:18899
  box: cg2-edge1
  sparkplug: { group: cg2, node: edge-vm2 }
`;
    const ps = problemsOf(text);
    expect(ps).toHaveLength(1);
    expect(ps[0]!).toMatchObject({ line: lineOf(text, "sparkplug: { group: cg2, node: edge-vm2 }"), key: "republish.sparkplug.node" });
    expect(ps[0]!.message).toContain('signal "a.temp"');
  });
});

let broker: EmbeddedBroker;
let mosq: OwnMosquitto;
let dir: ReturnType<typeof tempDir>;

describe.skipIf(MISSING.includes("mosquitto"))("republish.sparkplug: on a broker", () => {
  beforeAll(async () => {
    broker = await startEmbeddedBroker(0, "127.0.0.1");
    dir = tempDir("mw-spb-");
    mosq = new OwnMosquitto(dir.path, [{ kind: "plain", port: await freePort() }]);
    await mosq.start();
  });
  afterAll(async () => {
    await mosq?.stop();
    await broker?.close();
    dir?.remove();
  });

  it("births, sends data by alias, dies with its bdSeq and is born again with the next", async () => {
    const port = mosq.port("plain");
    const proxy = await CutProxy.start(port);
    const spec = readScenarioSpec("purge-after-trip");
    const scen = configOf("purge-after-trip", spec);
    const samples = simulatedSamples(spec, scen);
    const group = `mwt${process.pid}`;
    const got: { type: string; p: Decoded }[] = [];
    const sub = mqtt.connect(`mqtt://127.0.0.1:${port}`, { clientId: `spb-sub-${process.pid}` });
    await new Promise<void>((ok) => sub.once("connect", () => sub.subscribe(`spBv1.0/${group}/#`, { qos: 1 }, () => ok())));
    sub.on("message", (t, payload) => got.push({ type: t.split("/")[2]!, p: codec.decodePayload(payload) }));
    const c = demoConfigFor(broker.url, `mw-spb-src-${process.pid}`, dir.path);
    const republish = republishSchema.parse({ url: `mqtt://127.0.0.1:${proxy.port}`, box: "cg2-edge1", prefix: `mw-spb-${process.pid}`, sparkplug: { group, node: "millwarden-cg2" }, derived: { minIntervalS: 0 } });
    const d = await Daemon.start({ config: { ...c, rules: scen.rules, republish }, log: memoryLogger(), serve: false });
    try {
      await waitFor(() => got.some((g) => g.type === "NBIRTH"), 10_000, "NBIRTH");
      const birth = got.find((g) => g.type === "NBIRTH")!.p;
      expect(num(birth.seq)).toBe(0);
      const bd = birth.metrics!.find((m) => m.name === "bdSeq")!;
      expect(num(bd.value)).toBe(0);
      const named = birth.metrics!.filter((m) => m.name !== "bdSeq");
      const aliases = named.map((m) => num(m.alias));
      expect(new Set(aliases).size).toBe(named.length);
      expect(named.map((m) => m.name)).toEqual(expect.arrayContaining(["derived/dewpoint.lowest.marginK", "state/inerting.vm2", "advisory/o2-margin-vm2/state"]));
      // One metric per derived key and state key, two per rule.
      const cfg = { ...c, rules: scen.rules };
      expect(named.length).toBe(derivedQuantities(cfg).length + stateKeys(cfg).length + 2 * cfg.rules.length);

      for (const s of samples.slice(0, samples.length / 4)) d.ingest({ ...s });
      await waitFor(() => got.filter((g) => g.type === "NDATA").length >= 3, 10_000, "NDATA");
      const data = got.filter((g) => g.type === "NDATA").map((g) => g.p);
      expect(data.map((p) => num(p.seq))).toEqual(data.map((_, i) => (i + 1) % 256));
      const known = new Set(aliases);
      for (const p of data) for (const m of p.metrics!) {
        expect(m.name ?? undefined).toBeUndefined();
        expect(known.has(num(m.alias))).toBe(true);
      }

      // The connection is lost: the broker publishes the will, NDEATH with this session's bdSeq.
      proxy.cut();
      await waitFor(() => got.some((g) => g.type === "NDEATH"), 10_000, "NDEATH");
      expect(num(got.find((g) => g.type === "NDEATH")!.p.metrics![0]!.value)).toBe(0);
      proxy.open();
      await waitFor(() => got.filter((g) => g.type === "NBIRTH").length >= 2, 15_000, "second NBIRTH");
      const second = got.filter((g) => g.type === "NBIRTH")[1]!.p;
      expect(num(second.metrics!.find((m) => m.name === "bdSeq")!.value)).toBe(1);
      // The new birth carries the current values (an inerting state is known by now).
      const inert = second.metrics!.find((m) => m.name === "state/inerting.vm2")!;
      expect(typeof inert.value).toBe("string");
    } finally {
      await d.stop();
      await sub.endAsync(true);
      await proxy.close();
    }
  }, 60_000);
});
