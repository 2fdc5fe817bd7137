// Builds small tree tables for the export tests: invented crowns (circles and
// a ring with a hole) placed where the test wants them, in any CRS.
import { emptyColumns, MAX_RETURN_NUMBER, TREE_COLUMNS, type TreeTable } from '../../lib/trees/table.js';

export interface TestRing { hole?: boolean; pts: Array<[number, number]> }
export interface TestTree { x: number; y: number; rings: TestRing[]; returns?: number[]; metrics?: Partial<Record<(typeof TREE_COLUMNS)[number], number>> }

/** Planar signed area (shoelace) of an open or closed ring, CRS units squared. */
export function planarArea(pts: Array<[number, number]>): number {
  let s = 0;
  for (let i = 0; i < pts.length; i++) {
    const a = pts[i]!, b = pts[(i + 1) % pts.length]!;
    s += a[0] * b[1] - b[0] * a[1];
  }
  return s / 2;
}

/** A circle of `n` vertices (open ring), counter-clockwise unless `cw`. */
export function circle(cx: number, cy: number, r: number, n = 32, cw = false): Array<[number, number]> {
  const pts: Array<[number, number]> = [];
  for (let k = 0; k < n; k++) {
    const a = (cw ? -1 : 1) * (2 * Math.PI * k) / n;
    pts.push([cx + r * Math.cos(a), cy + r * Math.sin(a)]);
  }
  return pts;
}

/**
 * A TreeTable whose crown_area_m2 is the planar outline area (exteriors minus
 * holes) times unitM^2, as the table contract defines it.
 */
export function buildTable(trees: TestTree[], unitM = 1, hasReturns = true): TreeTable {
  const count = trees.length;
  const columns = emptyColumns(count);
  const coords: number[] = [];
  const ringStart: number[] = [0];
  const ringKind: number[] = [];
  const treeRingStart: number[] = [0];
  const returnHistogram = new Uint32Array(count * MAX_RETURN_NUMBER);
  trees.forEach((t, i) => {
    let area = 0;
    for (const ring of t.rings) {
      const closed = [...ring.pts, ring.pts[0]!];
      for (const [x, y] of closed) coords.push(x, y);
      ringStart.push(coords.length / 2);
      ringKind.push(ring.hole ? 1 : 0);
      area += (ring.hole ? -1 : 1) * Math.abs(planarArea(ring.pts));
    }
    treeRingStart.push(ringKind.length);
    columns.tree_id[i] = i + 1;
    columns.x[i] = t.x;
    columns.y[i] = t.y;
    columns.crown_area_m2[i] = area * unitM * unitM;
    columns.crown_diameter_m[i] = 2 * Math.sqrt((area * unitM * unitM) / Math.PI);
    for (const c of TREE_COLUMNS) if (t.metrics && t.metrics[c] !== undefined) columns[c][i] = t.metrics[c]!;
    (t.returns ?? []).forEach((n, r) => { returnHistogram[i * MAX_RETURN_NUMBER + r] = n; });
  });
  return {
    count,
    columns,
    profileLayerM: 1,
    profileLayers: 0,
    profiles: new Uint32Array(0),
    returnHistogram,
    hasReturns,
    hasRgb: false,
    outlines: {
      coords: Float64Array.from(coords),
      ringStart: Uint32Array.from(ringStart),
      ringKind: Uint8Array.from(ringKind),
      treeRingStart: Uint32Array.from(treeRingStart),
    },
  };
}
