// Shared pieces of the tree tests: seeded synthetic canopies and the
// scikit-image / SciPy reference run (test/reference/watershed_ref.py).
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import type { Grid } from '../../lib/raster/grid.js';
// The same small seeded generator (mulberry32) as the raster benchmarks, so every run sees the same canopy.
import { rng } from '../../bench/synthetic.js';

export { rng };

const here = path.dirname(fileURLToPath(import.meta.url));
export const REF_SCRIPT = path.resolve(here, '../reference/watershed_ref.py');
export const PY = '/usr/bin/python3';

/** True when the Debian scikit-image / SciPy reference can run here. */
export function referenceAvailable(): boolean {
  if (!existsSync(PY)) return false;
  try {
    execFileSync(PY, ['-c', 'import skimage.segmentation, scipy.ndimage'], { stdio: 'ignore' });
    return true;
  } catch {
    return false;
  }
}

export interface Canopy { grid: Grid; trees: { cx: number; cy: number; h: number; r: number }[] }

/**
 * Invented canopy: Gaussian and ellipsoid crowns (max of overlapping
 * crowns) over flat ground, plus uniform noise of +-noiseM. Sizes in cells.
 */
export function syntheticCanopy(seed: number, width: number, height: number, trees: number, cellSize = 0.5, noiseM = 0.05): Canopy {
  const rand = rng(seed);
  const data = new Float32Array(width * height);
  const list: Canopy['trees'] = [];
  for (let t = 0; t < trees; t++) {
    list.push({ cx: rand() * width, cy: rand() * height, h: 5 + rand() * 20, r: 3 + rand() * 6 });
  }
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      let v = 0;
      for (let t = 0; t < list.length; t++) {
        const tr = list[t]!;
        const d2 = ((c - tr.cx) ** 2 + (r - tr.cy) ** 2) / (tr.r * tr.r);
        const z = t % 2 === 0 ? tr.h * Math.exp(-2 * d2) : d2 < 1 ? tr.h * Math.sqrt(1 - d2) : 0;
        if (z > v) v = z;
      }
      data[r * width + c] = v + (rand() * 2 - 1) * noiseM;
    }
  }
  return { grid: { width, height, cellSize, originX: 1000, originY: 5000, data }, trees: list };
}

export interface ReferenceResult { labels: Int32Array; maxfilter: Float64Array }

/** Runs scikit-image watershed(-chm, markers, mask, connectivity=1) and SciPy maximum_filter (disc radius in cells). */
export function runReference(chm: Grid, markers: Int32Array, mask: Uint8Array, radiusCells: number): ReferenceResult {
  const dir = mkdtempSync(path.join(tmpdir(), 'crowntally-ref-'));
  try {
    const inFile = path.join(dir, 'in.json');
    const outFile = path.join(dir, 'out.json');
    const chmList = Array.from(chm.data, (v) => (Number.isNaN(v) ? null : v));
    writeFileSync(inFile, JSON.stringify({ width: chm.width, height: chm.height, chm: chmList, markers: Array.from(markers), mask: Array.from(mask), radius: radiusCells }));
    execFileSync(PY, [REF_SCRIPT, inFile, outFile], { stdio: ['ignore', 'ignore', 'pipe'] });
    const out = JSON.parse(readFileSync(outFile, 'utf8')) as { labels: number[]; maxfilter: number[] };
    return { labels: Int32Array.from(out.labels), maxfilter: Float64Array.from(out.maxfilter) };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
