/**
 * LAS/LAZ twins decode to the same points field by field. Outside sources:
 * the fixture pairs (each LAZ written from its LAS twin by an independent LAZ
 * writer), and ASPRS LAS Specification 1.4 R15 for sizes and bit layouts.
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { readFile } from 'node:fs/promises';
import { fileSource } from '../../lib/node/file-source.js';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import {
  openPointCloud, bufferSource, CHUNK_POINTS, blobSource, decodeRecords, allocChunk, readLasHeader, POINT_RECORD_SIZES,
  FLAG_SYNTHETIC, FLAG_KEYPOINT, FLAG_WITHHELD, FLAG_OVERLAP, type PointChunk, type PointCloud,
} from '../../lib/io/index.js';

const FIX = path.resolve(__dirname, '../../../shared/fixtures/laz-pairs');
const lazPerf = nodeLazPerf();

const FIELDS = ['x', 'y', 'z', 'intensity', 'returnNumber', 'numberOfReturns', 'classification', 'flags', 'scanAngleDeg',
  'gpsTime', 'red', 'green', 'blue', 'nir'] as const;

async function readAll(pc: PointCloud): Promise<{ n: number; cols: Record<string, number[]>; chunks: number }> {
  const cols: Record<string, number[]> = {};
  let n = 0, chunks = 0;
  for await (const c of pc.chunks()) {
    chunks++;
    n += c.count;
    for (const f of FIELDS) {
      const a = c[f as keyof PointChunk] as ArrayLike<number> | undefined;
      if (!a) continue;
      (cols[f] ??= []).push(...Array.from(a));
    }
  }
  return { n, cols, chunks };
}

const PAIRS: [string, string, number, number][] = [
  // [las, laz, format, points] from the fixture table (NOTICE.md of the fixtures).
  ['point10-1.0.las', 'point10-1.0.laz', 0, 1],
  ['point10.las', 'point10.las.laz', 0, 1065],
  ['point-time.las', 'point-time.las.laz', 1, 1065],
  ['point-color.las', 'point-color.las.laz', 2, 1065],
  ['point-color-time.las', 'point-color-time.las.laz', 3, 1065],
  ['point-time.las', 'point-time-1.4.las.laz', 1, 1065],
  ['extrabytes.las', 'extrabytes.laz', 3, 1065],
  ['1815.las', '1815.laz', 1, 1247],
  ['autzen_trim.las', 'autzen_trim.laz', 3, 110000],
  ['no-points-1.3.las', 'no-points-1.3.laz', 0, 0],
];

/** Chunk sizes a reader hands out: each run of `counts` cut into pieces of at most `size` points. */
function pieces(counts: number[], size: number): number[] {
  const out: number[] = [];
  for (const c of counts) for (let d = 0; d < c; d += size) out.push(Math.min(size, c - d));
  return out;
}

describe('LAS/LAZ twins', () => {
  for (const [las, laz, fmt, count] of PAIRS) {
    it(`${laz} decodes to the points of ${las}`, async () => {
      const a = await openPointCloud(await fileSource(path.join(FIX, las)));
      const b = await openPointCloud(await fileSource(path.join(FIX, laz)), { lazPerf });
      expect(a.kind).toBe('las');
      expect(b.kind).toBe('laz');
      expect(a.header.pointFormat).toBe(fmt);
      expect(b.header.pointFormat).toBe(fmt);
      const ra = await readAll(a), rb = await readAll(b);
      expect(ra.n).toBe(count);
      expect(rb.n).toBe(count);
      expect(Object.keys(rb.cols).sort()).toEqual(Object.keys(ra.cols).sort());
      for (const f of Object.keys(ra.cols)) expect(rb.cols[f], f).toEqual(ra.cols[f]);
      if (count === 0) expect(rb.chunks).toBe(0);
      await a.close(); await b.close();
    }, 30_000);
  }

  it('autzen_trim: 8-bit colour is scaled by 257 and chunks hold at most CHUNK_POINTS points', async () => {
    // NOTICE.md of the fixtures: autzen_trim stores RGB in 8 bits.
    const raw = await readFile(path.join(FIX, 'autzen_trim.las'));
    const { header } = await readLasHeader(bufferSource(raw));
    const first = allocChunk(1, 3);
    decodeRecords(raw, header.offsetToPointData, 1, 3, header.pointRecordLength, header, first);
    const pc = await openPointCloud(blobSource(new Blob([raw]), 'autzen_trim.las'));
    let max = 0, sizes: number[] = [];
    for await (const c of pc.chunks()) {
      sizes.push(c.count);
      for (let i = 0; i < c.count; i++) { max = Math.max(max, c.red![i]!); expect(c.red![i]! % 257).toBe(0); }
      if (sizes.length === 1) expect(c.red![0]).toBe(first.red![0]! * 257);
    }
    expect(max).toBeGreaterThan(255);
    expect(sizes).toEqual(pieces([110000], CHUNK_POINTS));
  });
});

describe('header and record layout (ASPRS LAS 1.4 R15)', () => {
  it('public header sizes: 227 (1.0-1.2), 235 (1.3), 375 (1.4)', async () => {
    // ASPRS LAS 1.4 R15, table 3 (and the 1.0-1.3 editions for older headers).
    const cases: [string, number, number][] = [['point10-1.0.las', 0, 227], ['point10.las', 2, 227], ['no-points-1.3.las', 3, 235]];
    for (const [f, minor, size] of cases) {
      const { header } = await readLasHeader(await fileSource(path.join(FIX, f)));
      expect(header.versionMinor).toBe(minor);
      expect(header.headerSize).toBe(size);
    }
    const h14 = (await readLasHeader(await fileSource(path.join(FIX, 'point-time-1.4.las.laz')))).header;
    expect([h14.versionMinor, h14.headerSize, h14.pointCount]).toEqual([4, 375, 1065]);
  });

  it('point record sizes of formats 0-10', () => {
    // ASPRS LAS 1.4 R15, tables 7-17: 0:20 1:28 2:26 3:34 4:57 5:63 6:30 7:36 8:38 9:59 10:67.
    expect(POINT_RECORD_SIZES).toEqual([20, 28, 26, 34, 57, 63, 30, 36, 38, 59, 67]);
  });

  const hdr = { scale: [0.01, 0.01, 0.001] as [number, number, number], offset: [1000, 2000, 0] as [number, number, number] };

  it('formats 0-5: 3-bit returns, 5-bit class, synthetic/key-point/withheld bits, int8 scan angle', () => {
    // ASPRS LAS 1.4 R15, tables 7 and 8: byte 14 return number bits 0-2, number of returns bits 3-5,
    // scan direction bit 6, edge bit 7; byte 15 class bits 0-4, synthetic 5, key-point 6, withheld 7;
    // byte 16 scan angle rank, signed degrees. Format 3: GPS time at 20, RGB at 28.
    const rec = new Uint8Array(34);
    const dv = new DataView(rec.buffer);
    dv.setInt32(0, 12345, true); dv.setInt32(4, -5, true); dv.setInt32(8, 7000, true);
    dv.setUint16(12, 321, true);
    rec[14] = 0b11_010_011;
    rec[15] = 0b101_00101;
    dv.setInt8(16, -12);
    dv.setFloat64(20, 123456.5, true);
    dv.setUint16(28, 1000, true); dv.setUint16(30, 2000, true); dv.setUint16(32, 3000, true);
    const c = allocChunk(1, 3);
    decodeRecords(rec, 0, 1, 3, 34, hdr, c);
    expect(c.x[0]).toBeCloseTo(1123.45, 9);
    expect(c.y[0]).toBeCloseTo(1999.95, 9);
    expect(c.z[0]).toBeCloseTo(7, 9);
    expect([c.intensity[0], c.returnNumber[0], c.numberOfReturns[0], c.classification[0]]).toEqual([321, 3, 2, 5]);
    expect(c.flags[0]).toBe(FLAG_SYNTHETIC | FLAG_WITHHELD);
    expect(c.scanAngleDeg[0]).toBe(-12);
    expect(c.gpsTime![0]).toBe(123456.5);
    expect([c.red![0], c.green![0], c.blue![0]]).toEqual([1000, 2000, 3000]);
  });

  it('formats 6-10: 4-bit returns, class flags incl. overlap, full class byte, int16 scan angle in 0.006 degrees', () => {
    // ASPRS LAS 1.4 R15, tables 13 and 14 (format 6) and 16 (format 8): byte 14 return number bits 0-3,
    // number of returns bits 4-7; byte 15 flags bits 0-3 (synthetic, key-point, withheld, overlap),
    // scanner channel 4-5; byte 16 class; 18 scan angle int16 * 0.006 deg; 22 GPS time; 30 RGB; 36 NIR.
    const rec = new Uint8Array(38 + 4); // 4 extra bytes, skipped by the record length
    const dv = new DataView(rec.buffer);
    rec[14] = (15 << 4) | 12;
    rec[15] = 0b0011_1010;
    rec[16] = 200;
    dv.setInt16(18, -15000, true);
    dv.setFloat64(22, -7.25, true);
    dv.setUint16(30, 65535, true); dv.setUint16(36, 4321, true);
    const c = allocChunk(1, 8);
    decodeRecords(rec, 0, 1, 8, 42, hdr, c);
    expect([c.returnNumber[0], c.numberOfReturns[0], c.classification[0]]).toEqual([12, 15, 200]);
    expect(c.flags[0]).toBe(FLAG_KEYPOINT | FLAG_OVERLAP);
    expect(c.scanAngleDeg[0]).toBeCloseTo(-90, 4);
    expect(c.gpsTime![0]).toBe(-7.25);
    expect(c.red![0]).toBe(65535);
    expect(c.nir![0]).toBe(4321);
  });

  it('LAS 1.4 format 6 with zero legacy counts uses the 64-bit count', async () => {
    // ASPRS LAS 1.4 R15, 2.4: for formats 6-10 the legacy point count fields must be zero.
    const raw = new Uint8Array(await readFile(path.join(FIX, 'point-time-1.4.las.laz')));
    const b = raw.slice();
    const dv = new DataView(b.buffer);
    // Turn the header into an uncompressed format 6 file of 2 points with legacy count 0.
    b[104] = 6; dv.setUint16(105, 30, true); dv.setUint32(107, 0, true);
    dv.setUint32(100, 0, true); // no VLRs
    dv.setUint32(96, 375, true);
    dv.setBigUint64(247, 2n, true);
    const file = new Uint8Array(375 + 60);
    file.set(b.subarray(0, 375));
    const fdv = new DataView(file.buffer);
    fdv.setFloat64(179, 1e9, true); fdv.setFloat64(187, -1e9, true);
    // Bounds that hold the records' (0, 0, 0): the reader refuses points outside the header bounds.
    fdv.setFloat64(195, 1e9, true); fdv.setFloat64(203, -1e9, true); fdv.setFloat64(211, 1e9, true); fdv.setFloat64(219, -1e9, true);
    file[375 + 14] = 0x21; file[375 + 30 + 14] = 0x22;
    const pc = await openPointCloud(bufferSource(file, 'f6.las'));
    expect(pc.header.pointCount).toBe(2);
    const r = await readAll(pc);
    expect(r.cols['returnNumber']).toEqual([1, 2]);
    expect(r.cols['numberOfReturns']).toEqual([2, 2]);
  });
});

describe('progress and cancel', () => {
  for (const f of ['autzen_trim.las', 'autzen_trim.laz']) {
    it(`${f}: progress after each chunk; an aborted signal stops with ABORTED`, async () => {
      const pc = await openPointCloud(await fileSource(path.join(FIX, f)), { lazPerf });
      const seen: [number, number][] = [];
      for await (const c of pc.chunks({ onProgress: (a, b) => seen.push([a, b]) })) void c;
      // common practice: progress counts the points handed out so far, out of the header count.
      // The LAZ file's chunk table (NOTICE.md of the fixtures) holds 50000, 50000 and 10000 points.
      const sizes = f.endsWith('.laz') ? pieces([50000, 50000, 10000], CHUNK_POINTS) : pieces([110000], CHUNK_POINTS);
      let sum = 0;
      expect(seen).toEqual(sizes.map((k) => [(sum += k), 110000]));
      const ac = new AbortController();
      let n = 0;
      await expect((async () => { for await (const c of pc.chunks({ signal: ac.signal })) { n += c.count; ac.abort(); } })())
        .rejects.toMatchObject({ code: 'ABORTED' });
      expect(n).toBe(CHUNK_POINTS);
      await pc.close();
    });
  }
});
