/**
 * The benchmark's big-LAZ builder: repeated chunks with a re-encoded chunk
 * table must read back as the seed's points repeated, and decode the same
 * with the independent laz-rs decoder (WASM build in @loaders.gl/las).
 */
import { expect, it } from 'vitest';
import path from 'node:path';
import { readFile } from 'node:fs/promises';
import { pathToFileURL } from 'node:url';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import { bufferSource, openPointCloud, readLasHeader, readLazChunkTable } from '../../lib/io/index.js';
import { makeBigLaz } from '../../bench/make-big-laz.js';

const FIX = path.resolve(__dirname, '../../../shared/fixtures/laz-pairs');
const RS_DIR = path.resolve(__dirname, '../../node_modules/@loaders.gl/las/dist/libs/laz-rs-wasm');
const lazPerf = nodeLazPerf();

it('autzen_trim repeated 3 times reads back as its chunks repeated', async () => {
  const seed = new Uint8Array(await readFile(path.join(FIX, 'autzen_trim.laz')));
  const big = await makeBigLaz(seed, 3, lazPerf);
  const src = bufferSource(big, 'big.laz');
  const { header, vlrs } = await readLasHeader(src);
  // Seed chunks (its chunk table): 50000, 50000, 10000 points; the two full ones repeat.
  expect(header.pointCount).toBe(3 * 100000 + 10000);
  const t = (await readLazChunkTable(src, header, vlrs))!;
  expect(t.map((e) => e.pointCount)).toEqual([50000, 50000, 50000, 50000, 50000, 50000, 10000]);
  const all: number[] = [];
  for await (const c of (await openPointCloud(bufferSource(seed), { lazPerf })).chunks()) all.push(...c.z);
  const seedZ = [all.slice(0, 50000), all.slice(50000, 100000), all.slice(100000)];
  const z: number[] = [];
  let ret1 = 0;
  for await (const c of (await openPointCloud(src, { lazPerf })).chunks()) {
    z.push(...c.z);
    for (let i = 0; i < c.count; i++) if (c.returnNumber[i] === 1) ret1++;
  }
  expect(z).toEqual([seedZ[0], seedZ[1], seedZ[0], seedZ[1], seedZ[0], seedZ[1], seedZ[2]].flat());
  expect(header.pointsByReturn[0]).toBe(ret1);
  // Independent decoder over the rewritten file.
  const rs = await import(pathToFileURL(path.join(RS_DIR, 'laz_rs_wasm.js')).href);
  rs.initSync({ module: await readFile(path.join(RS_DIR, 'laz_rs_wasm_bg.wasm')) });
  const dec = new rs.WasmLasZipDecompressor(big);
  const recs = new Uint8Array(header.pointCount * header.pointRecordLength);
  dec.decompress_many(recs);
  dec.free();
  const dv = new DataView(recs.buffer);
  const last = header.pointCount - 1;
  expect(dv.getInt32(last * header.pointRecordLength + 8, true) * header.scale[2] + header.offset[2]).toBeCloseTo(seedZ[2]![9999]!, 9);
  expect(dv.getInt32(150000 * header.pointRecordLength + 8, true) * header.scale[2] + header.offset[2]).toBeCloseTo(seedZ[1]![0]!, 9);
}, 30_000);
