// Pure helpers of the glance screen (dashboard/glance-model.js). The rules come from
// the dashboard brief: tier order warning > caution > notice then newest; stale signals
// read "no data N min"; the lowest dew point margin leads (DESIGN.md §4); sparkline
// history bounded in memory; the held states of ISA-18.2 (shelved, suppressed by design,
// out of service) listed apart and in words (DESIGN.md §5).
import { describe, expect, it } from "vitest";
import {
  SHELVE_CHOICES,
  advisoryActions,
  advisoryMarks,
  advisoryStateText,
  commandBody,
  createHistory,
  formatAge,
  formatClock,
  formatDateTime,
  formatNumber,
  formatSigned,
  formatWhen,
  isHeld,
  lowestMargin,
  needsAttention,
  o2BarGeometry,
  readSeries,
  recordPoint,
  pruneHistory,
  sortAdvisories,
  sparklineRuns,
  splitAdvisories,
  staleText,
  worstTierFor,
} from "../../dashboard/glance-model.js";
import type { AdvisoryView } from "../../src/core/types.js";
import { parseCommandBody } from "../../src/server/params.js";
import { FAKE_POLICY, fakePlantState, FAKE_NOW_MS } from "./fake-deps.js";

const MIN = 60_000;
const HOUR = 60 * MIN;

/** The fake plant's advisories by id (from the real advisory board, see fake-deps.ts). */
function fakeAdvisory(id: string): AdvisoryView {
  const a = fakePlantState().advisories.find((x) => x.id === id);
  if (!a) throw new Error(`no fake advisory "${id}"`);
  return a;
}

describe("sortAdvisories", () => {
  it("orders by tier (warning, caution, notice), then newest first, without touching the input", () => {
    const list = fakePlantState().advisories.reverse();
    const before = list.map((a) => a.id);
    const sorted = sortAdvisories(list);
    expect(sorted.map((a) => [a.tier, a.id, a.raisedAtMs - FAKE_NOW_MS])).toEqual([
      ["warning", "co-rise-bf2-outlet", -1 * MIN],
      ["caution", "co-rate-bf2-outlet", -3 * MIN],
      ["caution", "o2-time-vm2", -22 * MIN],
      ["caution", "co-peak-vm2-outlet", -30 * MIN],
      ["caution", "co-rate-s21-top", -50 * MIN],
      ["caution", "dew-margin-bf2-hopper", -150 * MIN],
      ["caution", "o2-margin-bf2", -26 * HOUR],
      ["notice", "o2-margin-vm2", -200_000],
      ["notice", "dew-margin-bf2-outlet", -25 * MIN],
      ["notice", "dew-margin-vm2-outlet", -95 * MIN],
    ]);
    expect(list.map((a) => a.id)).toEqual(before);
  });
});

describe("advisory states in words", () => {
  it("lists the held states apart, each part in tier order, a held warning included", () => {
    const list = fakePlantState().advisories;
    const { annunciated, held } = splitAdvisories(list);
    expect(annunciated.map((a) => a.id)).toEqual([
      "co-rise-bf2-outlet",
      "co-rate-bf2-outlet",
      "co-peak-vm2-outlet",
      "o2-margin-bf2",
      "o2-margin-vm2",
      "dew-margin-bf2-outlet",
      "dew-margin-vm2-outlet",
    ]);
    expect(held.map((a) => [a.id, a.state])).toEqual([
      ["o2-time-vm2", "shelved"],
      ["co-rate-s21-top", "suppressed"],
      ["dew-margin-bf2-hopper", "out-of-service"],
    ]);
    // Warning tier is never hidden: held, it is still in the held list.
    const heldWarning = { ...fakeAdvisory("co-rise-bf2-outlet"), state: "suppressed" as const, suppressedBy: "vm2 is stopping" };
    expect(splitAdvisories([heldWarning]).held).toEqual([heldWarning]);
    expect(isHeld(heldWarning)).toBe(true);
  });

  it("says who shelved it, why, until when and how long is left (data time)", () => {
    const a = fakeAdvisory("o2-time-vm2");
    const until = FAKE_NOW_MS + 40 * MIN;
    expect(advisoryStateText(a, FAKE_NOW_MS)).toEqual({
      word: "shelved",
      text: `shelved by P. Lindqvist until ${formatClock(until)} (40 min left) \u00b7 condition now normal`,
      detail: "reason: fresh-air damper stroke test by maintenance; O2 rise expected",
      acked: true,
    });
    const oneShot = { ...a, oneShot: true, conditionActive: true };
    expect(advisoryStateText(oneShot, FAKE_NOW_MS).text).toBe(`shelved by P. Lindqvist until it clears (at most until ${formatClock(until)})`);
  });

  it("says why an advisory is suppressed by design, and that it shows only while its condition is present", () => {
    const s = advisoryStateText(fakeAdvisory("co-rate-s21-top"), FAKE_NOW_MS);
    expect(s.word).toBe("suppressed");
    expect(s.text).toBe("suppressed by design: s21-co in function check");
    expect(s.detail).toContain("shown only while its condition is present");
  });

  it("says who took an advisory out of service and why", () => {
    expect(advisoryStateText(fakeAdvisory("dew-margin-bf2-hopper"), FAKE_NOW_MS)).toEqual({
      word: "out of service",
      text: "out of service \u00b7 taken out by M. Okafor",
      detail: "reason: BF2-TT-215 reads low (failing thermocouple); replacement ordered",
      acked: true,
    });
  });

  it("says a latched advisory waits for a reset, and whether anyone has acknowledged it", () => {
    const latched = fakeAdvisory("co-peak-vm2-outlet");
    expect(advisoryStateText(latched, FAKE_NOW_MS)).toMatchObject({ word: "latched", text: "returned to normal, kept until reset \u00b7 unacknowledged", acked: false });
    expect(needsAttention(latched)).toBe(true);
    const acked = { ...latched, ackedBy: "A. Operator", ackedAtMs: FAKE_NOW_MS };
    expect(advisoryStateText(acked, FAKE_NOW_MS)).toMatchObject({ text: "returned to normal, kept until reset \u00b7 acknowledged by A. Operator", acked: true });
    expect(needsAttention(acked)).toBe(false);
  });

  it("keeps the ordinary states' words", () => {
    const acked = fakeAdvisory("o2-margin-bf2");
    // Acknowledged a day ago: the time carries its date.
    expect(advisoryStateText(acked, FAKE_NOW_MS)).toEqual({ word: null, text: `acknowledged by J. Ferris at ${formatDateTime(FAKE_NOW_MS - 25 * HOUR)}`, detail: null, acked: true });
    expect(formatWhen(FAKE_NOW_MS - 11 * HOUR, FAKE_NOW_MS)).toBe(formatClock(FAKE_NOW_MS - 11 * HOUR));
    expect(formatWhen(FAKE_NOW_MS - 12 * HOUR, FAKE_NOW_MS)).toBe(formatDateTime(FAKE_NOW_MS - 12 * HOUR));
    expect(advisoryStateText(fakeAdvisory("co-rate-bf2-outlet"), FAKE_NOW_MS).text).toBe("unacknowledged");
    expect(advisoryStateText(fakeAdvisory("dew-margin-vm2-outlet"), FAKE_NOW_MS).text).toBe("returned to normal \u00b7 unacknowledged");
  });

  it.each([
    ["co-rate-bf2-outlet", true],
    ["dew-margin-vm2-outlet", true],
    ["o2-margin-bf2", false],
    ["o2-time-vm2", false],
    ["co-rate-s21-top", false],
    ["dew-margin-bf2-hopper", false],
  ])("needsAttention(%s) = %s", (id, expected) => {
    expect(needsAttention(fakeAdvisory(id))).toBe(expected);
  });
});

describe("advisory actions and marks", () => {
  it.each([
    // warning, unacknowledged: acknowledge only, never offered for shelving
    ["co-rise-bf2-outlet", ["ack"]],
    ["co-rate-bf2-outlet", ["ack", "shelve"]],
    // acknowledged and present: it can still be shelved
    ["o2-margin-bf2", ["shelve"]],
    // returned to normal: nothing left to shelve
    ["dew-margin-vm2-outlet", ["ack"]],
    ["co-peak-vm2-outlet", ["reset"]],
    ["o2-time-vm2", ["unshelve"]],
    // by design and administrative: nothing for an operator on this screen
    ["co-rate-s21-top", []],
    ["dew-margin-bf2-hopper", []],
  ])("%s offers %j", (id, actions) => {
    expect(advisoryActions(fakeAdvisory(id))).toEqual(actions);
  });

  it("names the nuisance marks as words", () => {
    expect(advisoryMarks(fakeAdvisory("o2-margin-vm2"))).toEqual(["chattering"]);
    expect(advisoryMarks(fakeAdvisory("o2-margin-bf2"))).toEqual(["standing"]);
    expect(advisoryMarks(fakeAdvisory("co-rate-bf2-outlet"))).toEqual([]);
    expect(advisoryMarks({ firstOut: true, chattering: true, standing: true })).toEqual(["first out", "chattering", "standing"]);
  });
});

describe("commandBody", () => {
  it("builds the body the API takes, for every shelve choice", () => {
    for (const choice of SHELVE_CHOICES) {
      const made = commandBody("shelve", { reason: " purge ", choice: choice.id });
      expect(made.error).toBeUndefined();
      const body = made.body!;
      // What the form sends passes the server's own validation unchanged.
      expect(parseCommandBody("shelve", body)).toEqual(body);
      expect(body).toEqual(choice.oneShot ? { reason: "purge", oneShot: true } : { reason: "purge", durationS: choice.durationS });
      // No timed choice beyond the schema's default longest shelve (advisoryPolicy.maxShelveS).
      if (!choice.oneShot) expect(choice.durationS).toBeLessThanOrEqual(FAKE_POLICY.maxShelveS);
    }
    expect(SHELVE_CHOICES.map((c) => c.label)).toEqual(["15 min", "1 h", "4 h", "8 h", "until it clears (one-shot)"]);
    // Who gives a command is the login's: the body never names anyone.
    expect(commandBody("ack", { reason: "ignored" })).toEqual({ body: {} });
    expect(parseCommandBody("ack", commandBody("ack", {}).body)).toEqual({});
  });

  it.each([
    ["shelve", { reason: " ", choice: "1h" }, /A reason is needed to shelve/],
    ["shelve", { reason: "r".repeat(501), choice: "1h" }, /reason is longer than 500 characters/],
    ["shelve", { reason: "purge", choice: null }, /Choose how long/],
    ["shelve", { reason: "purge", choice: "2d" }, /Choose how long/],
  ] as const)("%s %j says what is missing", (kind, fields, why) => {
    const made = commandBody(kind, fields);
    expect(made.body).toBeUndefined();
    expect(made.error).toMatch(why);
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

  it("finds the worst active tier pointing at an element, ignoring returned, latched and held ones", () => {
    const { advisories } = fakePlantState();
    expect(worstTierFor(advisories, "co", "bf2-outlet")).toBe("warning");
    expect(worstTierFor(advisories, "dewpoint", "bf2-outlet")).toBe("notice");
    expect(worstTierFor(advisories, "o2", "bf2")).toBe("caution");
    // rtn-unack
    expect(worstTierFor(advisories, "dewpoint", "vm2-outlet")).toBeNull();
    // latched
    expect(worstTierFor(advisories, "co", "vm2-outlet")).toBeNull();
    // suppressed, out of service, shelved (and a returned one beside it)
    expect(worstTierFor(advisories, "co", "s21-top")).toBeNull();
    expect(worstTierFor(advisories, "dewpoint", "bf2-hopper")).toBeNull();
    expect(worstTierFor(advisories, "o2", "vm2")).toBeNull();
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
