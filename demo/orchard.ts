import type { Rng } from './random.js';
import { MAT, type Scene, type Terrain } from './scene.js';
import { Placer } from './place.js';

/**
 * "Hollin Rise orchard": an invented fruit orchard (default 120 m x 80 m):
 * east-west rows 5 m apart, trees every 4.2 m with small jitter, about one
 * in sixteen missing, bare soil along each row and grass strips between.
 */
export const ORCHARD_ORIGIN: [number, number] = [462800, 5769100];

export function orchardScene(rng: Rng, widthM = 120, heightM = 80): Scene {
  const W = widthM, H = heightM;
  const terrain: Terrain = { baseZ: 71, waves: [{ amp: 0.6, kx: (2 * Math.PI) / 150, ky: (2 * Math.PI) / 400, phase: 1.2 }, { amp: 0.25, kx: 0, ky: (2 * Math.PI) / 70, phase: 0.3 }] };
  const rowGap = 5, treeGap = 4.2, margin = 4;
  const place = new Placer(terrain);
  const rowYs: number[] = [];
  for (let y = margin; y <= H - margin; y += rowGap) rowYs.push(y);
  for (const ry of rowYs) {
    for (let x = margin; x <= W - margin; x += treeGap) {
      if (rng.chance(1 / 16)) continue; // missing tree
      const h = rng.range(3, 5);
      place.add({ group: 'broadleaf', heightM: h, crownRadiusM: rng.range(1.5, 2.5), crownDepthM: h * rng.range(0.6, 0.72), trunkRadiusM: 0.08 }, x + rng.normal(0, 0.15), ry + rng.normal(0, 0.15));
    }
  }
  return {
    name: 'Hollin Rise orchard', widthM: W, heightM: H, originX: ORCHARD_ORIGIN[0], originY: ORCHARD_ORIGIN[1],
    terrain, trees: place.trees, shrubs: [], buildings: [],
    groundMaterial: (_x, y) => {
      const m = (((y - margin) % rowGap) + rowGap) % rowGap;
      return Math.min(m, rowGap - m) < 1 && y > margin - 1 && y < rowYs[rowYs.length - 1]! + 1 ? MAT.soil : MAT.grass;
    },
  };
}
