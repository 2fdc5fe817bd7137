import { CrowntallyError, throwIfAborted } from '../errors.js';
import { unknownCrs } from './crs.js';
import type { Bounds, ByteSource, CrsInfo, LasHeader, PointChunk, PointCloud, ReadOptions } from './types.js';

/*
 * ASCII point clouds: one point a line, fields split by spaces, tabs, commas
 * or semicolons, an optional header line naming the columns. Read in byte
 * ranges; a first pass counts points and finds bounds, chunks() reads again.
 * Lines with a non-finite or non-numeric field are skipped and counted, never
 * taken as points.
 */

/** A text cloud: a PointCloud plus the count of lines skipped as malformed, NaN or Inf. */
export interface XyzPointCloud extends PointCloud {
  readonly skippedLines: number;
}

type Field = 'x' | 'y' | 'z' | 'intensity' | 'returnNumber' | 'numberOfReturns' | 'classification' | 'red' | 'green' | 'blue' | 'ignore';

/** Header spellings, compared after lower-casing and dropping everything but letters and digits. */
const NAMES: Record<string, Field> = {
  x: 'x', easting: 'x', east: 'x', e: 'x', lon: 'x', longitude: 'x',
  y: 'y', northing: 'y', north: 'y', n: 'y', lat: 'y', latitude: 'y',
  z: 'z', elevation: 'z', elev: 'z', height: 'z', h: 'z', alt: 'z', altitude: 'z',
  i: 'intensity', intensity: 'intensity', int: 'intensity', inten: 'intensity', amplitude: 'intensity',
  returnnumber: 'returnNumber', return: 'returnNumber', returnno: 'returnNumber', rn: 'returnNumber', ret: 'returnNumber',
  numberofreturns: 'numberOfReturns', numreturns: 'numberOfReturns', returns: 'numberOfReturns', nr: 'numberOfReturns',
  nreturns: 'numberOfReturns', returncount: 'numberOfReturns',
  classification: 'classification', class: 'classification', cls: 'classification', c: 'classification', classid: 'classification',
  red: 'red', r: 'red', green: 'green', g: 'green', blue: 'blue', b: 'blue',
};

/** Column meaning by position when there is no header line. */
const POSITIONAL: Field[] = ['x', 'y', 'z', 'intensity', 'returnNumber', 'numberOfReturns', 'classification', 'red', 'green', 'blue'];
function positional(n: number): Field[] {
  // Six and seven columns are, by common practice, colour clouds (x y z r g b, x y z i r g b).
  if (n === 6) return ['x', 'y', 'z', 'red', 'green', 'blue'];
  if (n === 7) return ['x', 'y', 'z', 'intensity', 'red', 'green', 'blue'];
  const f = POSITIONAL.slice(0, Math.min(n, 10));
  while (f.length < n) f.push('ignore');
  return f;
}

const SEP = /[\s,;]+/;
const BLOCK = 4 << 20;
/** A line longer than this is not a point record: skipped, so a binary file cannot make the reader hold it all. */
const MAX_LINE = 64 << 10;
const CHUNK_POINTS = 65536;

interface Layout { fields: Field[]; hasHeader: boolean }

/**
 * Splits bytes into lines across reads. Lines longer than MAX_LINE are dropped
 * and counted in `overlong`, so a binary file cannot make the reader hold it all.
 */
class LineSplitter {
  private dec = new TextDecoder('utf-8', { fatal: false });
  private tail = '';
  private dropping = false;
  overlong = 0;
  constructor(private readonly onLine: (line: string) => void) {}
  push(bytes: Uint8Array): void {
    const text = this.tail + this.dec.decode(bytes, { stream: true });
    let start = 0;
    for (;;) {
      const nl = text.indexOf('\n', start);
      if (nl < 0) break;
      if (this.dropping) this.dropping = false;
      else this.onLine(text.slice(start, nl));
      start = nl + 1;
    }
    this.tail = text.slice(start);
    if (this.tail.length > MAX_LINE) {
      if (!this.dropping) this.overlong++;
      this.dropping = true;
      this.tail = '';
    }
  }
  end(): void {
    const rest = this.tail + this.dec.decode();
    if (!this.dropping && rest.length) this.onLine(rest);
    this.tail = '';
  }
}

/** Reads the whole source block by block (short reads allowed), yielding each block. */
async function* blocks(source: ByteSource, signal?: AbortSignal): AsyncGenerator<Uint8Array> {
  let off = 0;
  while (off < source.size) {
    throwIfAborted(signal);
    const bytes = await source.read(off, Math.min(BLOCK, source.size - off));
    if (bytes.byteLength === 0) break;
    off += bytes.byteLength;
    yield bytes;
  }
}

async function forEachLine(source: ByteSource, onLine: (line: string) => void): Promise<number> {
  const sp = new LineSplitter(onLine);
  for await (const b of blocks(source)) sp.push(b);
  sp.end();
  return sp.overlong;
}

function isNumber(t: string): boolean {
  return t !== '' && !Number.isNaN(Number(t));
}

function detectLayout(line: string): Layout | null {
  const toks = line.trim().split(SEP).filter((t) => t !== '');
  if (toks.length === 0) return null;
  if (toks.every(isNumber)) {
    if (toks.length < 3) return { fields: positional(3), hasHeader: false };
    return { fields: positional(toks.length), hasHeader: false };
  }
  const fields = toks.map((t) => NAMES[t.replace(/^\/\/|^#/, '').toLowerCase().replace(/[^a-z0-9]/g, '')] ?? 'ignore');
  const seen = new Set<Field>();
  for (let i = 0; i < fields.length; i++) {
    if (fields[i] !== 'ignore' && seen.has(fields[i]!)) fields[i] = 'ignore';
    seen.add(fields[i]!);
  }
  if (!seen.has('x') || !seen.has('y') || !seen.has('z')) {
    throw new CrowntallyError('BAD_XYZ',
      `the first line of the text cloud names no x, y and z columns ("${line.slice(0, 80)}"); ` +
      'give a header such as "x y z intensity" or leave it out and put x y z first');
  }
  return { fields, hasHeader: true };
}

/** Field separators: space, tab, CR, comma, semicolon. */
function isSep(ch: number): boolean {
  return ch === 32 || ch === 44 || ch === 9 || ch === 59 || ch === 13 || ch === 11 || ch === 12;
}

/**
 * Parses one record into `out` (length = fields); false when a used field is
 * missing or not finite. Scans characters rather than splitting by a regular
 * expression: this runs once per point.
 */
function parseLine(line: string, fields: Field[], out: Float64Array): boolean {
  const len = line.length;
  const nf = fields.length;
  let n = 0;
  let i = 0;
  while (i < len) {
    while (i < len && isSep(line.charCodeAt(i))) i++;
    if (i >= len) break;
    const start = i;
    while (i < len && !isSep(line.charCodeAt(i))) i++;
    if (n < nf && fields[n] !== 'ignore') {
      const v = Number(line.slice(start, i));
      if (!Number.isFinite(v)) return false;
      out[n] = v;
    }
    n++;
  }
  if (n >= nf) return true;
  if (n < 3) return false;
  for (let k = n; k < nf; k++) if (fields[k] !== 'ignore') return false;
  return true;
}

export async function openXyz(source: ByteSource, opts: { crs?: CrsInfo } = {}): Promise<XyzPointCloud> {
  let layout: Layout | null = null;
  let points = 0;
  let skipped = 0;
  let headerSeen = false;
  let maxColour = 0;
  const byReturn = new Array<number>(15).fill(0);
  const b: Bounds = { minX: Infinity, minY: Infinity, minZ: Infinity, maxX: -Infinity, maxY: -Infinity, maxZ: -Infinity };
  let vals = new Float64Array(10);
  let ix = 0, iy = 1, iz = 2, iRet = -1, iR = -1, iG = -1, iB = -1;

  const overlong = await forEachLine(source, (raw) => {
    const line = raw.charCodeAt(0) === 0xfeff ? raw.slice(1) : raw;
    if (line.trim() === '') return;
    if (!layout) {
      layout = detectLayout(line);
      if (!layout) return;
      vals = new Float64Array(layout.fields.length);
      const f = layout.fields;
      ix = f.indexOf('x'); iy = f.indexOf('y'); iz = f.indexOf('z'); iRet = f.indexOf('returnNumber');
      iR = f.indexOf('red'); iG = f.indexOf('green'); iB = f.indexOf('blue');
      if (layout.hasHeader) { headerSeen = true; return; }
    }
    if (!parseLine(line, layout.fields, vals)) { skipped++; return; }
    const x = vals[ix]!, y = vals[iy]!, z = vals[iz]!;
    if (x < b.minX) b.minX = x; if (x > b.maxX) b.maxX = x;
    if (y < b.minY) b.minY = y; if (y > b.maxY) b.maxY = y;
    if (z < b.minZ) b.minZ = z; if (z > b.maxZ) b.maxZ = z;
    if (iR >= 0) maxColour = Math.max(maxColour, vals[iR]!, iG >= 0 ? vals[iG]! : 0, iB >= 0 ? vals[iB]! : 0);
    if (iRet >= 0) {
      const r = Math.round(vals[iRet]!);
      if (r >= 1 && r <= 15) byReturn[r - 1]!++;
    }
    points++;
  });
  skipped += overlong;
  const lay = layout as Layout | null;
  if (points === 0 || !lay) {
    throw new CrowntallyError('BAD_XYZ',
      `${source.name}: no usable points in the text cloud (${skipped} line(s) skipped as malformed, NaN or Inf); ` +
      'each line needs at least x y z as finite numbers');
  }
  const fields = lay.fields;
  const has = (f: Field): boolean => fields.includes(f);
  const hasRgb = has('red') && has('green') && has('blue');
  // Colour up to 255 is 8-bit; scale by 257 so 255 becomes 65535 as in LAS (PointChunk colour is 16-bit).
  const colourScale = maxColour <= 255 ? 257 : 1;
  const header: LasHeader = {
    versionMajor: 0, versionMinor: 0, headerSize: 0, offsetToPointData: 0,
    pointFormat: hasRgb ? 2 : 0, pointRecordLength: hasRgb ? 26 : 20, pointCount: points,
    pointsByReturn: byReturn, scale: [0.001, 0.001, 0.001],
    offset: [Math.floor(b.minX), Math.floor(b.minY), Math.floor(b.minZ)], bounds: b,
    globalEncoding: 0, systemId: 'text', software: 'crowntally xyz reader', creationDay: 0, creationYear: 0, compressed: false,
  };
  const crs = opts.crs ?? unknownCrs('text clouds carry no CRS; give one with the --crs option');
  const name = source.name;
  const skippedLines = skipped;

  async function* chunks(ro: ReadOptions = {}): AsyncIterable<PointChunk> {
    const pending: PointChunk[] = [];
    let c = newChunk(CHUNK_POINTS, fields);
    let read = 0;
    let first = true;
    const v = new Float64Array(fields.length);
    const colIdx = fields.map((f) => f);
    const lineFn = (raw: string): void => {
      const line = raw.charCodeAt(0) === 0xfeff ? raw.slice(1) : raw;
      if (line.trim() === '') return;
      if (first) { first = false; if (headerSeen) return; }
      if (!parseLine(line, fields, v)) return;
      const i = c.count;
      for (let k = 0; k < colIdx.length; k++) {
        const val = v[k]!;
        switch (colIdx[k]) {
          case 'x': c.x[i] = val; break;
          case 'y': c.y[i] = val; break;
          case 'z': c.z[i] = val; break;
          case 'intensity': c.intensity[i] = clamp(val, 65535); break;
          case 'returnNumber': c.returnNumber[i] = clamp(val, 15); break;
          case 'numberOfReturns': c.numberOfReturns[i] = clamp(val, 15); break;
          case 'classification': c.classification[i] = clamp(val, 255); break;
          // Colour is kept only when all three channels are present (newChunk allocates them together).
          case 'red': if (c.red) c.red[i] = clamp(val * colourScale, 65535); break;
          case 'green': if (c.green) c.green[i] = clamp(val * colourScale, 65535); break;
          case 'blue': if (c.blue) c.blue[i] = clamp(val * colourScale, 65535); break;
          default: break;
        }
      }
      c.count++;
      if (c.count === CHUNK_POINTS) {
        pending.push(c);
        c = newChunk(CHUNK_POINTS, fields);
      }
    };
    const sp = new LineSplitter(lineFn);
    for await (const bytes of blocks(source, ro.signal)) {
      sp.push(bytes);
      while (pending.length) {
        const out = pending.shift()!;
        read += out.count;
        yield out;
        ro.onProgress?.(read, points);
      }
    }
    sp.end();
    for (const out of [...pending, c]) {
      if (out.count === 0) continue;
      const t = trim(out);
      read += t.count;
      yield t;
      ro.onProgress?.(read, points);
    }
  }

  return {
    kind: 'xyz', name, header, crs, vlrs: [], skippedLines,
    chunks,
    async close() { await source.close?.(); },
  };
}

function clamp(v: number, max: number): number {
  const r = Math.round(v);
  return r < 0 ? 0 : r > max ? max : r;
}

function newChunk(n: number, fields: Field[]): PointChunk {
  const rgb = fields.includes('red') && fields.includes('green') && fields.includes('blue');
  const c: PointChunk = {
    count: 0,
    x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n),
    intensity: new Uint16Array(n), returnNumber: new Uint8Array(n), numberOfReturns: new Uint8Array(n),
    classification: new Uint8Array(n), flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n),
  };
  if (rgb) { c.red = new Uint16Array(n); c.green = new Uint16Array(n); c.blue = new Uint16Array(n); }
  return c;
}

/** Copies a partly filled chunk into arrays of its own length, so transferred buffers carry no slack. */
function trim(c: PointChunk): PointChunk {
  const n = c.count;
  if (n === c.x.length) return c;
  const out: PointChunk = {
    count: n, x: c.x.slice(0, n), y: c.y.slice(0, n), z: c.z.slice(0, n), intensity: c.intensity.slice(0, n),
    returnNumber: c.returnNumber.slice(0, n), numberOfReturns: c.numberOfReturns.slice(0, n),
    classification: c.classification.slice(0, n), flags: c.flags.slice(0, n), scanAngleDeg: c.scanAngleDeg.slice(0, n),
  };
  if (c.red) { out.red = c.red.slice(0, n); out.green = c.green!.slice(0, n); out.blue = c.blue!.slice(0, n); }
  return out;
}
