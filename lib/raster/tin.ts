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
  for (let t = 0; t < tri.length; t += 3) rasteriseTriangle(coords, z, tri[t]!, tri[t + 1]!, tri[t + 2]!, width, height, data);
  fillNearest(grid);
  return grid;
}

// Cell centres within this distance (cells) of a triangle edge count as inside,
// so a centre lying on a shared edge is never lost to rounding in both triangles.
const EDGE_EPS = 1e-7;

/** Scan-converts one triangle (vertices i0, i1, i2; cell units: u east, v south from the grid origin) into `data`. */
function rasteriseTriangle(
  coords: Float64Array, z: Float32Array, i0: number, i1: number, i2: number, w: number, h: number, data: Float32Array,
): void {
  // Vertex indices rather than coordinates are passed: doubles passed to a call
  // that is not inlined would each be boxed.
  const u0 = coords[2 * i0]!, v0 = coords[2 * i0 + 1]!, z0 = z[i0]!;
  const u1 = coords[2 * i1]!, v1 = coords[2 * i1 + 1]!, z1 = z[i1]!;
  const u2 = coords[2 * i2]!, v2 = coords[2 * i2 + 1]!, z2 = z[i2]!;
  const det = (u1 - u0) * (v2 - v0) - (u2 - u0) * (v1 - v0);
  if (det === 0) return;
  // z is linear on the triangle: z = z0 + a (u - u0) + b (v - v0).
  const a = ((z1 - z0) * (v2 - v0) - (z2 - z0) * (v1 - v0)) / det;
  const b = ((z2 - z0) * (u1 - u0) - (z1 - z0) * (u2 - u0)) / det;
  const vMin = Math.min(v0, v1, v2), vMax = Math.max(v0, v1, v2);
  // Cell centres sit at v = row + 0.5.
  const r0 = Math.max(0, Math.ceil(vMin - 0.5 - EDGE_EPS));
  const r1 = Math.min(h - 1, Math.floor(vMax - 0.5 + EDGE_EPS));
  // Rows v in [aE, bE] meet edge E (0: 0-1, 1: 1-2, 2: 2-0).
  const a0 = Math.min(v0, v1) - EDGE_EPS, b0 = Math.max(v0, v1) + EDGE_EPS;
  const a1 = Math.min(v1, v2) - EDGE_EPS, b1 = Math.max(v1, v2) + EDGE_EPS;
  const a2 = Math.min(v2, v0) - EDGE_EPS, b2 = Math.max(v2, v0) + EDGE_EPS;
  for (let r = r0; r <= r1; r++) {
    const v = r + 0.5;
    // Intersect the row line with each edge (span[0], span[1]: lowest and highest u).
    span[0] = Infinity; span[1] = -Infinity;
    if (v >= a0 && v <= b0) edgeCut(v, u0, v0, u1, v1);
    if (v >= a1 && v <= b1) edgeCut(v, u1, v1, u2, v2);
    if (v >= a2 && v <= b2) edgeCut(v, u2, v2, u0, v0);
    const lo = span[0]!, hi = span[1]!;
    if (!(lo <= hi)) continue;
    const c0 = Math.max(0, Math.ceil(lo - 0.5 - EDGE_EPS));
    const c1 = Math.min(w - 1, Math.floor(hi - 0.5 + EDGE_EPS));
    const base = r * w;
    const zr = z0 + b * (v - v0) - a * u0;
    for (let c = c0; c <= c1; c++) data[base + c] = zr + a * (c + 0.5);
  }
}

const span = new Float64Array(2);

/** Widens span[0..1] by where the row line v, which meets the edge a -> b, crosses it (both ends if the edge lies on it). */
function edgeCut(v: number, ua: number, va: number, ub: number, vb: number): void {
  if (va === vb) {
    span[0] = Math.min(span[0]!, ua, ub); span[1] = Math.max(span[1]!, ua, ub);
    return;
  }
  const s = Math.min(1, Math.max(0, (v - va) / (vb - va)));
  const u = ua + s * (ub - ua);
  if (u < span[0]!) span[0] = u;
  if (u > span[1]!) span[1] = u;
}

/**
 * Fills NaN cells in place with the value of a nearest non-NaN cell, by a
 * breadth-first spread from all filled cells at once over the 8 neighbours
 * (distance in chessboard steps, so "nearest" is approximate: within a
 * factor of sqrt(2) of the Euclidean nearest). Linear in cells. Returns the
 * number of cells filled, or -1 when the grid holds no value at all.
 *
 * Only filled cells next to a NaN cell are queued as seeds, in index order:
 * any other seed would find no NaN neighbour when its turn came, so the
 * spread, and every value it writes, is the same as with all filled cells
 * queued. With few holes (a DTM outside the ground hull) that skips eight
 * neighbour tests for nearly every cell.
 */
export function fillNearest(g: Grid): number {
  const { width: w, height: h, data } = g;
  const n = w * h;
  let holes = 0;
  for (let k = 0; k < n; k++) if (data[k] !== data[k]) holes++;
  if (holes === n) return -1;
  if (holes === 0) return 0;
  const queue = new Int32Array(n);
  let tail = 0;
  if (holes * 4 < n) {
    // Few holes: mark the filled neighbours of each hole, then queue them in index order.
    const seed = new Uint8Array(n);
    for (let k = 0; k < n; k++) {
      if (data[k] === data[k]) continue;
      const r = (k / w) | 0, c = k - r * w;
      for (let rr = Math.max(0, r - 1); rr <= Math.min(h - 1, r + 1); rr++) {
        for (let cc = Math.max(0, c - 1); cc <= Math.min(w - 1, c + 1); cc++) seed[rr * w + cc] = 1;
      }
    }
    for (let k = 0; k < n; k++) if (seed[k] && data[k] === data[k]) queue[tail++] = k;
  } else {
    // Many holes: most filled cells border one, so queue them all.
    for (let k = 0; k < n; k++) if (data[k] === data[k]) queue[tail++] = k;
  }
  const seeded = tail;
  const offs = Int32Array.of(-w - 1, -w, -w + 1, -1, 1, w - 1, w, w + 1);
  let head = 0;
  while (head < tail) {
    const k = queue[head++]!;
    const r = (k / w) | 0, c = k - r * w;
    const v = data[k]!;
    if (r > 0 && c > 0 && r < h - 1 && c < w - 1) {
      // Away from the edge: the same neighbours in the same order, without bounds tests.
      for (let i = 0; i < 8; i++) {
        const j = k + offs[i]!;
        if (data[j] !== data[j]) { data[j] = v; queue[tail++] = j; }
      }
      continue;
    }
    for (let dr = -1; dr <= 1; dr++) {
      const rr = r + dr;
      if (rr < 0 || rr >= h) continue;
      for (let dc = -1; dc <= 1; dc++) {
        const cc = c + dc;
        if (cc < 0 || cc >= w) continue;
        const j = rr * w + cc;
        if (data[j] !== data[j]) { data[j] = v; queue[tail++] = j; }
      }
    }
  }
  return tail - seeded;
}
