import { CrowntallyError } from '../errors.js';
import type { Grid } from '../raster/grid.js';
import type { CrownOutlines } from './table.js';
import { nonZeroCells } from './cells.js';

// Directions of travel: 0 east, 1 north, 2 west, 3 south (counter-clockwise order).
const DC = [1, 0, -1, 0];
const DR = [0, -1, 0, 1];

/**
 * Crown outlines along cell edges, in CRS coordinates.
 *
 * Each boundary edge is walked with the crown on its left, so exterior rings
 * come out counter-clockwise and holes clockwise (x east, y north), as
 * GeoJSON (RFC 7946) wants. Only corners are kept (collinear vertices
 * merged); rings are closed. Every boundary edge is used exactly once, so the
 * summed signed ring areas equal the crown's cell count x cell area.
 *
 * Diagonal pinch points (two cells of a crown touching only at a corner) are
 * resolved by always turning left, which treats the crown as 4-connected:
 * the pinch separates rings, never joins them. Crowns from growCrowns are
 * 4-connected, so each has one exterior ring plus holes; a label made of
 * several 4-connected parts gets one exterior per part, each hole after the
 * smallest exterior that contains it.
 */
export function traceOutlines(labels: Grid<Int32Array>, count: number): CrownOutlines {
  const { width: W, height: H, data } = labels;
  if (data.length !== W * H) throw new CrowntallyError('INTERNAL', `label grid holds ${data.length} values for a ${W} x ${H} grid`);
  const cs = labels.cellSize, ox = labels.originX, oy = labels.originY;
  const lab = (c: number, r: number) => (c < 0 || c >= W || r < 0 || r >= H ? 0 : data[r * W + c]!);
  const visited = new Uint8Array(W * H); // bit s = side s (same numbering as directions) already walked

  interface Ring { pts: number[]; area: number; cell: number }
  const perTree: Ring[][] = Array.from({ length: count }, () => []);

  // One pass over the grid lists the labelled cells (row-major, the order rings are found in).
  const cells = nonZeroCells(data);
  for (let m = 0; m < cells.length; m++) {
    const i = cells[m]!;
    const c = i % W, r = (i - c) / W;
    const L = data[i]!;
    if (L < 0 || L > count) throw new CrowntallyError('INTERNAL', `label ${L} at cell (${c}, ${r}) is outside 1..${count}`);
    for (let s = 0; s < 4; s++) {
      if (visited[i]! & (1 << s)) continue;
      if (lab(c + DC[s]!, r + DR[s]!) === L) continue;
      perTree[L - 1]!.push(traceRing(c, r, (s + 1) & 3, L));
    }
  }

  function traceRing(c0: number, r0: number, d0: number, L: number): Ring {
    const pts: number[] = [];
    let c = c0, r = r0, d = d0;
    // End vertex of the current edge, in vertex indices (i east, j south).
    let vi = c + (d === 0 || d === 1 ? 1 : 0);
    let vj = r + (d === 0 || d === 3 ? 1 : 0);
    for (;;) {
      visited[r * W + c]! |= 1 << ((d + 3) & 3);
      const bc = c + DC[d]!, br = r + DR[d]!;
      let nc: number, nr: number, nd: number;
      if (lab(bc, br) !== L) { nc = c; nr = r; nd = (d + 1) & 3; }
      else {
        const rd = (d + 3) & 3;
        const cc = bc + DC[rd]!, cr = br + DR[rd]!;
        if (lab(cc, cr) !== L) { nc = bc; nr = br; nd = d; }
        else { nc = cc; nr = cr; nd = rd; }
      }
      if (nd !== d) pts.push(ox + vi * cs, oy - vj * cs);
      if (nc === c0 && nr === r0 && nd === d0) break;
      c = nc; r = nr; d = nd;
      vi += DC[d]!; vj += DR[d]!;
    }
    pts.push(pts[0]!, pts[1]!);
    return { pts, area: ringSignedArea(pts, 0, pts.length / 2), cell: r0 * W + c0 };
  }

  // Assemble: per tree, exteriors in discovery order, each followed by its holes.
  const coords: number[] = [];
  const ringStart: number[] = [0];
  const ringKind: number[] = [];
  const treeRingStart = new Uint32Array(count + 1);
  const emit = (g: Ring, kind: number) => {
    for (const v of g.pts) coords.push(v);
    ringStart.push(coords.length / 2);
    ringKind.push(kind);
  };
  for (let t = 0; t < count; t++) {
    const rings = perTree[t]!;
    const ext = rings.filter((g) => g.area > 0);
    const holes = rings.filter((g) => g.area < 0);
    const owner = new Int32Array(holes.length);
    if (ext.length > 1) {
      holes.forEach((h, k) => {
        const cc = h.cell % W, cr = (h.cell - cc) / W;
        const px = ox + (cc + 0.5) * cs, py = oy - (cr + 0.5) * cs;
        let best = -1;
        ext.forEach((e, m) => {
          if ((best < 0 || e.area < ext[best]!.area) && pointInRing(e.pts, px, py)) best = m;
        });
        owner[k] = Math.max(0, best);
      });
    }
    ext.forEach((e, m) => {
      emit(e, 0);
      holes.forEach((h, k) => { if (owner[k] === m) emit(h, 1); });
    });
    treeRingStart[t + 1] = ringKind.length;
  }
  return {
    coords: Float64Array.from(coords),
    ringStart: Uint32Array.from(ringStart),
    ringKind: Uint8Array.from(ringKind),
    treeRingStart,
  };
}

/** Shoelace signed area of vertices [from, to) of a flat x,y list (closed ring: last = first). Positive = counter-clockwise. */
export function ringSignedArea(xy: ArrayLike<number>, from: number, to: number): number {
  let a = 0;
  // Relative to the first vertex, so large CRS coordinates keep their precision.
  const x0 = xy[2 * from]!, y0 = xy[2 * from + 1]!;
  for (let k = from; k < to - 1; k++) {
    const xa = xy[2 * k]! - x0, ya = xy[2 * k + 1]! - y0;
    const xb = xy[2 * k + 2]! - x0, yb = xy[2 * k + 3]! - y0;
    a += xa * yb - xb * ya;
  }
  return a / 2;
}

function pointInRing(xy: number[], px: number, py: number): boolean {
  let inside = false;
  const n = xy.length / 2;
  for (let a = 0, b = n - 1; a < n; b = a++) {
    const xa = xy[2 * a]!, ya = xy[2 * a + 1]!, xb = xy[2 * b]!, yb = xy[2 * b + 1]!;
    if ((ya > py) !== (yb > py) && px < ((xb - xa) * (py - ya)) / (yb - ya) + xa) inside = !inside;
  }
  return inside;
}

/** Area of tree t's outline (CRS units squared): exteriors minus holes. */
export function outlineArea(o: CrownOutlines, t: number): number {
  let a = 0;
  for (let k = o.treeRingStart[t]!; k < o.treeRingStart[t + 1]!; k++) a += ringSignedArea(o.coords, o.ringStart[k]!, o.ringStart[k + 1]!);
  return a;
}

/** Perimeter of tree t's outline (CRS units): all rings, holes included. */
export function outlinePerimeter(o: CrownOutlines, t: number): number {
  let p = 0;
  for (let k = o.treeRingStart[t]!; k < o.treeRingStart[t + 1]!; k++) {
    for (let v = o.ringStart[k]!; v < o.ringStart[k + 1]! - 1; v++) {
      p += Math.hypot(o.coords[2 * v + 2]! - o.coords[2 * v]!, o.coords[2 * v + 3]! - o.coords[2 * v + 1]!);
    }
  }
  return p;
}

/**
 * Longest distance (CRS units) between two vertices of tree t's exterior
 * rings: the convex hull (monotone chain) then all hull vertex pairs; hulls of
 * crowns hold few vertices.
 */
export function outlineExtent(o: CrownOutlines, t: number): number {
  const pts: [number, number][] = [];
  for (let k = o.treeRingStart[t]!; k < o.treeRingStart[t + 1]!; k++) {
    if (o.ringKind[k] !== 0) continue;
    for (let v = o.ringStart[k]!; v < o.ringStart[k + 1]! - 1; v++) pts.push([o.coords[2 * v]!, o.coords[2 * v + 1]!]);
  }
  if (pts.length < 2) return 0;
  const hull = convexHull(pts);
  let best = 0;
  for (let a = 0; a < hull.length; a++) {
    for (let b = a + 1; b < hull.length; b++) {
      const d = (hull[a]![0] - hull[b]![0]) ** 2 + (hull[a]![1] - hull[b]![1]) ** 2;
      if (d > best) best = d;
    }
  }
  return Math.sqrt(best);
}

function convexHull(p: [number, number][]): [number, number][] {
  p.sort((a, b) => a[0] - b[0] || a[1] - b[1]);
  const cross = (o: [number, number], a: [number, number], b: [number, number]) => (a[0] - o[0]) * (b[1] - o[1]) - (a[1] - o[1]) * (b[0] - o[0]);
  const lower: [number, number][] = [];
  for (const q of p) { while (lower.length >= 2 && cross(lower[lower.length - 2]!, lower[lower.length - 1]!, q) <= 0) lower.pop(); lower.push(q); }
  const upper: [number, number][] = [];
  for (let i = p.length - 1; i >= 0; i--) { const q = p[i]!; while (upper.length >= 2 && cross(upper[upper.length - 2]!, upper[upper.length - 1]!, q) <= 0) upper.pop(); upper.push(q); }
  lower.pop(); upper.pop();
  return lower.concat(upper);
}
