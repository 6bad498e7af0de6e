// A rate rule: thresholds on a quantity's rate of change per minute, by least squares over the
// rule's window (checked against simple-statistics' linearRegression on the same points).
import { linearRegression } from "simple-statistics";
import { describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { Engine } from "../../src/core/engine.js";
import type { AdvisoryTransition, Sample } from "../../src/core/types.js";
import { problemsOf, SITE_AND_SOURCE } from "../config/helpers.js";

const T0 = Date.UTC(2026, 2, 2, 4, 0, 0);
const text = `${SITE_AND_SOURCE}signals:
  - { id: mill.outlet.temp, name: Mill outlet temperature, tag: TT-1, source: m, topic: t/1, unit: degC, expectedPeriodS: 1 }
units:
  - { id: u1, name: Mill, kind: mill }
rules:
  - { id: outlet-rising, title: Mill outlet heating fast, quantity: mill.outlet.temp, rate: { windowS: 300 }, direction: high, tiers: { caution: 1.5, warning: 3 }, cause: c, consequence: c, check: c, origin: test value }
`;
const s = (value: number, tMs: number): Sample => ({ signal: "mill.outlet.temp", value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });

describe("rate rules", () => {
  it("raise on the least-squares rate of change per minute once half the window is covered", () => {
    const e = new Engine(parseConfig(text, "plant.yaml"));
    const pts: [number, number][] = [];
    const raised: AdvisoryTransition[] = [];
    // 80 °C, rising 2 K/min with a ±0.05 K wobble.
    for (let k = 0; k <= 400; k++) {
      const t = T0 + k * 1000;
      const v = 80 + (2 / 60) * k + (k % 2 ? 0.05 : -0.05);
      e.ingest(s(v, t));
      for (const ev of e.tick(t)) if (ev.kind === "advisory") raised.push(ev);
      pts.push([k, v]);
    }
    // Half the 300 s window is 150 s: the first raise comes at the tick that covers it.
    expect(raised[0]).toMatchObject({ transition: "raise", tier: "caution", atMs: T0 + 150_000 });
    const view = e.currentAdvisories()[0]!;
    expect(view.unit).toBe("°C/min");
    // The slope over the last 300 s (points 100..400) as simple-statistics computes it, per minute.
    const ref = linearRegression(pts.slice(100)).m * 60;
    expect(view.value!).toBeCloseTo(ref, 9);
    expect(view.value!).toBeCloseTo(2, 2);
  });

  it("a rate rule with states is refused", () => {
    const bad = text.replace("quantity: mill.outlet.temp, rate: { windowS: 300 }, direction: high, tiers: { caution: 1.5, warning: 3 }", "quantity: mill.outlet.temp, rate: { windowS: 300 }, states: [ok], tier: caution");
    expect(problemsOf(bad).map((p) => p.message).join("\n")).toMatch(/has no rate of change/);
  });
});
