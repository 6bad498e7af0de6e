// What the advisory and nuisance golden folders must show, read straight off their
// expected.jsonl (the generic test, scenarios.test.ts, proves that the core emits exactly those
// lines). A golden file that was rewritten with UPDATE_GOLDEN=1 after a change of behaviour
// still has to tell the scenario's story:
//
//   analyser-calibration  no advisory raised; the rules on the analyser's values suppressed by
//                         design for the check and unsuppressed after it
//   trip-loaded-co-rise   the latching "mill stopped with coal inside" notice, then CO advisories
//                         raised during the standstill
//   trip-flood            a flood-start naming a first-out, and later its flood-end
//   o2-chatter            a chatter event for the badly tuned bag filter O2 rule
//
// The figures (chatter: 3 annunciations within 60 s; flood: more than 10 within 10 min per
// operator position, over below 5) are those of DESIGN.md §5 after ISA-18.2 / EEMUA 191 (from
// memory); an annunciation is a transition into "unack" from any other state except a re-alert.
import { readFileSync } from "node:fs";
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import type { AdvisoryTransition, NuisanceEvent } from "../../src/core/types.js";
import { SCENARIOS_DIR, scenarioFolders, type GoldenEvent } from "./harness.js";

const MIN = 60_000;

function golden(folder: string): GoldenEvent[] {
  const file = join(SCENARIOS_DIR, folder, "expected.jsonl");
  return readFileSync(file, "utf8")
    .split("\n")
    .map((line, i) => ({ line, i }))
    .filter(({ line }) => line.trim() !== "")
    .map(({ line, i }) => {
      let e: unknown;
      try {
        e = JSON.parse(line);
      } catch {
        throw new Error(`${file}:${i + 1}: expected one JSON object per line, found ${JSON.stringify(line.slice(0, 60))}`);
      }
      const kind = (e as { kind?: unknown }).kind;
      if (kind !== "advisory" && kind !== "nuisance") throw new Error(`${file}:${i + 1}: expected kind "advisory" or "nuisance", found ${JSON.stringify(kind)}`);
      return e as GoldenEvent;
    });
}

const transitionsOf = (es: GoldenEvent[]) => es.filter((e): e is AdvisoryTransition => e.kind === "advisory");
const nuisanceOf = (es: GoldenEvent[]) => es.filter((e): e is NuisanceEvent => e.kind === "nuisance");
const isAnnunciation = (t: AdvisoryTransition) => t.to === "unack" && t.from !== "unack" && t.transition !== "re-alert";
const annunciations = (es: GoldenEvent[]) => transitionsOf(es).filter(isAnnunciation);
const at = (e: { atMs: number }) => new Date(e.atMs).toISOString();

describe("every golden folder", () => {
  for (const folder of scenarioFolders()) {
    it(`${folder}: is in time order, and each chatter or flood-start follows the annunciation that caused it`, () => {
      const es = golden(folder);
      for (let i = 1; i < es.length; i++) expect(es[i]!.atMs, `line ${i + 1}`).toBeGreaterThanOrEqual(es[i - 1]!.atMs);
      es.forEach((e, i) => {
        if (e.kind !== "nuisance" || (e.type !== "chatter" && e.type !== "flood-start")) return;
        // The core emits these right after the transition that tipped the count (other nuisance events of that moment may sit between).
        let j = i - 1;
        while (j >= 0 && es[j]!.kind === "nuisance") j--;
        const cause = es[j];
        expect(cause?.kind, `line ${i + 1}: ${e.type} at ${at(e)}`).toBe("advisory");
        expect(isAnnunciation(cause as AdvisoryTransition)).toBe(true);
        expect(cause!.atMs).toBe(e.atMs);
        if (e.type === "chatter") expect((cause as AdvisoryTransition).advisoryId).toBe(e.advisoryId);
      });
    });
  }

  it("the folders without a nuisance story have no nuisance events", () => {
    for (const folder of ["analyser-calibration", "frozen-co-analyser", "o2-creep-damper", "purge-after-trip", "trip-loaded-co-rise", "wet-coal-surge"]) {
      expect(nuisanceOf(golden(folder)), folder).toEqual([]);
    }
  });
});

describe("analyser-calibration", () => {
  const es = golden("analyser-calibration");
  const ts = transitionsOf(es);

  it("raises no advisory at all", () => {
    expect(annunciations(es).map((t) => `${t.advisoryId} ${t.transition} at ${at(t)}`)).toEqual([]);
    expect(ts.filter((t) => t.transition === "escalate")).toEqual([]);
  });

  it("suppresses the rules on the analyser's values by design for the function check, and unsuppresses each later", () => {
    const inCheck = ts.filter((t) => t.transition === "suppress" && /bf2-a213 in function check/.test(t.why));
    expect(inCheck.length).toBeGreaterThan(0);
    for (const s of inCheck) {
      expect(s.to).toBe("suppressed");
      const back = ts.find((t) => t.advisoryId === s.advisoryId && t.transition === "unsuppress" && t.atMs > s.atMs);
      expect(back, `${s.advisoryId} unsuppressed after ${at(s)}`).toBeDefined();
      // A calibration takes minutes (the scenario: 10 min), not the 20 min after which "too long" is advised.
      expect(back!.atMs - s.atMs).toBeLessThan(20 * MIN);
      expect(back!.to).toBe("normal");
    }
    // The bag filter's O2 margin and its CO gradient are among them.
    expect(inCheck.map((t) => t.advisoryId)).toEqual(expect.arrayContaining(["o2-margin-bf2", "co-gradient-bf2"]));
  });
});

describe("trip-loaded-co-rise", () => {
  const es = golden("trip-loaded-co-rise");
  const ts = transitionsOf(es);

  it("raises the latching notice 'mill stopped with coal inside' once, and nothing clears or resets it", () => {
    const mine = ts.filter((t) => t.advisoryId === "mill-stopped-loaded-vm2");
    expect(mine.map((t) => [t.transition, t.tier, t.to])).toEqual([["raise", "notice", "unack"]]);
    expect(mine[0]!.why).toMatch(/standstill-loaded/);
  });

  it("raises CO advisories after the trip, during the standstill, and none before it", () => {
    const trip = ts.find((t) => t.advisoryId === "mill-stopped-loaded-vm2" && t.transition === "raise")!;
    const co = annunciations(es).filter((t) => t.advisoryId.startsWith("co-"));
    expect(co.filter((t) => t.atMs <= trip.atMs)).toEqual([]);
    expect(co.length).toBeGreaterThan(0);
    // The standstill lasts: the rules that apply only while grinding are suppressed at the trip and never unsuppressed.
    const grindingOnly = ts.filter((t) => t.transition === "suppress" && /is standstill-loaded/.test(t.why));
    expect(grindingOnly.length).toBeGreaterThan(0);
    for (const s of grindingOnly) expect(ts.filter((t) => t.advisoryId === s.advisoryId && t.transition === "unsuppress" && t.atMs > s.atMs)).toEqual([]);
    // Both CO analysers see it: the mill outlet and the bag filter outlet.
    expect(co.some((t) => t.advisoryId.endsWith("-vm2"))).toBe(true);
    expect(co.some((t) => t.advisoryId.endsWith("-bf2"))).toBe(true);
  });
});

describe("trip-flood", () => {
  const es = golden("trip-flood");

  it("has one flood-start at the control room with more than 10 annunciations within 10 min and a first-out", () => {
    const starts = nuisanceOf(es).filter((n) => n.type === "flood-start");
    expect(starts.length).toBe(1);
    const start = starts[0]!;
    expect(start.position).toBe("control-room");
    expect(start.count).toBeGreaterThan(10);
    const window = annunciations(es).filter((t) => t.atMs > start.atMs - 10 * MIN && t.atMs <= start.atMs);
    expect(window.length).toBe(start.count);
    // The first-out is the earliest annunciation of the window: here the trip's own notice.
    expect(start.advisoryId).not.toBeNull();
    expect(start.advisoryId).toBe(window[0]!.advisoryId);
    expect(start.advisoryId).toBe("mill-stopped-loaded-vm2");
  });

  it("ends the flood later, once fewer than 5 annunciations are left within 10 min", () => {
    const start = nuisanceOf(es).find((n) => n.type === "flood-start")!;
    const ends = nuisanceOf(es).filter((n) => n.type === "flood-end");
    expect(ends.length).toBe(1);
    const end = ends[0]!;
    expect(end.atMs).toBeGreaterThan(start.atMs);
    expect(end.advisoryId).toBe(start.advisoryId);
    expect(annunciations(es).filter((t) => t.atMs > end.atMs - 10 * MIN && t.atMs <= end.atMs).length).toBeLessThan(5);
  });
});

describe("o2-chatter", () => {
  const es = golden("o2-chatter");

  it("has a chatter event for o2-margin-bf2 at its third annunciation within 60 s", () => {
    const chatter = nuisanceOf(es).filter((n) => n.type === "chatter");
    expect(chatter.map((n) => n.advisoryId)).toEqual(["o2-margin-bf2"]);
    const c = chatter[0]!;
    const raises = annunciations(es).filter((t) => t.advisoryId === "o2-margin-bf2" && t.atMs <= c.atMs);
    expect(raises.length).toBeGreaterThanOrEqual(3);
    expect(c.atMs - raises.at(-3)!.atMs).toBeLessThan(MIN);
    // Not earlier: no three annunciations within 60 s before it.
    for (let i = 2; i < raises.length - 1; i++) expect(raises[i]!.atMs - raises[i - 2]!.atMs).toBeGreaterThanOrEqual(MIN);
  });

  it("raises and clears the badly tuned rule over and over, and ends the chatter once it is quiet", () => {
    const mine = transitionsOf(es).filter((t) => t.advisoryId === "o2-margin-bf2");
    expect(mine.filter((t) => t.transition === "raise").length).toBeGreaterThan(20);
    expect(mine.filter((t) => t.transition === "clear").length).toBeGreaterThan(20);
    const end = nuisanceOf(es).filter((n) => n.type === "chatter-end");
    expect(end.map((n) => n.advisoryId)).toEqual(["o2-margin-bf2"]);
    expect(end[0]!.atMs).toBeGreaterThan(mine.at(-1)!.atMs);
  });
});
