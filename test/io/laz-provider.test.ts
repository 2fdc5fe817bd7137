/**
 * The ways laz-perf can be handed to the reader: the default (package import),
 * a .wasm location (what a bundled browser app passes), and .wasm bytes.
 * Reference: the LAS twin of the fixture (fixtures NOTICE.md).
 */
import { expect, it } from 'vitest';
import path from 'node:path';
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { fileSource } from '../../lib/node/file-source.js';
import { lazPerfProvider, openPointCloud, type LazPerfFactory, type LazPerfProvider } from '../../lib/io/index.js';

const FIX = path.resolve(__dirname, '../../../shared/fixtures/laz-pairs');
const wasmPath = createRequire(import.meta.url).resolve('laz-perf/lib/node/laz-perf.wasm');

async function zs(f: string, lazPerf?: LazPerfProvider): Promise<number[]> {
  const pc = await openPointCloud(await fileSource(path.join(FIX, f)), lazPerf ? { lazPerf } : {});
  const z: number[] = [];
  for await (const c of pc.chunks()) z.push(...c.z);
  await pc.close();
  return z;
}

it('default, by location and by bytes all decode the same points as the LAS twin', async () => {
  const ref = await zs('point-color.las');
  expect(ref.length).toBe(1065);
  expect(await zs('point-color.las.laz')).toEqual(ref);
  expect(await zs('point-color.las.laz', lazPerfProvider({ wasmUrl: wasmPath }))).toEqual(ref);
  expect(await zs('point-color.las.laz', lazPerfProvider({ wasmBinary: await readFile(wasmPath) }))).toEqual(ref);
  const req = createRequire(import.meta.url);
  const factory = req('laz-perf/lib/node/laz-perf.js') as LazPerfFactory;
  expect(await zs('point-color.las.laz', lazPerfProvider({ factory, wasmBinary: await readFile(wasmPath) }))).toEqual(ref);
});

it('a provider that fails is retried on the next read', async () => {
  let calls = 0;
  const flaky: LazPerfProvider = async () => { if (calls++ === 0) throw new Error('no wasm'); return lazPerfProvider()(); };
  const pc = await openPointCloud(await fileSource(path.join(FIX, 'point10.las.laz')), { lazPerf: flaky });
  await expect((async () => { for await (const c of pc.chunks()) void c; })()).rejects.toMatchObject({ code: 'INTERNAL', message: expect.stringContaining('no wasm') });
  let n = 0;
  for await (const c of pc.chunks()) n += c.count;
  expect(n).toBe(1065);
  await pc.close();
});
