/**
 * Node entry: run the job on files, with a pool of worker threads decoding
 * LAZ chunks in parallel (os.availableParallelism by default).
 */
import { tally, inspectInputs, type TallyRun } from '../pipeline.js';
import type { TallyResult } from '../result.js';
import type { SurveyReadout } from '../io/types.js';
import { WorkerPool } from '../worker/pool.js';
import { poolDecoder } from '../worker/pool-decoder.js';
import { fileSource } from './file-source.js';
import { nodeLazPerf } from './laz-perf.js';
import { nodeParallelism, nodeWorker } from './worker-adapter.js';

export { fileSource } from './file-source.js';
export { nodeLazPerf } from './laz-perf.js';
export { nodeWorker, nodeParallelism } from './worker-adapter.js';

export interface NodeRun extends Omit<TallyRun, 'lazPerf' | 'chunkDecoder'> {
  /** Worker threads decoding LAZ chunks; 1 decodes in this thread. Default: available cores. */
  workers?: number;
}

/** Runs `fn` with a chunk pool of `workers` threads (none for 1), closing it afterwards. */
export async function withPool<T>(workers: number, fn: (run: Pick<TallyRun, 'lazPerf' | 'chunkDecoder'>) => Promise<T>): Promise<T> {
  const lazPerf = nodeLazPerf();
  if (workers <= 1) return fn({ lazPerf });
  const pool = new WorkerPool(() => nodeWorker(), workers);
  try {
    return await fn({ lazPerf, chunkDecoder: poolDecoder(pool) });
  } finally {
    await pool.close();
  }
}

export async function tallyFiles(paths: string[], run: NodeRun = {}): Promise<TallyResult> {
  const sources = await Promise.all(paths.map((p) => fileSource(p)));
  const { workers = nodeParallelism(), ...rest } = run;
  return withPool(workers, (extra) => tally(sources, { ...rest, ...extra }));
}

export async function inspectFiles(paths: string[], run: { crs?: string; signal?: AbortSignal } = {}): Promise<SurveyReadout[]> {
  const sources = await Promise.all(paths.map((p) => fileSource(p)));
  return inspectInputs(sources, { ...run, lazPerf: nodeLazPerf() });
}
