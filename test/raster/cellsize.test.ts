import { describe, expect, it } from 'vitest';
import { defaultCellSizeM } from '../../lib/raster/cellsize.js';

// Rule (common practice): about 4 first returns per cell, cell = sqrt(4 / density),
// rounded to 0.25 m, clamped to [0.25, 2] m. The expected values below are that rule
// worked by hand.
describe('defaultCellSizeM', () => {
  it('follows sqrt(4 / density) on the 0.25 m step', () => {
    expect(defaultCellSizeM(4)).toBe(1); // sqrt(1) = 1
    expect(defaultCellSizeM(16)).toBe(0.5); // sqrt(0.25) = 0.5
    expect(defaultCellSizeM(6.25)).toBe(0.75); // sqrt(0.64) = 0.8 -> 0.75
    expect(defaultCellSizeM(2)).toBe(1.5); // sqrt(2) = 1.414 -> 1.5
    expect(defaultCellSizeM(8)).toBe(0.75); // sqrt(0.5) = 0.707 -> 0.75
  });
  it('clamps to [0.25, 2] m', () => {
    expect(defaultCellSizeM(0.5)).toBe(2); // sqrt(8) = 2.83
    expect(defaultCellSizeM(0)).toBe(2);
    expect(defaultCellSizeM(400)).toBe(0.25); // sqrt(0.01) = 0.1
  });
  it('refuses a negative or NaN density', () => {
    expect(() => defaultCellSizeM(-1)).toThrow(expect.objectContaining({ code: 'BAD_OPTIONS' }));
    expect(() => defaultCellSizeM(NaN)).toThrow(expect.objectContaining({ code: 'BAD_OPTIONS' }));
  });
});
