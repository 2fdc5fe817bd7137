import { CrowntallyError } from '../errors.js';
import { cellCenterX, cellCenterY, type Grid } from '../raster/grid.js';
import type { WindowPreset, WindowTable } from '../options.js';
import { windowFunction } from './window.js';

/** Treetops as parallel typed arrays, ordered north to south, then west to east. */
export interface Treetops {
  count: number;
  col: Int32Array;
  row: Int32Array;
  /** Cell centre, CRS units. */
  x: Float64Array;
  y: Float64Array;
  /** CHM value at the top (m). */
  heightM: Float32Array;
}

export interface TreetopOptions {
  /** Cells below this height (m) are never tops. */
  minHeightM: number;
  /** Window preset, user table, or a fixed diameter in metres. */
  window: WindowPreset | WindowTable | number;
  /** CRS unit to metres (0.3048 for international feet). Default 1. */
  unitM?: number;
}

/** Largest search radius in cells; a window beyond it means the cell size is far too small for the trees. */
const MAX_RADIUS_CELLS = 512;

/**
 * Variable-window local maxima (the window diameter grows with the cell's
 * height, Popescu & Wynne 2004). A cell is a top when no cell inside the
 * disc of that diameter centred on it is higher (ties allowed at this
 * stage). Most cells are ruled out first by the 3x3 neighbourhood, so the
 * disc test runs only on 3x3 maxima. The window is never smaller than the
 * 3x3 neighbourhood (radius at least sqrt(2) cells, common practice): a
 * smaller disc on a coarse CHM would make every 4-neighbour bump a tree.
 *
 * Plateaus: the surviving cells are grouped into 8-connected components of
 * equal height; each component yields exactly one top, the member cell
 * nearest the component's centroid (ties: first in row-major order). Two
 * equal-height maxima that are not connected but lie within one window give
 * one top: the first in row-major order.
 */
export function findTreetops(chm: Grid, opts: TreetopOptions): Treetops {
  const unitM = opts.unitM ?? 1;
  if (!(unitM > 0 && Number.isFinite(unitM))) throw new CrowntallyError('BAD_OPTIONS', `unitM must be a positive number (got ${unitM})`);
  if (!(opts.minHeightM >= 0 && Number.isFinite(opts.minHeightM))) {
    throw new CrowntallyError('BAD_OPTIONS', `minHeightM must be a finite number of metres, 0 or more (got ${opts.minHeightM})`);
  }
  const { width: W, height: H, data } = chm;
  if (data.length !== W * H) throw new CrowntallyError('INTERNAL', `CHM holds ${data.length} values for a ${W} x ${H} grid`);
  const win = windowFunction(opts.window);
  const minH = opts.minHeightM;

  // 1 = survives the disc test.
  const cand = new Uint8Array(W * H);
  for (let r = 0; r < H; r++) {
    for (let c = 0; c < W; c++) {
      const i = r * W + c;
      const h = data[i]!;
      if (!(h >= minH)) continue; // NaN fails too
      const radius = discRadiusCells(win(h), chm.cellSize, unitM);
      if (!isMax3x3(data, W, H, c, r, h)) continue;
      if (isDiscMax(data, W, H, c, r, h, radius)) cand[i] = 1;
    }
  }

  // One top per 8-connected equal-height component of survivors.
  const cols: number[] = [];
  const rows: number[] = [];
  const stack = new Int32Array(W * H);
  const member: number[] = [];
  for (let i = 0; i < W * H; i++) {
    if (cand[i] !== 1) continue;
    const h = data[i]!;
    let sp = 0;
    stack[sp++] = i;
    cand[i] = 2;
    member.length = 0;
    let sc = 0, sr = 0;
    while (sp > 0) {
      const j = stack[--sp]!;
      member.push(j);
      const jc = j % W, jr = (j - jc) / W;
      sc += jc; sr += jr;
      for (let dr = -1; dr <= 1; dr++) {
        const nr = jr + dr;
        if (nr < 0 || nr >= H) continue;
        for (let dc = -1; dc <= 1; dc++) {
          const nc = jc + dc;
          if (nc < 0 || nc >= W) continue;
          const k = nr * W + nc;
          if (cand[k] === 1 && data[k] === h) { cand[k] = 2; stack[sp++] = k; }
        }
      }
    }
    let best = member[0]!;
    if (member.length > 1) {
      const mc = sc / member.length, mr = sr / member.length;
      let bestD = Infinity;
      for (const j of member) {
        const jc = j % W, jr = (j - jc) / W;
        const d = (jc - mc) ** 2 + (jr - mr) ** 2;
        if (d < bestD || (d === bestD && j < best)) { bestD = d; best = j; }
      }
    }
    cols.push(best % W);
    rows.push(Math.floor(best / W));
  }

  // Equal-height maxima within one window that are not connected (common where heights are stored
  // in 1 cm steps, as LAS z usually is): keep the first in row-major order, drop the others.
  const byScan = cols.map((_, k) => k).sort((a, b) => (rows[a]! - rows[b]!) || (cols[a]! - cols[b]!));
  const mark = new Uint8Array(W * H);
  const order: number[] = [];
  for (const k of byScan) {
    const c = cols[k]!, r = rows[k]!, h = data[r * W + c]!;
    if (hasMarkedEqual(data, mark, W, H, c, r, h, discRadiusCells(win(h), chm.cellSize, unitM))) continue;
    mark[r * W + c] = 1;
    order.push(k);
  }
  const n = order.length;
  const tops: Treetops = {
    count: n,
    col: new Int32Array(n), row: new Int32Array(n),
    x: new Float64Array(n), y: new Float64Array(n), heightM: new Float32Array(n),
  };
  for (let k = 0; k < n; k++) {
    const c = cols[order[k]!]!, r = rows[order[k]!]!;
    tops.col[k] = c; tops.row[k] = r;
    tops.x[k] = cellCenterX(chm, c); tops.y[k] = cellCenterY(chm, r);
    tops.heightM[k] = data[r * W + c]!;
  }
  return tops;
}

function isMax3x3(d: Float32Array, W: number, H: number, c: number, r: number, h: number): boolean {
  for (let dr = -1; dr <= 1; dr++) {
    const nr = r + dr;
    if (nr < 0 || nr >= H) continue;
    for (let dc = -1; dc <= 1; dc++) {
      const nc = c + dc;
      if (nc < 0 || nc >= W) continue;
      if (d[nr * W + nc]! > h) return false;
    }
  }
  return true;
}

/** True when no cell whose centre lies within `radius` cells of (c, r) is higher than h. */
function isDiscMax(d: Float32Array, W: number, H: number, c: number, r: number, h: number, radius: number): boolean {
  const R = Math.floor(radius);
  const r2 = radius * radius;
  for (let dr = -R; dr <= R; dr++) {
    const nr = r + dr;
    if (nr < 0 || nr >= H) continue;
    const span = Math.floor(Math.sqrt(r2 - dr * dr));
    const c0 = Math.max(0, c - span), c1 = Math.min(W - 1, c + span);
    const base = nr * W;
    for (let nc = c0; nc <= c1; nc++) if (d[base + nc]! > h) return false;
  }
  return true;
}

/** True when a marked cell of height h lies within `radius` cells of (c, r). */
function hasMarkedEqual(d: Float32Array, mark: Uint8Array, W: number, H: number, c: number, r: number, h: number, radius: number): boolean {
  const R = Math.floor(radius);
  const r2 = radius * radius;
  for (let dr = -R; dr <= R; dr++) {
    const nr = r + dr;
    if (nr < 0 || nr >= H) continue;
    const span = Math.floor(Math.sqrt(r2 - dr * dr));
    const c0 = Math.max(0, c - span), c1 = Math.min(W - 1, c + span);
    const base = nr * W;
    for (let nc = c0; nc <= c1; nc++) if (mark[base + nc] === 1 && d[base + nc] === h) return true;
  }
  return false;
}

/** Disc radius in cells that findTreetops uses for a window diameter (m): at least sqrt(2), the 3x3 neighbourhood. */
export function discRadiusCells(windowM: number, cellSize: number, unitM = 1): number {
  return Math.min(MAX_RADIUS_CELLS, Math.max(Math.SQRT2, (windowM / 2) / (cellSize * unitM)));
}
