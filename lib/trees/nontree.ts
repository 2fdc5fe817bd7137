import { CrowntallyError } from '../errors.js';
import type { Grid } from '../raster/grid.js';
import type { Treetops } from './treetops.js';
import { nonZeroCells } from './cells.js';

export interface NonTreeOptions {
  /** Surface the planarity tests read (the DSM: highest return per cell, metres). Falls back to `chm`. */
  dsm?: Grid;
  chm: Grid;
  /** Points per cell and class-6 (building) points per cell, same geometry as the labels. */
  pointCount?: Grid<Uint32Array>;
  buildingCount?: Grid<Uint32Array>;
  /**
   * Single returns (1 of 1) per cell, same geometry; with pointCount it enables the solid-surface test.
   * Give it only for clouds with return numbers.
   */
  singleReturnCount?: Grid<Uint32Array>;
  /** A crown of at least 20 returns of which this share or more are single returns is a solid surface. Default 0.95. */
  maxSingleShare?: number;
  /**
   * A crown of at least 20 returns of which this share or more come from pulses that returned
   * several times is foliage, however smooth its top: the shape tests leave it in. Default 0.4.
   */
  minFoliageMultiShare?: number;
  /**
   * The foliage rule holds only for crowns whose top is at least this high (m): low smooth foliage is a
   * clipped hedge or shrub bed more often than a tree, and stays judged by shape. Default 3 m.
   */
  minFoliageTopM?: number;
  /** True when the survey carries class 6 at all: then the class decides, not the shape. */
  hasBuildingClass?: boolean;
  /** CRS unit to metres. Default 1. */
  unitM?: number;
  /** A crown whose share of building returns is at least this is a roof. Default 0.5. */
  maxBuildingShare?: number;
  /** A crown of at least minPlaneAreaM2 whose best-fit plane leaves an RMS residual below this (m) is a roof. Default 0.15 m. */
  maxPlaneRmsM?: number;
  /** Smallest crown (m2) the whole-crown plane test applies to (and at least 5 cells, so the fit is overdetermined). Default 4 m2. */
  minPlaneAreaM2?: number;
  /** A crown below this area (m2) that meets a roof crown with no step in the surface is a piece of that roof. Default 12 m2. */
  maxFragmentAreaM2?: number;
  /** A cell is locally planar when it departs from its 3x3 best-fit plane by less than this (m). Default 0.05 m, about the vertical noise of a lidar roof. */
  localPlaneToleranceM?: number;
  /** A crown with at least this share of locally planar cells is a roof (flat or pitched). Default 0.6. */
  maxPlanarShare?: number;
}

export interface NonTreeResult {
  tops: Treetops;
  /** New label grid, labels renumbered 1..tops.count in the kept tops' order. */
  labels: Grid<Int32Array>;
  removed: number;
  /** For each input top, its new index, or -1 when removed. */
  keptIndex: Int32Array;
}

/**
 * Leaves out candidate crowns that are roofs.
 *
 * With building returns (ASPRS class 6) in the survey, a crown whose
 * returns are mostly class 6 is a roof. Otherwise (and always for crowns
 * the class does not mark: vehicles, decks and sheds left unclassified have
 * no class of their own) shape decides: roofs are smooth planes (flat, or
 * pitched faces meeting at ridges), tree crowns are rough. Either test rejects:
 *  - whole crown: a least-squares plane z = a + b x + c y over the crown's
 *    cells leaves an RMS residual below maxPlaneRmsM (flat or single tilted
 *    face), for crowns of at least minPlaneAreaM2 and 5 cells (narrow decks
 *    and roof strips too thin for the 3x3 stencil);
 *  - local: on a regular 3x3 stencil the least-squares plane's value at the
 *    centre is the mean of the nine cells (the x and y sums vanish), so a
 *    cell is locally planar when |h - mean9| < localPlaneToleranceM. A crown
 *    whose cells are at least maxPlanarShare locally planar is a roof even
 *    when it spans a ridge (only ridge and eave cells are non-planar).
 *  - solid surface (when single-return counts are given): a laser pulse
 *    that meets a roof or deck returns once, one that meets foliage often
 *    returns several times, so a crown of at least 20 returns that are
 *    nearly all single returns (maxSingleShare) is not a tree (common practice);
 *    and the other way round, a crown whose returns come largely from pulses
 *    that returned several times (minFoliageMultiShare) is foliage even when
 *    its top is smooth (a flat-topped or clipped crown) and at least
 *    minFoliageTopM high: the shape tests leave it in. A roof gives
 *    multiple returns only along its edges; a low smooth crown is more
 *    often a clipped hedge than a tree, so it stays judged by shape.
 * The stencil reads the surface regardless of labels, so a roof split into
 * several crowns by noise is judged as the roof it is; a small crown
 * that meets a roof crown with no step in the surface is a cut-off piece of
 * that roof (below maxFragmentAreaM2). Trade-offs: a clipped
 * hedge with a flat top is left out too; a crown with fewer than 4 cells is
 * never judged by shape.
 */
export function rejectNonTrees(labels: Grid<Int32Array>, tops: Treetops, opts: NonTreeOptions): NonTreeResult {
  const unitM = opts.unitM ?? 1;
  const { width: W, height: H } = labels;
  const N = W * H;
  const surf = opts.dsm ?? opts.chm;
  for (const g of [surf, opts.chm, opts.pointCount, opts.buildingCount, opts.singleReturnCount]) {
    if (g && (g.width !== W || g.height !== H)) {
      throw new CrowntallyError('INTERNAL', `grids for roof rejection must match the ${W} x ${H} label grid (got ${g.width} x ${g.height})`);
    }
  }
  const n = tops.count;
  const maxShare = opts.maxBuildingShare ?? 0.5;
  const maxRms = opts.maxPlaneRmsM ?? 0.15;
  const minArea = opts.minPlaneAreaM2 ?? 4;
  const maxFragment = opts.maxFragmentAreaM2 ?? 12;
  const tol = opts.localPlaneToleranceM ?? 0.05;
  const maxPlanar = opts.maxPlanarShare ?? 0.6;
  const cellM = labels.cellSize * unitM;
  const z = surf.data, lab = labels.data;
  const byClass = opts.hasBuildingClass === true && !!opts.pointCount && !!opts.buildingCount;
  const bySingles = !!opts.pointCount && !!opts.singleReturnCount;
  const maxSingle = opts.maxSingleShare ?? 0.95;
  const minFoliage = opts.minFoliageMultiShare ?? 0.4;
  const minFoliageTop = opts.minFoliageTopM ?? 3;

  // Per crown: cells, planar cells, plane-fit sums (x, y in metres from the top), building and all returns.
  const cells = new Float64Array(n), planar = new Float64Array(n), pts = new Float64Array(n), bld = new Float64Array(n);
  const sgl = new Float64Array(n);
  const S = new Float64Array(n * 9); // sx sy sz sxx sxy syy sxz syz szz
  // One pass over the grid lists the labelled cells (row-major); every later loop runs over the list.
  const cellList = nonZeroCells(lab);
  for (let m = 0; m < cellList.length; m++) {
    const i = cellList[m]!;
    const c = i % W, r = (i - c) / W;
    const L = lab[i]!;
    if (L < 0 || L > n) throw new CrowntallyError('INTERNAL', `label ${L} at cell (${c}, ${r}) is outside 1..${n}`);
    const k = L - 1;
    if (byClass || bySingles) pts[k]! += opts.pointCount!.data[i]!;
    if (byClass) bld[k]! += opts.buildingCount!.data[i]!;
    if (bySingles) sgl[k]! += opts.singleReturnCount!.data[i]!;
    const h = z[i]!;
    if (!Number.isFinite(h)) continue;
    cells[k]!++;
    if (r > 0 && c > 0 && r < H - 1 && c < W - 1) {
      let sum = 0, ok = true;
      for (let dr = -1; dr <= 1 && ok; dr++) for (let dc = -1; dc <= 1; dc++) {
        const v = z[i + dr * W + dc]!;
        if (!Number.isFinite(v)) { ok = false; break; }
        sum += v;
      }
      if (ok && Math.abs(h - sum / 9) < tol) planar[k]!++;
    }
    const x = (c - tops.col[k]!) * cellM, y = (tops.row[k]! - r) * cellM;
    const o = k * 9;
    S[o]! += x; S[o + 1]! += y; S[o + 2]! += h;
    S[o + 3]! += x * x; S[o + 4]! += x * y; S[o + 5]! += y * y;
    S[o + 6]! += x * h; S[o + 7]! += y * h; S[o + 8]! += h * h;
  }

  const roof = new Uint8Array(n);
  for (let k = 0; k < n; k++) {
    // The building class marks roofs, but vehicles, decks and other solids have no class of their own:
    // the shape and solid-surface tests still apply to crowns the class does not mark.
    if (byClass && pts[k]! > 0 && bld[k]! / pts[k]! >= maxShare) roof[k] = 1;
    else if (bySingles && pts[k]! >= 20 && tops.heightM[k]! >= minFoliageTop && (pts[k]! - sgl[k]!) / pts[k]! >= minFoliage) roof[k] = 0;
    else if (cells[k]! >= 4) {
      if (planar[k]! / cells[k]! >= maxPlanar) roof[k] = 1;
      else if (bySingles && pts[k]! >= 20 && sgl[k]! / pts[k]! >= maxSingle) roof[k] = 1;
      else if (cells[k]! >= 5 && cells[k]! * cellM * cellM >= minArea && planeRms(S, k * 9, cells[k]!) < maxRms) roof[k] = 1;
    }
  }
  {
    // Roof fragments: a crown smaller than maxFragmentAreaM2 that meets a roof crown along an edge with
    // no step in the surface (|dz| < tolerance) is a piece of that roof cut off by the flooding.
    const fragment = new Uint8Array(n);
    const meet = (i: number, j: number): void => {
      const a = lab[i]!, b = lab[j]!;
      if (b === 0 || b === a || !(Math.abs(z[i]! - z[j]!) < tol)) return;
      if (roof[a - 1] && !roof[b - 1] && cells[b - 1]! * cellM * cellM < maxFragment) fragment[b - 1] = 1;
      if (roof[b - 1] && !roof[a - 1] && cells[a - 1]! * cellM * cellM < maxFragment) fragment[a - 1] = 1;
    };
    // Each edge between two labelled cells once: from its west or north cell, both of which are listed.
    for (let m = 0; m < cellList.length; m++) {
      const i = cellList[m]!;
      const c = i % W;
      if (c + 1 < W) meet(i, i + 1);
      if (i + W < N) meet(i, i + W);
    }
    for (let k = 0; k < n; k++) if (fragment[k]) roof[k] = 1;
  }
  const keptIndex = new Int32Array(n).fill(-1);
  let kept = 0;
  for (let k = 0; k < n; k++) if (!roof[k]) keptIndex[k] = kept++;

  const pick = <T extends Int32Array | Float64Array | Float32Array>(a: T): T => {
    const out = new (a.constructor as new (m: number) => T)(kept);
    for (let k = 0; k < n; k++) if (keptIndex[k]! >= 0) out[keptIndex[k]!] = a[k]!;
    return out;
  };
  const newTops: Treetops = { count: kept, col: pick(tops.col), row: pick(tops.row), x: pick(tops.x), y: pick(tops.y), heightM: pick(tops.heightM) };
  const out = new Int32Array(N);
  for (let m = 0; m < cellList.length; m++) { const i = cellList[m]!; out[i] = keptIndex[lab[i]! - 1]! + 1; }
  return {
    tops: newTops,
    labels: { width: W, height: H, cellSize: labels.cellSize, originX: labels.originX, originY: labels.originY, data: out },
    removed: n - kept,
    keptIndex,
  };
}

/** RMS residual (m) of the least-squares plane from the sums at S[o..o+8] over m cells; Infinity when degenerate. */
function planeRms(S: Float64Array, o: number, m: number): number {
  const sx = S[o]!, sy = S[o + 1]!, sz = S[o + 2]!, sxx = S[o + 3]!, sxy = S[o + 4]!, syy = S[o + 5]!;
  const sxz = S[o + 6]!, syz = S[o + 7]!, szz = S[o + 8]!;
  // Centred normal equations: [cxx cxy; cxy cyy] [b c]' = [cxz cyz]'.
  const cxx = sxx - (sx * sx) / m, cxy = sxy - (sx * sy) / m, cyy = syy - (sy * sy) / m;
  const cxz = sxz - (sx * sz) / m, cyz = syz - (sy * sz) / m, czz = szz - (sz * sz) / m;
  const det = cxx * cyy - cxy * cxy;
  if (!(Math.abs(det) > 1e-12)) return Infinity;
  const b = (cxz * cyy - cyz * cxy) / det;
  const c = (cyz * cxx - cxz * cxy) / det;
  const sse = czz - b * cxz - c * cyz;
  return Math.sqrt(Math.max(0, sse) / m);
}
