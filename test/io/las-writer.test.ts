import { describe, expect, it } from 'vitest';
import { writeLas } from '../../lib/io/las-writer.js';
import { FLAG_OVERLAP, FLAG_WITHHELD, type PointChunk } from '../../lib/io/types.js';
import { CrowntallyError } from '../../lib/errors.js';

function chunk(n: number): PointChunk {
  const c: PointChunk = {
    count: n,
    x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n),
    intensity: new Uint16Array(n), returnNumber: new Uint8Array(n), numberOfReturns: new Uint8Array(n),
    classification: new Uint8Array(n), flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n),
    gpsTime: new Float64Array(n), red: new Uint16Array(n), green: new Uint16Array(n), blue: new Uint16Array(n),
  };
  for (let i = 0; i < n; i++) {
    c.x[i] = 451200 + i * 1.25; c.y[i] = 5782400 - i * 0.5; c.z[i] = 40 + i * 0.125;
    c.intensity[i] = 100 * i; c.returnNumber[i] = (i % 3) + 1; c.numberOfReturns[i] = 3;
    c.classification[i] = i % 2 ? 2 : 5; c.flags[i] = i === 1 ? FLAG_OVERLAP | FLAG_WITHHELD : 0;
    c.scanAngleDeg[i] = -12 + i * 3; c.gpsTime![i] = 320000000 + i;
    c.red![i] = 1000 + i; c.green![i] = 2000 + i; c.blue![i] = 3000 + i;
  }
  return c;
}

const opts = { scale: [0.001, 0.001, 0.001] as [number, number, number], offset: [451000, 5782000, 0] as [number, number, number], creationDay: 150, creationYear: 2024 };
const ascii = (b: Uint8Array, at: number, len: number) => String.fromCharCode(...b.subarray(at, at + len)).replace(/\0+$/, '');

describe('writeLas, LAS 1.4 (formats 6, 7)', () => {
  const wkt = 'PROJCS["test"]';
  const bytes = writeLas(chunk(5), { ...opts, pointFormat: 7, wkt });
  const dv = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);

  it('lays out the 1.4 public header per ASPRS LAS 1.4 R15', () => {
    expect(ascii(bytes, 0, 4)).toBe('LASF');
    expect([bytes[24], bytes[25]]).toEqual([1, 4]);
    // ASPRS LAS 1.4 R15: the 1.4 public header block is 375 bytes.
    expect(dv.getUint16(94, true)).toBe(375);
    // ASPRS LAS 1.4 R15: point format 7 records are 36 bytes.
    expect(bytes[104]).toBe(7);
    expect(dv.getUint16(105, true)).toBe(36);
    // ASPRS LAS 1.4 R15: global encoding bit 4 (WKT) must be set for formats 6-10.
    expect(dv.getUint16(6, true) & 16).toBe(16);
    // ASPRS LAS 1.4 R15: legacy point counts are zero for formats 6-10; the 64-bit count holds the truth.
    expect(dv.getUint32(107, true)).toBe(0);
    for (let r = 0; r < 5; r++) expect(dv.getUint32(111 + 4 * r, true)).toBe(0);
    expect(Number(dv.getBigUint64(247, true))).toBe(5);
    // by return: returns 1,2,3,1,2
    expect(Number(dv.getBigUint64(255, true))).toBe(2);
    expect(Number(dv.getBigUint64(263, true))).toBe(2);
    expect(Number(dv.getBigUint64(271, true))).toBe(1);
    expect(dv.getUint16(90, true)).toBe(150);
    expect(dv.getUint16(92, true)).toBe(2024);
    expect(bytes.length).toBe(dv.getUint32(96, true) + 5 * 36);
  });

  it('carries the CRS as an OGC WKT VLR (LASF_Projection, 2112) per ASPRS LAS 1.4 R15', () => {
    expect(dv.getUint32(100, true)).toBe(1);
    const v = 375;
    expect(ascii(bytes, v + 2, 16)).toBe('LASF_Projection');
    expect(dv.getUint16(v + 18, true)).toBe(2112);
    const len = dv.getUint16(v + 20, true);
    expect(ascii(bytes, v + 54, len)).toBe(wkt);
    expect(bytes[v + 54 + len - 1]).toBe(0); // NUL terminated
    expect(dv.getUint32(96, true)).toBe(375 + 54 + len);
  });

  it('encodes format 6/7 fields with the R15 bit layout and scale/offset', () => {
    const p0 = dv.getUint32(96, true);
    const c = chunk(5);
    for (let i = 0; i < 5; i++) {
      const p = p0 + 36 * i;
      // Values: X = int * scale + offset (ASPRS LAS 1.4 R15, point data record).
      expect(dv.getInt32(p, true) * 0.001 + 451000).toBeCloseTo(c.x[i]!, 6);
      expect(dv.getInt32(p + 4, true) * 0.001 + 5782000).toBeCloseTo(c.y[i]!, 6);
      expect(dv.getInt32(p + 8, true) * 0.001).toBeCloseTo(c.z[i]!, 6);
      expect(dv.getUint16(p + 12, true)).toBe(100 * i);
      // Return number low 4 bits, number of returns high 4 bits (R15 format 6).
      expect(bytes[p + 14]! & 15).toBe((i % 3) + 1);
      expect(bytes[p + 14]! >> 4).toBe(3);
      // Classification flags: bit 2 withheld, bit 3 overlap (R15 format 6).
      expect(bytes[p + 15]).toBe(i === 1 ? 4 | 8 : 0);
      expect(bytes[p + 16]).toBe(i % 2 ? 2 : 5);
      // Scan angle int16 in 0.006-degree steps (R15 format 6).
      expect(dv.getInt16(p + 18, true) * 0.006).toBeCloseTo(-12 + i * 3, 2);
      expect(dv.getFloat64(p + 22, true)).toBe(320000000 + i);
      expect([dv.getUint16(p + 30, true), dv.getUint16(p + 32, true), dv.getUint16(p + 34, true)]).toEqual([1000 + i, 2000 + i, 3000 + i]);
    }
    // Bounds max/min X at 179/187 (R15 header).
    expect(dv.getFloat64(179, true)).toBeCloseTo(451205, 6);
    expect(dv.getFloat64(187, true)).toBeCloseTo(451200, 6);
    expect(dv.getFloat64(211, true)).toBeCloseTo(40.5, 6);
  });

  it('writes 30-byte records for format 6 (ASPRS LAS 1.4 R15)', () => {
    const b6 = writeLas(chunk(4), { ...opts, pointFormat: 6 });
    const d6 = new DataView(b6.buffer);
    expect(d6.getUint16(105, true)).toBe(30);
    expect(d6.getUint32(100, true)).toBe(0);
    expect(b6.length).toBe(375 + 4 * 30);
  });
});

describe('writeLas, LAS 1.2 (formats 0-3)', () => {
  it('writes the 227-byte header, legacy counts and record sizes of ASPRS LAS 1.4 R15 / LAS 1.2', () => {
    // ASPRS LAS 1.4 R15: record sizes 0:20, 1:28, 2:26, 3:34; 1.0-1.2 header 227 bytes.
    const sizes: Record<number, number> = { 0: 20, 1: 28, 2: 26, 3: 34 };
    for (const f of [0, 1, 2, 3] as const) {
      const b = writeLas(chunk(5), { ...opts, pointFormat: f });
      const d = new DataView(b.buffer);
      expect([b[24], b[25]]).toEqual([1, 2]);
      expect(d.getUint16(94, true)).toBe(227);
      expect(d.getUint16(105, true)).toBe(sizes[f]);
      expect(d.getUint32(107, true)).toBe(5);
      expect(d.getUint32(111, true)).toBe(2);
      expect(b.length).toBe(227 + 5 * sizes[f]!);
      // Format 0-5: return 3 bits, returns 3 bits; class 5 bits with withheld at bit 7.
      const p = 227 + sizes[f]!;
      expect(b[p + 14]! & 7).toBe(2);
      expect((b[p + 14]! >> 3) & 7).toBe(3);
      expect(b[p + 15]! & 31).toBe(2);
      expect(b[p + 15]! & 128).toBe(128);
      expect(d.getInt8(p + 16)).toBe(-9);
    }
  });

  it('writes a GeoKeyDirectory VLR (34735) with keys sorted, per OGC GeoTIFF 1.1', () => {
    const b = writeLas(chunk(2), { ...opts, pointFormat: 1, geoKeys: { keys: [{ id: 3072, value: 32633 }, { id: 1024, value: 1 }, { id: 3076, value: 9001 }] } });
    const d = new DataView(b.buffer);
    expect(d.getUint32(100, true)).toBe(1);
    expect(ascii(b, 229, 16)).toBe('LASF_Projection');
    expect(d.getUint16(245, true)).toBe(34735);
    expect(d.getUint16(247, true)).toBe((4 + 3 * 4) * 2); // header of 4 shorts + 4 shorts per key (OGC GeoTIFF 1.1)
    const at = 227 + 54;
    const u = (k: number) => d.getUint16(at + 2 * k, true);
    expect([u(0), u(1), u(2), u(3)]).toEqual([1, 1, 0, 3]);
    expect([u(4), u(7), u(8), u(11), u(12), u(15)]).toEqual([1024, 1, 3072, 32633, 3076, 9001]);
  });
});

describe('writeLas refuses bad input', () => {
  it('throws BAD_OPTIONS with a useful message', () => {
    const c = chunk(2);
    const expectCode = (f: () => unknown, re: RegExp) => {
      try { f(); throw new Error('did not throw'); } catch (e) {
        expect(e).toBeInstanceOf(CrowntallyError);
        expect((e as CrowntallyError).code).toBe('BAD_OPTIONS');
        expect((e as Error).message).toMatch(re);
      }
    };
    expectCode(() => writeLas(c, { ...opts, pointFormat: 6, offset: [0, 0, 0] }), /32-bit/);
    expectCode(() => writeLas(c, { ...opts, pointFormat: 6, geoKeys: { keys: [] } }), /WKT/);
    expectCode(() => writeLas(c, { ...opts, pointFormat: 1, wkt: 'x' }), /GeoKeys/);
    expectCode(() => writeLas(c, { ...opts, pointFormat: 5 as never }), /pointFormat/);
    expectCode(() => writeLas(c, { ...opts, pointFormat: 6, scale: [0, 1, 1] }), /scale/);
    const nan = chunk(2); nan.z[1] = NaN;
    expectCode(() => writeLas(nan, { ...opts, pointFormat: 6 }), /point 1: z is NaN/);
    const hi = chunk(1); hi.classification[0] = 40;
    expectCode(() => writeLas(hi, { ...opts, pointFormat: 0 }), /class 40/);
  });

  it('writes an empty file with zero bounds', () => {
    const b = writeLas(chunk(0), { ...opts, pointFormat: 6 });
    expect(b.length).toBe(375);
    expect(Number(new DataView(b.buffer).getBigUint64(247, true))).toBe(0);
  });
});

describe('writeLas read back with the project reader', () => {
  it('round-trips every field of formats 0-3, 6 and 7', async () => {
    const { openPointCloud } = await import('../../lib/io/open.js');
    const { bufferSource } = await import('../../lib/io/sources.js');
    const c = chunk(7);
    for (const f of [0, 1, 2, 3, 6, 7] as const) {
      const pc = await openPointCloud(bufferSource(writeLas(c, { ...opts, pointFormat: f }), `f${f}.las`));
      expect(pc.header.pointFormat).toBe(f);
      expect(pc.header.pointCount).toBe(7);
      let i = 0;
      for await (const k of pc.chunks()) {
        for (let j = 0; j < k.count; j++, i++) {
          expect(k.x[j]).toBeCloseTo(c.x[i]!, 6);
          expect(k.y[j]).toBeCloseTo(c.y[i]!, 6);
          expect(k.z[j]).toBeCloseTo(c.z[i]!, 6);
          expect(k.intensity[j]).toBe(c.intensity[i]);
          expect(k.returnNumber[j]).toBe(c.returnNumber[i]);
          expect(k.numberOfReturns[j]).toBe(c.numberOfReturns[i]);
          expect(k.classification[j]).toBe(c.classification[i]);
          // Overlap exists only in formats 6-10 (ASPRS LAS 1.4 R15); withheld in all.
          expect(k.flags[j]).toBe(f >= 6 ? c.flags[i] : c.flags[i]! & FLAG_WITHHELD);
          // Formats 0-5 store a whole-degree rank; 6-10 store 0.006-degree steps (R15).
          expect(k.scanAngleDeg[j]).toBeCloseTo(f >= 6 ? c.scanAngleDeg[i]! : Math.round(c.scanAngleDeg[i]!), f >= 6 ? 2 : 6);
          if (f === 1 || f === 3 || f >= 6) expect(k.gpsTime![j]).toBe(c.gpsTime![i]);
          if (f === 2 || f === 3 || f === 7) expect([k.red![j], k.green![j], k.blue![j]]).toEqual([c.red![i], c.green![i], c.blue![i]]);
        }
      }
      expect(i).toBe(7);
      await pc.close();
    }
  });
});

describe('writeLas read by an independent reader', () => {
  it('gives @loaders.gl/las (laz-perf based, LAS up to 1.3) the same positions, intensity and classes for formats 0-3', async () => {
    const { LASLoader } = await import('@loaders.gl/las');
    const { parse } = await import('@loaders.gl/core');
    const c = chunk(7);
    for (const f of [0, 1, 2, 3] as const) {
      const bytes = writeLas(c, { ...opts, pointFormat: f });
      // Outside reference: @loaders.gl/las parses the file on its own.
      const r = (await parse(bytes.slice().buffer, LASLoader, { worker: false, las: { shape: 'mesh', fp64: true } } as never)) as unknown as {
        header: { vertexCount: number };
        attributes: Record<string, { value: ArrayLike<number>; size?: number }>;
      };
      expect(r.header.vertexCount).toBe(7);
      const pos = r.attributes.POSITION!.value, inten = r.attributes.intensity!.value, cls = r.attributes.classification!.value;
      for (let i = 0; i < 7; i++) {
        expect(pos[3 * i]).toBeCloseTo(c.x[i]!, 6);
        expect(pos[3 * i + 1]).toBeCloseTo(c.y[i]!, 6);
        expect(pos[3 * i + 2]).toBeCloseTo(c.z[i]!, 6);
        expect(inten[i]).toBe(c.intensity[i]);
        // That reader hands back the whole byte: class in bits 0-4, withheld in bit 7 (ASPRS LAS 1.4 R15, format 0).
        expect(cls[i]).toBe(c.classification[i]! | (c.flags[i]! & FLAG_WITHHELD ? 128 : 0));
      }
      expect(Boolean(r.attributes.COLOR_0)).toBe(f === 2 || f === 3);
    }
  });
});
