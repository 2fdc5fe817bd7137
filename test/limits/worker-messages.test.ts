/**
 * Malformed worker messages: each gets one error reply (type 'error', code
 * BAD_MESSAGE) naming the request's id when it has one; the handler never
 * throws. The protocol is lib/worker/protocol.ts (common practice for
 * message-passing workers: validate before acting).
 */
import { describe, expect, it } from 'vitest';
import { createHandler } from '../../lib/worker/entry.js';
import { validateRequest } from '../../lib/worker/validate.js';
import type { WorkerReply } from '../../lib/worker/protocol.js';
import { bufferSource } from '../../lib/io/sources.js';
import { Rng } from '../fuzz/prng.js';

function harness() {
  const replies: WorkerReply[] = [];
  const handle = createHandler({
    post: (r) => { replies.push(r); },
    openInput: async (_f, name) => bufferSource(new Uint8Array(0), name),
  });
  return { replies, handle };
}

const junk: [string, unknown][] = [
  ['null', null], ['undefined', undefined], ['a string', 'tally'], ['a number', 42], ['an array', [1, 2, 3]],
  ['no id', { type: 'tally', files: [], names: [] }],
  ['string id', { type: 'tally', id: '7', files: [new ArrayBuffer(4)], names: ['a'] }],
  ['NaN id', { type: 'inspect', id: NaN, files: [new ArrayBuffer(4)], names: ['a'] }],
  ['unknown type', { type: 'format-disk', id: 1 }],
  ['no type', { id: 2 }],
  ['files not a list', { type: 'tally', id: 3, files: 'a.las', names: ['a'] }],
  ['files of numbers', { type: 'inspect', id: 4, files: [1, 2], names: ['a', 'b'] }],
  ['names of numbers', { type: 'tally', id: 5, files: ['a.las'], names: [5] }],
  ['no files no demo', { type: 'tally', id: 6, files: [], names: [] }],
  ['bad demo', { type: 'tally', id: 7, files: [], names: [], demo: 'desert' }],
  ['crs not a string', { type: 'tally', id: 8, files: ['a.las'], names: ['a'], crs: 27700 }],
  ['options not an object', { type: 'tally', id: 9, files: ['a.las'], names: ['a'], options: [1] }],
  ['aoi of the wrong kind', { type: 'tally', id: 10, files: ['a.las'], names: ['a'], aoi: { kind: 'circle' } }],
  ['polygon without rings', { type: 'tally', id: 11, files: ['a.las'], names: ['a'], aoi: { kind: 'polygon' } }],
  ['remeasure without grids', { type: 'remeasure', id: 12, files: ['a.las'], names: ['a'] }],
  ['remeasure with a lying grid', { type: 'remeasure', id: 13, files: ['a.las'], names: ['a'],
    labels: { width: 1e6, height: 1e6, cellSize: 1, originX: 0, originY: 0, data: new Int32Array(4) } }],
  ['decode-chunk without bytes', { type: 'decode-chunk', id: 14, pointFormat: 0, recordLength: 20, pointCount: 1, header: {} }],
  ['decode-chunk with negative sizes', { type: 'decode-chunk', id: 15, bytes: new Uint8Array(4), pointFormat: -1, recordLength: 20, pointCount: 1, header: {} }],
  ['huge junk array of files', { type: 'tally', id: 16, files: new Array(200_000).fill({ junk: true }), names: [] }],
  ['huge junk array of names', { type: 'inspect', id: 17, files: ['a.las'], names: new Array(200_000).fill(null) }],
];

describe('worker message validation', () => {
  for (const [what, msg] of junk) {
    it(`${what}: one BAD_MESSAGE error reply, no throw`, async () => {
      const { replies, handle } = harness();
      await expect(handle(msg)).resolves.toBeUndefined();
      expect(replies).toHaveLength(1);
      const r = replies[0]!;
      expect(r.type).toBe('error');
      if (r.type !== 'error') return;
      expect(r.error.code).toBe('BAD_MESSAGE');
      const id = (msg as { id?: unknown } | null)?.id;
      expect(r.id).toBe(typeof id === 'number' ? id : -1);
    });
  }

  it('random objects from a seeded generator never escape the handler', async () => {
    const rng = new Rng(99);
    const values = (d: number): unknown => {
      const k = rng.int(d > 2 ? 6 : 9);
      switch (k) {
        case 0: return null; case 1: return rng.int(1000) - 500; case 2: return rng.pick(['tally', 'inspect', 'remeasure', 'cancel', 'decode-chunk', '', 'x']);
        case 3: return NaN; case 4: return true; case 5: return undefined;
        case 6: return [values(d + 1), values(d + 1)];
        case 7: return new Uint8Array(rng.int(8));
        default: { const o: Record<string, unknown> = {}; for (const key of ['type', 'id', 'files', 'names', 'options', 'aoi', 'labels', 'bytes', 'header']) if (rng.chance(0.5)) o[key] = values(d + 1); return o; }
      }
    };
    for (let i = 0; i < 500; i++) {
      const { replies, handle } = harness();
      const m = values(0);
      await expect(handle(m), `case ${i}: ${String(JSON.stringify(m))?.slice(0, 200)}`).resolves.toBeUndefined();
      // A well-formed cancel is answered by silence; everything else gets exactly one reply, and a shape error is BAD_MESSAGE.
      let valid = true;
      try { validateRequest(m); } catch { valid = false; }
      if (!valid) {
        expect(replies, `case ${i}`).toHaveLength(1);
        expect(replies[0]!.type === 'error' && replies[0]!.error.code, `case ${i}`).toBe('BAD_MESSAGE');
      } else {
        expect(replies.every((r) => r.type === 'error' || r.type === 'progress'), `case ${i}`).toBe(true);
      }
    }
  });
});
