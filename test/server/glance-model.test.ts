// Pure helpers of the glance screen (dashboard/glance-model.js). The rules come from
// the dashboard brief: tier order warning > caution > notice then newest; stale signals
// read "no data N min"; the lowest dew point margin leads (DESIGN.md §4); sparkline
// history bounded in memory.
import { describe, expect, it } from "vitest";
import {
  createHistory,
  formatAge,
  formatNumber,
  formatSigned,
  lowestMargin,
  o2BarGeometry,
  readSeries,
  recordPoint,
  pruneHistory,
  sortAdvisories,
  sparklineRuns,
  staleText,
  worstTierFor,
} from "../../dashboard/glance-model.js";
import { fakePlantState, FAKE_NOW_MS } from "./fake-deps.js";

const MIN = 60_000;

describe("sortAdvisories", () => {
  it("orders by tier (warning, caution, notice), then newest first, without touching the input", () => {
    const list = fakePlantState().advisories;
    const before = list.map((a) => a.id);
    const sorted = sortAdvisories(list);
    expect(sorted.map((a) => [a.tier, a.raisedAtMs])).toEqual([
      ["warning", FAKE_NOW_MS - 1 * MIN],
      ["caution", FAKE_NOW_MS - 3 * MIN],
      ["caution", FAKE_NOW_MS - 14 * MIN],
      ["notice", FAKE_NOW_MS - 25 * MIN],
      ["notice", FAKE_NOW_MS - 95 * MIN],
    ]);
    expect(list.map((a) => a.id)).toEqual(before);
  });
});

describe("wording", () => {
  it.each([
    [0, "0 s"],
    [59_999, "59 s"],
    [60_000, "1 min"],
    [3 * MIN + 59_000, "3 min"],
    [60 * MIN, "1 h"],
    [125 * MIN, "2 h 05 min"],
    [24 * 60 * MIN, "1 d"],
    [(3 * 24 + 4) * 60 * MIN + 59 * MIN, "3 d 4 h"],
    [-5, "0 s"],
  ])("formatAge(%d) = %s", (ms, text) => {
    expect(formatAge(ms)).toBe(text);
  });

  it("signs gradients and uses the typographic minus", () => {
    expect(formatSigned(6.84, 1)).toBe("+6.8");
    expect(formatSigned(-0.44, 1)).toBe("\u22120.4");
    expect(formatSigned(-0.04, 1)).toBe("\u00b10.0");
    expect(formatSigned(null, 1)).toBe("\u2014");
    expect(formatNumber(Number.NaN, 1)).toBe("\u2014");
  });

  it("says how long a stale signal has been quiet, from the data time", () => {
    const state = fakePlantState();
    const stale = state.signals.find((s) => s.stale)!;
    expect(staleText(stale, state.nowMs)).toBe("no data 12 min");
    expect(staleText({ ...stale, receiveTimeMs: state.nowMs - 3 * 60 * MIN - 10 * MIN }, state.nowMs)).toBe("no data 3 h");
    expect(staleText({ ...stale, receiveTimeMs: null }, state.nowMs)).toBe("no data yet");
    expect(staleText(state.signals.find((s) => !s.stale), state.nowMs)).toBeNull();
  });
});

describe("o2BarGeometry", () => {
  it("places value, limit and marginal band on a 0..21 % scale", () => {
    const inerting = fakePlantState().units[1]!.inerting!;
    const g = o2BarGeometry(inerting);
    expect(g.value).toBeCloseTo(9.1 / 21, 12);
    expect(g.limit).toBeCloseTo(10 / 21, 12);
    expect(g.bandStart).toBeCloseTo(8.5 / 21, 12);
    expect(o2BarGeometry({ ...inerting, o2PctVol: null }).value).toBeNull();
    expect(o2BarGeometry({ ...inerting, o2PctVol: 25 }).value).toBe(1);
  });
});

describe("lowestMargin and worstTierFor", () => {
  it("leads with the smallest known margin and skips unknown locations", () => {
    const state = fakePlantState();
    expect(lowestMargin(state.dewPoints)?.id).toBe("bf2-outlet");
    const lower = state.dewPoints.map((p) => (p.id === "bf2-hopper" ? { ...p, status: "ok" as const, marginK: 4.2 } : p));
    expect(lowestMargin(lower)?.id).toBe("bf2-hopper");
    expect(lowestMargin(state.dewPoints.map((p) => ({ ...p, status: "unknown" as const, marginK: null })))).toBeNull();
  });

  it("finds the worst active tier pointing at an element, ignoring returned-to-normal ones", () => {
    const { advisories } = fakePlantState();
    expect(worstTierFor(advisories, "co", "bf2-outlet")).toBe("warning");
    expect(worstTierFor(advisories, "dewpoint", "bf2-outlet")).toBe("notice");
    expect(worstTierFor(advisories, "dewpoint", "vm2-outlet")).toBeNull();
    expect(worstTierFor(advisories, "co", "vm2-outlet")).toBeNull();
  });
});

describe("CO history ring", () => {
  it("keeps at most `capacity` points per id and only the window before now", () => {
    const h = createHistory(15 * MIN, 100);
    for (let i = 0; i < 1000; i += 1) recordPoint(h, "bf2-outlet", FAKE_NOW_MS + i * 1000, i);
    const end = FAKE_NOW_MS + 999 * 1000;
    const series = readSeries(h, "bf2-outlet", end);
    expect(series).toHaveLength(100);
    expect(series[0]).toEqual([FAKE_NOW_MS + 900 * 1000, 900]);
    expect(series.at(-1)).toEqual([end, 999]);
    // Twenty minutes on, everything has left the 15-minute window.
    expect(readSeries(h, "bf2-outlet", end + 20 * MIN)).toEqual([]);
  });

  it("ignores times that do not advance, keeps unknown as null, forgets pruned ids", () => {
    const h = createHistory(15 * MIN, 10);
    recordPoint(h, "a", 1000, 5);
    recordPoint(h, "a", 1000, 6);
    recordPoint(h, "a", 500, 7);
    recordPoint(h, "a", 2000, null);
    recordPoint(h, "b", 2000, 1);
    expect(readSeries(h, "a", 2000)).toEqual([
      [1000, 5],
      [2000, null],
    ]);
    pruneHistory(h, ["a"]);
    expect(readSeries(h, "b", 2000)).toEqual([]);
  });

  it("breaks the sparkline at unknown values and scales to at least minSpan", () => {
    const series: [number, number | null][] = [
      [0, 100],
      [10, 102],
      [20, null],
      [30, 101],
      [40, 101],
    ];
    const { runs, min, max } = sparklineRuns(series, 0, 40, 40, 20, 20);
    expect(runs).toHaveLength(2);
    expect([min, max]).toEqual([100, 102]);
    // Span 20 centred on 101: 100 sits at 9/20 of the height from the bottom.
    expect(runs[0]).toBe("0.0,11.0 10.0,9.0");
    expect(runs[1]).toBe("30.0,10.0 40.0,10.0");
  });
});
