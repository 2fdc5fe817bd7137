/**
 * Reader speed beside a bare laz-perf decode loop over the same file
 * (LASZip.getPoint into one buffer, no field decoding), medians of several
 * interleaved runs, and their ratio. Run: npm run build && node dist/bench/reader.js [REPEAT] [RUNS]
 */
import path from 'node:path';
import { readFile } from 'node:fs/promises';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { bufferSource, openPointCloud, type LazPerf, type LazPerfProvider } from '../lib/io/index.js';
import { nodeLazPerf } from '../lib/node/laz-perf.js';
import { makeBigLaz } from './make-big-laz.js';

const median = (a: number[]): number => { const s = [...a].sort((x, y) => x - y); return s[s.length >> 1]!; };

/** Points per second of a bare LASZip loop: decompression only. */
export function bareDecode(lp: LazPerf, file: Uint8Array): { points: number; seconds: number } {
  const t0 = performance.now();
  const ptr = lp._malloc(file.length);
  lp.HEAPU8.set(file, ptr);
  const zip = new lp.LASZip();
  zip.open(ptr, file.length);
  const n = zip.getCount(), len = zip.getPointLength();
  const out = lp._malloc(len);
  for (let i = 0; i < n; i++) zip.getPoint(out);
  zip.delete(); lp._free(out); lp._free(ptr);
  return { points: n, seconds: (performance.now() - t0) / 1000 };
}

/** Points per second of the reader: chunk table, chunked decoding, all fields into typed arrays. */
export async function readerDecode(file: Uint8Array, lazPerf: LazPerfProvider): Promise<{ points: number; seconds: number }> {
  const t0 = performance.now();
  const pc = await openPointCloud(bufferSource(file, 'big.laz'), { lazPerf });
  let n = 0;
  for await (const c of pc.chunks()) n += c.count;
  await pc.close();
  return { points: n, seconds: (performance.now() - t0) / 1000 };
}

export interface ReaderBench { points: number; bytes: number; readerPointsPerS: number; barePointsPerS: number; ratio: number; runs: number }

export async function benchReader(file: Uint8Array, runs = 5): Promise<ReaderBench> {
  const provider = nodeLazPerf();
  const lp = await provider();
  const shared: LazPerfProvider = async () => lp; // same instance for both: the comparison is decode work only
  const bare: number[] = [], reader: number[] = [];
  let points = 0;
  bareDecode(lp, file); await readerDecode(file, shared); // warm-up
  for (let r = 0; r < runs; r++) {
    const b = bareDecode(lp, file); bare.push(b.points / b.seconds);
    const d = await readerDecode(file, shared); reader.push(d.points / d.seconds);
    points = d.points;
    if (b.points !== d.points) throw new Error(`point counts differ: bare ${b.points}, reader ${d.points}`);
  }
  const rp = median(reader), bp = median(bare);
  return { points, bytes: file.length, readerPointsPerS: rp, barePointsPerS: bp, ratio: rp / bp, runs };
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  const repeat = Number(process.argv[2] ?? 22), runs = Number(process.argv[3] ?? 5);
  const here = path.dirname(fileURLToPath(import.meta.url));
  // dist/bench/ and bench/ both sit two levels below the folder that holds shared/.
  const seed = new Uint8Array(await readFile(path.resolve(here, '../../../shared/fixtures/laz-pairs/autzen_trim.laz')));
  const file = await makeBigLaz(seed, repeat);
  const r = await benchReader(file, runs);
  const f = (v: number) => `${(v / 1e6).toFixed(2)} M points/s`;
  console.log(`LAZ ${r.points} points, ${(r.bytes / 1e6).toFixed(1)} MB, median of ${r.runs} runs`);
  console.log(`bare laz-perf decode: ${f(r.barePointsPerS)}`);
  console.log(`reader (all fields):  ${f(r.readerPointsPerS)}`);
  console.log(`ratio reader / bare:  ${r.ratio.toFixed(3)}`);
}
