import { CrowntallyError } from '../errors.js';
import type { CrsInfo } from '../io/types.js';
import type { Grid } from '../raster/grid.js';

/**
 * The canopy height model as a GeoTIFF (TIFF 6.0 baseline + OGC GeoTIFF 1.1).
 *
 * Written here rather than with geotiff.js's writer because that writer puts
 * the image directory and every out-of-line tag value into a fixed 1000-byte
 * block (a long GeoAsciiParams of a user-defined CRS would overrun it), and
 * it adds WGS 84 keys and a whole-globe tie point whenever it sees no
 * projected or geographic key (wrong for a survey with no CRS). A single
 * image of Float32 strips is a small format to write directly.
 *
 * Layout: little-endian classic TIFF, one IFD, uncompressed Float32 strips
 * of about 256 KiB, ModelPixelScale (cellSize, cellSize, 0) and
 * ModelTiepoint (0, 0, 0, originX, originY, 0) in CRS units, GDAL_NODATA
 * "nan" since empty cells are NaN.
 */

const TIFF_SHORT = 3;
const TIFF_LONG = 4;
const TIFF_ASCII = 2;
const TIFF_DOUBLE = 12;

// GeoKey ids (OGC GeoTIFF 1.1, section 7.1 / annex of key ids).
const KEY_MODEL_TYPE = 1024;
const KEY_RASTER_TYPE = 1025;
const KEY_GEOGRAPHIC = 2048;
const KEY_PROJECTED = 3072;
const KEY_VERTICAL_UNITS = 4099;
const RASTER_PIXEL_IS_AREA = 1;
const UNIT_METRE = 9001;
const TAG_GEO_DOUBLES = 34736;
const TAG_GEO_ASCII = 34737;

interface GeoKeySet { entries: number[][]; doubles: number[]; ascii: string }

/** Checks a LAS GeoKeyDirectory (same layout as the GeoTIFF tag) and returns its entries, or null if malformed. */
function parseDirectory(g: NonNullable<CrsInfo['geoKeys']>): GeoKeySet | null {
  const d = g.directory;
  if (d.length < 4 || d[0] !== 1) return null;
  const n = d[3]!;
  if (4 + 4 * n > d.length) return null;
  const entries: number[][] = [];
  for (let k = 0; k < n; k++) {
    const id = d[4 + 4 * k]!, loc = d[5 + 4 * k]!, count = d[6 + 4 * k]!, off = d[7 + 4 * k]!;
    if (loc === 0) { if (count !== 1) return null; }
    else if (loc === TAG_GEO_DOUBLES) { if (off + count > g.doubles.length) return null; }
    else if (loc === TAG_GEO_ASCII) { if (off + count > g.ascii.length) return null; }
    else return null;
    entries.push([id, loc, count, off]);
  }
  // TIFF ASCII is 7-bit; replace other characters one for one so offsets stay right.
  const ascii = g.ascii.replace(/[^\x00-\x7f]/g, '?');
  return { entries, doubles: Array.from(g.doubles), ascii };
}

/**
 * GeoKeys for the CHM. The survey's own directory is carried over key for
 * key (a user-defined CRS keeps all its parameters), with two changes: the
 * vertical unit key, if present, says metre because CHM samples are
 * metres, and GTRasterTypeGeoKey = PixelIsArea is added when absent so the
 * tie point is read as the corner of the first cell.
 */
function geoKeysFor(crs: CrsInfo): GeoKeySet {
  const parsed = crs.geoKeys ? parseDirectory(crs.geoKeys) : null;
  if (parsed) {
    const entries = parsed.entries.map((e) =>
      e[0] === KEY_VERTICAL_UNITS && e[1] === 0 ? [e[0], 0, 1, UNIT_METRE] : e);
    if (!entries.some((e) => e[0] === KEY_RASTER_TYPE)) entries.push([KEY_RASTER_TYPE, 0, 1, RASTER_PIXEL_IS_AREA]);
    entries.sort((a, b) => a[0]! - b[0]!); // GeoTIFF 1.1: keys in ascending id order
    return { entries, doubles: parsed.doubles, ascii: parsed.ascii };
  }
  if (crs.epsg !== null) {
    if (!(Number.isInteger(crs.epsg) && crs.epsg > 0 && crs.epsg < 32767)) {
      throw new CrowntallyError('CRS_UNSUPPORTED', `EPSG:${crs.epsg} cannot be written as a GeoTIFF key (codes 1-32766 only); export the CHM without a CRS or reproject the survey`);
    }
    const geographic = /\+proj=(longlat|latlong)\b/.test(crs.proj4 ?? '') || /degree/i.test(crs.unitName);
    return {
      entries: geographic
        ? [[KEY_MODEL_TYPE, 0, 1, 2], [KEY_RASTER_TYPE, 0, 1, RASTER_PIXEL_IS_AREA], [KEY_GEOGRAPHIC, 0, 1, crs.epsg]]
        : [[KEY_MODEL_TYPE, 0, 1, 1], [KEY_RASTER_TYPE, 0, 1, RASTER_PIXEL_IS_AREA], [KEY_PROJECTED, 0, 1, crs.epsg]],
      doubles: [],
      ascii: '',
    };
  }
  if (crs.geoKeys) {
    throw new CrowntallyError('CRS_UNSUPPORTED', "the survey's GeoKeyDirectory is malformed and it has no EPSG code, so the CHM cannot carry its CRS; give the CRS as EPSG:NNNN");
  }
  return { entries: [[KEY_RASTER_TYPE, 0, 1, RASTER_PIXEL_IS_AREA]], doubles: [], ascii: '' };
}

interface Tag { id: number; type: number; values: number[] | string }

function tagBytes(t: Tag): number {
  if (typeof t.values === 'string') return t.values.length;
  return t.values.length * (t.type === TIFF_DOUBLE ? 8 : t.type === TIFF_LONG ? 4 : 2);
}

function checkGrid(g: Grid): void {
  if (!(Number.isInteger(g.width) && Number.isInteger(g.height) && g.width > 0 && g.height > 0)) {
    throw new CrowntallyError('EMPTY', `the CHM has no cells (${g.width} x ${g.height}); nothing to write`);
  }
  // Classic TIFF addresses 4 GiB; refuse before allocating the file buffer.
  if (g.width * g.height * 4 + 4096 > 0xffff_ffff) {
    throw new CrowntallyError('TOO_LARGE', `the CHM (${g.width} x ${g.height} cells) would make a GeoTIFF over the 4 GiB of classic TIFF; use a larger cell size or tiles`);
  }
  if (!(g.data instanceof Float32Array) || g.data.length !== g.width * g.height) {
    throw new CrowntallyError('INTERNAL', `the CHM holds ${g.data.length} values for ${g.width} x ${g.height} cells`);
  }
  if (!(g.cellSize > 0 && Number.isFinite(g.cellSize) && Number.isFinite(g.originX) && Number.isFinite(g.originY))) {
    throw new CrowntallyError('INTERNAL', `the CHM georeference is not finite (cell ${g.cellSize}, origin ${g.originX}, ${g.originY})`);
  }
}

const LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/**
 * Encodes the CHM (metres, NaN = empty) as a GeoTIFF in the survey's CRS:
 * the survey's GeoKeyDirectory when it has one (see geoKeysFor), else
 * ProjectedCSTypeGeoKey or GeographicTypeGeoKey from `crs.epsg`. When the
 * survey has no CRS at all, the file carries no CRS key (only the raster
 * type), and a GIS will open it as "unknown CRS" rather than a wrong one.
 * Refuses a grid whose file would pass the 4 GiB limit of classic TIFF.
 */
export function chmToGeoTIFF(chm: Grid, crs: CrsInfo): ArrayBuffer {
  checkGrid(chm);
  const keys = geoKeysFor(crs);
  const { width, height } = chm;
  const rowBytes = width * 4;
  const rowsPerStrip = Math.max(1, Math.floor(262_144 / rowBytes));
  const strips = Math.ceil(height / rowsPerStrip);
  const dataBytes = rowBytes * height;

  const directory = [1, 1, 0, keys.entries.length, ...keys.entries.flat()];
  const tags: Tag[] = [
    { id: 256, type: TIFF_LONG, values: [width] },
    { id: 257, type: TIFF_LONG, values: [height] },
    { id: 258, type: TIFF_SHORT, values: [32] },          // BitsPerSample
    { id: 259, type: TIFF_SHORT, values: [1] },           // Compression: none
    { id: 262, type: TIFF_SHORT, values: [1] },           // Photometric: BlackIsZero
    { id: 273, type: TIFF_LONG, values: new Array<number>(strips).fill(0) }, // StripOffsets, filled below
    { id: 277, type: TIFF_SHORT, values: [1] },           // SamplesPerPixel
    { id: 278, type: TIFF_LONG, values: [rowsPerStrip] },
    { id: 279, type: TIFF_LONG, values: Array.from({ length: strips }, (_, s) => Math.min(rowsPerStrip, height - s * rowsPerStrip) * rowBytes) },
    { id: 284, type: TIFF_SHORT, values: [1] },           // PlanarConfiguration: chunky
    { id: 305, type: TIFF_ASCII, values: 'crowntally\0' }, // Software
    { id: 339, type: TIFF_SHORT, values: [3] },           // SampleFormat: IEEE float
    { id: 33550, type: TIFF_DOUBLE, values: [chm.cellSize, chm.cellSize, 0] },
    { id: 33922, type: TIFF_DOUBLE, values: [0, 0, 0, chm.originX, chm.originY, 0] },
    { id: 34735, type: TIFF_SHORT, values: directory },
  ];
  if (keys.doubles.length > 0) tags.push({ id: TAG_GEO_DOUBLES, type: TIFF_DOUBLE, values: keys.doubles });
  if (keys.ascii.length > 0) tags.push({ id: TAG_GEO_ASCII, type: TIFF_ASCII, values: keys.ascii.endsWith('\0') ? keys.ascii : keys.ascii + '\0' });
  tags.push({ id: 42113, type: TIFF_ASCII, values: 'nan\0' }); // GDAL_NODATA

  const ifdBytes = 2 + 12 * tags.length + 4;
  let extra = 0;
  for (const t of tags) { const b = tagBytes(t); if (b > 4) extra += (b + 7) & ~7; }
  const dataStart = (8 + ifdBytes + extra + 7) & ~7;
  const total = dataStart + dataBytes;
  if (total > 0xffff_ffff) {
    throw new CrowntallyError('TOO_LARGE', `the CHM (${width} x ${height} cells) would make a ${(total / 2 ** 30).toFixed(1)} GiB GeoTIFF, over the 4 GiB of classic TIFF; use a larger cell size or tiles`);
  }
  (tags[5]!.values as number[]).forEach((_, s, a) => { a[s] = dataStart + s * rowsPerStrip * rowBytes; });

  const buf = new ArrayBuffer(total);
  const dv = new DataView(buf);
  const u8 = new Uint8Array(buf);
  u8[0] = 0x49; u8[1] = 0x49; dv.setUint16(2, 42, true); dv.setUint32(4, 8, true);
  let p = 8;
  let ext = 8 + ifdBytes;
  dv.setUint16(p, tags.length, true); p += 2;
  for (const t of tags) {
    const count = t.values.length;
    dv.setUint16(p, t.id, true); dv.setUint16(p + 2, t.type, true); dv.setUint32(p + 4, count, true);
    const bytes = tagBytes(t);
    let at = p + 8;
    if (bytes > 4) { dv.setUint32(p + 8, ext, true); at = ext; ext += (bytes + 7) & ~7; }
    if (typeof t.values === 'string') {
      for (let i = 0; i < count; i++) u8[at + i] = t.values.charCodeAt(i);
    } else {
      for (let i = 0; i < count; i++) {
        const v = t.values[i]!;
        if (t.type === TIFF_DOUBLE) dv.setFloat64(at + 8 * i, v, true);
        else if (t.type === TIFF_LONG) dv.setUint32(at + 4 * i, v, true);
        else dv.setUint16(at + 2 * i, v, true);
      }
    }
    p += 12;
  }
  dv.setUint32(p, 0, true); // no further IFD
  if (LITTLE_ENDIAN) {
    u8.set(new Uint8Array(chm.data.buffer, chm.data.byteOffset, dataBytes), dataStart);
  } else {
    for (let i = 0; i < chm.data.length; i++) dv.setFloat32(dataStart + 4 * i, chm.data[i]!, true);
  }
  return buf;
}
