import { crownTopZ, type Scene, type TreeGroup } from './scene.js';

/** One real tree of an invented scene. */
export interface TruthTree {
  id: number;
  group: TreeGroup;
  /** Treetop, CRS metres. */
  x: number;
  y: number;
  heightM: number;
  crownRadiusM: number;
  /** Area (m2) where this crown is the highest surface seen from above. */
  visibleCrownAreaM2: number;
  /** False when the tree's own top lies under another crown (overtopped): not expected to be found. */
  visible: boolean;
  overtopped: boolean;
}

export interface DemoTruth {
  kind: 'park' | 'orchard' | 'canopy';
  name: string;
  epsg: number;
  wkt: string;
  /** CRS position of the scene's south-west corner and its size (m). */
  originX: number;
  originY: number;
  widthM: number;
  heightM: number;
  firstReturnsPerM2: number;
  pointCount: number;
  trees: TruthTree[];
  /** Cell edge (m) of the raster the visible areas were counted on. */
  visibleAreaCellM: number;
}

/**
 * Visible crown areas: the top surface of all crowns rasterised at `cellM`
 * (cell centres), each cell given to the highest crown there. Cost: sum over
 * trees of their crown's cells.
 */
export function truthTrees(scene: Scene, cellM = 0.2): TruthTree[] {
  const cols = Math.ceil(scene.widthM / cellM) + 80, rows = Math.ceil(scene.heightM / cellM) + 80;
  const pad = 40 * cellM;
  const top = new Float32Array(cols * rows).fill(-Infinity);
  const owner = new Int32Array(cols * rows).fill(-1);
  const cellRange = (v: number, r: number, m: number): [number, number] =>
    [Math.max(0, Math.floor((v - r + pad) / cellM)), Math.min(m - 1, Math.floor((v + r + pad) / cellM))];
  scene.trees.forEach((t, k) => {
    const [c0, c1] = cellRange(t.x, t.crownRadiusM, cols), [r0, r1] = cellRange(t.y, t.crownRadiusM, rows);
    for (let r = r0; r <= r1; r++) {
      const y = (r + 0.5) * cellM - pad;
      for (let c = c0; c <= c1; c++) {
        const z = crownTopZ(t, (c + 0.5) * cellM - pad, y);
        const i = r * cols + c;
        if (z > top[i]!) { top[i] = z; owner[i] = k; }
      }
    }
  });
  const area = new Float64Array(scene.trees.length);
  for (let i = 0; i < owner.length; i++) if (owner[i]! >= 0) area[owner[i]!]! += cellM * cellM;
  return scene.trees.map((t, k) => {
    // The apex itself: is another crown surface above it?
    const apex = t.groundZ + t.heightM;
    let overtopped = false;
    for (const o of scene.trees) if (o !== t && crownTopZ(o, t.x, t.y) > apex) { overtopped = true; break; }
    return {
      id: t.id, group: t.group, x: scene.originX + t.x, y: scene.originY + t.y, heightM: t.heightM,
      crownRadiusM: t.crownRadiusM, visibleCrownAreaM2: area[k]!, visible: !overtopped, overtopped,
    };
  });
}
