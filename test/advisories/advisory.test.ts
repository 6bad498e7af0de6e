// Advisory tiers and lifecycle. The states and transitions follow the alarm state model of
// ANSI/ISA-18.2-2016 (IEC 62682:2014): normal, unacknowledged, acknowledged, returned to normal
// unacknowledged, latched, shelved, suppressed by design, out of service. Deadband, on-delay,
// off-delay and re-alert as ISA-18.2 describes them.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { Advisory, type RuleInput } from "../../src/advisories/advisory.js";
import type { AdvisoryPolicy, RuleConfig } from "../../src/config/schema.js";
import { POLICY, testRule } from "./helpers.js";
import type { AdvisoryTransition, Command } from "../../src/core/types.js";

const rule = (over: Partial<RuleConfig> = {}): RuleConfig =>
  testRule("co-gradient-test", { title: "CO rising", quantity: "co.p1.gradientPpmPerMin", tiers: { notice: 3, caution: 5, warning: 15 }, deadband: 1, ...over });
const make = (over?: Partial<RuleConfig>, policy: Partial<AdvisoryPolicy> = {}) => new Advisory(rule(over), "ppm/min", "CO gradient", { ...POLICY, ...policy });
const at = (value: number | null, suppressedBy: string | null = null): RuleInput => ({ value, suppressedBy });
type DOmit<T, K extends PropertyKey> = T extends unknown ? Omit<T, K> : never;
const cmd = (c: DOmit<Command, "advisoryId" | "by"> & { by?: string }): Command => ({ advisoryId: "co-gradient-test", by: "j.operator", ...c }) as Command;

describe("tier decision", () => {
  it("picks the highest tier exceeded", () => {
    const a = make();
    expect(a.targetTier(2)).toBeNull();
    expect(a.targetTier(3)).toBe("notice");
    expect(a.targetTier(7)).toBe("caution");
    expect(a.targetTier(20)).toBe("warning");
  });
  it("low direction mirrors it", () => {
    const a = make({ direction: "low", tiers: { notice: 20, caution: 15, warning: 5 } });
    expect(a.targetTier(25)).toBeNull();
    expect(a.targetTier(18)).toBe("notice");
    expect(a.targetTier(4)).toBe("warning");
  });
  it("property: holds the active tier within the deadband, never above it", () => {
    fc.assert(
      fc.property(fc.double({ min: 0, max: 30, noNaN: true }), (v) => {
        const a = make();
        a.evaluate(at(16), 0); // warning active
        const target = a.targetTier(v);
        if (v > 14) expect(target).toBe("warning");
        else if (v >= 5) expect(target).toBe("caution");
        else if (v > 2) expect(target).toBe("notice");
        else expect(target).toBeNull();
      }),
    );
  });
});

// ---- The exhaustive table: every state × every event → state (or refusal). ----

type Ev = "cond-on" | "cond-off" | "ack" | "reset" | "shelve" | "unshelve" | "suppress" | "unsuppress" | "oos" | "rts";
const EVENTS: Ev[] = ["cond-on", "cond-off", "ack", "reset", "shelve", "unshelve", "suppress", "unsuppress", "oos", "rts"];

/** A small driver: keeps the condition and the suppression, steps one second per event. */
class Driver {
  t = 0;
  cond = false;
  sup = false;
  constructor(readonly a: Advisory) {}
  private input() {
    return at(this.cond ? 6 : 0, this.sup ? "mill is standstill-empty; the rule applies in grinding" : null);
  }
  /** The events of the step, or the refusal's HTTP-like status. */
  step(e: Ev): AdvisoryTransition[] | number {
    this.t += 1000;
    const c = (x: DOmit<Command, "advisoryId" | "by" | "atMs">) => {
      const r = this.a.command(cmd({ ...x, atMs: this.t } as Command));
      return r.ok ? r.events : r.status;
    };
    switch (e) {
      case "cond-on":
        this.cond = true;
        return this.a.evaluate(this.input(), this.t);
      case "cond-off":
        this.cond = false;
        return this.a.evaluate(this.input(), this.t);
      case "suppress":
        this.sup = true;
        return this.a.evaluate(this.input(), this.t);
      case "unsuppress":
        this.sup = false;
        return this.a.evaluate(this.input(), this.t);
      case "ack":
        return c({ kind: "ack" });
      case "reset":
        return c({ kind: "reset" });
      case "shelve":
        return c({ kind: "shelve", reason: "analyser drift known, work order 4711", durationS: 3600 });
      case "unshelve":
        return c({ kind: "unshelve" });
      case "oos":
        return c({ kind: "out-of-service", reason: "analyser removed for repair", role: "engineer" });
      case "rts":
        return c({ kind: "return-to-service", role: "engineer" });
    }
  }
}

/** How to reach each start state (the condition present in the held states). */
const SETUP: Record<string, { latching?: boolean; steps: Ev[] }> = {
  normal: { steps: [] },
  unack: { steps: ["cond-on"] },
  ack: { steps: ["cond-on", "ack"] },
  "rtn-unack": { steps: ["cond-on", "cond-off"] },
  latched: { latching: true, steps: ["cond-on", "cond-off"] },
  shelved: { steps: ["cond-on", "shelve"] },
  suppressed: { steps: ["cond-on", "suppress"] },
  "out-of-service": { steps: ["cond-on", "oos"] },
};

// Expected: the state after the event and the transition emitted ("-" for none), or a refusal status.
type Cell = [string, string] | number;
const TABLE: Record<string, Record<Ev, Cell>> = {
  normal: {
    "cond-on": ["unack", "raise"], "cond-off": ["normal", "-"], ack: 404, reset: 409, shelve: ["shelved", "shelve"],
    unshelve: 409, suppress: ["suppressed", "suppress"], unsuppress: ["normal", "-"], oos: ["out-of-service", "out-of-service"], rts: 409,
  },
  unack: {
    "cond-on": ["unack", "-"], "cond-off": ["rtn-unack", "clear"], ack: ["ack", "ack"], reset: 409, shelve: ["shelved", "shelve"],
    unshelve: 409, suppress: ["suppressed", "suppress"], unsuppress: ["unack", "-"], oos: ["out-of-service", "out-of-service"], rts: 409,
  },
  ack: {
    "cond-on": ["ack", "-"], "cond-off": ["normal", "clear"], ack: 409, reset: 409, shelve: ["shelved", "shelve"],
    unshelve: 409, suppress: ["suppressed", "suppress"], unsuppress: ["ack", "-"], oos: ["out-of-service", "out-of-service"], rts: 409,
  },
  "rtn-unack": {
    "cond-on": ["unack", "raise"], "cond-off": ["rtn-unack", "-"], ack: ["normal", "ack"], reset: 409, shelve: ["shelved", "shelve"],
    unshelve: 409, suppress: ["suppressed", "suppress"], unsuppress: ["rtn-unack", "-"], oos: ["out-of-service", "out-of-service"], rts: 409,
  },
  latched: {
    "cond-on": ["unack", "raise"], "cond-off": ["latched", "-"], ack: ["latched", "ack"], reset: ["normal", "reset"], shelve: ["shelved", "shelve"],
    unshelve: 409, suppress: ["suppressed", "suppress"], unsuppress: ["latched", "-"], oos: ["out-of-service", "out-of-service"], rts: 409,
  },
  shelved: {
    "cond-on": ["shelved", "-"], "cond-off": ["shelved", "-"], ack: 409, reset: 409, shelve: 409,
    unshelve: ["unack", "unshelve"], suppress: ["shelved", "-"], unsuppress: ["shelved", "-"], oos: ["out-of-service", "out-of-service"], rts: 409,
  },
  suppressed: {
    "cond-on": ["suppressed", "-"], "cond-off": ["suppressed", "-"], ack: 409, reset: 409, shelve: ["shelved", "shelve"],
    unshelve: 409, suppress: ["suppressed", "-"], unsuppress: ["unack", "unsuppress"], oos: ["out-of-service", "out-of-service"], rts: 409,
  },
  "out-of-service": {
    "cond-on": ["out-of-service", "-"], "cond-off": ["out-of-service", "-"], ack: 409, reset: 409, shelve: 409,
    unshelve: 409, suppress: ["out-of-service", "-"], unsuppress: ["out-of-service", "-"], oos: 409, rts: ["unack", "return-to-service"],
  },
};

describe("lifecycle: state × event (ISA-18.2 states)", () => {
  for (const [start, row] of Object.entries(TABLE)) {
    for (const ev of EVENTS) {
      it(`${start} + ${ev}`, () => {
        const setup = SETUP[start]!;
        const d = new Driver(make({ latching: setup.latching ?? false }));
        for (const s of setup.steps) expect(d.step(s), `setup ${s}`).not.toBeTypeOf("number");
        expect(d.a.state, "setup reached").toBe(start);
        const r = d.step(ev);
        const want = row[ev];
        if (typeof want === "number") {
          expect(r).toBe(want);
          expect(d.a.state, "a refusal changes nothing").toBe(start);
        } else {
          expect(r).not.toBeTypeOf("number");
          const events = r as AdvisoryTransition[];
          expect(d.a.state).toBe(want[0]);
          expect(events.map((e) => e.transition).join(",") || "-").toBe(want[1]);
          for (const e of events) {
            expect(e.from).toBe(start);
            expect(e.to).toBe(want[0]);
            expect(e.atMs).toBe(d.t);
            expect(e.by.length).toBeGreaterThan(0);
            expect(e.why.length).toBeGreaterThan(0);
          }
        }
      });
    }
  }

  it("escalation needs a new acknowledgement", () => {
    const a = make();
    a.evaluate(at(6), 0);
    a.command(cmd({ kind: "ack", atMs: 1000 }));
    const [e] = a.evaluate(at(20), 2000);
    expect(e).toMatchObject({ transition: "escalate", from: "ack", to: "unack", tier: "warning" });
  });

  it("a one-shot shelve ends when the condition clears", () => {
    const a = make();
    a.evaluate(at(6), 0);
    expect(a.command(cmd({ kind: "shelve", atMs: 1000, reason: "filter bags being changed", oneShot: true }))).toMatchObject({ ok: true });
    expect(a.evaluate(at(7), 2000)).toEqual([]);
    const [e] = a.evaluate(at(0), 3000);
    expect(e).toMatchObject({ transition: "unshelve", from: "shelved", to: "normal", by: "millwarden" });
    expect(a.state).toBe("normal");
  });

  it("a timed shelve expires by itself and shows the condition if still present", () => {
    const a = make();
    a.evaluate(at(6), 0);
    a.command(cmd({ kind: "shelve", atMs: 0, reason: "known drift", durationS: 900 }));
    expect(a.evaluate(at(6), 899_000)).toEqual([]);
    const [e] = a.evaluate(at(6), 900_000);
    expect(e).toMatchObject({ transition: "unshelve", to: "unack", why: "shelve expired after 15 min" });
  });

  it("shelving needs a reason and a duration within the maximum; warnings are not shelvable unless the site allows it", () => {
    const a = make({}, { maxShelveS: 3600 });
    a.evaluate(at(6), 0);
    expect(a.command(cmd({ kind: "shelve", atMs: 1, reason: " ", durationS: 60 }))).toMatchObject({ ok: false, status: 400, error: expect.stringMatching(/reason/) });
    expect(a.command(cmd({ kind: "shelve", atMs: 1, reason: "r" }))).toMatchObject({ ok: false, status: 400, error: expect.stringMatching(/durationS/) });
    expect(a.command(cmd({ kind: "shelve", atMs: 1, reason: "r", durationS: 7200 }))).toMatchObject({ ok: false, status: 400, error: expect.stringMatching(/3600/) });
    a.evaluate(at(20), 2);
    expect(a.command(cmd({ kind: "shelve", atMs: 3, reason: "r", durationS: 60 }))).toMatchObject({ ok: false, status: 409, error: expect.stringMatching(/warning/) });
    const b = make({}, { shelveWarnings: true });
    b.evaluate(at(20), 0);
    expect(b.command(cmd({ kind: "shelve", atMs: 1, reason: "r", durationS: 60 }))).toMatchObject({ ok: true });
  });

  it("out of service needs the engineer role and a reason", () => {
    const a = make();
    expect(a.command(cmd({ kind: "out-of-service", atMs: 0, reason: "repair", role: "operator" }))).toMatchObject({ ok: false, status: 403 });
    expect(a.command(cmd({ kind: "out-of-service", atMs: 0, reason: "", role: "engineer" }))).toMatchObject({ ok: false, status: 400 });
    expect(a.command(cmd({ kind: "return-to-service", atMs: 0, role: "operator" }))).toMatchObject({ ok: false, status: 403 });
  });

  it("every transition carries who, when and why; the view says advisory only", () => {
    const a = make();
    const [raise] = a.evaluate(at(6), 5000);
    expect(raise).toMatchObject({ by: "millwarden", atMs: 5000, tier: "caution", limit: 5, from: "normal", to: "unack" });
    expect(raise!.why).toMatch(/CO gradient 6\.0 ppm\/min reached the caution threshold 5\.0/);
    const ack = a.command(cmd({ kind: "ack", atMs: 6000, note: "checking the filter" }));
    expect(ack).toMatchObject({ ok: true, events: [{ by: "j.operator", atMs: 6000, why: "checking the filter" }] });
    expect(a.view()!.message).toMatch(/ADVISORY ONLY/);
  });

  it("unknown values neither raise nor clear", () => {
    const a = make();
    expect(a.evaluate(at(null), 0)).toEqual([]);
    a.evaluate(at(6), 1000);
    expect(a.evaluate(at(null), 2000)).toEqual([]);
    expect(a.state).toBe("unack");
    expect(a.activeTier).toBe("caution");
  });

  it("a state rule is active while the state matches", () => {
    const a = new Advisory(rule({ quantity: "phase.vm2", direction: undefined, tiers: undefined, states: ["standstill-loaded"], tier: "caution" }), "", "phase of mill 2", POLICY);
    expect(a.evaluate({ value: 0, stateText: "grinding", suppressedBy: null }, 0)).toEqual([]);
    const [e] = a.evaluate({ value: 1, stateText: "standstill-loaded", suppressedBy: null }, 1000);
    expect(e).toMatchObject({ transition: "raise", tier: "caution", why: "phase of mill 2 standstill-loaded reached the caution state (standstill-loaded)" });
    expect(a.view()).toMatchObject({ states: ["standstill-loaded"], stateValue: "standstill-loaded" });
  });
});

describe("re-alert", () => {
  it("an acknowledged advisory still present after reAlertS asks again", () => {
    const a = make({ reAlertS: 600 });
    a.evaluate(at(6), 0);
    a.command(cmd({ kind: "ack", atMs: 10_000 }));
    expect(a.evaluate(at(6), 609_999)).toEqual([]);
    const [e] = a.evaluate(at(6), 610_000);
    expect(e).toMatchObject({ transition: "re-alert", from: "ack", to: "unack" });
  });
});

// ---- Delays: checked against a brute-force reading of the definitions. ----

describe("on-delay and off-delay", () => {
  it("raises only after the condition held for the on-delay, and restarts on a dip", () => {
    const a = make({ onDelayS: 30 });
    expect(a.evaluate(at(6), 0)).toEqual([]);
    expect(a.evaluate(at(6), 29_000)).toEqual([]);
    expect(a.evaluate(at(2), 29_500)).toEqual([]); // dips below: the delay starts again
    expect(a.evaluate(at(6), 30_000)).toEqual([]);
    expect(a.evaluate(at(6), 59_999)).toEqual([]);
    expect(a.evaluate(at(6), 60_000)[0]).toMatchObject({ transition: "raise", tier: "caution" });
  });

  it("clears only after the condition was gone for the off-delay", () => {
    const a = make({ offDelayS: 20 });
    a.evaluate(at(6), 0);
    expect(a.evaluate(at(0), 1000)).toEqual([]);
    expect(a.evaluate(at(6), 10_000)).toEqual([]); // back: the off-delay starts again
    expect(a.evaluate(at(0), 11_000)).toEqual([]);
    expect(a.evaluate(at(0), 30_999)).toEqual([]);
    expect(a.evaluate(at(0), 31_000)[0]).toMatchObject({ transition: "clear" });
  });

  it("property: a raise happens exactly when the condition has held for the on-delay; a clear exactly when gone for the off-delay", () => {
    fc.assert(
      fc.property(
        fc.array(fc.boolean(), { minLength: 1, maxLength: 150 }),
        fc.integer({ min: 0, max: 10 }),
        fc.integer({ min: 0, max: 10 }),
        (on, onDelayS, offDelayS) => {
          const a = make({ onDelayS, offDelayS, deadband: 0, tiers: { caution: 5 } });
          // Reference model straight from the definitions, one sample a second.
          let active = false;
          let since = 0;
          on.forEach((c, i) => {
            const t = i * 1000;
            if (i === 0 || c !== on[i - 1]) since = t;
            let want: string | null = null;
            if (!active && c && t - since >= onDelayS * 1000) {
              active = true;
              want = "raise";
            } else if (active && !c && t - since >= offDelayS * 1000) {
              active = false;
              want = "clear";
            }
            const got = a.evaluate(at(c ? 6 : 0), t).map((e) => e.transition);
            expect(got).toEqual(want ? [want] : []);
          });
        },
      ),
    );
  });
});
