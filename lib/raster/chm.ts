import { CrowntallyError } from '../errors.js';
import type { Grid } from './grid.js';
import { fillPits, type PitOptions } from './pits.js';

export interface ChmOptions extends PitOptions {
  /** Run the pit filter (lib/raster/pits.ts) after the difference. Default true. */
  fillPits?: boolean;
  /** Largest empty patch (m2) that is filled when canopy encloses it. Default 4 m2. */
  maxHoleM2?: number;
  /** Horizontal (CRS) unit to metres: the cell size is in CRS units. Default 1. */
  horizontalUnitM?: number;
}

export interface ChmResult {
  chm: Grid;
  /** Empty DSM cells filled from the canopy around them. */
  holesFilled: number;
  /** Cells raised by the pit filter. */
  pitsFilled: number;
}

/**
 * Canopy height model (metres): DSM - DTM, clamped below at 0 (a highest
 * return below the ground model is ground noise, not negative height).
 *
 * DSM cells with no return (NaN) get a height as follows (our own rule): an
 * empty patch (8-connected) is filled when it is small (at most `maxHoleM2`),
 * does not touch the grid edge, and every cell bordering it (8-neighbours) is
 * canopy (>= canopyMinM, default 2 m): a dropout inside a crown. It takes the
 * mean height of those border cells. Any other empty cell is 0: open ground,
 * water that returned nothing, or outside the survey.
 */
export function canopyHeightModel(dsm: Grid, dtm: Grid, opts: ChmOptions = {}): ChmResult {
  if (dsm.width !== dtm.width || dsm.height !== dtm.height || dsm.cellSize !== dtm.cellSize ||
      dsm.originX !== dtm.originX || dsm.originY !== dtm.originY) {
    throw new CrowntallyError('INTERNAL', 'the surface and ground grids must share one geometry');
  }
  const canopy = opts.canopyMinM ?? 2;
  const maxHoleM2 = opts.maxHoleM2 ?? 4;
  const unit = opts.horizontalUnitM ?? 1;
  if (!(maxHoleM2 >= 0 && Number.isFinite(maxHoleM2))) throw new CrowntallyError('BAD_OPTIONS', `maxHoleM2 must be 0 or more (got ${maxHoleM2})`);
  const { width: w, height: h } = dsm;
  const n = w * h;
  const cellM = dsm.cellSize * unit;
  const maxHoleCells = Math.floor(maxHoleM2 / (cellM * cellM) + 1e-9);
  const out = new Float32Array(n);
  const sd = dsm.data, gd = dtm.data;
  for (let k = 0; k < n; k++) {
    const s = sd[k]!, g = gd[k]!;
    out[k] = s !== s ? NaN : g !== g ? 0 : Math.max(0, s - g);
  }
  const holesFilled = fillEnclosedHoles(out, w, h, canopy, maxHoleCells);
  let chm: Grid = { ...dsm, data: out };
  let pitsFilled = 0;
  if (opts.fillPits ?? true) {
    const r = fillPits(chm, opts);
    chm = r.grid;
    pitsFilled = r.filled;
  }
  return { chm, holesFilled, pitsFilled };
}

/** The CHM grid alone (see canopyHeightModel). */
export function canopyHeight(dsm: Grid, dtm: Grid, opts: ChmOptions = {}): Grid {
  return canopyHeightModel(dsm, dtm, opts).chm;
}

/**
 * Fills (in place) NaN patches enclosed by canopy; every other NaN becomes 0. Linear in cells.
 *
 * A patch is flooded breadth-first from its first cell in scan order, its
 * border summed in flood order. The flood stops as soon as the patch cannot be
 * filled (it reaches the grid edge, a border cell below canopy, or more than
 * maxCells cells); the cells it reached are then marked dead and set to 0.
 * Any other cell of that patch joins a dead cell, so it is dead too: a cell
 * in scan order next to an earlier dead cell is settled at once, and a flood
 * that meets a dead cell stops. Only fillable patches are flooded in full, in
 * the same order as a complete flood, so their fill values are the same to
 * the bit.
 */
function fillEnclosedHoles(d: Float32Array, w: number, h: number, canopy: number, maxCells: number): number {
  const n = w * h;
  if (maxCells < 1) { for (let k = 0; k < n; k++) if (d[k] !== d[k]) d[k] = 0; return 0; }
  const DEAD = 2;
  const seen = new Uint8Array(n); // 1: in a patch being flooded, DEAD: in a patch that is not filled (now 0)
  const patch = new Int32Array(Math.min(n, maxCells));
  let filled = 0;
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) {
      const start = r * w + c;
      if (seen[start] || d[start] === d[start]) continue;
      if (r === 0 || c === 0 || r === h - 1 || c === w - 1 || seen[start - 1] === DEAD ||
          seen[start - w - 1] === DEAD || seen[start - w] === DEAD || seen[start - w + 1] === DEAD) {
        seen[start] = DEAD; d[start] = 0;
        continue;
      }
      let len = 0, head = 0;
      patch[len++] = start;
      seen[start] = 1;
      let ok = true, sum = 0, cnt = 0;
      flood: while (head < len) {
        const k = patch[head++]!;
        const kr = (k / w) | 0, kc = k - kr * w;
        if (kr === 0 || kc === 0 || kr === h - 1 || kc === w - 1) { ok = false; break; }
        // Not on the edge, so all 8 neighbours exist.
        for (let dr = -w; dr <= w; dr += w) {
          for (let dc = -1; dc <= 1; dc++) {
            if (dr === 0 && dc === 0) continue;
            const j = k + dr + dc;
            const sj = seen[j]!;
            if (sj === DEAD) { ok = false; break flood; }
            const v = d[j]!;
            if (v !== v) {
              if (sj === 0) {
                if (len === maxCells) { ok = false; break flood; }
                seen[j] = 1; patch[len++] = j;
              }
            } else {
              // Border cells may be counted more than once; the mean stays a fair border average.
              if (v < canopy) { ok = false; break flood; }
              sum += v; cnt++;
            }
          }
        }
      }
      if (!ok) { for (let i = 0; i < len; i++) { seen[patch[i]!] = DEAD; d[patch[i]!] = 0; } continue; }
      const fill = cnt > 0 ? sum / cnt : 0;
      if (fill > 0) filled += len;
      for (let i = 0; i < len; i++) d[patch[i]!] = fill;
    }
  }
  return filled;
}
