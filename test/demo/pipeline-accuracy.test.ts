import { describe, expect, it } from 'vitest';
import { generateSurvey, type DemoSurveyKind, type SurveyOptions } from '../../demo/index.js';
import { evaluateDetections, type Evaluation } from '../../demo/evaluate.js';
import { photogrammetricLike, toUsSurveyFeet, unclassified } from '../../demo/variants.js';
import { tally } from '../../lib/pipeline.js';
import { bufferSource } from '../../lib/io/sources.js';

// Behaviour tests: the whole pipeline on our invented surveys, scored against the
// scenes' own truth. The thresholds are our own targets (set a margin below what the
// pipeline reached when they were written), not outside facts; they guard against regressions.

const surveys = new Map<string, ReturnType<typeof generateSurvey>>();
async function score(kind: DemoSurveyKind, opts: SurveyOptions, variant?: (b: Uint8Array) => Promise<Uint8Array>, unitM = 1): Promise<Evaluation> {
  const key = `${kind}:${JSON.stringify(opts)}`;
  if (!surveys.has(key)) surveys.set(key, generateSurvey(kind, { seed: 21, ...opts }));
  const { las, truth } = surveys.get(key)!;
  const bytes = variant ? await variant(las) : las;
  const r = await tally([bufferSource(bytes, `${kind}.las`)]);
  const c = r.trees.columns;
  // Tops come back in file CRS units; the truth is in metres.
  const x = Float64Array.from(c.x, (v) => v * unitM), y = Float64Array.from(c.y, (v) => v * unitM);
  const e = evaluateDetections(truth, { x, y, heightM: c.height_m, crownAreaM2: c.crown_area_m2, count: r.trees.count });
  if (process.env.CROWNTALLY_SHOW_SCORES) console.log(kind, variant?.name ?? 'lidar', JSON.stringify({ ...e, truthOfDetection: undefined }));
  return e;
}

const PARK: SurveyOptions = { widthM: 130, heightM: 110 };

describe('pipeline on the invented surveys (behaviour)', () => {
  it('finds the park trees with good heights and crown areas, in metres and in US survey feet', async () => {
    const m = await score('park', PARK);
    expect(m.recall).toBeGreaterThan(0.9);
    expect(m.precision).toBeGreaterThan(0.85);
    expect(m.heightRmseM).toBeLessThan(1.5);
    expect(m.medianCrownAreaErrorFraction).toBeLessThan(0.25);
    // NIST: 1 US survey foot = 1200/3937 m. The same trees must come out of the feet survey.
    const ft = await score('park', PARK, toUsSurveyFeet, 1200 / 3937);
    expect(Math.abs(ft.matched - m.matched)).toBeLessThanOrEqual(1);
    expect(Math.abs(ft.falsePositives - m.falsePositives)).toBeLessThanOrEqual(1);
    expect(Math.abs(ft.heightRmseM - m.heightRmseM)).toBeLessThan(0.1);
    expect(Math.abs(ft.medianCrownAreaErrorFraction - m.medianCrownAreaErrorFraction)).toBeLessThan(0.03);
  }, 60000);

  it('finds the park trees without classes and from a top-surface colour cloud', async () => {
    for (const v of [unclassified, photogrammetricLike]) {
      const e = await score('park', PARK, (b) => v(b));
      expect(e.recall).toBeGreaterThan(0.9);
      expect(e.precision).toBeGreaterThan(0.8);
      expect(e.heightRmseM).toBeLessThan(1.5);
    }
  }, 60000);

  it('separates orchard trees in rows and most crowns of a closed woodland', async () => {
    const o = await score('orchard', { widthM: 70, heightM: 50 });
    expect(o.recall).toBeGreaterThan(0.95);
    expect(o.precision).toBeGreaterThan(0.9);
    expect(o.heightRmseM).toBeLessThan(0.5);
    const c = await score('canopy', { widthM: 70, heightM: 70 });
    expect(c.recall).toBeGreaterThan(0.6);
    expect(c.precision).toBeGreaterThan(0.8);
  }, 60000);
});
