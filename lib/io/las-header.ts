/**
 * LAS 1.0-1.4 public header, VLRs and EVLRs (ASPRS LAS Specification 1.4 R15,
 * section 2). Every length or offset read here is checked against the file
 * size before anything is allocated from it.
 */
import { CrowntallyError } from '../errors.js';
import type { ByteSource, LasHeader, Vlr } from './types.js';
import { readExact } from './sources.js';

/** Public header sizes by minor version (ASPRS LAS 1.4 R15, table 3 and earlier editions). */
export const HEADER_SIZE_1_0 = 227;
export const HEADER_SIZE_1_3 = 235;
export const HEADER_SIZE_1_4 = 375;

/** Minimum record length of point formats 0-10 (ASPRS LAS 1.4 R15, tables 7-17). */
export const POINT_RECORD_SIZES: readonly number[] = [20, 28, 26, 34, 57, 63, 30, 36, 38, 59, 67];

/** laszip VLR identity: user "laszip encoded", record 22204 (the LAZ format's own record). */
export const LAZ_VLR_USER = 'laszip encoded';
export const LAZ_VLR_ID = 22204;

const VLR_HEADER = 54;
const EVLR_HEADER = 60;
/** Any single VLR payload is at most 65535 bytes; EVLRs above this are skipped, not read. */
const MAX_EVLR_READ = 64 * 1024 * 1024;

function ascii(b: Uint8Array, off: number, len: number): string {
  let s = '';
  for (let i = 0; i < len; i++) {
    const c = b[off + i]!;
    if (c === 0) break;
    s += String.fromCharCode(c);
  }
  return s.trim();
}

function u64(dv: DataView, off: number, name: string, src: string): number {
  const v = dv.getBigUint64(off, true);
  if (v > BigInt(Number.MAX_SAFE_INTEGER)) {
    throw new CrowntallyError('BAD_HEADER', `${src}: the ${name} (${v}) is impossibly large; the header is damaged`);
  }
  return Number(v);
}

export interface ParsedLas {
  header: LasHeader;
  vlrs: Vlr[];
  /** Extra bytes in each record beyond the standard fields of its format. */
  extraBytes: number;
}

/** True when the first four bytes are the LAS signature 'LASF'. */
export function hasLasSignature(b: Uint8Array): boolean {
  return b.length >= 4 && b[0] === 0x4c && b[1] === 0x41 && b[2] === 0x53 && b[3] === 0x46;
}

/** Parses the public header of a LAS/LAZ file from its first bytes (at least 227). */
export function parseHeader(b: Uint8Array, size: number, src = 'file'): LasHeader {
  if (size === 0) throw new CrowntallyError('NOT_LAS', `${src} is empty (0 bytes); choose a LAS, LAZ or XYZ file`);
  if (!hasLasSignature(b)) throw new CrowntallyError('NOT_LAS', `${src} is not a LAS/LAZ file (it does not start with "LASF")`);
  if (b.length < HEADER_SIZE_1_0) {
    throw new CrowntallyError('TRUNCATED', `${src}: the LAS header is cut short (${b.length} of at least ${HEADER_SIZE_1_0} bytes)`);
  }
  const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const versionMajor = b[24]!;
  const versionMinor = b[25]!;
  if (versionMajor !== 1 || versionMinor > 4) {
    throw new CrowntallyError('UNSUPPORTED', `${src}: LAS version ${versionMajor}.${versionMinor} is not read (LAS 1.0 to 1.4 are)`);
  }
  const headerSize = dv.getUint16(94, true);
  const need = versionMinor >= 4 ? HEADER_SIZE_1_4 : versionMinor === 3 ? HEADER_SIZE_1_3 : HEADER_SIZE_1_0;
  if (headerSize < need) {
    throw new CrowntallyError('BAD_HEADER', `${src}: header size ${headerSize} is smaller than the ${need} bytes LAS 1.${versionMinor} requires`);
  }
  if (size < headerSize || b.length < need) {
    throw new CrowntallyError('TRUNCATED', `${src}: the file (${size} bytes) ends inside its ${headerSize}-byte header`);
  }
  const offsetToPointData = dv.getUint32(96, true);
  if (offsetToPointData < headerSize) {
    throw new CrowntallyError('BAD_HEADER', `${src}: point data offset ${offsetToPointData} lies inside the ${headerSize}-byte header`);
  }
  const formatByte = b[104]!;
  // LAZ writers set bit 7 (and bit 6) of the format byte to mark compression.
  const compressed = (formatByte & 0xc0) !== 0;
  const pointFormat = formatByte & 0x3f;
  const pointRecordLength = dv.getUint16(105, true);
  if (pointFormat > 10) {
    throw new CrowntallyError('UNSUPPORTED', `${src}: point format ${pointFormat} is not a LAS 1.4 format (0 to 10)`);
  }
  if (pointRecordLength < POINT_RECORD_SIZES[pointFormat]!) {
    throw new CrowntallyError('BAD_HEADER',
      `${src}: record length ${pointRecordLength} is shorter than the ${POINT_RECORD_SIZES[pointFormat]} bytes point format ${pointFormat} needs`);
  }
  const legacyCount = dv.getUint32(107, true);
  const pointsByReturn: number[] = [];
  for (let i = 0; i < 5; i++) pointsByReturn.push(dv.getUint32(111 + 4 * i, true));
  let pointCount = legacyCount;
  if (versionMinor >= 4) {
    const count64 = u64(dv, 247, 'point count', src);
    // Formats 6-10 leave the legacy count at 0; the 64-bit field is the truth (LAS 1.4 R15, 2.4).
    if (count64 > 0 || pointFormat >= 6) pointCount = count64;
    for (let i = 0; i < 15; i++) {
      const v = u64(dv, 255 + 8 * i, 'points by return', src);
      if (i < 5) { if (v > 0 || pointFormat >= 6) pointsByReturn[i] = v; } else pointsByReturn.push(v);
    }
  } else {
    for (let i = 5; i < 15; i++) pointsByReturn.push(0);
  }
  const scale: [number, number, number] = [dv.getFloat64(131, true), dv.getFloat64(139, true), dv.getFloat64(147, true)];
  const offset: [number, number, number] = [dv.getFloat64(155, true), dv.getFloat64(163, true), dv.getFloat64(171, true)];
  for (let i = 0; i < 3; i++) {
    if (!Number.isFinite(scale[i]) || scale[i] === 0) {
      throw new CrowntallyError('BAD_HEADER', `${src}: the ${'xyz'[i]} scale factor is ${scale[i]}; it must be a non-zero number`);
    }
    if (!Number.isFinite(offset[i])) throw new CrowntallyError('BAD_HEADER', `${src}: the ${'xyz'[i]} offset is not a number`);
  }
  const bounds = {
    maxX: dv.getFloat64(179, true), minX: dv.getFloat64(187, true),
    maxY: dv.getFloat64(195, true), minY: dv.getFloat64(203, true),
    maxZ: dv.getFloat64(211, true), minZ: dv.getFloat64(219, true),
  };
  return {
    versionMajor, versionMinor, headerSize, offsetToPointData, pointFormat, pointRecordLength, pointCount,
    pointsByReturn, scale, offset, bounds,
    globalEncoding: dv.getUint16(6, true),
    systemId: ascii(b, 26, 32), software: ascii(b, 58, 32),
    creationDay: dv.getUint16(90, true), creationYear: dv.getUint16(92, true),
    compressed,
  };
}

/** Reads header, VLRs and (1.4) EVLRs. Point data is not touched. */
export async function readLasHeader(source: ByteSource): Promise<ParsedLas> {
  const src = source.name;
  if (source.size === 0) throw new CrowntallyError('NOT_LAS', `${src} is empty (0 bytes); choose a LAS, LAZ or XYZ file`);
  const head = await source.read(0, Math.min(source.size, HEADER_SIZE_1_4));
  const header = parseHeader(head, source.size, src);
  const dv = new DataView(head.buffer, head.byteOffset, head.byteLength);
  if (header.offsetToPointData > source.size) {
    throw new CrowntallyError('TRUNCATED', `${src}: point data should start at byte ${header.offsetToPointData} but the file has ${source.size} bytes`);
  }
  const vlrCount = dv.getUint32(100, true);
  const vlrs: Vlr[] = [];
  // VLRs lie between the header and the point data. Read them one by one so a
  // damaged point data offset never makes us read (or allocate) the gap whole.
  const blockEnd = header.offsetToPointData;
  if (vlrCount * VLR_HEADER > blockEnd - header.headerSize) {
    throw new CrowntallyError('BAD_HEADER', `${src}: ${vlrCount} VLRs cannot fit in the ${blockEnd - header.headerSize} bytes before the point data; the header is damaged`);
  }
  let p = header.headerSize;
  for (let i = 0; i < vlrCount; i++) {
    if (p + VLR_HEADER > blockEnd) {
      throw new CrowntallyError('BAD_HEADER', `${src}: VLR ${i + 1} of ${vlrCount} does not fit before the point data; the header is damaged`);
    }
    const vh = await readExact(source, p, VLR_HEADER, 'VLR header');
    const len = vh[20]! | (vh[21]! << 8);
    if (p + VLR_HEADER + len > blockEnd) {
      throw new CrowntallyError('BAD_HEADER', `${src}: VLR ${i + 1} (${len} bytes) runs into the point data; the header is damaged`);
    }
    const data = (await readExact(source, p + VLR_HEADER, len, 'VLR')).slice();
    vlrs.push({ userId: ascii(vh, 2, 16), recordId: vh[18]! | (vh[19]! << 8), description: ascii(vh, 22, 32),
      dataOffset: p + VLR_HEADER, data, extended: false });
    p += VLR_HEADER + len;
  }
  if (header.versionMinor >= 4) {
    let at = u64(dv, 235, 'EVLR offset', src);
    const n = dv.getUint32(243, true);
    for (let i = 0; i < n && at > 0; i++) {
      if (at + EVLR_HEADER > source.size) {
        throw new CrowntallyError('TRUNCATED', `${src}: EVLR ${i + 1} of ${n} starts past the end of the file`);
      }
      const eh = await readExact(source, at, EVLR_HEADER, 'EVLR header');
      const edv = new DataView(eh.buffer, eh.byteOffset, eh.byteLength);
      const len = u64(edv, 20, 'EVLR length', src);
      if (at + EVLR_HEADER + len > source.size) {
        throw new CrowntallyError('TRUNCATED', `${src}: EVLR ${i + 1} (${len} bytes) runs past the end of the file`);
      }
      // Waveform payloads can be huge and are not used: keep the record, skip big payloads.
      const data = len <= MAX_EVLR_READ ? (await readExact(source, at + EVLR_HEADER, len, 'EVLR')).slice() : new Uint8Array(0);
      vlrs.push({ userId: ascii(eh, 2, 16), recordId: edv.getUint16(18, true), description: ascii(eh, 28, 32),
        dataOffset: at + EVLR_HEADER, data, extended: true });
      at += EVLR_HEADER + len;
    }
  }
  const extraBytes = header.pointRecordLength - POINT_RECORD_SIZES[header.pointFormat]!;
  return { header, vlrs, extraBytes };
}

/** The laszip VLR, when present. */
export function findLazVlr(vlrs: Vlr[]): Vlr | undefined {
  return vlrs.find((v) => v.userId === LAZ_VLR_USER && v.recordId === LAZ_VLR_ID && !v.extended);
}
