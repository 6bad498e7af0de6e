// The paired (time, value) ring buffers the rolling windows keep: doubling them keeps
// pushes amortised O(1) while the window's size settles.

/** Copies the `n` points starting at `head` into buffers twice as large, oldest first. */
export function grownRing(t: Float64Array, v: Float64Array, head: number, n: number): { t: Float64Array; v: Float64Array } {
  const cap = t.length * 2;
  const t2 = new Float64Array(cap);
  const v2 = new Float64Array(cap);
  for (let i = 0; i < n; i++) {
    const idx = (head + i) % t.length;
    t2[i] = t[idx]!;
    v2[i] = v[idx]!;
  }
  return { t: t2, v: v2 };
}
