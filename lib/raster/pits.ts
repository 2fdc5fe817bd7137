import { CrowntallyError } from '../errors.js';
import type { Grid } from './grid.js';

export interface PitOptions {
  /** A pit lies more than this (m) below the median of its 8 neighbours. Default 1 m. */
  pitDepthM?: number;
  /** Height (m) above which a neighbour counts as canopy. Default 2 m. */
  canopyMinM?: number;
  /** Neighbours (of 8) that must be canopy and stand more than pitDepthM above the cell. Default 7. */
  minHighNeighbours?: number;
}

/**
 * Pit filter for a CHM (our own rule, documented here): sparse returns leave
 * dropouts inside crowns, single cells whose highest return passed between
 * leaves and hit low branches or the ground. A cell is such a pit when
 *  - it lies more than `pitDepthM` below the median of its 8 neighbours, and
 *  - at least `minHighNeighbours` (default 7 of 8) neighbours are canopy
 *    (>= `canopyMinM`) and stand more than `pitDepthM` above it.
 * It is then raised to that median. Requiring 7 of 8 high neighbours fills
 * pits of one or two cells but keeps a real gap between two crowns: a gap
 * one cell wide already has two low neighbours along its own line.
 * The test reads only the input, so results do not depend on scan order.
 * Edge cells (fewer than 8 neighbours) are left as they are. Returns a new
 * grid and the number of cells raised. A pit-free CHM built from height
 * slices (Khosravipour et al. 2014, PE&RS 80(9)) is the heavier alternative.
 */
export function fillPits(chm: Grid, opts: PitOptions = {}): { grid: Grid; filled: number } {
  const depth = opts.pitDepthM ?? 1;
  const canopy = opts.canopyMinM ?? 2;
  const need = opts.minHighNeighbours ?? 7;
  if (!(depth > 0 && Number.isFinite(depth))) throw new CrowntallyError('BAD_OPTIONS', `pitDepthM must be a positive number of metres (got ${depth})`);
  if (!(canopy >= 0 && Number.isFinite(canopy))) throw new CrowntallyError('BAD_OPTIONS', `canopyMinM must be 0 or more metres (got ${canopy})`);
  if (!(Number.isInteger(need) && need >= 1 && need <= 8)) throw new CrowntallyError('BAD_OPTIONS', `minHighNeighbours must be a whole number from 1 to 8 (got ${need})`);
  const { width: w, height: h, data } = chm;
  const out = new Float32Array(data);
  const nb = new Float64Array(8);
  const offs = Int32Array.of(-w - 1, -w, -w + 1, -1, 1, w - 1, w, w + 1);
  // A cell is out as soon as more than 8 - need neighbours are not high (or
  // one is NaN): most cells are decided by their first two neighbours.
  const maxLow = 8 - need;
  let filled = 0;
  for (let r = 1; r < h - 1; r++) {
    for (let c = 1; c < w - 1; c++) {
      const k = r * w + c;
      const v = data[k]!;
      if (v !== v) continue;
      let low = 0, i = 0;
      for (; i < 8; i++) {
        const u = data[k + offs[i]!]!;
        if (u !== u) break;
        if (!(u >= canopy && u - v > depth) && ++low > maxLow) break;
      }
      if (i < 8) continue;
      for (let j = 0; j < 8; j++) nb[j] = data[k + offs[j]!]!;
      nb.sort();
      const med = 0.5 * (nb[3]! + nb[4]!);
      if (med - v > depth) { out[k] = med; filled++; }
    }
  }
  return { grid: { ...chm, data: out }, filled };
}
