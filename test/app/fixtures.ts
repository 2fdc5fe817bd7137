import type { StoredRun } from '../../app/src/store.js';
import { emptyColumns, type CrownOutlines } from '../../lib/trees/table.js';

/** Small invented runs for the store tests (behaviour only, no claim about real trees). */
let dbCount = 0;
export const freshName = (): string => `field-test-${++dbCount}-${Math.random().toString(36).slice(2)}`;

/** One ring for the first tree, none for the others (treeRingStart has count + 1 entries, as the table type says). */
export function outlines(count = 1): CrownOutlines {
  const treeRingStart = new Uint32Array(count + 1).fill(1);
  treeRingStart[0] = 0;
  return {
    coords: new Float64Array([0, 0, 1, 0, 1, 1, 0, 0]),
    ringStart: new Uint32Array([0, 4]),
    ringKind: new Uint8Array([0]),
    treeRingStart,
  };
}

export function run(count: number, height: number): StoredRun {
  const columns = emptyColumns(count);
  for (let i = 0; i < count; i++) {
    columns.tree_id[i] = i + 1;
    columns.x[i] = 10 * i;
    columns.y[i] = 5;
    columns.height_m[i] = height;
  }
  const grid = { width: 2, height: 2, cellSize: 1, originX: 0, originY: 2 };
  return {
    trees: { count, columns, profileLayerM: 1, profileLayers: 1, profiles: new Uint32Array(count), returnHistogram: new Uint32Array(count * 15), hasReturns: true, hasRgb: false },
    outlines: outlines(count),
    chm: { ...grid, data: new Float32Array([height, 0, 0, 0]) },
    dtm: { ...grid, data: new Float32Array(4) },
    labels: { ...grid, data: new Int32Array([1, 0, 0, 0]) },
  };
}

const summary = { treeCount: 1, areaM2: 4, treesPerHa: 2500, canopyCover: 0.25, heightHistogram: { binM: 1, counts: [] }, profile: { layerM: 1, counts: [] }, meanHeightM: Number.NaN, maxHeightM: 7 };
export const meta = (n: number) => ({ at: 1, treeCount: n, summary, warnings: [], crs: { epsg: 32633, wkt: null, proj4: null, unitM: 1, verticalUnitM: 1, unitName: 'metre', notes: [] }, usedOptions: { cellSizeM: 0.5 } as never });
