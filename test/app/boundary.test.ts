/**
 * Boundary files: GeoJSON text read into lon/lat rings. The inputs are first
 * checked as valid RFC 7946 by @placemarkio/check-geojson (an outside
 * validator), so the parser is tested on what real GeoJSON looks like; the
 * polygon with a hole follows the shape of the RFC 7946 Appendix A.3 example
 * (from memory: outer ring then hole, positions longitude first).
 */
import { check } from '@placemarkio/check-geojson';
import { describe, expect, it } from 'vitest';
import { boundaryFromGeoJSON, BoundaryError } from '../../app/src/boundary.js';

const outer = [[100.0, 0.0], [101.0, 0.0], [101.0, 1.0], [100.0, 1.0], [100.0, 0.0]];
const hole = [[100.8, 0.8], [100.8, 0.2], [100.2, 0.2], [100.2, 0.8], [100.8, 0.8]];
const other = [[102.0, 2.0], [103.0, 2.0], [103.0, 3.0], [102.0, 3.0], [102.0, 2.0]];

function valid(o: unknown): string {
  const text = JSON.stringify(o);
  check(text); // throws on anything RFC 7946 does not allow
  return text;
}

describe('boundaryFromGeoJSON', () => {
  it('reads a Polygon, a Feature, a FeatureCollection and a MultiPolygon, keeping rings and holes', () => {
    const poly = { type: 'Polygon', coordinates: [outer, hole] };
    expect(boundaryFromGeoJSON(valid(poly))).toEqual([outer, hole]);
    expect(boundaryFromGeoJSON(valid({ type: 'Feature', properties: {}, geometry: poly }))).toEqual([outer, hole]);
    const fc = { type: 'FeatureCollection', features: [
      { type: 'Feature', properties: { name: 'a point first' }, geometry: { type: 'Point', coordinates: [100.5, 0.5] } },
      { type: 'Feature', properties: {}, geometry: poly },
    ] };
    expect(boundaryFromGeoJSON(valid(fc))).toEqual([outer, hole]);
    // Only the first polygon of a MultiPolygon is taken.
    expect(boundaryFromGeoJSON(valid({ type: 'MultiPolygon', coordinates: [[other], [outer, hole]] }))).toEqual([other]);
  });

  it('refuses files that are not a usable lon/lat boundary, saying why', () => {
    const cases: Array<[string, RegExp]> = [
      ['not json {', /not GeoJSON/],
      ['[1, 2]', /no "type"/],
      [JSON.stringify({ type: 'Point', coordinates: [100, 0] }), /no polygon/],
      [JSON.stringify({ type: 'FeatureCollection', features: [] }), /no polygon/],
      [JSON.stringify({ type: 'Polygon', coordinates: [[[500000, 5400000], [500100, 5400000], [500100, 5400100], [500000, 5400000]]] }), /longitude\/latitude/],
      [JSON.stringify({ type: 'Polygon', coordinates: [[[100, 0], ['x', 0], [101, 1], [100, 0]]] }), /not two numbers/],
      [JSON.stringify({ type: 'Polygon', coordinates: [[[100, 0], [101, 0], [100, 0]]] }), /three corners/],
    ];
    for (const [text, why] of cases) {
      expect(() => boundaryFromGeoJSON(text)).toThrow(BoundaryError);
      expect(() => boundaryFromGeoJSON(text)).toThrow(why);
    }
  });
});
