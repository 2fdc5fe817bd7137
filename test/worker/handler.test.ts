/**
 * The worker's message handler (createHandler) with a fake environment: the
 * replies it posts are collected here instead of crossing a real thread.
 */
import { readFileSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { CrowntallyError } from '../../lib/errors.js';
import { bufferSource } from '../../lib/io/sources.js';
import { fileSource } from '../../lib/node/file-source.js';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import type { TallyResult } from '../../lib/result.js';
import { treeTableTransferables } from '../../lib/trees/table.js';
import { createHandler, type WorkerEnvironment } from '../../lib/worker/entry.js';
import type { WorkerReply } from '../../lib/worker/protocol.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const FIXTURES = path.resolve(here, '../../../shared/fixtures/laz-pairs');
const AUTZEN_LAZ = path.join(FIXTURES, 'autzen_trim.laz');

interface Posted { reply: WorkerReply; transfer: ArrayBuffer[] }

function fakeEnv(onPost?: (p: Posted) => void): { env: WorkerEnvironment; posted: Posted[] } {
  const posted: Posted[] = [];
  const env: WorkerEnvironment = {
    post(reply, transfer) { const p = { reply, transfer }; posted.push(p); onPost?.(p); },
    lazPerf: nodeLazPerf(),
    async openInput(input, name) {
      if (typeof input === 'string') return fileSource(input);
      if (input instanceof ArrayBuffer) return bufferSource(input, name);
      throw new CrowntallyError('BAD_MESSAGE', 'unexpected input');
    },
  };
  return { env, posted };
}

const forId = (posted: Posted[], id: number) => posted.filter((p) => p.reply.id === id);

describe('createHandler', () => {
  it('tally: progress replies, then a result whose buffers are all in the transfer list', async () => {
    const { env, posted } = fakeEnv();
    const handle = createHandler(env);
    await handle({ type: 'tally', id: 7, files: [AUTZEN_LAZ], names: ['autzen_trim.laz'], options: { cellSizeM: 2 } });
    const mine = forId(posted, 7);
    const last = mine[mine.length - 1]!;
    expect(last.reply.type).toBe('result');
    const progress = mine.slice(0, -1);
    expect(progress.length).toBeGreaterThan(3);
    expect(progress.every((p) => p.reply.type === 'progress' && p.transfer.length === 0)).toBe(true);
    const fractions = progress.map((p) => (p.reply as Extract<WorkerReply, { type: 'progress' }>).progress.fraction);
    for (let i = 1; i < fractions.length; i++) expect(fractions[i]!).toBeGreaterThanOrEqual(fractions[i - 1]!);
    expect(fractions[fractions.length - 1]).toBe(1);

    const result = (last.reply as Extract<WorkerReply, { type: 'result' }>).result as TallyResult;
    expect(result.trees.count).toBeGreaterThan(20);
    const t = new Set(last.transfer);
    for (const b of [...treeTableTransferables(result.trees), result.chm.data.buffer, result.dtm.data.buffer, result.labels.data.buffer]) {
      expect(t.has(b as ArrayBuffer)).toBe(true);
    }
    // The list is usable as is: structured cloning with it moves the buffers (HTML structured clone: transferred buffers detach).
    const moved = structuredClone(last.reply, { transfer: last.transfer }) as Extract<WorkerReply, { type: 'result' }>;
    expect(result.chm.data.buffer.byteLength).toBe(0);
    expect(moved.result.trees.count).toBe(result.trees.count);
    expect(moved.result.chm.data.length).toBe(moved.result.chm.width * moved.result.chm.height);
  });

  it('cancel in the middle of a job rejects it with ABORTED', async () => {
    let handle!: (d: unknown) => Promise<void>;
    let sent = false;
    const { env, posted } = fakeEnv((p) => {
      // Cancel once reading is under way, as a message arriving between two chunks.
      if (!sent && p.reply.type === 'progress' && p.reply.progress.fraction > 0) {
        sent = true;
        queueMicrotask(() => { void handle({ type: 'cancel', id: 3 }); });
      }
    });
    handle = createHandler(env);
    const bytes = readFileSync(AUTZEN_LAZ);
    const buf = bytes.buffer.slice(bytes.byteOffset, bytes.byteOffset + bytes.byteLength) as ArrayBuffer;
    await handle({ type: 'tally', id: 3, files: [buf], names: ['autzen_trim.laz'], options: { cellSizeM: 2 } });
    expect(sent).toBe(true);
    const mine = forId(posted, 3);
    const last = mine[mine.length - 1]!.reply;
    expect(last.type).toBe('error');
    expect((last as Extract<WorkerReply, { type: 'error' }>).error.code).toBe('ABORTED');
    expect(mine.some((p) => p.reply.type === 'result')).toBe(false);
  });

  it('a corrupt file gives an error reply, and the same handler serves the next job', async () => {
    const { env, posted } = fakeEnv();
    const handle = createHandler(env);
    const junk = new Uint8Array(4096);
    for (let i = 0; i < junk.length; i++) junk[i] = (i * 131 + 7) & 255;
    await handle({ type: 'tally', id: 1, files: [junk.buffer], names: ['junk.las'] });
    const bad = forId(posted, 1).at(-1)!.reply as Extract<WorkerReply, { type: 'error' }>;
    expect(bad.type).toBe('error');
    expect(['NOT_LAS', 'BAD_XYZ']).toContain(bad.error.code);

    // A LAS cut inside its point records (ASPRS LAS 1.2: offset to point data at byte 96).
    const las = readFileSync(path.join(FIXTURES, 'autzen_trim.las'));
    const cut = new Uint8Array(las.subarray(0, las.readUInt32LE(96) + 1000));
    await handle({ type: 'tally', id: 5, files: [cut.buffer], names: ['cut.las'] });
    const truncated = forId(posted, 5).at(-1)!.reply as Extract<WorkerReply, { type: 'error' }>;
    expect(truncated.type).toBe('error');
    expect(truncated.error.code).toBe('TRUNCATED');

    // A LAZ whose compressed points are damaged.
    const laz = new Uint8Array(readFileSync(AUTZEN_LAZ));
    const mid = laz.length >> 1;
    for (let i = mid; i < mid + 4096; i++) laz[i] = (i * 97) & 255;
    await handle({ type: 'tally', id: 2, files: [laz.buffer], names: ['damaged.laz'], options: { cellSizeM: 2 } });
    const damaged = forId(posted, 2).at(-1)!.reply as Extract<WorkerReply, { type: 'error' }>;
    expect(damaged.type).toBe('error');
    expect(damaged.error.code).toBe('CORRUPT_LAZ');

    await handle({ type: 'tally', id: 4, files: [AUTZEN_LAZ], names: ['autzen_trim.laz'], options: { cellSizeM: 4 } });
    const ok = forId(posted, 4).at(-1)!.reply;
    expect(ok.type).toBe('result');
    expect((ok as Extract<WorkerReply, { type: 'result' }>).result.trees.count).toBeGreaterThan(0);
  });

  it('a malformed message gets a BAD_MESSAGE error reply, not a crash', async () => {
    const { env, posted } = fakeEnv();
    const handle = createHandler(env);
    await handle({ type: 'tally', id: 9, files: 'nope', names: [] });
    await handle(null);
    expect(posted.map((p) => p.reply.type)).toEqual(['error', 'error']);
    expect((posted[0]!.reply as Extract<WorkerReply, { type: 'error' }>).error.code).toBe('BAD_MESSAGE');
    expect(posted[0]!.reply.id).toBe(9);
    expect(posted[1]!.reply.id).toBe(-1);
  });
});
