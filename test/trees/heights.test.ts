import { describe, expect, it } from 'vitest';
import { pointHeightBuffers, pointHeights } from '../../lib/trees/heights.js';
import { allocChunk } from '../../lib/io/las-points.js';
import { FLAG_OVERLAP, FLAG_WITHHELD } from '../../lib/io/types.js';
import type { Grid } from '../../lib/raster/grid.js';

// Invented 4 x 3 grid of 2 m cells; ground at 50 m, canopy surface at 70 m (one cell without returns).
const geo = { width: 4, height: 3, cellSize: 2, originX: 100, originY: 300 };
const dtm: Grid = { ...geo, data: new Float32Array(12).fill(50) };
const dsm: Grid = { ...geo, data: new Float32Array(12).fill(70) };
dsm.data[5] = NaN; // cell (col 1, row 1): no return reached the surface

function chunk(rows: Array<{ x: number; y: number; z: number; cls?: number; flags?: number }>) {
  const c = allocChunk(rows.length, 1);
  rows.forEach((r, i) => { c.x[i] = r.x; c.y[i] = r.y; c.z[i] = r.z; c.classification[i] = r.cls ?? 5; c.flags[i] = r.flags ?? 0; });
  return c;
}

describe('pointHeights', () => {
  it('places each point in its cell (row 0 at the north edge) with its height above the DTM', () => {
    const ph = pointHeights(chunk([{ x: 100.5, y: 299.5, z: 61 }, { x: 107.9, y: 294.1, z: 55.5 }]), dsm, dtm, 1, pointHeightBuffers());
    expect(Array.from(ph.cell.subarray(0, 2))).toEqual([0, 11]);
    expect(Array.from(ph.heightM.subarray(0, 2))).toEqual([11, 5.5]);
  });

  it('leaves out noise (ASPRS classes 7 and 18), withheld and overlap points (LAS 1.4 R15 flags)', () => {
    const ph = pointHeights(chunk([
      { x: 101, y: 299, z: 60, cls: 7 }, { x: 101, y: 299, z: 60, cls: 18 },
      { x: 101, y: 299, z: 60, flags: FLAG_WITHHELD }, { x: 101, y: 299, z: 60, flags: FLAG_OVERLAP },
      { x: 101, y: 299, z: 60, cls: 2 },
    ]), dsm, dtm, 1, pointHeightBuffers());
    expect(Array.from(ph.cell.subarray(0, 5))).toEqual([-1, -1, -1, -1, 0]);
    // Overlap points are kept when asked.
    const kept = pointHeights(chunk([{ x: 101, y: 299, z: 60, flags: FLAG_OVERLAP }]), dsm, dtm, 1, pointHeightBuffers(), false);
    expect(kept.cell[0]).toBe(0);
  });

  it('leaves out returns above the cleaned DSM, points in cells without one, and points off the grid', () => {
    const ph = pointHeights(chunk([
      { x: 101, y: 299, z: 70.0005 }, // within the 1 mm float32 slack: kept
      { x: 101, y: 299, z: 71 }, // above the surface: an isolated return the DSM left out
      { x: 103, y: 297, z: 60 }, // cell 5 has no DSM
      { x: 99.9, y: 299, z: 60 }, { x: 101, y: 300.1, z: 60 }, { x: NaN, y: 299, z: 60 },
    ]), dsm, dtm, 1, pointHeightBuffers());
    expect(Array.from(ph.cell.subarray(0, 6))).toEqual([0, -1, -1, -1, -1, -1]);
    // Without a DSM only the class, flag and grid tests apply.
    const all = pointHeights(chunk([{ x: 101, y: 299, z: 71 }, { x: 103, y: 297, z: 60 }]), null, dtm, 1, pointHeightBuffers());
    expect(Array.from(all.cell.subarray(0, 2))).toEqual([0, 5]);
  });

  it('converts z to metres before comparing and subtracting (US survey foot, 1200/3937 m: NIST)', () => {
    const ft = 1200 / 3937;
    const ph = pointHeights(chunk([{ x: 101, y: 299, z: 60 / ft }]), dsm, dtm, ft, pointHeightBuffers());
    expect(ph.heightM[0]).toBeCloseTo(10, 9);
  });

  it('refuses a DSM and DTM on different grids', () => {
    expect(() => pointHeights(chunk([]), { ...dsm, cellSize: 1 }, dtm, 1, pointHeightBuffers())).toThrow(/share one geometry/);
  });
});
