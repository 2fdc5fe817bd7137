/**
 * Processing limits through tally(): surveys that cannot give a tree table
 * must say so, with a typed error or an explicit warning in the result; never
 * a silent table. The scenes are invented (scene.ts); ASPRS class codes per
 * ASPRS LAS Specification 1.4 R15 (2 ground, 5 high vegetation, 7 low noise,
 * 18 high noise).
 */
import { describe, expect, it } from 'vitest';
import { tally } from '../../lib/pipeline.js';
import { bufferSource } from '../../lib/io/sources.js';
import { makeLonLatTransform } from '../../lib/crs/transform.js';
import { crsFromUserText } from '../../lib/io/crs.js';
import { CrowntallyError } from '../../lib/errors.js';
import { lasOf, parkScene } from './scene.js';

const enc = new TextEncoder();
const run = (bytes: Uint8Array, name: string, r: Parameters<typeof tally>[1] = {}) => tally([bufferSource(bytes, name)], r);

async function refusal(p: Promise<unknown>): Promise<CrowntallyError> {
  try { await p; } catch (e) { if (e instanceof CrowntallyError) return e; throw e; }
  throw new Error('expected a typed error, got a result');
}

describe('processing limits', () => {
  it('the invented park gives its two crowns (the baseline the other cases change)', async () => {
    const r = await run(lasOf(parkScene()), 'park.las');
    expect(r.trees.count).toBe(2);
  });

  it('no ground class: the ground filter is used and the result says so', async () => {
    const r = await run(lasOf(parkScene({ groundClass: 1 })), 'noground.las');
    expect(r.warnings.some((w) => /no ground class/.test(w))).toBe(true);
    expect(r.trees.count).toBe(2);
  });

  it('no ground class when the ground class is asked for: NO_GROUND', async () => {
    const e = await refusal(run(lasOf(parkScene({ groundClass: 1 })), 'noground.las', { options: { ground: 'class' } }));
    expect(e.code).toBe('NO_GROUND');
  });

  for (const cls of [7, 18]) {
    it(`every point noise (class ${cls}): EMPTY`, async () => {
      const e = await refusal(run(lasOf(parkScene().map((p) => ({ ...p, cls }))), `noise${cls}.las`));
      expect(e.code).toBe('EMPTY');
    });
  }

  it('a single point: no trees, and warnings saying why', async () => {
    const r = await run(lasOf([{ x: 500000, y: 4000000, z: 100, cls: 2 }]), 'one.las');
    expect(r.trees.count).toBe(0);
    expect(r.warnings.some((w) => /no trees/.test(w))).toBe(true);
    expect(r.warnings.some((w) => /density/.test(w))).toBe(true);
  });

  it('every point at one height: no trees, with the warning', async () => {
    for (const cls of [2, 1]) {
      const r = await run(lasOf(parkScene().map((p) => ({ ...p, z: 100, cls }))), 'flat.las');
      expect(r.trees.count, `class ${cls}`).toBe(0);
      expect(r.warnings.some((w) => /no trees/.test(w)), `class ${cls}`).toBe(true);
    }
  });

  it('XYZ with NaN and Inf lines: those lines are left out and the crowns still found', async () => {
    const pts = parkScene();
    const lines = pts.map((p) => `${p.x.toFixed(3)} ${p.y.toFixed(3)} ${p.z.toFixed(3)} ${p.cls === 2 ? 2 : 1}`);
    const text = 'x y z classification\n' + lines.map((l, i) => (i % 50 === 0 ? `NaN 4000000 100 2\n${l}\n500000 Inf 100 2` : l)).join('\n') + '\n';
    const r = await run(enc.encode(text), 'nan.xyz', { crs: 'EPSG:32633' });
    expect(r.readout.points).toBe(pts.length);
    expect(r.readout.skippedLines).toBe(2 * Math.ceil(pts.length / 50));
    expect(r.trees.count).toBe(2);
  });

  it('a CRS the carried definitions do not know (EPSG:99999): a result with a warning, CRS_UNSUPPORTED when a CRS is required', async () => {
    const bytes = lasOf(parkScene());
    const r = await run(bytes, 'park.las', { crs: 'EPSG:99999' });
    expect(r.warnings.some((w) => /EPSG:99999/.test(w) && /metre/.test(w))).toBe(true);
    const e = await refusal(run(bytes, 'park.las', { crs: 'EPSG:99999', requireCrs: true }));
    expect(e.code).toBe('CRS_UNSUPPORTED');
    // The lon/lat transform refuses it too, rather than placing trees anywhere.
    expect(() => makeLonLatTransform(crsFromUserText('EPSG:99999'))).toThrow(expect.objectContaining({ code: 'CRS_UNSUPPORTED' }));
  });

  it('a CRS text that is not an EPSG code: BAD_OPTIONS', async () => {
    const e = await refusal(run(lasOf(parkScene()), 'park.las', { crs: 'mars-north' }));
    expect(e.code).toBe('BAD_OPTIONS');
  });
});
