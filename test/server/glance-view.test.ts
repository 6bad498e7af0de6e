// The glance screen's newer pure helpers (dashboard/glance-model.js): the operating phase in
// words, the lowest dew point margin's trend, a quiet feed, and the data panel's grouping of
// signal problems. And the static route of the trends page's plotting library.
import { describe, expect, it } from "vitest";
import { PHASE_WORDS, dewTrendText, phaseText, quietText, shortReason, signalProblems } from "../../dashboard/glance-model.js";
import { buildApp } from "../../src/server/app.js";
import { FAKE_NOW_MS, FakeDeps, fakePlantState } from "./fake-deps.js";

const MIN = 60_000;

describe("phaseText", () => {
  it("has a word for every phase of DESIGN.md §3 and says how long the phase has lasted by the data time", () => {
    for (const p of ["standstill-empty", "standstill-loaded", "warm-up", "inerting", "starting", "grinding", "stopping", "maintenance", "unknown"]) {
      expect(PHASE_WORDS[p], p).toBeTypeOf("string");
    }
    expect(phaseText({ phase: "standstill-loaded", sinceMs: FAKE_NOW_MS - 185 * MIN }, FAKE_NOW_MS)).toEqual({ word: "standstill, coal inside", since: "for 3 h 05 min" });
    // A phase entered "after" the data's now (a clock step) gets no duration rather than a negative one.
    expect(phaseText({ phase: "grinding", sinceMs: FAKE_NOW_MS + 1000 }, FAKE_NOW_MS).since).toBe("");
  });
});

describe("dewTrendText", () => {
  const summary = fakePlantState().dewPointSummary[0]!;
  it("gives the falling trend and the predicted time to condensation", () => {
    // Fake: -0.12 K/min, 9050 s to condensation.
    expect(dewTrendText(summary)).toEqual({ trend: "falling 0.12 K/min", time: "condensation in 2 h 30 min at this trend" });
  });
  it("says 'not approaching' for a trend that is not falling (JSON carries the endless time as null)", () => {
    // JSON.stringify(Infinity) is "null" (ECMA-262, JSON.stringify: non-finite numbers serialise as null).
    expect(JSON.parse(JSON.stringify({ t: Number.POSITIVE_INFINITY })).t).toBeNull();
    expect(dewTrendText({ ...summary, lowestMarginTrendKPerMin: 0.05, shortestTimeToCondensationS: null })).toEqual({ trend: "rising 0.05 K/min", time: "condensation not approaching" });
    expect(dewTrendText({ ...summary, lowestMarginTrendKPerMin: -0.002, shortestTimeToCondensationS: null })).toEqual({ trend: "steady 0.00 K/min", time: null });
  });
  it("is silent on an unknown summary and says when the trend is not known yet", () => {
    expect(dewTrendText({ ...summary, status: "unknown" })).toBeNull();
    expect(dewTrendText({ ...summary, lowestMarginTrendKPerMin: null })).toEqual({ trend: "trend not known yet", time: null });
  });
});

describe("quietText", () => {
  it("speaks only once the feed has been silent for the given time", () => {
    expect(quietText(0, 50_000, 20_000)).toBeNull();
    expect(quietText(10_000, 29_999, 20_000)).toBeNull();
    expect(quietText(10_000, 30_000, 20_000)).toBe("no update for 20 s");
    expect(quietText(10_000, 10_000 + 3 * MIN, 20_000)).toBe("no update for 3 min");
  });
});

describe("signalProblems and shortReason", () => {
  it("groups the signals by what is wrong with them, in the signal list's order", () => {
    const state = fakePlantState();
    // Fake: the silo O2 stale for 12 min, the silo CO in function check (and uncertain).
    expect(signalProblems(state.signals, state.nowMs)).toEqual([
      { problem: "no data 12 min", names: ["S21 silo O2 (S21-AT-311)"] },
      { problem: "function check", names: ["S21 silo CO (S21-AT-312)"] },
    ]);
    const allStale = state.signals.map((s) => ({ ...s, stale: true, receiveTimeMs: state.nowMs - 5000 }));
    expect(signalProblems(allStale, state.nowMs)).toEqual([{ problem: "no data 5 s", names: state.signals.map((s) => s.name) }]);
  });
  it("keeps the first of several reasons and counts the rest", () => {
    expect(shortReason("a: no data; b: no data; c: bad")).toBe("a: no data (+2 more)");
    expect(shortReason("only one")).toBe("only one");
    // A "; " inside parentheses is part of its reason.
    expect(shortReason("window filling (21 points over 20 s; needs 30 over 150 s)")).toBe("window filling (21 points over 20 s; needs 30 over 150 s)");
    expect(shortReason("window filling (21 points; needs 30); x: bad")).toBe("window filling (21 points; needs 30) (+1 more)");
    expect(shortReason(null)).toBe("");
  });
});

describe("GET /vendor/uplot/*", () => {
  it("serves the plotting library's module and stylesheet from node_modules, and nothing else of it", async () => {
    const app = await buildApp(new FakeDeps());
    try {
      const js = await app.inject({ method: "GET", url: "/vendor/uplot/uPlot.esm.js" });
      expect(js.statusCode).toBe(200);
      expect(js.headers["content-type"]).toMatch(/javascript/);
      expect(js.body).toContain("export { uPlot as default }");
      const css = await app.inject({ method: "GET", url: "/vendor/uplot/uPlot.min.css" });
      expect(css.statusCode).toBe(200);
      expect(css.headers["content-type"]).toMatch(/text\/css/);
      for (const other of ["/vendor/uplot/uPlot.cjs.js", "/vendor/uplot/../package.json", "/vendor/uplot/uPlot.d.ts"]) {
        expect((await app.inject({ method: "GET", url: other })).statusCode, other).toBe(404);
      }
      // The trends page itself is a dashboard file.
      const page = await app.inject({ method: "GET", url: "/trends.html" });
      expect(page.statusCode).toBe(200);
      expect(page.body).toContain('<script type="module" src="trends.js"></script>');
    } finally {
      await app.close();
    }
  });
});
