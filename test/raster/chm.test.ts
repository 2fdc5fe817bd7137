import { describe, expect, it } from 'vitest';
import { canopyHeightModel } from '../../lib/raster/chm.js';
import { fillPits } from '../../lib/raster/pits.js';
import type { Grid } from '../../lib/raster/grid.js';

const W = 12, H = 12;
function grid(f: (c: number, r: number) => number): Grid {
  const data = new Float32Array(W * H);
  for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) data[r * W + c] = f(c, r);
  return { width: W, height: H, cellSize: 0.5, originX: 0, originY: 6, data };
}

describe('canopyHeightModel', () => {
  it('is DSM - DTM, clamped at 0 below ground', () => {
    // common practice: CHM = DSM - DTM; heights below the ground model are 0.
    const dtm = grid(() => 100);
    const dsm = grid((c) => (c < 6 ? 99.2 : 100 + c));
    const { chm } = canopyHeightModel(dsm, dtm, { fillPits: false });
    expect(chm.data[0]).toBe(0);
    expect(chm.data[3 * W + 8]).toBe(8);
    expect(chm.data.every((v) => v >= 0)).toBe(true);
  });

  it('fills an empty patch enclosed by canopy and zeroes empty open ground', () => {
    const dtm = grid(() => 50);
    // Canopy 15 m in the west block with a 2-cell dropout; open ground in the east with an empty patch.
    const dsm = grid((c, r) => {
      if ((c === 3 || c === 4) && r === 5) return NaN;
      if (c === 9 && r === 5) return NaN;
      return c < 7 ? 65 : 50.1;
    });
    const res = canopyHeightModel(dsm, dtm, { fillPits: false });
    expect(res.chm.data[5 * W + 3]).toBeCloseTo(15, 5);
    expect(res.chm.data[5 * W + 4]).toBeCloseTo(15, 5);
    expect(res.chm.data[5 * W + 9]).toBe(0);
    expect(res.holesFilled).toBe(2);
    expect(res.chm.data.every((v) => Number.isFinite(v))).toBe(true);
  });

  it('does not fill an empty patch touching the edge or larger than the limit', () => {
    const dtm = grid(() => 0);
    const dsm = grid((c, r) => (r === 0 && c === 4 ? NaN : c >= 2 && c <= 9 && r >= 2 && r <= 9 ? NaN : 20));
    const res = canopyHeightModel(dsm, dtm, { fillPits: false, maxHoleM2: 4 }); // 64 cells = 16 m2 > 4 m2
    expect(res.chm.data[0 * W + 4]).toBe(0);
    expect(res.chm.data[5 * W + 5]).toBe(0);
    expect(res.holesFilled).toBe(0);
  });

  it('leaves a too-large U-shaped patch empty even where it re-enters the scan, with a canopy threshold of 0', () => {
    // our own rule (lib/raster/chm.ts): an 8-connected empty patch larger than maxHoleM2 is not
    // filled, however its cells are reached; canopyMinM 0 makes every border cell count as canopy.
    // The U opens north: a wide west arm (16 cells), a base, a short narrow east arm; the
    // east arm with the base alone would be small enough.
    const dtm = grid(() => 0);
    const inU = (c: number, r: number) => (r >= 2 && r <= 9 && c >= 2 && c <= 3) || (r === 9 && c >= 4 && c <= 8) || (c === 8 && r >= 6 && r <= 8);
    const dsm = grid((c, r) => (inU(c, r) ? NaN : c === 6 && r === 4 ? NaN : 20));
    const res = canopyHeightModel(dsm, dtm, { fillPits: false, canopyMinM: 0, maxHoleM2: 4 }); // 24 cells = 6 m2
    for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) if (inU(c, r)) expect(res.chm.data[r * W + c]).toBe(0);
    expect(res.chm.data[4 * W + 6]).toBeCloseTo(20, 5); // the one-cell dropout inside the U is filled
    expect(res.holesFilled).toBe(1);
  });

  it('refuses grids of different geometry', () => {
    const a = grid(() => 1);
    expect(() => canopyHeightModel(a, { ...a, originX: 1 })).toThrow(expect.objectContaining({ code: 'INTERNAL' }));
  });
});

describe('fillPits', () => {
  it('raises a pit inside a crown to the median of its neighbours', () => {
    // Invented crown: a dome 18 m at the centre with a one-cell dropout to 3 m.
    const chm = grid((c, r) => (c === 6 && r === 6 ? 3 : 18 - 0.1 * (Math.abs(c - 6) + Math.abs(r - 6))));
    const { grid: out, filled } = fillPits(chm);
    expect(filled).toBe(1);
    // Median of the 8 neighbours: four at 17.9 and four at 17.8 -> 17.85.
    expect(out.data[6 * W + 6]).toBeCloseTo(17.85, 4);
  });

  it('leaves a real gap between two crowns', () => {
    // Two crowns at 15 m separated by a straight gap one cell wide (0 m), and another pair by a gap two cells wide.
    const oneGap = grid((c) => (c === 6 ? 0 : 15));
    expect(fillPits(oneGap).filled).toBe(0);
    const twoGap = grid((c) => (c === 5 || c === 6 ? 0 : 15));
    expect(fillPits(twoGap).filled).toBe(0);
    // An isolated dropout of two cells inside a crown is filled.
    const pair = grid((c, r) => ((c === 5 || c === 6) && r === 6 ? 1 : 15));
    expect(fillPits(pair).filled).toBe(2);
  });

  it('leaves ground pits below canopy height alone', () => {
    // A dip in a lawn: neighbours are below 2 m, so none is canopy.
    const lawn = grid((c, r) => (c === 6 && r === 6 ? 0 : 1.5));
    expect(fillPits(lawn).filled).toBe(0);
  });
});
