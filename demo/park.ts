import type { Rng } from './random.js';
import { MAT, crownTopZ, groundZ, type Scene, type SceneBuilding, type SceneShrub, type Terrain } from './scene.js';
import { Placer, broadleaf, conifer, mixed } from './place.js';

/**
 * "Larkmoor Common": an invented town park (default 180 m x 140 m) with
 * scattered broadleaf and conifer trees, three clumps of touching crowns,
 * two small trees under big ones, shrubs, a flat-roofed pavilion, a gabled
 * tool shed and a winding gravel path over gently rolling ground. Every
 * shape and number here is our own.
 */
export const PARK_ORIGIN: [number, number] = [451200, 5782400]; // UTM 33N, invented site

export function parkScene(rng: Rng, widthM = 180, heightM = 140, withShed = true): Scene {
  const W = widthM, H = heightM;
  const terrain: Terrain = {
    baseZ: 46,
    waves: [
      { amp: 1.4, kx: (2 * Math.PI) / 170, ky: 0.3 * (2 * Math.PI) / 170, phase: 0.7 },
      { amp: 0.9, kx: (2 * Math.PI) / 120, ky: -(2 * Math.PI) / 110, phase: 2.1 },
      { amp: 0.35, kx: (2 * Math.PI) / 45, ky: (2 * Math.PI) / 60, phase: 4.0 },
    ],
  };
  const pathY = (x: number) => H * 0.43 + 0.08 * x + 7 * Math.sin((2 * Math.PI * x) / 110);
  const onPath = (x: number, y: number, margin: number) => Math.abs(y - pathY(x)) < 1.6 + margin;

  const buildings: SceneBuilding[] = [];
  const box = (x0: number, y0: number, w: number, d: number, eave: number, ridge: number, material: number) => {
    const gc = groundZ(terrain, x0 + w / 2, y0 + d / 2);
    let gmin = Infinity;
    for (const [x, y] of [[x0, y0], [x0 + w, y0], [x0, y0 + d], [x0 + w, y0 + d]] as const) gmin = Math.min(gmin, groundZ(terrain, x, y));
    buildings.push({ minX: x0, maxX: x0 + w, minY: y0, maxY: y0 + d, baseZ: gmin - 0.5, eaveZ: gc + eave, ridgeZ: gc + ridge, material });
  };
  box(W * 0.14, H * 0.72, 22, 14, 8, 8, MAT.flatRoof);                  // pavilion, flat roof 8 m
  if (withShed) box(W * 0.82, H * 0.14, 6, 4.5, 2.6, 4.0, MAT.tiledRoof); // shed, ridge along x
  const clearOfBuildings = (x: number, y: number, r: number) =>
    buildings.every((b) => x < b.minX - r - 1 || x > b.maxX + r + 1 || y < b.minY - r - 1 || y > b.maxY + r + 1);
  const inside = (x: number, y: number, m: number) => x > m && x < W - m && y > m && y < H - m;
  const ok = (x: number, y: number, r: number) => inside(x, y, 2) && clearOfBuildings(x, y, r) && !onPath(x, y, 1);

  const place = new Placer(terrain);
  const any = () => [rng.range(0, W), rng.range(0, H)] as [number, number];

  // Three clumps of touching crowns.
  for (let k = 0; k < 3; k++) {
    let cx = 0, cy = 0;
    for (let a = 0; a < 100; a++) { [cx, cy] = any(); if (ok(cx, cy, 8) && place.clearance(cx, cy, 8) > 1.2) break; }
    const members = rng.int(4, 6);
    const first = place.add(rng.chance(0.6) ? broadleaf(rng, 12, 22) : conifer(rng, 14, 26), cx, cy);
    let last = first;
    for (let m = 1; m < members; m++) {
      const s = rng.chance(0.6) ? broadleaf(rng, 10, 22) : conifer(rng, 12, 26);
      for (let a = 0; a < 40; a++) {
        const ang = rng.range(0, 2 * Math.PI), d = (last.crownRadiusM + s.crownRadiusM) * rng.range(0.7, 0.85);
        const x = last.x + d * Math.cos(ang), y = last.y + d * Math.sin(ang);
        if (ok(x, y, s.crownRadiusM) && place.clearance(x, y, s.crownRadiusM) >= 0.68) { last = place.add(s, x, y); break; }
      }
    }
  }
  // Scattered trees, mostly free-standing.
  place.scatter(rng, Math.round((W * H) / 420), mixed(rng, 0.65), any, ok, 1.0);
  // Two small trees under the crowns of big broadleaf trees: overtopped.
  let under = 0;
  for (const big of [...place.trees]) {
    if (under === 2) break;
    if (big.group !== 'broadleaf' || big.heightM < 16 || big.crownRadiusM < 4) continue;
    const ang = rng.range(0, 2 * Math.PI), d = big.crownRadiusM * 0.45;
    const x = big.x + d * Math.cos(ang), y = big.y + d * Math.sin(ang);
    const over = crownTopZ(big, x, y) - groundZ(terrain, x, y);
    const s = broadleaf(rng, 6, 7);
    s.heightM = Math.max(6, Math.min(s.heightM, over - 2.5));
    s.crownRadiusM = 2; s.crownDepthM = s.heightM * 0.55;
    if (s.heightM <= over - 2 && ok(x, y, 0)) { place.add(s, x, y); under++; }
  }

  const shrubs: SceneShrub[] = [];
  for (let k = 0, tries = 0; k < Math.round((W * H) / 1000) && tries < 2000; tries++) {
    const [x, y] = any(), r = rng.range(0.6, 1.5);
    if (!ok(x, y, r) || place.clearance(x, y, r) < 1.05) continue;
    shrubs.push({ x, y, groundZ: groundZ(terrain, x, y), heightM: rng.range(0.6, 1.8), radiusM: r });
    k++;
  }

  return {
    name: 'Larkmoor Common', widthM: W, heightM: H, originX: PARK_ORIGIN[0], originY: PARK_ORIGIN[1],
    terrain, trees: place.trees, shrubs, buildings,
    groundMaterial: (x, y) => (onPath(x, y, 0) ? MAT.path : MAT.grass),
  };
}
