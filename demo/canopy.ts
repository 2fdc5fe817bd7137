import type { Rng } from './random.js';
import { MAT, type Scene, type Terrain } from './scene.js';
import { Placer, broadleaf, conifer, mixed } from './place.js';

/**
 * "Cragwell Hanger": an invented closed mixed woodland (default 100 m x
 * 100 m) on a slope: dominant crowns packed so they touch and interlock,
 * and an understorey of smaller trees, many of them overtopped.
 */
export const CANOPY_ORIGIN: [number, number] = [447500, 5790300];

export function canopyScene(rng: Rng, widthM = 100, heightM = 100): Scene {
  const W = widthM, H = heightM;
  const terrain: Terrain = { baseZ: 118, waves: [{ amp: 2.5, kx: (2 * Math.PI) / 220, ky: (2 * Math.PI) / 260, phase: 0.2 }, { amp: 0.8, kx: (2 * Math.PI) / 60, ky: -(2 * Math.PI) / 75, phase: 1.9 }] };
  const place = new Placer(terrain);
  const any = () => [rng.range(0, W), rng.range(0, H)] as [number, number];
  const ok = (x: number, y: number) => x > 1 && x < W - 1 && y > 1 && y < H - 1;
  const dominant = () => (rng.chance(0.55) ? broadleaf(rng, 16, 25) : conifer(rng, 18, 30));
  place.scatter(rng, Math.round((W * H) / 30), dominant, any, ok, 0.72, 40);
  const understorey = () => (rng.chance(0.6) ? broadleaf(rng, 6, 12) : conifer(rng, 8, 13));
  const placed = place.scatter(rng, Math.round((W * H) / 150), understorey, any, ok, 0.3, 20);
  void placed; void mixed;
  return {
    name: 'Cragwell Hanger', widthM: W, heightM: H, originX: CANOPY_ORIGIN[0], originY: CANOPY_ORIGIN[1],
    terrain, trees: place.trees, shrubs: [], buildings: [],
    groundMaterial: () => MAT.soil,
  };
}
