import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { carriedEpsgCodes, epsgBaseGeographic, epsgDefinition, epsgInfo } from '../../lib/crs/epsg.js';
import { makeLonLatTransform, makeTransform } from '../../lib/crs/transform.js';
import { crsFromUserText } from '../../lib/io/crs.js';
import { isCrowntallyError } from '../../lib/errors.js';

const here = path.dirname(fileURLToPath(import.meta.url));

interface RefEntry { code: number; name: string; geographic: boolean; points: [number, number, number, number][] }
// Reference numbers written by test/crs/make-epsg-reference.py from pyproj / PROJ and its EPSG database.
const reference: RefEntry[] = JSON.parse(readFileSync(path.join(here, 'epsg-reference.json'), 'utf8'));

const hasPyproj = spawnSync('/usr/bin/python3', ['-c', 'import pyproj'], { stdio: 'ignore' }).status === 0;

describe('carried EPSG definitions', () => {
  it.skipIf(!hasPyproj)('the stored reference is what pyproj gives today', () => {
    // Source: pyproj/PROJ (Debian python3-pyproj), regenerated here so the stored numbers cannot drift.
    const run = spawnSync('/usr/bin/python3', [path.join(here, 'make-epsg-reference.py')], {
      input: JSON.stringify(carriedEpsgCodes()), encoding: 'utf8', maxBuffer: 1 << 24,
    });
    expect(run.status).toBe(0);
    const fresh: RefEntry[] = JSON.parse(run.stdout);
    expect(fresh.length).toBe(reference.length);
    for (let i = 0; i < fresh.length; i++) {
      expect(fresh[i]!.code).toBe(reference[i]!.code);
      fresh[i]!.points.forEach((p, j) => p.forEach((v, k) => expect(Math.abs(v - reference[i]!.points[j]![k]!)).toBeLessThan(1e-6)));
    }
  });

  it('the reference covers every carried code', () => {
    expect(reference.map((e) => e.code)).toEqual(carriedEpsgCodes());
    expect(carriedEpsgCodes().length).toBeGreaterThan(200);
  });

  it('every carried definition projects like PROJ within 1 cm', () => {
    // Source: pyproj/PROJ with the EPSG dataset (epsg-reference.json), from each code's base geographic CRS.
    const bad: string[] = [];
    for (const e of reference) {
      const info = epsgInfo(e.code)!;
      expect(info, `code ${e.code}`).not.toBeNull();
      expect(info.units === 'deg').toBe(e.geographic);
      if (e.geographic) continue;
      const fwd = makeTransform(epsgBaseGeographic(e.code)!, epsgDefinition(e.code)!);
      for (const [lon, lat, x, y] of e.points) {
        const [px, py] = fwd(lon, lat);
        const unitM = info.units === 'ft' ? 0.3048 : info.units === 'us-ft' ? 1200 / 3937 : 1;
        const errM = Math.hypot(px - x, py - y) * unitM;
        if (!(errM < 0.01)) bad.push(`${e.code} ${e.name}: ${errM.toFixed(4)} m`);
      }
    }
    expect(bad).toEqual([]);
  });

  it('zone numbers in names match PROJ names', () => {
    // Source: EPSG names as pyproj reports them (epsg-reference.json).
    for (const e of reference) {
      const zone = /zone (\d+[NS]?)/.exec(e.name)?.[1];
      if (zone) expect(epsgInfo(e.code)!.name, `code ${e.code}`).toContain(`zone ${zone}`);
    }
  });

  it('EPSG Guidance Note 7-2 Transverse Mercator example: OSGB 1936 to British National Grid', () => {
    // Source: EPSG Guidance Note 7-2, worked example for Transverse Mercator (from memory):
    // 50d30'00"N 0d30'00"E on OSGB 1936 (EPSG:4277) -> E 577274.99 m, N 69740.50 m.
    const fwd = makeTransform(epsgDefinition(4277)!, epsgDefinition(27700)!);
    const [e, n] = fwd(0.5, 50.5);
    expect(Math.abs(e - 577274.99)).toBeLessThan(0.01);
    expect(Math.abs(n - 69740.5)).toBeLessThan(0.01);
  });

  it('round trip lon/lat -> x/y -> lon/lat stays within 1 cm, feet included', () => {
    // common practice: forward then inverse must return the start point.
    const cases: [number, number, number][] = [
      [27700, -1.5, 52.5], [32633, 15.2, 48.1], [32733, 15.2, -33.9], [2227, -122.1, 37.8],
      [2994, -123.07, 44.05], [2236, -80.3, 26.1], [28992, 5.1, 52.1], [3857, 13.4, 52.5], [7856, 151.2, -33.9],
    ];
    for (const [code, lon, lat] of cases) {
      const t = makeLonLatTransform(crsFromUserText(`EPSG:${code}`));
      const [x, y] = t.fromLonLat(lon, lat);
      const [lon2, lat2] = t.toLonLat(x, y);
      const dy = (lat2 - lat) * 111_320;
      const dx = (lon2 - lon) * 111_320 * Math.cos((lat * Math.PI) / 180);
      expect(Math.hypot(dx, dy), `EPSG:${code}`).toBeLessThan(0.01);
    }
  });

  it('coordinates in US survey feet differ from metres by 1200/3937', () => {
    // Source: NIST, US survey foot = 1200/3937 m. California zone 3 in ftUS and in metres share the projection.
    const ft = makeLonLatTransform(crsFromUserText('EPSG:2227')).fromLonLat(-122.1, 37.8);
    const m = makeLonLatTransform(crsFromUserText('EPSG:26943')).fromLonLat(-122.1, 37.8);
    expect(Math.abs(ft[0] * (1200 / 3937) - m[0])).toBeLessThan(0.001);
    expect(Math.abs(ft[1] * (1200 / 3937) - m[1])).toBeLessThan(0.001);
  });

  it('unknown and uncarried CRSs throw with codes and name the --crs option', () => {
    const codeOf = (f: () => unknown): string => {
      try { f(); } catch (e) { if (isCrowntallyError(e)) { expect(e.message).toContain('--crs'); return e.code; } throw e; }
      return 'none';
    };
    expect(epsgDefinition(9999999)).toBeNull();
    expect(codeOf(() => makeLonLatTransform(crsFromUserText('EPSG:3400')))).toBe('CRS_UNSUPPORTED');
    expect(codeOf(() => makeLonLatTransform({ ...crsFromUserText('EPSG:3400'), epsg: null }))).toBe('CRS_UNKNOWN');
  });
});
