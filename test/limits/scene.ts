/**
 * Small invented scenes for the limit tests, written as LAS with the
 * project's writer: flat ground on a 1 m lattice and a few cone-shaped
 * crowns. Nothing here is measured data.
 */
import { allocChunk } from '../../lib/io/las-points.js';
import { writeLas } from '../../lib/io/las-writer.js';
import type { PointChunk } from '../../lib/io/types.js';

export interface ScenePoint { x: number; y: number; z: number; cls: number; ret?: number; of?: number }

export function chunkOf(pts: ScenePoint[]): PointChunk {
  const c = allocChunk(pts.length, 1);
  pts.forEach((p, i) => {
    c.x[i] = p.x; c.y[i] = p.y; c.z[i] = p.z; c.classification[i] = p.cls;
    c.returnNumber[i] = p.ret ?? 1; c.numberOfReturns[i] = p.of ?? 1; c.gpsTime![i] = i;
  });
  return c;
}

/** LAS 1.2 format 1 bytes, millimetre quantum, origin at (500000, 4000000). */
export function lasOf(pts: ScenePoint[], geoKeys?: Parameters<typeof writeLas>[1]['geoKeys']): Uint8Array {
  return writeLas(chunkOf(pts), {
    pointFormat: 1, scale: [0.001, 0.001, 0.001], offset: [500000, 4000000, 0],
    creationDay: 1, creationYear: 2024, ...(geoKeys ? { geoKeys } : {}),
  });
}

/** Ground every metre over `size` x `size` m at height `z0`, plus cone crowns of the given heights. */
export function parkScene(opts: { size?: number; z0?: number; groundClass?: number; crowns?: { x: number; y: number; h: number; r: number }[] } = {}): ScenePoint[] {
  const size = opts.size ?? 40, z0 = opts.z0 ?? 100, gc = opts.groundClass ?? 2;
  const pts: ScenePoint[] = [];
  const X = 500000, Y = 4000000;
  for (let i = 0; i <= size; i++) for (let j = 0; j <= size; j++) pts.push({ x: X + i, y: Y + j, z: z0, cls: gc, ret: 2, of: 2 });
  const crowns = opts.crowns ?? [{ x: 12, y: 12, h: 15, r: 4 }, { x: 28, y: 26, h: 11, r: 3.5 }];
  for (const c of crowns) {
    // Returns every 0.25 m over the crown disc; the surface falls linearly from the top to the rim.
    for (let dx = -c.r; dx <= c.r; dx += 0.25) {
      for (let dy = -c.r; dy <= c.r; dy += 0.25) {
        const d = Math.hypot(dx, dy);
        if (d > c.r) continue;
        pts.push({ x: X + c.x + dx, y: Y + c.y + dy, z: z0 + c.h * (1 - 0.6 * (d / c.r)), cls: 5, ret: 1, of: 2 });
      }
    }
  }
  return pts;
}
