// Seeded pseudo-random numbers for the simulator's measurement noise: the generator is
// src/core/random.ts (the same seed gives the same sequence on every machine).

export { mulberry32 } from "../core/random.js";

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
