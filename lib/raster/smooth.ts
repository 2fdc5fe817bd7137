import { CrowntallyError } from '../errors.js';
import type { Grid } from './grid.js';

/** Kernel reach in sigmas, as in common Gaussian filters (a kernel radius of round(4 sigma)). */
const TRUNCATE = 4;

/**
 * Gaussian smoothing of a grid, sigma in cells. Separable (rows, then
 * columns), cost linear in cells for a given sigma.
 *
 * Kernel: weights exp(-x^2 / (2 sigma^2)) for |x| <= radius = floor(4 sigma + 0.5),
 * normalised to sum 1. Beyond the grid edge the grid is mirrored including
 * the edge cell (d c b a | a b c d | d c b a).
 *
 * NaN-aware (normalised convolution, Knutsson & Westin 1993, CVPR): NaN cells
 * contribute nothing and the weights of the valid cells are renormalised, so
 * a hole does not pull its neighbours down; NaN cells stay NaN. Without NaN
 * this is the plain Gaussian filter. sigma 0 returns a copy.
 */
export function gaussianSmooth(g: Grid, sigmaCells: number): Grid {
  if (!(sigmaCells >= 0 && Number.isFinite(sigmaCells))) {
    throw new CrowntallyError('BAD_OPTIONS', `smoothing sigma must be 0 or more cells (got ${sigmaCells})`);
  }
  const { width: w, height: h, data } = g;
  if (sigmaCells === 0) return { ...g, data: new Float32Array(data) };
  const radius = Math.floor(TRUNCATE * sigmaCells + 0.5);
  const kernel = new Float64Array(2 * radius + 1);
  let ks = 0;
  for (let i = -radius; i <= radius; i++) ks += kernel[i + radius] = Math.exp(-0.5 * (i * i) / (sigmaCells * sigmaCells));
  for (let i = 0; i < kernel.length; i++) kernel[i] /= ks;

  const n = w * h;
  // Pass 1 (rows) carries value-weighted sums and weight sums separately so the
  // column pass can renormalise over valid cells only.
  // Both passes run in row order (the column pass keeps one row of partial
  // sums per output row), so the grid is read as it lies in memory; the taps
  // are summed in the same order as a per-cell loop, so the result is the
  // same to the bit. Mirrored indices are needed only within `radius` of an edge.
  const vs = new Float64Array(n), ws = new Float64Array(n);
  for (let r = 0; r < h; r++) {
    const base = r * w;
    for (let c = 0; c < w; c++) {
      let sv = 0, sw = 0;
      const inner = c >= radius && c + radius < w;
      for (let i = -radius; i <= radius; i++) {
        const v = data[base + (inner ? c + i : mirror(c + i, w))]!;
        if (v !== v) continue; // NaN
        const kw = kernel[i + radius]!;
        sv += kw * v; sw += kw;
      }
      vs[base + c] = sv; ws[base + c] = sw;
    }
  }
  const out = new Float32Array(n);
  const sv = new Float64Array(w), sw = new Float64Array(w);
  for (let r = 0; r < h; r++) {
    sv.fill(0); sw.fill(0);
    const inner = r >= radius && r + radius < h;
    for (let i = -radius; i <= radius; i++) {
      const jb = (inner ? r + i : mirror(r + i, h)) * w;
      const kw = kernel[i + radius]!;
      for (let c = 0; c < w; c++) { sv[c]! += kw * vs[jb + c]!; sw[c]! += kw * ws[jb + c]!; }
    }
    const base = r * w;
    for (let c = 0; c < w; c++) {
      const k = base + c;
      const d = data[k]!;
      if (d !== d) { out[k] = NaN; continue; }
      out[k] = sw[c]! > 0 ? sv[c]! / sw[c]! : NaN;
    }
  }
  return { ...g, data: out };
}

/** Index reflected at the edges, the edge cell repeated (period 2n). */
function mirror(i: number, n: number): number {
  if (i >= 0 && i < n) return i;
  const p = 2 * n;
  let m = ((i % p) + p) % p;
  if (m >= n) m = p - 1 - m;
  return m;
}
