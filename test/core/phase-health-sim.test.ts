// The demo config's phase and analyser health against the simulated plant, through the
// engine without the broker (the integration test runs the same scenarios over MQTT).
// Expected times come from the scenario definitions (src/sim/plant.ts: hot-gas generator lit
// at 120 s, drive on once the filter outlet passes 65 °C with O2 below 10 % wet, first coal 60 s
// later, ramp to 30 t/h over 5 min) and the demo thresholds in config/demo.yaml (drive 100 kW,
// feed 3 t/h, inlet 100 °C, dwell 10 s). The simulated analysers carry noise, so none may
// read frozen, and phase inference must not make any of them untrusted.
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import { loadConfig } from "../../src/config/load.js";
import type { MillwardenConfig } from "../../src/config/schema.js";
import { unitDef } from "../../src/config/units.js";
import { Engine } from "../../src/core/engine.js";
import type { MillPhase } from "../../src/analytics/phase.js";
import { createScenario } from "../../src/sim/plant.js";

const demo = loadConfig(join(import.meta.dirname, "../../config/demo.yaml"));
// Only what phase and analyser health need: the signals, the units' phases, the analysers. The
// other families' indicators are tested elsewhere and would only slow 2 h of simulated ticks.
const KEEP = ["sources", "signals", "units", "analysers"];
const cfg = {
  ...(Object.fromEntries(Object.entries(demo).map(([k, v]) => [k, Array.isArray(v) && !KEEP.includes(k) ? [] : v])) as MillwardenConfig),
  units: demo.units.map((u) => ({ ...u, oxygen: undefined })),
};
const START = Date.UTC(2026, 10, 30, 5, 0, 0);

function runScenario(name: string, seed: number) {
  const e = new Engine(cfg);
  const byTag = new Map(cfg.signals.map((s) => [s.tag, s]));
  const sc = createScenario(name, { startTimeMs: START, seed });
  const phases: [number, MillPhase][] = [];
  const notOk: string[] = [];
  for (let f = sc.next(); f; f = sc.next()) {
    for (const v of f.values) {
      const s = byTag.get(v.tag);
      if (!s) continue;
      e.ingest({ signal: s.id, value: unitDef(s.unit).toCanonical(v.value * s.scale + s.offset), quality: "good", sourceTimeMs: f.tMs, receiveTimeMs: f.tMs });
    }
    e.tick(f.tMs);
    // Looked at every 5 s (a snapshot per second is slow); a frozen state lasts much longer.
    if (((f.tMs - START) / 1000) % 5 !== 0) continue;
    const st = e.snapshot();
    const p = st.phases.find((x) => x.unitId === "vm2")!.phase;
    if (phases.at(-1)?.[1] !== p) phases.push([(f.tMs - START) / 1000, p]);
    for (const a of st.analysers) if (a.state !== "ok") notOk.push(`${(f.tMs - START) / 1000} s ${a.id} ${a.state}: ${a.reasons[0]}`);
  }
  return { phases, notOk, state: e.snapshot() };
}

describe("demo config on the simulated plant", () => {
  it("startup: standstill-empty, warm-up, starting, grinding; every analyser ok throughout", () => {
    for (const seed of [11, 12]) {
      const r = runScenario("startup", seed);
      expect(r.phases.map(([, p]) => p)).toEqual(["standstill-empty", "warm-up", "starting", "grinding"]);
      const at = new Map(r.phases.map(([t, p]) => [p, t]));
      expect(at.get("standstill-empty")).toBe(0);
      // Light-off at 120 s; the inlet passes 100 °C some minutes later (warm-up firing is ramped).
      expect(at.get("warm-up")!).toBeGreaterThan(120 + 10);
      expect(at.get("warm-up")!).toBeLessThan(10 * 60);
      // Drive on at about 29 min; feed above 3 t/h well inside the 5 min ramp after the first coal.
      expect(at.get("starting")!).toBeGreaterThan(25 * 60);
      expect(at.get("starting")!).toBeLessThan(35 * 60);
      expect(at.get("grinding")! - at.get("starting")!).toBeGreaterThan(60);
      expect(at.get("grinding")! - at.get("starting")!).toBeLessThan(60 + 300);
      expect(r.notOk).toEqual([]);
      expect(r.state.analysers.every((a) => a.plantRunning)).toBe(true); // grinding at the end: the frozen test applies
    }
  }, 60_000);

  it("filter-smoulder: grinding from the first second, and no analyser frozen over 40 min of grinding", () => {
    const r = runScenario("filter-smoulder", 11);
    expect(r.phases).toEqual([[0, "grinding"]]);
    expect(r.notOk).toEqual([]);
  }, 60_000);
});
