import { CrowntallyError } from '../errors.js';
import type { Grid } from '../raster/grid.js';
import type { GroundPoints, Surfaces } from '../raster/surfaces.js';
import { fillNearest } from '../raster/tin.js';
import { opening } from './morphology.js';

/**
 * Ground filter for clouds without a ground class: the progressive
 * morphological filter (Zhang, Chen, Whitman, Shan, Yan & Zhang 2003, "A
 * progressive morphological filter for removing nonground measurements from
 * airborne LIDAR data", IEEE TGRS 41(4)), run on the grid of the lowest point
 * per cell.
 *
 * Empty cells are first filled from their nearest neighbour (as the paper
 * does before filtering). Then openings with square windows growing
 * exponentially, w_k = 2 * 2^k + 1 cells (3, 5, 9, 17, ...), up to the largest
 * window, each remove objects narrower than the window. A cell is flagged
 * non-ground as soon as the opened surface drops below the surface of the
 * previous step by more than the elevation threshold
 *   dh_k = dh0                                  for w_k <= 3,
 *   dh_k = s * (w_k - w_{k-1}) * c + dh0        otherwise, capped at dhMax,
 * with s the terrain slope (m/m) and c the cell size (m) (Zhang et al. 2003,
 * eq. 5). Cells never flagged are ground; their lowest points are returned.
 */
export interface PmfOptions {
  /** Largest opening window (m): wider than the widest building. Default 30 m. */
  maxWindowM?: number;
  /** Terrain slope the threshold allows for (m per m). Default 0.3. */
  slope?: number;
  /** Threshold for the smallest window (m): the noise of ground returns. Default 0.3 m. */
  initialThresholdM?: number;
  /** Threshold cap (m): lower than the lowest object to remove. Default 2.5 m. */
  maxThresholdM?: number;
  /** Horizontal (CRS) unit to metres: the cell size is in CRS units. Default 1. */
  horizontalUnitM?: number;
}

/** 1 for cells whose lowest point is ground, 0 otherwise (also 0 for empty cells). */
export function pmfGroundMask(lowest: Grid, opts: PmfOptions = {}): Uint8Array {
  const maxWindowM = opts.maxWindowM ?? 30;
  const s = opts.slope ?? 0.3;
  const dh0 = opts.initialThresholdM ?? 0.3;
  const dhMax = opts.maxThresholdM ?? 2.5;
  const unit = opts.horizontalUnitM ?? 1;
  for (const [name, v] of [['maxWindowM', maxWindowM], ['slope', s], ['initialThresholdM', dh0], ['maxThresholdM', dhMax], ['horizontalUnitM', unit]] as const) {
    if (!(v > 0 && Number.isFinite(v))) throw new CrowntallyError('BAD_OPTIONS', `ground filter ${name} must be a positive number (got ${v})`);
  }
  if (dhMax < dh0) throw new CrowntallyError('BAD_OPTIONS', `ground filter maxThresholdM (${dhMax}) must not be below initialThresholdM (${dh0})`);
  const { width: w, height: h } = lowest;
  const n = w * h;
  const cellM = lowest.cellSize * unit;
  const mask = new Uint8Array(n);
  let surface: Float32Array = new Float32Array(lowest.data);
  if (fillNearest({ ...lowest, data: surface }) < 0) return mask; // no points at all
  for (let k = 0; k < n; k++) mask[k] = Number.isNaN(lowest.data[k]) ? 0 : 1;
  const maxCells = Math.max(3, Math.floor(maxWindowM / cellM));
  let prevW = 1;
  for (let k = 1; ; k++) {
    let wk = 2 * 2 ** k + 1;
    const last = wk >= maxCells;
    if (last) wk = Math.max(3, maxCells | 1); // the last window: the largest odd size within maxWindowM
    if (wk <= prevW) break;
    const dh = wk <= 3 ? dh0 : Math.min(dhMax, s * (wk - prevW) * cellM + dh0);
    const opened = opening(surface, w, h, (wk - 1) / 2);
    for (let i = 0; i < n; i++) if (surface[i] - opened[i] > dh) mask[i] = 0;
    surface = opened;
    prevW = wk;
    if (last) break;
  }
  return mask;
}

/** Ground points of a cloud without a ground class: the lowest point of each cell the filter keeps. */
export function progressiveMorphologicalGround(s: Surfaces, opts: PmfOptions = {}): GroundPoints {
  const mask = pmfGroundMask(s.lowest, opts);
  let count = 0;
  for (let k = 0; k < mask.length; k++) count += mask[k];
  const out: GroundPoints = { count, x: new Float64Array(count), y: new Float64Array(count), z: new Float32Array(count) };
  let j = 0;
  for (let k = 0; k < mask.length; k++) {
    if (!mask[k]) continue;
    out.x[j] = s.lowestX[k];
    out.y[j] = s.lowestY[k];
    out.z[j] = s.lowest.data[k];
    j++;
  }
  return out;
}

/** The ground filter as the pipeline calls it: `unitM` is the horizontal (CRS) unit in metres. */
export function groundFromFilter(s: Surfaces, opts: Omit<PmfOptions, 'horizontalUnitM'> & { unitM?: number } = {}): GroundPoints {
  const { unitM, ...rest } = opts;
  return progressiveMorphologicalGround(s, { ...rest, horizontalUnitM: unitM ?? 1 });
}
