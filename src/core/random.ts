// Seeded pseudo-random numbers (the simulator's noise, the notifier's retry jitter). The same
// seed gives the same sequence on every machine: all arithmetic is 32-bit integer (Math.imul,
// >>>), so the output does not depend on floating-point details.

/** mulberry32: a 32-bit state generator (public-domain algorithm), uniform in [0, 1). */
export function mulberry32(seed: number): () => number {
  if (!Number.isInteger(seed)) {
    throw new Error(`random seed: expected an integer, found ${String(seed)}`);
  }
  let state = seed >>> 0;
  return () => {
    state = (state + 0x6d2b79f5) >>> 0;
    let t = state;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
