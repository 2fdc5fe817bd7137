import { CrowntallyError } from '../errors.js';
import { FLAG_OVERLAP, FLAG_WITHHELD, type PointChunk } from '../io/types.js';
import { checkGeometry, DEFAULT_MAX_CELLS, type Grid, type GridGeometry } from './grid.js';

/**
 * Pass 1: one streaming pass over the points builds every per-cell surface the
 * later stages need. Memory follows the area (about 40 bytes a cell), never
 * the number of points.
 *
 * Per cell it keeps: the highest and second-highest return (DSM and the
 * isolation test), the point count, the count of building points (ASPRS
 * class 6), the lowest ground-class point (class 2, with its x, y) and the
 * lowest point of any class (with its x, y) for the ground filter.
 *
 * Left out of every surface (ASPRS LAS 1.4 R15, standard classes and flags):
 * class 7 (low point, noise), class 18 (high noise), withheld points, and,
 * when `dropOverlap`, points with the overlap flag (formats 6-10) or class 12
 * (overlap points in formats 0-5, from memory of LAS 1.2/1.3).
 */

export interface SurfaceOptions {
  /** Vertical unit of the file to metres (CrsInfo.verticalUnitM). Default 1. */
  verticalUnitM?: number;
  /** Horizontal (CRS) unit to metres (CrsInfo.unitM), for window sizes given in metres. Default 1. */
  horizontalUnitM?: number;
  /** Leave out overlap points. Default true. */
  dropOverlap?: boolean;
  /** Collect the class-2 ground grid (it is always cheap; false skips it). Default true. */
  useGroundClass?: boolean;
  /**
   * A highest return standing more than this (m) above every other return in
   * its 3x3 cells is an outlier. Default 8 m: the leader of a narrow conifer
   * can stand 5-6 m above the nearest other returns at 10 pulses per m2, while
   * birds and multipath echoes stand well clear of the canopy.
   */
  highOutlierM?: number;
  /** A lowest point lying more than this (m) below every other lowest point around it is an outlier. Default 2 m. */
  lowOutlierM?: number;
  /** Cell budget. Default DEFAULT_MAX_CELLS. */
  maxGridCells?: number;
}

/** Points as structure of arrays: x, y in CRS units, z in metres. */
export interface GroundPoints {
  count: number;
  x: Float64Array;
  y: Float64Array;
  z: Float32Array;
}

export interface Surfaces {
  geometry: GridGeometry;
  /** Highest return per cell after the isolation test, metres; NaN where the cell has no return. */
  dsm: Grid;
  /** Lowest point of any class per cell after the low-outlier test, metres; NaN where none. */
  lowest: Grid;
  /** x, y (CRS units) of the point in `lowest`, per cell; NaN where none. */
  lowestX: Float64Array;
  lowestY: Float64Array;
  /** Lowest class-2 point per cell after the low-outlier test, metres; NaN where none. */
  ground: Grid;
  /** The class-2 cells of `ground` as points. */
  groundPoints: GroundPoints;
  /** Points used per cell. */
  counts: Grid<Uint32Array>;
  /** Class-6 (building) points per cell. */
  buildingCounts: Grid<Uint32Array>;
  /** The same grid as `counts` (alias). */
  count: Grid<Uint32Array>;
  /**
   * Points per cell that are one of several returns of their pulse: pulses
   * that went through something, as foliage lets them and roofs do not.
   */
  multiReturnCounts: Grid<Uint32Array>;
  /** The same grid as `buildingCounts` (alias). */
  buildingCount: Grid<Uint32Array>;
  /** True when at least one used point carried class 6. */
  hasBuildingClass: boolean;
  /** True when at least one used point carried class 2. */
  hasGroundClass: boolean;
  /** Points that entered the surfaces. */
  pointsUsed: number;
  /** Points left out as noise (class 7 or 18). */
  pointsNoise: number;
  /** Points left out as withheld. */
  pointsWithheld: number;
  /** Points left out as overlap (only when dropOverlap). */
  pointsOverlap: number;
  /** Points outside the grid, or with a non-finite coordinate. */
  pointsOutside: number;
  /** DSM cells whose highest return failed the isolation test. */
  outliersRemoved: number;
  /** Cells whose lowest point (any class or ground class) failed the low-outlier test. */
  lowOutliersRemoved: number;
}

const CLASS_GROUND = 2;
const CLASS_BUILDING = 6;
const CLASS_LOW_NOISE = 7;
const CLASS_OVERLAP_LEGACY = 12;
const CLASS_HIGH_NOISE = 18;

export class SurfaceAccumulator {
  readonly geometry: GridGeometry;
  private readonly vUnit: number;
  private readonly hUnit: number;
  private readonly dropOverlap: boolean;
  private readonly useGroundClass: boolean;
  private readonly highOutlierM: number;
  private readonly multi: Uint32Array;
  private readonly lowOutlierM: number;
  private readonly max1: Float32Array;
  private readonly max2: Float32Array;
  private readonly count: Uint32Array;
  private readonly building: Uint32Array;
  // x, y are kept as offsets from the cell's west / north edge in Float32: sub-millimetre
  // precision, half the memory of absolute Float64 coordinates.
  private readonly lowZ: Float32Array;
  private readonly lowDx: Float32Array;
  private readonly lowDy: Float32Array;
  private readonly gZ: Float32Array;
  private readonly gDx: Float32Array;
  private readonly gDy: Float32Array;
  private used = 0;
  private noise = 0;
  private withheld = 0;
  private overlap = 0;
  private outside = 0;
  private groundSeen = false;
  private buildingSeen = false;
  private finished = false;

  /** Throws TOO_LARGE (with a cell size that fits) before allocating a grid beyond the budget. */
  constructor(geometry: GridGeometry, opts: SurfaceOptions = {}) {
    this.vUnit = positive(opts.verticalUnitM ?? 1, 'verticalUnitM');
    this.hUnit = positive(opts.horizontalUnitM ?? 1, 'horizontalUnitM');
    this.highOutlierM = positive(opts.highOutlierM ?? 8, 'highOutlierM');
    this.lowOutlierM = positive(opts.lowOutlierM ?? 2, 'lowOutlierM');
    this.dropOverlap = opts.dropOverlap ?? true;
    this.useGroundClass = opts.useGroundClass ?? true;
    checkGeometry(geometry, opts.maxGridCells ?? DEFAULT_MAX_CELLS, this.hUnit);
    const { width, height, cellSize, originX, originY } = geometry;
    this.geometry = { width, height, cellSize, originX, originY };
    const n = width * height;
    this.max1 = new Float32Array(n).fill(-Infinity);
    this.max2 = new Float32Array(n).fill(-Infinity);
    this.count = new Uint32Array(n);
    this.building = new Uint32Array(n);
    this.multi = new Uint32Array(n);
    this.lowZ = new Float32Array(n).fill(Infinity);
    this.lowDx = new Float32Array(n);
    this.lowDy = new Float32Array(n);
    const gn = this.useGroundClass ? n : 0;
    this.gZ = new Float32Array(gn).fill(Infinity);
    this.gDx = new Float32Array(gn);
    this.gDy = new Float32Array(gn);
  }

  /** Adds one chunk of points. */
  add(chunk: PointChunk): void {
    if (this.finished) throw new CrowntallyError('INTERNAL', 'SurfaceAccumulator.add called after finish');
    const { width, height, cellSize, originX, originY } = this.geometry;
    const { x, y, z, classification: cls, flags, numberOfReturns: nret } = chunk;
    const n = chunk.count;
    if (!(Number.isInteger(n) && n >= 0 && x.length >= n && y.length >= n && z.length >= n && cls.length >= n && flags.length >= n)) {
      throw new CrowntallyError('INTERNAL', `point chunk claims ${n} points but its arrays are shorter`);
    }
    const inv = 1 / cellSize;
    const vu = this.vUnit;
    const dropOverlap = this.dropOverlap;
    const useG = this.useGroundClass;
    const { max1, max2, count, building, multi, lowZ, lowDx, lowDy, gZ, gDx, gDy } = this;
    // Tallies live in locals during the loop and are written back once: a
    // field write in a rarely taken branch would cost the loop its optimised code.
    let used = 0, noise = 0, withheld = 0, overlap = 0, outside = 0, groundSeen = false, buildingSeen = false;
    for (let i = 0; i < n; i++) {
      const c = cls[i]!;
      if (c === CLASS_LOW_NOISE || c === CLASS_HIGH_NOISE) { noise++; continue; }
      const f = flags[i]!;
      if (f & FLAG_WITHHELD) { withheld++; continue; }
      if (dropOverlap && (f & FLAG_OVERLAP || c === CLASS_OVERLAP_LEGACY)) { overlap++; continue; }
      const px = x[i]!, py = y[i]!, pz = z[i]! * vu;
      const fc = (px - originX) * inv;
      const fr = (originY - py) * inv;
      // NaN fails both comparisons, so non-finite coordinates land here too.
      if (!(fc >= 0 && fc < width && fr >= 0 && fr < height && pz - pz === 0)) { outside++; continue; }
      const col = fc | 0, row = fr | 0;
      const k = row * width + col;
      used++;
      count[k]!++;
      if (nret[i]! > 1) multi[k]!++;
      // Highest and second highest without data-dependent branches.
      const m1 = max1[k]!;
      max1[k] = Math.max(m1, pz);
      max2[k] = Math.max(max2[k]!, Math.min(m1, pz));
      if (pz < lowZ[k]!) {
        lowZ[k] = pz;
        lowDx[k] = px - (originX + col * cellSize);
        lowDy[k] = (originY - row * cellSize) - py;
      }
      if (c === CLASS_BUILDING) { building[k]!++; buildingSeen = true; }
      else if (c === CLASS_GROUND) {
        groundSeen = true;
        if (useG && pz < gZ[k]!) {
          gZ[k] = pz;
          gDx[k] = px - (originX + col * cellSize);
          gDy[k] = (originY - row * cellSize) - py;
        }
      }
    }
    this.used += used; this.noise += noise; this.withheld += withheld; this.overlap += overlap; this.outside += outside;
    if (groundSeen) this.groundSeen = true;
    if (buildingSeen) this.buildingSeen = true;
  }

  /** Applies the outlier tests and returns the surfaces. The accumulator cannot be used afterwards. */
  finish(): Surfaces {
    if (this.finished) throw new CrowntallyError('INTERNAL', 'SurfaceAccumulator.finish called twice');
    this.finished = true;
    const geom = this.geometry;
    const { width, height, cellSize, originX, originY } = geom;
    const n = width * height;

    const dsmData = new Float32Array(n);
    const outliersRemoved = isolationTest(this.max1, this.max2, width, height, this.highOutlierM, dsmData);

    const radius = lowOutlierRadius(cellSize * this.hUnit);
    let lowRemoved = lowOutlierTest(this.lowZ, width, height, radius, this.lowOutlierM);
    // Row and column come from the loops, not from a division per cell; the
    // coordinate sums are evaluated in the same order as before.
    const lowestX = new Float64Array(n), lowestY = new Float64Array(n);
    const lowest = new Float32Array(n);
    const { lowZ, lowDx, lowDy, gZ, gDx, gDy } = this;
    for (let row = 0; row < height; row++) {
      const base = row * width, y0 = originY - row * cellSize;
      for (let col = 0; col < width; col++) {
        const k = base + col;
        const z = lowZ[k]!;
        if (z === Infinity) { lowest[k] = NaN; lowestX[k] = NaN; lowestY[k] = NaN; continue; }
        lowest[k] = z;
        lowestX[k] = originX + col * cellSize + lowDx[k]!;
        lowestY[k] = y0 - lowDy[k]!;
      }
    }

    const ground = new Float32Array(n).fill(NaN);
    let gCount = 0;
    if (this.useGroundClass) {
      lowRemoved += lowOutlierTest(gZ, width, height, radius, this.lowOutlierM);
      for (let k = 0; k < n; k++) if (gZ[k] !== Infinity) gCount++;
    }
    const gp: GroundPoints = { count: gCount, x: new Float64Array(gCount), y: new Float64Array(gCount), z: new Float32Array(gCount) };
    if (this.useGroundClass) {
      const { x: gx, y: gy, z: gz } = gp;
      let j = 0;
      for (let row = 0; row < height; row++) {
        const base = row * width, y0 = originY - row * cellSize;
        for (let col = 0; col < width; col++) {
          const k = base + col;
          const z = gZ[k]!;
          if (z === Infinity) continue;
          ground[k] = z;
          gx[j] = originX + col * cellSize + gDx[k]!;
          gy[j] = y0 - gDy[k]!;
          gz[j] = z;
          j++;
        }
      }
    }

    const counts: Grid<Uint32Array> = { ...geom, data: this.count };
    const buildingCounts: Grid<Uint32Array> = { ...geom, data: this.building };
    return {
      geometry: geom,
      dsm: { ...geom, data: dsmData },
      lowest: { ...geom, data: lowest },
      lowestX,
      lowestY,
      ground: { ...geom, data: ground },
      groundPoints: gp,
      counts,
      buildingCounts,
      count: counts,
      buildingCount: buildingCounts,
      multiReturnCounts: { ...geom, data: this.multi },
      hasBuildingClass: this.buildingSeen,
      hasGroundClass: this.groundSeen,
      pointsUsed: this.used,
      pointsNoise: this.noise,
      pointsWithheld: this.withheld,
      pointsOverlap: this.overlap,
      pointsOutside: this.outside,
      outliersRemoved,
      lowOutliersRemoved: lowRemoved,
    };
  }
}

function positive(v: number, name: string): number {
  if (!(typeof v === 'number' && v > 0 && Number.isFinite(v))) {
    throw new CrowntallyError('BAD_OPTIONS', `${name} must be a positive number (got ${String(v)})`);
  }
  return v;
}

/**
 * High-outlier isolation test (our own rule, common practice in spirit): a
 * cell's highest return is an outlier when it stands more than `limitM` above
 * every other return in its 3x3 neighbourhood, i.e. above the cell's own
 * second-highest return and above the highest return of each of the 8
 * neighbours. A bird or a multipath echo is such a lone point; a sharp
 * conifer top is not, since the cone below it puts returns a little lower
 * into the neighbouring cells. An outlier cell falls back to its
 * second-highest return (NaN when it had only the one). A lone point with no
 * other return in its 3x3 cells is kept: nothing around it says it is wrong.
 * Tests read only the original maxima, so the result does not depend on
 * scan order. Writes the DSM (NaN for empty cells) into `out`; returns the
 * number of cells changed.
 */
function isolationTest(max1: Float32Array, max2: Float32Array, w: number, h: number, limitM: number, out: Float32Array): number {
  let removed = 0;
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) {
      const k = r * w + c;
      const top = max1[k];
      if (top === -Infinity) { out[k] = NaN; continue; }
      let support = max2[k];
      // Support only grows, so a cell that its own second return already
      // supports needs no look at its neighbours (most cells with 2+ returns).
      if (top - support > limitM) {
        for (let dr = -1; dr <= 1; dr++) {
          const rr = r + dr;
          if (rr < 0 || rr >= h) continue;
          for (let dc = -1; dc <= 1; dc++) {
            const cc = c + dc;
            if ((dr === 0 && dc === 0) || cc < 0 || cc >= w) continue;
            const v = max1[rr * w + cc];
            if (v > support) support = v;
          }
        }
      }
      if (support !== -Infinity && top - support > limitM) {
        const second = max2[k];
        out[k] = second === -Infinity ? NaN : second;
        removed++;
      } else out[k] = top;
    }
  }
  return removed;
}

/** Half-width (cells) of the low-outlier window: about 2 m, at least 1 cell, at most 4. */
function lowOutlierRadius(cellM: number): number {
  return Math.min(4, Math.max(1, Math.ceil(2 / cellM - 1e-9)));
}

/**
 * Low-outlier test (our own rule): a cell's lowest point is an outlier when it
 * lies more than `limitM` below the lowest point of every other cell in the
 * (2r+1)^2 window around it, with r about 2 m in cells (1 to 4 cells). A
 * multipath echo below ground is such a lone deep point; real terrain puts
 * some other low point within a couple of metres. The window is wider than
 * 3x3 so that a true ground hit under dense canopy, whose direct neighbours
 * saw only leaves, still finds another ground hit nearby. A cell with no
 * other point in its window is kept. Outliers are cleared (set to +Infinity,
 * "empty"), so the DTM bridges them from the surrounding ground. Works in
 * place; returns the number of cells cleared.
 *
 * The cell fails when every other point v in the window has v - self > limitM
 * (rounding of v - self is monotone in v, so this is the same as testing the
 * lowest of them). The scan of the window therefore stops at the first v with
 * v - self <= limitM, which over real terrain is one of the first few cells.
 */
function lowOutlierTest(z: Float32Array, w: number, h: number, r: number, limitM: number): number {
  const flagged: number[] = [];
  for (let row = 0; row < h; row++) {
    const r0 = Math.max(0, row - r), r1 = Math.min(h - 1, row + r);
    for (let c = 0; c < w; c++) {
      const k = row * w + c;
      const self = z[k]!;
      if (self === Infinity) continue;
      const c0 = Math.max(0, c - r), c1 = Math.min(w - 1, c + r);
      let near = false, any = false;
      scan: for (let rr = r0; rr <= r1; rr++) {
        for (let j = rr * w + c0, e = rr * w + c1; j <= e; j++) {
          const v = z[j]!;
          if (v === Infinity || j === k) continue;
          any = true;
          if (v - self <= limitM) { near = true; break scan; }
        }
      }
      if (any && !near) flagged.push(k);
    }
  }
  for (const j of flagged) z[j] = Infinity;
  return flagged.length;
}
