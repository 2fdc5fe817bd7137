import { CrowntallyError } from '../errors.js';
import { FLAG_OVERLAP, FLAG_WITHHELD, type PointChunk } from '../io/types.js';
import type { Grid } from '../raster/grid.js';
import type { Treetops } from './treetops.js';
import { emptyColumns, MAX_RETURN_NUMBER, type CrownOutlines, type TreeTable } from './table.js';
import { outlineArea, outlineExtent, outlinePerimeter } from './outlines.js';
import { pointHeightBuffers, pointHeights, sameCells, type PointHeights } from './heights.js';

export interface TreeMetricsOptions {
  /** Layer thickness (m) of the per-tree vertical profile. */
  profileLayerM: number;
  /** z unit to metres. */
  verticalUnitM: number;
  /** Horizontal CRS unit to metres. */
  unitM: number;
  /** False for clouds without return numbers: return statistics become NaN. */
  hasReturns: boolean;
  hasRgb: boolean;
  /** Not read today; accepted so callers can pass the CHM the crowns came from. */
  chm?: Grid;
  /** Leave out overlap points (formats 6-10). Default true. */
  dropOverlap?: boolean;
  /** Height percentiles use returns at or above this height (m): crown returns, not the ground below. Default 2 m. */
  percentileFloorM?: number;
}

/** Bins of the per-tree height histogram (memory: 1 KiB per tree). */
export const HEIGHT_BINS = 256;
/** Finest bin (m); taller trees get wider bins, in 0.1 m steps, so 256 bins span top height + 10 m. */
const FINE_BIN_M = 0.1;
/** Returns below this height (m) above the DTM count as reaching the ground (common practice), as do class 2 returns. */
export const GROUND_HEIGHT_M = 0.5;
/** Tallest profile the table keeps (m); returns above it land in the top layer. */
const MAX_PROFILE_M = 150;
/** A profile layer belongs to the crown while it holds at least this share of the tree's above-ground returns. */
const CROWN_LAYER_SHARE = 0.02;

/**
 * Pass 2: per-tree statistics from the points. Each point (noise classes 7
 * and 18, withheld and, by default, overlap points left out) goes to the
 * crown label of its cell, and into typed-array accumulators: no object per
 * point or per tree. Memory is bounded by the tree count: 256 height bins,
 * 15 return-number bins and one profile per tree.
 */
export class TreeMetricsAccumulator {
  private readonly n: number;
  private readonly layers: number;
  private readonly binM: Float64Array;
  private readonly count: Uint32Array;
  private readonly maxH: Float64Array;
  private readonly first: Uint32Array;
  private readonly last: Uint32Array;
  private readonly single: Uint32Array;
  private readonly inter: Uint32Array;
  private readonly ground: Uint32Array;
  private readonly intSum: Float64Array;
  private readonly intMax: Float64Array;
  private readonly rgb: Float64Array;
  private readonly rgbCount: Uint32Array;
  private readonly hist: Uint32Array;
  private readonly returnHist: Uint32Array;
  private readonly profiles: Uint32Array;
  private readonly dropOverlap: boolean;
  private readonly floorM: number;
  private readonly scratch = pointHeightBuffers();

  constructor(
    private readonly labels: Grid<Int32Array>,
    private readonly dtm: Grid,
    private readonly tops: Treetops,
    private readonly opts: TreeMetricsOptions,
  ) {
    if (!(opts.profileLayerM > 0)) throw new CrowntallyError('BAD_OPTIONS', `profileLayerM must be positive (got ${opts.profileLayerM})`);
    if (!(opts.verticalUnitM > 0) || !(opts.unitM > 0)) throw new CrowntallyError('BAD_OPTIONS', 'unit factors must be positive');
    const n = (this.n = tops.count);
    let topMax = 0;
    for (let k = 0; k < n; k++) if (tops.heightM[k]! > topMax) topMax = tops.heightM[k]!;
    this.layers = Math.max(1, Math.ceil(Math.min(MAX_PROFILE_M, topMax + 10) / opts.profileLayerM));
    this.binM = new Float64Array(n);
    for (let k = 0; k < n; k++) {
      const span = Math.max(0, tops.heightM[k]!) + 10;
      this.binM[k] = Math.max(FINE_BIN_M, Math.ceil((span / HEIGHT_BINS) / FINE_BIN_M) * FINE_BIN_M);
    }
    this.count = new Uint32Array(n);
    this.maxH = new Float64Array(n).fill(-Infinity);
    this.first = new Uint32Array(n); this.last = new Uint32Array(n);
    this.single = new Uint32Array(n); this.inter = new Uint32Array(n);
    this.ground = new Uint32Array(n);
    this.intSum = new Float64Array(n); this.intMax = new Float64Array(n);
    this.rgb = new Float64Array(n * 3); this.rgbCount = new Uint32Array(n);
    this.hist = new Uint32Array(n * HEIGHT_BINS);
    this.returnHist = new Uint32Array(n * MAX_RETURN_NUMBER);
    this.profiles = new Uint32Array(n * this.layers);
    this.dropOverlap = opts.dropOverlap ?? true;
    this.floorM = opts.percentileFloorM ?? 2;
    if (!sameCells(labels, dtm)) throw new CrowntallyError('BAD_OPTIONS', 'the crown label grid and the DTM must share one geometry');
  }

  /** Adds one chunk of points (noise, withheld and, by default, overlap points left out). */
  add(chunk: PointChunk): void {
    this.addHeights(chunk, pointHeights(chunk, null, this.dtm, this.opts.verticalUnitM, this.scratch, this.dropOverlap));
  }

  /** Adds a chunk whose cells and heights above ground are already known (on the label grid). */
  addHeights(chunk: PointChunk, ph: PointHeights): void {
    if (!sameCells(ph.grid, this.labels) || ph.count !== chunk.count) throw new CrowntallyError('INTERNAL', 'point heights do not belong to this chunk and label grid');
    // Fields and chunk arrays in locals: the loop runs once per point.
    const lab = this.labels.data, cell = ph.cell, hm = ph.heightM;
    const layerM = this.opts.profileLayerM, layers = this.layers;
    const hasRet = this.opts.hasReturns;
    const rgbOn = this.opts.hasRgb && !!chunk.red && !!chunk.green && !!chunk.blue;
    const nTrees = this.n, floorM = this.floorM;
    const { count, maxH, intSum, intMax, ground, returnHist, first, last, single, inter, hist, binM, profiles, rgb, rgbCount } = this;
    const { classification, intensity, returnNumber, numberOfReturns, red, green, blue } = chunk;
    for (let p = 0; p < chunk.count; p++) {
      const cp = cell[p]!;
      if (cp < 0) continue;
      const t = lab[cp]!;
      if (t <= 0 || t > nTrees) continue;
      const h = hm[p]!;
      // NaN (no ground under the point) fails.
      if (!(h - h === 0)) continue;
      const k = t - 1;
      count[k]!++;
      if (h > maxH[k]!) maxH[k] = h;
      const it = intensity[p]!;
      intSum[k]! += it;
      if (it > intMax[k]!) intMax[k] = it;
      if (classification[p] === 2 || h < GROUND_HEIGHT_M) ground[k]!++;
      if (hasRet) {
        const rn = returnNumber[p]!, nr = numberOfReturns[p]!;
        if (rn > 0) {
          returnHist[k * MAX_RETURN_NUMBER + Math.min(rn, MAX_RETURN_NUMBER) - 1]!++;
          if (rn === 1) first[k]!++;
          if (rn === nr) last[k]!++;
          if (rn === 1 && nr === 1) single[k]!++;
          if (rn > 1 && rn < nr) inter[k]!++;
        }
      }
      if (h >= floorM) {
        const b = Math.min(HEIGHT_BINS - 1, Math.floor(h / binM[k]!));
        hist[k * HEIGHT_BINS + b]!++;
      }
      const layer = Math.min(layers - 1, Math.max(0, Math.floor(h / layerM)));
      profiles[k * layers + layer]!++;
      if (rgbOn) {
        rgb[3 * k]! += red![p]!; rgb[3 * k + 1]! += green![p]!; rgb[3 * k + 2]! += blue![p]!;
        rgbCount[k]!++;
      }
    }
  }

  finish(outlines: CrownOutlines): TreeTable {
    const n = this.n, u = this.opts.unitM, cols = emptyColumns(n);
    if (outlines.treeRingStart.length !== n + 1) {
      throw new CrowntallyError('INTERNAL', `outlines describe ${outlines.treeRingStart.length - 1} trees, the metrics ${n}`);
    }
    const hasRet = this.opts.hasReturns, rgbOn = this.opts.hasRgb;
    for (let k = 0; k < n; k++) {
      const m = this.count[k]!;
      cols.tree_id[k] = k + 1;
      cols.x[k] = this.tops.x[k]!;
      cols.y[k] = this.tops.y[k]!;
      cols.height_m[k] = m > 0 ? this.maxH[k]! : NaN;
      cols.chm_height_m[k] = this.tops.heightM[k]!;
      const area = outlineArea(outlines, k) * u * u;
      cols.crown_area_m2[k] = area;
      cols.crown_diameter_m[k] = 2 * Math.sqrt(area / Math.PI);
      cols.crown_extent_m[k] = outlineExtent(outlines, k) * u;
      cols.crown_perimeter_m[k] = outlinePerimeter(outlines, k) * u;
      cols.crown_base_m[k] = this.crownBase(k);
      cols.point_count[k] = m;
      cols.first_returns[k] = hasRet ? this.first[k]! : NaN;
      cols.intermediate_returns[k] = hasRet ? this.inter[k]! : NaN;
      cols.last_returns[k] = hasRet ? this.last[k]! : NaN;
      cols.single_returns[k] = hasRet ? this.single[k]! : NaN;
      cols.intensity_mean[k] = m > 0 ? this.intSum[k]! / m : NaN;
      cols.intensity_max[k] = m > 0 ? this.intMax[k]! : NaN;
      cols.h25_m[k] = this.percentile(k, 0.25);
      cols.h50_m[k] = this.percentile(k, 0.5);
      cols.h75_m[k] = this.percentile(k, 0.75);
      cols.h95_m[k] = this.percentile(k, 0.95);
      cols.ground_share[k] = m > 0 ? this.ground[k]! / m : NaN;
      const rc = this.rgbCount[k]!;
      cols.red_mean[k] = rgbOn && rc > 0 ? this.rgb[3 * k]! / rc : NaN;
      cols.green_mean[k] = rgbOn && rc > 0 ? this.rgb[3 * k + 1]! / rc : NaN;
      cols.blue_mean[k] = rgbOn && rc > 0 ? this.rgb[3 * k + 2]! / rc : NaN;
    }
    return {
      count: n,
      columns: cols,
      profileLayerM: this.opts.profileLayerM,
      profileLayers: this.layers,
      profiles: this.profiles,
      returnHistogram: this.returnHist,
      hasReturns: hasRet,
      hasRgb: rgbOn,
      outlines,
    };
  }

  /**
   * Height (m) below which a share q of the tree's returns at or above
   * percentileFloorM lie, from the histogram: linear within the bin, so off
   * by at most one bin width (0.1 m for trees under about 15 m).
   */
  private percentile(k: number, q: number): number {
    const o = k * HEIGHT_BINS;
    let total = 0;
    for (let b = 0; b < HEIGHT_BINS; b++) total += this.hist[o + b]!;
    if (total === 0) return NaN;
    const target = q * total;
    let cum = 0;
    const w = this.binM[k]!;
    for (let b = 0; b < HEIGHT_BINS; b++) {
      const cnt = this.hist[o + b]!;
      if (cnt > 0 && cum + cnt >= target) {
        const lo = Math.max(b * w, this.floorM);
        const hi = Math.min((b + 1) * w, Math.max(lo, this.maxH[k]!));
        return lo + ((target - cum) / cnt) * (hi - lo);
      }
      cum += cnt;
    }
    return Math.min(HEIGHT_BINS * w, this.maxH[k]!);
  }

  /**
   * Crown base (m): from the profile layer with most returns (among layers
   * wholly above 0.5 m), walk down while each layer holds at least 2% of the
   * tree's returns in those layers; the base is the bottom of the lowest layer
   * reached. A gap in the profile ends the crown. NaN without such returns.
   */
  private crownBase(k: number): number {
    const layers = this.layers, layerM = this.opts.profileLayerM, o = k * layers;
    const lowest = Math.ceil(GROUND_HEIGHT_M / layerM - 1e-9);
    let total = 0, peak = -1, peakCount = 0;
    for (let l = lowest; l < layers; l++) {
      const v = this.profiles[o + l]!;
      total += v;
      if (v > peakCount) { peakCount = v; peak = l; }
    }
    if (total === 0 || peak < 0) return NaN;
    const need = Math.max(1, CROWN_LAYER_SHARE * total);
    let l = peak;
    while (l - 1 >= lowest && this.profiles[o + l - 1]! >= need) l--;
    return l * layerM;
  }
}
