/**
 * Reads an area boundary from GeoJSON text (RFC 7946: positions are WGS 84
 * longitude, latitude in degrees). Accepts a FeatureCollection, a Feature, a
 * Polygon or a MultiPolygon and returns the rings of the first polygon found
 * (outer ring first, then holes). Errors say what was wrong with the file.
 */

/** A boundary file larger than this is not an area outline (guards the tablet's memory). */
export const MAX_BOUNDARY_BYTES = 20 * 1024 * 1024;
/** Most vertices taken from one polygon; the area test costs this much per point. */
export const MAX_BOUNDARY_VERTICES = 100_000;

export class BoundaryError extends Error {}

type Json = unknown;

function isObj(v: Json): v is Record<string, Json> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

function firstPolygon(g: Json, depth: number): Json[] | null {
  if (!isObj(g) || depth > 4) return null;
  switch (g.type) {
    case 'FeatureCollection':
      if (!Array.isArray(g.features)) return null;
      for (const f of g.features) { const p = firstPolygon(f, depth + 1); if (p) return p; }
      return null;
    case 'Feature':
      return firstPolygon(g.geometry, depth + 1);
    case 'GeometryCollection':
      if (!Array.isArray(g.geometries)) return null;
      for (const x of g.geometries) { const p = firstPolygon(x, depth + 1); if (p) return p; }
      return null;
    case 'Polygon':
      return Array.isArray(g.coordinates) ? g.coordinates : null;
    case 'MultiPolygon':
      return Array.isArray(g.coordinates) && Array.isArray(g.coordinates[0]) ? (g.coordinates[0] as Json[]) : null;
    default:
      return null;
  }
}

export function boundaryFromGeoJSON(text: string): number[][][] {
  if (text.length > MAX_BOUNDARY_BYTES) throw new BoundaryError('the boundary file is too large for an area outline (over 20 MB)');
  let doc: Json;
  try {
    doc = JSON.parse(text);
  } catch {
    throw new BoundaryError('the boundary file is not GeoJSON (it could not be read as JSON)');
  }
  if (!isObj(doc) || typeof doc.type !== 'string') throw new BoundaryError('the boundary file is not GeoJSON (it has no "type")');
  const poly = firstPolygon(doc, 0);
  if (!poly || poly.length === 0) throw new BoundaryError('the boundary file holds no polygon: draw the area as a Polygon or MultiPolygon');
  let vertices = 0;
  const rings: number[][][] = poly.map((ring, r) => {
    if (!Array.isArray(ring)) throw new BoundaryError(`ring ${r + 1} of the boundary is not a list of positions`);
    vertices += ring.length;
    if (vertices > MAX_BOUNDARY_VERTICES) throw new BoundaryError(`the boundary has more than ${MAX_BOUNDARY_VERTICES.toLocaleString()} vertices; simplify it first`);
    return ring.map((p: Json) => {
      if (!Array.isArray(p) || typeof p[0] !== 'number' || typeof p[1] !== 'number' || !Number.isFinite(p[0]) || !Number.isFinite(p[1])) {
        throw new BoundaryError(`ring ${r + 1} of the boundary has a position that is not two numbers`);
      }
      const lon = p[0], lat = p[1];
      if (Math.abs(lon) > 180 || Math.abs(lat) > 90) {
        throw new BoundaryError('the boundary is not in longitude/latitude degrees (GeoJSON asks for WGS 84); export it again in EPSG:4326');
      }
      return [lon, lat];
    });
  });
  if (rings[0]!.length < 4) throw new BoundaryError('the boundary polygon needs at least three corners');
  return rings;
}
