// Matching the raises of two replays by rule and time, from hand-built events.
import { describe, expect, it } from "vitest";
import type { AdvisoryTransition, Tier, TransitionKind } from "../../src/core/types.js";
import { compareRaises } from "../../src/replay/compare.js";
import { renderComparison } from "../../src/replay/render.js";
import { summarize } from "../../src/replay/summary.js";

const T0 = Date.UTC(2026, 0, 12, 6, 0, 0);
const S = 1000;

function raise(atS: number, ruleId: string, tier: Tier = "caution", transition: TransitionKind = "raise"): AdvisoryTransition {
  return { kind: "advisory", atMs: T0 + atS * S, advisoryId: ruleId, ruleId, transition, from: "normal", to: "unack", tier, value: 6.25, limit: 5, by: "millwarden", why: "test" };
}

describe("compareRaises", () => {
  it("matches a raise of the same rule within the tolerance and lists the rest per side", () => {
    const a = [raise(0, "r1"), raise(100, "r1"), raise(500, "r2"), raise(20, "r1", "caution", "clear")];
    const b = [raise(50, "r1"), raise(300, "r1"), raise(500, "r3", "warning")];
    const c = compareRaises(a, b);
    expect(c.toleranceMs).toBe(60_000);
    expect([c.raisesA, c.raisesB]).toEqual([3, 3]); // the clear is not a raise
    // r1@0 ↔ r1@50 (50 s ≤ 60 s); r1@100 has no partner (r1@300 is 200 s away)
    expect(c.matched.map((m) => [m.a.atMs - T0, m.b.atMs - T0, m.dtMs])).toEqual([[0, 50_000, 50_000]]);
    expect(c.onlyA.map((r) => [r.ruleId, (r.atMs - T0) / S])).toEqual([
      ["r1", 100],
      ["r2", 500],
    ]);
    expect(c.onlyB.map((r) => [r.ruleId, (r.atMs - T0) / S])).toEqual([
      ["r1", 300],
      ["r3", 500],
    ]);
    expect(c.onlyB[1]).toMatchObject({ tier: "warning", value: 6.25, limit: 5 });
  });

  it("never matches different rules at the same time", () => {
    const c = compareRaises([raise(0, "r1")], [raise(0, "r2")]);
    expect(c.matched).toEqual([]);
    expect([c.onlyA.length, c.onlyB.length]).toEqual([1, 1]);
  });

  it("pairs as many raises as possible, not each with its nearest", () => {
    // A at 0 and 70 s, B at 60 and 130 s. Nearest-first would pair 70↔60 (10 s) and leave 0 and
    // 130 alone; 0↔60 and 70↔130 (60 s each) pairs all four.
    const c = compareRaises([raise(0, "r1"), raise(70, "r1")], [raise(60, "r1"), raise(130, "r1")]);
    expect(c.matched.map((m) => m.dtMs)).toEqual([60_000, 60_000]);
    expect(c.onlyA).toEqual([]);
    expect(c.onlyB).toEqual([]);
  });

  it("takes the tolerance inclusively and accepts another one", () => {
    expect(compareRaises([raise(0, "r1")], [raise(60, "r1")]).matched).toHaveLength(1);
    const late = compareRaises([raise(0, "r1")], [{ ...raise(60, "r1"), atMs: T0 + 60_001 }]);
    expect(late.matched).toHaveLength(0);
    expect(compareRaises([raise(0, "r1")], [raise(100, "r1")], 120_000).matched).toHaveLength(1);
    expect(() => compareRaises([], [], -1)).toThrow(/tolerance of 0 ms or more/);
  });

  it("is symmetric: swapping the sides swaps the lists", () => {
    const a = [raise(0, "r1"), raise(100, "r1"), raise(500, "r2")];
    const b = [raise(50, "r1"), raise(300, "r1"), raise(500, "r3")];
    const ab = compareRaises(a, b);
    const ba = compareRaises(b, a);
    expect(ba.onlyA).toEqual(ab.onlyB);
    expect(ba.onlyB).toEqual(ab.onlyA);
    expect(ba.matched.length).toBe(ab.matched.length);
  });

  it("renders the unmatched raises of each side and the figures side by side", () => {
    const a = [raise(0, "r1"), raise(100, "r1")];
    const b = [raise(30, "r1")];
    const span = { fromMs: T0, toMs: T0 + 3600 * S };
    const pos = () => "control-room";
    const text = renderComparison("a.yaml", "b.yaml", compareRaises(a, b), summarize(a, span, pos), summarize(b, span, pos));
    expect(text).toMatch(/^Raised by A only \(a\.yaml\): 1$/m);
    expect(text).toMatch(/^2026-01-12T06:01:40\.000Z +r1 +caution +6\.25 +5$/m);
    expect(text).toMatch(/^Raised by B only \(b\.yaml\): 0$/m);
    expect(text).toMatch(/^control-room: raises per hour +2\.00 +1\.00$/m); // 2 and 1 raises in 1 h
  });
});
