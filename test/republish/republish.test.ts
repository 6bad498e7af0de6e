// Republishing without a broker: the config section and its refusal of plant topics (file:line),
// the topic tree and the rate limit of derived values, the store-and-forward queue's bound and
// drop order, and the fleet model's liveness.
import { describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { filterOverlapsRoot } from "../../src/config/sections/republish.js";
import type { AdvisoryTransition, CoreEvent, DerivedValue } from "../../src/core/types.js";
import { FleetModel, FleetWatcher, serveFleet } from "../../src/republish/fleet.js";
import { RepublishPlan } from "../../src/republish/topics.js";
import { UplinkQueue, type UplinkMessage } from "../../src/store/uplink-queue.js";
import { lineOf, problemsOf, SITE_AND_SOURCE } from "../config/helpers.js";

const PLANT = `${SITE_AND_SOURCE}    subscribe: [tarnholm/cg2/#]
signals:
  - { id: a.temp, name: Gas temperature, tag: TT-1, source: m, topic: tarnholm/cg2/TT-1, unit: degC, expectedPeriodS: 1 }
units:
  - { id: u1, name: Filter, kind: bag-filter }
`;

describe("republish: config", () => {
  it("parses with the defaults", () => {
    const r = parseConfig(`${PLANT}republish:\n  url: mqtt://127.0.0.1:18899\n  box: cg2-edge1\n`, "plant.yaml").republish!;
    expect(r).toMatchObject({ prefix: "millwarden", box: "cg2-edge1", qos: 1, retainStates: true, derived: { minIntervalS: 5, everyS: 60 }, heartbeatS: 30 });
  });

  it("refuses a prefix whose tree holds a plant signal's topic, or that a source's filter reads, at the prefix's line", () => {
    const text = `${PLANT}republish:\n  url: mqtt://127.0.0.1:18899\n  prefix: tarnholm\n  box: cg2\n`;
    const ps = problemsOf(text);
    const line = lineOf(text, "prefix: tarnholm");
    expect(ps.map((p) => [p.line, p.key])).toEqual([
      [line, "republish.prefix"],
      [line, "republish.prefix"],
    ]);
    expect(ps[0]!.message).toContain('signal "a.temp" (tarnholm/cg2/TT-1');
    expect(ps[1]!.message).toContain('source "m" subscribes to tarnholm/cg2/#');
  });

  it("refuses a box id with a topic separator or wildcard", () => {
    const text = `${PLANT}republish:\n  url: mqtt://127.0.0.1:18899\n  box: cg2/+\n`;
    const ps = problemsOf(text);
    expect(ps).toHaveLength(1);
    expect(ps[0]!).toMatchObject({ line: lineOf(text, "box: cg2/+"), key: "republish.box" });
  });

  it("tells which filters reach into a tree (MQTT 3.1.1 §4.7 wildcard rules)", () => {
    expect(filterOverlapsRoot("millwarden/#", "millwarden/b1")).toBe(true);
    expect(filterOverlapsRoot("millwarden/+/status", "millwarden/b1")).toBe(true);
    expect(filterOverlapsRoot("#", "millwarden/b1")).toBe(true);
    expect(filterOverlapsRoot("millwarden/b1", "millwarden/b1")).toBe(true);
    expect(filterOverlapsRoot("millwarden", "millwarden/b1")).toBe(false);
    expect(filterOverlapsRoot("millwarden/b2/#", "millwarden/b1")).toBe(false);
    expect(filterOverlapsRoot("tarnholm/cg2/+", "millwarden/b1")).toBe(false);
  });
});

const derived = (key: string, atMs: number, value: number | null): DerivedValue => ({ kind: "derived", key, atMs, value, status: value === null ? "unknown" : "ok" });

describe("republish: topic tree and rate limit", () => {
  const plan = () => new RepublishPlan({ root: "mw/b1", box: "b1", qos: 1, retainStates: true, derived: { minIntervalS: 5, everyS: 60 } });
  const none = () => undefined;

  it("a derived value goes out at once, then on change at most every minIntervalS, and unchanged every everyS", () => {
    const p = plan();
    const sent: number[] = [];
    // Changing every second for 12 s, then steady for 2 minutes.
    for (let s = 0; s <= 140; s++) {
      const v = s <= 12 ? s : 12;
      const out = p.messages([derived("dewpoint.x.marginK", s * 1000, v)], none);
      if (out.length) sent.push(s);
    }
    // 0, then changes at 5 and 10; 12 is a change too (pending since 10) and goes out at 15; steady: 75, 135.
    expect(sent).toEqual([0, 5, 10, 15, 75, 135]);
  });

  it("+Infinity travels as notApproaching, states and advisory views retained, transitions kept last", () => {
    const p = plan();
    const t: AdvisoryTransition = { kind: "advisory", advisoryId: "o2-vm2", ruleId: "o2-vm2", atMs: 5000, transition: "clear", from: "ack", to: "normal", tier: "caution", value: 1.2, limit: 2, by: "millwarden", why: "back" } as AdvisoryTransition;
    const events: CoreEvent[] = [derived("o2.vm2.timeToLimitS", 5000, Number.POSITIVE_INFINITY), { kind: "state", key: "inerting.vm2", atMs: 5000, value: "inert" }, t];
    const out = p.messages(events, none);
    expect(out.map((m) => [m.topic, m.retain, m.keepLast])).toEqual([
      ["mw/b1/derived/o2.vm2.timeToLimitS", false, false],
      ["mw/b1/state/inerting.vm2", true, false],
      ["mw/b1/transition/o2-vm2", false, true],
      ["mw/b1/advisory/o2-vm2", true, true],
    ]);
    const body = (i: number) => JSON.parse(out[i]!.body.toString());
    expect(body(0)).toMatchObject({ value: null, status: "ok", notApproaching: true });
    expect(body(1)).toMatchObject({ key: "inerting.vm2", value: "inert" });
    expect(body(2)).toMatchObject({ transition: "clear", to: "normal" });
    expect(body(3)).toMatchObject({ id: "o2-vm2", state: "normal", tier: "caution", lastChangeMs: 5000 });
    expect(body(3).advisoryOnly).toMatch(/ADVISORY ONLY/);
  });
});

describe("store-and-forward queue", () => {
  const msg = (topic: string, keepLast = false): UplinkMessage => ({ topic, body: Buffer.from(topic), qos: 1, retain: false, keepLast });

  it("keeps order, drops the oldest ordinary message first and advisory transitions last, and counts the drops", () => {
    const q = UplinkQueue.openBeside(":memory:", 10);
    try {
      q.push([msg("t1", true), msg("d1"), msg("d2"), msg("t2", true)], 0);
      q.push(Array.from({ length: 7 }, (_, i) => msg(`d${i + 3}`)), 1);
      // 11 in a queue of 10: d1 goes.
      expect(q.peek(100).map((m) => m.topic)).toEqual(["t1", "d2", "t2", "d3", "d4", "d5", "d6", "d7", "d8", "d9"]);
      // Ten transitions: all ordinary messages go, then the oldest transition.
      q.push(Array.from({ length: 9 }, (_, i) => msg(`t${i + 3}`, true)), 2);
      expect(q.peek(100).map((m) => m.topic)).toEqual(["t2", "t3", "t4", "t5", "t6", "t7", "t8", "t9", "t10", "t11"]);
      expect(q.stats()).toEqual({ depth: 10, droppedOrdinary: 9, droppedKeepLast: 1 });
      const first = q.peek(3);
      q.remove(first.map((m) => m.id));
      expect(q.peek(1)[0]!.topic).toBe("t5");
      expect(q.depth).toBe(7);
    } finally {
      q.close();
    }
  });
});

describe("fleet model", () => {
  const j = (v: unknown) => Buffer.from(JSON.stringify(v));
  it("online from the status, offline from the will, silent after the timeout, advisories until normal", () => {
    const f = new FleetModel("mw", 10);
    f.message("mw/b1/status", j({ state: "online", site: "Tarnholm Works", plant: "Coal grinding line 2", units: [{ id: "vm2", name: "Mill", kind: "mill" }] }), 0);
    f.message("mw/b1/state/phase.vm2", j({ key: "phase.vm2", value: "grinding" }), 1000);
    f.message("mw/b1/advisory/co-vm2", j({ id: "co-vm2", state: "unack", tier: "caution", title: "CO rising", unitId: "vm2" }), 2000);
    f.message("mw/b2/status", j({ state: "online" }), 0);
    f.message("other/b9/status", j({ state: "online" }), 0);
    f.message("mw/b2/derived/x", Buffer.from("not json"), 0);
    let v = f.view(5000);
    expect(v.map((b) => [b.box, b.liveness])).toEqual([
      ["b1", "online"],
      ["b2", "online"],
    ]);
    expect(v[0]).toMatchObject({ states: { "phase.vm2": "grinding" }, advisories: [{ id: "co-vm2", state: "unack" }] });
    expect(f.unreadable).toBe(1);
    f.message("mw/b1/advisory/co-vm2", j({ id: "co-vm2", state: "normal" }), 6000);
    f.message("mw/b2/status", j({ state: "offline" }), 6000);
    v = f.view(14_000);
    expect(v.map((b) => [b.box, b.liveness, b.advisories.length])).toEqual([
      ["b1", "online", 0],
      ["b2", "offline", 0],
    ]);
    // b1's last message was at 6 s: silent once more than 10 s have passed.
    expect(f.view(16_001)[0]!.liveness).toBe("silent");
  });
});

describe("fleet page", () => {
  it("serves the page and the fleet as JSON, and refuses anything but GET", async () => {
    const w = new FleetWatcher({ url: "mqtt://127.0.0.1:1", prefix: "mw", timeoutS: 60 });
    w.model.message("mw/b1/status", Buffer.from(JSON.stringify({ state: "online", site: "Tarnholm Works" })), Date.now());
    const srv = await serveFleet(w, "127.0.0.1", 0);
    try {
      const api = (await (await fetch(`${srv.url}api/fleet`)).json()) as { advisoryOnly: string; boxes: { box: string; liveness: string; site: string }[] };
      expect(api.advisoryOnly).toMatch(/ADVISORY ONLY/);
      expect(api.boxes).toMatchObject([{ box: "b1", liveness: "online", site: "Tarnholm Works" }]);
      const page = await fetch(srv.url);
      expect(page.headers.get("content-type")).toMatch(/text\/html/);
      expect(await page.text()).toContain("api/fleet");
      expect((await fetch(`${srv.url}api/fleet`, { method: "POST" })).status).toBe(405);
    } finally {
      await srv.close();
    }
  });
});
