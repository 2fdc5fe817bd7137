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
  const taps = kernel.length;
  // Pass 1 (rows) carries value-weighted sums and weight sums separately so the
  // column pass can renormalise over valid cells only. Pass 2 (columns) for
  // row r needs only the pass-1 rows r - radius .. r + radius (clipped; the
  // mirrored rows fall in that range too), so these live in a ring of `taps`
  // rows (row q in slot q % taps), each made just before it is first needed.
  //
  // Every sum adds its taps in the same order as the plain per-cell
  // definition, so the output is the same to the bit. A tap that adds
  // kw * 0 = +0 changes no sum (sums start at +0, so they are never -0), which
  // gives the shortcuts: a NaN tap adds +0 (value 0, mask 0) instead of being
  // skipped, a window whose values are all 0 (open ground in a CHM) is not
  // summed at all, and neither is a block of BLOCK pass-1 sums that are all 0.
  // A row window without NaN has weight sum s1 (the kernel summed in tap
  // order), and a column window over rows without NaN has weight sum s2.
  let s1 = 0;
  for (let i = 0; i < taps; i++) s1 += kernel[i]!;
  let s2 = 0;
  for (let i = 0; i < taps; i++) s2 += kernel[i]! * s1;
  const nb = Math.ceil(w / BLOCK);
  const pv = new Float64Array(w + 2 * radius), pm = new Float64Array(w + 2 * radius);
  const vr = new Float64Array(taps * w), wr = new Float64Array(taps * w);
  const vAny = new Uint8Array(taps * nb), wAny = new Uint8Array(taps * nb); // per ring row and block: any sum not 0
  const rowNaN = new Uint8Array(h);
  const sv = new Float64Array(w), sw = new Float64Array(w);
  const slots = new Int32Array(taps);
  const out = new Float32Array(n);
  let made = 0; // pass-1 rows [0, made) are done
  for (let r = 0; r < h; r++) {
    for (const last = Math.min(h - 1, r + radius); made <= last; made++) {
      // Pass 1 for row `made`: padded copy, then one sum per column.
      const base = made * w, o = (made % taps) * w;
      let nan = 0;
      for (let j = 0; j < pv.length; j++) {
        const c = j - radius;
        const v = data[base + (c >= 0 && c < w ? c : mirror(c, w))]!;
        if (v === v) { pv[j] = v; pm[j] = 1; } else { pv[j] = 0; pm[j] = 0; nan = 1; }
      }
      rowNaN[made] = nan;
      const ob = (made % taps) * nb;
      vAny.fill(0, ob, ob + nb);
      let nz = 0; // non-zero values in the window of column c
      for (let i = 0; i < taps - 1; i++) if (pv[i] !== 0) nz++;
      for (let c = 0; c < w; c++) {
        if (pv[c + taps - 1] !== 0) nz++;
        let s = 0;
        if (nz > 0) {
          for (let i = 0; i < taps; i++) s += kernel[i]! * pv[c + i]!;
          if (s !== 0) vAny[ob + ((c / BLOCK) | 0)] = 1;
        }
        vr[o + c] = s;
        if (pv[c] !== 0) nz--;
      }
      if (nan) {
        wAny.fill(0, ob, ob + nb);
        let valid = 0; // valid cells in the window of column c
        for (let i = 0; i < taps - 1; i++) valid += pm[i]!;
        for (let c = 0; c < w; c++) {
          valid += pm[c + taps - 1]!;
          let s = valid === taps ? s1 : 0;
          if (valid > 0 && valid < taps) for (let i = 0; i < taps; i++) s += kernel[i]! * pm[c + i]!;
          wr[o + c] = s;
          if (s !== 0) wAny[ob + ((c / BLOCK) | 0)] = 1;
          valid -= pm[c]!;
        }
      } else {
        wr.fill(s1, o, o + w);
        wAny.fill(1, ob, ob + nb);
      }
    }
    // Pass 2 for row r, accumulated row by row over the window.
    let nan = 0;
    for (let i = 0; i < taps; i++) { const q = mirror(r + i - radius, h); slots[i] = q % taps; nan |= rowNaN[q]!; }
    sv.fill(0);
    for (let i = 0; i < taps; i++) {
      const kw = kernel[i]!, o = slots[i]! * w, ob = slots[i]! * nb;
      for (let b = 0; b < nb; b++) {
        if (!vAny[ob + b]) continue;
        for (let c = b * BLOCK, e = Math.min(w, c + BLOCK); c < e; c++) sv[c]! += kw * vr[o + c]!;
      }
    }
    const base = r * w;
    if (!nan) {
      for (let c = 0; c < w; c++) out[base + c] = sv[c]! / s2;
      continue;
    }
    sw.fill(0);
    for (let i = 0; i < taps; i++) {
      const kw = kernel[i]!, o = slots[i]! * w, ob = slots[i]! * nb;
      for (let b = 0; b < nb; b++) {
        if (!wAny[ob + b]) continue;
        for (let c = b * BLOCK, e = Math.min(w, c + BLOCK); c < e; c++) sw[c]! += kw * wr[o + c]!;
      }
    }
    for (let c = 0; c < w; c++) {
      const d = data[base + c]!;
      out[base + c] = d !== d ? NaN : sw[c]! > 0 ? sv[c]! / sw[c]! : NaN;
    }
  }
  return { ...g, data: out };
}

/** Columns per block of pass-1 sums that the column pass skips when all are 0. */
const BLOCK = 16;

/** Index reflected at the edges, the edge cell repeated (period 2n). */
function mirror(i: number, n: number): number {
  if (i >= 0 && i < n) return i;
  const p = 2 * n;
  let m = ((i % p) + p) % p;
  if (m >= n) m = p - 1 - m;
  return m;
}
