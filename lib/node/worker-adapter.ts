import { Worker } from 'node:worker_threads';
import { availableParallelism } from 'node:os';
import type { WorkerLike } from '../worker/pool.js';

/** URL of the compiled Node worker script (dist/lib/node/worker-main.js). */
export const NODE_WORKER_URL = new URL('./worker-main.js', import.meta.url);

/** Wraps a worker_threads Worker in the browser-style surface the pool uses. */
export function nodeWorker(url: URL = NODE_WORKER_URL): WorkerLike {
  const w = new Worker(url);
  return {
    postMessage: (m, transfer) => w.postMessage(m, (transfer ?? []) as ArrayBuffer[]),
    addEventListener: ((type: 'message' | 'error', listener: (ev: any) => void) => {
      if (type === 'message') w.on('message', (data) => listener({ data }));
      else {
        w.on('error', (error) => listener({ message: error?.message, error }));
        w.on('exit', (code) => { if (code !== 0) listener({ message: `worker exited with code ${code}` }); });
      }
    }) as WorkerLike['addEventListener'],
    terminate: () => w.terminate(),
  };
}

/** Cores Node may use (os.availableParallelism). */
export function nodeParallelism(): number {
  return Math.max(1, availableParallelism());
}
