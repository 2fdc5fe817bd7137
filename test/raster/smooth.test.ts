import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { gaussianSmooth } from '../../lib/raster/smooth.js';
import type { Grid } from '../../lib/raster/grid.js';

function rng(seed: number) {
  return () => {
    seed = (seed + 0x6d2b79f5) | 0;
    let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** scipy.ndimage.gaussian_filter on a float64 copy (defaults: mode 'reflect', truncate 4.0). */
function scipyGaussian(data: Float32Array, w: number, h: number, sigma: number): Float64Array {
  const dir = mkdtempSync(path.join(tmpdir(), 'ct-smooth-'));
  try {
    const inp = path.join(dir, 'in.f32'), out = path.join(dir, 'out.f64');
    writeFileSync(inp, Buffer.from(data.buffer, data.byteOffset, data.byteLength));
    const script = [
      'import sys, numpy as np',
      'from scipy.ndimage import gaussian_filter',
      'a = np.fromfile(sys.argv[1], dtype=np.float32).astype(np.float64).reshape(int(sys.argv[3]), int(sys.argv[4]))',
      'gaussian_filter(a, float(sys.argv[5])).astype(np.float64).tofile(sys.argv[2])',
    ].join('\n');
    execFileSync('/usr/bin/python3', ['-c', script, inp, out, String(h), String(w), String(sigma)]);
    const b = readFileSync(out);
    return new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

describe('gaussianSmooth', () => {
  for (const sigma of [0.7, 1.5, 2.6]) {
    it(`matches scipy.ndimage.gaussian_filter at sigma ${sigma} cells`, () => {
      // Outside reference: SciPy (Debian python3-scipy) scipy.ndimage.gaussian_filter,
      // default mode 'reflect' and truncate 4.0. Tolerance 1e-4 m: our output is
      // Float32 (heights to 30 m carry about 2e-6 m of rounding).
      const w = 37, h = 23, r = rng(11);
      const data = new Float32Array(w * h);
      for (let k = 0; k < data.length; k++) data[k] = 30 * r();
      const g: Grid = { width: w, height: h, cellSize: 1, originX: 0, originY: 0, data };
      const ours = gaussianSmooth(g, sigma).data;
      const ref = scipyGaussian(data, w, h, sigma);
      let worst = 0;
      for (let k = 0; k < data.length; k++) worst = Math.max(worst, Math.abs(ours[k] - ref[k]));
      expect(worst).toBeLessThan(1e-4);
    });
  }

  it('matches scipy on a CHM-like grid of open ground, crowns and empty cells', () => {
    // Outside reference: SciPy scipy.ndimage.gaussian_filter (mode 'reflect', truncate 4.0);
    // with empty cells, normalised convolution (Knutsson & Westin 1993) is
    // gaussian_filter(values, 0 where empty) / gaussian_filter(valid mask). Exact zeros
    // (open ground) and a grid wider than a few column blocks exercise the all-zero shortcuts.
    const w = 83, h = 41, sigma = 1.2, r = rng(5);
    const data = new Float32Array(w * h);
    for (let k = 0; k < data.length; k++) data[k] = r() < 0.15 ? 25 * r() : 0;
    for (let k = 0; k < w * 12; k++) data[k] = 0; // a band of open ground
    const ours = gaussianSmooth({ width: w, height: h, cellSize: 1, originX: 0, originY: 0, data }, sigma).data;
    const ref = scipyGaussian(data, w, h, sigma);
    let worst = 0;
    for (let k = 0; k < data.length; k++) worst = Math.max(worst, Math.abs(ours[k] - ref[k]));
    expect(worst).toBeLessThan(1e-4);
    for (let k = 0; k < w * 6; k++) expect(ours[k]).toBe(0); // more than 4 sigma from any crown

    const holes = data.slice(), mask = new Float32Array(w * h), vals = new Float32Array(w * h);
    for (let k = 0; k < holes.length; k++) if (r() < 0.2) holes[k] = NaN;
    for (let k = 0; k < holes.length; k++) { mask[k] = Number.isNaN(holes[k]) ? 0 : 1; vals[k] = Number.isNaN(holes[k]) ? 0 : holes[k]; }
    const oursN = gaussianSmooth({ width: w, height: h, cellSize: 1, originX: 0, originY: 0, data: holes }, sigma).data;
    const num = scipyGaussian(vals, w, h, sigma), den = scipyGaussian(mask, w, h, sigma);
    worst = 0;
    for (let k = 0; k < holes.length; k++) {
      if (Number.isNaN(holes[k])) { expect(Number.isNaN(oursN[k])).toBe(true); continue; }
      worst = Math.max(worst, Math.abs(oursN[k] - num[k] / den[k]));
    }
    expect(worst).toBeLessThan(1e-4);
  });

  it('ignores empty cells instead of pulling neighbours down', () => {
    // common practice (normalised convolution): a constant surface with holes stays constant.
    const w = 15, h = 15;
    const data = new Float32Array(w * h).fill(12);
    data[7 * w + 7] = NaN; data[3 * w + 2] = NaN;
    const out = gaussianSmooth({ width: w, height: h, cellSize: 1, originX: 0, originY: 0, data }, 2).data;
    expect(Number.isNaN(out[7 * w + 7])).toBe(true);
    for (let k = 0; k < out.length; k++) if (!Number.isNaN(data[k])) expect(out[k]).toBeCloseTo(12, 5);
  });

  it('returns a copy at sigma 0 and refuses a negative sigma', () => {
    const g: Grid = { width: 2, height: 1, cellSize: 1, originX: 0, originY: 0, data: Float32Array.from([1, 2]) };
    const c = gaussianSmooth(g, 0);
    expect(Array.from(c.data)).toEqual([1, 2]);
    expect(c.data).not.toBe(g.data);
    expect(() => gaussianSmooth(g, -1)).toThrow(expect.objectContaining({ code: 'BAD_OPTIONS' }));
  });
});
