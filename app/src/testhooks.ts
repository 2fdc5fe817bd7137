import { emptyColumns } from '../../lib/trees/table.js';
import type { FieldStore, ProjectRecord, StoredRun } from './store.js';

/**
 * Hooks for the browser tests, loaded only when the page is opened with
 * ?test-hooks=1 (never in normal use): a large invented stored run, and a
 * switch that holds a save's transaction open so a test can close the page
 * in the middle of it.
 */

export interface TestHooks {
  /** Stores an invented project of `count` trees on a square grid; returns its id. */
  seedLarge(count: number, name: string): Promise<string>;
  /** While on, saveRun keeps its transaction open just before the project record is written. */
  holdSaves(on: boolean): void;
  /** True once a held save is waiting. */
  saveHeld(): boolean;
}

export function installTestHooks(store: FieldStore): TestHooks {
  let hold = false;
  let held = false;
  store.holdSave = () => { if (hold) held = true; return hold; };
  const hooks: TestHooks = {
    holdSaves(on) { hold = on; if (!on) held = false; },
    saveHeld: () => held,
    async seedLarge(count, name) {
      const p = await store.createProject({ name, source: { kind: 'demo', demo: 'park' } });
      await store.saveRun(p.id, largeRun(count), {
        at: Date.now(), treeCount: count, warnings: [],
        summary: { treeCount: count, areaM2: count * 25, treesPerHa: 400, canopyCover: 0.36, heightHistogram: { binM: 5, counts: [0, count] }, profile: { layerM: 1, counts: [] }, meanHeightM: 7.5, maxHeightM: 10 },
        crs: { epsg: null, wkt: null, proj4: null, unitM: 1, verticalUnitM: 1, unitName: 'metre', notes: [] },
        usedOptions: { cellSizeM: 1 } as NonNullable<ProjectRecord['run']>['usedOptions'],
      });
      return p.id;
    },
  };
  (globalThis as unknown as { __crowntally?: TestHooks }).__crowntally = hooks;
  return hooks;
}

/** Trees 5 m apart on a square grid, 3 m square crowns, heights from a fixed sequence (5 to 10 m). */
function largeRun(count: number): StoredRun {
  const side = Math.ceil(Math.sqrt(count));
  const cols = emptyColumns(count);
  const cells = side * 5;
  const chm = new Float32Array(cells * cells);
  const labels = new Int32Array(cells * cells);
  const coords = new Float64Array(count * 10);
  const ringStart = new Uint32Array(count + 1);
  const treeRingStart = new Uint32Array(count + 1);
  for (let i = 0; i < count; i++) {
    const cx = (i % side) * 5 + 2.5, cy = cells - (Math.floor(i / side) * 5 + 2.5);
    const hM = 5 + ((i * 7919) % 1000) / 200; // distinct enough to sort, no two neighbours alike
    cols.tree_id[i] = i + 1; cols.x[i] = cx; cols.y[i] = cy; cols.height_m[i] = hM; cols.chm_height_m[i] = hM;
    cols.crown_area_m2[i] = 9; cols.crown_diameter_m[i] = 3.4; cols.point_count[i] = 40 + (i % 60);
    const c0 = Math.floor(cx) - 1, r0 = Math.floor(cells - cy) - 1;
    for (let r = r0; r < r0 + 3; r++) for (let c = c0; c < c0 + 3; c++) { chm[r * cells + c] = hM; labels[r * cells + c] = i + 1; }
    coords.set([cx - 1.5, cy - 1.5, cx + 1.5, cy - 1.5, cx + 1.5, cy + 1.5, cx - 1.5, cy + 1.5, cx - 1.5, cy - 1.5], i * 10);
    ringStart[i + 1] = (i + 1) * 5;
    treeRingStart[i + 1] = i + 1;
  }
  const grid = { width: cells, height: cells, cellSize: 1, originX: 0, originY: cells };
  return {
    trees: { count, columns: cols, profileLayerM: 1, profileLayers: 1, profiles: new Uint32Array(count), returnHistogram: new Uint32Array(count * 15), hasReturns: true, hasRgb: false },
    outlines: { coords, ringStart, ringKind: new Uint8Array(count), treeRingStart },
    chm: { ...grid, data: chm }, dtm: { ...grid, data: new Float32Array(cells * cells) }, labels: { ...grid, data: labels },
  };
}
