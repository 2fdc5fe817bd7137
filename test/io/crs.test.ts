import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { GEOKEY_ASCII, GEOKEY_DIRECTORY, GEOKEY_DOUBLES, GeoKey, LINEAR_UNITS, WKT_RECORD, crsFromUserText, crsFromVlrs, unknownCrs } from '../../lib/io/crs.js';
import { makeLonLatTransform, makeTransform } from '../../lib/crs/transform.js';
import type { LasHeader, Vlr } from '../../lib/io/types.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const fixtures = path.resolve(here, '../../../shared/fixtures/laz-pairs');

/** Minimal VLR walk of a LAS file (header fields at the offsets of ASPRS LAS 1.4 R15, table 3). */
function vlrsOf(file: string): { vlrs: Vlr[]; header: LasHeader } {
  const b = readFileSync(path.join(fixtures, file));
  const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const headerSize = dv.getUint16(94, true);
  const n = dv.getUint32(100, true);
  const vlrs: Vlr[] = [];
  let p = headerSize;
  for (let i = 0; i < n; i++) {
    const userId = b.subarray(p + 2, p + 18).toString('latin1').replace(/\0.*$/s, '');
    const recordId = dv.getUint16(p + 18, true), len = dv.getUint16(p + 20, true);
    vlrs.push({ userId, recordId, description: '', dataOffset: p + 54, data: new Uint8Array(b.subarray(p + 54, p + 54 + len)), extended: false });
    p += 54 + len;
  }
  const header = { versionMajor: b[24]!, versionMinor: b[25]!, globalEncoding: dv.getUint16(6, true) } as LasHeader;
  return { vlrs, header };
}

function vlr(recordId: number, data: Uint8Array): Vlr {
  return { userId: 'LASF_Projection', recordId, description: '', dataOffset: 0, data, extended: false };
}
function keyVlrs(entries: [number, number, number, number][], doubles: number[] = [], ascii = ''): Vlr[] {
  const dir = new Uint16Array([1, 1, 0, entries.length, ...entries.flat()]);
  const out = [vlr(GEOKEY_DIRECTORY, new Uint8Array(dir.buffer))];
  if (doubles.length) out.push(vlr(GEOKEY_DOUBLES, new Uint8Array(new Float64Array(doubles).buffer)));
  if (ascii) out.push(vlr(GEOKEY_ASCII, new TextEncoder().encode(ascii)));
  return out;
}
const h12 = { versionMajor: 1, versionMinor: 2, globalEncoding: 0 } as LasHeader;

describe('GeoKey ids and unit codes', () => {
  it('match the standards', () => {
    // Source: ASPRS LAS 1.4 R15 section 2.5 (GeoKeyDirectoryTag 34735, GeoDoubleParamsTag 34736,
    // GeoAsciiParamsTag 34737, OGC WKT record 2112) and OGC GeoTIFF 1.1 (key ids).
    expect([GEOKEY_DIRECTORY, GEOKEY_DOUBLES, GEOKEY_ASCII, WKT_RECORD]).toEqual([34735, 34736, 34737, 2112]);
    expect([GeoKey.ModelType, GeoKey.GeographicType, GeoKey.ProjectedCSType, GeoKey.ProjLinearUnits, GeoKey.VerticalUnits])
      .toEqual([1024, 2048, 3072, 3076, 4099]);
    // Source: NIST (SP 811 / 2019 Federal Register notice): international foot 0.3048 m exactly, US survey foot 1200/3937 m.
    expect(LINEAR_UNITS[9001]!.m).toBe(1);
    expect(LINEAR_UNITS[9002]!.m).toBe(0.3048);
    expect(LINEAR_UNITS[9003]!.m).toBe(1200 / 3937);
    expect(LINEAR_UNITS[9003]!.m).toBeCloseTo(0.3048006096, 10);
  });
});

describe('autzen_trim.las CRS read-out', () => {
  const { vlrs, header } = vlrsOf('autzen_trim.las');
  const crs = crsFromVlrs(vlrs, header);

  it('is a user-defined Lambert conformal conic in international feet with no vertical key', () => {
    // Source: shared/fixtures/laz-pairs/NOTICE.md (ProjectedCSType 32767, unit 9002, no vertical-unit key).
    expect(crs.epsg).toBeNull();
    expect(crs.unitM).toBe(0.3048);
    expect(crs.verticalUnitM).toBe(0.3048);
    expect(crs.unitName).toBe('international foot');
    expect(crs.notes.some((n) => /vertical unit/.test(n) && /horizontal/.test(n))).toBe(true);
    expect(crs.proj4).toMatch(/\+proj=lcc/);
    expect(crs.proj4).toMatch(/\+units=ft/);
    expect(crs.wkt).toMatch(/^PROJCS\["NAD_1983_HARN_Lambert_Conformal_Conic"/);
    expect(crs.geoKeys!.directory[3]).toBe(21);
    expect(crs.geoKeys!.doubles.length).toBe(9);
  });

  it.skipIf(spawnSync('/usr/bin/python3', ['-c', 'import pyproj'], { stdio: 'ignore' }).status !== 0)(
    'the stored PROJ reference is what pyproj gives today', () => {
      // Source: pyproj/PROJ reading the file's WKT (make-crs-reference.py), regenerated so the stored numbers cannot drift.
      const run = spawnSync('/usr/bin/python3', [path.join(here, 'make-crs-reference.py')], { encoding: 'utf8' });
      expect(run.status).toBe(0);
      const fresh = JSON.parse(run.stdout) as { points: number[][] };
      const stored = JSON.parse(readFileSync(path.join(here, 'autzen-crs-reference.json'), 'utf8')) as { points: number[][] };
      fresh.points.forEach((p, i) => p.forEach((v, k) => expect(Math.abs(v - stored.points[i]![k]!)).toBeLessThan(1e-9)));
    });

  it('projects like PROJ reading the file WKT, within 1 cm', () => {
    // Source: pyproj/PROJ from the file's own WKT record (autzen-crs-reference.json, make-crs-reference.py).
    const ref = JSON.parse(readFileSync(path.join(here, 'autzen-crs-reference.json'), 'utf8')) as { points: number[][] };
    const toGeog = makeTransform(crs.proj4!, '+proj=longlat +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +no_defs');
    for (const [x, y, lon, lat] of ref.points as [number, number, number, number][]) {
      const [l, b] = toGeog(x, y);
      const errM = Math.hypot((l - lon) * 111_320 * Math.cos((lat * Math.PI) / 180), (b - lat) * 111_320);
      expect(errM).toBeLessThan(0.01);
    }
    // The same via the WKT as proj4 reads it, and via the carried EPSG:2994 (same parameters, feet).
    const t = makeLonLatTransform(crs);
    const [x0, y0] = ref.points[2]!;
    const [lon, lat] = t.toLonLat(x0!, y0!);
    const [x2, y2] = makeLonLatTransform(crsFromUserText('EPSG:2994')).fromLonLat(lon, lat);
    expect(Math.hypot(x2 - x0!, y2 - y0!) * 0.3048).toBeLessThan(0.01);
  });
});

describe('WKT only (LAS 1.4 with the WKT global-encoding bit)', () => {
  it('reads unit and projection from the WKT record alone, agreeing with PROJ within 1 cm', () => {
    // Source: ASPRS LAS 1.4 R15 (global encoding bit 4 = WKT); reference numbers from pyproj on the same WKT.
    const { vlrs } = vlrsOf('autzen_trim.las');
    const wktOnly = vlrs.filter((v) => v.recordId === WKT_RECORD && v.userId === 'LASF_Projection');
    const c = crsFromVlrs(wktOnly, { versionMajor: 1, versionMinor: 4, globalEncoding: 16 } as LasHeader);
    expect(c.unitM).toBe(0.3048);
    expect(c.notes.join(' ')).toMatch(/from the WKT/);
    expect(c.geoKeys).toBeUndefined();
    const ref = JSON.parse(readFileSync(path.join(here, 'autzen-crs-reference.json'), 'utf8')) as { points: number[][] };
    const toGeog = makeTransform(c.proj4!, '+proj=longlat +ellps=GRS80 +towgs84=0,0,0,0,0,0,0 +no_defs');
    for (const [x, y, lon, lat] of ref.points as [number, number, number, number][]) {
      const [l, b] = toGeog(x, y);
      expect(Math.hypot((l - lon) * 111_320 * Math.cos((lat * Math.PI) / 180), (b - lat) * 111_320)).toBeLessThan(0.01);
    }
  });
});

describe('other fixtures and synthetic keys', () => {
  it('point10.las: EPSG 26910 in metres', () => {
    // Source: the file's own GeoKeys and WKT ("NAD83 / UTM zone 10N", EPSG 26910, unit 9001).
    const { vlrs, header } = vlrsOf('point10.las');
    const c = crsFromVlrs(vlrs, header);
    expect(c.epsg).toBe(26910);
    expect(c.unitM).toBe(1);
    expect(c.proj4).toMatch(/\+proj=utm \+zone=10 /);
  });

  it('1815.las: EPSG 6580 with vertical unit key 9001', () => {
    const { vlrs, header } = vlrsOf('1815.las');
    const c = crsFromVlrs(vlrs, header);
    expect(c.epsg).toBe(6580);
    expect(c.verticalUnitM).toBe(1);
    expect(c.notes.some((n) => /no vertical unit key/.test(n))).toBe(false);
  });

  it('a file with no CRS records is unknown', () => {
    const { vlrs, header } = vlrsOf('extrabytes.las');
    const c = crsFromVlrs(vlrs, header);
    expect(c.epsg).toBeNull();
    expect(c.proj4).toBeNull();
    expect(() => makeLonLatTransform(c)).toThrow(/--crs/);
  });

  it('separate vertical unit: metres horizontally, US survey feet vertically', () => {
    const c = crsFromVlrs(keyVlrs([[1024, 0, 1, 1], [3072, 0, 1, 32633], [3076, 0, 1, 9001], [4099, 0, 1, 9003]]), h12);
    expect(c.unitM).toBe(1);
    expect(c.verticalUnitM).toBe(1200 / 3937);
  });

  it('a unit key overriding the EPSG unit is honoured with a note', () => {
    const c = crsFromVlrs(keyVlrs([[1024, 0, 1, 1], [3072, 0, 1, 26943], [3076, 0, 1, 9003]]), h12);
    expect(c.unitM).toBe(1200 / 3937);
    expect(c.proj4).toMatch(/\+units=us-ft/);
    expect(c.notes.join(' ')).toMatch(/differs/);
  });

  it('a user-defined Transverse Mercator from keys matches the carried British National Grid', () => {
    // Keys of OGC GeoTIFF 1.1: CT 1 TransverseMercator; Airy ellipsoid 7001; parameters of EPSG:27700.
    const d = [49, -2, 0.9996012717, 400000, -100000];
    const c = crsFromVlrs(keyVlrs([[1024, 0, 1, 1], [2048, 0, 1, 4277], [3072, 0, 1, 32767], [3075, 0, 1, 1], [3076, 0, 1, 9001],
      [3081, 34736, 1, 0], [3080, 34736, 1, 1], [3092, 34736, 1, 2], [3082, 34736, 1, 3], [3083, 34736, 1, 4]], d), h12);
    const a = makeLonLatTransform(c).fromLonLat(-1.5, 52.5);
    const b = makeLonLatTransform(crsFromUserText('EPSG:27700')).fromLonLat(-1.5, 52.5);
    expect(Math.hypot(a[0] - b[0], a[1] - b[1])).toBeLessThan(0.001);
  });

  it('a truncated key directory does not throw', () => {
    const dir = new Uint16Array([1, 1, 0, 50, 3072, 0, 1, 32633]);
    const c = crsFromVlrs([vlr(GEOKEY_DIRECTORY, new Uint8Array(dir.buffer))], h12);
    expect(c.epsg).toBe(32633);
    expect(c.notes.join(' ')).toMatch(/lists 50 keys/);
  });

  it('user text: EPSG codes, uncarried codes and garbage', () => {
    expect(crsFromUserText('epsg:2227').unitM).toBe(1200 / 3937);
    const x = crsFromUserText('EPSG:3400');
    expect(x.proj4).toBeNull();
    expect(x.notes[0]).toMatch(/not among the carried/);
    expect(() => crsFromUserText('Mercator please')).toThrow(/--crs/);
    expect(unknownCrs('text').notes).toEqual(['text']);
  });
});
