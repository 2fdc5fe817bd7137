/**
 * Builds a large LAZ file from a small one by repeating its full chunks (LAZ
 * chunks decode independently), then its last chunk, with a re-encoded chunk
 * table and rewritten point counts. Coordinates repeat, so bounds stay those
 * of the seed. Usage: node dist/bench/make-big-laz.js SEED.laz REPEAT OUT.laz
 */
import { readFile, writeFile } from 'node:fs/promises';
import { pathToFileURL } from 'node:url';
import { bufferSource, encodeLazChunkTable, findLazVlr, openPointCloud, parseLazVlr, readLasHeader, readLazChunkTable } from '../lib/io/index.js';
import type { LazPerfProvider } from '../lib/io/index.js';
import { CrowntallyError } from '../lib/errors.js';

export async function makeBigLaz(seed: Uint8Array, repeat: number, lazPerf?: LazPerfProvider): Promise<Uint8Array> {
  const src = bufferSource(seed, 'seed.laz');
  const { header, vlrs } = await readLasHeader(src);
  const table = await readLazChunkTable(src, header, vlrs);
  const info = parseLazVlr(findLazVlr(vlrs)!);
  if (!table || table.length === 0) throw new CrowntallyError('BAD_OPTIONS', 'the seed LAZ needs a chunk table with at least one chunk');
  // Return counts per seed chunk, so the header's points-by-return stay exact
  // (the reader hands out pieces of chunks: points are assigned by position).
  const byReturn: number[][] = table.map(() => new Array<number>(15).fill(0));
  const pc = await openPointCloud(src, lazPerf ? { lazPerf } : {});
  let chunk = 0, left = table[0]!.pointCount;
  for await (const c of pc.chunks()) {
    for (let i = 0; i < c.count; i++) {
      while (left === 0 && chunk < table.length - 1) left = table[++chunk]!.pointCount;
      left--;
      const k = c.returnNumber[i]!;
      if (k >= 1 && k <= 15) byReturn[chunk]![k - 1]!++;
    }
  }
  await pc.close();
  const fullIdx = table.map((e, i) => (e.pointCount === info.chunkSize ? i : -1)).filter((i) => i >= 0);
  const tailIdx = table.map((e, i) => (e.pointCount !== info.chunkSize ? i : -1)).filter((i) => i >= 0);
  const order: number[] = [];
  for (let r = 0; r < repeat; r++) order.push(...fullIdx);
  order.push(...tailIdx);
  const lengths = order.map((i) => table[i]!.byteLength);
  const body = lengths.reduce((a, b) => a + b, 0);
  const enc = encodeLazChunkTable(lengths, null);
  const start = header.offsetToPointData;
  const out = new Uint8Array(start + 8 + body + enc.length);
  out.set(seed.subarray(0, start));
  let at = start + 8;
  for (const i of order) { const e = table[i]!; out.set(seed.subarray(e.offset, e.offset + e.byteLength), at); at += e.byteLength; }
  out.set(enc, at);
  const dv = new DataView(out.buffer);
  dv.setBigInt64(start, BigInt(at), true);
  const total = order.reduce((a, i) => a + table[i]!.pointCount, 0);
  const ret = new Array<number>(15).fill(0);
  for (const i of order) byReturn[i]!.forEach((v, k) => (ret[k] = ret[k]! + v));
  if (header.versionMinor >= 4) {
    dv.setBigUint64(247, BigInt(total), true);
    for (let k = 0; k < 15; k++) dv.setBigUint64(255 + 8 * k, BigInt(ret[k]!), true);
  }
  if (total > 0xffffffff && header.versionMinor < 4) throw new CrowntallyError('BAD_OPTIONS', 'more than 2^32 points need a LAS 1.4 seed');
  if (header.pointFormat < 6) {
    dv.setUint32(107, total, true);
    for (let k = 0; k < 5; k++) dv.setUint32(111 + 4 * k, ret[k]!, true);
  }
  return out;
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const [seedPath, rep, outPath] = process.argv.slice(2);
  if (!seedPath || !outPath) { console.error('usage: make-big-laz SEED.laz REPEAT OUT.laz'); process.exit(2); }
  const out = await makeBigLaz(new Uint8Array(await readFile(seedPath)), Number(rep ?? 20));
  await writeFile(outPath, out);
  console.log(`wrote ${outPath}: ${out.length} bytes`);
}
