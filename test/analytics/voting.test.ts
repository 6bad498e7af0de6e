// Measurement voting of redundant analysers, against independent references: Math.max for
// "highest", the npm package simple-statistics (median) for "median", and a brute force over
// all pairs for the 2oo3 definition (the two closest trusted readings, mean of the pair).
import { describe, expect, it } from "vitest";
import fc from "fast-check";
import { median } from "simple-statistics";
import { vote, type VoteReading } from "../../src/analytics/voting.js";

const reading = fc.record({
  value: fc.option(fc.double({ min: -100, max: 100, noNaN: true }), { nil: null, freq: 6 }),
  trusted: fc.boolean(),
});

function withIds(rs: { value: number | null; trusted: boolean }[]): VoteReading[] {
  return rs.map((r, i) => ({ id: `AT-${101 + i}`, ...r }));
}

const trustedValues = (rs: VoteReading[]): number[] =>
  rs.filter((r) => r.trusted && r.value !== null).map((r) => r.value!);

describe("vote", () => {
  it("worked example: O2 analysers at 8.2, 8.4 and 11.0 % (one drifting high), limit 1 %-pt", () => {
    const rs: VoteReading[] = [
      { id: "VM2-AT-101", value: 8.2, trusted: true },
      { id: "VM2-AT-102", value: 8.4, trusted: true },
      { id: "VM2-AT-103", value: 11.0, trusted: true },
    ];
    const hi = vote(rs, "highest", 1);
    expect(hi).toMatchObject({ value: 11.0, used: ["VM2-AT-103"], disagreement: true });
    expect(hi.reason).toMatch(/spread 2\.8 > limit 1/);
    expect(vote(rs, "median", 1)).toMatchObject({ value: 8.4, used: ["VM2-AT-102"], disagreement: true });
    const two = vote(rs, "2oo3", 1);
    expect(two.value).toBeCloseTo(8.3, 12); // (8.2 + 8.4) / 2
    expect(two.used).toEqual(["VM2-AT-101", "VM2-AT-102"]);
    expect(two.reason).toMatch(/VM2-AT-103 deviates by 2\.7 from their mean/);
  });

  it("highest is the largest trusted value (reference: Math.max)", () => {
    fc.assert(
      fc.property(fc.array(reading, { minLength: 0, maxLength: 6 }), fc.double({ min: 0, max: 50, noNaN: true }), (raw, limit) => {
        const rs = withIds(raw);
        const vs = trustedValues(rs);
        const r = vote(rs, "highest", limit);
        if (!vs.length) {
          expect(r.value).toBeNull();
          expect(r.reason).toMatch(/needs 1/);
        } else {
          expect(r.value).toBe(Math.max(...vs));
          expect(rs.find((x) => x.id === r.used[0])!.value).toBe(r.value);
        }
        expect(r.disagreement).toBe(vs.length >= 2 && Math.max(...vs) - Math.min(...vs) > limit);
      }),
    );
  });

  it("median equals simple-statistics' median of the trusted values", () => {
    fc.assert(
      fc.property(fc.array(reading, { minLength: 1, maxLength: 7 }), (raw) => {
        const rs = withIds(raw);
        const vs = trustedValues(rs);
        const r = vote(rs, "median", 1);
        if (!vs.length) expect(r.value).toBeNull();
        else expect(Math.abs(r.value! - median(vs))).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(median(vs))));
      }),
    );
  });

  it("2oo3 takes the mean of the two closest trusted readings when they agree (brute force over pairs)", () => {
    fc.assert(
      fc.property(fc.array(reading, { minLength: 1, maxLength: 3 }), fc.double({ min: 0, max: 80, noNaN: true }), (raw, limit) => {
        const rs = withIds(raw);
        const vs = trustedValues(rs);
        const r = vote(rs, "2oo3", limit);
        if (vs.length < 2) {
          expect(r.value).toBeNull();
          expect(r.reason).toMatch(/needs 2/);
          return;
        }
        const pairs: [number, number][] = [];
        for (let i = 0; i < vs.length; i++) for (let j = i + 1; j < vs.length; j++) pairs.push([vs[i]!, vs[j]!]);
        const best = Math.min(...pairs.map(([a, b]) => Math.abs(a - b)));
        if (best > limit) {
          expect(r.value).toBeNull();
          expect(r.reason).toMatch(/no two trusted readings agree/);
          return;
        }
        const closest = pairs.filter(([a, b]) => Math.abs(a - b) === best);
        // a unique closest pair gives its mean; two equally close pairs share the middle reading
        const expected = closest.length === 1 ? closest[0]![0] / 2 + closest[0]![1] / 2 : median(vs);
        expect(Math.abs(r.value! - expected)).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(expected)));
      }),
    );
  });

  it("leaves out untrusted readings and readings without a value, and says so", () => {
    const rs: VoteReading[] = [
      { id: "a", value: 9.0, trusted: false },
      { id: "b", value: null, trusted: true },
      { id: "c", value: 8.0, trusted: true },
    ];
    const r = vote(rs, "2oo3", 0.5);
    expect(r).toEqual({
      value: null,
      used: [],
      disagreement: false,
      reason: "2oo3: 1 trusted of 3 readings, needs 2; left out: a not trusted, b has no value",
    });
    expect(vote(rs, "highest", 0.5)).toMatchObject({ value: 8.0, used: ["c"], disagreement: false });
    expect(vote([], "median", 0.5)).toMatchObject({ value: null, reason: "median: 0 trusted of 0 readings, needs 1" });
  });

  it("2oo3 with equally close pairs takes the middle reading", () => {
    const r = vote(
      [
        { id: "a", value: 7, trusted: true },
        { id: "b", value: 9, trusted: true },
        { id: "c", value: 8, trusted: true },
      ],
      "2oo3",
      1,
    );
    expect(r).toMatchObject({ value: 8, used: ["a", "c", "b"], disagreement: true });
  });

  it("refuses bad arguments with what was expected and what was found", () => {
    const one = [{ id: "a", value: 1, trusted: true }];
    expect(() => vote(one, "mean" as never, 1)).toThrow(/mode must be one of "highest", "median", "2oo3"; got "mean"/);
    expect(() => vote(one, "highest", -1)).toThrow(/disagreeLimit must be a finite number >= 0; got -1/);
    expect(() => vote([...one, ...one], "highest", 1)).toThrow(/ids must be unique; "a" appears twice/);
    const four = ["a", "b", "c", "d"].map((id) => ({ id, value: 1, trusted: true }));
    expect(() => vote(four, "2oo3", 1)).toThrow(/2oo3 voting takes at most 3 readings; got 4 \(a, b, c, d\)/);
  });
});
