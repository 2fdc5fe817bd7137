/**
 * The tree table: one typed array per metric, so it crosses a worker
 * boundary by transfer, never by copy or JSON. Rows for display come from
 * `treeRow`. Lengths, areas and heights are metres; x, y are file CRS units.
 * A metric that does not exist for a survey (return statistics of a cloud
 * without return numbers, colour of a cloud without RGB) is NaN, never 0.
 */
export const TREE_COLUMNS = [
  'tree_id',              // stable id: same file + options -> same ids (ordered by top position)
  'x', 'y',               // treetop, CRS units
  'height_m',             // highest non-noise return in the crown, above ground
  'chm_height_m',         // CHM value at the top
  'crown_area_m2',        // area of the crown outline
  'crown_diameter_m',     // diameter of the circle of equal area
  'crown_extent_m',       // longest distance across the outline
  'crown_perimeter_m',
  'crown_base_m',         // estimated height of the crown base above ground
  'point_count',
  'first_returns', 'intermediate_returns', 'last_returns', 'single_returns',
  'intensity_mean', 'intensity_max',
  'h25_m', 'h50_m', 'h75_m', 'h95_m',
  'ground_share',         // share of returns below the crown that reached the ground (0-1)
  'red_mean', 'green_mean', 'blue_mean', // 16-bit scale, NaN without colour
] as const;

export type TreeColumn = (typeof TREE_COLUMNS)[number];

/** Largest return number kept in the per-tree histogram (LAS 1.4 allows 15). */
export const MAX_RETURN_NUMBER = 15;

export interface CrownOutlines {
  /** Vertices x0,y0,x1,y1,... in CRS units; rings closed (last = first). */
  coords: Float64Array;
  /** ringStart[k]..ringStart[k+1] are the vertex indices of ring k. Length rings+1. */
  ringStart: Uint32Array;
  /** 0 = exterior (starts a new polygon of the tree), 1 = hole of the polygon before it. */
  ringKind: Uint8Array;
  /** treeRingStart[t]..treeRingStart[t+1] are the rings of tree t. Length count+1. */
  treeRingStart: Uint32Array;
}

export interface TreeTable {
  count: number;
  columns: Record<TreeColumn, Float64Array>;
  /** Vertical profile: returns per layer, `profileLayers` layers of `profileLayerM` from the ground up; row-major [tree][layer]. */
  profileLayerM: number;
  profileLayers: number;
  profiles: Uint32Array;
  /** Points by return number 1..MAX_RETURN_NUMBER, row-major [tree][returnNumber-1]. */
  returnHistogram: Uint32Array;
  /** False for clouds without return numbers: return statistics are absent (NaN). */
  hasReturns: boolean;
  hasRgb: boolean;
  outlines: CrownOutlines;
}

export function emptyColumns(count: number): Record<TreeColumn, Float64Array> {
  const cols = {} as Record<TreeColumn, Float64Array>;
  for (const c of TREE_COLUMNS) cols[c] = new Float64Array(count);
  return cols;
}

export type TreeRow = Record<TreeColumn, number>;

/** One row as a plain object (for display; not for hot paths). */
export function treeRow(t: TreeTable, i: number): TreeRow {
  const row = {} as TreeRow;
  for (const c of TREE_COLUMNS) row[c] = t.columns[c][i]!;
  return row;
}

/** Every buffer of the table, for postMessage's transfer list. */
export function treeTableTransferables(t: TreeTable): ArrayBuffer[] {
  const bufs = new Set<ArrayBuffer>();
  for (const c of TREE_COLUMNS) bufs.add(t.columns[c].buffer as ArrayBuffer);
  for (const a of [t.profiles, t.returnHistogram, t.outlines.coords, t.outlines.ringStart, t.outlines.ringKind, t.outlines.treeRingStart]) {
    bufs.add(a.buffer as ArrayBuffer);
  }
  return [...bufs];
}

/** Survey-wide figures (lib/trees/summary.ts computes them). */
export interface SurveySummary {
  treeCount: number;
  /** Area processed (m2): occupied cells of the CHM. */
  areaM2: number;
  treesPerHa: number;
  /** Share (0-1) of the area whose CHM is at or above the minimum tree height. */
  canopyCover: number;
  /** Tree heights: counts per bin of `binM` metres from 0. */
  heightHistogram: { binM: number; counts: number[] };
  /** Whole-area vertical profile: returns per layer of `layerM` metres above ground. */
  profile: { layerM: number; counts: number[] };
  meanHeightM: number;
  maxHeightM: number;
}
