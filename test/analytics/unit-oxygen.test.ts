// One unit's oxygen at each tick: voting of redundant analysers, the purge and the "purging"
// state, the trend and time to limit, and the properties that keep the state honest.
// Sources are named beside each check.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { oxygenSchema } from "../../src/config/sections/oxygen.js";
import { UnitOxygen, type UnitOxygenInputs } from "../../src/analytics/unit-oxygen.js";
import type { Trust } from "../../src/analytics/signal-state.js";
import type { O2Basis } from "../../src/physics/oxygen.js";

const T0 = 1_800_000_000_000;
const ok = (value: number): Trust => ({ ok: true, value, reason: "" });
const untrusted = (reason: string, value: number | null = null): Trust => ({ ok: false, value, reason });

function unit(o: Record<string, unknown>, basis: O2Basis = "dry") {
  return new UnitOxygen("vm9", oxygenSchema.parse(o), basis);
}
function at(tS: number, o2: Record<string, Trust>, extra: Partial<UnitOxygenInputs> = {}): UnitOxygenInputs {
  const nowMs = T0 + tS * 1000;
  return { nowMs, o2: Object.entries(o2).map(([id, trust]) => ({ id, trust, sourceTimeMs: nowMs })), h2o: null, inertFlow: null, ...extra };
}
const derivedOf = (r: ReturnType<UnitOxygen["evaluate"]>, key: string) => r.derived.find((d) => d.key === key)!;

const SITE_MAX_10_DRY = { siteMaximum: { pctVol: 10, basis: "dry", origin: "explosion-protection document" } };

describe("redundant analysers (voting modes as defined in src/analytics/voting.ts; MooN voting terms after IEC 61511, common practice)", () => {
  const three = (voting: string, disagreeLimitPctPt = 0.3) =>
    unit({ signals: ["a", "b", "c"], voting, disagreeLimitPctPt, ...SITE_MAX_10_DRY });

  it("highest takes the largest trusted reading: the side closest to the limit", () => {
    const r = three("highest").evaluate(at(0, { a: ok(8.0), b: ok(8.4), c: ok(8.2) }));
    expect(r.view.readingPctVol).toBe(8.4);
    expect(r.view.vote).toMatchObject({ mode: "highest", used: ["b"], disagreement: true, degraded: false }); // spread 0.4 > 0.3
    expect(r.view.o2Signal).toBe("b");
    expect(r.view.readings.map((x) => [x.id, x.used])).toEqual([["a", false], ["b", true], ["c", false]]);
    expect(r.view.marginPctPt).toBeCloseTo(1.6, 12);
  });

  it("median takes the middle reading", () => {
    const r = three("median").evaluate(at(0, { a: ok(8.0), b: ok(8.4), c: ok(8.2) }));
    expect(r.view.readingPctVol).toBe(8.2);
    expect(r.view.vote!.used).toEqual(["c"]);
  });

  it("2oo3 takes the mean of the two that agree, and gives no value when none agree", () => {
    const agree = three("2oo3").evaluate(at(0, { a: ok(8.0), b: ok(8.2), c: ok(9.5) }));
    expect(agree.view.readingPctVol).toBeCloseTo(8.1, 12);
    expect(agree.view.vote).toMatchObject({ used: ["a", "b"], disagreement: true });
    const none = three("2oo3").evaluate(at(0, { a: ok(7.0), b: ok(8.0), c: ok(9.0) }));
    expect(none.view.state).toBe("unknown");
    expect(none.view.readingPctVol).toBeNull();
    expect(none.view.reason).toMatch(/2oo3: no two trusted readings agree within 0\.3/);
  });

  it("leaves untrusted analysers out, says so, and is unknown when too few are left", () => {
    const u = three("2oo3");
    const one = u.evaluate(at(0, { a: untrusted("a: analyser in function check"), b: ok(8.0), c: ok(8.1) }));
    expect(one.view.readingPctVol).toBeCloseTo(8.05, 12);
    expect(one.view.vote).toMatchObject({ degraded: true, used: ["b", "c"] });
    expect(one.view.reason).toMatch(/left out: a not trusted/);
    const two = u.evaluate(at(1, { a: untrusted("a: stale"), b: untrusted("b: bad (sensor)"), c: ok(8.1) }));
    expect(two.view.state).toBe("unknown");
    expect(two.view.reason).toMatch(/needs 2.*a: stale; b: bad \(sensor\)/);
    // An uncertain reading carries a value but is not trusted: it is not voted.
    const h = three("highest").evaluate(at(2, { a: untrusted("a: uncertain", 12), b: ok(8.0), c: ok(8.1) }));
    expect(h.view.readingPctVol).toBe(8.1);
  });

  it("the disagreement flag does not need a failed vote: two readings far apart under highest", () => {
    const u = unit({ signals: ["a", "b"], voting: "highest", disagreeLimitPctPt: 0.5, ...SITE_MAX_10_DRY });
    const r = u.evaluate(at(0, { a: ok(6), b: ok(7) }));
    expect(r.view.vote!.disagreement).toBe(true);
    expect(r.view.reason).toMatch(/spread 1 > limit 0\.5/);
    expect(u.evaluate(at(1, { a: ok(6), b: ok(6.2) })).view.vote!.disagreement).toBe(false);
  });
});

describe("the view shows the raw reading with its basis and the value on the limit's basis", () => {
  it("10 % wet at 15 % H2O: reading 10 % wet, 11.765 % dry against the dry LOC limit (DESIGN.md §4)", () => {
    const u = unit({ signal: "o2", h2oSignal: "h2o", loc: { pctVol: 15, monitoring: "continuous", origin: "EN 14034-4 test" } }, "wet");
    const r = u.evaluate(at(0, { o2: ok(10) }, { h2o: ok(15) }));
    expect(r.view).toMatchObject({ readingPctVol: 10, readingBasis: "wet", basis: "dry", h2oSignal: "h2o", h2oPctVol: 15, limitPctVol: 13 });
    expect(Math.abs(r.view.o2PctVol! - 11.765)).toBeLessThan(0.0005);
    expect(r.view.limits[0]).toMatchObject({ id: "loc", locPctVol: 15, monitoring: "continuous", origin: "EN 14034-4 test", governing: true });
    expect(derivedOf(r, "o2PctVol").value).toBe(r.view.o2PctVol);
    expect(derivedOf(r, "marginPctPt").value).toBeCloseTo(13 - 10 / 0.85, 12);
  });
});

describe("trend and time to limit", () => {
  it("a linear rise gives the exact trend and time to the limit", () => {
    // O2 = 5 + 0.2 %-pt/min · t against a 10 % dry limit: at t = 300 s O2 = 6 %, margin 4 %-pt,
    // time = 4 / 0.2 min = 1200 s (least squares fits a straight line exactly).
    const u = unit({ signal: "o2", ...SITE_MAX_10_DRY });
    let r = u.evaluate(at(0, { o2: ok(5) }));
    for (let t = 1; t <= 300; t++) r = u.evaluate(at(t, { o2: ok(5 + (0.2 * t) / 60) }));
    expect(r.view.trendPctPtPerMin).toBeCloseTo(0.2, 9);
    expect(r.view.timeToLimitS).toBeCloseTo(1200, 5);
    expect(derivedOf(r, "trendPctPtPerMin").value).toBe(r.view.trendPctPtPerMin);
    expect(derivedOf(r, "timeToLimitS").value).toBe(r.view.timeToLimitS);
  });

  it("on a wet reading against a dry limit the trend is on the dry basis", () => {
    // At constant 10 % H2O, O2_dry = O2_wet / 0.9 (DESIGN.md §4): a wet rise of 0.18 %-pt/min is 0.2 dry.
    const u = unit({ signal: "o2", h2oSignal: "h2o", loc: { pctVol: 12, monitoring: "continuous", origin: "lab" } }, "wet");
    let r = u.evaluate(at(0, { o2: ok(4.5) }, { h2o: ok(10) }));
    for (let t = 1; t <= 300; t++) r = u.evaluate(at(t, { o2: ok(4.5 + (0.18 * t) / 60) }, { h2o: ok(10) }));
    expect(r.view.trendPctPtPerMin).toBeCloseTo(0.2, 9);
    // dry O2 at 300 s = (4.5 + 0.9) / 0.9 = 6; limit 10 (LOC 12 continuous); 4 %-pt / 0.2 = 20 min.
    expect(r.view.timeToLimitS).toBeCloseTo(1200, 5);
  });

  it("is null while O2 falls, and unknown after untrusted data until the window refills", () => {
    const u = unit({ signal: "o2", ...SITE_MAX_10_DRY });
    let r = u.evaluate(at(0, { o2: ok(8) }));
    for (let t = 1; t <= 200; t++) r = u.evaluate(at(t, { o2: ok(8 - t / 600) }));
    expect(r.view.trendPctPtPerMin).toBeCloseTo(-0.1, 9);
    expect(r.view.timeToLimitS).toBeNull();
    expect(r.view.trendReason).toMatch(/not rising/);
    r = u.evaluate(at(201, { o2: untrusted("o2: analyser in function check") }));
    expect(r.view.trendPctPtPerMin).toBeNull();
    r = u.evaluate(at(202, { o2: ok(7.6) }));
    expect(r.view.trendPctPtPerMin).toBeNull();
    expect(r.view.trendReason).toMatch(/needs 150 s/);
  });
});

describe("purge and the purging state", () => {
  const PURGE = { volumeM3: 450, inertFlowSignal: "n2", inertO2PctVol: 0, targetO2PctVol: 1, flowOnNm3PerH: 100 };
  const purgeUnit = () => unit({ signal: "o2", siteMaximum: { pctVol: 8, basis: "dry", origin: "site" }, marginalBandPctPt: 1.5, purge: PURGE });

  it("21 → 1 % O2 with pure N2 needs 3.04 volume changes; a well-mixed unit is purging, then inert on the measured O2", () => {
    // DESIGN.md §4: N = ln[(C1 − C0)/(C2 − C0)] = ln(21/1) = 3.0445. The unit here mixes perfectly:
    // the measured O2 follows C = 21 e^(−N) with N = Q t / V, Q 900 Nm³/h, V 450 m³ (2 changes an hour).
    const u = purgeUnit();
    u.evaluate(at(0, { o2: ok(21) }, { inertFlow: ok(0) }));
    const states: string[] = [];
    let inertAtS: number | null = null;
    for (let t = 1; t <= 3600; t++) {
      const n = (900 * (t - 1)) / 3600 / 450;
      const r = u.evaluate(at(t, { o2: ok(21 * Math.exp(-n)) }, { inertFlow: ok(900) }));
      if (states.at(-1) !== r.view.state) states.push(r.view.state);
      if (t === 1) {
        expect(r.view.purge!.volumeChangesToTarget!).toBeCloseTo(Math.log(21), 12);
        expect(r.view.purge!.volumeChangesToTarget!).toBeGreaterThan(3.04);
        expect(r.view.purge!.volumeChangesToTarget!).toBeLessThan(3.05);
      }
      if (t === 1801) {
        // One volume change counted after 1800 s at 900 Nm³/h into 450 m³.
        expect(derivedOf(r, "purgeVolumeChanges").value).toBeCloseTo(1, 12);
        expect(r.view.purge!.predictedO2PctVol!).toBeCloseTo(21 * Math.exp(-1), 12);
      }
      if (inertAtS === null && r.view.state === "inert") inertAtS = t;
    }
    expect(states).toEqual(["purging", "inert"]);
    // Inert once the measured O2 is below 8 − 1.5 = 6.5 %: N = ln(21/6.5) = 1.1725, t = N · 1800 s + 1 s.
    expect(inertAtS).toBe(Math.ceil(Math.log(21 / 6.5) * 1800) + 1);
    const last = u.evaluate(at(3601, { o2: ok(2) }, { inertFlow: ok(900) }));
    expect(last.view.purge!.status).toBe("complete");
    expect(derivedOf(last, "purgeVolumeChanges").value).toBeNull();
  });

  it("is never inert on counted volumes alone: the count passes 3.04 while the measured O2 stays high", () => {
    // A badly mixed unit (short-circuit flow): 5 volume changes counted, the well-mixed prediction
    // far below 1 %, the measured O2 still at 12 %: purging, not inert.
    const u = purgeUnit();
    u.evaluate(at(0, { o2: ok(21) }, { inertFlow: ok(0) }));
    let r = u.evaluate(at(1, { o2: ok(21) }, { inertFlow: ok(900) }));
    for (let t = 2; t <= 9001; t++) r = u.evaluate(at(t, { o2: ok(t < 600 ? 21 - t / 60 : 12) }, { inertFlow: ok(900) }));
    expect(r.view.purge!.volumeChanges!).toBeCloseTo(5, 9);
    expect(r.view.purge!.predictedO2PctVol!).toBeLessThan(1);
    expect(r.view.state).toBe("purging");
    expect(r.view.measuredState).toBe("not-inert");
    expect(r.view.reason).toMatch(/being purged: O2 12 % dry is above the limit 8 %.*not inert; 5 volume changes counted/);
  });

  it("is purging only with the flow on; unknown flow shows the measured state, flow off stops the purge", () => {
    const u = purgeUnit();
    u.evaluate(at(0, { o2: ok(21) }, { inertFlow: ok(50) }));
    expect(u.evaluate(at(1, { o2: ok(21) }, { inertFlow: ok(900) })).view.state).toBe("purging");
    const unknownFlow = u.evaluate(at(2, { o2: ok(20) }, { inertFlow: untrusted("n2: no data for 5 s") }));
    expect(unknownFlow.view.state).toBe("not-inert");
    expect(unknownFlow.view.purge!.status).toBe("running");
    expect(u.evaluate(at(3, { o2: ok(19) }, { inertFlow: ok(900) })).view.state).toBe("purging");
    const off = u.evaluate(at(4, { o2: ok(19) }, { inertFlow: ok(20) }));
    expect(off.view.state).toBe("not-inert");
    expect(off.view.purge!.status).toBe("stopped");
  });

  it("untrusted O2 during a purge is unknown, not purging", () => {
    const u = purgeUnit();
    u.evaluate(at(0, { o2: ok(21) }, { inertFlow: ok(0) }));
    u.evaluate(at(1, { o2: ok(21) }, { inertFlow: ok(900) }));
    const r = u.evaluate(at(2, { o2: untrusted("o2: analyser in function check") }, { inertFlow: ok(900) }));
    expect(r.view.state).toBe("unknown");
    expect(r.view.purge!.status).toBe("running");
  });

  it("a rise after the unit was inert with the flow still on is marginal or not inert, not a new purge", () => {
    const u = purgeUnit();
    u.evaluate(at(0, { o2: ok(21) }, { inertFlow: ok(0) }));
    u.evaluate(at(1, { o2: ok(21) }, { inertFlow: ok(900) }));
    expect(u.evaluate(at(2, { o2: ok(5) }, { inertFlow: ok(900) })).view.state).toBe("inert");
    expect(u.evaluate(at(3, { o2: ok(7) }, { inertFlow: ok(900) })).view.state).toBe("marginal");
    expect(u.evaluate(at(4, { o2: ok(9) }, { inertFlow: ok(900) })).view.state).toBe("not-inert");
  });

  it("a spell of flow whose start was not seen is not taken for a purge", () => {
    const u = purgeUnit();
    expect(u.evaluate(at(0, { o2: ok(7) }, { inertFlow: ok(900) })).view.state).toBe("marginal");
    expect(u.evaluate(at(1, { o2: ok(7) }, { inertFlow: ok(900) })).view.purge!.status).toBe("idle");
  });
});

describe("properties", () => {
  // Trusted readings are the commoner case, as on a plant.
  const trustArb = (value: fc.Arbitrary<number>) =>
    fc.oneof(
      { weight: 3, arbitrary: value.map(ok) },
      { weight: 1, arbitrary: fc.constantFrom("no data for 9 s", "bad (sensor failure)", "analyser in function check").map((r) => untrusted(r)) },
      { weight: 1, arbitrary: value.map((v) => untrusted("uncertain (drift)", v)) },
    );
  /** Values spread over the whole range (fc.double favours the ends), in hundredths. */
  const spread = (min: number, max: number) => fc.integer({ min: Math.round(min * 100), max: Math.round(max * 100) }).map((x) => x / 100);
  const o2Value = spread(0, 21);

  it("the state is never better than unknown when the O2 (or the H2O its conversion needs) is untrustworthy", () => {
    // A value that cannot be trusted makes the indicator unknown, never safe (DESIGN.md §3).
    fc.assert(
      fc.property(
        fc.constantFrom<O2Basis>("wet", "dry"),
        fc.array(fc.tuple(trustArb(o2Value), trustArb(spread(0, 40)), trustArb(spread(0, 3000))), { minLength: 1, maxLength: 40 }),
        (basis, steps) => {
          const u = unit(
            {
              signal: "o2",
              h2oSignal: "h2o",
              siteMaximum: { pctVol: 12, basis: "wet", origin: "site" },
              loc: { pctVol: 15, basis: "dry", monitoring: "continuous", origin: "lab" },
              purge: { volumeM3: 300, inertFlowSignal: "n2", inertO2PctVol: 0, targetO2PctVol: 8, flowOnNm3PerH: 100 },
            },
            basis,
          );
          steps.forEach(([o2, h2o, flow], k) => {
            const r = u.evaluate(at(k, { o2 }, { h2o, inertFlow: flow }));
            // Both limits' bases are present, so the H2O is always needed.
            if (!o2.ok || !h2o.ok) {
              expect(r.view.state).toBe("unknown");
              expect(r.view.marginPctPt).toBeNull();
              for (const d of r.derived.filter((x) => x.key !== "purgeVolumeChanges")) expect(d.value).toBeNull();
            }
          });
        },
      ),
      { numRuns: 200 },
    );
  });

  it("with redundant analysers: unknown when the vote cannot be formed, and only trusted readings are used", () => {
    fc.assert(
      fc.property(fc.constantFrom("highest", "median", "2oo3"), fc.array(trustArb(o2Value), { minLength: 3, maxLength: 3 }), (voting, ts) => {
        const u = unit({ signals: ["a", "b", "c"], voting, disagreeLimitPctPt: 0.5, siteMaximum: { pctVol: 10, basis: "dry", origin: "site" } });
        const r = u.evaluate(at(0, { a: ts[0]!, b: ts[1]!, c: ts[2]! }));
        const trusted = ["a", "b", "c"].filter((_, i) => ts[i]!.ok);
        for (const id of r.view.vote!.used) expect(trusted).toContain(id);
        if (trusted.length < (voting === "2oo3" ? 2 : 1)) expect(r.view.state).toBe("unknown");
        if (r.view.state !== "unknown") expect(r.view.readingPctVol).not.toBeNull();
      }),
      { numRuns: 300 },
    );
  });

  it("never inert from counted volumes while the measured O2 is above the limit", () => {
    // Whatever the inert flow does (any values, trusted or not), only the measured O2 decides.
    fc.assert(
      fc.property(
        fc.array(fc.tuple(spread(8.01, 21), trustArb(spread(-5, 20000)), fc.integer({ min: 1, max: 90 })), {
          minLength: 1,
          maxLength: 80,
        }),
        (steps) => {
          const u = unit({ signal: "o2", siteMaximum: { pctVol: 8, basis: "dry", origin: "site" }, purge: { volumeM3: 10, inertFlowSignal: "n2", inertO2PctVol: 0, targetO2PctVol: 2, flowOnNm3PerH: 100 } });
          u.evaluate(at(0, { o2: ok(21) }, { inertFlow: ok(0) }));
          let tS = 0;
          for (const [o2, flow, dtS] of steps) {
            tS += dtS;
            const r = u.evaluate(at(tS, { o2: ok(o2) }, { inertFlow: flow }));
            expect(r.view.state).not.toBe("inert");
            expect(r.view.state).not.toBe("marginal");
            expect(["purging", "not-inert"]).toContain(r.view.state);
          }
        },
      ),
      { numRuns: 200 },
    );
  });

  it("inert only when the trusted measured O2 is below the limit by the band", () => {
    fc.assert(
      fc.property(fc.array(fc.tuple(trustArb(o2Value), trustArb(spread(0, 5000))), { minLength: 1, maxLength: 60 }), (steps) => {
        const u = unit({ signal: "o2", siteMaximum: { pctVol: 9, basis: "dry", origin: "site" }, marginalBandPctPt: 1, purge: { volumeM3: 5, inertFlowSignal: "n2", inertO2PctVol: 0, targetO2PctVol: 3, flowOnNm3PerH: 100 } });
        steps.forEach(([o2, flow], k) => {
          const r = u.evaluate(at(k * 30, { o2 }, { inertFlow: flow }));
          if (r.view.state === "inert") {
            expect(o2.ok).toBe(true);
            expect(o2.value!).toBeLessThanOrEqual(8);
          }
        });
      }),
      { numRuns: 200 },
    );
  });
});
