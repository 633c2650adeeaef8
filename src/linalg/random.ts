/**
 * A small seeded pseudo-random generator (mulberry32): the same seed gives the same numbers on
 * every machine, so seeded noise in initial states is reproducible from the seed alone.
 */

/** Deterministic uniform generator on [0, 1) from a 32-bit seed. */
export function seededRandom(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** Largest seed accepted (seeds are whole numbers from 0 to this). */
export const maxSeed = 4294967295;
