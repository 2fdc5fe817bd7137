// One call compares treetops and crowns on any CHM with SciPy and
// scikit-image (the outside references named in the checks).
import type { Grid } from '../../lib/raster/grid.js';
import { findTreetops, discRadiusCells } from '../../lib/trees/treetops.js';
import { growCrowns } from '../../lib/trees/crowns.js';
import { runReference } from './reference.js';

export interface ComparisonStats {
  tops: number;
  /** Tops whose CHM value differs from the SciPy disc maximum there (must be 0). */
  topsNotAtMax: number;
  /** Strict disc maxima (unique highest cell in their disc, at or above minHeight). */
  strictMaxima: number;
  /** Strict maxima that findTreetops missed (must be 0). */
  strictMissed: number;
  maskCells: number;
  /** Share of mask cells where our unconstrained watershed agrees with scikit-image. */
  agreement: number;
}

export function compareWithReference(chm: Grid, opts: { minHeightM: number; windowM: number; unitM?: number }): ComparisonStats {
  const unitM = opts.unitM ?? 1;
  const { width: W, height: H, data } = chm;
  const tops = findTreetops(chm, { minHeightM: opts.minHeightM, window: opts.windowM, unitM });
  const labels = growCrowns(chm, tops, { minHeightM: opts.minHeightM, floorFraction: 0, reachM: Infinity, unitM });
  const markers = new Int32Array(W * H);
  for (let k = 0; k < tops.count; k++) markers[tops.row[k]! * W + tops.col[k]!] = k + 1;
  const mask = new Uint8Array(W * H);
  for (let i = 0; i < W * H; i++) mask[i] = data[i]! >= opts.minHeightM ? 1 : 0;
  const radius = discRadiusCells(opts.windowM, chm.cellSize, unitM);
  const ref = runReference(chm, markers, mask, radius);

  let topsNotAtMax = 0;
  for (let k = 0; k < tops.count; k++) {
    const i = tops.row[k]! * W + tops.col[k]!;
    if (data[i]! !== ref.maxfilter[i]) topsNotAtMax++;
  }
  // A strict maximum: equal to the SciPy disc maximum and the only cell of that value in its disc.
  let strictMaxima = 0, strictMissed = 0;
  const R = Math.floor(radius);
  for (let r = 0; r < H; r++) {
    for (let c = 0; c < W; c++) {
      const i = r * W + c;
      const h = data[i]!;
      if (!(h >= opts.minHeightM) || h !== ref.maxfilter[i]) continue;
      let ties = 0;
      for (let dr = -R; dr <= R; dr++) {
        for (let dc = -R; dc <= R; dc++) {
          if (dr * dr + dc * dc > radius * radius) continue;
          const nr = r + dr, nc = c + dc;
          if (nr < 0 || nr >= H || nc < 0 || nc >= W || (dr === 0 && dc === 0)) continue;
          if (data[nr * W + nc] === h) ties++;
        }
      }
      if (ties > 0) continue;
      strictMaxima++;
      if (markers[i] === 0) strictMissed++;
    }
  }
  let maskCells = 0, same = 0;
  for (let i = 0; i < W * H; i++) {
    if (!mask[i]) continue;
    maskCells++;
    if (labels.data[i] === ref.labels[i]) same++;
  }
  return { tops: tops.count, topsNotAtMax, strictMaxima, strictMissed, maskCells, agreement: maskCells ? same / maskCells : 1 };
}
