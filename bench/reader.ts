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

/** Wall time, and this process's CPU time (less disturbed when other work shares the cores). */
export interface Timing { points: number; seconds: number; cpuSeconds: number }
function timing(points: number, t0: number, c0: NodeJS.CpuUsage): Timing {
  const c = process.cpuUsage(c0);
  return { points, seconds: (performance.now() - t0) / 1000, cpuSeconds: (c.user + c.system) / 1e6 };
}

/** Points per second of a bare LASZip loop: decompression only. */
export function bareDecode(lp: LazPerf, file: Uint8Array): Timing {
  const t0 = performance.now(), c0 = process.cpuUsage();
  const ptr = lp._malloc(file.length);
  lp.HEAPU8.set(file, ptr);
  const zip = new lp.LASZip();
  zip.open(ptr, file.length);
  const n = zip.getCount(), len = zip.getPointLength();
  const out = lp._malloc(len);
  for (let i = 0; i < n; i++) zip.getPoint(out);
  zip.delete(); lp._free(out); lp._free(ptr);
  return timing(n, t0, c0);
}

/** Points per second of the reader: chunk table, chunked decoding, all fields into typed arrays. */
export async function readerDecode(file: Uint8Array, lazPerf: LazPerfProvider): Promise<Timing> {
  const t0 = performance.now(), c0 = process.cpuUsage();
  const pc = await openPointCloud(bufferSource(file, 'big.laz'), { lazPerf });
  let n = 0;
  for await (const c of pc.chunks()) n += c.count;
  await pc.close();
  return timing(n, t0, c0);
}

export interface ReaderBench {
  points: number; bytes: number; runs: number;
  /** Wall-clock medians. */
  readerPointsPerS: number; barePointsPerS: number; ratio: number;
  /** Per CPU second of this process. */
  readerPointsPerCpuS: number; barePointsPerCpuS: number; cpuRatio: number;
}

export async function benchReader(file: Uint8Array, runs = 5): Promise<ReaderBench> {
  const provider = nodeLazPerf();
  const lp = await provider();
  const shared: LazPerfProvider = async () => lp; // same instance for both: the comparison is decode work only
  const bare: number[] = [], reader: number[] = [], bareCpu: number[] = [], readerCpu: number[] = [];
  let points = 0;
  bareDecode(lp, file); await readerDecode(file, shared); // warm-up
  for (let r = 0; r < runs; r++) {
    const b = bareDecode(lp, file); bare.push(b.points / b.seconds); bareCpu.push(b.points / b.cpuSeconds);
    const d = await readerDecode(file, shared); reader.push(d.points / d.seconds); readerCpu.push(d.points / d.cpuSeconds);
    points = d.points;
    if (b.points !== d.points) throw new Error(`point counts differ: bare ${b.points}, reader ${d.points}`);
  }
  const rp = median(reader), bp = median(bare);
  const rc = median(readerCpu), bc = median(bareCpu);
  return { points, bytes: file.length, runs, readerPointsPerS: rp, barePointsPerS: bp, ratio: rp / bp,
    readerPointsPerCpuS: rc, barePointsPerCpuS: bc, cpuRatio: rc / bc };
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
  console.log(`bare laz-perf decode: ${f(r.barePointsPerS)} wall, ${f(r.barePointsPerCpuS)} per CPU second`);
  console.log(`reader (all fields):  ${f(r.readerPointsPerS)} wall, ${f(r.readerPointsPerCpuS)} per CPU second`);
  console.log(`ratio reader / bare:  ${r.ratio.toFixed(3)} wall, ${r.cpuRatio.toFixed(3)} CPU`);
}
