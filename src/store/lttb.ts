// Largest-Triangle-Three-Buckets downsampling, after S. Steinarsson, "Downsampling Time
// Series for Visual Representation", MSc thesis, University of Iceland, 2013, chapter 4.2.
// Pure: no I/O.
//
// The first and the last point are always kept. The points between them are split into
// threshold − 2 buckets of (nearly) equal count; from each bucket, in order, the point kept
// is the one forming the largest triangle with the point kept from the bucket before and
// the average point of the bucket after (the last point for the last bucket). Ties keep the
// earliest point.

/**
 * Where bucket i (0 ≤ i ≤ threshold − 2) of n points starts: 1 + ⌊i·(n − 2)/(threshold − 2)⌋.
 * In integers first, so that the last bucket ends exactly at n − 1 (i·every with a rounded
 * `every` can fall short by one).
 */
function bucketStart(i: number, n: number, threshold: number): number {
  return 1 + Math.floor((i * (n - 2)) / (threshold - 2));
}

/** Index ranges [start, end) of the threshold − 2 middle buckets for n > threshold points. */
export function lttbBuckets(n: number, threshold: number): { start: number; end: number }[] {
  const out: { start: number; end: number }[] = [];
  for (let i = 0; i < threshold - 2; i++) out.push({ start: bucketStart(i, n, threshold), end: bucketStart(i + 1, n, threshold) });
  return out;
}

/**
 * Indices of the points LTTB keeps, ascending: all of them when n ≤ threshold, else exactly
 * `threshold`. xs ascending, xs and ys finite.
 */
export function lttb(xs: ArrayLike<number>, ys: ArrayLike<number>, threshold: number): Uint32Array {
  const n = xs.length;
  if (ys.length !== n) throw new RangeError(`lttb: expected as many y as x values, found ${ys.length} and ${n}`);
  if (!Number.isInteger(threshold) || threshold < 3) throw new RangeError(`lttb: expected a threshold that is a whole number ≥ 3, found ${threshold}`);
  if (n <= threshold) return Uint32Array.from({ length: n }, (_, i) => i);

  const out = new Uint32Array(threshold);
  let a = 0;
  out[0] = 0;
  for (let i = 0; i < threshold - 2; i++) {
    // The average point of the next bucket (just the last point after the last bucket).
    const nextStart = bucketStart(i + 1, n, threshold);
    const nextEnd = i + 2 <= threshold - 2 ? bucketStart(i + 2, n, threshold) : n;
    let avgX = 0;
    let avgY = 0;
    for (let j = nextStart; j < nextEnd; j++) {
      avgX += xs[j] as number;
      avgY += ys[j] as number;
    }
    const count = nextEnd - nextStart;
    avgX /= count;
    avgY /= count;

    const start = bucketStart(i, n, threshold);
    const end = nextStart;
    const ax = xs[a] as number;
    const ay = ys[a] as number;
    let best = -1;
    let kept = start;
    for (let j = start; j < end; j++) {
      // Twice the triangle's area (the factor does not change which is largest).
      const area = Math.abs((ax - avgX) * ((ys[j] as number) - ay) - (ax - (xs[j] as number)) * (avgY - ay));
      if (area > best) {
        best = area;
        kept = j;
      }
    }
    out[i + 1] = kept;
    a = kept;
  }
  out[threshold - 1] = n - 1;
  return out;
}
