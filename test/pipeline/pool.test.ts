/**
 * LAZ chunks decoded by a pool of two Node worker threads must give the same
 * tree table as decoding in this thread: every column, the profiles, the
 * return histograms and the crown outlines. A LAS input does not go through
 * the pool at all (nothing to decompress); the demo survey is LAS, so for it
 * the check is that the pool is left alone and the result is unchanged.
 * The workers run the compiled worker script (dist/), built here if missing.
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ensureBuilt as buildOnce, ROOT, WORKER } from '../built.js';
import { generateSurvey } from '../../demo/index.js';
import type { ChunkDecoder } from '../../lib/io/chunk-stream.js';
import { bufferSource } from '../../lib/io/sources.js';
import { fileSource } from '../../lib/node/file-source.js';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import { nodeWorker } from '../../lib/node/worker-adapter.js';
import { tally } from '../../lib/pipeline.js';
import type { TallyResult } from '../../lib/result.js';
import { TREE_COLUMNS } from '../../lib/trees/table.js';
import { WorkerPool } from '../../lib/worker/pool.js';
import { poolDecoder } from '../../lib/worker/pool-decoder.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const AUTZEN_LAZ = path.resolve(ROOT, '../shared/fixtures/laz-pairs/autzen_trim.laz');


/** Two results hold the same trees: every column (NaN equal to NaN), profiles, histograms, outlines. */
function expectSameTrees(a: TallyResult, b: TallyResult): void {
  expect(b.trees.count).toBe(a.trees.count);
  for (const c of TREE_COLUMNS) expect([c, Array.from(b.trees.columns[c])]).toEqual([c, Array.from(a.trees.columns[c])]);
  expect(b.trees.profileLayers).toBe(a.trees.profileLayers);
  expect(Array.from(b.trees.profiles)).toEqual(Array.from(a.trees.profiles));
  expect(Array.from(b.trees.returnHistogram)).toEqual(Array.from(a.trees.returnHistogram));
  const oa = a.trees.outlines, ob = b.trees.outlines;
  expect(Array.from(ob.coords)).toEqual(Array.from(oa.coords));
  expect(Array.from(ob.ringStart)).toEqual(Array.from(oa.ringStart));
  expect(Array.from(ob.ringKind)).toEqual(Array.from(oa.ringKind));
  expect(Array.from(ob.treeRingStart)).toEqual(Array.from(oa.treeRingStart));
  expect(Array.from(b.labels.data)).toEqual(Array.from(a.labels.data));
  expect(b.readout.classes).toEqual(a.readout.classes);
  expect(b.readout.returns).toEqual(a.readout.returns);
}

let pool: WorkerPool;
let calls = 0;
let decoder: ChunkDecoder;

beforeAll(() => {
  buildOnce('dist/lib/node/worker-main.js');
  pool = new WorkerPool(() => nodeWorker(pathToFileURL(WORKER)), 2);
  const inner = poolDecoder(pool);
  decoder = Object.assign((req: Parameters<ChunkDecoder>[0]) => { calls++; return inner(req); }, { parallelism: inner.parallelism });
});
afterAll(async () => { await pool?.close(); });

describe('tally with a pool of two worker threads', () => {
  it('autzen_trim.laz: identical tree table with and without the pool', async () => {
    const options = { cellSizeM: 2 };
    const alone = await tally([await fileSource(AUTZEN_LAZ)], { options, lazPerf: nodeLazPerf() });
    calls = 0;
    const pooled = await tally([await fileSource(AUTZEN_LAZ)], { options, lazPerf: nodeLazPerf(), chunkDecoder: decoder });
    expect(calls).toBeGreaterThan(1); // the chunks really went to the workers
    expect(alone.trees.count).toBeGreaterThan(20);
    expectSameTrees(alone, pooled);
  });

  it('the demo park (LAS): the pool is not used and the table is unchanged', async () => {
    const { las } = generateSurvey('park', { seed: 3, widthM: 80, heightM: 60 });
    const alone = await tally([bufferSource(las, 'park.las')]);
    calls = 0;
    const pooled = await tally([bufferSource(las, 'park.las')], { chunkDecoder: decoder });
    expect(calls).toBe(0);
    expect(alone.trees.count).toBeGreaterThan(5);
    expectSameTrees(alone, pooled);
  });

  it('a corrupt LAZ chunk fails with a typed error and the pool keeps serving', async () => {
    const { readFileSync } = await import('node:fs');
    const bytes = new Uint8Array(readFileSync(AUTZEN_LAZ));
    // Overwrite the middle of the compressed point data (keep the header and chunk table intact).
    const broken = bytes.slice();
    const mid = Math.floor(broken.length / 2);
    for (let i = mid; i < mid + 4096; i++) broken[i] = (i * 97) & 255;
    await expect(tally([bufferSource(broken, 'broken.laz')], { options: { cellSizeM: 2 }, lazPerf: nodeLazPerf(), chunkDecoder: decoder }))
      .rejects.toMatchObject({ code: 'CORRUPT_LAZ' });
    const again = await tally([await fileSource(AUTZEN_LAZ)], { options: { cellSizeM: 4 }, lazPerf: nodeLazPerf(), chunkDecoder: decoder });
    expect(again.trees.count).toBeGreaterThan(0);
  });
});
