import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { tally } from '../../lib/pipeline.js';
import { fileSource } from '../../lib/node/index.js';
import { referenceAvailable } from './reference.js';
import { compareWithReference } from './reference-compare.js';

const fixtures = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../../../shared/fixtures/laz-pairs');

// The real autzen_trim scene (international feet): its CHM from the pipeline,
// treetops and unconstrained crowns compared with SciPy and scikit-image.
describe.skipIf(!referenceAvailable())('autzen_trim CHM against SciPy and scikit-image', () => {
  it('treetops are the disc maxima; crowns agree with the reference watershed', async () => {
    const r = await tally([await fileSource(path.join(fixtures, 'autzen_trim.las'))], {});
    expect(r.crs.unitM).toBe(0.3048); // international foot, NIST
    for (const windowM of [3.5, 6]) {
      const s = compareWithReference(r.chm, { minHeightM: 2, windowM, unitM: r.crs.unitM });
      expect(s.tops).toBeGreaterThan(50);
      expect(s.topsNotAtMax).toBe(0);     // scipy.ndimage.maximum_filter, disc footprint
      expect(s.strictMissed).toBe(0);     // scipy.ndimage.maximum_filter, disc footprint
      expect(s.agreement).toBeGreaterThanOrEqual(0.99); // skimage.segmentation.watershed, connectivity=1
    }
  }, 60_000);
});
