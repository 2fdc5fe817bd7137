import { describe, expect, it } from 'vitest';
import { cellsAtLeast, nonZeroCells } from '../../lib/trees/cells.js';

// The expected lists are the definitions written out with Array filters (common practice).
describe('grid scans', () => {
  it('cellsAtLeast lists the cells at or above the threshold in row-major order, NaN never', () => {
    const d = new Float32Array(10000);
    for (let i = 0; i < d.length; i++) d[i] = i % 7 === 0 ? NaN : (i * 37) % 11; // 10000 cells: the list outgrows its first block
    const want = Array.from(d.keys()).filter((i) => d[i]! >= 5);
    expect(want.length).toBeGreaterThan(4096);
    expect(Array.from(cellsAtLeast(d, 5))).toEqual(want);
    expect(cellsAtLeast(d, 100).length).toBe(0);
    expect(cellsAtLeast(new Float32Array(0), 0).length).toBe(0);
  });

  it('nonZeroCells lists the non-zero cells, negative ones too', () => {
    const a = new Int32Array(9000);
    for (let i = 0; i < a.length; i++) a[i] = i % 3 === 0 ? 0 : i % 5 === 0 ? -1 : 1 + (i % 4);
    const want = Array.from(a.keys()).filter((i) => a[i] !== 0);
    expect(Array.from(nonZeroCells(a))).toEqual(want);
    expect(nonZeroCells(new Int32Array(5)).length).toBe(0);
  });
});
