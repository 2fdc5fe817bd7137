/**
 * Area of interest: an invented park survey processed whole and limited to a
 * rectangle. The limited run keeps only trees whose tops lie inside the
 * rectangle, and away from the rectangle's edge (more than the widest crown
 * of the whole run inside) it finds the same trees with the same heights as
 * the whole run. The same rectangle given as a WGS 84 lon/lat polygon gives
 * the same trees (common practice: a rectangle and its polygon are the same
 * area).
 */
import proj4 from 'proj4';
import { describe, expect, it } from 'vitest';
import { buildScene, generateSurvey, scanDemo, toPointChunk } from '../../demo/index.js';
import { CrowntallyError } from '../../lib/errors.js';
import { writeLas } from '../../lib/io/las-writer.js';
import { bufferSource } from '../../lib/io/sources.js';
import { validateRequest } from '../../lib/worker/validate.js';
import { tally } from '../../lib/pipeline.js';

// UTM zone 33 north on WGS 84 (EPSG:32633), the demo's CRS, written as the
// standard proj4 definition of a UTM zone (common practice), so the corners'
// lon/lat do not come from the project's own transform.
const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';
const SIZE = { widthM: 120, heightM: 100 };

describe('area of interest', async () => {
  const { las, truth } = generateSurvey('park', { seed: 7, ...SIZE });
  const whole = await tally([bufferSource(las, 'park.las')]);
  // A rectangle over the middle of the park; corners off the 1 mm point lattice so no point sits on an edge.
  const rect = {
    kind: 'rect' as const,
    minX: truth.originX + 25.0004, minY: truth.originY + 20.0004,
    maxX: truth.originX + 95.0004, maxY: truth.originY + 80.0004,
  };
  const part = await tally([bufferSource(las, 'park.las')], { aoi: rect });

  it('keeps only trees whose tops lie inside the rectangle', () => {
    expect(whole.trees.count).toBeGreaterThan(20);
    expect(part.trees.count).toBeGreaterThan(5);
    expect(part.trees.count).toBeLessThan(whole.trees.count);
    expect(part.warnings.some((w) => w.includes('area of interest'))).toBe(true);
    expect(whole.warnings.some((w) => w.includes('area of interest'))).toBe(false);
    const P = part.trees.columns;
    for (let i = 0; i < part.trees.count; i++) {
      expect(P.x[i]!).toBeGreaterThanOrEqual(rect.minX);
      expect(P.x[i]!).toBeLessThan(rect.maxX);
      expect(P.y[i]!).toBeGreaterThanOrEqual(rect.minY);
      expect(P.y[i]!).toBeLessThan(rect.maxY);
    }
  });

  it('gives the trees of the whole run away from the edge', () => {
    const W = whole.trees.columns, P = part.trees.columns;
    let margin = 0;
    for (let i = 0; i < whole.trees.count; i++) margin = Math.max(margin, W.crown_extent_m[i]!);
    expect(margin).toBeGreaterThan(2);
    const half = whole.options.cellSizeM / 2;
    let compared = 0;
    for (let i = 0; i < whole.trees.count; i++) {
      const x = W.x[i]!, y = W.y[i]!;
      if (x < rect.minX + margin || x > rect.maxX - margin || y < rect.minY + margin || y > rect.maxY - margin) continue;
      let best = -1, bd = Infinity;
      for (let j = 0; j < part.trees.count; j++) {
        const d = Math.hypot(x - P.x[j]!, y - P.y[j]!);
        if (d < bd) { bd = d; best = j; }
      }
      expect(bd).toBeLessThanOrEqual(half);
      expect(Math.abs(P.height_m[best]! - W.height_m[i]!)).toBeLessThanOrEqual(0.01);
      expect(Math.abs(P.crown_area_m2[best]! - W.crown_area_m2[i]!)).toBeLessThanOrEqual(0.01);
      compared++;
    }
    expect(compared).toBeGreaterThan(2);
  });

  it('the same rectangle as a lon/lat polygon gives the same trees', async () => {
    const toLonLat = proj4(UTM33, 'WGS84');
    const corners: Array<[number, number]> = [[rect.minX, rect.minY], [rect.maxX, rect.minY], [rect.maxX, rect.maxY], [rect.minX, rect.maxY], [rect.minX, rect.minY]];
    const ring = corners.map(([x, y]) => toLonLat.forward([x, y]));
    expect(ring[0]![0]).toBeGreaterThan(9); // zone 33 is centred on 15 E (common practice)
    const poly = await tally([bufferSource(las, 'park.las')], { aoi: { kind: 'polygon', rings: [ring], lonLat: true } });
    expect(poly.trees.count).toBe(part.trees.count);
    const A = poly.trees.columns, B = part.trees.columns;
    for (let i = 0; i < poly.trees.count; i++) {
      expect(A.x[i]).toBeCloseTo(B.x[i]!, 6);
      expect(A.y[i]).toBeCloseTo(B.y[i]!, 6);
      expect(Number.isNaN(A.height_m[i]!) || Math.abs(A.height_m[i]! - B.height_m[i]!) < 1e-6).toBe(true);
      expect(A.crown_area_m2[i]).toBe(B.crown_area_m2[i]);
    }
  });

  it('a lon/lat vertex out of range is a clear error', async () => {
    const bad = tally([bufferSource(las, 'park.las')], { aoi: { kind: 'polygon', rings: [[[500000, 100], [500100, 100], [500100, 200]]], lonLat: true } });
    await expect(bad).rejects.toBeInstanceOf(CrowntallyError);
    await expect(bad).rejects.toMatchObject({ code: 'BAD_OPTIONS' });
  });

  it('a lon/lat boundary on a survey with no CRS is a typed error', async () => {
    const opts = { seed: 3, widthM: 30, heightM: 30 };
    const scene = buildScene('park', opts);
    const { cloud } = scanDemo(scene, opts);
    const noCrs = writeLas(toPointChunk(cloud, scene), { pointFormat: 6, scale: [0.001, 0.001, 0.001], offset: [Math.round(scene.originX), Math.round(scene.originY), 0] });
    const ring = [[15, 50], [15.001, 50], [15.001, 50.001], [15, 50]];
    const run = tally([bufferSource(noCrs, 'nocrs.las')], { aoi: { kind: 'polygon', rings: [ring], lonLat: true } });
    await expect(run).rejects.toMatchObject({ code: 'CRS_UNKNOWN' });
    await expect(run).rejects.toThrow(/longitude\/latitude/);
  });

  it('worker messages with a malformed area are refused', () => {
    const base = { type: 'tally', id: 1, files: [], names: [], demo: 'park' };
    const ok = validateRequest({ ...base, aoi: { kind: 'polygon', rings: [[[15, 50], [15.1, 50], [15.1, 50.1]]], lonLat: true } });
    expect(ok.type).toBe('tally');
    for (const aoi of [
      { kind: 'polygon', rings: [[[15, 50], [15.1, 50]]] },
      { kind: 'polygon', rings: [[[15, 50], [15.1, 'x'], [15.1, 50.1]]] },
      { kind: 'polygon', rings: [[[15, 50], [15.1, 50], [15.1, 50.1]]], lonLat: 'yes' },
      { kind: 'rect', minX: 0, minY: 0, maxX: Number.NaN, maxY: 1 },
    ]) {
      expect(() => validateRequest({ ...base, aoi })).toThrow(CrowntallyError);
    }
  });
});
