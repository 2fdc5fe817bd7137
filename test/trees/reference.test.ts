import { describe, expect, it } from 'vitest';
import { referenceAvailable, syntheticCanopy } from './reference.js';
import { compareWithReference } from './reference-compare.js';

const ok = referenceAvailable();

describe.skipIf(!ok)('treetops and crowns against SciPy and scikit-image', () => {
  for (const [seed, noiseM] of [[1, 0.05], [2, 0.3], [3, 0.05], [4, 0.3]] as const) {
    it(`synthetic canopy seed ${seed}, noise ${noiseM} m`, () => {
      const { grid } = syntheticCanopy(seed, 90, 70, 25, 0.5, noiseM);
      const s = compareWithReference(grid, { minHeightM: 2, windowM: 3.5 });
      expect(s.tops).toBeGreaterThan(5);
      // scipy.ndimage.maximum_filter, disc footprint: every top is the disc maximum at its cell.
      expect(s.topsNotAtMax).toBe(0);
      // scipy.ndimage.maximum_filter: every strict disc maximum at or above minHeight is a top.
      expect(s.strictMaxima).toBeGreaterThan(5);
      expect(s.strictMissed).toBe(0);
      // skimage.segmentation.watershed(-chm, markers, mask, connectivity=1): at least 99% of
      // mask cells agree; ours floods 1 cm levels in FIFO order, scikit-image exact values,
      // so cells on near-ties between crowns may go either way.
      expect(s.agreement).toBeGreaterThanOrEqual(0.99);
    });
  }

  // Windows whose disc would be smaller than the 3x3 neighbourhood (radius 1 and 1.3 cells) are held at it.
  for (const windowM of [1.0, 1.3]) {
    it(`small window ${windowM} m on 0.5 m cells is held at the 3x3 neighbourhood`, () => {
      const { grid } = syntheticCanopy(5, 60, 50, 12, 0.5, 0.3);
      const s = compareWithReference(grid, { minHeightM: 2, windowM });
      expect(s.topsNotAtMax).toBe(0); // scipy.ndimage.maximum_filter
      expect(s.strictMaxima).toBeGreaterThan(10);
      expect(s.strictMissed).toBe(0); // scipy.ndimage.maximum_filter
      expect(s.agreement).toBeGreaterThanOrEqual(0.99); // skimage.segmentation.watershed
    });
  }

  it('a feet-based grid gives the same comparison', () => {
    const { grid } = syntheticCanopy(7, 80, 60, 20, 0.5 / 0.3048, 0.05);
    const s = compareWithReference(grid, { minHeightM: 2, windowM: 3.5, unitM: 0.3048 });
    expect(s.topsNotAtMax).toBe(0); // scipy.ndimage.maximum_filter
    expect(s.strictMissed).toBe(0); // scipy.ndimage.maximum_filter
    expect(s.agreement).toBeGreaterThanOrEqual(0.99); // skimage.segmentation.watershed
  });
});

describe.skipIf(ok)('reference unavailable', () => {
  it('needs /usr/bin/python3 with python3-skimage and python3-scipy', () => {
    throw new Error('install Debian python3-skimage and python3-scipy for /usr/bin/python3 to run the reference comparison');
  });
});
