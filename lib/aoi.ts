import { CrowntallyError } from './errors.js';
import type { PointChunk } from './io/types.js';
import type { AreaOfInterest } from './worker/protocol.js';

export interface Rect { minX: number; minY: number; maxX: number; maxY: number }

/** Bounding rectangle of an area of interest (CRS units). */
export function aoiBounds(a: AreaOfInterest): Rect {
  if (a.kind === 'rect') {
    if (!(a.minX < a.maxX && a.minY < a.maxY)) throw new CrowntallyError('BAD_OPTIONS', 'the area of interest is empty: draw a rectangle with some width and height');
    return { minX: a.minX, minY: a.minY, maxX: a.maxX, maxY: a.maxY };
  }
  const r = { minX: Infinity, minY: Infinity, maxX: -Infinity, maxY: -Infinity };
  for (const ring of a.rings) for (const p of ring) {
    const [x, y] = p as [number, number];
    if (!Number.isFinite(x) || !Number.isFinite(y)) throw new CrowntallyError('BAD_OPTIONS', 'the boundary has a vertex that is not a finite coordinate');
    r.minX = Math.min(r.minX, x); r.maxX = Math.max(r.maxX, x); r.minY = Math.min(r.minY, y); r.maxY = Math.max(r.maxY, y);
  }
  if (!(r.minX < r.maxX && r.minY < r.maxY)) throw new CrowntallyError('BAD_OPTIONS', 'the boundary encloses no area');
  return r;
}

/** Even-odd point-in-polygon over all rings (holes subtract), common practice (ray crossing). */
function insideRings(rings: number[][][], x: number, y: number): boolean {
  let inside = false;
  for (const ring of rings) {
    for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) {
      const xi = ring[i]![0]!, yi = ring[i]![1]!, xj = ring[j]![0]!, yj = ring[j]![1]!;
      if ((yi > y) !== (yj > y) && x < ((xj - xi) * (y - yi)) / (yj - yi) + xi) inside = !inside;
    }
  }
  return inside;
}

/**
 * Marks the points inside `rect` (half-open on the max edges, so tiles that
 * share an edge never both keep a point) and, when given, inside the polygon.
 * Returns how many were kept.
 */
export function markInside(c: PointChunk, rect: Rect, keep: Uint8Array, polygon?: number[][][]): number {
  let n = 0;
  for (let i = 0; i < c.count; i++) {
    const x = c.x[i]!, y = c.y[i]!;
    let k = x >= rect.minX && x < rect.maxX && y >= rect.minY && y < rect.maxY;
    if (k && polygon) k = insideRings(polygon, x, y);
    keep[i] = k ? 1 : 0;
    if (k) n++;
  }
  return n;
}

export function rectIntersect(a: Rect, b: Rect): Rect | null {
  const r = { minX: Math.max(a.minX, b.minX), minY: Math.max(a.minY, b.minY), maxX: Math.min(a.maxX, b.maxX), maxY: Math.min(a.maxY, b.maxY) };
  return r.minX < r.maxX && r.minY < r.maxY ? r : null;
}
