import { CrowntallyError } from '../errors.js';
import { cellCenterX, cellCenterY, type Grid } from '../raster/grid.js';
import type { WindowPreset, WindowTable } from '../options.js';
import { windowFunction } from './window.js';
import { grown } from './cells.js';

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
  /**
   * Smallest prominence (m) of a top: how far the surface must drop on every path from it to a
   * higher cell. 0 (default) keeps every window maximum. See dropShallowTops.
   */
  minProminenceM?: number;
  /** The same as a fraction of the top's height; the larger of the two applies. Default 0. */
  minProminenceFraction?: number;
  /** How far (m) from a top the prominence test looks for a higher cell; default: the window diameter at the top's height. */
  prominenceReachM?: number;
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
 *
 * With a prominence (minProminenceM, minProminenceFraction), a top whose
 * surface rises to a higher cell within reach without dipping that far is
 * dropped, and each kept top moves to the middle of its summit (see
 * dropShallowTops). Tops stay ordered north to south, then west to east.
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

  // One pass over the grid; the cheap 3x3 test rules out most cells before the window is looked up.
  // Survivors are listed in row-major order (and marked 1 in `cand`), so no later loop visits every cell.
  const cand = new Uint8Array(W * H);
  let cands: Int32Array = new Int32Array(1024), nCand = 0;
  for (let r = 0; r < H; r++) {
    for (let c = 0; c < W; c++) {
      const i = r * W + c;
      const h = data[i]!;
      if (!(h >= minH)) continue; // NaN fails too
      if (!isMax3x3(data, W, H, c, r, h)) continue;
      if (!isDiscMax(data, W, H, c, r, h, discRadiusCells(win(h), chm.cellSize, unitM))) continue;
      cand[i] = 1;
      if (nCand === cands.length) cands = grown(cands, W * H);
      cands[nCand++] = i;
    }
  }

  // One top per 8-connected equal-height component of survivors.
  const cols: number[] = [];
  const rows: number[] = [];
  const stack = new Int32Array(nCand);
  const member: number[] = [];
  for (let k = 0; k < nCand; k++) {
    const i = cands[k]!;
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
          const q = nr * W + nc;
          if (cand[q] === 1 && data[q] === h) { cand[q] = 2; stack[sp++] = q; }
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
  let topHeight = (_k: number, c: number, r: number): number => data[r * W + c]!;
  const promM = opts.minProminenceM ?? 0, promF = opts.minProminenceFraction ?? 0;
  if (!(promM >= 0 && promF >= 0 && promF < 1)) {
    throw new CrowntallyError('BAD_OPTIONS', `minProminenceM must be 0 or more and minProminenceFraction in [0, 1) (got ${promM}, ${promF})`);
  }
  if (promM > 0 || promF > 0) {
    const reach = opts.prominenceReachM;
    const at = order.map((k) => rows[k]! * W + cols[k]!);
    const kept = dropShallowTops(data, W, H, at, (h) => Math.max(promM, promF * h),
      (h) => (reach !== undefined ? reach : win(h)) / (chm.cellSize * unitM));
    // A kept top moves to the middle of its summit (see dropShallowTops); its height stays the summit's.
    const summitH = new Map<number, number>();
    const taken = new Set<number>();
    for (let k = 0; k < order.length; k++) {
      if (!kept[k]) continue;
      const j = at[k]!;
      // Two summits re-centred onto one cell are one top (the first).
      if (taken.has(j)) { kept[k] = 0; continue; }
      taken.add(j);
      summitH.set(order[k]!, data[rows[order[k]!]! * W + cols[order[k]!]!]!);
      cols[order[k]!] = j % W; rows[order[k]!] = Math.floor(j / W);
    }
    for (let k = order.length - 1; k >= 0; k--) if (!kept[k]) order.splice(k, 1);
    // Moved tops keep the promised order: north to south, then west to east.
    order.sort((a, b) => (rows[a]! - rows[b]!) || (cols[a]! - cols[b]!));
    topHeight = (k, c, r) => summitH.get(k) ?? data[r * W + c]!;
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
    tops.heightM[k] = topHeight(order[k]!, c, r);
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

/**
 * Topographic prominence of each top, tested locally: flooding from the top
 * over 8-connected cells no lower than (top - minDrop(h)), within `reachCells(h)`
 * cells of it, a top that reaches a higher cell (or another top of the same
 * height earlier in the list) sits on the shoulder of a higher summit with
 * no dip of minDrop between them: a bump on a rough or flat crown top, or a
 * second leader of one crown, not a tree of its own. Prominence is the
 * usual topographic measure (common practice). Cost: for each top, the cells of its upper cap (within minDrop of it),
 * at most the disc of the reach. Returns one flag per top, 1 = kept.
 *
 * A kept top's cap is its summit: on a flat-topped crown the highest cell
 * is wherever sampling noise put it, so the top (its entry in `at`) moves
 * to the cap cell nearest the cap's centroid, the cap re-centred up to
 * three times while it moves (a mean shift, Fukunaga & Hostetler 1975,
 * with a flat kernel of the reach). A plateau wider than the reach keeps
 * its top within a reach of the highest bump. On a
 * peaked crown the cap is a small disc round the apex and nothing moves.
 */
function dropShallowTops(d: Float32Array, W: number, H: number, at: number[], minDrop: (h: number) => number, reachCells: (h: number) => number): Uint8Array {
  const n = at.length;
  const kept = new Uint8Array(n).fill(1);
  const topAt = new Map<number, number>();
  at.forEach((i, k) => topAt.set(i, k));
  const stamp = new Int32Array(W * H);
  const stack: number[] = [], members: number[] = [];
  let pass = 0;
  // Floods the cap from `start` over cells >= floor within R2 (squared cells) of it; with `k` >= 0, stops
  // and returns -1 at a cell higher than h (or an earlier top of height h); otherwise returns the cap
  // cell nearest the cap's centroid.
  const cap = (start: number, floor: number, R2: number, h: number, k: number): number => {
    pass++;
    const c0 = start % W, r0 = (start - c0) / W;
    stack.length = 0; stack.push(start); stamp[start] = pass;
    members.length = 0;
    let sc = 0, sr = 0;
    while (stack.length > 0) {
      const j = stack.pop()!;
      members.push(j);
      const jc = j % W, jr = (j - jc) / W;
      sc += jc; sr += jr;
      for (let dr = -1; dr <= 1; dr++) {
        const nr = jr + dr;
        if (nr < 0 || nr >= H) continue;
        for (let dc = -1; dc <= 1; dc++) {
          const nc = jc + dc;
          if (nc < 0 || nc >= W) continue;
          const q = nr * W + nc;
          if (stamp[q] === pass) continue;
          const v = d[q]!;
          if (!(v >= floor) || (nc - c0) ** 2 + (nr - r0) ** 2 > R2) continue;
          if (k >= 0) {
            if (v > h) return -1;
            if (v === h) { const o = topAt.get(q); if (o !== undefined && o < k) return -1; }
          }
          stamp[q] = pass;
          stack.push(q);
        }
      }
    }
    const mc = sc / members.length, mr = sr / members.length;
    let best = start, bestD = Infinity;
    for (const j of members) {
      const jc = j % W, jr = (j - jc) / W;
      const dd = (jc - mc) ** 2 + (jr - mr) ** 2;
      if (dd < bestD || (dd === bestD && j < best)) { bestD = dd; best = j; }
    }
    return best;
  };
  for (let k = 0; k < n; k++) {
    const i0 = at[k]!, h = d[i0]!, floor = h - minDrop(h);
    const R = reachCells(h), R2 = R * R;
    let best = cap(i0, floor, R2, h, k);
    if (best < 0) { kept[k] = 0; continue; }
    // The summit's middle: the cap re-centred while it moves (a mean shift), so the top is not left
    // pulled towards the highest bump. Over a wider reach the cap leaks into lower neighbours.
    for (let it = 0; it < 3; it++) {
      const next = cap(best, floor, R2, h, -1);
      if (next === best) break;
      best = next;
    }
    at[k] = best;
  }
  return kept;
}

