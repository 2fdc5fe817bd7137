/**
 * LAZ chunk table: decoding, encoding and the fallbacks. Outside source: the
 * chunk tables inside the fixture LAZ files, written by an independent LAZ
 * writer (fixtures NOTICE.md); the format as described for LASzip
 * (Isenburg 2013, PE&RS 79(2)).
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { readFile } from 'node:fs/promises';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import {
  bufferSource, readLasHeader, readLazChunkTable, encodeLazChunkTable, decodeChunkTableEntries, chunkTableOffset,
  findLazVlr, openPointCloud, decodeLazChunk, VARIABLE_CHUNK_SIZE, type LazChunkEntry,
} from '../../lib/io/index.js';
import { ArithmeticDecoder, ArithmeticEncoder, IntegerCoder } from '../../lib/io/arith.js';

const FIX = path.resolve(__dirname, '../../../shared/fixtures/laz-pairs');
const LAZ = ['point10-1.0.laz', 'point10.las.laz', 'point-time.las.laz', 'point-color.las.laz', 'point-color-time.las.laz',
  'point-time-1.4.las.laz', 'extrabytes.laz', '1815.laz', 'autzen_trim.laz'];
const lazPerf = nodeLazPerf();

async function load(f: string) {
  const raw = new Uint8Array(await readFile(path.join(FIX, f)));
  const src = bufferSource(raw, f);
  const { header, vlrs } = await readLasHeader(src);
  return { raw, src, header, vlrs };
}

async function sumPoints(raw: Uint8Array, name: string): Promise<{ n: number; z: number[] }> {
  const pc = await openPointCloud(bufferSource(raw, name), { lazPerf });
  let n = 0; const z: number[] = [];
  for await (const c of pc.chunks()) { n += c.count; for (let i = 0; i < c.count; i += 97) z.push(c.z[i]!); }
  return { n, z };
}

describe('chunk table of every fixture', () => {
  for (const f of LAZ) {
    it(`${f}: chunks tile the point data, counts sum to the header, the table re-encodes identically`, async () => {
      const { raw, src, header, vlrs } = await load(f);
      const t = (await readLazChunkTable(src, header, vlrs))!;
      const tableAt = (await chunkTableOffset(src, header))!;
      // Tiling: first chunk right after the 8-byte table offset, each next where the previous ends, last ends at the table.
      let at = header.offsetToPointData + 8;
      for (const e of t) { expect(e.offset).toBe(at); at += e.byteLength; }
      expect(at).toBe(tableAt);
      expect(t.reduce((s, e) => s + e.pointCount, 0)).toBe(header.pointCount);
      // The writer's bytes for the table come back byte for byte.
      const enc = encodeLazChunkTable(t.map((e) => e.byteLength), null);
      expect(Array.from(raw.subarray(tableAt, tableAt + enc.length))).toEqual(Array.from(enc));
      // Each chunk decodes alone to its point count.
      const e0 = t[t.length - 1]!;
      const lp = await lazPerf();
      const c = decodeLazChunk(lp, raw.subarray(e0.offset, e0.offset + e0.byteLength), header.pointFormat,
        header.pointRecordLength, e0.pointCount, header);
      expect(c.count).toBe(e0.pointCount);
    });
  }
});

describe('coder round trips', () => {
  it('variable-size table: encode then decode gives the entries back', () => {
    const counts = [50000, 1, 49999, 123456, 7, 7, 0x7fffffff, 3];
    const bytes = [283499, 10, 262423, 1 << 30, 255, 256, 65537, 1];
    const enc = encodeLazChunkTable(bytes, counts);
    const d = decodeChunkTableEntries(enc.subarray(8), counts.length, true, 0);
    expect(d.counts).toEqual(counts);
    expect(d.bytes).toEqual(bytes);
  });

  it('integer coder: random corrections of every bit length round trip', () => {
    // common practice: a seeded generator so the case is the same on every run.
    let s = 12345;
    const rnd = () => (s = (Math.imul(s, 1103515245) + 12345) >>> 0);
    const vals: number[] = [];
    for (let i = 0; i < 3000; i++) vals.push((rnd() >>> (rnd() % 32)) * (rnd() & 1 ? 1 : -1) | 0);
    vals.push(-0x80000000, 0x7fffffff, 0, 1, -1);
    const enc = new ArithmeticEncoder();
    const ic = new IntegerCoder(2);
    vals.forEach((v, i) => ic.encode(enc, i ? vals[i - 1]! : 0, v, i & 1));
    const bytes = enc.finish();
    const dec = new ArithmeticDecoder(bytes);
    const id = new IntegerCoder(2);
    const out: number[] = [];
    vals.forEach((_, i) => out.push(id.decode(dec, i ? out[i - 1]! : 0, i & 1)));
    expect(out).toEqual(vals);
  });
});

/** Rewrites a LAZ file with variable-size chunk marking and a new table. */
function rewriteTable(raw: Uint8Array, lazVlrOffset: number, tableAt: number, t: LazChunkEntry[], variable: boolean): Uint8Array {
  const table = encodeLazChunkTable(t.map((e) => e.byteLength), variable ? t.map((e) => e.pointCount) : null);
  const out = new Uint8Array(tableAt + table.length);
  out.set(raw.subarray(0, tableAt));
  out.set(table, tableAt);
  if (variable) new DataView(out.buffer).setUint32(lazVlrOffset + 12, VARIABLE_CHUNK_SIZE, true);
  return out;
}

describe('fallbacks', () => {
  it('variable-size chunks are read from their table', async () => {
    const { raw, src, header, vlrs } = await load('autzen_trim.laz');
    const t = (await readLazChunkTable(src, header, vlrs))!;
    const tableAt = (await chunkTableOffset(src, header))!;
    const v = rewriteTable(raw, findLazVlr(vlrs)!.dataOffset, tableAt, t, true);
    const s2 = bufferSource(v, 'var.laz');
    const h2 = await readLasHeader(s2);
    const t2 = (await readLazChunkTable(s2, h2.header, h2.vlrs))!;
    expect(t2).toEqual(t);
    expect(await sumPoints(v, 'var.laz')).toEqual(await sumPoints(raw, 'autzen_trim.laz'));
  });

  it('table offset -1 with the offset in the last 8 bytes (stream-written)', async () => {
    const { raw, header } = await load('point-color.las.laz');
    const b = new Uint8Array(raw.length + 8);
    b.set(raw);
    const dv = new DataView(b.buffer);
    const tableAt = Number(dv.getBigInt64(header.offsetToPointData, true));
    dv.setBigInt64(header.offsetToPointData, -1n, true);
    dv.setBigInt64(raw.length, BigInt(tableAt), true);
    expect(await sumPoints(b, 'tail.laz')).toEqual(await sumPoints(raw, 'point-color.las.laz'));
  });

  it('table offset -1 and no table: a one-chunk file still decodes; a many-chunk file fails clearly', async () => {
    for (const f of ['autzen_trim.laz', 'point-time-1.4.las.laz']) {
      const { raw, header } = await load(f);
      const b = raw.slice();
      const dv = new DataView(b.buffer);
      const tableAt = Number(dv.getBigInt64(header.offsetToPointData, true));
      dv.setBigInt64(header.offsetToPointData, -1n, true);
      const cut = b.slice(0, tableAt); // drop the table: the last 8 bytes are now point data
      if (f === 'autzen_trim.laz') {
        await expect(sumPoints(cut, 'stream.laz')).rejects.toMatchObject({ code: 'CORRUPT_LAZ', message: expect.stringContaining('no chunk table') });
      } else {
        expect(await sumPoints(cut, 'stream.laz')).toEqual(await sumPoints(raw, f));
      }
    }
  });
});
