// The oxygen monitor inside the engine with the demo config: the derived keys, the view on
// GET /api/state, the purge on IG2-FT-051, and trust coming through the signal state
// (stale, bad, uncertain, function check).
import { join } from "node:path";
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { loadConfig } from "../../src/config/load.js";
import { Engine } from "../../src/core/engine.js";
import type { CoreEvent, DerivedValue, Sample } from "../../src/core/types.js";

const cfg = loadConfig(join(import.meta.dirname, "../../config/demo.yaml"));
const T0 = Date.UTC(2026, 10, 30, 6, 0, 0);
const s = (signal: string, value: number, tMs: number, extra: Partial<Sample> = {}): Sample => ({ signal, value, quality: "good", sourceTimeMs: tMs, receiveTimeMs: tMs, ...extra });
const vm2 = (e: Engine) => e.snapshot().units.find((u) => u.id === "vm2")!.inerting!;
const derived = (events: CoreEvent[], key: string) => events.filter((x): x is DerivedValue => x.kind === "derived" && x.key === key).at(-1);

/**
 * Feed vm2's O2 (wet), the H2O and the N2 flow for seconds from..n, ticking after each second.
 * The H2O wobbles by 0.01 %-pt from second to second: a reading that never changes reads as a
 * frozen analyser (analyser health), which is not what these tests are about.
 */
function run(e: Engine, n: number, o2At: (t: number) => number, flowAt: (t: number) => number, h2oPctVol = 10, from = 0): CoreEvent[] {
  let out: CoreEvent[] = [];
  for (let t = from; t <= n; t++) {
    const ms = T0 + t * 1000;
    e.ingest(s("vm2.outlet.o2", o2At(t), ms));
    e.ingest(s("bf2.outlet.h2o", h2oPctVol + 0.01 * (t % 2), ms));
    e.ingest(s("ig2.flow", flowAt(t), ms));
    out = e.tick(ms + 500);
  }
  return out;
}

describe("oxygen monitor in the engine (demo config)", () => {
  it("records every o2 key of vm2 and shows the reading, the limits and their origins", () => {
    const e = new Engine(cfg);
    // 9 % wet at 15 % H2O: 10.588 % dry (O2_dry = O2_wet / (1 − x_H2O), DESIGN.md §4); LOC 15 % dry
    // continuous -> 13 % dry (NFPA 69, from memory): margin 2.412 governs over 12 − 9 = 3 on the wet site maximum.
    const ev = run(e, 10, () => 9, () => 0, 15, 0);
    for (const k of ["o2PctVol", "marginPctPt", "trendPctPtPerMin", "timeToLimitS", "purgeVolumeChanges"]) expect(derived(ev, `o2.vm2.${k}`), k).toBeDefined();
    expect(derived(ev, "o2.vm2.o2PctVol")!.value).toBeCloseTo(9 / 0.85, 12);
    expect(derived(ev, "o2.vm2.marginPctPt")!.value).toBeCloseTo(13 - 9 / 0.85, 12);
    expect(derived(ev, "o2.vm2.trendPctPtPerMin")!.value).toBeNull(); // 10 s of data, the window needs 150 s
    const v = vm2(e);
    expect(v).toMatchObject({ state: "inert", readingPctVol: 9, readingBasis: "wet", basis: "dry", h2oSignal: "bf2.outlet.h2o", trendWindowS: 300 });
    expect(v.limits.map((l) => [l.id, l.basis, l.governing])).toEqual([
      ["site-maximum", "wet", false],
      ["loc", "dry", true],
    ]);
    expect(v.limits[0]!.origin).toMatch(/site must confirm/);
    expect(v.purge).toMatchObject({ status: "idle", inertFlowSignal: "ig2.flow", volumeM3: 450, flowOn: false });
    // Units without oxygen config have no inerting view; bf2 has one but no purge.
    expect(e.snapshot().units.find((u) => u.id === "hg2")!.inerting).toBeNull();
    expect(e.snapshot().units.find((u) => u.id === "bf2")!.inerting!.purge).toBeNull();
  });

  it("a purge on ig2.flow: purging while the measured O2 is not yet inert, volume changes counted, then inert", () => {
    const e = new Engine(cfg);
    run(e, 5, () => 20.6, () => 0);
    // 4500 Nm³/h into 450 m³: 10 changes an hour. The O2 falls linearly here: the measurement decides.
    const o2 = (t: number) => Math.max(8, 20.6 - (t - 5) * 0.03) + 0.01 * (t % 2);
    let ev = run(e, 205, o2, () => 4500, 10, 6);
    expect(vm2(e).state).toBe("purging");
    expect(vm2(e).measuredState).toBe("not-inert");
    // Counted from t = 6 s (flow first seen on) to 205 s at 4500 Nm³/h: 199 s · 4500 / 3600 / 450.
    expect(derived(ev, "o2.vm2.purgeVolumeChanges")!.value).toBeCloseTo((199 * 4500) / 3600 / 450, 9);
    // Both on the analyser's (wet) basis: the well-mixed prediction from the start O2 (20.57 % at 6 s),
    // C = C0 + (C1 − C0) e^(−N) with C0 = 0.01 (DESIGN.md §4), is ahead of the measurement.
    expect(vm2(e).purge!.startO2PctVol).toBeCloseTo(o2(6), 12);
    expect(vm2(e).purge!.predictedO2PctVol!).toBeCloseTo(0.01 + (o2(6) - 0.01) * Math.exp(-(199 * 4500) / 3600 / 450), 9);
    expect(vm2(e).purge!.predictedO2PctVol!).toBeLessThan(vm2(e).readingPctVol!);
    // O2 down to 8 % wet (8.889 % dry, margin 4.1 > band 1.5) from 425 s on: inert, purge complete, O2 flat.
    ev = run(e, 740, o2, () => 4500, 10, 206);
    expect(vm2(e).state).toBe("inert");
    expect(vm2(e).purge!.status).toBe("complete");
    expect(derived(ev, "o2.vm2.purgeVolumeChanges")!.value).toBeNull();
    expect(derived(ev, "o2.vm2.trendPctPtPerMin")!.value).toBeCloseTo(0, 3);
  }, 30_000);

  it("the trend runs on the analyser's source time, not the receive time", () => {
    // Samples measured 1 s apart but received in bursts of 5 with an uneven delay (0, 1.5 or 3 s):
    // a slope on tick or receive times would not be exact, one on the measured times is.
    const e = new Engine(cfg);
    let ev: CoreEvent[] = [];
    for (let burst = 0; burst <= 80; burst++) {
      const recv = T0 + burst * 5000 + 4000 + (burst % 3) * 1500;
      for (let k = 0; k < 5; k++) {
        const t = burst * 5 + k;
        e.ingest(s("vm2.outlet.o2", 6 + (0.09 * t) / 60, T0 + t * 1000, { receiveTimeMs: recv }));
        e.ingest(s("bf2.outlet.h2o", 10, T0 + t * 1000, { receiveTimeMs: recv }));
      }
      ev = e.tick(recv + 500);
    }
    // At the last sample (404 s) the O2 is 6.606 % wet, 7.34 % dry (O2_dry = O2_wet / 0.9, DESIGN.md §4):
    // margins 12 − 6.606 = 5.394 (wet site maximum, governs) and 13 − 7.34 = 5.66 (dry LOC limit).
    // The trend shown is the governing one: 0.09 %-pt/min wet. The dry rise is 0.1 %-pt/min, so the
    // LOC limit is reached first: 5.66 / 0.1 = 56.6 min against 5.394 / 0.09 = 59.9 min.
    const v = vm2(e);
    expect(v.limits.find((l) => l.governing)!.id).toBe("site-maximum");
    expect(derived(ev, "o2.vm2.trendPctPtPerMin")!.value).toBeCloseTo(0.09, 9);
    expect(v.limits.find((l) => l.id === "loc")!.trendPctPtPerMin).toBeCloseTo(0.1, 9);
    const dry = (6 + (0.09 * 404) / 60) / 0.9;
    expect(derived(ev, "o2.vm2.timeToLimitS")!.value).toBeCloseTo(((13 - dry) / 0.1) * 60, 4);
  });

  it("is unknown whenever the O2 or its H2O is stale, bad, uncertain or in function check (through the signal state)", () => {
    const cases: { signal: string; extra: Partial<Sample> | "stale" }[] = [];
    for (const signal of ["vm2.outlet.o2", "bf2.outlet.h2o"]) {
      cases.push({ signal, extra: "stale" });
      cases.push({ signal, extra: { quality: "bad", qualityReason: "sensor failure" } });
      cases.push({ signal, extra: { quality: "uncertain", qualityReason: "drift" } });
      cases.push({ signal, extra: { functionCheck: true } });
    }
    fc.assert(
      fc.property(fc.constantFrom(...cases), fc.double({ min: 0, max: 12, noNaN: true }), fc.constantFrom(0, 3000), ({ signal, extra }, o2, flow) => {
        const e = new Engine(cfg);
        run(e, 3, () => 20, () => 0);
        for (let t = 4; t <= 20; t++) {
          const ms = T0 + t * 1000;
          for (const [sig, v] of [["vm2.outlet.o2", o2], ["bf2.outlet.h2o", 10], ["ig2.flow", flow]] as const) {
            if (sig === signal && extra === "stale") continue;
            e.ingest(s(sig, v, ms, sig === signal && extra !== "stale" ? extra : {}));
          }
          e.tick(ms + 500);
        }
        const v = vm2(e);
        expect(v.state).toBe("unknown");
        expect(v.o2PctVol).toBeNull();
        expect(v.timeToLimitS).toBeNull();
      }),
      { numRuns: 24 },
    );
  }, 60_000);
});
