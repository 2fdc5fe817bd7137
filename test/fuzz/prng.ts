/**
 * A small seeded generator so every fuzz case can be replayed from its seed
 * and case number. mulberry32 (Tommy Ettinger, 2017, public-domain 32-bit
 * generator): fine for picking mutations, not for statistics.
 */
export class Rng {
  private s: number;
  constructor(seed: number) { this.s = seed >>> 0; }
  /** Uniform in [0, 2^32). */
  u32(): number {
    let t = (this.s = (this.s + 0x6d2b79f5) >>> 0);
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return (t ^ (t >>> 14)) >>> 0;
  }
  /** Uniform in [0, 1). */
  next(): number { return this.u32() / 4294967296; }
  /** Whole number in [0, n). */
  int(n: number): number { return Math.floor(this.next() * n); }
  pick<T>(a: readonly T[]): T { return a[this.int(a.length)]!; }
  chance(p: number): boolean { return this.next() < p; }
}

/** The seed of case `i` of a run seeded `seed`: each case replays on its own. */
export function caseSeed(seed: number, i: number): number {
  return (Math.imul(seed ^ 0x9e3779b9, 0x85ebca6b) + Math.imul(i + 1, 0xc2b2ae35)) >>> 0;
}
