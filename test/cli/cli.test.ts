/**
 * The command line end to end: `crowntally inspect`, `crowntally tally` and
 * `--help`, run as a child process on the compiled bin, with the outputs read
 * back by readers outside the project (papaparse, geotiff.js,
 * @placemarkio/check-geojson, proj4 with the file's own WKT record, and
 * Debian python3-pyproj for geodesic areas).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { check } from '@placemarkio/check-geojson';
import { fromArrayBuffer } from 'geotiff';
import Papa from 'papaparse';
import proj4 from 'proj4';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli, ensureBuilt, ROOT, type CliRun as Run } from '../built.js';
import { CAUTION } from '../../lib/export/caution.js';
import { fileSource } from '../../lib/node/file-source.js';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import { tally } from '../../lib/pipeline.js';
import type { TallyResult } from '../../lib/result.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const FIXTURES = path.resolve(ROOT, '../shared/fixtures/laz-pairs');
const AUTZEN_LAZ = path.join(FIXTURES, 'autzen_trim.laz');
const AUTZEN_LAS = path.join(FIXTURES, 'autzen_trim.las');
const PY = '/usr/bin/python3';



/** Contract: exit 2 with exactly one stderr line, starting `error:`, and no stack trace. */
function expectBadInput(r: Run): string {
  expect(r.code).toBe(2);
  const lines = r.stderr.split('\n').filter((l) => l.length > 0);
  expect(lines).toHaveLength(1);
  expect(lines[0]).toMatch(/^error: /);
  expect(r.stderr).not.toMatch(/\n\s+at /);
  return lines[0]!;
}

/** Header fields of a LAS 1.2 file at the offsets of ASPRS LAS Specification 1.2 (public header block). */
function lasHeader(file: string) {
  const b = readFileSync(file);
  return {
    b,
    headerSize: b.readUInt16LE(94),
    offsetToPoints: b.readUInt32LE(96),
    vlrCount: b.readUInt32LE(100),
    pointFormat: b.readUInt8(104),
    recordLength: b.readUInt16LE(105),
    pointCount: b.readUInt32LE(107),
    maxX: b.readDoubleLE(179), minX: b.readDoubleLE(187),
    maxY: b.readDoubleLE(195), minY: b.readDoubleLE(203),
    maxZ: b.readDoubleLE(211), minZ: b.readDoubleLE(219),
  };
}

/** Class and return-number counts of the LAS twin, decoded here from the raw records (ASPRS LAS 1.2: formats 0-5, byte 14 bits 0-2 return number, byte 15 bits 0-4 class). */
function lasCounts(file: string): { classes: Record<string, number>; returns: Record<string, number>; firstReturns: number } {
  const h = lasHeader(file);
  const classes: Record<string, number> = {}, returns: Record<string, number> = {};
  let firstReturns = 0;
  for (let i = 0; i < h.pointCount; i++) {
    const o = h.offsetToPoints + i * h.recordLength;
    const ret = h.b[o + 14]! & 7;
    const cls = h.b[o + 15]! & 31;
    classes[cls] = (classes[cls] ?? 0) + 1;
    returns[ret] = (returns[ret] ?? 0) + 1;
    if (ret === 1) firstReturns++;
  }
  return { classes, returns, firstReturns };
}

/** The OGC WKT record (LASF_Projection 2112) the file carries, read per ASPRS LAS 1.2 (VLR header 54 bytes). */
function lasWkt(file: string): string {
  const h = lasHeader(file);
  let off = h.headerSize;
  for (let i = 0; i < h.vlrCount; i++) {
    const user = h.b.toString('latin1', off + 2, off + 18).replace(/\0.*$/s, '');
    const id = h.b.readUInt16LE(off + 18);
    const len = h.b.readUInt16LE(off + 20);
    if (user === 'LASF_Projection' && id === 2112) return h.b.toString('latin1', off + 54, off + 54 + len).replace(/\0.*$/s, '');
    off += 54 + len;
  }
  throw new Error('no WKT record in the fixture');
}

/**
 * RFC 7946 section 3.1.6: rings closed, exteriors counter-clockwise and holes clockwise
 * (sign of the shoelace sum in lon/lat). Returns how many rings and holes were checked.
 */
function checkWinding(fc: GeoJSON.FeatureCollection): { rings: number; holes: number } {
  let rings = 0, holes = 0;
  for (const f of fc.features) {
    const g = f.geometry;
    const polys = g.type === 'Polygon' ? [g.coordinates] : g.type === 'MultiPolygon' ? g.coordinates : [];
    expect(polys.length).toBeGreaterThan(0);
    for (const poly of polys) {
      poly.forEach((ring, k) => {
        expect(ring[0]).toEqual(ring[ring.length - 1]);
        let s = 0;
        for (let i = 0; i + 1 < ring.length; i++) s += (ring[i]![0]! - ring[0]![0]!) * (ring[i + 1]![1]! - ring[0]![1]!) - (ring[i + 1]![0]! - ring[0]![0]!) * (ring[i]![1]! - ring[0]![1]!);
        if (k === 0) expect(s).toBeGreaterThan(0); else { expect(s).toBeLessThan(0); holes++; }
        rings++;
      });
    }
  }
  return { rings, holes };
}

let work: string;
beforeAll(() => {
  ensureBuilt();
  work = mkdtempSync(path.join(tmpdir(), 'crowntally-cli-'));
});
afterAll(() => { if (work) rmSync(work, { recursive: true, force: true }); });

describe('crowntally inspect', () => {
  it('--json on autzen_trim.laz reports the header, CRS, classes, returns and density level', () => {
    const r = cli('inspect', AUTZEN_LAZ, '--json');
    expect(r.code).toBe(0);
    const o = JSON.parse(r.stdout);
    const h = lasHeader(AUTZEN_LAS);
    // Fixture NOTICE.md / ASPRS LAS 1.2 header: 110000 points, version 1.2, point format 3.
    expect(o.points).toBe(110000);
    expect(o.points).toBe(h.pointCount);
    expect(o.version).toBe('1.2');
    expect(o.pointFormat).toBe(3);
    expect(o.pointFormat).toBe(h.pointFormat);
    // Bounds as the LAS header stores them (ASPRS LAS 1.2, max/min X Y Z doubles at bytes 179-226).
    expect(o.bounds.minX).toBeCloseTo(h.minX, 6);
    expect(o.bounds.maxX).toBeCloseTo(h.maxX, 6);
    expect(o.bounds.minY).toBeCloseTo(h.minY, 6);
    expect(o.bounds.maxY).toBeCloseTo(h.maxY, 6);
    expect(o.bounds.minZ).toBeCloseTo(h.minZ, 6);
    expect(o.bounds.maxZ).toBeCloseTo(h.maxZ, 6);
    // ProjectedCSType 32767 (user-defined): no EPSG code; linear unit 9002 = international foot, 0.3048 m exactly (NIST).
    expect(o.crs.epsg).toBeNull();
    expect(o.crs.unitM).toBe(0.3048);
    // Counts decoded here from the LAS twin's raw records (ASPRS LAS 1.2 bit fields).
    const twin = lasCounts(AUTZEN_LAS);
    expect(o.classes).toEqual(twin.classes);
    expect(o.returns).toEqual(twin.returns);
    expect(o.firstReturns).toBe(twin.firstReturns);
    // Density: first returns over the area the read-out names; over the header's box it is
    // about 1.6 per m2 (fixture NOTICE.md), over occupied 2 m cells higher (CHECKS.md: about 2.5).
    const boxM2 = (h.maxX - h.minX) * (h.maxY - h.minY) * 0.3048 * 0.3048;
    expect(twin.firstReturns / boxM2).toBeCloseTo(1.61, 1);
    expect(o.firstReturnDensityPerM2).toBeCloseTo(twin.firstReturns / o.densityAreaM2, 9);
    expect(o.firstReturnDensityPerM2).toBeGreaterThan(2.3);
    expect(o.firstReturnDensityPerM2).toBeLessThan(2.7);
    // USGS Lidar Base Specification (from memory): QL2 needs at least 2 first returns per m2, QL1 8.
    expect(o.qualityLevel).toBe('QL2 by density');
  });

  it('--json on the LAS twin gives the read-out of the LAZ file (same points, fixture NOTICE.md)', () => {
    const laz = JSON.parse(cli('inspect', AUTZEN_LAZ, '--json').stdout);
    const las = JSON.parse(cli('inspect', AUTZEN_LAS, '--json').stdout);
    expect(las.kind).toBe('las');
    expect({ ...las, name: 0, kind: 0 }).toEqual({ ...laz, name: 0, kind: 0 });
  });

  it('plain text output names the CRS unit and the level', () => {
    const r = cli('inspect', AUTZEN_LAZ);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/points\s+110,000/);
    expect(r.stdout).toMatch(/international foot \(0\.3048 m\)/);
    expect(r.stdout).toMatch(/QL2 by density/);
  });

  it('a text file of garbage that is not XYZ: exit 2, one error line', () => {
    const f = path.join(work, 'garbage.txt');
    writeFileSync(f, 'hello world\nthis is not a point cloud\n;;;; ### @@@\nfoo,bar,baz\n'.repeat(20));
    expectBadInput(cli('inspect', f));
    expectBadInput(cli('tally', f, '--out', path.join(work, 'garbage-out')));
  });

  it('a truncated LAS: exit 2, one error line', () => {
    const f = path.join(work, 'truncated.las');
    // Header and VLRs intact, point records cut after a few hundred bytes.
    const h = lasHeader(AUTZEN_LAS);
    writeFileSync(f, h.b.subarray(0, h.offsetToPoints + 700));
    expectBadInput(cli('inspect', f));
    writeFileSync(f, h.b.subarray(0, 150)); // cut inside the public header
    expectBadInput(cli('inspect', f));
  });

  it('a missing file and an unknown option: exit 2, one error line', () => {
    const line = expectBadInput(cli('inspect', path.join(work, 'no-such-file.laz')));
    expect(line).toContain('no-such-file.laz');
    expect(expectBadInput(cli('inspect', AUTZEN_LAZ, '--bogus'))).toContain('--bogus');
    expect(expectBadInput(cli('tally', AUTZEN_LAZ, '--out', work, '--cell-size', 'abc'))).toContain('--cell-size');
    expectBadInput(cli('tally', AUTZEN_LAZ)); // no --out
    expectBadInput(cli('frobnicate'));
  });
});

describe('crowntally tally on autzen_trim.laz', () => {
  let out: string;
  let run: Run;
  let lib: TallyResult;

  beforeAll(async () => {
    out = path.join(work, 'autzen');
    run = cli('tally', AUTZEN_LAZ, '--out', out, '--cell-size', '2', '--workers', '1');
    lib = await tally([await fileSource(AUTZEN_LAZ)], { options: { cellSizeM: 2 }, lazPerf: nodeLazPerf() });
  });

  it('exits 0 and writes the four files', () => {
    expect(run.code, run.stderr).toBe(0);
    for (const f of ['trees.csv', 'trees.geojson', 'chm.tif', 'summary.json']) expect(existsSync(path.join(out, f))).toBe(true);
    expect(lib.trees.count).toBeGreaterThan(20);
  });

  it('trees.geojson is valid RFC 7946 with right-hand rings and one feature per tree', () => {
    const text = readFileSync(path.join(out, 'trees.geojson'), 'utf8');
    const fc = check(text) as GeoJSON.FeatureCollection; // RFC 7946 via @placemarkio/check-geojson (throws when invalid)
    expect(fc.type).toBe('FeatureCollection');
    expect((fc as unknown as Record<string, unknown>).crs).toBeUndefined(); // RFC 7946 section 4: no crs member
    expect(fc.features).toHaveLength(lib.trees.count);
    const { rings } = checkWinding(fc);
    expect(rings).toBeGreaterThanOrEqual(fc.features.length);
  });

  it('every crown polygon has the geodesic area of its crown_area_m2 within 0.5% (python3-pyproj Geod WGS84)', () => {
    const file = path.join(out, 'trees.geojson');
    const fc = JSON.parse(readFileSync(file, 'utf8')) as GeoJSON.FeatureCollection;
    const r = spawnSync(PY, [path.join(ROOT, 'test/reference/geod_area.py'), file], { encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const areas = JSON.parse(r.stdout) as Array<{ area: number }>;
    expect(areas).toHaveLength(fc.features.length);
    fc.features.forEach((f, i) => {
      const want = f.properties!.crown_area_m2 as number;
      // Debian python3-pyproj Geod(ellps='WGS84'): geodesic polygon area (positive for counter-clockwise rings).
      expect(Math.abs(areas[i]!.area - want) / want).toBeLessThan(0.005);
    });
  });

  it('lon/lat of each tree goes back to its x/y within 1 cm through proj4 and the file\'s own WKT', () => {
    const fc = JSON.parse(readFileSync(path.join(out, 'trees.geojson'), 'utf8')) as GeoJSON.FeatureCollection;
    // The WKT record of the LAS twin, read here, not the definition the library built from GeoKeys.
    const toFile = proj4('+proj=longlat +datum=WGS84 +no_defs', lasWkt(AUTZEN_LAS));
    for (const f of fc.features) {
      const p = f.properties!;
      const [x, y] = toFile.forward([p.lon as number, p.lat as number]);
      // Feet to metres: international foot, 0.3048 m (NIST).
      expect(Math.hypot(x! - (p.x as number), y! - (p.y as number)) * 0.3048).toBeLessThan(0.01);
    }
  });

  it('trees.csv parses (papaparse, RFC 4180) into the GeoJSON properties and the library table', () => {
    const csv = readFileSync(path.join(out, 'trees.csv'), 'utf8');
    expect(csv.endsWith('\r\n')).toBe(true); // RFC 4180 section 2: CRLF line ends
    const parsed = Papa.parse<Record<string, number | null>>(csv, { header: true, dynamicTyping: true, skipEmptyLines: true });
    expect(parsed.errors).toEqual([]);
    const fc = JSON.parse(readFileSync(path.join(out, 'trees.geojson'), 'utf8')) as GeoJSON.FeatureCollection;
    expect(parsed.data).toHaveLength(fc.features.length);
    const fields = parsed.meta.fields!;
    expect(fields.slice(0, 5)).toEqual(['tree_id', 'x', 'y', 'lon', 'lat']);
    parsed.data.forEach((row, i) => {
      const props = fc.features[i]!.properties!;
      for (const k of fields) expect([k, row[k]]).toEqual([k, props[k] ?? null]);
      expect(row.tree_id).toBe(lib.trees.columns.tree_id[i]);
      expect(row.height_m).toBeCloseTo(lib.trees.columns.height_m[i]!, 2);
      expect(row.crown_area_m2).toBeCloseTo(lib.trees.columns.crown_area_m2[i]!, 2);
      expect(row.x).toBeCloseTo(lib.trees.columns.x[i]!, 3);
    });
  });

  it('chm.tif (geotiff.js) has the size, origin, pixel size, GeoKeys and values of the library CHM', async () => {
    const buf = readFileSync(path.join(out, 'chm.tif'));
    const tiff = await fromArrayBuffer(buf.buffer.slice(buf.byteOffset, buf.byteOffset + buf.byteLength) as ArrayBuffer);
    const image = await tiff.getImage();
    const g = lib.chm;
    expect(image.getWidth()).toBe(g.width);
    expect(image.getHeight()).toBe(g.height);
    // OGC GeoTIFF 1.1: ModelTiepoint (0,0) -> (originX, originY), ModelPixelScale (cell, cell) in CRS units (feet here).
    expect(image.getOrigin()).toEqual([g.originX, g.originY, 0]);
    expect(image.getResolution()).toEqual([g.cellSize, -g.cellSize, 0]);
    expect(g.cellSize).toBeCloseTo(2 / 0.3048, 9); // 2 m in international feet (NIST)
    const keys = image.getGeoKeys()!;
    // The LAS GeoKeys carried over: ProjectedCSType 32767 (user-defined), ProjLinearUnits 9002 (foot), OGC GeoTIFF 1.1.
    expect(keys.ProjectedCSTypeGeoKey).toBe(32767);
    expect(keys.ProjLinearUnitsGeoKey).toBe(9002);
    const [band] = (await image.readRasters()) as unknown as [Float32Array];
    expect(band.length).toBe(g.data.length);
    let finite = 0;
    for (let i = 0; i < g.data.length; i++) {
      if (Number.isNaN(g.data[i])) expect(Number.isNaN(band[i])).toBe(true);
      else { expect(band[i]).toBe(g.data[i]); finite++; }
    }
    expect(finite).toBeGreaterThan(g.data.length / 2);
  });

  it('summary.json holds the caution, the options with the cell size resolved and the read-out', () => {
    const s = JSON.parse(readFileSync(path.join(out, 'summary.json'), 'utf8'));
    expect(s.caution).toBe(CAUTION);
    expect(s.options.cellSizeM).toBe(2);
    expect(s.options.minHeightM).toBe(lib.options.minHeightM);
    expect(s.survey.points).toBe(110000);
    expect(s.survey.crs.unitM).toBe(0.3048);
    expect(s.summary.treeCount).toBe(lib.trees.count);
    expect(s.outputs.map((o: { file: string }) => o.file).sort()).toEqual(['chm.tif', 'summary.json', 'trees.csv', 'trees.geojson']);
  });

  it('without --cell-size the summary records the cell size chosen from density', () => {
    const dir = path.join(work, 'autzen-auto');
    const r = cli('tally', AUTZEN_LAZ, '--out', dir, '--workers', '1');
    expect(r.code, r.stderr).toBe(0);
    const s = JSON.parse(readFileSync(path.join(dir, 'summary.json'), 'utf8'));
    expect(typeof s.options.cellSizeM).toBe('number');
    expect(s.options.cellSizeM).toBeGreaterThan(0);
  });

  it('the same file and options twice give byte-identical outputs (stable tree ids)', () => {
    const dir = path.join(work, 'autzen-again');
    const again = cli('tally', AUTZEN_LAZ, '--out', dir, '--cell-size', '2', '--workers', '1');
    expect(again.code, again.stderr).toBe(0);
    for (const f of ['trees.csv', 'trees.geojson', 'chm.tif', 'summary.json']) {
      expect(readFileSync(path.join(dir, f)).equals(readFileSync(path.join(out, f))), f).toBe(true);
    }
  });
});

describe('crowntally tally --workers and --tile', () => {
  it('two decoding threads, or 100 m tiles, write the trees.csv of a single-thread whole run', () => {
    const base = path.join(work, 'autzen-base');
    expect(cli('tally', AUTZEN_LAZ, '--out', base, '--cell-size', '2', '--workers', '1').code).toBe(0);
    const pooled = path.join(work, 'autzen-pool');
    const p = cli('tally', AUTZEN_LAZ, '--out', pooled, '--cell-size', '2', '--workers', '2');
    expect(p.code, p.stderr).toBe(0);
    expect(readFileSync(path.join(pooled, 'trees.csv')).equals(readFileSync(path.join(base, 'trees.csv')))).toBe(true);
    const tiled = path.join(work, 'autzen-tiles');
    const t = cli('tally', AUTZEN_LAZ, '--out', tiled, '--cell-size', '2', '--workers', '1', '--tile', '100');
    expect(t.code, t.stderr).toBe(0);
    expect(t.stderr).toMatch(/processed in \d+ tiles/);
    // Positions are written to 1/1000 ft, so the tiles' float rounding (1e-10 ft) does not show.
    expect(readFileSync(path.join(tiled, 'trees.csv'), 'utf8')).toBe(readFileSync(path.join(base, 'trees.csv'), 'utf8'));
    expectBadInput(cli('tally', AUTZEN_LAZ, '--out', tiled, '--tile', '5'));
    expectBadInput(cli('tally', AUTZEN_LAZ, '--out', tiled, '--workers', '1.5'));
  });
});

describe('crowntally demo', () => {
  it('writes the invented park survey and its four outputs, the same bytes each time', () => {
    const a = path.join(work, 'demo-a'), b = path.join(work, 'demo-b');
    const r = cli('demo', '--out', a, '--workers', '1');
    expect(r.code, r.stderr).toBe(0);
    expect(cli('demo', '--out', b, '--workers', '1').code).toBe(0);
    for (const f of ['demo-park.las', 'trees.csv', 'trees.geojson', 'chm.tif', 'summary.json']) {
      expect(readFileSync(path.join(a, f)).equals(readFileSync(path.join(b, f))), f).toBe(true);
    }
    const fc = check(readFileSync(path.join(a, 'trees.geojson'), 'utf8')) as GeoJSON.FeatureCollection; // RFC 7946 via @placemarkio/check-geojson
    expect(fc.features.length).toBeGreaterThan(10);
    // The park (seed 1) has a crown with a hole: the clockwise branch of the winding rule is exercised here.
    expect(checkWinding(fc).holes).toBeGreaterThan(0);
    const s = JSON.parse(readFileSync(path.join(a, 'summary.json'), 'utf8'));
    expect(s.survey.crs.epsg).toBe(32633);
    expect(s.summary.treeCount).toBe(fc.features.length);
    // The demo file is LAS 1.4 point format 7 (ASPRS LAS 1.4 R15: version bytes 24-25, format byte 104).
    const las = readFileSync(path.join(a, 'demo-park.las'));
    expect([las.toString('latin1', 0, 4), las[24], las[25], las[104]]).toEqual(['LASF', 1, 4, 7]);
    const inspect = JSON.parse(cli('inspect', path.join(a, 'demo-park.las'), '--json').stdout);
    expect(inspect.version).toBe('1.4');
    expect(inspect.pointFormat).toBe(7);
    expectBadInput(cli('demo', '--out', a, '--scene', 'forest'));
  });
});

describe('the caution', () => {
  it('appears in --help, on stderr after a tally, and in summary.json', () => {
    const help = cli('--help');
    expect(help.code).toBe(0);
    // Whitespace-insensitive: the help may wrap lines.
    const flat = (s: string) => s.replace(/\s+/g, ' ');
    expect(flat(help.stdout)).toContain(flat(CAUTION));
    const dir = path.join(work, 'caution');
    const r = cli('tally', path.join(FIXTURES, 'autzen_trim.las'), '--out', dir, '--cell-size', '3', '--workers', '1');
    expect(r.code, r.stderr).toBe(0);
    expect(flat(r.stderr)).toContain(flat(CAUTION));
    expect(JSON.parse(readFileSync(path.join(dir, 'summary.json'), 'utf8')).caution).toBe(CAUTION);
  });
});
