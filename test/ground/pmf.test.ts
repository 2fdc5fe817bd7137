import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { describe, expect, it } from 'vitest';
import { opening, squareFilter } from '../../lib/ground/morphology.js';
import { pmfGroundMask, progressiveMorphologicalGround } from '../../lib/ground/pmf.js';
import type { PointChunk } from '../../lib/io/types.js';
import { canopyHeight } from '../../lib/raster/chm.js';
import { SurfaceAccumulator } from '../../lib/raster/surfaces.js';
import { tinDtm } from '../../lib/raster/tin.js';

function rng(seed: number) {
  return () => {
    seed = (seed + 0x6d2b79f5) | 0;
    let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * scipy.ndimage grey_erosion, grey_dilation and grey_opening with square windows of the
 * given sizes, mode 'nearest', in one interpreter run: per size, the three results in order.
 */
function scipyMorph(data: Float32Array, w: number, h: number, sizes: number[]): Float32Array[] {
  const dir = mkdtempSync(path.join(tmpdir(), 'ct-morph-'));
  try {
    const inp = path.join(dir, 'in.f32'), out = path.join(dir, 'out.f32');
    writeFileSync(inp, Buffer.from(data.buffer, data.byteOffset, data.byteLength));
    const script = [
      'import sys, numpy as np',
      'from scipy import ndimage',
      'a = np.fromfile(sys.argv[1], dtype=np.float32).reshape(int(sys.argv[3]), int(sys.argv[4]))',
      'res = []',
      'for s in [int(v) for v in sys.argv[5].split(",")]:',
      '    for op in (ndimage.grey_erosion, ndimage.grey_dilation, ndimage.grey_opening):',
      "        res.append(op(a, size=(s, s), mode='nearest').astype(np.float32).ravel())",
      'np.concatenate(res).tofile(sys.argv[2])',
    ].join('\n');
    execFileSync('/usr/bin/python3', ['-c', script, inp, out, String(h), String(w), sizes.join(',')]);
    const b = readFileSync(out);
    const all = new Float32Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
    const n = w * h;
    return Array.from({ length: all.length / n }, (_, i) => all.subarray(i * n, (i + 1) * n));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

describe('square-window morphology', () => {
  it('matches scipy.ndimage grey erosion, dilation and opening', () => {
    // Outside reference: SciPy (Debian python3-scipy) scipy.ndimage.grey_erosion /
    // grey_dilation / grey_opening, square footprint, mode 'nearest' (an edge value
    // repeated outside changes no min or max, which is our "ignore outside" rule). Exact.
    const w = 41, h = 29, r = rng(5);
    const data = new Float32Array(w * h);
    for (let k = 0; k < data.length; k++) data[k] = Math.round(100 * r()) / 4;
    const radii = [1, 2, 4, 8, 20];
    const ref = scipyMorph(data, w, h, radii.map((rad) => 2 * rad + 1));
    radii.forEach((rad, i) => {
      expect(Array.from(squareFilter(data, w, h, rad, true))).toEqual(Array.from(ref[3 * i]));
      expect(Array.from(squareFilter(data, w, h, rad, false))).toEqual(Array.from(ref[3 * i + 1]));
      expect(Array.from(opening(data, w, h, rad))).toEqual(Array.from(ref[3 * i + 2]));
    });
  });
});

describe('progressive morphological filter', () => {
  // Invented scene, 100 m x 100 m at 1 m cells, about 4 returns per m2: rolling terrain
  // (up to about 12% slope), 40 round trees (crown radius 2-5 m, 8-25 m tall) with some
  // pulses reaching the ground under them, and a flat-roofed building 24 m x 16 m, 7 m
  // tall. Truth per cell: ground when the cell's lowest return is a ground return.
  function scene() {
    const r = rng(2024);
    const terrain = (x: number, y: number) => 50 + 4 * Math.sin(x / 17) + 3 * Math.cos(y / 23) + 0.05 * x;
    const trees: { x: number; y: number; rad: number; top: number }[] = [];
    while (trees.length < 40) {
      const t = { x: 8 + r() * 84, y: 8 + r() * 84, rad: 2 + r() * 3, top: 8 + r() * 17 };
      if (t.x > 55 && t.x < 85 && t.y > 10 && t.y < 35) continue; // keep off the building
      trees.push(t);
    }
    const inBuilding = (x: number, y: number) => x >= 58 && x <= 82 && y >= 14 && y <= 30;
    const n = 40_000;
    const c: PointChunk = {
      count: n, x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n),
      intensity: new Uint16Array(n), returnNumber: new Uint8Array(n), numberOfReturns: new Uint8Array(n),
      classification: new Uint8Array(n), flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n),
    };
    const isGroundPt = new Uint8Array(n);
    for (let i = 0; i < n; i++) {
      const x = r() * 100, y = r() * 100;
      let z = terrain(x, y) + (r() - 0.5) * 0.1;
      let ground = 1;
      if (inBuilding(x, y)) { z = terrain(70, 22) + 7; ground = 0; } else {
        for (const t of trees) {
          const d = Math.hypot(x - t.x, y - t.y);
          // 85% of pulses inside a crown stop in it, somewhere between crown base and surface.
          if (d < t.rad && r() < 0.85) {
            const surf = t.top * Math.sqrt(1 - (d / t.rad) ** 2);
            z = terrain(x, y) + Math.max(2, surf - r() * 3);
            ground = 0;
            break;
          }
        }
      }
      c.x[i] = 1000 + x; c.y[i] = 2000 + y; c.z[i] = z; isGroundPt[i] = ground;
    }
    return { c, isGroundPt, terrain };
  }

  it('keeps type I and type II errors low on a synthetic park with trees and a building', () => {
    const { c, isGroundPt, terrain } = scene();
    const geom = { width: 100, height: 100, cellSize: 1, originX: 1000, originY: 2100 };
    const acc = new SurfaceAccumulator(geom);
    acc.add(c);
    const s = acc.finish();
    // Truth per cell: is the cell's lowest point a ground point?
    const truth = new Int8Array(100 * 100).fill(-1);
    const lowZ = new Float64Array(100 * 100).fill(Infinity);
    for (let i = 0; i < c.count; i++) {
      const k = Math.floor(2100 - c.y[i]) * 100 + Math.floor(c.x[i] - 1000);
      if (c.z[i] < lowZ[k]) { lowZ[k] = c.z[i]; truth[k] = isGroundPt[i]; }
    }
    const mask = pmfGroundMask(s.lowest);
    // Sithole & Vosselman 2004: type I = bare-earth rejected as object; type II = object accepted as bare earth.
    let g = 0, o = 0, e1 = 0, e2 = 0;
    for (let k = 0; k < mask.length; k++) {
      if (Number.isNaN(s.lowest.data[k])) continue;
      if (truth[k] === 1) { g++; if (!mask[k]) e1++; } else if (truth[k] === 0) { o++; if (mask[k]) e2++; }
    }
    const typeI = e1 / g, typeII = e2 / o;
    expect(o).toBeGreaterThan(500);
    // Stated bounds for this scene (measured: type I 0%, type II 0.1%).
    expect(typeII).toBeLessThan(0.02);
    expect(typeI).toBeLessThan(0.02);

    const gp = progressiveMorphologicalGround(s);
    let kept = 0;
    for (let k = 0; k < mask.length; k++) kept += mask[k];
    expect(gp.count).toBe(kept);
    // Every returned point is a cell's lowest point, inside that cell.
    for (let i = 0; i < gp.count; i += 97) {
      const k = Math.floor(2100 - gp.y[i]) * 100 + Math.floor(gp.x[i] - 1000);
      expect(gp.z[i]).toBe(s.lowest.data[k]);
    }

    // The ground model from these points follows the invented terrain, and the CHM reads the roof at 7 m.
    const dtm = tinDtm(gp, geom);
    const errs: number[] = [];
    for (let row = 0; row < 100; row++) for (let col = 0; col < 100; col++) {
      errs.push(Math.abs(dtm.data[row * 100 + col] - terrain(col + 0.5, 100 - row - 0.5)));
    }
    errs.sort((a, b) => a - b);
    // Stated bounds (measured: median 0.02 m, 99th percentile 0.10 m; the worst cells lie under
    // the building, where the model bridges 16 m of curved terrain).
    expect(errs[Math.floor(errs.length / 2)]).toBeLessThan(0.05);
    expect(errs[Math.floor(errs.length * 0.99)]).toBeLessThan(0.3);
    const chm = canopyHeight(s.dsm, dtm, { fillPits: false });
    const roof = chm.data[(2100 - 2022 - 1) * 100 + 70];
    expect(roof).toBeGreaterThan(6.5);
    expect(roof).toBeLessThan(7.5);
  });

  it('refuses nonsense parameters', () => {
    const lowest = { width: 3, height: 3, cellSize: 1, originX: 0, originY: 0, data: new Float32Array(9) };
    expect(() => pmfGroundMask(lowest, { slope: -1 })).toThrow(expect.objectContaining({ code: 'BAD_OPTIONS' }));
    expect(() => pmfGroundMask(lowest, { initialThresholdM: 3, maxThresholdM: 1 })).toThrow(expect.objectContaining({ code: 'BAD_OPTIONS' }));
  });
});
