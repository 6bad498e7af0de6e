// Advisory tiers and lifecycle. The states and transitions follow the alarm state
// diagram of ANSI/ISA-18.2 (IEC 62682): Normal, Unacknowledged, Acknowledged,
// Returned to normal unacknowledged. Deadband and on-delay as ISA-18.2 defines them.
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { Advisory } from "../../src/advisories/advisory.js";
import type { RuleConfig } from "../../src/config/schema.js";

const rule = (over: Partial<RuleConfig> = {}): RuleConfig => ({
  id: "co-gradient-test",
  title: "CO rising",
  quantity: "co.p1.gradientPpmPerMin",
  direction: "high",
  tiers: { notice: 3, caution: 5, warning: 15 },
  deadband: 1,
  onDelayS: 0,
  cause: "c",
  consequence: "c",
  check: "c",
  origin: "test",
  ...over,
});
const make = (over?: Partial<RuleConfig>) => new Advisory(rule(over), "ppm/min", "CO gradient");

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
  it("holds the active tier within the deadband, never above it", () => {
    fc.assert(
      fc.property(fc.double({ min: 0, max: 30, noNaN: true }), (v) => {
        const a = make();
        a.evaluate(16, 0); // warning active
        const target = a.targetTier(v);
        if (v > 14) expect(target).toBe("warning");
        else if (v >= 5) expect(target).toBe("caution");
        else if (v > 2) expect(target).toBe("notice");
        else expect(target).toBeNull();
      }),
    );
  });
});

describe("lifecycle (ISA-18.2 states)", () => {
  it("state × event table", () => {
    type Step = { event: "exceed" | "clear" | "ack" | "escalate"; to: string; transition: string | null };
    const cases: { name: string; steps: Step[] }[] = [
      { name: "raise, ack, clear", steps: [
        { event: "exceed", to: "unack", transition: "raise" },
        { event: "ack", to: "ack", transition: "ack" },
        { event: "clear", to: "normal", transition: "clear" },
      ] },
      { name: "raise, clear, ack", steps: [
        { event: "exceed", to: "unack", transition: "raise" },
        { event: "clear", to: "rtn-unack", transition: "clear" },
        { event: "ack", to: "normal", transition: "ack" },
      ] },
      { name: "returned unacknowledged, raised again", steps: [
        { event: "exceed", to: "unack", transition: "raise" },
        { event: "clear", to: "rtn-unack", transition: "clear" },
        { event: "exceed", to: "unack", transition: "raise" },
      ] },
      { name: "escalation needs a new acknowledgement", steps: [
        { event: "exceed", to: "unack", transition: "raise" },
        { event: "ack", to: "ack", transition: "ack" },
        { event: "escalate", to: "unack", transition: "escalate" },
      ] },
    ];
    const value = { exceed: 6, clear: 0, escalate: 20 } as const;
    for (const c of cases) {
      const a = make();
      let t = 0;
      for (const s of c.steps) {
        t += 1000;
        const events =
          s.event === "ack" ? (a.acknowledge("operator-1", t) as { ok: true; events: unknown[] }).events : a.evaluate(value[s.event], t);
        expect(a.state, `${c.name}: after ${s.event}`).toBe(s.to);
        expect((events[0] as { transition?: string } | undefined)?.transition ?? null, c.name).toBe(s.transition);
      }
    }
  });

  it("acknowledging an inactive advisory is 404, twice is 409", () => {
    const a = make();
    expect(a.acknowledge("op", 0)).toMatchObject({ ok: false, status: 404 });
    a.evaluate(6, 0);
    expect(a.acknowledge("op", 1)).toMatchObject({ ok: true });
    expect(a.acknowledge("op", 2)).toMatchObject({ ok: false, status: 409 });
  });

  it("every transition carries who, when and why; the view says advisory only", () => {
    const a = make();
    const [raise] = a.evaluate(6, 5000);
    expect(raise).toMatchObject({ by: "millwarden", atMs: 5000, tier: "caution", limit: 5, from: "normal", to: "unack" });
    expect(raise!.why).toMatch(/CO gradient 6\.0 ppm\/min reached the caution threshold 5\.0/);
    const ack = a.acknowledge("j.operator", 6000, "checking the filter");
    expect(ack).toMatchObject({ ok: true, events: [{ by: "j.operator", atMs: 6000, why: "checking the filter" }] });
    expect(a.view()!.message).toMatch(/ADVISORY ONLY/);
  });

  it("unknown values neither raise nor clear", () => {
    const a = make();
    expect(a.evaluate(null, 0)).toEqual([]);
    a.evaluate(6, 1000);
    expect(a.evaluate(null, 2000)).toEqual([]);
    expect(a.state).toBe("unack");
    expect(a.activeTier).toBe("caution");
  });
});

describe("on-delay", () => {
  it("raises only after the condition held for the on-delay, and restarts on a dip", () => {
    const a = make({ onDelayS: 30 });
    expect(a.evaluate(6, 0)).toEqual([]);
    expect(a.evaluate(6, 29_000)).toEqual([]);
    expect(a.evaluate(2, 29_500)).toEqual([]); // dips below: the delay starts again
    expect(a.evaluate(6, 30_000)).toEqual([]);
    expect(a.evaluate(6, 59_999)).toEqual([]);
    expect(a.evaluate(6, 60_000)[0]).toMatchObject({ transition: "raise", tier: "caution" });
  });

  it("property: never raised while the condition has held for less than the on-delay", () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 10, noNaN: true }), { minLength: 1, maxLength: 200 }), fc.integer({ min: 1, max: 20 }), (values, delayS) => {
        const a = make({ onDelayS: delayS, deadband: 0 });
        let heldSince: number | null = null;
        values.forEach((v, i) => {
          const t = i * 1000;
          if (v >= 3) heldSince ??= t;
          else heldSince = null;
          const events = a.evaluate(v, t);
          for (const e of events) if (e.transition === "raise") expect(t - heldSince!).toBeGreaterThanOrEqual(delayS * 1000);
        });
      }),
    );
  });
});
