/**
 * The caller's side over a real Node worker thread (the compiled
 * dist/lib/node/worker-main.js, built here if missing): a job with progress,
 * a cancelled job, a failing job, and the same worker serving on.
 */
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ensureBuilt, ROOT, WORKER } from '../built.js';
import { nodeWorker } from '../../lib/node/worker-adapter.js';
import type { ProgressEvent } from '../../lib/result.js';
import { TallyClient } from '../../lib/worker/client.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const FIXTURES = path.resolve(ROOT, '../shared/fixtures/laz-pairs');
const AUTZEN_LAZ = path.join(FIXTURES, 'autzen_trim.laz');

let client: TallyClient;
beforeAll(() => {
  ensureBuilt('dist/lib/node/worker-main.js');
  client = new TallyClient(nodeWorker(pathToFileURL(WORKER)));
});
afterAll(() => client?.terminate());

describe('TallyClient over a worker thread', () => {
  it('tally: progress events, then the tree table', async () => {
    const seen: ProgressEvent[] = [];
    const r = await client.tally({ files: [AUTZEN_LAZ], names: ['autzen_trim.laz'], options: { cellSizeM: 2 } }, { onProgress: (p) => seen.push(p) });
    expect(seen.length).toBeGreaterThan(3);
    expect(seen.at(-1)!.fraction).toBe(1);
    expect(r.trees.count).toBeGreaterThan(20);
    expect(r.trees.columns.height_m).toBeInstanceOf(Float64Array);
    expect(r.chm.data).toBeInstanceOf(Float32Array);
    expect(r.readout.points).toBe(110000);
  });

  it('abort mid-job rejects with ABORTED; a failing job rejects typed; the worker then serves the next job', async () => {
    const ctrl = new AbortController();
    const job = client.tally({ files: [AUTZEN_LAZ], names: ['autzen_trim.laz'], options: { cellSizeM: 1 } }, {
      signal: ctrl.signal,
      onProgress: (p) => { if (p.fraction > 0) ctrl.abort(); },
    });
    await expect(job).rejects.toMatchObject({ code: 'ABORTED' });

    await expect(client.tally({ files: [path.join(FIXTURES, 'no-such.laz')], names: ['no-such.laz'] }))
      .rejects.toMatchObject({ code: 'NOT_LAS' });

    const r = await client.tally({ files: [AUTZEN_LAZ], names: ['autzen_trim.laz'], options: { cellSizeM: 4 } });
    expect(r.trees.count).toBeGreaterThan(0);
    const [readout] = await client.inspect({ files: [AUTZEN_LAZ], names: ['autzen_trim.laz'] });
    expect(readout!.points).toBe(110000);
  });
});
