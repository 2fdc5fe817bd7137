import { CrowntallyError } from '../errors.js';
import { FLAG_KEYPOINT, FLAG_OVERLAP, FLAG_SYNTHETIC, FLAG_WITHHELD, type PointChunk } from './types.js';

/**
 * Uncompressed LAS writer, laid out per ASPRS LAS Specification 1.4 R15
 * (2019): point formats 6 and 7 go into a LAS 1.4 file (375-byte header,
 * 64-bit point counts, the legacy 32-bit counts left zero as 1.4 requires for
 * formats 6-10, the WKT bit of the global encoding set and the CRS carried as
 * an OGC WKT VLR, user "LASF_Projection", record 2112). Point formats 0-3 go
 * into a LAS 1.2 file (227-byte header), the CRS as a GeoKeyDirectory VLR
 * (record 34735, with 34736 doubles and 34737 ASCII when needed, per
 * OGC GeoTIFF 1.1).
 *
 * Used for the invented demo surveys and their variants; output is fully
 * determined by the inputs (the creation date is an option), so the same
 * points give the same bytes.
 */

export type WritablePointFormat = 0 | 1 | 2 | 3 | 6 | 7;

/** One GeoKey: `location` 0 = value inline (short), 34736 = index into doubles, 34737 = offset into ascii. */
export interface GeoKeyEntry { id: number; value: number; location?: 0 | 34736 | 34737; count?: number }

export interface LasWriteOptions {
  pointFormat: WritablePointFormat;
  /** Coordinate quantum per axis, CRS units (e.g. 0.001). */
  scale: [number, number, number];
  offset: [number, number, number];
  /** OGC WKT of the CRS (formats 6 and 7 only). */
  wkt?: string;
  /** GeoTIFF keys (formats 0-3 only). */
  geoKeys?: { keys: GeoKeyEntry[]; doubles?: number[]; ascii?: string };
  systemId?: string;
  software?: string;
  /** Day of year (1-366) and year written in the header; default: today (UTC). */
  creationDay?: number;
  creationYear?: number;
  fileSourceId?: number;
  /** Per-point source id (flight line); 0 when absent. */
  pointSourceId?: Uint16Array;
  /** Per-point user data byte; 0 when absent. */
  userData?: Uint8Array;
}

/** Point record lengths (bytes), ASPRS LAS 1.4 R15, tables of the point data record formats. */
export const POINT_RECORD_LENGTH: Readonly<Record<WritablePointFormat, number>> = Object.freeze({ 0: 20, 1: 28, 2: 26, 3: 34, 6: 30, 7: 36 });

const VLR_HEADER = 54;

function bad(msg: string): never {
  throw new CrowntallyError('BAD_OPTIONS', msg);
}

function putAscii(view: DataView, at: number, text: string, width: number): void {
  // Fixed-width char fields, NUL padded; non-ASCII replaced so the field stays one byte per char.
  for (let i = 0; i < width; i++) {
    const c = i < text.length ? text.charCodeAt(i) : 0;
    view.setUint8(at + i, c > 0 && c < 128 ? c : c === 0 ? 0 : 63);
  }
}

interface VlrOut { userId: string; recordId: number; description: string; data: Uint8Array }

function geoKeyVlrs(g: NonNullable<LasWriteOptions['geoKeys']>): VlrOut[] {
  const keys = [...g.keys].sort((a, b) => a.id - b.id); // GeoTIFF 1.1: keys sorted by id
  const dir = new Uint16Array(4 + 4 * keys.length);
  dir[0] = 1; dir[1] = 1; dir[2] = 0; dir[3] = keys.length;
  keys.forEach((k, i) => {
    if (!(Number.isInteger(k.id) && k.id > 0 && k.id < 65536 && Number.isInteger(k.value) && k.value >= 0 && k.value < 65536)) {
      bad(`GeoKey ${JSON.stringify(k)} needs an id and a value that are unsigned 16-bit integers`);
    }
    dir[4 + 4 * i] = k.id;
    dir[5 + 4 * i] = k.location ?? 0;
    dir[6 + 4 * i] = k.count ?? 1;
    dir[7 + 4 * i] = k.value;
  });
  const out: VlrOut[] = [{ userId: 'LASF_Projection', recordId: 34735, description: 'GeoTIFF GeoKeyDirectoryTag', data: u16le(dir) }];
  if (g.doubles && g.doubles.length > 0) {
    const b = new Uint8Array(8 * g.doubles.length);
    const v = new DataView(b.buffer);
    g.doubles.forEach((d, i) => v.setFloat64(8 * i, d, true));
    out.push({ userId: 'LASF_Projection', recordId: 34736, description: 'GeoTIFF GeoDoubleParamsTag', data: b });
  }
  if (g.ascii && g.ascii.length > 0) {
    out.push({ userId: 'LASF_Projection', recordId: 34737, description: 'GeoTIFF GeoAsciiParamsTag', data: asciiZ(g.ascii) });
  }
  return out;
}

function u16le(a: Uint16Array): Uint8Array {
  const b = new Uint8Array(a.length * 2);
  const v = new DataView(b.buffer);
  for (let i = 0; i < a.length; i++) v.setUint16(2 * i, a[i]!, true);
  return b;
}

function asciiZ(s: string): Uint8Array {
  const b = new Uint8Array(s.length + 1); // NUL terminated, as the spec asks of the WKT record
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    b[i] = c < 128 ? c : 63;
  }
  return b;
}

function quantise(v: number, scale: number, offset: number, axis: string, i: number): number {
  if (!Number.isFinite(v)) bad(`point ${i}: ${axis} is ${v}; every coordinate must be a finite number`);
  const q = Math.round((v - offset) / scale);
  if (!Number.isFinite(q) || q < -2147483648 || q > 2147483647) {
    bad(`point ${i}: ${axis} = ${v} does not fit a 32-bit integer at scale ${scale} and offset ${offset}; choose an offset near the data or a coarser scale`);
  }
  return q;
}

/** Writes the points as an uncompressed LAS file and returns its bytes. */
export function writeLas(points: PointChunk, opts: LasWriteOptions): Uint8Array {
  const fmt = opts.pointFormat;
  if (!(fmt in POINT_RECORD_LENGTH)) bad(`pointFormat must be 0, 1, 2, 3, 6 or 7 (got ${String(fmt)})`);
  const is14 = fmt >= 6;
  for (let a = 0; a < 3; a++) {
    if (!(opts.scale[a]! > 0 && Number.isFinite(opts.scale[a]!))) bad(`scale must be three positive numbers (got ${JSON.stringify(opts.scale)})`);
    if (!Number.isFinite(opts.offset[a]!)) bad(`offset must be three finite numbers (got ${JSON.stringify(opts.offset)})`);
  }
  if (is14 && opts.geoKeys) bad('point formats 6-10 carry the CRS as OGC WKT (LAS 1.4); pass wkt instead of geoKeys');
  if (!is14 && opts.wkt) bad('point formats 0-3 are written as LAS 1.2, which carries the CRS as GeoKeys; pass geoKeys, or use point format 6 or 7 for WKT');
  const n = points.count;
  if (!(Number.isInteger(n) && n >= 0 && n <= points.x.length)) bad(`point count ${n} does not match the arrays (${points.x.length} coordinates)`);
  const hasTime = fmt === 1 || fmt === 3 || fmt >= 6;
  const hasRgb = fmt === 2 || fmt === 3 || fmt === 7;

  const vlrs: VlrOut[] = [];
  if (is14 && opts.wkt) vlrs.push({ userId: 'LASF_Projection', recordId: 2112, description: 'OGC coordinate system WKT', data: asciiZ(opts.wkt) });
  if (!is14 && opts.geoKeys) vlrs.push(...geoKeyVlrs(opts.geoKeys));
  for (const v of vlrs) if (v.data.length > 65535) bad(`a ${v.recordId} record of ${v.data.length} bytes exceeds the 65535 bytes a VLR can hold`);

  const headerSize = is14 ? 375 : 227;
  const recLen = POINT_RECORD_LENGTH[fmt];
  const vlrBytes = vlrs.reduce((s, v) => s + VLR_HEADER + v.data.length, 0);
  const offsetToPoints = headerSize + vlrBytes;
  const total = offsetToPoints + n * recLen;
  if (total > 2 ** 31) throw new CrowntallyError('TOO_LARGE', `a ${total}-byte LAS file is too large to build in memory; write fewer points per file`);
  const out = new Uint8Array(total);
  const dv = new DataView(out.buffer);

  // Points first: their quantised extremes go into the header.
  const [sx, sy, sz] = opts.scale;
  const [ox, oy, oz] = opts.offset;
  const byReturn = new Float64Array(15);
  let minX = Infinity, minY = Infinity, minZ = Infinity, maxX = -Infinity, maxY = -Infinity, maxZ = -Infinity;
  let p = offsetToPoints;
  for (let i = 0; i < n; i++, p += recLen) {
    const qx = quantise(points.x[i]!, sx, ox, 'x', i);
    const qy = quantise(points.y[i]!, sy, oy, 'y', i);
    const qz = quantise(points.z[i]!, sz, oz, 'z', i);
    const X = qx * sx + ox, Y = qy * sy + oy, Z = qz * sz + oz;
    if (X < minX) minX = X; if (X > maxX) maxX = X;
    if (Y < minY) minY = Y; if (Y > maxY) maxY = Y;
    if (Z < minZ) minZ = Z; if (Z > maxZ) maxZ = Z;
    dv.setInt32(p, qx, true);
    dv.setInt32(p + 4, qy, true);
    dv.setInt32(p + 8, qz, true);
    dv.setUint16(p + 12, points.intensity[i]!, true);
    const rn = points.returnNumber[i]!, nr = points.numberOfReturns[i]!;
    const cls = points.classification[i]!, fl = points.flags[i]!;
    const maxRet = is14 ? 15 : 7;
    if (rn > maxRet || nr > maxRet) bad(`point ${i}: return ${rn} of ${nr} exceeds the ${maxRet} returns point format ${fmt} can hold`);
    if (rn >= 1) byReturn[rn - 1]! += 1;
    const angle = points.scanAngleDeg[i]!;
    if (is14) {
      // Format 6-10 bit fields (R15 table of format 6): return 4 bits, returns 4 bits;
      // class flags 4 bits (synthetic, key-point, withheld, overlap), scanner channel 2, scan direction, edge.
      dv.setUint8(p + 14, (rn & 15) | ((nr & 15) << 4));
      const cf = (fl & FLAG_SYNTHETIC ? 1 : 0) | (fl & FLAG_KEYPOINT ? 2 : 0) | (fl & FLAG_WITHHELD ? 4 : 0) | (fl & FLAG_OVERLAP ? 8 : 0);
      dv.setUint8(p + 15, cf);
      dv.setUint8(p + 16, cls);
      dv.setUint8(p + 17, opts.userData?.[i] ?? 0);
      // Scan angle: int16 in 0.006-degree steps, range -30000..30000 (+-180 deg).
      const a = Math.max(-30000, Math.min(30000, Math.round(angle / 0.006)));
      dv.setInt16(p + 18, a, true);
      dv.setUint16(p + 20, opts.pointSourceId?.[i] ?? 0, true);
      dv.setFloat64(p + 22, points.gpsTime?.[i] ?? 0, true);
      if (hasRgb) {
        dv.setUint16(p + 30, points.red?.[i] ?? 0, true);
        dv.setUint16(p + 32, points.green?.[i] ?? 0, true);
        dv.setUint16(p + 34, points.blue?.[i] ?? 0, true);
      }
    } else {
      // Format 0-5 bit fields: return 3 bits, returns 3 bits; class 5 bits + synthetic, key-point, withheld.
      if (cls > 31) bad(`point ${i}: class ${cls} needs point format 6 or 7 (formats 0-3 hold classes 0-31)`);
      dv.setUint8(p + 14, (rn & 7) | ((nr & 7) << 3));
      dv.setUint8(p + 15, cls | (fl & FLAG_SYNTHETIC ? 32 : 0) | (fl & FLAG_KEYPOINT ? 64 : 0) | (fl & FLAG_WITHHELD ? 128 : 0));
      dv.setInt8(p + 16, Math.max(-90, Math.min(90, Math.round(angle))));
      dv.setUint8(p + 17, opts.userData?.[i] ?? 0);
      dv.setUint16(p + 18, opts.pointSourceId?.[i] ?? 0, true);
      let q = p + 20;
      if (hasTime) { dv.setFloat64(q, points.gpsTime?.[i] ?? 0, true); q += 8; }
      if (hasRgb) {
        dv.setUint16(q, points.red?.[i] ?? 0, true);
        dv.setUint16(q + 2, points.green?.[i] ?? 0, true);
        dv.setUint16(q + 4, points.blue?.[i] ?? 0, true);
      }
    }
  }
  if (n === 0) { minX = minY = minZ = maxX = maxY = maxZ = 0; }

  // Public header block.
  const now = new Date();
  const year = opts.creationYear ?? now.getUTCFullYear();
  const day = opts.creationDay ?? Math.floor((Date.UTC(now.getUTCFullYear(), now.getUTCMonth(), now.getUTCDate()) - Date.UTC(now.getUTCFullYear(), 0, 1)) / 86400000) + 1;
  putAscii(dv, 0, 'LASF', 4);
  dv.setUint16(4, opts.fileSourceId ?? 0, true);
  // Global encoding bit 0: GPS time is adjusted standard GPS time; bit 4: CRS is WKT (required for formats 6-10).
  dv.setUint16(6, (hasTime ? 1 : 0) | (is14 ? 16 : 0), true);
  out[24] = 1;
  out[25] = is14 ? 4 : 2;
  putAscii(dv, 26, opts.systemId ?? 'OTHER', 32);
  putAscii(dv, 58, opts.software ?? 'Crowntally', 32);
  dv.setUint16(90, day, true);
  dv.setUint16(92, year, true);
  dv.setUint16(94, headerSize, true);
  dv.setUint32(96, offsetToPoints, true);
  dv.setUint32(100, vlrs.length, true);
  out[104] = fmt;
  dv.setUint16(105, recLen, true);
  if (!is14) {
    dv.setUint32(107, n, true);
    for (let r = 0; r < 5; r++) dv.setUint32(111 + 4 * r, byReturn[r]!, true);
  } // else: legacy counts stay zero for formats 6-10
  dv.setFloat64(131, sx, true); dv.setFloat64(139, sy, true); dv.setFloat64(147, sz, true);
  dv.setFloat64(155, ox, true); dv.setFloat64(163, oy, true); dv.setFloat64(171, oz, true);
  dv.setFloat64(179, maxX, true); dv.setFloat64(187, minX, true);
  dv.setFloat64(195, maxY, true); dv.setFloat64(203, minY, true);
  dv.setFloat64(211, maxZ, true); dv.setFloat64(219, minZ, true);
  if (is14) {
    dv.setBigUint64(227, 0n, true); // no waveform data
    dv.setBigUint64(235, 0n, true); // no EVLRs
    dv.setUint32(243, 0, true);
    dv.setBigUint64(247, BigInt(n), true);
    for (let r = 0; r < 15; r++) dv.setBigUint64(255 + 8 * r, BigInt(byReturn[r]!), true);
  }

  let v = headerSize;
  for (const r of vlrs) {
    dv.setUint16(v, 0, true); // reserved
    putAscii(dv, v + 2, r.userId, 16);
    dv.setUint16(v + 18, r.recordId, true);
    dv.setUint16(v + 20, r.data.length, true);
    putAscii(dv, v + 22, r.description, 32);
    out.set(r.data, v + VLR_HEADER);
    v += VLR_HEADER + r.data.length;
  }
  return out;
}
