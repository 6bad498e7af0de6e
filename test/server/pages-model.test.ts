// Pure helpers of the engineer's pages (dashboard/pages-model.js), on the fake plant of
// fake-deps.ts and hand-built transitions. The expected figures are counted by hand.
import { describe, expect, it } from "vitest";
import {
  actionText,
  analysersOfUnit,
  auditDetailText,
  durationText,
  filterHistory,
  historyFacets,
  historyFilterQuery,
  mayReadAudit,
  outOfServiceBody,
  pageActions,
  parseHandoverHours,
  parseHistoryFilter,
  purgeRows,
  shareText,
  unitDetail,
} from "../../dashboard/pages-model.js";
import { limitsFor } from "../../dashboard/trends-model.js";
import type { AdvisoryTransition } from "../../src/core/types.js";
import { FAKE_NOW_MS, fakePlantState } from "./fake-deps.js";

const state = fakePlantState();
const tr = (ruleId: string, tier: AdvisoryTransition["tier"], atMs = FAKE_NOW_MS): AdvisoryTransition => ({ kind: "advisory", atMs, advisoryId: ruleId, ruleId, transition: "raise", from: "normal", to: "unack", tier, value: 1, limit: 0, by: "millwarden", why: "" });

describe("history filter", () => {
  const history = [tr("co-gradient-bf2", "caution"), tr("co-gradient-bf2", "warning"), tr("o2-margin-vm2", "notice"), tr("gone-rule", "caution")];
  const rules = [
    { id: "co-gradient-bf2", unitId: "bf2" },
    { id: "o2-margin-vm2", unitId: "vm2" },
  ];

  it("reads and writes the query, leaving out what is not set", () => {
    expect(parseHistoryFilter("?unit=bf2&tier=warning")).toEqual({ unit: "bf2", tier: "warning", rule: "" });
    expect(historyFilterQuery({ unit: "bf2", tier: "", rule: "co-gradient-bf2" })).toBe("?unit=bf2&rule=co-gradient-bf2");
    expect(historyFilterQuery({ unit: "", tier: "", rule: "" })).toBe("");
  });

  it("filters by unit through the rules, by tier and by rule", () => {
    expect(filterHistory(history, { unit: "bf2", tier: "", rule: "" }, rules)).toHaveLength(2);
    expect(filterHistory(history, { unit: "bf2", tier: "warning", rule: "" }, rules)).toEqual([history[1]]);
    expect(filterHistory(history, { unit: "", tier: "caution", rule: "" }, rules)).toEqual([history[0], history[3]]);
    expect(filterHistory(history, { unit: "", tier: "", rule: "o2-margin-vm2" }, rules)).toEqual([history[2]]);
    // A rule no longer configured has no unit: it shows only without a unit filter.
    expect(filterHistory(history, { unit: "vm2", tier: "", rule: "" }, rules)).toEqual([history[2]]);
    expect(filterHistory(history, {}, rules)).toHaveLength(4);
  });

  it("offers the units of the rules and every rule seen", () => {
    expect(historyFacets(history, rules)).toEqual({ units: ["bf2", "vm2"], tiers: ["notice", "caution", "warning"], rules: ["co-gradient-bf2", "gone-rule", "o2-margin-vm2"] });
  });
});

describe("unit detail", () => {
  it("gathers a unit's dew points, CO points, advisories and analysers from the state", () => {
    const d = unitDetail(state, "bf2")!;
    expect(d.unit.name).toBe("Bag filter BF2");
    // fake-deps.ts: three dew point locations on BF2 (inlet, outlet, hopper), one CO point.
    expect(d.dewPoints.map((p) => p.id)).toEqual(["bf2-inlet", "bf2-outlet", "bf2-hopper"]);
    expect(d.coPoints.map((p) => p.id)).toEqual(["bf2-outlet"]);
    expect(d.advisories.every((a) => a.unitId === "bf2")).toBe(true);
    expect(unitDetail(state, "no-such-unit")).toBeNull();
  });

  it("finds the analysers through the unit's O2 signals", () => {
    // vm2's O2 signal vm2-o2 is on analyser vm2-a131; the silo analyser serves another unit.
    expect(analysersOfUnit(state, "vm2").map((a) => a.id)).toEqual(["vm2-a131"]);
  });

  it("lays out purge progress with the counted and needed volume changes", () => {
    const fmt = (v: number, d: number) => v.toFixed(d);
    const rows = purgeRows(
      {
        status: "purging",
        inertFlowSignal: "ig2.flow",
        inertFlowNm3PerH: 4500,
        flowOnNm3PerH: 100,
        flowOn: true,
        volumeM3: 450,
        inertO2PctVol: 0.01,
        targetO2PctVol: 10,
        basis: "wet",
        startedAtMs: FAKE_NOW_MS - 600_000,
        startO2PctVol: 20.9,
        volumeChanges: 1.6667,
        volumeChangesToTarget: 0.7375,
        predictedO2PctVol: 3.95,
        measuredO2PctVol: 4.4,
        fittedTimeToTargetS: 0,
        reason: "at target",
      } as never,
      fmt,
    );
    const byLabel = Object.fromEntries(rows);
    expect(byLabel["volume changes"]).toBe("1.67 of 0.74 to the target");
    expect(byLabel["O2 predicted (well mixed)"]).toBe("3.95 % vol wet");
    expect(byLabel["time to target (fitted)"]).toBe("0 min");
    expect(purgeRows(null, fmt)).toEqual([]);
  });
});

describe("texts", () => {
  it("durations and shares", () => {
    expect(durationText(45 * 60_000)).toBe("45 min");
    expect(durationText(3 * 3_600_000 + 5 * 60_000)).toBe("3 h 05 min");
    expect(durationText(50 * 3_600_000)).toBe("2 d 2 h");
    // 3 h of 8 h = 37.5 %.
    expect(shareText(3 * 3_600_000, 8 * 3_600_000)).toBe("37.5 %");
    expect(shareText(1, 0)).toBe("\u2014");
  });

  it("the handover's hours and an action", () => {
    expect(parseHandoverHours("?hours=12")).toBe(12);
    expect(parseHandoverHours("?hours=24")).toBe(8);
    expect(actionText({ kind: "shelve", by: "k.engineer", why: "calibration" }, "01:05")).toBe("shelved by k.engineer at 01:05 (calibration)");
  });

  it("the audit's role rule and detail text", () => {
    expect(mayReadAudit({ user: "k.engineer", role: "engineer" })).toBe(true);
    expect(mayReadAudit({ user: "a.admin", role: "admin" })).toBe(true);
    expect(mayReadAudit({ user: "t.operator", role: "operator" })).toBe(false);
    expect(mayReadAudit({ user: null, role: null })).toBe(false);
    expect(auditDetailText({ role: "operator", outcome: "ok", note: "checked" })).toBe("note: checked; outcome: ok; role: operator");
  });

  it("out of service is offered beside the glance screen's commands and needs a reason", () => {
    expect(pageActions({ state: "unack" }, ["ack"])).toEqual(["ack", "out-of-service"]);
    expect(pageActions({ state: "out-of-service" }, [])).toEqual(["return-to-service"]);
    expect(outOfServiceBody("out-of-service", "  ")).toEqual({ error: expect.stringMatching(/reason is needed/) });
    expect(outOfServiceBody("out-of-service", "analyser replaced")).toEqual({ body: { reason: "analyser replaced" } });
    expect(outOfServiceBody("ack", "")).toBeNull();
  });
});

describe("trends limits from GET /api/rules", () => {
  it("draws every tier of a configured rule on its quantity, raised or not, once", () => {
    const rules = [
      { id: "co-gradient-vm2", quantity: "co.vm2-outlet.gradientPpmPerMin", quantityUnit: "ppm/min", direction: "high" as const, tiers: { caution: 5, warning: 15 } },
      { id: "phase-rule", quantity: "phase.vm2", quantityUnit: "", direction: null, tiers: null },
    ];
    expect(limitsFor("co.vm2-outlet.gradientPpmPerMin", { ...state, advisories: [] }, [], rules)).toEqual([
      { value: 15, tier: "warning", label: "warning above 15 ppm/min (co-gradient-vm2)" },
      { value: 5, tier: "caution", label: "caution above 5 ppm/min (co-gradient-vm2)" },
    ]);
    expect(limitsFor("phase.vm2", state, [], rules)).toEqual([]);
  });
});
