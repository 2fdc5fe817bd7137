import { describe, expect, it } from 'vitest';
import { fillNearest, tinDtm } from '../../lib/raster/tin.js';
import type { GridGeometry } from '../../lib/raster/grid.js';
import type { GroundPoints } from '../../lib/raster/surfaces.js';

function rng(seed: number) {
  return () => {
    seed = (seed + 0x6d2b79f5) | 0;
    let t = Math.imul(seed ^ (seed >>> 15), 1 | seed);
    t = (t + Math.imul(t ^ (t >>> 7), 61 | t)) ^ t;
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function pts(xs: number[], ys: number[], zs: number[]): GroundPoints {
  return { count: xs.length, x: Float64Array.from(xs), y: Float64Array.from(ys), z: Float32Array.from(zs) };
}

// Projected coordinates of realistic size (UTM-like), 0.5 m cells, 120 x 80 cells.
const X0 = 512_000, Y0 = 5_430_000;
const geom: GridGeometry = { width: 120, height: 80, cellSize: 0.5, originX: X0, originY: Y0 };
const plane = (x: number, y: number) => 150 + 0.31 * (x - X0) - 0.17 * (Y0 - y);

describe('tinDtm', () => {
  it('reproduces a plane exactly at every cell', () => {
    // common practice: linear interpolation on triangles is exact for a plane.
    // Points scattered at random plus the four grid corners, so the hull covers every cell centre.
    const r = rng(7);
    const xs: number[] = [], ys: number[] = [];
    for (let i = 0; i < 3000; i++) { xs.push(X0 + r() * 60); ys.push(Y0 - r() * 40); }
    for (const [cx, cy] of [[0, 0], [60, 0], [0, 40], [60, 40]]) { xs.push(X0 + cx); ys.push(Y0 - cy); }
    const g = tinDtm(pts(xs, ys, xs.map((x, i) => plane(x, ys[i]))), geom);
    let worst = 0;
    for (let row = 0; row < geom.height; row++) for (let col = 0; col < geom.width; col++) {
      const x = X0 + (col + 0.5) * 0.5, y = Y0 - (row + 0.5) * 0.5;
      worst = Math.max(worst, Math.abs(g.data[row * geom.width + col] - plane(x, y)));
    }
    // Float32 storage of point heights (~150-170 m) limits agreement to about 1e-5 m.
    expect(worst).toBeLessThan(1e-4);
  });

  it('fills cells outside the ground hull from the nearest hull value', () => {
    // Ground only in the western half (x < 20 m); the rest takes nearby edge heights.
    const r = rng(3);
    const xs: number[] = [], ys: number[] = [];
    for (let i = 0; i < 800; i++) { xs.push(X0 + 5 + r() * 15); ys.push(Y0 - 5 - r() * 30); }
    const zs = xs.map((x, i) => plane(x, ys[i]));
    const g = tinDtm(pts(xs, ys, zs), geom);
    const zmin = Math.min(...zs), zmax = Math.max(...zs);
    for (let k = 0; k < g.data.length; k++) {
      expect(Number.isFinite(g.data[k])).toBe(true);
      expect(g.data[k]).toBeGreaterThanOrEqual(zmin - 1e-3);
      expect(g.data[k]).toBeLessThanOrEqual(zmax + 1e-3);
    }
    // Far east, on the row of y = Y0 - 20: equal to a hull-edge value near x = X0 + 20.
    const row = 40, east = g.data[row * 120 + 119];
    expect(Math.abs(east - plane(X0 + 20, Y0 - 20))).toBeLessThan(0.31 * 0.5 + 0.17 * 15);
  });

  it('gives a flat model for one or two points and refuses none', () => {
    const one = tinDtm(pts([X0 + 3], [Y0 - 3], [42]), geom);
    expect(one.data.every((v) => v === 42)).toBe(true);
    const two = tinDtm(pts([X0 + 3, X0 + 30], [Y0 - 3, Y0 - 30], [40, 44]), geom);
    expect(two.data.every((v) => v === 42)).toBe(true);
    expect(() => tinDtm(pts([], [], []), geom)).toThrow(expect.objectContaining({ code: 'NO_GROUND' }));
  });

  it('handles collinear points (no triangle) by spreading their heights', () => {
    const xs = [0, 10, 20, 30].map((d) => X0 + 1 + d), ys = xs.map(() => Y0 - 20.25);
    const g = tinDtm(pts(xs, ys, [10, 11, 12, 13]), geom);
    expect(g.data.every((v) => v >= 10 && v <= 13)).toBe(true);
    expect(g.data[40 * 120 + 2]).toBe(10);
    expect(g.data[40 * 120 + 62]).toBe(13);
  });

  it('refuses a grid beyond the budget', () => {
    expect(() => tinDtm(pts([X0], [Y0], [1]), { ...geom, width: 10_000, height: 10_000 }, { maxGridCells: 1e6 }))
      .toThrow(expect.objectContaining({ code: 'TOO_LARGE' }));
  });
});

describe('fillNearest', () => {
  it('takes the value of the nearest filled cell', () => {
    const data = new Float32Array(7 * 1).fill(NaN);
    data[1] = 5; data[6] = 9;
    const g = { width: 7, height: 1, cellSize: 1, originX: 0, originY: 0, data };
    expect(fillNearest(g)).toBe(5);
    expect(Array.from(data)).toEqual([5, 5, 5, 5, 9, 9, 9]);
    expect(fillNearest({ ...g, data: new Float32Array(3).fill(NaN), width: 3 })).toBe(-1);
  });

  it('fills a few holes in a mostly filled grid from the nearest filled cells', () => {
    // common practice (nearest-neighbour fill): each column holds its own index, and a two-column
    // gap (columns 5, 6) has one nearest column on each side; a grid with nothing to fill is left alone.
    const w = 20, h = 20;
    const data = new Float32Array(w * h);
    for (let k = 0; k < data.length; k++) data[k] = k % w;
    for (let r = 0; r < h; r++) data[r * w + 5] = data[r * w + 6] = NaN;
    const g = { width: w, height: h, cellSize: 1, originX: 0, originY: 0, data };
    expect(fillNearest(g)).toBe(2 * h);
    for (let r = 0; r < h; r++) {
      expect(data[r * w + 5]).toBe(4);
      expect(data[r * w + 6]).toBe(7);
    }
    const full = data.slice();
    expect(fillNearest({ ...g, data: full })).toBe(0);
    expect(full).toEqual(data);
  });
});
