import type { Rng } from './random.js';
import { groundZ, type SceneTree, type Terrain, type TreeGroup } from './scene.js';

/** Tree shapes of the invented scenes (our own ranges). */
export function broadleaf(rng: Rng, hLo = 6, hHi = 25): Omit<SceneTree, 'id' | 'x' | 'y' | 'groundZ'> {
  const h = rng.range(hLo, hHi);
  return {
    group: 'broadleaf', heightM: h,
    crownRadiusM: Math.max(2, Math.min(7, 1.4 + 0.2 * h + rng.normal(0, 0.5))),
    crownDepthM: h * rng.range(0.5, 0.72), trunkRadiusM: 0.1 + 0.014 * h,
  };
}

export function conifer(rng: Rng, hLo = 8, hHi = 30): Omit<SceneTree, 'id' | 'x' | 'y' | 'groundZ'> {
  const h = rng.range(hLo, hHi);
  return {
    group: 'conifer', heightM: h,
    crownRadiusM: Math.max(1.3, Math.min(4, 0.9 + 0.09 * h + rng.normal(0, 0.25))),
    crownDepthM: h * rng.range(0.6, 0.85), trunkRadiusM: 0.1 + 0.011 * h,
  };
}

export type TreeShape = Omit<SceneTree, 'id' | 'x' | 'y' | 'groundZ'>;

/** Collects trees and refuses positions too close to earlier ones. */
export class Placer {
  readonly trees: SceneTree[] = [];
  constructor(private readonly terrain: Terrain) {}

  /** Nearest-neighbour clearance: trunk distance / (sum of crown radii). */
  clearance(x: number, y: number, r: number): number {
    let best = Infinity;
    for (const t of this.trees) {
      const d = Math.hypot(t.x - x, t.y - y) / (t.crownRadiusM + r);
      if (d < best) best = d;
    }
    return best;
  }

  add(shape: TreeShape, x: number, y: number): SceneTree {
    const t: SceneTree = { ...shape, id: this.trees.length + 1, x, y, groundZ: groundZ(this.terrain, x, y) };
    this.trees.push(t);
    return t;
  }

  /** Dart throwing: up to `tries` positions from `pick`, accepted when `ok` and the clearance is at least `minClear`. */
  scatter(rng: Rng, count: number, shape: () => TreeShape, pick: () => [number, number], ok: (x: number, y: number, r: number) => boolean, minClear: number, tries = 60): number {
    let placed = 0;
    for (let k = 0; k < count; k++) {
      const s = shape();
      for (let a = 0; a < tries; a++) {
        const [x, y] = pick();
        if (ok(x, y, s.crownRadiusM) && this.clearance(x, y, s.crownRadiusM) >= minClear) { this.add(s, x, y); placed++; break; }
      }
    }
    return placed;
  }
}

export function mixed(rng: Rng, broadleafShare: number): () => TreeShape {
  return () => (rng.chance(broadleafShare) ? broadleaf(rng) : conifer(rng));
}

export type { TreeGroup };
