import { CrowntallyError } from '../errors.js';
import type { Grid } from '../raster/grid.js';
import type { WindowPreset, WindowTable } from '../options.js';
import type { Treetops } from './treetops.js';
import { windowFunction } from './window.js';
import { cellsAtLeast, grown } from './cells.js';

export interface CrownOptions {
  /** Cells below this height (m) are not crown. */
  minHeightM: number;
  /** A cell joins a crown only while its height is above floorFraction x the crown's top height (0-1; 0 = no floor). */
  floorFraction: number;
  /** Largest distance (m) from the top; 'auto' = autoReachM at the top's height; Infinity = no limit. */
  reachM: number | 'auto';
  /** Needed for reachM 'auto'. */
  window?: WindowPreset | WindowTable | number;
  /** CRS unit to metres. Default 1. */
  unitM?: number;
}

/**
 * The 'auto' reach: the window diameter at a top's height is a published
 * crown width of forest-grown trees (Popescu & Wynne 2004); open-grown park
 * and street trees spread wider, so a crown may reach 1.5 window diameters
 * from its top (a radius of 0.75 crown widths), and never less than 3 m.
 */
export function reachFromWindow(windowM: number): number {
  return Math.max(3, 1.5 * windowM);
}

export function autoReachM(window: WindowPreset | WindowTable | number, heightM: number): number {
  return reachFromWindow(windowFunction(window)(heightM));
}

/** Height quantum of the flooding queue (m). */
const LEVEL_M = 0.01;
/** Most levels the queue uses; a taller range gets coarser levels. */
const MAX_LEVELS = 65536;

/**
 * Crowns by marker-controlled watershed: flooding from the treetops
 * (markers, Beucher & Meyer 1993) downhill on the CHM, i.e. the watershed of
 * the negated CHM, by the hierarchical-queue flooding of Meyer (1994) /
 * Vincent & Soille (1991, IEEE PAMI 13(6)). Heights are quantised to 1 cm
 * levels (coarser when the range needs more than 65536 levels); each level is
 * a FIFO list, so cost is linear in cells plus levels, no comparison heap.
 * A cell is labelled when first reached (by the crown of the cell that
 * reached it), which gives each cell to the crown that floods it first.
 *
 * Growth limits after Dalponte & Coomes (2016, Methods Ecol Evol 7(10)): a
 * cell joins crown k only while its height is above floorFraction x top
 * height of k and within reachM of the top. A cell refused by one crown may
 * still be taken by another. Cells below minHeightM or NaN are never crown.
 *
 * 4-connectivity: each crown is one 4-connected region (outlines stay simple).
 * Returns labels: 0 = none, k = tops index k - 1.
 */
export function growCrowns(chm: Grid, tops: Treetops, opts: CrownOptions): Grid<Int32Array> {
  const unitM = opts.unitM ?? 1;
  if (!(unitM > 0 && Number.isFinite(unitM))) throw new CrowntallyError('BAD_OPTIONS', `unitM must be a positive number (got ${unitM})`);
  if (!(opts.floorFraction >= 0 && opts.floorFraction < 1)) {
    throw new CrowntallyError('BAD_OPTIONS', `floorFraction must be in [0, 1) (got ${opts.floorFraction})`);
  }
  if (opts.reachM !== 'auto' && !(opts.reachM > 0)) {
    throw new CrowntallyError('BAD_OPTIONS', `reachM must be 'auto', a positive number of metres or Infinity (got ${String(opts.reachM)})`);
  }
  const { width: W, height: H, data } = chm;
  const N = W * H;
  const labels = new Int32Array(N);
  const out: Grid<Int32Array> = { width: W, height: H, cellSize: chm.cellSize, originX: chm.originX, originY: chm.originY, data: labels };
  const n = tops.count;
  if (n === 0) return out;

  const cellM = chm.cellSize * unitM;
  // What the flood needs of a crown, side by side (one cache line per crown):
  // floor height (float32, as the CHM), squared reach in cells, top column, top row.
  const crown = new Float64Array(4 * n);
  const win = opts.reachM === 'auto' ? windowFunction(opts.window ?? 'combined') : null;
  for (let k = 0; k < n; k++) {
    const rM = win ? reachFromWindow(win(tops.heightM[k]!)) : (opts.reachM as number);
    const rc = rM / cellM;
    crown[4 * k] = Math.fround(opts.floorFraction * tops.heightM[k]!);
    crown[4 * k + 1] = rc * rc;
    crown[4 * k + 2] = tops.col[k]!;
    crown[4 * k + 3] = tops.row[k]!;
  }

  // One pass over the grid lists the crown-eligible cells; every other per-cell loop runs over the list.
  // Level range over them: level 0 = highest.
  const minH = opts.minHeightM;
  const cells = cellsAtLeast(data, minH);
  const eligible = cells.length;
  if (eligible === 0) return out;
  let hiH = -Infinity, loH = Infinity;
  for (let k = 0; k < eligible; k++) {
    const h = data[cells[k]!]!;
    if (h > hiH) hiH = h;
    if (h < loH) loH = h;
  }
  let step = LEVEL_M;
  if ((hiH - loH) / step + 1 > MAX_LEVELS) step = (hiH - loH) / (MAX_LEVELS - 1);
  const levels = Math.floor((hiH - loH) / step) + 1;

  // `labels` is the flood's whole per-cell state, so the inner loop reads one
  // 4-byte word per neighbour (the flood visits cells in height order,
  // scattered over the grid: memory traffic is its cost):
  //   > 0  labelled (crown k + 1)
  //   = 0  never crown (below minHeightM or NaN)
  //   < 0  eligible, not reached yet: -(own level + 1)
  // `count` is the number of cells of each own level: a cell enters the queue
  // once, at level max(own level, flood level), so each level's cells that
  // are queued before the flood gets there fit in a slot of that size.
  const count = new Int32Array(levels + 1);
  for (let k = 0; k < eligible; k++) {
    const i = cells[k]!;
    let lev = Math.floor((hiH - data[i]!) / step);
    if (lev > levels - 1) lev = levels - 1;
    labels[i] = -lev - 1;
    count[lev + 1]!++;
  }
  // Hierarchical queue (Meyer 1994) stored as one array cut into per-level
  // FIFO slots (counting-sort offsets) instead of linked lists: pushes to
  // future levels are sequential writes at one moving end per level, pops
  // sequential reads. Cells queued at the flood level itself (own level, or a
  // higher cell joining the current level) go to `now`, drained after the
  // level's slot; both are FIFO, so the order is that of one FIFO per level.
  for (let l = 1; l <= levels; l++) count[l]! += count[l - 1]!;
  const start = count; // level l's slot: start[l] .. start[l + 1]
  const fill = start.slice(0, levels); // next free index of each slot
  const queue = new Int32Array(eligible);
  // `now` holds the cells that join the current level while it floods, seldom many at once (a sized-for-all
  // array would cost 4 bytes per eligible cell): it starts small and grows.
  let now: Int32Array = new Int32Array(Math.min(eligible, 4096));

  for (let k = 0; k < n; k++) {
    const c = tops.col[k]!, r = tops.row[k]!;
    if (c < 0 || c >= W || r < 0 || r >= H) {
      throw new CrowntallyError('INTERNAL', `treetop ${k} at cell (${c}, ${r}) lies outside the ${W} x ${H} CHM`);
    }
    const i = r * W + c;
    const v = labels[i]!;
    if (v >= 0) continue; // duplicate or sub-threshold top: no crown
    labels[i] = k + 1;
    queue[fill[-v - 1]!++] = i;
  }

  const last = N - W;
  for (let cur = 0; cur < levels; cur++) {
    let sp = start[cur]!;
    const se = fill[cur]!;
    let nh = 0, nt = 0;
    for (;;) {
      let i: number;
      if (sp < se) i = queue[sp++]!;
      else if (nh < nt) i = now[nh++]!;
      else break;
      const lab = labels[i]!;
      const q = (lab - 1) << 2;
      const fl = crown[q]!, rr = crown[q + 1]!, tc = crown[q + 2]!, tr = crown[q + 3]!;
      const c = i % W;
      const r = (i - c) / W;
      for (let d = 0; d < 4; d++) {
        let j: number, nc = c, nr = r;
        if (d === 0) { if (c === W - 1) continue; j = i + 1; nc++; }
        else if (d === 1) { if (i < W) continue; j = i - W; nr--; }
        else if (d === 2) { if (c === 0) continue; j = i - 1; nc--; }
        else { if (i >= last) continue; j = i + W; nr++; }
        const v = labels[j]!;
        if (v >= 0) continue; // labelled, or never crown
        if (fl !== 0 && !(data[j]! > fl)) continue;
        const dc = nc - tc, dr = nr - tr;
        if (dc * dc + dr * dr > rr) continue;
        labels[j] = lab;
        // A higher neighbour than the flood level joins the current level (hierarchical queue rule).
        const lev = -v - 1;
        if (lev <= cur) {
          if (nt === now.length) now = grown(now, eligible);
          now[nt++] = j;
        } else queue[fill[lev]!++] = j;
      }
    }
  }
  // Eligible cells no crown reached are not crown.
  for (let k = 0; k < eligible; k++) if (labels[cells[k]!]! < 0) labels[cells[k]!] = 0;
  return out;
}
