import { CrowntallyError } from '../errors.js';
import { FLAG_OVERLAP, FLAG_WITHHELD, type PointChunk } from '../io/types.js';
import type { Grid } from '../raster/grid.js';

/**
 * The first step of the metrics pass, done once per chunk for every consumer
 * (crown metrics, survey profile): each point's cell on the job grid and its
 * height above the DTM. Points that no consumer counts get cell -1:
 * noise classes 7 and 18, withheld and overlap points (ASPRS LAS 1.4 R15
 * classes and flags), points outside the grid, and returns above the
 * outlier-cleaned DSM of their cell (the isolation test took them out of the
 * canopy surface, so they stay out of the crowns too), as well as points in
 * cells with no DSM at all.
 */
export interface PointHeights {
  /** Points described (the chunk's count). */
  count: number;
  /** The grid the cells lie on. */
  grid: Omit<Grid, 'data'>;
  /** Row-major cell index on the job grid, or -1 for a point left out. */
  cell: Int32Array;
  /** Height above the DTM in metres; NaN where the DTM has no value. Meaningful only where cell >= 0. */
  heightM: Float64Array;
}

/** Reusable buffers, grown to the largest chunk seen. */
export function pointHeightBuffers(): PointHeights {
  return { count: 0, grid: { width: 0, height: 0, cellSize: 1, originX: 0, originY: 0 }, cell: new Int32Array(0), heightM: new Float64Array(0) };
}

/** True when two grids lie on the same cells. */
export function sameCells(a: Omit<Grid, 'data'>, b: Omit<Grid, 'data'>): boolean {
  return a.width === b.width && a.height === b.height && a.cellSize === b.cellSize && a.originX === b.originX && a.originY === b.originY;
}

/**
 * Fills `out` for `c` on the DTM's grid; heights are z times `verticalUnitM`
 * minus the DTM. A point is placed in its cell exactly as the surface pass
 * placed it. With `dsm` (same geometry as the DTM) returns above it are left
 * out; `dropOverlap` false keeps overlap-flagged points.
 */
export function pointHeights(c: PointChunk, dsm: Grid | null, dtm: Grid, verticalUnitM: number, out: PointHeights, dropOverlap = true): PointHeights {
  if (dsm && !sameCells(dsm, dtm)) throw new CrowntallyError('INTERNAL', 'the surface and ground grids must share one geometry');
  const n = c.count;
  if (out.cell.length < n) { out.cell = new Int32Array(n); out.heightM = new Float64Array(n); }
  out.count = n;
  const { width, height, cellSize, originX, originY } = dtm;
  out.grid = { width, height, cellSize, originX, originY };
  const top = dsm?.data, ground = dtm.data, cell = out.cell, hm = out.heightM;
  const inv = 1 / cellSize, vu = verticalUnitM;
  const drop = FLAG_WITHHELD | (dropOverlap ? FLAG_OVERLAP : 0);
  const { x, y, z, classification, flags } = c;
  for (let i = 0; i < n; i++) {
    cell[i] = -1;
    const cls = classification[i]!;
    if (cls === 7 || cls === 18 || (flags[i]! & drop) !== 0) continue;
    const fc = (x[i]! - originX) * inv, fr = (originY - y[i]!) * inv;
    // NaN coordinates fail these tests too.
    if (!(fc >= 0 && fc < width && fr >= 0 && fr < height)) continue;
    const k = (fr | 0) * width + (fc | 0);
    const zm = z[i]! * vu;
    // 1 mm slack for the float32 rounding of the DSM; a NaN DSM fails the test.
    if (top && !(zm <= top[k]! + 1e-3)) continue;
    cell[i] = k;
    hm[i] = zm - ground[k]!;
  }
  return out;
}
