// Pure helpers of the trends page (dashboard/trends-model.js), on the fake plant of
// fake-deps.ts (Tarnholm Works line 2, invented). What is checked is the page's contract:
// the series it offers are the derived keys of DEVELOPERS.md ("Derived keys") plus the raw
// signals; a URL round-trips; one pane per engineering unit; the limits drawn are the ones the
// daemon tells (the unit's O2 limit and marginal band, the thresholds of the rules met so far);
// bad samples are gaps, never points.
import { describe, expect, it } from "vitest";
import {
  DEFAULT_RANGE,
  MAX_SERIES,
  PENS,
  RANGES,
  advisoryMarks,
  buildQuery,
  defaultSelection,
  extent,
  limitsFor,
  markBelongs,
  panesFor,
  parseQuery,
  pointsFor,
  seriesCatalog,
  timeWindow,
  trendColumns,
} from "../../dashboard/trends-model.js";
import type { AdvisoryTransition } from "../../src/core/types.js";
import { FAKE_NOW_MS, fakeAdvisoryBoard, fakePlantState } from "./fake-deps.js";

const HOUR = 3_600_000;
const state = fakePlantState();
const catalog = seriesCatalog(state);
const keys = catalog.map((s) => s.key);

describe("seriesCatalog", () => {
  it("offers each family's derived keys by the names of DEVELOPERS.md, with their units", () => {
    const unitOf = (k: string) => catalog.find((s) => s.key === k)?.unit;
    expect(unitOf("o2.vm2.o2PctVol")).toBe("% vol");
    expect(unitOf("o2.vm2.marginPctPt")).toBe("%-pt");
    expect(unitOf("co.bf2-outlet.gradientPpmPerMin")).toBe("ppm/min");
    expect(unitOf("co.bf2-outlet.riseAboveBaselinePpm")).toBe("ppm");
    expect(unitOf("co-rise.bf2.risePpm")).toBe("ppm");
    expect(unitOf("dewpoint.lowest.marginK")).toBe("K");
    expect(unitOf("dewpoint.bf2-outlet.dewPointC")).toBe("°C");
  });

  it("lists every raw signal once, the CO signals under CO with their point's name", () => {
    for (const s of state.signals) expect(keys.filter((k) => k === s.id)).toHaveLength(1);
    expect(catalog.find((s) => s.key === "bf2-co")).toMatchObject({ group: "CO", label: "CO Filter outlet", unit: "ppm" });
    expect(catalog.find((s) => s.key === "vm2-tt-111")).toMatchObject({ group: "Signals", unit: "°C" });
  });

  it("offers no O2 series for a unit without an O2 watch", () => {
    const withoutO2 = state.units.filter((u) => u.inerting === null).map((u) => u.id);
    for (const id of withoutO2) expect(keys.some((k) => k.startsWith(`o2.${id}.`))).toBe(false);
  });
});

describe("the page's URL", () => {
  it("defaults to 8 h with the glance screen's content: CO and its rate at each point, each O2, the lowest margin", () => {
    const q = parseQuery("", catalog, state);
    expect(q.range).toBe(DEFAULT_RANGE);
    expect(q.zoom).toBeNull();
    expect(q.series).toEqual(defaultSelection(catalog, state));
    expect(q.series).toContain("bf2-co");
    expect(q.series).toContain("co.bf2-outlet.gradientPpmPerMin");
    expect(q.series).toContain("o2.vm2.o2PctVol");
    expect(q.series).toContain("dewpoint.lowest.marginK");
  });

  it("round-trips range, series and zoom, and drops what the daemon does not offer", () => {
    const page = { range: "24h", series: ["bf2-co", "o2.bf2.o2PctVol"], zoom: { fromMs: FAKE_NOW_MS - HOUR, toMs: FAKE_NOW_MS } };
    const back = parseQuery(buildQuery(page), catalog, state);
    expect(back).toEqual({ ...page, unknown: [] });
    const odd = parseQuery("?range=3h&series=bf2-co,nonsense.key&from=9&to=3", catalog, state);
    expect(odd.range).toBe(DEFAULT_RANGE);
    expect(odd.series).toEqual(["bf2-co"]);
    expect(odd.unknown).toEqual(["nonsense.key"]);
    expect(odd.zoom).toBeNull();
  });

  it(`keeps at most ${MAX_SERIES} series`, () => {
    expect(parseQuery(`?series=${keys.join(",")}`, catalog, state).series).toHaveLength(Math.min(MAX_SERIES, keys.length));
  });
});

describe("time window and panes", () => {
  it("ends a range at the data's now, and a zoom overrides the range", () => {
    expect(RANGES.map((r) => r.id)).toEqual(["1h", "8h", "24h", "7d"]);
    expect(timeWindow("7d", null, FAKE_NOW_MS)).toEqual({ fromMs: FAKE_NOW_MS - 7 * 24 * HOUR, toMs: FAKE_NOW_MS });
    expect(timeWindow("1h", { fromMs: 5, toMs: 9 }, FAKE_NOW_MS)).toEqual({ fromMs: 5, toMs: 9 });
  });

  it("puts series of one unit into one pane, in the order chosen", () => {
    const panes = panesFor(["bf2-co", "co.bf2-outlet.gradientPpmPerMin", "vm2-co", "o2.vm2.o2PctVol"], catalog);
    expect(panes.map((p) => p.unit)).toEqual(["ppm", "ppm/min", "% vol"]);
    expect(panes[0]!.series.map((s) => s.key)).toEqual(["bf2-co", "vm2-co"]);
  });

  it("asks for about one point per pixel column, within the API's 1..10,000", () => {
    expect(pointsFor(1600)).toBe(1600);
    expect(pointsFor(20)).toBe(100);
    expect(pointsFor(50_000)).toBe(10_000);
  });

  it("gives every pen its own dash pattern, so no two lines differ by colour alone", () => {
    const patterns = PENS.map((p) => p.dash.join(","));
    expect(new Set(patterns).size).toBe(PENS.length);
  });
});

describe("trendColumns", () => {
  it("turns bad samples into gaps and keeps each downsampled point's band", () => {
    const c = trendColumns([
      [1000, 10, "good"],
      [2000, 11, "good", 9, 14],
      [3000, 99, "bad"],
      [4000, null, "good"],
    ]);
    expect(c.t).toEqual([1000, 2000, 3000, 4000]);
    expect(c.v).toEqual([10, 11, null, null]);
    expect(c.lo).toEqual([10, 9, null, null]);
    expect(c.hi).toEqual([10, 14, null, null]);
    expect(c.banded).toBe(true);
    expect(trendColumns([[1000, 10, "good"]]).banded).toBe(false);
  });

  it("extent ignores gaps", () => {
    expect(extent([[1, null, 5], [undefined as unknown as number, -2]])).toEqual({ min: -2, max: 5 });
    expect(extent([[null]])).toBeNull();
  });
});

describe("limitsFor", () => {
  it("draws a unit's O2 limit and the start of its marginal band on the O2 series, on the limit's basis", () => {
    // Fake VM2: limit 10 % wet, marginal band 1.5 %-pt (fake-deps.ts).
    expect(limitsFor("o2.vm2.o2PctVol", state)).toEqual([
      { value: 10, tier: "warning", label: "O2 limit 10 % wet" },
      { value: 8.5, tier: "caution", label: "marginal from 8.5 %" },
    ]);
    // On the margin: 0 is the limit itself, the band's width is where marginal starts; the fake's
    // o2-margin-vm2 rule is active too, and its present tier's threshold is drawn beside them.
    const rule = state.advisories.find((a) => a.quantity === "o2.vm2.marginPctPt")!;
    const margin = limitsFor("o2.vm2.marginPctPt", state);
    expect(margin).toContainEqual({ value: 0, tier: "warning", label: "at the O2 limit" });
    expect(margin).toContainEqual({ value: 1.5, tier: "caution", label: "marginal below 1.5 pt" });
    expect(margin).toContainEqual({ value: rule.limit, tier: rule.tier, label: `${rule.tier} below ${rule.limit} ${rule.unit} (o2-margin-vm2)` });
    expect(margin).toHaveLength(3);
  });

  it("draws a rule's thresholds: the present tier from the advisory, the others from its transitions", () => {
    // The fake's filter CO rate rule: caution 5, warning 15 ppm/min (fake-deps.ts), active as a caution.
    const active = state.advisories.find((a) => a.quantity === "co.bf2-outlet.gradientPpmPerMin");
    expect(active).toBeDefined();
    const escalate: AdvisoryTransition = {
      kind: "advisory",
      atMs: FAKE_NOW_MS - 60_000,
      advisoryId: active!.id,
      ruleId: active!.ruleId,
      transition: "escalate",
      from: "unack",
      to: "unack",
      tier: active!.tier === "warning" ? "caution" : "warning",
      value: 16,
      limit: active!.tier === "warning" ? 5 : 15,
      by: "millwarden",
      why: "test",
    };
    const limits = limitsFor("co.bf2-outlet.gradientPpmPerMin", state, [escalate]);
    expect(limits.map((l) => [l.tier, l.value])).toEqual([
      ["warning", 15],
      ["caution", 5],
    ]);
    expect(limits[0]!.label).toBe(`warning above 15 ppm/min (${active!.ruleId})`);
    // A series no rule watches gets none.
    expect(limitsFor("vm2-tt-111", state, [escalate])).toEqual([]);
  });
});

describe("advisoryMarks", () => {
  const { transitions } = fakeAdvisoryBoard();
  it("keeps the raises, escalations, re-alerts and clears within the window, oldest first", () => {
    const marks = advisoryMarks(transitions, FAKE_NOW_MS - 24 * HOUR, FAKE_NOW_MS, state.advisories);
    expect(marks.length).toBeGreaterThan(0);
    for (const m of marks) expect(["raise", "escalate", "re-alert", "clear"]).toContain(m.transition);
    const times = marks.map((m) => m.atMs);
    expect(times).toEqual([...times].sort((a, b) => a - b));
    expect(marks.filter((m) => m.hollow).every((m) => m.transition === "clear")).toBe(true);
    const expected = transitions.filter((t) => ["raise", "escalate", "re-alert", "clear"].includes(t.transition) && t.atMs >= FAKE_NOW_MS - 24 * HOUR);
    expect(marks).toHaveLength(expected.length);
  });

  it("ties a mark to a pane by the advisory's quantity, and to every pane when that is not known", () => {
    const onScreen = advisoryMarks(transitions, 0, FAKE_NOW_MS, state.advisories).find((m) => m.quantity !== null)!;
    expect(onScreen.quantity).toBe(state.advisories.find((a) => a.id === onScreen.advisoryId)!.quantity);
    expect(markBelongs(onScreen, { series: [{ key: onScreen.quantity! }] })).toBe(true);
    expect(markBelongs(onScreen, { series: [{ key: "vm2-tt-111" }] })).toBe(false);
    expect(markBelongs({ quantity: null }, { series: [{ key: "vm2-tt-111" }] })).toBe(true);
  });

  it("names an advisory by its title while it is on screen, by its rule id after", () => {
    const marks = advisoryMarks(transitions, 0, FAKE_NOW_MS, state.advisories);
    const onScreen = marks.find((m) => state.advisories.some((a) => a.id === m.advisoryId));
    expect(onScreen?.title).toBe(state.advisories.find((a) => a.id === onScreen!.advisoryId)!.title);
    const gone = advisoryMarks(transitions, 0, FAKE_NOW_MS, []);
    expect(gone[0]!.title).toBe(transitions.find((t) => t.advisoryId === gone[0]!.advisoryId)!.ruleId);
  });
});
