/**
 * A seeded invented canopy height grid for the raster benchmarks: round
 * crowns (half-ellipsoid profiles, 5-30 m tall, 1.5-5 m radius, one tree per
 * 40 m2) with 0.3 m of uniform noise. Not a survey: only a grid with the
 * shapes a CHM has, so grid stages can be timed on any size.
 */
import type { Grid } from '../lib/raster/grid.js';

/** mulberry32, a small seeded generator (common practice). */
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

export function syntheticCanopy(size: number, cellM: number, seed = 42): Grid {
  const rand = rng(seed);
  const data = new Float32Array(size * size);
  const trees = Math.round((size * cellM) ** 2 / 40);
  for (let t = 0; t < trees; t++) {
    const cx = rand() * size, cy = rand() * size, h = 5 + rand() * 25, rM = 1.5 + rand() * 3.5;
    const rc = rM / cellM, R = Math.ceil(rc);
    for (let r = Math.max(0, Math.floor(cy) - R); r <= Math.min(size - 1, Math.floor(cy) + R); r++) {
      for (let c = Math.max(0, Math.floor(cx) - R); c <= Math.min(size - 1, Math.floor(cx) + R); c++) {
        const d2 = ((c - cx) ** 2 + (r - cy) ** 2) / (rc * rc);
        if (d2 >= 1) continue;
        const z = h * Math.sqrt(1 - d2);
        if (z > data[r * size + c]!) data[r * size + c] = z;
      }
    }
  }
  for (let i = 0; i < data.length; i++) data[i]! += (rand() - 0.5) * 0.3;
  return { width: size, height: size, cellSize: cellM, originX: 0, originY: size * cellM, data };
}
