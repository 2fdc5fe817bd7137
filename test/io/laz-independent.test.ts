/**
 * LAZ decoding checked against an independent decoder: laz-rs compiled to
 * WASM, shipped inside @loaders.gl/las (`WasmLasZipDecompressor`). Its raw
 * point records must equal laz-perf's, and this reader's decoded fields must
 * equal the fields decoded from laz-rs's records.
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { readFile } from 'node:fs/promises';
import { pathToFileURL } from 'node:url';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import {
  allocChunk, applyColourScale, bufferSource, colourScaleFor, decodeRecords, openPointCloud, readLasHeader, readLazChunkTable,
  type PointChunk,
} from '../../lib/io/index.js';

const FIX = path.resolve(__dirname, '../../../shared/fixtures/laz-pairs');
const RS_DIR = path.resolve(__dirname, '../../node_modules/@loaders.gl/las/dist/libs/laz-rs-wasm');
const LAZ = ['point10-1.0.laz', 'point10.las.laz', 'point-time.las.laz', 'point-color.las.laz', 'point-color-time.las.laz',
  'point-time-1.4.las.laz', 'extrabytes.laz', '1815.laz', 'autzen_trim.laz'];
const lazPerf = nodeLazPerf();

interface LazRs { WasmLasZipDecompressor: new (b: Uint8Array) => { decompress_many(out: Uint8Array): void; free(): void }; initSync(m: { module: BufferSource }): unknown }

async function lazRs(): Promise<LazRs> {
  const mod = (await import(pathToFileURL(path.join(RS_DIR, 'laz_rs_wasm.js')).href)) as LazRs;
  mod.initSync({ module: await readFile(path.join(RS_DIR, 'laz_rs_wasm_bg.wasm')) });
  return mod;
}

describe('laz-rs against laz-perf', () => {
  for (const f of LAZ) {
    it(f, async () => {
      const rs = await lazRs();
      const raw = new Uint8Array(await readFile(path.join(FIX, f)));
      const src = bufferSource(raw, f);
      const { header, vlrs } = await readLasHeader(src);
      const len = header.pointRecordLength, n = header.pointCount;
      const dec = new rs.WasmLasZipDecompressor(raw);
      const rsRecords = new Uint8Array(n * len);
      dec.decompress_many(rsRecords);
      dec.free();
      // laz-perf raw records, chunk by chunk from the chunk table.
      const lp = await lazPerf();
      const table = (await readLazChunkTable(src, header, vlrs))!;
      const lpRecords = new Uint8Array(n * len);
      let at = 0;
      for (const e of table) {
        const inPtr = lp._malloc(e.byteLength + 64), outPtr = lp._malloc(len);
        lp.HEAPU8.set(raw.subarray(e.offset, e.offset + e.byteLength), inPtr);
        const cd = new lp.ChunkDecoder();
        cd.open(header.pointFormat, len, inPtr);
        for (let i = 0; i < e.pointCount; i++, at += len) { cd.getPoint(outPtr); lpRecords.set(lp.HEAPU8.subarray(outPtr, outPtr + len), at); }
        cd.delete(); lp._free(inPtr); lp._free(outPtr);
      }
      expect(Buffer.from(lpRecords).equals(Buffer.from(rsRecords))).toBe(true);
      // Fields: the reader's output equals the same decoder applied to laz-rs's records.
      const ref = allocChunk(n, header.pointFormat);
      decodeRecords(rsRecords, 0, n, header.pointFormat, len, header, ref);
      const pc = await openPointCloud(src, { lazPerf });
      const got: PointChunk[] = [];
      for await (const c of pc.chunks()) got.push(c);
      const firstRef = allocChunk(Math.min(n, got[0]!.count), header.pointFormat);
      decodeRecords(rsRecords, 0, firstRef.count, header.pointFormat, len, header, firstRef);
      applyColourScale(ref, colourScaleFor(firstRef));
      let i0 = 0;
      for (const c of got) {
        for (const k of ['x', 'y', 'z', 'intensity', 'returnNumber', 'numberOfReturns', 'classification', 'flags', 'scanAngleDeg', 'gpsTime', 'red', 'green', 'blue'] as const) {
          const a = c[k] as ArrayLike<number> | undefined, b = ref[k] as ArrayLike<number> | undefined;
          expect(!!a, k).toBe(!!b);
          if (!a || !b) continue;
          for (let i = 0; i < c.count; i++) if (a[i] !== b[i0 + i]) expect(`${k}[${i0 + i}]=${a[i]}`).toBe(`${k}[${i0 + i}]=${b[i0 + i]}`);
        }
        i0 += c.count;
      }
      expect(i0).toBe(n);
    }, 30_000);
  }
});
