/**
 * Point record decoding for formats 0-10 (ASPRS LAS Specification 1.4 R15,
 * tables 7-17) from raw little-endian records into a PointChunk
 * (structure of arrays). One tight loop per chunk; no per-point objects.
 */
import { CrowntallyError } from '../errors.js';
import type { ByteSource, LasHeader, PointChunk, ReadOptions } from './types.js';
import { readExact } from './sources.js';
import { throwIfAborted } from '../errors.js';

/**
 * Points per chunk handed downstream. Small enough (about 400 KB of fields)
 * that a chunk decoded into memory is still in the CPU cache when the
 * read-out and the surface pass read it; measured on a 2.2M-point LAZ, the
 * job took about a tenth less time than with 50,000-point chunks.
 */
export const CHUNK_POINTS = 8192;

export function formatHasTime(f: number): boolean { return f === 1 || f >= 3; }
export function formatHasRgb(f: number): boolean { return f === 2 || f === 3 || f === 5 || f === 7 || f === 8 || f === 10; }
export function formatHasNir(f: number): boolean { return f === 8 || f === 10; }

/** Byte offset of red within a record, or -1. */
function rgbOffset(f: number): number {
  if (f === 2) return 20;
  if (f === 3 || f === 5) return 28;
  if (f === 7 || f === 8 || f === 10) return 30;
  return -1;
}

/**
 * A chunk of `count` zeroed points with the fields of `pointFormat`. All
 * fields are views into one buffer (widest type first, so every view is
 * aligned): one allocation per chunk keeps the garbage collector's share of
 * a large read small, and a transfer moves one buffer.
 */
export function allocChunk(count: number, pointFormat: number): PointChunk {
  const time = formatHasTime(pointFormat), rgb = formatHasRgb(pointFormat), nir = formatHasNir(pointFormat);
  const n = count;
  const bytes = n * ((3 + (time ? 1 : 0)) * 8 + 4 + (1 + (rgb ? 3 : 0) + (nir ? 1 : 0)) * 2 + 4);
  const buf = new ArrayBuffer(bytes);
  let at = 0;
  const f64 = () => { const a = new Float64Array(buf, at, n); at += 8 * n; return a; };
  const f32 = () => { const a = new Float32Array(buf, at, n); at += 4 * n; return a; };
  const u16 = () => { const a = new Uint16Array(buf, at, n); at += 2 * n; return a; };
  const u8 = () => { const a = new Uint8Array(buf, at, n); at += n; return a; };
  const x = f64(), y = f64(), z = f64();
  const gpsTime = time ? f64() : undefined;
  const scanAngleDeg = f32();
  const intensity = u16();
  const red = rgb ? u16() : undefined, green = rgb ? u16() : undefined, blue = rgb ? u16() : undefined;
  const nirA = nir ? u16() : undefined;
  const c: PointChunk = {
    count, x, y, z, intensity, returnNumber: u8(), numberOfReturns: u8(), classification: u8(), flags: u8(), scanAngleDeg,
  };
  if (gpsTime) c.gpsTime = gpsTime;
  if (red && green && blue) { c.red = red; c.green = green; c.blue = blue; }
  if (nirA) c.nir = nirA;
  return c;
}

/**
 * Decodes `count` records starting at byte `base` of `bytes` into `out` from
 * index `at`. Extra bytes past the standard fields are skipped by the record length.
 */
export function decodeRecords(bytes: Uint8Array, base: number, count: number, pointFormat: number, recordLength: number,
  header: Pick<LasHeader, 'scale' | 'offset'>, out: PointChunk, at = 0): void {
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const [sx, sy, sz] = header.scale;
  const [ox, oy, oz] = header.offset;
  const { x, y, z, intensity, returnNumber, numberOfReturns, classification, flags, scanAngleDeg } = out;
  const legacy = pointFormat < 6;
  let o = base;
  const end = at + count;
  if (legacy) {
    for (let i = at; i < end; i++, o += recordLength) {
      x[i] = dv.getInt32(o, true) * sx + ox;
      y[i] = dv.getInt32(o + 4, true) * sy + oy;
      z[i] = dv.getInt32(o + 8, true) * sz + oz;
      intensity[i] = dv.getUint16(o + 12, true);
      const rb = bytes[o + 14]!;
      // Formats 0-5: return number bits 0-2, number of returns bits 3-5 (LAS 1.4 R15, table 7).
      returnNumber[i] = rb & 7;
      numberOfReturns[i] = (rb >> 3) & 7;
      const cb = bytes[o + 15]!;
      // Class in bits 0-4; bits 5, 6, 7 are synthetic, key-point, withheld (table 8): the order of
      // FLAG_SYNTHETIC=1, FLAG_KEYPOINT=2, FLAG_WITHHELD=4, so a shift maps them.
      classification[i] = cb & 31;
      flags[i] = cb >> 5;
      // Scan angle rank: signed byte, whole degrees.
      scanAngleDeg[i] = dv.getInt8(o + 16);
    }
  } else {
    for (let i = at; i < end; i++, o += recordLength) {
      x[i] = dv.getInt32(o, true) * sx + ox;
      y[i] = dv.getInt32(o + 4, true) * sy + oy;
      z[i] = dv.getInt32(o + 8, true) * sz + oz;
      intensity[i] = dv.getUint16(o + 12, true);
      const rb = bytes[o + 14]!;
      // Formats 6-10: return number bits 0-3, number of returns bits 4-7 (LAS 1.4 R15, table 13).
      returnNumber[i] = rb & 15;
      numberOfReturns[i] = rb >> 4;
      // Class flags bits 0-3: synthetic, key-point, withheld, overlap; full class byte after.
      flags[i] = bytes[o + 15]! & 15;
      classification[i] = bytes[o + 16]!;
      // Scan angle: int16 in 0.006-degree steps.
      scanAngleDeg[i] = dv.getInt16(o + 18, true) * 0.006;
    }
  }
  if (out.gpsTime) {
    const g = out.gpsTime;
    const to = legacy ? 20 : 22;
    o = base + to;
    for (let i = at; i < end; i++, o += recordLength) g[i] = dv.getFloat64(o, true);
  }
  const ro = rgbOffset(pointFormat);
  if (ro >= 0 && out.red && out.green && out.blue) {
    const r = out.red, gr = out.green, b = out.blue;
    o = base + ro;
    for (let i = at; i < end; i++, o += recordLength) {
      r[i] = dv.getUint16(o, true); gr[i] = dv.getUint16(o + 2, true); b[i] = dv.getUint16(o + 4, true);
    }
  }
  if (out.nir) {
    const n = out.nir;
    o = base + 36;
    for (let i = at; i < end; i++, o += recordLength) n[i] = dv.getUint16(o, true);
  }
}

/**
 * The 8-bit colour rule: some writers store 0-255 colour in the 16-bit RGB
 * fields. When every R, G and B value of the file's first chunk is <= 255 the
 * whole file is taken as 8-bit and scaled by 257 (255 -> 65535), so downstream
 * code always sees 16-bit colour. Returns 257 or 1.
 */
export function colourScaleFor(first: PointChunk): number {
  const { red, green, blue } = first;
  if (!red || !green || !blue) return 1;
  let m = 0;
  for (let i = 0; i < first.count; i++) m |= red[i]! | green[i]! | blue[i]!;
  return m <= 255 ? 257 : 1;
}

export function applyColourScale(c: PointChunk, s: number): void {
  if (s === 1) return;
  for (const a of [c.red, c.green, c.blue]) {
    if (!a) continue;
    for (let i = 0; i < c.count; i++) a[i] = a[i]! * s;
  }
}

/**
 * Throws BAD_HEADER when a point of `c` lies outside the header bounds by
 * more than a few scale steps (NaN fails too). The grids are laid over the
 * header bounds, so a point outside them would silently drop out of the
 * tally; a damaged scale, offset or record is refused instead.
 */
export function checkLasBounds(c: PointChunk, header: LasHeader, label: string, first: number): void {
  const b = header.bounds;
  const tx = 4 * Math.abs(header.scale[0]) + 1e-9 * Math.max(Math.abs(b.minX), Math.abs(b.maxX));
  const ty = 4 * Math.abs(header.scale[1]) + 1e-9 * Math.max(Math.abs(b.minY), Math.abs(b.maxY));
  const tz = 4 * Math.abs(header.scale[2]) + 1e-9 * Math.max(Math.abs(b.minZ), Math.abs(b.maxZ));
  const lx = b.minX - tx, hx = b.maxX + tx, ly = b.minY - ty, hy = b.maxY + ty, lz = b.minZ - tz, hz = b.maxZ + tz;
  const { x, y, z } = c;
  for (let i = 0; i < c.count; i++) {
    const xi = x[i]!, yi = y[i]!, zi = z[i]!;
    if (!(xi >= lx && xi <= hx && yi >= ly && yi <= hy && zi >= lz && zi <= hz)) {
      throw new CrowntallyError('BAD_HEADER',
        `${label}: point ${first + i + 1} lies at (${xi}, ${yi}, ${zi}), outside the header's bounds ` +
        `(x ${b.minX} to ${b.maxX}, y ${b.minY} to ${b.maxY}, z ${b.minZ} to ${b.maxZ}); the header or the point records are damaged, ` +
        'rewrite the file with a LAS tool that recomputes the bounds', { point: first + i });
    }
  }
}

/** Streams the points of an uncompressed LAS file in chunks, reading one range per chunk. */
export async function* lasChunks(source: ByteSource, header: LasHeader, opts: ReadOptions = {}): AsyncGenerator<PointChunk> {
  const { pointCount: total, pointRecordLength: len, pointFormat: fmt } = header;
  const dataEnd = header.offsetToPointData + total * len;
  if (dataEnd > source.size) {
    throw new CrowntallyError('TRUNCATED',
      `${source.name}: the header promises ${total} points (${total * len} bytes) but the file ends ${dataEnd - source.size} bytes early`,
      { pointCount: total, size: source.size });
  }
  let scale = 0;
  for (let done = 0; done < total;) {
    throwIfAborted(opts.signal);
    const n = Math.min(CHUNK_POINTS, total - done);
    const bytes = await readExact(source, header.offsetToPointData + done * len, n * len, 'point records');
    const chunk = allocChunk(n, fmt);
    decodeRecords(bytes, 0, n, fmt, len, header, chunk);
    checkLasBounds(chunk, header, source.name, done);
    if (scale === 0) scale = colourScaleFor(chunk);
    applyColourScale(chunk, scale);
    done += n;
    opts.onProgress?.(done, total);
    yield chunk;
  }
}
