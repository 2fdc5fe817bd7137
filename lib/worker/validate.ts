import { CrowntallyError } from '../errors.js';
import type { WorkerRequest } from './protocol.js';

function bad(what: string): never {
  throw new CrowntallyError('BAD_MESSAGE', `malformed worker message: ${what}`);
}

const isObj = (v: unknown): v is Record<string, unknown> => typeof v === 'object' && v !== null && !Array.isArray(v);
const isInput = (v: unknown) => typeof v === 'string' || v instanceof ArrayBuffer || (typeof Blob !== 'undefined' && v instanceof Blob);
const isGrid = (v: unknown, T: Function) => isObj(v) && Number.isInteger(v.width) && Number.isInteger(v.height) &&
  (v.width as number) > 0 && (v.height as number) > 0 && typeof v.cellSize === 'number' && (v.cellSize as number) > 0 &&
  Number.isFinite(v.originX) && Number.isFinite(v.originY) && v.data instanceof T &&
  (v.data as { length: number }).length === (v.width as number) * (v.height as number);

/**
 * Checks a message's shape before anything acts on it; a malformed message
 * gets an error reply, never a crash. Option values are checked later by
 * resolveOptions, with messages naming the option.
 */
export function validateRequest(m: unknown): WorkerRequest {
  if (!isObj(m)) bad('not an object');
  if (typeof m.id !== 'number' || !Number.isFinite(m.id)) bad('no numeric id');
  switch (m.type) {
    case 'cancel':
      return m as unknown as WorkerRequest;
    case 'decode-chunk':
      if (!(m.bytes instanceof Uint8Array)) bad('decode-chunk needs bytes');
      if (![m.pointFormat, m.recordLength, m.pointCount].every((n) => Number.isInteger(n) && (n as number) >= 0)) bad('decode-chunk needs whole-number sizes');
      if (!isObj(m.header)) bad('decode-chunk needs the header');
      return m as unknown as WorkerRequest;
    case 'inspect':
    case 'tally':
    case 'tree-points':
    case 'remeasure': {
      if (m.demo !== undefined && m.demo !== 'park' && m.demo !== 'orchard' && m.demo !== 'canopy') bad('demo must be park, orchard or canopy');
      if (!Array.isArray(m.files) || !m.files.every(isInput)) bad('files must be a list of Blobs, ArrayBuffers or paths');
      if (!Array.isArray(m.names) || !m.names.every((n) => typeof n === 'string')) bad('names must be a list of strings');
      if (m.files.length === 0 && !m.demo) bad('no files and no demo');
      if (m.crs !== undefined && typeof m.crs !== 'string') bad('crs must be a string such as EPSG:32633');
      if (m.options !== undefined && !isObj(m.options)) bad('options must be an object');
      if (m.type === 'tally' && m.aoi !== undefined) {
        const a = m.aoi as Record<string, unknown>;
        if (!isObj(a) || (a.kind !== 'rect' && a.kind !== 'polygon')) bad('aoi must be a rect or polygon');
        if (a.kind === 'polygon' && !Array.isArray(a.rings)) bad('aoi polygon needs rings');
        if (a.kind === 'polygon' && !(a.rings as unknown[]).every((r) => Array.isArray(r) && r.length >= 3 && r.every((p) => Array.isArray(p) && p.length >= 2 && Number.isFinite(p[0]) && Number.isFinite(p[1])))) {
          bad('aoi polygon rings must be lists of at least three [x, y] number pairs');
        }
        if (a.kind === 'polygon' && a.lonLat !== undefined && typeof a.lonLat !== 'boolean') bad('aoi lonLat must be true or false');
        if (a.kind === 'rect' && ![a.minX, a.minY, a.maxX, a.maxY].every((v) => Number.isFinite(v))) bad('aoi rect needs finite minX, minY, maxX, maxY');
      }
      if (m.type === 'tree-points') {
        if (!isGrid(m.labels, Int32Array) || !isGrid(m.dtm, Float32Array)) bad('tree-points needs the label grid and the DTM');
        if (!Number.isInteger(m.label) || (m.label as number) < 1) bad('tree-points needs a crown label (1 or more)');
        if (!Number.isFinite(m.topX) || !Number.isFinite(m.topY)) bad('tree-points needs the top position');
      }
      if (m.type === 'remeasure') {
        if (!isGrid(m.labels, Int32Array)) bad('remeasure needs a label grid (Int32Array)');
        if (!isGrid(m.chm, Float32Array) || !isGrid(m.dtm, Float32Array)) bad('remeasure needs CHM and DTM grids (Float32Array)');
        const t = m.tops as Record<string, unknown>;
        if (!isObj(t) || !(t.x instanceof Float64Array) || !(t.y instanceof Float64Array) || t.x.length !== t.y.length) bad('remeasure needs tops x/y (Float64Array)');
      }
      return m as unknown as WorkerRequest;
    }
    default:
      bad(`unknown type ${JSON.stringify(String(m.type)).slice(0, 40)}`);
  }
}
