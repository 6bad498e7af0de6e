// Nuisance control checked against the figures DESIGN.md §5 gives after ANSI/ISA-18.2-2016 and
// EEMUA 191 (3rd ed.), from memory: chatter is 3 or more activations of one alarm within 60 s;
// an alarm flood is more than 10 alarms in 10 minutes per operator position and ends below 5 in
// 10 minutes; a standing (stale) alarm has been active for more than 24 hours.
import { describe, expect, it } from "vitest";
import { AdvisoryBoard } from "../../src/advisories/board.js";
import type { RuleConfig } from "../../src/config/schema.js";
import type { NuisanceEvent } from "../../src/core/types.js";
import { POLICY, testRule as rule } from "./helpers.js";

function board(ids: string[], over: Partial<RuleConfig> = {}) {
  const b = new AdvisoryBoard(ids.map((id) => rule(id, over)), () => ({ unit: "ppm", label: "x" }), POLICY);
  const values = new Map<string, number>(ids.map((id) => [id, 0]));
  const nuisance: NuisanceEvent[] = [];
  const run = (tMs: number) => {
    const ev = b.evaluate(tMs, (a) => ({ value: values.get(a.id)!, suppressedBy: null }));
    for (const e of ev) if (e.kind === "nuisance") nuisance.push(e);
    return ev;
  };
  return { b, values, nuisance, run };
}

describe("defaults are the ISA-18.2 / EEMUA 191 figures (DESIGN.md §5, from memory)", () => {
  it("chatter 3 in 60 s, flood > 10 in 10 min ending < 5, standing 24 h", () => {
    expect(POLICY).toMatchObject({ chatterCount: 3, chatterWindowS: 60, floodCount: 10, floodEndCount: 5, floodWindowS: 600, standingS: 86_400 });
  });
});

describe("chatter", () => {
  it("three raises within 60 s mark the advisory chattering once", () => {
    const { b, values, nuisance, run } = board(["o2-flicker"]);
    // raise at 0, 20 s, 40 s (each cleared 10 s later): the third raise is within 60 s of the first.
    for (const t of [0, 20, 40]) {
      values.set("o2-flicker", 6);
      run(t * 1000);
      values.set("o2-flicker", 0);
      run((t + 10) * 1000);
    }
    expect(nuisance.filter((n) => n.type === "chatter")).toHaveLength(1);
    expect(nuisance[0]).toMatchObject({ type: "chatter", advisoryId: "o2-flicker", count: 3, atMs: 40_000 });
    expect(b.get("o2-flicker")!.chattering).toBe(true);
    // A fourth raise does not notify again.
    values.set("o2-flicker", 6);
    run(55_000);
    expect(nuisance.filter((n) => n.type === "chatter")).toHaveLength(1);
    // The advisory stays on screen, marked.
    expect(b.views()[0]).toMatchObject({ id: "o2-flicker", chattering: true });
  });

  it("three raises spread over more than 60 s are not chatter", () => {
    const { nuisance, values, run } = board(["slow"]);
    for (const t of [0, 31, 62]) {
      values.set("slow", 6);
      run(t * 1000);
      values.set("slow", 0);
      run((t + 5) * 1000);
    }
    expect(nuisance.filter((n) => n.type === "chatter")).toEqual([]);
  });

  it("chatter ends after five quiet windows", () => {
    const { b, values, nuisance, run } = board(["o2-flicker"]);
    for (const t of [0, 10, 20]) {
      values.set("o2-flicker", 6);
      run(t * 1000);
      values.set("o2-flicker", 0);
      run((t + 5) * 1000);
    }
    run(319_000);
    expect(b.get("o2-flicker")!.chattering).toBe(true);
    run(320_000); // 300 s after the last raise at 20 s
    expect(nuisance.at(-1)).toMatchObject({ type: "chatter-end", advisoryId: "o2-flicker" });
    expect(b.get("o2-flicker")!.chattering).toBe(false);
  });
});

describe("flood", () => {
  const ids = Array.from({ length: 12 }, (_, i) => `a${String(i).padStart(2, "0")}`);

  it("the 11th raise within 10 minutes starts a flood naming the first-out; it ends below 5 in 10 minutes", () => {
    const { b, values, nuisance, run } = board(ids);
    // One new advisory every 50 s from t = 0: a00 at 0 s ... a10 at 500 s is the 11th within 600 s.
    ids.forEach((id, i) => {
      values.set(id, 6);
      run(i * 50_000);
    });
    const start = nuisance.find((n) => n.type === "flood-start");
    expect(start).toMatchObject({ atMs: 500_000, position: "control-room", count: 11, advisoryId: "a00" });
    expect(b.inFlood("control-room")).toBe(true);
    expect(b.get("a00")!.firstOut).toBe(true);
    // No warning is hidden: every active advisory is still on screen.
    expect(b.views()).toHaveLength(12);
    // No new raises: the window (younger than 600 s) empties. At 949 s the raises at 350..550 s
    // (a07..a11, 5) are still in it; at 950 s a07 leaves and 4 remain: fewer than 5 ends the flood.
    run(949_000);
    expect(b.inFlood("control-room")).toBe(true);
    run(950_000);
    expect(nuisance.at(-1)).toMatchObject({ type: "flood-end", atMs: 950_000, count: 4 });
    expect(b.get("a00")!.firstOut).toBe(false);
  });

  it("is counted per operator position", () => {
    const b = new AdvisoryBoard(
      ids.map((id, i) => rule(id, { position: i % 2 ? "silo-panel" : "control-room" })),
      () => ({ unit: "", label: "x" }),
      POLICY,
    );
    const ev = ids.flatMap((_, i) => b.evaluate(i * 1000, () => ({ value: 6, suppressedBy: null })));
    expect(ev.filter((e) => e.kind === "nuisance")).toEqual([]);
  });
});

describe("standing", () => {
  it("an advisory active for more than 24 h is reported once", () => {
    const { b, values, nuisance, run } = board(["silo-co"]);
    values.set("silo-co", 6);
    run(0);
    run(86_400_000);
    expect(nuisance).toEqual([]);
    run(86_401_000);
    run(90_000_000);
    expect(nuisance).toEqual([expect.objectContaining({ type: "standing", advisoryId: "silo-co", atMs: 86_401_000 })]);
    expect(b.views()[0]).toMatchObject({ standing: true });
  });
});

describe("chatter and flood", () => {
  it("a chattering advisory's further raises do not flood its position by themselves", () => {
    const { nuisance, values, run } = board(["o2-flicker", "co-a", "co-b"]);
    // 30 raises of one advisory within 10 minutes (every 20 s): chatter at the third, never a flood.
    for (let k = 0; k < 30; k++) {
      values.set("o2-flicker", 6);
      run(k * 20_000);
      values.set("o2-flicker", 0);
      run(k * 20_000 + 10_000);
    }
    expect(nuisance.map((n) => n.type)).toEqual(["chatter"]);
  });
});
