import { describe, expect, it } from 'vitest';
import { generateSurvey } from '../../demo/index.js';
import { photogrammetricLike, readSurvey, toUsSurveyFeet, unclassified } from '../../demo/variants.js';
import { openPointCloud } from '../../lib/io/open.js';
import { bufferSource } from '../../lib/io/sources.js';

const { las } = generateSurvey('park', { seed: 4, widthM: 60, heightM: 50 });

describe('survey variants', async () => {
  const base = await readSurvey(las);

  it('unclassified: every class 1 (or 0), points otherwise unchanged', async () => {
    for (const code of [1, 0] as const) {
      const v = await readSurvey(await unclassified(las, code));
      expect(v.points.count).toBe(base.points.count);
      expect(v.points.classification.every((c) => c === code)).toBe(true);
      expect(v.points.x).toEqual(base.points.x);
      expect(v.points.returnNumber).toEqual(base.points.returnNumber);
    }
  });

  it('toUsSurveyFeet: coordinates in US survey feet and a CRS that says so', async () => {
    const bytes = await toUsSurveyFeet(las);
    const v = await readSurvey(bytes);
    // NIST: 1 US survey foot = 1200/3937 m.
    const ft = 1200 / 3937;
    expect(v.points.count).toBe(base.points.count);
    for (let i = 0; i < v.points.count; i += 97) {
      expect(Math.abs(v.points.x[i]! * ft - base.points.x[i]!)).toBeLessThan(0.002);
      expect(Math.abs(v.points.z[i]! * ft - base.points.z[i]!)).toBeLessThan(0.002);
    }
    expect(v.header.scale[0]).toBe(0.002);
    expect(v.wkt).toContain('US survey foot');
    // The project's CRS read-out must take the unit from the WKT.
    const pc = await openPointCloud(bufferSource(bytes, 'ft.las'));
    expect(pc.crs.unitM).toBeCloseTo(ft, 12);
    // WGS 84 / UTM 33N false easting 500 000 m expressed in US survey feet (common practice: UTM parameters).
    expect(v.wkt).toContain(`"false_easting",${+(500000 / ft).toFixed(6)}`);
  });

  it('photogrammetricLike: format 7, single returns, no intensity, top surface only, denser', async () => {
    const bytes = await photogrammetricLike(las);
    const v = await readSurvey(bytes);
    expect(v.header.pointFormat).toBe(7);
    let firsts = 0, lone = 0;
    for (let i = 0; i < base.points.count; i++) {
      if (base.points.returnNumber[i] !== 1 || base.points.classification[i] === 7) continue;
      if (base.points.classification[i] === 1) lone++; else firsts++;
    }
    expect(lone).toBeGreaterThan(0);
    expect(v.points.count).toBe(2 * firsts + lone);
    expect(v.points.returnNumber.every((r) => r === 1)).toBe(true);
    expect(v.points.numberOfReturns.every((r) => r === 1)).toBe(true);
    expect(v.points.intensity.every((r) => r === 0)).toBe(true);
    expect(v.points.red!.some((r) => r > 0)).toBe(true);
    // No point under the canopy: every point is within 0.3 m (noise) of a first return nearby in height.
    let lowUnder = 0;
    const cell = new Map<string, number>();
    for (let i = 0; i < base.points.count; i++) {
      if (base.points.returnNumber[i] !== 1) continue;
      const k = `${Math.floor(base.points.x[i]!)},${Math.floor(base.points.y[i]!)}`;
      cell.set(k, Math.max(cell.get(k) ?? -Infinity, base.points.z[i]!));
    }
    let laterBelow = 0;
    for (let i = 0; i < base.points.count; i++) if (base.points.returnNumber[i]! > 1) laterBelow++;
    for (let i = 0; i < v.points.count; i += 3) {
      const top = cell.get(`${Math.floor(v.points.x[i]!)},${Math.floor(v.points.y[i]!)}`);
      if (top !== undefined && v.points.z[i]! < top - 8) lowUnder++;
    }
    expect(laterBelow).toBeGreaterThan(1000); // the lidar survey has sub-canopy returns ...
    expect(lowUnder / (v.points.count / 3)).toBeLessThan(0.1); // ... the top-surface cloud keeps few points deep below the local top
  });

  it('refuses a bad density factor', async () => {
    await expect(photogrammetricLike(las, { densityFactor: 0 })).rejects.toMatchObject({ code: 'BAD_OPTIONS' });
  });
});
