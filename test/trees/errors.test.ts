import { describe, expect, it } from 'vitest';
import { findTreetops } from '../../lib/trees/treetops.js';
import { growCrowns } from '../../lib/trees/crowns.js';
import { traceOutlines } from '../../lib/trees/outlines.js';
import { TreeMetricsAccumulator } from '../../lib/trees/metrics.js';
import { ProfileAccumulator, surveySummary } from '../../lib/trees/summary.js';
import { isCrowntallyError } from '../../lib/errors.js';
import type { Grid } from '../../lib/raster/grid.js';

const g: Grid = { width: 4, height: 3, cellSize: 1, originX: 0, originY: 3, data: Float32Array.of(0, 1, 2, 3, 4, 9, 4, 3, 2, 1, 0, 0) };

function code(f: () => unknown): string {
  try { f(); } catch (e) { return isCrowntallyError(e) ? e.code : 'other'; }
  return 'none';
}

describe('bad input gives a CrowntallyError with a stable code', () => {
  it('options out of range', () => {
    expect(code(() => findTreetops(g, { minHeightM: 2, window: 3, unitM: 0 }))).toBe('BAD_OPTIONS');
    expect(code(() => findTreetops(g, { minHeightM: NaN, window: 3 }))).toBe('BAD_OPTIONS');
    expect(code(() => findTreetops(g, { minHeightM: 2, window: 'oak' as 'pines' }))).toBe('BAD_OPTIONS');
    const tops = findTreetops(g, { minHeightM: 2, window: 3 });
    expect(code(() => growCrowns(g, tops, { minHeightM: 2, floorFraction: 1, reachM: 5 }))).toBe('BAD_OPTIONS');
    expect(code(() => growCrowns(g, tops, { minHeightM: 2, floorFraction: 0.3, reachM: -1 }))).toBe('BAD_OPTIONS');
    expect(code(() => new ProfileAccumulator(g, { layerM: 0, verticalUnitM: 1 }))).toBe('BAD_OPTIONS');
  });

  it('inconsistent grids and tables', () => {
    const bad: Grid<Int32Array> = { ...g, data: Int32Array.of(0, 0, 0, 0, 0, 5, 0, 0, 0, 0, 0, 0) };
    expect(code(() => traceOutlines(bad, 1))).toBe('INTERNAL');
    const tops = findTreetops(g, { minHeightM: 2, window: 3 });
    const far = { ...tops, col: Int32Array.of(40) };
    expect(code(() => growCrowns(g, far, { minHeightM: 2, floorFraction: 0, reachM: Infinity }))).toBe('INTERNAL');
    const labels = growCrowns(g, tops, { minHeightM: 2, floorFraction: 0, reachM: Infinity });
    const acc = new TreeMetricsAccumulator(labels, g, tops, { profileLayerM: 1, verticalUnitM: 1, unitM: 1, hasReturns: true, hasRgb: false });
    expect(code(() => acc.finish(traceOutlines(labels, 0)))).toBe('INTERNAL');
  });

  it('an empty survey gives an empty, honest summary', () => {
    const empty: Grid = { ...g, data: new Float32Array(12).fill(NaN) };
    const tops = findTreetops(empty, { minHeightM: 2, window: 3 });
    expect(tops.count).toBe(0);
    const labels = growCrowns(empty, tops, { minHeightM: 2, floorFraction: 0.3, reachM: 'auto' });
    const o = traceOutlines(labels, 0);
    const t = new TreeMetricsAccumulator(labels, empty, tops, { profileLayerM: 1, verticalUnitM: 1, unitM: 1, hasReturns: true, hasRgb: false }).finish(o);
    const s = surveySummary(t, empty, { minHeightM: 2, unitM: 1 });
    expect(s.treeCount).toBe(0);
    expect(s.areaM2).toBe(0);
    expect(Number.isNaN(s.canopyCover)).toBe(true);
    expect(Number.isNaN(s.meanHeightM)).toBe(true);
  });
});
