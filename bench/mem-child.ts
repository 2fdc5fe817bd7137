/**
 * One measured job in a fresh process, so peak memory belongs to this job
 * alone: node --expose-gc dist/bench/mem-child.js FILE CACHE_MIB WORKERS [CELL_M]
 * (CELL_M fixes the cell edge in metres; without it the density rule chooses).
 * Prints one JSON line: wall seconds, points, trees, peak RSS (the kernel's
 * VmHWM from /proc/self/status, and the sampled maximum) and the sampled
 * maximum of process.memoryUsage().arrayBuffers, all in MiB. The file is read
 * through ranged reads, never held whole, so input size does not count.
 */
import { readFileSync } from 'node:fs';
import { pathToFileURL } from 'node:url';
import { fileSource } from '../lib/node/file-source.js';
import { withPool } from '../lib/node/index.js';
import { tally } from '../lib/pipeline.js';

export interface ChildResult {
  seconds: number; points: number; trees: number;
  vmHwmMiB: number | null; peakRssMiB: number; peakArrayBuffersMiB: number; baselineRssMiB: number;
}

const MIB = 1024 * 1024;

/** Peak resident set size from /proc (Linux); null elsewhere. */
function vmHwmMiB(): number | null {
  try {
    const m = /VmHWM:\s+(\d+)\s+kB/.exec(readFileSync('/proc/self/status', 'utf8'));
    return m ? Number(m[1]) / 1024 : null;
  } catch { return null; }
}

async function main(): Promise<void> {
  const [file, cache, workers, cell] = process.argv.slice(2);
  if (!file) { console.error('usage: mem-child FILE CACHE_MIB WORKERS [CELL_M]'); process.exit(2); }
  const gc = (globalThis as { gc?: () => void }).gc;
  gc?.();
  const baselineRssMiB = process.memoryUsage().rss / MIB;
  let peakRss = 0, peakAb = 0;
  const sample = () => {
    const u = process.memoryUsage();
    if (u.rss > peakRss) peakRss = u.rss;
    if (u.arrayBuffers > peakAb) peakAb = u.arrayBuffers;
  };
  const timer = setInterval(sample, 5);
  const t0 = performance.now();
  const src = await fileSource(file);
  const r = await withPool(Number(workers ?? 1), (extra) => tally([src], {
    ...extra, options: { pointCacheMiB: Number(cache ?? 0), ...(cell ? { cellSizeM: Number(cell) } : {}) },
    // Progress events arrive per chunk: a sample there catches peaks between timer ticks.
    onProgress: sample,
  }));
  const seconds = (performance.now() - t0) / 1000;
  sample();
  clearInterval(timer);
  const out: ChildResult = {
    seconds, points: r.readout.points, trees: r.trees.count, vmHwmMiB: vmHwmMiB(),
    peakRssMiB: peakRss / MIB, peakArrayBuffersMiB: peakAb / MIB, baselineRssMiB,
  };
  console.log(JSON.stringify(out));
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) {
  main().catch((e) => { console.error(e); process.exit(1); });
}
