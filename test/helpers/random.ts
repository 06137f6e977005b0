/**
 * The one seeded random generator of the tests, so every noisy or randomised test repeats exactly and a failing
 * sequence can be replayed from its seed.
 */

/**
 * Mulberry32 (Tommy Ettinger, 2017, public domain): a 32-bit state generator of uniform numbers in [0, 1).
 *
 * @example const r = rng(1); r() // the same first number on every run
 */
export function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}
