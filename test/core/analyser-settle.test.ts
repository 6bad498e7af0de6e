// After a function check (calibration with check gas, blowback) the readings are not process gas
// at once: the cell and an extractive analyser's sample line still hold check gas or air for the
// line's flush time. An analyser's settleS keeps it in function check (NAMUR NE 107 category C)
// that long after the check ends; its signals stay untrusted and rules on them suppressed.
import { describe, expect, it } from "vitest";
import { parseConfig } from "../../src/config/load.js";
import { Engine } from "../../src/core/engine.js";
import type { AdvisoryTransition, CoreEvent, Sample } from "../../src/core/types.js";

const T0 = Date.UTC(2026, 2, 2, 4, 0, 0);

const config = (settleS: number) => `site: { name: Testfield, plant: Line 9, barometricPressureHPa: 1013 }
clock: data
sources:
  - { id: m, kind: mqtt, url: "mqtt://127.0.0.1:18831" }
signals:
  - { id: bf9.o2, name: Filter outlet O2 (dry), tag: AT-1, source: m, topic: t/1, unit: pctVol, basis: dry, expectedPeriodS: 1, analyser: bf9-a1 }
  - { id: bf9.a1.status, name: O2 analyser status, tag: AS-1, source: m, topic: t/2, unit: state, expectedPeriodS: 1 }
units:
  - id: bf9
    name: Filter BF9
    kind: bag-filter
    oxygen:
      signal: bf9.o2
      siteMaximum: { pctVol: 12, basis: dry, origin: test value }
analysers:
  - { id: bf9-a1, name: Filter O2 analyser, frozenWindowS: 600, frozenEpsilon: 0.0001, functionCheckSignal: bf9.a1.status, settleS: ${settleS} }
rules:
  - { id: o2-margin, title: O2 margin small, unit: bf9, quantity: o2.bf9.marginPctPt, direction: low, tiers: { warning: 1 }, cause: c, consequence: c, check: c, origin: test value }
`;

const s = (signal: string, value: number, tMs: number): Sample => ({ signal, value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs });

/**
 * 1 Hz: O2 at 8 % dry; the status on from 100 s to 199 s with check gas (instrument air, 20.9 %)
 * on the cell; after the status drops, air still fills the line for 40 s (200..239 s) before
 * the process gas is back at the cell.
 */
function run(settleS: number) {
  const e = new Engine(parseConfig(config(settleS), "settle.yaml"));
  const out: CoreEvent[] = [];
  const states: Record<number, string | null> = {};
  for (let k = 0; k <= 400; k++) {
    const t = T0 + k * 1000;
    const status = k >= 100 && k < 200 ? 1 : 0;
    const o2 = k >= 100 && k < 240 ? 20.9 : 8 + (k % 2) * 0.01;
    e.ingest(s("bf9.a1.status", status, t));
    e.ingest(s("bf9.o2", o2, t));
    out.push(...e.tick(t));
    states[k] = e.snapshot().analysers[0]!.state;
  }
  const raises = out.filter((x): x is AdvisoryTransition => x.kind === "advisory" && x.to === "unack");
  return { out, raises, states };
}

describe("analyser settle time after a function check", () => {
  it("without one, the air left in the line after a calibration raises an O2 warning", () => {
    const r = run(0);
    expect(r.states[210]).toBe("ok");
    expect(r.raises.map((t) => [t.advisoryId, t.tier])).toEqual([["o2-margin", "warning"]]);
  });

  it("with a settle time longer than the flush, nothing is raised and the analyser reads function check meanwhile", () => {
    const r = run(60);
    expect(r.states[150]).toBe("function-check");
    // The status dropped at 200 s; 60 s of settling from the last tick in function check (199 s).
    expect(r.states[258]).toBe("function-check");
    expect(r.states[260]).toBe("ok");
    expect(r.raises).toEqual([]);
    const suppress = r.out.filter((x): x is AdvisoryTransition => x.kind === "advisory" && (x.transition === "suppress" || x.transition === "unsuppress"));
    expect(suppress.map((t) => [t.transition, (t.atMs - T0) / 1000])).toEqual([
      ["suppress", 100],
      ["unsuppress", 259],
    ]);
  });
});
