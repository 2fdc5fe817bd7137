import { CrowntallyError } from '../errors.js';
import { MAX_RETURN_NUMBER, TREE_COLUMNS, type TreeTable } from '../trees/table.js';
import {
  checkLonLat, checkTable, columnDecimals, highestReturnNumber, LONLAT_DECIMALS, returnColumnName, roundTo,
  type ExtraValue, type ToLonLat, type TreeExportOptions,
} from './csv.js';

/**
 * Tree crowns as GeoJSON (RFC 7946): one FeatureCollection, positions in
 * WGS 84 longitude, latitude order (section 3.1.1), no `crs` member
 * (section 4 removed it). Each tree is one Feature whose geometry is its
 * crown outline: a Polygon, or a MultiPolygon when the crown has several
 * exterior rings. Rings are closed and follow the right-hand rule of
 * section 3.1.6 in lon/lat (exteriors counter-clockwise, holes clockwise),
 * checked after the transform because a projection can mirror a ring.
 * Positions carry at most 7 decimals (about 1 cm). A tree with no usable
 * outline gets a Point at its top, so no tree silently disappears.
 * Rings crossing the antimeridian are not split.
 */

export interface GeoJSONChunkOptions extends TreeExportOptions {
  /** Features per yielded string (default 1000). */
  featuresPerChunk?: number;
}

type Position = [number, number];

/** Twice the signed area of a closed ring (shoelace); positive when counter-clockwise with lon as x, lat as y. */
export function ringSignedArea2(ring: readonly Position[]): number {
  let s = 0;
  for (let i = 0, n = ring.length - 1; i < n; i++) {
    const a = ring[i]!, b = ring[i + 1]!;
    // Relative to the first vertex, so large coordinates do not cancel digits.
    s += (a[0] - ring[0]![0]) * (b[1] - ring[0]![1]) - (b[0] - ring[0]![0]) * (a[1] - ring[0]![1]);
  }
  return s;
}

function checkOutlines(t: TreeTable): void {
  const o = t.outlines;
  const rings = o.ringStart.length - 1;
  const vertices = Math.floor(o.coords.length / 2);
  if (o.treeRingStart.length < t.count + 1) {
    throw new CrowntallyError('INTERNAL', `crown outlines index ${o.treeRingStart.length - 1} trees for a table of ${t.count}`);
  }
  if (o.ringKind.length < rings) {
    throw new CrowntallyError('INTERNAL', `crown outlines give ${o.ringKind.length} ring kinds for ${rings} rings`);
  }
  for (let i = 0; i <= t.count; i++) {
    const r = o.treeRingStart[i]!;
    if (r > rings || (i > 0 && r < o.treeRingStart[i - 1]!)) {
      throw new CrowntallyError('INTERNAL', `crown outlines: tree ${i} starts at ring ${r}, outside the ${rings} rings`);
    }
  }
  for (let k = 0; k <= rings; k++) {
    const v = o.ringStart[k]!;
    if (v > vertices || (k > 0 && v < o.ringStart[k - 1]!)) {
      throw new CrowntallyError('INTERNAL', `crown outlines: ring ${k} starts at vertex ${v}, outside the ${vertices} vertices`);
    }
  }
}

/** One ring in lon/lat, rounded, without repeated positions, closed; null when it collapses. */
function ringLonLat(t: TreeTable, k: number, toLonLat: ToLonLat, wantCCW: boolean): Position[] | null {
  const o = t.outlines;
  const out: Position[] = [];
  for (let v = o.ringStart[k]!, end = o.ringStart[k + 1]!; v < end; v++) {
    const x = o.coords[2 * v]!, y = o.coords[2 * v + 1]!;
    if (!Number.isFinite(x) || !Number.isFinite(y)) continue;
    const p = toLonLat(x, y);
    checkLonLat(p, x, y);
    const q: Position = [roundTo(p[0], LONLAT_DECIMALS), roundTo(p[1], LONLAT_DECIMALS)];
    const last = out[out.length - 1];
    if (last && last[0] === q[0] && last[1] === q[1]) continue;
    out.push(q);
  }
  // Close the ring (RFC 7946 3.1.6: first and last positions equal).
  const first = out[0];
  const last = out[out.length - 1];
  if (first && last && (first[0] !== last[0] || first[1] !== last[1])) out.push([first[0], first[1]]);
  if (out.length < 4) return null; // a linear ring needs four or more positions
  const a = ringSignedArea2(out);
  if (a === 0) return null;
  if ((a > 0) !== wantCCW) out.reverse();
  return out;
}

function treeGeometry(t: TreeTable, i: number, toLonLat: ToLonLat, top: Position | null): object | null {
  const o = t.outlines;
  const polygons: Position[][][] = [];
  let current: Position[][] | null = null;
  for (let k = o.treeRingStart[i]!, end = o.treeRingStart[i + 1]!; k < end; k++) {
    const isHole = o.ringKind[k] === 1;
    if (isHole) {
      if (!current) continue; // a hole whose exterior collapsed or is missing
      const r = ringLonLat(t, k, toLonLat, false);
      if (r) current.push(r);
    } else {
      const r = ringLonLat(t, k, toLonLat, true);
      current = r ? [r] : null;
      if (current) polygons.push(current);
    }
  }
  if (polygons.length === 1) return { type: 'Polygon', coordinates: polygons[0] };
  if (polygons.length > 1) return { type: 'MultiPolygon', coordinates: polygons };
  return top ? { type: 'Point', coordinates: top } : null;
}

function extraPropertyValue(v: ExtraValue | undefined): ExtraValue {
  if (v === undefined) return null;
  if (typeof v === 'number' && !Number.isFinite(v)) return null;
  return v;
}

/**
 * The FeatureCollection in pieces: the opening, then features in groups of
 * `featuresPerChunk`, then the closing. Concatenated, the pieces are the
 * same text as `treesToGeoJSON`; writing them one by one keeps memory at
 * one group for very large tables.
 */
export function* treesToGeoJSONChunks(table: TreeTable, toLonLat: ToLonLat, opts: GeoJSONChunkOptions = {}): Generator<string> {
  checkTable(table);
  checkOutlines(table);
  if (typeof toLonLat !== 'function') {
    throw new CrowntallyError('CRS_UNKNOWN', 'GeoJSON needs longitude/latitude: the survey has no CRS that maps to WGS 84; give one (for example EPSG:32633) or export CSV with local positions');
  }
  const per = opts.featuresPerChunk ?? 1000;
  if (!(Number.isInteger(per) && per >= 1)) {
    throw new CrowntallyError('BAD_OPTIONS', `featuresPerChunk must be a whole number of 1 or more (got ${per})`);
  }
  const reserved = new Set<string>([...TREE_COLUMNS, 'lon', 'lat']);
  const topReturn = highestReturnNumber(table);
  for (let r = 1; r <= topReturn; r++) reserved.add(returnColumnName(r));
  const cols = table.columns;

  yield '{"type":"FeatureCollection","features":[';
  let buf: string[] = [];
  for (let i = 0; i < table.count; i++) {
    const x = cols.x[i]!, y = cols.y[i]!;
    let top: Position | null = null;
    if (Number.isFinite(x) && Number.isFinite(y)) {
      const p = toLonLat(x, y);
      checkLonLat(p, x, y);
      top = [roundTo(p[0], LONLAT_DECIMALS), roundTo(p[1], LONLAT_DECIMALS)];
    }
    const props: Record<string, ExtraValue> = {};
    for (const c of TREE_COLUMNS) {
      const v = cols[c][i]!;
      props[c] = Number.isFinite(v) ? roundTo(v, columnDecimals(c)) : null;
    }
    props.lon = top ? top[0] : null;
    props.lat = top ? top[1] : null;
    const base = i * MAX_RETURN_NUMBER;
    for (let r = 1; r <= topReturn; r++) props[returnColumnName(r)] = table.returnHistogram[base + r - 1]!;
    if (opts.extra) {
      const e = opts.extra(i) ?? {};
      for (const k of Object.keys(e)) {
        if (reserved.has(k)) {
          throw new CrowntallyError('BAD_OPTIONS', `extra property "${k}" has the name of a metric; give the edit another name`);
        }
        props[k] = extraPropertyValue(e[k]);
      }
    }
    const id = cols.tree_id[i]!;
    const feature: Record<string, unknown> = { type: 'Feature' };
    if (Number.isFinite(id)) feature.id = id;
    feature.geometry = treeGeometry(table, i, toLonLat, top);
    feature.properties = props;
    buf.push(JSON.stringify(feature));
    if (buf.length === per) {
      yield (i + 1 > per ? ',' : '') + buf.join(',');
      buf = [];
    }
  }
  if (buf.length > 0) yield (table.count > buf.length ? ',' : '') + buf.join(',');
  yield ']}';
}

/** The whole table as one RFC 7946 FeatureCollection string (see treesToGeoJSONChunks for the layout). */
export function treesToGeoJSON(table: TreeTable, toLonLat: ToLonLat, opts: TreeExportOptions = {}): string {
  let s = '';
  for (const part of treesToGeoJSONChunks(table, toLonLat, opts)) s += part;
  return s;
}
