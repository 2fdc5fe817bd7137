import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { ASPRS_CLASS_NAMES, QL_DENSITY, ReadoutAccumulator, asprsClassName, qualityLevelByDensity, surveyReadout } from '../../lib/io/readout.js';
import { openPointCloud } from '../../lib/io/open.js';
import { bufferSource } from '../../lib/io/sources.js';
import { openXyz } from '../../lib/io/xyz.js';
import { crsFromUserText, unknownCrs } from '../../lib/io/crs.js';
import type { CrsInfo, LasHeader, PointChunk, PointCloud } from '../../lib/io/types.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const fixtures = path.resolve(here, '../../../shared/fixtures/laz-pairs');
const open = (f: string) => openPointCloud(bufferSource(readFileSync(path.join(fixtures, f)), f));

/** A synthetic cloud over given chunks (header bounds from the points). */
function cloudOf(chunks: PointChunk[], crs: CrsInfo = crsFromUserText('EPSG:32633')): PointCloud {
  const b = { minX: Infinity, minY: Infinity, minZ: 0, maxX: -Infinity, maxY: -Infinity, maxZ: 0 };
  for (const c of chunks) for (let i = 0; i < c.count; i++) {
    b.minX = Math.min(b.minX, c.x[i]!); b.maxX = Math.max(b.maxX, c.x[i]!);
    b.minY = Math.min(b.minY, c.y[i]!); b.maxY = Math.max(b.maxY, c.y[i]!);
  }
  const header = { versionMajor: 1, versionMinor: 4, pointFormat: 7, bounds: b } as LasHeader;
  return { kind: 'las', name: 'synthetic', header, crs, vlrs: [], async *chunks() { yield* chunks; }, async close() {} };
}

/** A regular grid of single-return points, `step` apart, over w x h units. */
function gridChunk(w: number, h: number, step: number, opts: { rgb?: boolean; intensity?: number; gps?: boolean; multi?: boolean } = {}): PointChunk {
  const nx = Math.round(w / step), ny = Math.round(h / step), n = nx * ny;
  const c: PointChunk = {
    count: n, x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n), intensity: new Uint16Array(n).fill(opts.intensity ?? 100),
    returnNumber: new Uint8Array(n).fill(1), numberOfReturns: new Uint8Array(n).fill(1), classification: new Uint8Array(n).fill(2),
    flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n),
  };
  for (let j = 0, k = 0; j < ny; j++) for (let i = 0; i < nx; i++, k++) { c.x[k] = (i + 0.5) * step; c.y[k] = (j + 0.5) * step; }
  if (opts.rgb) { c.red = new Uint16Array(n).fill(5000); c.green = new Uint16Array(n).fill(6000); c.blue = new Uint16Array(n).fill(7000); }
  if (opts.gps) c.gpsTime = new Float64Array(n).fill(1);
  if (opts.multi) { c.returnNumber[0] = 2; c.numberOfReturns[0] = 2; c.numberOfReturns[1] = 2; }
  return c;
}

describe('class names and quality levels', () => {
  it('ASPRS standard classes', () => {
    // Source: ASPRS LAS 1.4 R15, table of ASPRS standard point classes (formats 6-10).
    expect(ASPRS_CLASS_NAMES[2]).toBe('ground');
    expect(ASPRS_CLASS_NAMES[5]).toBe('high vegetation');
    expect(ASPRS_CLASS_NAMES[7]).toBe('low point (noise)');
    expect(ASPRS_CLASS_NAMES[9]).toBe('water');
    expect(ASPRS_CLASS_NAMES[18]).toBe('high noise');
    expect(ASPRS_CLASS_NAMES[22]).toBe('temporal exclusion');
    expect(asprsClassName(40)).toBe('reserved');
    expect(asprsClassName(64)).toBe('user definable');
    expect(asprsClassName(255)).toBe('user definable');
  });

  it('density thresholds of the USGS Lidar Base Specification', () => {
    // Source: USGS Lidar Base Specification, aggregate nominal pulse density (from memory): QL0/QL1 >= 8, QL2 >= 2, QL3 >= 0.5 per m2.
    expect(QL_DENSITY).toEqual({ QL1: 8, QL2: 2, QL3: 0.5 });
    expect(qualityLevelByDensity(8).level).toBe('QL1 by density');
    expect(qualityLevelByDensity(8).note).toMatch(/QL0/);
    expect(qualityLevelByDensity(7.99).level).toBe('QL2 by density');
    expect(qualityLevelByDensity(2).level).toBe('QL2 by density');
    expect(qualityLevelByDensity(1.99).level).toBe('QL3 by density');
    expect(qualityLevelByDensity(0.5).level).toBe('QL3 by density');
    expect(qualityLevelByDensity(0.49).level).toBe('below QL3');
    expect(qualityLevelByDensity(3).note).toMatch(/vertical accuracy/);
  });
});

describe('read-out on synthetic chunks', () => {
  it('density per m2 over occupied 2 m cells, in metres and in feet', async () => {
    // A 100 x 100 grid of points 1 unit apart: 1 point per unit2. common practice: density = count / area.
    const m = await surveyReadout(cloudOf([gridChunk(100, 100, 1)]));
    expect(m.firstReturns).toBe(10_000);
    expect(m.firstReturnDensityPerM2).toBeCloseTo(1, 6);
    expect(m.densityAreaM2).toBe(10_000);
    expect(m.qualityLevel).toBe('QL3 by density');
    // Same grid in international feet (0.3048 m, NIST): 1 point per ft2 = 1 / 0.3048^2 per m2.
    const ft = await surveyReadout(cloudOf([gridChunk(100, 100, 1)], crsFromUserText('EPSG:2994')));
    const cellsFt = 2 / 0.3048;
    const occupied = Math.ceil(100 / cellsFt) ** 2;
    expect(ft.densityAreaM2).toBeCloseTo(occupied * 4, 6);
    expect(ft.firstReturnDensityPerM2).toBeCloseTo(10_000 / (occupied * 4), 6);
    expect(ft.densityArea).toMatch(/bounding box/);
  });

  it('a patchy survey: occupied cells give the density where there are points', async () => {
    const a = gridChunk(20, 20, 0.25);
    const b = gridChunk(20, 20, 0.25);
    for (let i = 0; i < b.count; i++) { b.x[i]! += 180; b.y[i]! += 180; }
    const r = await surveyReadout(cloudOf([a, b]));
    expect(r.firstReturnDensityPerM2).toBeCloseTo(16, 6);
    expect(r.densityAreaM2).toBe(800);
    expect(r.qualityLevel).toBe('QL1 by density');
  });

  it('photogrammetric: single returns with colour and zero intensity; lidar otherwise', async () => {
    const p = await surveyReadout(cloudOf([gridChunk(10, 10, 1, { rgb: true, intensity: 0, gps: true })]));
    expect(p.looksPhotogrammetric).toBe(true);
    expect(p.warnings.join(' ')).toMatch(/photogrammetric/);
    const noTime = await surveyReadout(cloudOf([gridChunk(10, 10, 1, { rgb: true })]));
    expect(noTime.looksPhotogrammetric).toBe(true);
    const single = await surveyReadout(cloudOf([gridChunk(10, 10, 1, { gps: true })]));
    expect(single.looksPhotogrammetric).toBe(false);
    const lidar = await surveyReadout(cloudOf([gridChunk(10, 10, 1, { rgb: true, intensity: 0, multi: true })]));
    expect(lidar.looksPhotogrammetric).toBe(false);
    expect(lidar.returns['2']).toBe(1);
  });

  it('warns of no ground class, no CRS and very low density', async () => {
    const c = gridChunk(10, 10, 1);
    c.classification.fill(1);
    const r = await surveyReadout(cloudOf([c], unknownCrs()));
    expect(r.warnings.some((w) => /no ground class/.test(w))).toBe(true);
    expect(r.warnings.some((w) => /no CRS/.test(w))).toBe(true);
    expect(r.warnings.some((w) => /very low density/.test(w))).toBe(true);
    expect(r.classNames['1']).toBe('unclassified');
  });

  it('the accumulator gives the same read-out chunk by chunk', async () => {
    const a = gridChunk(30, 30, 0.5), b = gridChunk(30, 30, 0.5);
    for (let i = 0; i < b.count; i++) b.x[i]! += 30;
    const cloud = cloudOf([a, b]);
    const acc = new ReadoutAccumulator(cloud);
    acc.add(a); acc.add(b);
    expect(acc.finish()).toEqual(await surveyReadout(cloud));
  });
});

describe('read-out of the fixtures', () => {
  it('autzen_trim: about 1.6 first returns per m2 over the box, about 2.5 over occupied 2 m cells', async () => {
    // Source: shared/fixtures/laz-pairs/NOTICE.md and design/CHECKS.md (1.6 per m2 over its box, about 2.5 over occupied 2 m cells).
    const cloud = await open('autzen_trim.las');
    const acc = new ReadoutAccumulator(cloud);
    for await (const c of cloud.chunks()) acc.add(c);
    const r = acc.finish();
    expect(r.points).toBe(110_000);
    expect(r.version).toBe('1.2');
    expect(r.pointFormat).toBe(3);
    expect(acc.boxDensityPerM2()).toBeGreaterThan(1.5);
    expect(acc.boxDensityPerM2()).toBeLessThan(1.7);
    expect(r.firstReturnDensityPerM2).toBeGreaterThan(2.3);
    expect(r.firstReturnDensityPerM2).toBeLessThan(2.7);
    expect(r.qualityLevel).toBe('QL2 by density');
    expect(r.hasRgb).toBe(true);
    expect(r.hasGpsTime).toBe(true);
    expect(r.looksPhotogrammetric).toBe(false);
    expect(r.crs.unitM).toBe(0.3048);
    expect(Object.values(r.returns).reduce((s, v) => s + v, 0)).toBe(110_000);
    expect(r.firstReturns).toBe(r.returns['1']);
  });

  it('the LAZ twin gives the same read-out as the LAS file', async () => {
    const a = await surveyReadout(await open('autzen_trim.las'));
    const b = await surveyReadout(await open('autzen_trim.laz'));
    expect({ ...b, name: a.name, kind: a.kind }).toEqual(a);
  });

  it('a sparse cloud (point10.las) takes the box density, since occupied cells would floor it at 0.25', async () => {
    // common practice: density = count / area; 925 first returns over the box of the file's header bounds.
    const r = await surveyReadout(await open('point10.las'));
    const b = r.bounds;
    expect(r.firstReturns).toBe(925);
    expect(r.firstReturnDensityPerM2).toBeCloseTo(925 / ((b.maxX - b.minX) * (b.maxY - b.minY)), 9);
    expect(r.densityArea).toMatch(/^bounding box/);
    expect(r.qualityLevel).toBe('below QL3');
  });

  it('an empty file gives an empty read-out without failing', async () => {
    const r = await surveyReadout(await open('no-points-1.3.las'));
    expect(r.points).toBe(0);
    expect(r.firstReturnDensityPerM2).toBe(0);
    expect(r.warnings).toContain('the file holds no points');
  });

  it('a text cloud reports its skipped lines and "text" version', async () => {
    const text = 'x y z r g b\n0 0 1 10 20 30\n1 1 2 10 20 30\nNaN 1 1 1 1 1\n';
    const r = await surveyReadout(await openXyz(bufferSource(new TextEncoder().encode(text), 'a.xyz')));
    expect(r.version).toBe('text');
    expect(r.pointFormat).toBeNull();
    expect(r.skippedLines).toBe(1);
    expect(r.looksPhotogrammetric).toBe(true);
  });
});
