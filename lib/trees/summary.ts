import { CrowntallyError } from '../errors.js';
import type { PointChunk } from '../io/types.js';
import type { Grid } from '../raster/grid.js';
import type { SurveySummary, TreeTable } from './table.js';
import { pointHeightBuffers, pointHeights, type PointHeights } from './heights.js';

/** Tallest height (m) the whole-area profile keeps; higher returns (birds, cranes, outliers) land in the top layer. */
const MAX_PROFILE_M = 150;

/**
 * Whole-area vertical profile: returns per layer of layerM metres above the
 * DTM (noise classes 7 and 18 and withheld points left out, overlap points
 * too by default). Fed chunk by chunk during the metrics pass.
 */
export class ProfileAccumulator {
  private readonly counts: Float64Array;
  private readonly layerM: number;
  private readonly vu: number;
  private readonly dropOverlap: boolean;
  private top = -1;
  private readonly scratch = pointHeightBuffers();

  constructor(private readonly dtm: Grid, opts: { layerM: number; verticalUnitM: number; dropOverlap?: boolean }) {
    if (!(opts.layerM > 0)) throw new CrowntallyError('BAD_OPTIONS', `profile layer must be a positive number of metres (got ${opts.layerM})`);
    if (!(opts.verticalUnitM > 0)) throw new CrowntallyError('BAD_OPTIONS', `verticalUnitM must be positive (got ${opts.verticalUnitM})`);
    this.layerM = opts.layerM;
    this.vu = opts.verticalUnitM;
    this.dropOverlap = opts.dropOverlap ?? true;
    this.counts = new Float64Array(Math.max(1, Math.ceil(MAX_PROFILE_M / opts.layerM)));
  }

  /** Adds one chunk of points (noise, withheld and, by default, overlap points left out). */
  add(chunk: PointChunk): void {
    this.addHeights(pointHeights(chunk, null, this.dtm, this.vu, this.scratch, this.dropOverlap));
  }

  /** Adds points whose cells and heights above ground are known; with `only`, just those marked 1 in it. */
  addHeights(ph: PointHeights, only?: Uint8Array): void {
    const counts = this.counts, n = counts.length, layerM = this.layerM;
    const cell = ph.cell, hm = ph.heightM;
    let top = this.top;
    for (let p = 0; p < ph.count; p++) {
      if (cell[p]! < 0 || (only && only[p] === 0)) continue;
      const h = hm[p]!;
      if (!(h - h === 0)) continue;
      const l = Math.min(n - 1, Math.max(0, Math.floor(h / layerM)));
      counts[l]!++;
      if (l > top) top = l;
    }
    this.top = top;
  }

  /** Counts from the ground up to the highest layer holding a return. */
  finish(): { layerM: number; counts: number[] } {
    return { layerM: this.layerM, counts: Array.from(this.counts.subarray(0, this.top + 1)) };
  }
}

/**
 * Survey-wide figures. Area = occupied (non-NaN) CHM cells x cell area in m2;
 * canopy cover = share of those cells with CHM >= minHeightM; tree heights
 * (height_m, or chm_height_m where a tree had no returns) in 1 m bins.
 */
export function surveySummary(
  table: TreeTable,
  chm: Grid,
  opts: { minHeightM: number; unitM: number; binM?: number },
  profile: { layerM: number; counts: number[] } = { layerM: table.profileLayerM, counts: [] },
): SurveySummary {
  const binM = opts.binM ?? 1;
  if (!(binM > 0)) throw new CrowntallyError('BAD_OPTIONS', `height bin must be positive (got ${binM})`);
  let occupied = 0, canopy = 0;
  const d = chm.data;
  for (let i = 0; i < d.length; i++) {
    const v = d[i]!;
    if (Number.isNaN(v)) continue;
    occupied++;
    if (v >= opts.minHeightM) canopy++;
  }
  const cellM = chm.cellSize * opts.unitM;
  const areaM2 = occupied * cellM * cellM;
  const counts: number[] = [];
  let sum = 0, max = -Infinity, measured = 0;
  for (let k = 0; k < table.count; k++) {
    let h = table.columns.height_m[k]!;
    if (!Number.isFinite(h)) h = table.columns.chm_height_m[k]!;
    if (!Number.isFinite(h)) continue;
    measured++;
    sum += h;
    if (h > max) max = h;
    const b = Math.max(0, Math.floor(h / binM));
    while (counts.length <= b) counts.push(0);
    counts[b]!++;
  }
  return {
    treeCount: table.count,
    areaM2,
    treesPerHa: areaM2 > 0 ? table.count / (areaM2 / 10_000) : NaN,
    canopyCover: occupied > 0 ? canopy / occupied : NaN,
    heightHistogram: { binM, counts },
    profile: { layerM: profile.layerM, counts: profile.counts.slice() },
    meanHeightM: measured > 0 ? sum / measured : NaN,
    maxHeightM: measured > 0 ? max : NaN,
  };
}
