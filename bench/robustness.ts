/**
 * Detection on the second family of invented scenes (test/robustness/scenes.ts):
 * lumpy, leaning, flat-topped and multi-stemmed crowns, street trees and very
 * large trees, clutter (hedges, shrubs, cars, roofs), slopes, densities 3-20
 * per m2, with and without classes. Prints one row per scene and the share of
 * each crown shape that was found.
 *   node dist/bench/robustness.js [scene-name ...]
 * CROWNTALLY_OPTIONS='{"smoothSigmaM":0.5}' runs it with other options.
 */
import { ROBUST_SCENES, scoreScene } from '../test/robustness/scenes.js';
import type { TallyOptions } from '../lib/options.js';

async function main(): Promise<void> {
  const want = process.argv.slice(2);
  const scenes = want.length ? ROBUST_SCENES.filter((s) => want.includes(s.name)) : ROBUST_SCENES;
  const options = process.env['CROWNTALLY_OPTIONS'] ? JSON.parse(process.env['CROWNTALLY_OPTIONS']) as Partial<TallyOptions> : {};
  console.log('scene                      trees  truth  FP   miss  prec   recall  F1     h RMSE m  area err  found by shape');
  const shapes: Record<string, { found: number; of: number }> = {};
  let f1sum = 0;
  for (const spec of scenes) {
    const { trees, truth, ev, byShape, falseBy } = await scoreScene(spec, options);
    f1sum += ev.f1;
    const sh = Object.entries(byShape).map(([k, v]) => { const a = (shapes[k] ??= { found: 0, of: 0 }); a.found += v.found; a.of += v.of; return `${k} ${v.found}/${v.of}`; }).join(', ');
    console.log(`${spec.name.padEnd(26)} ${String(trees).padStart(5)}  ${String(truth).padStart(5)}  ${String(ev.falsePositives).padStart(3)}  ${String(ev.missed).padStart(4)}  ${ev.precision.toFixed(3)}  ${ev.recall.toFixed(3)}   ${ev.f1.toFixed(3)}  ${ev.heightRmseM.toFixed(2).padStart(7)}   ${(ev.medianCrownAreaErrorFraction * 100).toFixed(1).padStart(5)}%   ${sh}; FP near: ${Object.entries(falseBy).map(([k, v]) => `${k} ${v}`).join(', ') || '-'}`);
  }
  console.log(`mean F1 ${(f1sum / scenes.length).toFixed(3)}; found by shape: ${Object.entries(shapes).map(([k, v]) => `${k} ${(v.found / v.of).toFixed(2)}`).join(', ')}`);
}

if (import.meta.url === `file://${process.argv[1]}`) main().catch((e) => { console.error(e); process.exit(1); });
