/**
 * Bad input gives a typed error with a stable code at once: no hang, no huge
 * allocation, no silent wrong answer. Bad files are made here by changing
 * bytes of the fixtures; offsets are those of the public header in ASPRS LAS
 * Specification 1.4 R15, table 3 (point count at 107, record length at 105,
 * format at 104, scale factors at 131).
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { readFile } from 'node:fs/promises';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import { fileSource } from '../../lib/node/file-source.js';
import { bufferSource, openPointCloud, type LazPerfProvider } from '../../lib/io/index.js';

const FIX = path.resolve(__dirname, '../../../shared/fixtures/laz-pairs');
const lazPerf = nodeLazPerf();
const raw = async (f: string) => new Uint8Array(await readFile(path.join(FIX, f)));

async function readAllPoints(bytes: Uint8Array, opts: { kind?: 'las' | 'laz'; lazPerf?: LazPerfProvider } = {}): Promise<number> {
  const pc = await openPointCloud(bufferSource(bytes, 'bad.las'), { lazPerf, ...opts });
  let n = 0;
  for await (const c of pc.chunks()) n += c.count;
  return n;
}

function mutate(b: Uint8Array, f: (dv: DataView, b: Uint8Array) => void): Uint8Array {
  const c = b.slice();
  f(new DataView(c.buffer), c);
  return c;
}

describe('bad LAS input', () => {
  it('not a LAS file: NOT_LAS', async () => {
    const text = new TextEncoder().encode('1 2 3\n4 5 6\n'.repeat(30));
    await expect(readAllPoints(text, { kind: 'las' })).rejects.toMatchObject({ code: 'NOT_LAS' });
  });

  it('empty file: NOT_LAS', async () => {
    await expect(readAllPoints(new Uint8Array(0))).rejects.toMatchObject({ code: 'NOT_LAS' });
  });

  it('truncated header: TRUNCATED', async () => {
    const b = (await raw('point10.las')).slice(0, 150);
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'TRUNCATED' });
  });

  it('truncated points: TRUNCATED', async () => {
    const full = await raw('point10.las');
    await expect(readAllPoints(full.slice(0, full.length - 7))).rejects.toMatchObject({ code: 'TRUNCATED' });
  });

  it('point count far beyond the data: TRUNCATED, nothing allocated for it', async () => {
    const b = mutate(await raw('point10.las'), (dv) => dv.setUint32(107, 0xfffffff0, true));
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'TRUNCATED' });
  });

  it('record length shorter than its format: BAD_HEADER', async () => {
    // ASPRS LAS 1.4 R15: format 0 records are 20 bytes.
    const b = mutate(await raw('point10.las'), (dv) => dv.setUint16(105, 19, true));
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'BAD_HEADER' });
  });

  it('zero scale: BAD_HEADER', async () => {
    const b = mutate(await raw('point10.las'), (dv) => dv.setFloat64(139, 0, true));
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'BAD_HEADER', message: expect.stringContaining('y scale') });
  });

  it('unknown point format: UNSUPPORTED', async () => {
    const b = mutate(await raw('point10.las'), (_dv, x) => { x[104] = 11; });
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'UNSUPPORTED' });
  });

  it('VLR count beyond the header block: BAD_HEADER', async () => {
    const b = mutate(await raw('autzen_trim.las'), (dv) => dv.setUint32(100, 0xffffffff, true));
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'BAD_HEADER' });
  });

  it('point data offset past the end: TRUNCATED', async () => {
    const b = mutate(await raw('point10.las'), (dv) => dv.setUint32(96, 0x7fffffff, true));
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'TRUNCATED' });
  });

  it('a missing file: a typed error', async () => {
    await expect(fileSource(path.join(FIX, 'no-such-file.las'))).rejects.toMatchObject({ code: 'NOT_LAS' });
  });
});

describe('bad LAZ input', () => {
  it('corrupt chunk: CORRUPT_LAZ naming the chunk, and the WASM instance is replaced', async () => {
    const good = await raw('autzen_trim.laz');
    // Chunk 2 of autzen_trim.laz spans bytes 285651..548074 (its chunk table); damage its middle.
    const b = mutate(good, (_dv, x) => { for (let i = 300000; i < 300400; i++) x[i] = x[i]! ^ 0x5a; });
    let made = 0;
    const counting: LazPerfProvider = async () => { made++; return lazPerf(); };
    const pc = await openPointCloud(bufferSource(b, 'bad.laz'), { lazPerf: counting });
    const err = await (async () => { try { for await (const c of pc.chunks()) void c; } catch (e) { return e; } return null; })();
    expect(err).toMatchObject({ code: 'CORRUPT_LAZ', message: expect.stringContaining('chunk 2 of 3') });
    expect(made).toBe(1);
    // A second pass starts with a fresh instance and fails in the same place, not earlier.
    let firstChunk = 0;
    await expect((async () => { for await (const c of pc.chunks()) firstChunk += c.count; })()).rejects.toMatchObject({ code: 'CORRUPT_LAZ' });
    expect(made).toBe(2);
    expect(firstChunk).toBe(50000);
  });

  it('cut-short LAZ: TRUNCATED', async () => {
    const good = await raw('autzen_trim.laz');
    await expect(readAllPoints(good.slice(0, 400000))).rejects.toMatchObject({ code: 'TRUNCATED' });
  });

  it('damaged chunk table: CORRUPT_LAZ', async () => {
    const good = await raw('autzen_trim.laz');
    const tableAt = Number(new DataView(good.buffer, good.byteOffset).getBigInt64(2144, true));
    const b = mutate(good, (_dv, x) => { x[tableAt + 9] = x[tableAt + 9]! ^ 0xff; x[tableAt + 10] = x[tableAt + 10]! ^ 0x0f; });
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'CORRUPT_LAZ' });
  });

  it('header point count disagreeing with the chunk table: BAD_HEADER', async () => {
    const b = mutate(await raw('autzen_trim.laz'), (dv) => dv.setUint32(107, 900000, true));
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'BAD_HEADER' });
  });

  it('compressed mark without the LAZ record: BAD_HEADER', async () => {
    const b = mutate(await raw('point10.las'), (_dv, x) => { x[104] = 0x80; });
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'BAD_HEADER' });
  });

  it('waveform items or unchunked compressor: UNSUPPORTED', async () => {
    const good = await raw('point10.las.laz');
    const pc = await openPointCloud(bufferSource(good), { lazPerf });
    const v = pc.vlrs.find((r) => r.recordId === 22204)!;
    const b = mutate(good, (dv) => dv.setUint16(v.dataOffset, 1, true));
    await expect(readAllPoints(b)).rejects.toMatchObject({ code: 'UNSUPPORTED' });
    const w = mutate(good, (dv) => dv.setUint16(v.dataOffset + 34, 9, true));
    await expect(readAllPoints(w)).rejects.toMatchObject({ code: 'UNSUPPORTED', message: expect.stringContaining('waveform') });
  });
});
