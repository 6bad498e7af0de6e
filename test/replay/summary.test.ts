// The alarm-management summary from hand-built events; every expected figure is worked out
// by hand beside the check. Benchmarks: ISA-18.2 / EEMUA 191 as DESIGN.md §5 gives them
// (from memory): about 6 raises/h "very likely acceptable", 12/h "maximum manageable",
// flood = more than 10 raises in 10 min, priority mix about 80 / 15 / 5 %.
import { describe, expect, it } from "vitest";
import type { AdvisoryTransition, NuisanceEvent, StateChange, Tier, TransitionKind } from "../../src/core/types.js";
import { BENCHMARKS, summarize, verdictOf, type ReplayEvent } from "../../src/replay/summary.js";
import { renderSummary } from "../../src/replay/render.js";

const T0 = Date.UTC(2026, 0, 12, 6, 0, 0);
const MIN = 60_000;
const S = 1000;
const SPAN = { fromMs: T0, toMs: T0 + 120 * MIN }; // 2 h = 7,200,000 ms: 12 periods of 10 min, 2 of 1 h

function adv(atMs: number, advisoryId: string, tier: Tier, transition: TransitionKind = "raise"): AdvisoryTransition {
  return { kind: "advisory", atMs, advisoryId, ruleId: advisoryId, transition, from: "normal", to: "unack", tier, value: 1, limit: 1, by: "millwarden", why: "test" };
}
function nui(atMs: number, type: NuisanceEvent["type"], position: string, advisoryId: string | null, count: number): NuisanceEvent {
  return { kind: "nuisance", atMs, type, position, advisoryId, count, why: "test" };
}
const state = (atMs: number, key: string, value: string | null): StateChange => ({ kind: "state", atMs, key, value });
/** Advisories "f-…" go to the field position, all others to the control room. */
const positionOf = (id: string) => (id.startsWith("f-") ? "field" : "control-room");

/** The fixture used by most checks below. */
function fixture(): ReplayEvent[] {
  const ev: ReplayEvent[] = [
    // control room: 5 raises in the span (minutes 1, 2, 3, 65, 119), tiers notice ×3, caution, warning
    adv(T0 + 1 * MIN, "r1", "notice"),
    adv(T0 + 2 * MIN, "r1", "notice"),
    adv(T0 + 3 * MIN, "r1", "notice"),
    adv(T0 + 65 * MIN, "r3", "caution"),
    adv(T0 + 119 * MIN, "r2", "warning"),
    // not raises: never counted as load
    adv(T0 + 4 * MIN, "r1", "caution", "escalate"),
    adv(T0 + 5 * MIN, "r1", "caution", "clear"),
    // outside the span: left out
    adv(T0 - 1 * S, "r1", "warning"),
  ];
  // field: 14 raises of f-1, 20 s apart from minute 30 (30:00 .. 34:20), all in the 4th 10-minute period
  for (let k = 0; k < 14; k++) ev.push(adv(T0 + 30 * MIN + k * 20 * S, "f-1", "notice"));
  // The core's flood: starts at the 11th raise (k = 10: 30:00 + 200 s = 33:20), ends at 44:00.
  ev.push(nui(T0 + 33 * MIN + 20 * S, "flood-start", "field", "f-1", 11));
  ev.push(nui(T0 + 44 * MIN, "flood-end", "field", null, 4));
  // chatter of f-1: 30:40 .. 40:00, and again from 50:00 with no end (runs to the span's end)
  ev.push(nui(T0 + 30 * MIN + 40 * S, "chatter", "field", "f-1", 3));
  ev.push(nui(T0 + 40 * MIN, "chatter-end", "field", "f-1", 0));
  ev.push(nui(T0 + 50 * MIN, "chatter", "field", "f-1", 4));
  // standing: r1 reported at 100 and 110 min
  ev.push(nui(T0 + 100 * MIN, "standing", "control-room", "r1", 1));
  ev.push(nui(T0 + 110 * MIN, "standing", "control-room", "r1", 1));
  // states
  ev.push(state(T0, "phase.vm2", "standstill-empty"), state(T0 + 30 * MIN, "phase.vm2", "warm-up"), state(T0 + 60 * MIN, "phase.vm2", "grinding"));
  ev.push(state(T0 + 10 * MIN, "inerting.vm2", null), state(T0 + 20 * MIN, "inerting.vm2", "inert"));
  ev.push(state(T0, "inerting.bf2", "inert"));
  // handed over out of time order: the summary sorts
  return ev.reverse();
}

describe("summarize: advisory rates per operator position", () => {
  const s = summarize(fixture(), SPAN, positionOf, { positions: ["control-room", "lab"] });

  it("counts raises only, within the span", () => {
    // 5 control room + 14 field; the escalate, the clear and the raise before the span are not load.
    expect(s.raises).toBe(19);
    expect(s.eventsOutsideSpan).toBe(1);
    expect(s.transitions).toEqual({ clear: 1, escalate: 1, raise: 19 });
    // every configured position is listed, with or without raises
    expect(s.positions.map((p) => p.position)).toEqual(["control-room", "field", "lab"]);
  });

  it("gives the control room's average and peak per 10 min and per hour", () => {
    const p = s.positions[0]!;
    expect(p.raises).toBe(5);
    expect(p.perHour).toBeCloseTo(2.5, 12); // 5 raises / 2 h
    expect(p.verdict).toBe("very likely acceptable"); // 2.5 ≤ 6
    expect(p.per10Min.periods).toBe(12); // 120 min / 10
    expect(p.per10Min.average).toBeCloseTo(5 / 12, 12); // 5 raises over 12 periods
    expect(p.per10Min.peak).toBe(3); // minutes 1, 2, 3 in [0, 10)
    expect(p.per10Min.peakAtMs).toBe(T0);
    expect(p.perHourPeriods.periods).toBe(2);
    expect(p.perHourPeriods.average).toBeCloseTo(2.5, 12);
    expect(p.perHourPeriods.peak).toBe(3); // hour 0: minutes 1, 2, 3; hour 1: minutes 65, 119
    expect(p.perHourPeriods.peakAtMs).toBe(T0);
  });

  it("gives the field position's rate and its flood, counted here and as the core reported it", () => {
    const p = s.positions[1]!;
    expect(p.raises).toBe(14);
    expect(p.perHour).toBeCloseTo(7, 12); // 14 / 2 h
    expect(p.verdict).toBe("manageable"); // 6 < 7 ≤ 12
    expect(p.per10Min.peak).toBe(14);
    expect(p.per10Min.peakAtMs).toBe(T0 + 30 * MIN); // the 4th period, [30, 40) min
    expect(p.flood.periodsOverLimit).toBe(1); // 14 > 10 in [30, 40); no other period has a raise
    expect(p.flood.periodsOverLimitPct).toBeCloseTo(100 / 12, 12); // 1 of 12 periods = 8.33 %
    expect(p.flood.floods).toBe(1);
    expect(p.flood.timeInFloodMs).toBe(640 * S); // 44:00 − 33:20 = 10 min 40 s
    expect(p.flood.timeInFloodPct).toBeCloseTo((100 * 640) / 7200, 12); // 8.89 %
    // the flood touches [30, 40) and [40, 50): its last millisecond is 43:59.999
    expect(p.flood.periodsInCoreFlood).toBe(2);
    expect(p.flood.periodsInCoreFloodPct).toBeCloseTo(200 / 12, 12);
    // the two counts agree: the one period over the limit lies in the core's flood
    expect(p.flood.periodsOverLimitOutsideCoreFlood).toBe(0);
  });

  it("shows a position without raises with zeros", () => {
    const p = s.positions[2]!;
    expect(p).toMatchObject({ position: "lab", raises: 0, perHour: 0, verdict: "very likely acceptable" });
    expect(p.per10Min).toMatchObject({ peak: 0, peakAtMs: null, average: 0 });
  });

  it("gives the tier mix of raises beside the benchmark", () => {
    // notice 3 + 14 = 17, caution 1, warning 1, of 19
    expect(s.tiers).toEqual([
      { tier: "notice", raises: 17, pct: (100 * 17) / 19, benchmarkPct: 80 },
      { tier: "caution", raises: 1, pct: 100 / 19, benchmarkPct: 15 },
      { tier: "warning", raises: 1, pct: 100 / 19, benchmarkPct: 5 },
    ]);
  });

  it("lists the most frequent rules, ties by rule id", () => {
    expect(s.topRules.map((r) => [r.ruleId, r.raises])).toEqual([
      ["f-1", 14],
      ["r1", 3],
      ["r2", 1],
      ["r3", 1],
    ]);
    expect(s.topRules[0]!.pct).toBeCloseTo((100 * 14) / 19, 12); // 73.7 %
    expect(s.topRules[1]!.byTier).toEqual({ notice: 3, caution: 0, warning: 0 });
    expect(summarize(fixture(), SPAN, positionOf, { topRules: 2 }).topRules.map((r) => r.ruleId)).toEqual(["f-1", "r1"]);
  });

  it("lists chattering and standing advisories from the core's nuisance events", () => {
    expect(s.chattering).toEqual([
      {
        advisoryId: "f-1",
        position: "field",
        episodes: 2,
        maxCount: 4,
        // (40:00 − 30:40) + (120:00 − 50:00) = 560 s + 4,200 s
        chatteringMs: 4760 * S,
        firstAtMs: T0 + 30 * MIN + 40 * S,
      },
    ]);
    expect(s.standing).toEqual([{ advisoryId: "r1", position: "control-room", firstAtMs: T0 + 100 * MIN, reports: 2 }]);
  });

  it("gives the time in each phase and inerting state per unit", () => {
    expect(s.states.map((x) => x.key)).toEqual(["inerting.bf2", "phase.vm2", "inerting.vm2"]);
    const [bf2, phase, inert] = s.states as [(typeof s.states)[0], (typeof s.states)[0], (typeof s.states)[0]];
    expect(bf2).toMatchObject({ family: "inerting", subject: "bf2", unreportedMs: 0, times: [{ value: "inert", ms: 120 * MIN, pct: 100 }] });
    // standstill-empty 0-30 min, warm-up 30-60, grinding 60-120 (to the span's end); longest first
    expect(phase.times).toEqual([
      { value: "grinding", ms: 60 * MIN, pct: 50 },
      { value: "standstill-empty", ms: 30 * MIN, pct: 25 },
      { value: "warm-up", ms: 30 * MIN, pct: 25 },
    ]);
    // nothing reported for the first 10 min; cannot be told 10-20; inert 20-120
    expect(inert.unreportedMs).toBe(10 * MIN);
    expect(inert.times).toEqual([
      { value: "inert", ms: 100 * MIN, pct: (100 * 100) / 120 },
      { value: null, ms: 10 * MIN, pct: (100 * 10) / 120 },
    ]);
  });

  it("limits the advisory figures to one position, but not the states", () => {
    const f = summarize(fixture(), SPAN, positionOf, { positions: ["control-room", "field"], position: "field" });
    expect(f.position).toBe("field");
    expect(f.raises).toBe(14);
    expect(f.positions.map((p) => p.position)).toEqual(["field"]);
    expect(f.tiers[0]).toMatchObject({ tier: "notice", raises: 14, pct: 100 });
    expect(f.standing).toEqual([]); // r1 stands in the control room
    expect(f.chattering.map((c) => c.advisoryId)).toEqual(["f-1"]);
    expect(f.states).toHaveLength(3);
  });
});

describe("summarize: the two flood counts checked against each other", () => {
  it("flags a period over the limit that no flood of the core covers", () => {
    // 11 raises in [10, 20) min and no flood event: over the limit here, not in the core.
    const ev = Array.from({ length: 11 }, (_, k) => adv(T0 + 10 * MIN + k * 30 * S, "r1", "notice"));
    const p = summarize(ev, SPAN, positionOf).positions[0]!;
    expect(p.flood.periodsOverLimit).toBe(1);
    expect(p.flood.floods).toBe(0);
    expect(p.flood.periodsOverLimitOutsideCoreFlood).toBe(1);
  });

  it("does not count a period with exactly 10 raises (more than 10 is a flood)", () => {
    const ev = Array.from({ length: 10 }, (_, k) => adv(T0 + 10 * MIN + k * 30 * S, "r1", "notice"));
    expect(summarize(ev, SPAN, positionOf).positions[0]!.flood.periodsOverLimit).toBe(0);
  });

  it("runs a flood the core never ended to the span's end, and splits raises at period boundaries", () => {
    // 11 raises from 19:00 every 6 s: 10 in [19:00, 20:00) and 1 at 20:00 sharp, in the next period.
    const ev: ReplayEvent[] = Array.from({ length: 11 }, (_, k) => adv(T0 + 19 * MIN + k * 6 * S, "r1", "notice"));
    ev.push(nui(T0 + 20 * MIN, "flood-start", "control-room", "r1", 11));
    const p = summarize(ev, SPAN, positionOf).positions[0]!;
    expect(p.per10Min.peak).toBe(10); // [10, 20) holds 10, [20, 30) holds 1
    expect(p.flood.periodsOverLimit).toBe(0);
    expect(p.flood.timeInFloodMs).toBe(100 * MIN); // 20:00 .. 120:00
    expect(p.flood.periodsInCoreFlood).toBe(10); // periods 2 .. 11
  });
});

describe("summarize: edges", () => {
  it("gives no rates for a span of no length, and refuses a span that ends before it starts", () => {
    const s = summarize([adv(T0, "r1", "notice")], { fromMs: T0, toMs: T0 }, positionOf);
    expect(s.positions[0]).toMatchObject({ raises: 1, perHour: null, verdict: null });
    expect(s.positions[0]!.per10Min).toMatchObject({ periods: 1, peak: 1, average: null });
    expect(() => summarize([], { fromMs: T0, toMs: T0 - 1 }, positionOf)).toThrow(/expected a span with fromMs ≤ toMs/);
  });

  it("puts a raise at the span's very end in the last, short period", () => {
    // 25 min span: periods [0,10), [10,20), [20,25]; a raise at 25:00 is in the third.
    const s = summarize([adv(T0 + 25 * MIN, "r1", "notice")], { fromMs: T0, toMs: T0 + 25 * MIN }, positionOf);
    expect(s.positions[0]!.per10Min).toMatchObject({ periods: 3, peak: 1, peakAtMs: T0 + 20 * MIN });
  });

  it("judges rates against the benchmarks at their edges", () => {
    expect(verdictOf(BENCHMARKS.acceptablePerHour)).toBe("very likely acceptable");
    expect(verdictOf(6.01)).toBe("manageable");
    expect(verdictOf(BENCHMARKS.manageablePerHour)).toBe("manageable");
    expect(verdictOf(12.01)).toBe("over maximum manageable");
  });

  it("renders every section as text, marking the benchmarks as from memory", () => {
    const text = renderSummary(summarize(fixture(), SPAN, positionOf));
    expect(text).toMatch(/ISA-18\.2 \/ EEMUA 191, from memory/);
    expect(text).toMatch(/^field +14 +7\.00 +1\.17 +14 \(2026-01-12T06:30Z\) +7\.00 +14 \(2026-01-12T06:00Z\) +manageable$/m);
    expect(text).toMatch(/^f-1 +field +2 +4 +1:19:20 +2026-01-12T06:30:40\.000Z$/m); // 4,760 s = 1:19:20
    expect(text).toMatch(/^vm2 +inerting +\(before the first report\) +0:10:00 +8\.3 %$/m);
  });
});
