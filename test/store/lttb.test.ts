// LTTB (src/store/lttb.ts) against S. Steinarsson, "Downsampling Time Series for Visual
// Representation", MSc thesis, University of Iceland, 2013, section 4.2: keep the first and
// the last point; split the others into threshold − 2 buckets of equal count; from each
// bucket in turn keep the point of the largest triangle with the point kept before and the
// average of the next bucket (the last point for the last bucket).
import fc from "fast-check";
import { describe, expect, it } from "vitest";
import { lttb, lttbBuckets } from "../../src/store/lttb.js";

/**
 * A straightforward reference written from the thesis' description: explicit bucket arrays,
 * the triangle area by the shoelace formula ½|xa(yb − yc) + xb(yc − ya) + xc(ya − yb)|.
 */
function reference(xs: number[], ys: number[], m: number): { kept: number[]; areaOf: (prev: number, j: number, bucket: number) => number; buckets: number[][] } {
  const n = xs.length;
  const middle = Array.from({ length: n - 2 }, (_, i) => i + 1);
  const buckets: number[][] = [[0]];
  for (let b = 0; b < m - 2; b++) {
    // Equal shares of the n − 2 middle points, by whole-number arithmetic.
    const from = Math.floor((b * (n - 2)) / (m - 2));
    const to = Math.floor(((b + 1) * (n - 2)) / (m - 2));
    buckets.push(middle.slice(from, to));
  }
  buckets.push([n - 1]);
  // Times are epoch ms (about 1.7e12): measured from the first point, so that the shoelace
  // products stay small and exact enough (an area does not change when the points move).
  const x0 = xs[0] as number;
  const area = (a: number, bx: number, by: number, cx: number, cy: number): number =>
    0.5 * Math.abs(((xs[a] as number) - x0) * (by - cy) + (bx - x0) * (cy - (ys[a] as number)) + (cx - x0) * ((ys[a] as number) - by));
  const avg = (bucket: number[]): [number, number] => [bucket.reduce((s, j) => s + (xs[j] as number), 0) / bucket.length, bucket.reduce((s, j) => s + (ys[j] as number), 0) / bucket.length];
  const areaOf = (prev: number, j: number, bucket: number): number => {
    const [cx, cy] = avg(buckets[bucket + 1] as number[]);
    return area(prev, xs[j] as number, ys[j] as number, cx, cy);
  };
  const kept = [0];
  for (let b = 1; b <= m - 2; b++) {
    const prev = kept.at(-1) as number;
    let best = -1;
    let pick = -1;
    for (const j of buckets[b] as number[]) {
      const s = areaOf(prev, j, b);
      if (s > best) {
        best = s;
        pick = j;
      }
    }
    kept.push(pick);
  }
  kept.push(n - 1);
  return { kept, areaOf, buckets };
}

describe("lttb", () => {
  it("picks the points a hand computation gives", () => {
    // n = 6, threshold 4: buckets {0} {1,2} {3,4} {5}.
    // Bucket {1,2}: a = (0,0), next average (3.5, 4.5): areas ½|−3.5·5 + 1·4.5| = 6.5 for (1,5)
    //   and ½|−3.5·1 + 2·4.5| = 2.75 for (2,1): keep 1.
    // Bucket {3,4}: a = (1,5), next = (5,0): ½|(1−5)(1−5) − (1−3)(0−5)| = 3 for (3,1),
    //   ½|(1−5)(8−5) − (1−4)(0−5)| = 13.5 for (4,8): keep 4.
    expect([...lttb([0, 1, 2, 3, 4, 5], [0, 5, 1, 1, 8, 0], 4)]).toEqual([0, 1, 4, 5]);
  });

  it("agrees with the reference: first and last kept, threshold points out, the largest triangle in each bucket", () => {
    fc.assert(
      fc.property(
        fc.integer({ min: 3, max: 60 }).chain((m) =>
          fc.tuple(
            fc.constant(m),
            fc.array(fc.tuple(fc.integer({ min: 1, max: 5000 }), fc.double({ min: -1e6, max: 1e6, noNaN: true })), { minLength: 1, maxLength: 600 }),
          ),
        ),
        ([m, rows]) => {
          const xs: number[] = [];
          let x = 1_700_000_000_000;
          for (const [g] of rows) xs.push((x += g));
          const ys = rows.map(([, y]) => y);
          const got = [...lttb(xs, ys, m)];
          if (xs.length <= m) {
            expect(got).toEqual(xs.map((_, i) => i));
            return;
          }
          const ref = reference(xs, ys, m);
          expect(got).toHaveLength(m);
          expect(got[0]).toBe(0);
          expect(got.at(-1)).toBe(xs.length - 1);
          expect(lttbBuckets(xs.length, m).map((b) => Array.from({ length: b.end - b.start }, (_, k) => b.start + k))).toEqual(ref.buckets.slice(1, -1));
          for (let b = 1; b <= m - 2; b++) {
            const j = got[b] as number;
            expect(ref.buckets[b]).toContain(j);
            // The largest triangle with the point kept before: rounding in the two area formulas
            // may differ in the last bits, so a near tie may go either way.
            const prev = got[b - 1] as number;
            const max = Math.max(...(ref.buckets[b] as number[]).map((k) => ref.areaOf(prev, k, b)));
            expect(ref.areaOf(prev, j, b)).toBeGreaterThanOrEqual(max * (1 - 1e-9) - 1e-9);
          }
          // Without near ties the very same points.
          if (got.every((j, b) => b === 0 || b === m - 1 || j === ref.kept[b]) === false) {
            const ties = got.some((j, b) => b > 0 && b < m - 1 && Math.abs(ref.areaOf(got[b - 1] as number, j, b) - ref.areaOf(got[b - 1] as number, ref.kept[b] as number, b)) > 1e-6 * (1 + ref.areaOf(got[b - 1] as number, j, b)));
            expect(ties).toBe(false);
          }
        },
      ),
      { numRuns: 300 },
    );
  });

  it("keeps a lone spike", () => {
    const xs = Array.from({ length: 1000 }, (_, i) => i * 1000);
    const ys = xs.map((_, i) => (i === 617 ? 250 : 80 + (i % 7) * 0.01));
    expect([...lttb(xs, ys, 50)]).toContain(617);
  });

  it("rejects a threshold below 3 and mismatched arrays", () => {
    expect(() => lttb([1, 2, 3], [1, 2, 3], 2)).toThrow("lttb: expected a threshold that is a whole number ≥ 3, found 2");
    expect(() => lttb([1, 2, 3], [1, 2], 3)).toThrow("lttb: expected as many y as x values, found 2 and 3");
  });
});
