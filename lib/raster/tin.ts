import Delaunator from 'delaunator';
import { CrowntallyError } from '../errors.js';
import { checkGeometry, DEFAULT_MAX_CELLS, type Grid, type GridGeometry } from './grid.js';
import type { GroundPoints } from './surfaces.js';

export interface TinOptions {
  /** Cell budget. Default DEFAULT_MAX_CELLS. */
  maxGridCells?: number;
  /** Horizontal (CRS) unit to metres, only for the cell size suggested by TOO_LARGE. Default 1. */
  horizontalUnitM?: number;
}

/**
 * DTM (metres) on `geometry` from ground points: a Delaunay triangulation
 * (delaunator) of the points, each cell centre inside the hull taken by
 * linear (barycentric) interpolation on the triangle that holds it.
 *
 * Cost is linear in triangles plus cells: each triangle is scan-converted row
 * by row, so a cell is visited by the triangle(s) covering its centre only,
 * with no point-in-triangle search over the grid.
 *
 * Cells outside the ground hull take the value of the nearest cell inside
 * (see fillNearest): a flat extension of the terrain at the hull's edge, which
 * neither invents slopes nor lets the surface run off to extremes.
 *
 * Fewer than 3 points, or all on one line: no triangle exists, so cells near
 * each point take its height and the rest are filled from the nearest (one or
 * two points: a flat DTM at their mean height). No point at all: NO_GROUND.
 */
export function tinDtm(points: GroundPoints, geometry: GridGeometry, opts: TinOptions = {}): Grid {
  checkGeometry(geometry, opts.maxGridCells ?? DEFAULT_MAX_CELLS, opts.horizontalUnitM ?? 1);
  const { width, height, cellSize, originX, originY } = geometry;
  const n = points.count;
  if (!(n > 0)) {
    throw new CrowntallyError('NO_GROUND', 'no ground points to build a ground model from; check that the survey covers open ground, or choose the ground filter instead of the ground class');
  }
  const data = new Float32Array(width * height).fill(NaN);
  const grid: Grid = { width, height, cellSize, originX, originY, data };
  if (n < 3) {
    let s = 0;
    for (let i = 0; i < n; i++) s += points.z[i];
    data.fill(s / n);
    return grid;
  }
  // Local coordinates in cell units around the grid origin: small numbers keep the
  // triangulation's orientation tests well conditioned for large CRS coordinates.
  const inv = 1 / cellSize;
  const coords = new Float64Array(2 * n);
  for (let i = 0; i < n; i++) {
    coords[2 * i] = (points.x[i] - originX) * inv;
    coords[2 * i + 1] = (originY - points.y[i]) * inv;
  }
  const tri = new Delaunator(coords).triangles;
  if (tri.length === 0) {
    // Collinear input: seed the cells holding points, then spread.
    for (let i = 0; i < n; i++) {
      const c = Math.floor(coords[2 * i]), r = Math.floor(coords[2 * i + 1]);
      if (c >= 0 && c < width && r >= 0 && r < height) data[r * width + c] = points.z[i];
    }
    if (fillNearest(grid) < 0) {
      let s = 0;
      for (let i = 0; i < n; i++) s += points.z[i];
      data.fill(s / n);
    }
    return grid;
  }
  const z = points.z;
  for (let t = 0; t < tri.length; t += 3) {
    const i0 = tri[t], i1 = tri[t + 1], i2 = tri[t + 2];
    rasteriseTriangle(
      coords[2 * i0], coords[2 * i0 + 1], z[i0],
      coords[2 * i1], coords[2 * i1 + 1], z[i1],
      coords[2 * i2], coords[2 * i2 + 1], z[i2],
      width, height, data,
    );
  }
  fillNearest(grid);
  return grid;
}

// Cell centres within this distance (cells) of a triangle edge count as inside,
// so a centre lying on a shared edge is never lost to rounding in both triangles.
const EDGE_EPS = 1e-7;

/** Scan-converts one triangle (cell units: u east, v south from the grid origin) into `data`. */
function rasteriseTriangle(
  u0: number, v0: number, z0: number, u1: number, v1: number, z1: number, u2: number, v2: number, z2: number,
  w: number, h: number, data: Float32Array,
): void {
  const det = (u1 - u0) * (v2 - v0) - (u2 - u0) * (v1 - v0);
  if (det === 0) return;
  // z is linear on the triangle: z = z0 + a (u - u0) + b (v - v0).
  const a = ((z1 - z0) * (v2 - v0) - (z2 - z0) * (v1 - v0)) / det;
  const b = ((z2 - z0) * (u1 - u0) - (z1 - z0) * (u2 - u0)) / det;
  const vMin = Math.min(v0, v1, v2), vMax = Math.max(v0, v1, v2);
  // Cell centres sit at v = row + 0.5.
  const r0 = Math.max(0, Math.ceil(vMin - 0.5 - EDGE_EPS));
  const r1 = Math.min(h - 1, Math.floor(vMax - 0.5 + EDGE_EPS));
  for (let r = r0; r <= r1; r++) {
    const v = r + 0.5;
    let lo = Infinity, hi = -Infinity;
    // Intersect the row line with each edge.
    for (let e = 0; e < 3; e++) {
      const ua = e === 0 ? u0 : e === 1 ? u1 : u2;
      const va = e === 0 ? v0 : e === 1 ? v1 : v2;
      const ub = e === 0 ? u1 : e === 1 ? u2 : u0;
      const vb = e === 0 ? v1 : e === 1 ? v2 : v0;
      const eMin = Math.min(va, vb), eMax = Math.max(va, vb);
      if (v < eMin - EDGE_EPS || v > eMax + EDGE_EPS) continue;
      if (va === vb) {
        lo = Math.min(lo, ua, ub); hi = Math.max(hi, ua, ub);
      } else {
        const s = Math.min(1, Math.max(0, (v - va) / (vb - va)));
        const u = ua + s * (ub - ua);
        if (u < lo) lo = u;
        if (u > hi) hi = u;
      }
    }
    if (!(lo <= hi)) continue;
    const c0 = Math.max(0, Math.ceil(lo - 0.5 - EDGE_EPS));
    const c1 = Math.min(w - 1, Math.floor(hi - 0.5 + EDGE_EPS));
    const base = r * w;
    const zr = z0 + b * (v - v0) - a * u0;
    for (let c = c0; c <= c1; c++) data[base + c] = zr + a * (c + 0.5);
  }
}

/**
 * Fills NaN cells in place with the value of a nearest non-NaN cell, by a
 * breadth-first spread from all filled cells at once over the 8 neighbours
 * (distance in chessboard steps, so "nearest" is approximate: within a
 * factor of sqrt(2) of the Euclidean nearest). Linear in cells. Returns the
 * number of cells filled, or -1 when the grid holds no value at all.
 */
export function fillNearest(g: Grid): number {
  const { width: w, height: h, data } = g;
  const n = w * h;
  const queue = new Int32Array(n);
  let tail = 0;
  for (let k = 0; k < n; k++) if (!Number.isNaN(data[k])) queue[tail++] = k;
  if (tail === 0) return -1;
  const seeded = tail;
  let head = 0;
  while (head < tail) {
    const k = queue[head++];
    const r = (k / w) | 0, c = k - r * w;
    const v = data[k];
    for (let dr = -1; dr <= 1; dr++) {
      const rr = r + dr;
      if (rr < 0 || rr >= h) continue;
      for (let dc = -1; dc <= 1; dc++) {
        const cc = c + dc;
        if (cc < 0 || cc >= w) continue;
        const j = rr * w + cc;
        if (Number.isNaN(data[j])) { data[j] = v; queue[tail++] = j; }
      }
    }
  }
  return tail - seeded;
}
