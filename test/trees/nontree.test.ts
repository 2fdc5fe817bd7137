import { describe, expect, it } from 'vitest';
import { findTreetops } from '../../lib/trees/treetops.js';
import { growCrowns } from '../../lib/trees/crowns.js';
import { rejectNonTrees } from '../../lib/trees/nontree.js';
import type { Grid } from '../../lib/raster/grid.js';
import { rng } from './reference.js';

// Invented scene, 0.5 m cells: a flat roof, a pitched (gable) roof and a tree.
function scene(cellSize = 0.5) {
  const W = 120, H = 50, rand = rng(5);
  const data = new Float32Array(W * H);
  const building = new Uint32Array(W * H), counts = new Uint32Array(W * H);
  for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) {
    const x = c * 0.5, y = r * 0.5; // metres, the same scene whatever the CRS unit
    let h = 0, roof = false;
    if (x >= 3 && x < 15 && y >= 5 && y < 15) { h = 6 + (rand() - 0.5) * 0.1; roof = true; }             // flat roof, 12 x 10 m
    else if (x >= 20 && x < 34 && y >= 5 && y < 15) { h = 9 - 0.8 * Math.abs(y - 10) + (rand() - 0.5) * 0.1; roof = true; } // gable, ridge along x
    else {
      const d2 = (x - 48) ** 2 + (y - 12) ** 2;
      h = Math.max(0, 14 * Math.exp(-d2 / 18)) + (d2 < 60 ? (rand() - 0.5) * 0.8 : 0);                     // rough crown
    }
    data[r * W + c] = h;
    counts[r * W + c] = 4;
    if (roof) building[r * W + c] = 4;
  }
  const g = (d: Float32Array | Uint32Array) => ({ width: W, height: H, cellSize, originX: 0, originY: H * cellSize, data: d });
  return { chm: g(data) as Grid, counts: g(counts) as Grid<Uint32Array>, building: g(building) as Grid<Uint32Array> };
}

function run(unitM: number, withClass: boolean) {
  const s = scene(0.5 / unitM);
  const tops = findTreetops(s.chm, { minHeightM: 2, window: 'combined', unitM });
  const labels = growCrowns(s.chm, tops, { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined', unitM });
  const res = rejectNonTrees(labels, tops, { chm: s.chm, unitM, ...(withClass ? { hasBuildingClass: true, pointCount: s.counts, buildingCount: s.building } : {}) });
  return { before: tops.count, ...res, cellM: 0.5 };
}

describe('rejectNonTrees', () => {
  for (const withClass of [false, true]) {
    it(`flat and pitched roofs give no trees, the tree is kept (${withClass ? 'class 6' : 'shape'})`, () => {
      const r = run(1, withClass);
      expect(r.before).toBeGreaterThan(2); // roofs did produce candidate tops
      expect(r.tops.count).toBe(1);
      expect(r.tops.x[0]!).toBeCloseTo(48, 0);
      expect(r.removed).toBe(r.before - 1);
      // Labels renumbered compactly: only 0 and 1 remain.
      expect(new Set(r.labels.data)).toEqual(new Set([0, 1]));
    });
  }

  it('a survey in feet rejects the same crowns', () => {
    const m = run(1, false), ft = run(0.3048, false);
    expect(ft.tops.count).toBe(m.tops.count);
    expect(ft.removed).toBe(m.removed);
  });
});

describe('rejectNonTrees on rough canopies', () => {
  it('keeps the crowns of an invented rough canopy', async () => {
    const { syntheticCanopy } = await import('./reference.js');
    const { grid } = syntheticCanopy(21, 100, 80, 30, 0.5, 0.4);
    const tops = findTreetops(grid, { minHeightM: 2, window: 'combined' });
    const labels = growCrowns(grid, tops, { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined' });
    const r = rejectNonTrees(labels, tops, { chm: grid });
    expect(tops.count).toBeGreaterThan(10);
    expect(r.removed).toBe(0);
  });
});

describe('rejectNonTrees with single-return counts', () => {
  it('a crown of nearly all single returns is a solid surface; a tree with multiple returns is kept', () => {
    const s = scene();
    const tops = findTreetops(s.chm, { minHeightM: 2, window: 'combined' });
    const labels = growCrowns(s.chm, tops, { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined' });
    // Invented counts: 10 returns per cell; on roofs all single, elsewhere 2 of 10 single.
    const all: Grid<Uint32Array> = { ...s.counts, data: s.counts.data.map(() => 10) };
    const single: Grid<Uint32Array> = { ...s.counts, data: s.building.data.map((b) => (b > 0 ? 10 : 2)) };
    // Zero tolerances turn the shape tests off, so only the return test can reject.
    const r = rejectNonTrees(labels, tops, { chm: s.chm, pointCount: all, singleReturnCount: single, localPlaneToleranceM: 0, maxPlaneRmsM: 0, maxFragmentAreaM2: 0 });
    expect(r.tops.count).toBe(1);
    expect(r.tops.x[0]!).toBeCloseTo(48, 0);
    const none = rejectNonTrees(labels, tops, { chm: s.chm, localPlaneToleranceM: 0, maxPlaneRmsM: 0, maxFragmentAreaM2: 0 });
    expect(none.removed).toBe(0); // the same crowns stay without the counts: the return test did the work
  });
});
