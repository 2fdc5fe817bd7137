import ndarray from 'ndarray';
import { CrowntallyError } from '../errors.js';

/**
 * A raster over the survey in the file's CRS. Row 0 is the northern edge
 * (as in GeoTIFF), so cell (col, row) has its centre at
 *   x = originX + (col + 0.5) * cellSize,  y = originY - (row + 0.5) * cellSize.
 * Values are row-major in `data`; NaN marks an empty cell. Heights stored in
 * a Grid are metres, whatever the CRS unit; `cellSize` is in CRS units.
 */
export interface Grid<T extends Float32Array | Int32Array | Uint8Array | Uint32Array = Float32Array> {
  width: number;
  height: number;
  /** Cell edge length in CRS units. */
  cellSize: number;
  /** x of the western edge, CRS units. */
  originX: number;
  /** y of the northern edge, CRS units. */
  originY: number;
  data: T;
}

/** Largest grid the library allocates by default (cells), about 1 GiB of Float32 work grids in all. */
export const DEFAULT_MAX_CELLS = 64_000_000;

/** Refuses, before allocating, a grid larger than the budget, and says which cell size would fit. */
export function checkGridSize(widthCRS: number, heightCRS: number, cellSize: number, maxCells = DEFAULT_MAX_CELLS, unitM = 1): void {
  if (!(cellSize > 0) || !Number.isFinite(cellSize)) {
    throw new CrowntallyError('BAD_OPTIONS', `cell size must be a positive number (got ${cellSize})`);
  }
  const w = Math.ceil(widthCRS / cellSize) + 1;
  const h = Math.ceil(heightCRS / cellSize) + 1;
  if (!Number.isFinite(w * h) || w * h > maxCells) {
    // Least edge c with (W/c + 2)(H/c + 2) <= maxCells: ceil() and an outward-snapped origin add up to
    // two cells per axis. Solved as (M - 4)c^2 - 2(W + H)c - WH >= 0, then rounded up to whole centimetres.
    const W = Math.max(0, widthCRS), H = Math.max(0, heightCRS), m = Math.max(1, maxCells - 4);
    const c = ((W + H) + Math.sqrt((W + H) * (W + H) + m * W * H)) / m;
    const fit = Math.ceil(c * unitM * 100 * 1.001) / 100 / unitM;
    throw new CrowntallyError(
      'TOO_LARGE',
      `the survey area needs a ${w} x ${h} grid at this cell size, more than the ${maxCells} cells the memory budget allows; ` +
        `use a cell size of at least ${(fit * unitM).toFixed(2)} m, or process in tiles`,
      { width: w, height: h, maxCells, suggestedCellSizeM: fit * unitM },
    );
  }
}

/** A new grid covering [minX, maxX] x [minY, maxY], snapped outward to whole cells. */
export function gridFor(minX: number, minY: number, maxX: number, maxY: number, cellSize: number, fill = NaN, maxCells = DEFAULT_MAX_CELLS, unitM = 1): Grid {
  checkGridSize(maxX - minX, maxY - minY, cellSize, maxCells, unitM);
  const originX = Math.floor(minX / cellSize) * cellSize;
  const originY = Math.ceil(maxY / cellSize) * cellSize;
  const width = Math.max(1, Math.floor((maxX - originX) / cellSize) + 1);
  const height = Math.max(1, Math.floor((originY - minY) / cellSize) + 1);
  const data = new Float32Array(width * height);
  if (fill !== 0) data.fill(fill);
  return { width, height, cellSize, originX, originY, data };
}

export function sameGeometry<T extends Grid<Float32Array | Int32Array | Uint8Array | Uint32Array>>(g: T): Omit<T, 'data'> {
  const { data: _d, ...rest } = g;
  return rest;
}

/** Column of x (may be out of range: check against width). */
export function colOf(g: Grid<any>, x: number): number {
  return Math.floor((x - g.originX) / g.cellSize);
}

/** Row of y (may be out of range: check against height). */
export function rowOf(g: Grid<any>, y: number): number {
  return Math.floor((g.originY - y) / g.cellSize);
}

export function cellCenterX(g: Grid<any>, col: number): number {
  return g.originX + (col + 0.5) * g.cellSize;
}

export function cellCenterY(g: Grid<any>, row: number): number {
  return g.originY - (row + 0.5) * g.cellSize;
}

/** An ndarray view [row, col] over the same buffer (no copy), for stencil code. */
export function view<T extends Float32Array | Int32Array | Uint8Array | Uint32Array>(g: Grid<T>) {
  return ndarray(g.data, [g.height, g.width]);
}

/** A grid's georeference without its values: what a stage needs to make a matching grid. */
export type GridGeometry = Omit<Grid, 'data'>;

/** Checks a geometry's fields and its size against the cell budget before anything is allocated. */
export function checkGeometry(g: GridGeometry, maxCells = DEFAULT_MAX_CELLS, unitM = 1): void {
  if (!(Number.isInteger(g.width) && g.width > 0 && Number.isInteger(g.height) && g.height > 0)) {
    throw new CrowntallyError('BAD_OPTIONS', `grid width and height must be positive whole numbers (got ${g.width} x ${g.height})`);
  }
  if (!(Number.isFinite(g.originX) && Number.isFinite(g.originY))) {
    throw new CrowntallyError('BAD_OPTIONS', `grid origin must be finite (got ${g.originX}, ${g.originY})`);
  }
  checkGridSize((g.width - 1) * g.cellSize, (g.height - 1) * g.cellSize, g.cellSize, maxCells, unitM);
}
