import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { check } from '@placemarkio/check-geojson';
import proj4 from 'proj4';
import { describe, expect, it } from 'vitest';
import { treesToGeoJSON, treesToGeoJSONChunks } from '../../lib/export/geojson.js';
import { buildTable, circle, planarArea, type TestTree } from './build-table.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const GEOD_SCRIPT = path.resolve(here, '../reference/geod_area.py');

// CRS definitions written out in PROJ syntax (EPSG:32633 is WGS 84 / UTM zone 33N);
// the feet CRS is a Lambert conformal conic in international feet, like an
// Oregon statewide grid (common practice: state grids in feet).
const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';
const LCC_FT = '+proj=lcc +lat_1=43 +lat_2=45.5 +lat_0=41.75 +lon_0=-120.5 +x_0=400000 +y_0=0 +ellps=GRS80 +towgs84=0,0,0 +units=ft +no_defs';
const FOOT_M = 0.3048; // NIST: international foot = 0.3048 m exactly

function lonLatOf(def: string) {
  const t = proj4(def, 'WGS84');
  return (x: number, y: number) => t.forward([x, y]) as [number, number];
}

function utmTrees(): TestTree[] {
  return [
    { x: 500000, y: 5300000, rings: [{ pts: circle(500000, 5300000, 5) }] },
    // exterior given clockwise in the CRS: the export must turn it round
    { x: 512000.25, y: 5301000.5, rings: [{ pts: circle(512000, 5301000, 4, 24, true) }] },
    // a crown with a gap (hole given counter-clockwise, must come out clockwise)
    { x: 488000, y: 5299000, rings: [{ pts: circle(488000, 5299000, 6, 40) }, { hole: true, pts: circle(488000, 5299000, 1.5, 16) }] },
    // a crown in two parts -> MultiPolygon
    { x: 505000, y: 5305000, rings: [{ pts: circle(505000, 5305000, 3) }, { pts: circle(505010, 5305000, 2.5, 20, true) }] },
  ];
}

function feetTrees(): TestTree[] {
  const fwd = proj4('WGS84', LCC_FT);
  const out: TestTree[] = [];
  for (const [lon, lat, rFt] of [[-123.07, 44.05, 15], [-123.0, 44.1, 22], [-122.95, 44.0, 9]] as const) {
    const [x, y] = fwd.forward([lon, lat]) as [number, number];
    out.push({ x, y, rings: [{ pts: circle(x, y, rFt, 36) }] });
  }
  return out;
}

type Ring = Array<[number, number]>;
function polygonsOf(g: { type: string; coordinates: unknown }): Ring[][] {
  if (g.type === 'Polygon') return [g.coordinates as Ring[]];
  if (g.type === 'MultiPolygon') return g.coordinates as Ring[][];
  return [];
}

function geodesicAreas(geojson: string): Array<{ id: number; area: number; rings: Array<{ hole: boolean; area: number }> }> {
  const dir = mkdtempSync(path.join(tmpdir(), 'crowntally-geod-'));
  const file = path.join(dir, 'trees.geojson');
  writeFileSync(file, geojson);
  const r = spawnSync('/usr/bin/python3', [GEOD_SCRIPT, file], { encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`pyproj reference failed (is Debian python3-pyproj installed?): ${r.stderr}`);
  return JSON.parse(r.stdout);
}

describe('treesToGeoJSON', () => {
  const table = buildTable(utmTrees());
  table.columns.intensity_mean[1] = NaN;
  const toLonLat = lonLatOf(UTM33);
  const text = treesToGeoJSON(table, toLonLat, {
    extra: (i): Record<string, string | boolean> => (i === 0 ? { species: 'Quercus robur', condition: 'fair', notes: 'near the bench', edited: true } : {}),
  });
  const fc = JSON.parse(text);

  it('is valid GeoJSON with no crs member', () => {
    // RFC 7946, checked by @placemarkio/check-geojson (throws on invalid input)
    expect(() => check(text)).not.toThrow();
    expect(fc.type).toBe('FeatureCollection');
    // RFC 7946 section 4: the crs member is gone; positions are WGS 84
    expect('crs' in fc).toBe(false);
    expect(fc.features).toHaveLength(4);
    expect(fc.features.map((f: { geometry: { type: string } }) => f.geometry.type)).toEqual(['Polygon', 'Polygon', 'Polygon', 'MultiPolygon']);
  });

  it('winds exteriors counter-clockwise and holes clockwise, rings closed', () => {
    let holes = 0;
    for (const f of fc.features) {
      for (const poly of polygonsOf(f.geometry)) {
        poly.forEach((ring, k) => {
          // RFC 7946 3.1.6: closed linear rings of four or more positions
          expect(ring.length).toBeGreaterThanOrEqual(4);
          expect(ring[ring.length - 1]).toEqual(ring[0]);
          // RFC 7946 3.1.6 right-hand rule, by the shoelace sign in lon/lat
          const a = planarArea(ring.slice(0, -1));
          if (k === 0) expect(a).toBeGreaterThan(0);
          else { expect(a).toBeLessThan(0); holes++; }
        });
      }
    }
    expect(holes).toBe(1);
  });

  it('writes longitude first and at most 7 decimals', () => {
    // RFC 7946 3.1.1: longitude, latitude; UTM 33N covers 12E-18E (EPSG area of use, from memory)
    const [lon, lat] = fc.features[0].geometry.coordinates[0][0];
    expect(lon).toBeGreaterThan(12);
    expect(lon).toBeLessThan(18);
    expect(lat).toBeGreaterThan(47);
    expect(lat).toBeLessThan(48.5);
    const coordText = text.match(/"coordinates":\[[^a-z]*?\]\]\]?\]?/g)!.join('');
    const decimals = [...coordText.matchAll(/-?\d+\.(\d+)/g)].map((m) => m[1]!.length);
    expect(decimals.length).toBeGreaterThan(100);
    expect(Math.max(...decimals)).toBeLessThanOrEqual(7);
  });

  it('gives geodesic areas (pyproj, WGS 84) within 0.5% of crown_area_m2, UTM 33N', () => {
    const ref = geodesicAreas(text);
    ref.forEach((r, i) => {
      // pyproj Geod on the WGS 84 ellipsoid: independent area of the exported polygon
      expect(Math.abs(r.area / table.columns.crown_area_m2[i]! - 1)).toBeLessThan(0.005);
      // pyproj gives counter-clockwise rings a positive area: exteriors +, holes -
      for (const ring of r.rings) expect(Math.sign(ring.area)).toBe(ring.hole ? -1 : 1);
    });
  });

  it('gives geodesic areas within 0.5% of crown_area_m2 for a feet-based CRS', () => {
    const ft = buildTable(feetTrees(), FOOT_M);
    const t = treesToGeoJSON(ft, lonLatOf(LCC_FT));
    expect(() => check(t)).not.toThrow(); // RFC 7946 via @placemarkio/check-geojson
    const ref = geodesicAreas(t);
    expect(ref).toHaveLength(3);
    // pyproj Geod on WGS 84 against planar ft2 x 0.3048^2 (NIST foot)
    ref.forEach((r, i) => expect(Math.abs(r.area / ft.columns.crown_area_m2[i]! - 1)).toBeLessThan(0.005));
    // a 15 ft crown radius is 4.572 m: pi r^2 = 65.67 m2 (common practice: circle area)
    expect(ref[0]!.area).toBeGreaterThan(65.67 * 0.99);
    expect(ref[0]!.area).toBeLessThan(65.67 * 1.01);
  });

  it('carries every metric, the top position and the edits as properties', () => {
    const p = fc.features[0].properties;
    for (const c of ['tree_id', 'x', 'y', 'height_m', 'chm_height_m', 'crown_area_m2', 'crown_diameter_m', 'h95_m', 'ground_share', 'blue_mean']) {
      expect(p).toHaveProperty(c);
    }
    expect(p.tree_id).toBe(1);
    expect(fc.features[0].id).toBe(1);
    expect(p.crown_area_m2).toBeCloseTo(table.columns.crown_area_m2[0]!, 2);
    // the top position, converted by proj4 itself (an outside library)
    const [lon, lat] = proj4(UTM33, 'WGS84', [500000, 5300000]);
    expect(Math.abs(p.lon - lon!)).toBeLessThan(1e-7);
    expect(Math.abs(p.lat - lat!)).toBeLessThan(1e-7);
    // UTM: easting 500000 lies on the central meridian, 15E for zone 33 (common practice)
    expect(p.lon).toBeCloseTo(15, 7);
    expect(p.species).toBe('Quercus robur');
    expect(p.edited).toBe(true);
    // JSON has no NaN: a missing metric is null (RFC 8259 numbers)
    expect(fc.features[1].properties.intensity_mean).toBeNull();
  });

  it('refuses an edit that would overwrite a metric', () => {
    expect(() => treesToGeoJSON(table, toLonLat, { extra: () => ({ height_m: 3 }) })).toThrow(/height_m/);
  });

  it('refuses positions that do not map to longitude/latitude', () => {
    expect(() => treesToGeoJSON(table, () => [NaN, NaN])).toThrow(expect.objectContaining({ code: 'CRS_UNSUPPORTED' }));
    expect(() => treesToGeoJSON(table, (x, y) => [x, y])).toThrow(expect.objectContaining({ code: 'CRS_UNSUPPORTED' }));
  });

  it('streams the same text in chunks', () => {
    const big = buildTable(Array.from({ length: 7 }, (_, i) => ({ x: 500000 + 20 * i, y: 5300000, rings: [{ pts: circle(500000 + 20 * i, 5300000, 3, 12) }] })));
    const whole = treesToGeoJSON(big, toLonLat);
    const parts = [...treesToGeoJSONChunks(big, toLonLat, { featuresPerChunk: 3 })];
    expect(parts.length).toBe(2 + 3);
    expect(parts.join('')).toBe(whole);
    expect(JSON.parse(whole).features).toHaveLength(7);
    expect(() => check(whole)).not.toThrow(); // RFC 7946 via @placemarkio/check-geojson
  });

  it('writes a tree with no outline as a Point at its top, and an empty table as an empty collection', () => {
    const t = buildTable([{ x: 500000, y: 5300000, rings: [] }, { x: 500050, y: 5300000, rings: [{ pts: [[500050, 5300000], [500050.000001, 5300000]] }] }]);
    const out = JSON.parse(treesToGeoJSON(t, toLonLat));
    expect(out.features.map((f: { geometry: { type: string } }) => f.geometry.type)).toEqual(['Point', 'Point']);
    const empty = treesToGeoJSON(buildTable([]), toLonLat);
    expect(() => check(empty)).not.toThrow(); // RFC 7946 via @placemarkio/check-geojson
    expect(JSON.parse(empty).features).toEqual([]);
  });
});
