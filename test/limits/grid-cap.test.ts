/**
 * The memory budget for grids: a survey whose bounds need a grid beyond the
 * cell budget is refused with TOO_LARGE before any grid is allocated, and the
 * message names a cell size that would fit. Sizes below are plain arithmetic
 * on the invented bounds (common practice: cells = ceil(width / cell) + 1 per axis).
 */
import { describe, expect, it } from 'vitest';
import { geometryFor, tally } from '../../lib/pipeline.js';
import { bufferSource } from '../../lib/io/sources.js';
import { checkGeometry, checkGridSize } from '../../lib/raster/grid.js';
import { CrowntallyError } from '../../lib/errors.js';
import { lasOf, parkScene } from './scene.js';

async function refusal(p: Promise<unknown>): Promise<CrowntallyError> {
  try { await p; } catch (e) { if (e instanceof CrowntallyError) return e; throw e; }
  throw new Error('expected a refusal, got a result');
}

describe('grid size budget', () => {
  it('a LAS 1000 km wide is refused with TOO_LARGE and a cell size that fits, without allocating', async () => {
    // Two corners 1000 km apart (x and y): at the automatic 2 m cell that is 500001 x 500001 cells.
    const bytes = lasOf([...parkScene({ size: 10, crowns: [] }), { x: 1_500_000, y: 5_000_000, z: 100, cls: 2 }]);
    const before = process.memoryUsage().arrayBuffers;
    const e = await refusal(tally([bufferSource(bytes, 'wide.las')]));
    const grew = process.memoryUsage().arrayBuffers - before;
    expect(e.code).toBe('TOO_LARGE');
    expect(e.message).toMatch(/cell size of at least [\d.]+ m/);
    const suggested = e.details?.['suggestedCellSizeM'] as number;
    // sqrt(1e12 m2 / 64e6 cells) = 125 m is the least edge that could fit.
    expect(suggested).toBeGreaterThanOrEqual(125);
    expect(suggested).toBeLessThan(130);
    // Nothing near the 2 TB a 500001^2 Float32 grid needs was allocated (the file itself is a few kB).
    expect(grew).toBeLessThan(64 * 1024 * 1024);
  });

  it('the suggested cell size is accepted by the same budget check', () => {
    for (const [w, h, cell, max] of [[1000, 1000, 1, 10_000], [1e6, 1e6, 2, 64e6], [5000, 10, 0.1, 20_000], [123.4, 987.6, 0.25, 5000]] as const) {
      let suggested = NaN;
      try { checkGridSize(w, h, cell, max); } catch (e) { suggested = (e as CrowntallyError).details?.['suggestedCellSizeM'] as number; }
      expect(suggested, `${w} x ${h}`).toBeGreaterThan(0);
      // Through the pipeline's own geometry, whose origin snaps outward to whole cells (an unaligned corner here).
      const g = geometryFor({ minX: 0.37, minY: 0.61, maxX: 0.37 + w, maxY: 0.61 + h }, suggested);
      expect(() => checkGeometry(g, max), `${w} x ${h} at ${suggested}`).not.toThrow();
      // And it is not wastefully coarse: a cell 10% finer no longer fits.
      expect(() => checkGeometry(geometryFor({ minX: 0, minY: 0, maxX: w, maxY: h }, suggested * 0.9), max)).toThrow(CrowntallyError);
    }
  });

  it('a budget given in the options is honoured (TOO_LARGE for a 40 m survey at 0.1 m with 1000 cells)', async () => {
    const bytes = lasOf(parkScene({ size: 40 }));
    const e = await refusal(tally([bufferSource(bytes, 'park.las')], { options: { cellSizeM: 0.1, maxGridCells: 1000 } }));
    expect(e.code).toBe('TOO_LARGE');
  });
});
