// The Theil–Sen median by selection (src/analytics/robust-slope.ts) against the median of a full
// sort. Reference: ECMA-262 %TypedArray%.prototype.sort, which orders numbers with −0 before +0,
// and the median of an even count as the mean of the two middle values (the definition the
// Theil–Sen estimator uses: Sen 1968, J. Am. Stat. Assoc. 63, "the median of the slopes").
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { medianInPlace } from "../../src/analytics/robust-slope.js";

function sortedMedian(a: Float64Array): number {
  const b = Float64Array.from(a).sort();
  const n = b.length;
  const m = n >> 1;
  return n % 2 ? b[m]! : b[m - 1]! / 2 + b[m]! / 2;
}

const value = fc.oneof(
  fc.double({ noNaN: true, min: -1e6, max: 1e6 }),
  fc.constantFrom(0, -0, 1, -1, 0.5),
  fc.integer({ min: -3, max: 3 }).map((x) => x / 10),
);

describe("median by selection", () => {
  it("property: equals the median of a full sort, ties and signed zeros included", () => {
    fc.assert(
      fc.property(fc.array(value, { minLength: 1, maxLength: 600 }), (xs) => {
        const a = Float64Array.from(xs);
        expect(Object.is(medianInPlace(a, a.length), sortedMedian(Float64Array.from(xs)))).toBe(true);
      }),
      { numRuns: 2000 },
    );
  });

  it("property: the pairwise slopes of a window (many ties) give the sorted median", () => {
    fc.assert(
      fc.property(fc.array(fc.integer({ min: 0, max: 30 }), { minLength: 2, maxLength: 70 }), (ys) => {
        const slopes: number[] = [];
        for (let i = 0; i < ys.length; i++) for (let j = i + 1; j < ys.length; j++) slopes.push((ys[j]! - ys[i]!) / 10 / ((j - i) * 5));
        const a = Float64Array.from(slopes);
        expect(Object.is(medianInPlace(a, a.length), sortedMedian(Float64Array.from(slopes)))).toBe(true);
      }),
      { numRuns: 500 },
    );
  });

  it("a large array whose evenly spaced sample misses the middle still gives the exact median", () => {
    // 3,000 values in -10..10, with every twelfth set to a huge value: a sample taken at even
    // strides sees only the huge ones and brackets nothing, so the full selection must answer.
    for (const huge of [1e6, -1e6]) {
      const a = new Float64Array(3000);
      for (let i = 0; i < a.length; i++) a[i] = i % 12 === 5 ? huge + i : ((i * 7919) % 21) - 10;
      expect(medianInPlace(Float64Array.from(a), a.length)).toBe(sortedMedian(a));
    }
  });
});
