import { describe, expect, it } from 'vitest';
import { FLAG_OVERLAP, FLAG_WITHHELD, type PointChunk } from '../../lib/io/types.js';
import { SurfaceAccumulator } from '../../lib/raster/surfaces.js';
import type { GridGeometry } from '../../lib/raster/grid.js';

interface P { x: number; y: number; z: number; cls?: number; flags?: number }

function chunk(pts: P[]): PointChunk {
  const n = pts.length;
  const c: PointChunk = {
    count: n, x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n),
    intensity: new Uint16Array(n), returnNumber: new Uint8Array(n), numberOfReturns: new Uint8Array(n),
    classification: new Uint8Array(n), flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n),
  };
  pts.forEach((p, i) => { c.x[i] = p.x; c.y[i] = p.y; c.z[i] = p.z; c.classification[i] = p.cls ?? 1; c.flags[i] = p.flags ?? 0; });
  return c;
}

// 10 x 10 cells of 1 m, west edge x = 1000, north edge y = 2000.
const geom: GridGeometry = { width: 10, height: 10, cellSize: 1, originX: 1000, originY: 2000 };
const at = (col: number, row: number, dx = 0.5, dy = 0.5) => ({ x: 1000 + col + dx, y: 2000 - row - dy });

function flatGround(z = 10, cls = 2): P[] {
  const pts: P[] = [];
  for (let r = 0; r < 10; r++) for (let c = 0; c < 10; c++) pts.push({ ...at(c, r), z, cls });
  return pts;
}

describe('SurfaceAccumulator', () => {
  it('keeps highest, count, building and ground per cell', () => {
    const acc = new SurfaceAccumulator(geom);
    acc.add(chunk([
      ...flatGround(),
      { ...at(3, 4, 0.2, 0.7), z: 12, cls: 5 },
      { ...at(3, 4), z: 11, cls: 6 },
      { ...at(3, 4, 0.9, 0.1), z: 9.5, cls: 2 },
    ]));
    const s = acc.finish();
    const k = 4 * 10 + 3;
    expect(s.dsm.data[k]).toBe(12);
    expect(s.counts.data[k]).toBe(4);
    expect(s.buildingCounts.data[k]).toBe(1);
    expect(s.ground.data[k]).toBe(9.5);
    expect(s.lowest.data[k]).toBe(9.5);
    expect(s.lowestX[k]).toBeCloseTo(1003.9, 5);
    expect(s.lowestY[k]).toBeCloseTo(1995.9, 5);
    expect(s.hasGroundClass).toBe(true);
    expect(s.hasBuildingClass).toBe(true);
    expect(s.count).toBe(s.counts);
    expect(s.groundPoints.count).toBe(100);
    expect(s.pointsUsed).toBe(103);
  });

  it('leaves out noise (7, 18), withheld and overlap points', () => {
    // ASPRS LAS 1.4 R15: class 7 low point (noise), 18 high noise; withheld flag; overlap flag.
    const extra: P[] = [
      { ...at(5, 5), z: 50, cls: 18 },
      { ...at(5, 5), z: -30, cls: 7 },
      { ...at(6, 6), z: 40, flags: FLAG_WITHHELD },
      { ...at(7, 7), z: 45, flags: FLAG_OVERLAP },
      { ...at(2, 2), z: 44, cls: 12 },
    ];
    const acc = new SurfaceAccumulator(geom, { dropOverlap: true });
    acc.add(chunk([...flatGround(), ...extra]));
    const s = acc.finish();
    expect(s.dsm.data[5 * 10 + 5]).toBe(10);
    expect(s.lowest.data[5 * 10 + 5]).toBe(10);
    expect(s.dsm.data[6 * 10 + 6]).toBe(10);
    expect(s.dsm.data[7 * 10 + 7]).toBe(10);
    expect(s.dsm.data[2 * 10 + 2]).toBe(10);
    expect(s.pointsNoise).toBe(2);
    expect(s.pointsWithheld).toBe(1);
    expect(s.pointsOverlap).toBe(2);
    expect(s.outliersRemoved).toBe(0);

    // Overlap kept when not dropped: 45 m is a lone point 35 m above its neighbours,
    // so the isolation test (not the overlap rule) decides; use a supported height.
    const keep = new SurfaceAccumulator(geom, { dropOverlap: false });
    keep.add(chunk([...flatGround(), { ...at(7, 7), z: 13, flags: FLAG_OVERLAP }]));
    expect(keep.finish().dsm.data[7 * 10 + 7]).toBe(13);
  });

  it('removes a bird but keeps a sharp conifer top', () => {
    // Invented scene: flat ground at 0 m, 0.5 m cells, a narrow cone (radius 1.5 m,
    // top 25 m, crown base 13 m: 8 m drop per m) sampled every 0.1 m, and a bird
    // 30 m above the ground in open country.
    const g: GridGeometry = { width: 40, height: 40, cellSize: 0.5, originX: 0, originY: 20 };
    const pts: P[] = [];
    for (let i = 0; i < 200; i++) for (let j = 0; j < 200; j++) {
      const x = 0.05 + i * 0.1, y = 0.05 + j * 0.1;
      const d = Math.hypot(x - 10, y - 10);
      pts.push({ x, y, z: d < 1.5 ? 25 - 8 * d : 0 });
    }
    pts.push({ x: 15.01, y: 15.01, z: 30 }); // bird
    pts.push({ x: 10, y: 10, z: 25 }); // apex return
    const acc = new SurfaceAccumulator(g);
    acc.add(chunk(pts));
    const s = acc.finish();
    const cell = (x: number, y: number) => Math.floor((20 - y) / 0.5) * 40 + Math.floor(x / 0.5);
    expect(s.dsm.data[cell(15.01, 15.01)]).toBe(0); // fell back to the ground return below the bird
    expect(s.dsm.data[cell(10, 10)]).toBe(25); // conifer apex kept
    expect(s.outliersRemoved).toBe(1);
  });

  it('keeps a multipath return below ground out of the lowest grid, but keeps a ground hit under canopy', () => {
    // Invented scene: ground at 10 m; a return at -5 m in one cell (multipath);
    // a 5 x 5 cell canopy block at 30 m whose only ground hits are its centre and one
    // cell two metres away.
    const pts = flatGround(10, 1).filter((p) => {
      const c = Math.floor(p.x - 1000), r = Math.floor(2000 - p.y);
      return !(c >= 3 && c <= 7 && r >= 3 && r <= 7);
    });
    for (let r = 3; r <= 7; r++) for (let c = 3; c <= 7; c++) pts.push({ ...at(c, r), z: 30 });
    pts.push({ ...at(5, 5, 0.3, 0.3), z: 10.2 });
    pts.push({ ...at(7, 5, 0.3, 0.3), z: 10.1 });
    pts.push({ ...at(1, 1, 0.2, 0.2), z: -5 });
    const acc = new SurfaceAccumulator(geom);
    acc.add(chunk(pts));
    const s = acc.finish();
    expect(Number.isNaN(s.lowest.data[1 * 10 + 1])).toBe(true);
    expect(s.lowest.data[5 * 10 + 5]).toBeCloseTo(10.2, 5);
    expect(s.lowOutliersRemoved).toBe(1);
  });

  it('converts feet heights to metres and counts points outside the grid', () => {
    const acc = new SurfaceAccumulator(geom, { verticalUnitM: 0.3048 }); // NIST: international foot = 0.3048 m
    acc.add(chunk([{ ...at(0, 0), z: 100 }, { x: 0, y: 0, z: 1 }, { x: NaN, y: 1995, z: 1 }]));
    const s = acc.finish();
    expect(s.dsm.data[0]).toBeCloseTo(30.48, 4);
    expect(s.pointsOutside).toBe(2);
    expect(s.hasGroundClass).toBe(false);
  });

  it('refuses a grid beyond the cell budget before allocating, naming a cell size that fits', () => {
    const big: GridGeometry = { width: 100_000, height: 100_000, cellSize: 0.5, originX: 0, originY: 0 };
    let err: any;
    try { new SurfaceAccumulator(big, { maxGridCells: 1_000_000 }); } catch (e) { err = e; }
    expect(err?.code).toBe('TOO_LARGE');
    const fit = err.details.suggestedCellSizeM as number;
    expect(fit).toBeGreaterThan(0.5);
    const w = Math.ceil(50_000 / fit), h = w;
    expect(w * h).toBeLessThanOrEqual(1_000_000);
    expect(err.message).toMatch(/cell size of at least/);
  });
});
