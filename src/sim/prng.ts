// Seeded pseudo-random numbers for the simulator's measurement noise.
// The same seed gives the same sequence on every machine: all arithmetic is 32-bit
// integer (Math.imul, >>>), so the output does not depend on floating-point details.

/** mulberry32: a 32-bit state generator (public-domain algorithm), uniform in [0, 1). */
export function mulberry32(seed: number): () => number {
  if (!Number.isInteger(seed)) {
    throw new Error(`simulator seed: expected an integer, found ${String(seed)}`);
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

/**
 * Standard normal deviates (mean 0, standard deviation 1) by the Box-Muller transform.
 * Each call consumes uniforms in a fixed pattern, so sequences stay reproducible.
 */
export function gaussian(uniform: () => number): () => number {
  let spare: number | null = null;
  return () => {
    if (spare !== null) {
      const s = spare;
      spare = null;
      return s;
    }
    // 1 - u lies in (0, 1], so the logarithm is finite.
    const u1 = 1 - uniform();
    const u2 = uniform();
    const r = Math.sqrt(-2 * Math.log(u1));
    spare = r * Math.sin(2 * Math.PI * u2);
    return r * Math.cos(2 * Math.PI * u2);
  };
}
