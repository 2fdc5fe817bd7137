/**
 * Seeded pseudo-random numbers for the invented scenes, so a seed always
 * gives the same survey, byte for byte. The core is mulberry32 (a 32-bit
 * multiply-xorshift generator, common practice for small seeded tests);
 * normals come from the Box-Muller transform (Box & Muller 1958).
 */
export interface Rng {
  /** Uniform in [0, 1). */
  next(): number;
  /** Uniform in [lo, hi). */
  range(lo: number, hi: number): number;
  /** Integer in [lo, hi]. */
  int(lo: number, hi: number): number;
  /** Normal with the given mean and standard deviation. */
  normal(mean?: number, sd?: number): number;
  /** True with probability p. */
  chance(p: number): boolean;
  /** A generator for a sub-stream, so adding draws to one part of a scene leaves the others unchanged. */
  fork(salt: number): Rng;
}

export function makeRng(seed: number): Rng {
  let a = (seed >>> 0) ^ 0x9e3779b9;
  let spare = NaN;
  const next = (): number => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
  const rng: Rng = {
    next,
    range: (lo, hi) => lo + (hi - lo) * next(),
    int: (lo, hi) => lo + Math.floor((hi - lo + 1) * next()),
    normal: (mean = 0, sd = 1) => {
      if (!Number.isNaN(spare)) { const s = spare; spare = NaN; return mean + sd * s; }
      const u = 1 - next(), v = next();
      const r = Math.sqrt(-2 * Math.log(u));
      spare = r * Math.sin(2 * Math.PI * v);
      return mean + sd * r * Math.cos(2 * Math.PI * v);
    },
    chance: (p) => next() < p,
    fork: (salt) => makeRng(((seed >>> 0) * 31 + salt * 2654435761) >>> 0),
  };
  return rng;
}
