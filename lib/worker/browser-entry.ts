/**
 * The browser Web Worker: the shared handler over `self`. The app's worker
 * script calls `startBrowserWorker` with the laz-perf .wasm URL its bundler
 * produced. Nested workers of the same script decode LAZ chunks in parallel
 * (navigator.hardwareConcurrency), each answering 'decode-chunk' messages.
 */
import { CrowntallyError } from '../errors.js';
import { lazPerfProvider } from '../io/laz.js';
import { blobSource, bufferSource } from '../io/sources.js';
import { createHandler } from './entry.js';
import { WorkerPool, type WorkerLike } from './pool.js';
import { poolDecoder } from './pool-decoder.js';
import type { DemoKind, WorkerReply } from './protocol.js';

declare const self: {
  postMessage(m: unknown, transfer: Transferable[]): void;
  addEventListener(t: 'message', l: (ev: MessageEvent) => void): void;
  location: { href: string };
  navigator: { hardwareConcurrency?: number };
};

export interface BrowserWorkerOptions {
  wasmUrl: string | URL;
  /** Built-in scenarios (the app passes the demo generator). */
  demo?: (kind: DemoKind) => Promise<Uint8Array>;
  /** Decode workers; default navigator.hardwareConcurrency. 1 = no pool. */
  poolSize?: number;
  /** Whether this worker is itself a pool member (no nested pool). */
  nested?: boolean;
}

export function startBrowserWorker(opts: BrowserWorkerOptions): void {
  const nested = opts.nested ?? self.location.href.includes('pool=1');
  let pool: WorkerPool | null = null;
  const size = Math.max(1, Math.min(16, opts.poolSize ?? self.navigator.hardwareConcurrency ?? 2));
  const handle = createHandler({
    post: (reply: WorkerReply, transfer: ArrayBuffer[]) => self.postMessage(reply, transfer),
    lazPerf: lazPerfProvider({ wasmUrl: opts.wasmUrl }),
    async openInput(input, name) {
      if (typeof Blob !== 'undefined' && input instanceof Blob) return blobSource(input, name);
      if (input instanceof ArrayBuffer) return bufferSource(input, name);
      throw new CrowntallyError('BAD_MESSAGE', `input ${name} must be a File, Blob or ArrayBuffer in the browser`);
    },
    ...(opts.demo ? { demo: opts.demo } : {}),
    chunkDecoder: () => {
      if (nested || size <= 1 || typeof Worker === 'undefined') return undefined;
      if (!pool) {
        const url = new URL(self.location.href);
        url.searchParams.set('pool', '1');
        pool = new WorkerPool(() => new Worker(url, { type: 'module' }) as unknown as WorkerLike, size);
      }
      return poolDecoder(pool);
    },
  });
  self.addEventListener('message', (ev) => { void handle(ev.data); });
}
