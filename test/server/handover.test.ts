// The shift handover computed from hand-built historian answers (src/server/handover.ts).
// Every expected figure is worked out by hand in the comment beside it: sums of interval
// lengths and the extreme of a short list; no outside formula is involved.
import { describe, expect, it } from "vitest";
import type { AdvisoryTransition, StateChange } from "../../src/core/types.js";
import { analyserOutages, computeHandover, extreme, stateTimes, type HandoverInput, type SeriesPoint } from "../../src/server/handover.js";

const H = 3_600_000;
const MIN = 60_000;
// A night shift on Tarnholm Works line 2: 22:00 to 06:00 UTC.
const FROM = Date.UTC(2026, 10, 30, 22, 0, 0);
const TO = FROM + 8 * H;

function tr(atMs: number, advisoryId: string, transition: AdvisoryTransition["transition"], to: AdvisoryTransition["to"], tier: AdvisoryTransition["tier"], value: number | null, limit: number, by = "millwarden", why = ""): AdvisoryTransition {
  return { kind: "advisory", atMs, advisoryId, ruleId: advisoryId, transition, from: "normal", to, tier, value, limit, by, why };
}
const st = (atMs: number, key: string, value: string | null): StateChange => ({ kind: "state", atMs, key, value });

describe("stateTimes", () => {
  it("splits the span by the state at its start and the changes inside it", () => {
    // grinding from 20:00 (before the shift), stopping at 23:00, standstill-loaded at 23:30, grinding at 04:00.
    const changes = [st(FROM - 2 * H, "phase.vm2", "grinding"), st(FROM + 1 * H, "phase.vm2", "stopping"), st(FROM + 1.5 * H, "phase.vm2", "standstill-loaded"), st(FROM + 6 * H, "phase.vm2", "grinding")];
    const r = stateTimes(changes, FROM, TO);
    // grinding: 22:00–23:00 (1 h) + 04:00–06:00 (2 h) = 3 h; standstill-loaded 23:30–04:00 = 4.5 h; stopping 0.5 h. Sum 8 h.
    expect(r.unrecordedMs).toBe(0);
    expect(r.times).toEqual([
      { value: "standstill-loaded", ms: 4.5 * H },
      { value: "grinding", ms: 3 * H },
      { value: "stopping", ms: 0.5 * H },
    ]);
  });

  it("counts the time before the first record as unrecorded, and a null state as its own value", () => {
    const r = stateTimes([st(FROM + 2 * H, "inerting.bf2", "inert"), st(FROM + 7 * H, "inerting.bf2", null), st(TO + H, "inerting.bf2", "purging")], FROM, TO);
    // 22:00–00:00 unrecorded (2 h); inert 00:00–05:00 (5 h); unknown (null) 05:00–06:00 (1 h); the change after the span is ignored.
    expect(r.unrecordedMs).toBe(2 * H);
    expect(r.times).toEqual([
      { value: "inert", ms: 5 * H },
      { value: null, ms: 1 * H },
    ]);
  });
});

describe("extreme", () => {
  it("takes a reduced point's band, ignores nulls and points outside the span", () => {
    const pts: SeriesPoint[] = [
      { tMs: FROM - MIN, value: -50 }, // before the span
      { tMs: FROM, value: 12.5 },
      { tMs: FROM + MIN, value: 11, min: 4.2, max: 14 },
      { tMs: FROM + 2 * MIN, value: null },
      { tMs: FROM + 3 * MIN, value: 6.1 },
    ];
    expect(extreme(pts, FROM, TO, "min")).toEqual({ value: 4.2, atMs: FROM + MIN, points: 3 });
    expect(extreme(pts, FROM, TO, "max")).toEqual({ value: 14, atMs: FROM + MIN, points: 3 });
    expect(extreme([{ tMs: FROM, value: null }], FROM, TO, "max")).toEqual({ value: null, atMs: null, points: 0 });
  });
});

describe("analyserOutages", () => {
  it("lists each non-ok stretch that overlaps the span, clipped to it, an open one to the end", () => {
    const byKey = new Map([
      // Function check from 21:50 to 22:20: 20 min inside the span.
      ["analyser.bf2-a213", [st(FROM - 10 * MIN, "analyser.bf2-a213", "function-check"), st(FROM + 20 * MIN, "analyser.bf2-a213", "ok")]],
      // Stale at 05:15, still stale at 06:00: 45 min, open.
      ["analyser.fs2-a313", [st(FROM - H, "analyser.fs2-a313", "ok"), st(TO - 45 * MIN, "analyser.fs2-a313", "stale")]],
      // Frozen well before the shift and ok again before it: not listed.
      ["analyser.vm2-a113", [st(FROM - 3 * H, "analyser.vm2-a113", "frozen"), st(FROM - 2 * H, "analyser.vm2-a113", "ok")]],
      ["phase.vm2", [st(FROM, "phase.vm2", "grinding")]],
    ]);
    expect(analyserOutages(byKey, FROM, TO)).toEqual([
      { analyserId: "bf2-a213", value: "function-check", startMs: FROM - 10 * MIN, endMs: FROM + 20 * MIN, durationMs: 20 * MIN },
      { analyserId: "fs2-a313", value: "stale", startMs: TO - 45 * MIN, endMs: null, durationMs: 45 * MIN },
    ]);
  });
});

describe("computeHandover", () => {
  const input = (over: Partial<HandoverInput> = {}): HandoverInput => ({
    fromMs: FROM,
    toMs: TO,
    plant: {
      units: [
        { id: "vm2", name: "Vertical roller mill VM2", hasOxygen: true },
        { id: "hgg2", name: "Hot-gas generator", hasOxygen: false },
      ],
      dewPoints: [{ id: "bf2-outlet", name: "Bag filter outlet", unitId: "bf2" }],
      coPoints: [{ id: "bf2-outlet", name: "Bag filter outlet", unitId: "bf2" }],
    },
    transitions: [
      tr(FROM + 10 * MIN, "co-gradient-bf2", "raise", "unack", "caution", 6.2, 5),
      tr(FROM + 14 * MIN, "co-gradient-bf2", "escalate", "unack", "warning", 17.5, 15),
      tr(FROM + 16 * MIN, "co-gradient-bf2", "ack", "ack", "warning", 18, 15, "t.operator", "filter hopper checked"),
      tr(FROM + 50 * MIN, "co-gradient-bf2", "clear", "normal", "warning", 2, 15),
      tr(FROM + 2 * H, "o2-margin-vm2", "raise", "unack", "notice", 1.4, 1.5),
      tr(FROM + 2 * H + 5 * MIN, "o2-margin-vm2", "shelve", "shelved", "notice", 1.3, 1.5, "k.engineer", "O2 analyser calibration"),
      // Outside the span: left out.
      tr(TO + MIN, "co-level-bf2", "raise", "unack", "warning", 450, 400),
    ],
    states: [st(FROM - H, "phase.vm2", "grinding"), st(FROM + 3 * H, "phase.vm2", "stopping"), st(FROM - H, "inerting.vm2", "inert"), st(FROM + 3 * H, "inerting.vm2", "marginal"), st(FROM + 4 * H, "inerting.vm2", "inert")],
    series: (key) =>
      (
        ({
          "co.bf2-outlet.gradientPpmPerMin": [
            { tMs: FROM + 12 * MIN, value: 9 },
            { tMs: FROM + 15 * MIN, value: 18.4 },
            { tMs: FROM + 30 * MIN, value: 3 },
          ],
          "dewpoint.bf2-outlet.marginK": [
            { tMs: FROM + H, value: 31.2 },
            { tMs: FROM + 5 * H, value: 24.8, min: 22.9, max: 26 },
          ],
          "o2.vm2.marginPctPt": [
            { tMs: FROM + 2 * H, value: 1.4 },
            { tMs: FROM + 2 * H + 3 * MIN, value: 1.1 },
          ],
        }) as Record<string, SeriesPoint[]>
      )[key] ?? [],
    ...over,
  });

  it("sums up the advisories, their handling, the extremes and the times in state", () => {
    const h = computeHandover(input());
    expect(h.hours).toBe(8);
    expect(h.advisoryOnly).toMatch(/ADVISORY ONLY/);
    // Warning first (highest tier), then the notice.
    expect(h.advisories.map((a) => a.advisoryId)).toEqual(["co-gradient-bf2", "o2-margin-vm2"]);
    const co = h.advisories[0]!;
    // One raise, escalated to warning; the worst excess is 17.5 − 15 = 2.5 (the raise's 6.2 − 5 = 1.2 is less).
    expect(co).toMatchObject({ raises: 1, firstRaiseMs: FROM + 10 * MIN, highestTier: "warning", worstValue: 17.5, worstLimit: 15, stateAtEnd: "normal" });
    expect(co.actions).toEqual([{ atMs: FROM + 16 * MIN, kind: "ack", by: "t.operator", why: "filter hopper checked" }]);
    // A low rule: 1.5 − 1.4 = 0.1 past its limit.
    expect(h.advisories[1]).toMatchObject({ raises: 1, highestTier: "notice", worstValue: 1.4, worstLimit: 1.5, stateAtEnd: "shelved" });
    expect(h.advisories[1]!.actions).toEqual([{ atMs: FROM + 2 * H + 5 * MIN, kind: "shelve", by: "k.engineer", why: "O2 analyser calibration" }]);

    expect(h.coGradientPeaks).toEqual([{ key: "co.bf2-outlet.gradientPpmPerMin", id: "bf2-outlet", name: "Bag filter outlet", unitId: "bf2", value: 18.4, atMs: FROM + 15 * MIN, points: 3 }]);
    expect(h.dewPointMarginLows[0]).toMatchObject({ value: 22.9, atMs: FROM + 5 * H, unitId: "bf2" });
    // Only units with an oxygen section.
    expect(h.o2MarginLows.map((e) => [e.id, e.value])).toEqual([["vm2", 1.1]]);

    // grinding 22:00–01:00 = 3 h, stopping 01:00–06:00 = 5 h.
    expect(h.phases).toEqual([{ key: "phase.vm2", unitId: "vm2", unrecordedMs: 0, times: [{ value: "stopping", ms: 5 * H }, { value: "grinding", ms: 3 * H }] }]);
    // inert 3 h + 4 h = 7 h (22:00–01:00, 02:00–06:00), marginal 1 h.
    expect(h.inerting[0]!.times).toEqual([{ value: "inert", ms: 7 * H }, { value: "marginal", ms: 1 * H }]);
    expect(h.analyserOutages).toEqual([]);
  });

  it("leaves out an advisory neither raised nor handled in the span (only cleared in it)", () => {
    const h = computeHandover(input({ transitions: [tr(FROM + MIN, "co-level-bf2", "clear", "normal", "caution", 90, 150)] }));
    expect(h.advisories).toEqual([]);
  });

  it("refuses an empty or reversed span", () => {
    expect(() => computeHandover(input({ toMs: FROM }))).toThrow(/expected finite fromMs < toMs/);
  });
});
