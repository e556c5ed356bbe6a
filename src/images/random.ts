// Seeded pseudo-random numbers for generated scenes: a 32-bit integer generator and Box-Muller Gaussians.
// Pure and platform-independent integer arithmetic (Math.imul); must not import anything.

/**
 * mulberry32 (Tommy Ettinger, 2017, public domain; from memory): a 32-bit state advanced by a Weyl step
 * and scrambled by two multiply-xorshift rounds. Same seed, same sequence on every machine.
 */
export function mulberry32(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return (t ^ (t >>> 14)) >>> 0;
  };
}

/** Uniform numbers in the open interval (0, 1): (k + 0.5) / 2^32, never 0, so log(u) is always finite. */
export function uniform(next: () => number): () => number {
  return () => (next() + 0.5) / 4294967296;
}

/**
 * Standard normal numbers by the Box-Muller transform (Box and Muller, 1958, Ann. Math. Statist. 29(2)):
 * z0 = sqrt(-2 ln u1) cos(2 pi u2), z1 = sqrt(-2 ln u1) sin(2 pi u2); both are used, in that order.
 */
export function gaussian(next: () => number): () => number {
  const u = uniform(next);
  let spare = 0;
  let has = false;
  return () => {
    if (has) {
      has = false;
      return spare;
    }
    const r = Math.sqrt(-2 * Math.log(u()));
    const th = 2 * Math.PI * u();
    spare = r * Math.sin(th);
    has = true;
    return r * Math.cos(th);
  };
}

/** Derives an independent-looking seed for a sub-stream (one round of the same scrambler on seed ^ salt). */
export function deriveSeed(seed: number, salt: number): number {
  return mulberry32((seed ^ Math.imul(salt, 0x9e3779b9)) >>> 0)();
}
