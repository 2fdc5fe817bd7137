/**
 * Accuracy on the invented scenes: runs the whole job on each demo survey and
 * its variants and prints detection precision/recall/F1, height RMSE and the
 * median crown-area error against the generator's truth.
 *   node dist/bench/accuracy.js [park|orchard|canopy ...]
 * CROWNTALLY_OPTIONS='{"smoothSigmaM":0.5}' runs it with other options.
 */
import { generateSurvey, type DemoSurveyKind } from '../demo/index.js';
import { evaluateDetections, type Evaluation } from '../demo/evaluate.js';
import { photogrammetricLike, toUsSurveyFeet, unclassified } from '../demo/variants.js';
import { bufferSource } from '../lib/io/sources.js';
import { tally } from '../lib/pipeline.js';
import type { TallyOptions } from '../lib/options.js';
import { nodeLazPerf } from '../lib/node/laz-perf.js';

export interface AccuracyRow { scene: string; variant: string; trees: number; ev: Evaluation }

export async function accuracyOf(kind: DemoSurveyKind, variant: 'as made' | 'unclassified' | 'US survey feet' | 'photogrammetric', seed = 1): Promise<AccuracyRow> {
  const { las, truth } = generateSurvey(kind, { seed });
  const bytes = variant === 'unclassified' ? await unclassified(las) : variant === 'US survey feet' ? await toUsSurveyFeet(las)
    : variant === 'photogrammetric' ? await photogrammetricLike(las) : las;
  const options = process.env['CROWNTALLY_OPTIONS'] ? JSON.parse(process.env['CROWNTALLY_OPTIONS']) as Partial<TallyOptions> : {};
  const r = await tally([bufferSource(bytes, `${kind}.las`)], { lazPerf: nodeLazPerf(), options });
  const t = r.trees;
  const k = r.crs.unitM;
  const ev = evaluateDetections(truth, {
    count: t.count,
    // Truth is in the metre CRS; the feet copy shares its origin scaled by the unit.
    x: t.columns.x.map((v) => v * k), y: t.columns.y.map((v) => v * k),
    heightM: t.columns.height_m, crownAreaM2: t.columns.crown_area_m2,
  });
  return { scene: kind, variant, trees: t.count, ev };
}

async function main(): Promise<void> {
  const kinds = (process.argv.slice(2).length ? process.argv.slice(2) : ['park', 'orchard', 'canopy']) as DemoSurveyKind[];
  const variants = ['as made', 'unclassified', 'US survey feet', 'photogrammetric'] as const;
  console.log('scene    variant          trees  truth  prec   recall  F1     h RMSE m  area err');
  for (const k of kinds) for (const v of variants) {
    const { trees, ev } = await accuracyOf(k, v);
    console.log(`${k.padEnd(8)} ${v.padEnd(16)} ${String(trees).padStart(5)}  ${String(ev.matched + ev.missed).padStart(5)}  ${ev.precision.toFixed(3)}  ${ev.recall.toFixed(3)}   ${ev.f1.toFixed(3)}  ${ev.heightRmseM.toFixed(2).padStart(7)}   ${(ev.medianCrownAreaErrorFraction * 100).toFixed(1)}%`);
  }
}

if (import.meta.url === `file://${process.argv[1]}`) main().catch((e) => { console.error(e); process.exit(1); });
