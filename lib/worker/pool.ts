import { CrowntallyError, deserializeError, type SerializedError } from '../errors.js';

/**
 * The smallest surface of a worker the pool needs. A browser `Worker` fits it
 * as is; lib/node/worker-adapter.ts wraps `worker_threads.Worker`.
 */
export interface WorkerLike {
  postMessage(message: unknown, transfer?: Transferable[] | ArrayBuffer[]): void;
  addEventListener(type: 'message', listener: (ev: { data: unknown }) => void): void;
  addEventListener(type: 'error', listener: (ev: { message?: string; error?: unknown }) => void): void;
  terminate(): void | Promise<unknown>;
}

interface Task {
  id: number;
  message: { id: number } & Record<string, unknown>;
  transfer: ArrayBuffer[];
  resolve: (reply: any) => void;
  reject: (e: unknown) => void;
}

interface Slot { worker: WorkerLike; busy: Task | null }

/**
 * A fixed pool of workers answering one reply per request (`{ id }` in,
 * `{ id, type }` out; `type: 'error'` rejects with the typed error). Tasks
 * queue FIFO; a worker that dies is replaced and its task fails with a typed
 * error, so the caller keeps working.
 */
export class WorkerPool {
  private readonly slots: Slot[] = [];
  private readonly queue: Task[] = [];
  private nextId = 1;
  private closed = false;
  /** Crashes since the last good reply: a worker that cannot even start must not be respawned forever. */
  private crashesInARow = 0;
  private broken: string | null = null;

  constructor(private readonly create: () => WorkerLike, readonly size: number) {
    if (!(Number.isInteger(size) && size >= 1 && size <= 256)) {
      throw new CrowntallyError('BAD_OPTIONS', `worker pool size must be a whole number from 1 to 256 (got ${size})`);
    }
    for (let i = 0; i < size; i++) this.slots.push(this.spawn());
  }

  private spawn(): Slot {
    const slot: Slot = { worker: this.create(), busy: null };
    slot.worker.addEventListener('message', (ev) => this.onReply(slot, ev.data as { id: number; type: string; error?: SerializedError }));
    slot.worker.addEventListener('error', (ev) => this.onCrash(slot, ev.message ?? String(ev.error ?? 'worker failed')));
    return slot;
  }

  /** Sends `message` (its `id` is set here) to a free worker; resolves with the reply. */
  run<R>(message: Record<string, unknown>, transfer: ArrayBuffer[] = []): Promise<R> {
    if (this.closed) return Promise.reject(new CrowntallyError('INTERNAL', 'the worker pool is closed'));
    if (this.broken) return Promise.reject(new CrowntallyError('INTERNAL', this.broken));
    return new Promise<R>((resolve, reject) => {
      const id = this.nextId++;
      this.queue.push({ id, message: { ...message, id }, transfer, resolve, reject });
      this.pump();
    });
  }

  private pump(): void {
    for (const slot of this.slots) {
      if (this.queue.length === 0) return;
      if (slot.busy) continue;
      const task = this.queue.shift()!;
      slot.busy = task;
      try {
        slot.worker.postMessage(task.message, task.transfer);
      } catch (e) {
        slot.busy = null;
        task.reject(e);
      }
    }
  }

  private onReply(slot: Slot, reply: { id: number; type: string; error?: SerializedError }): void {
    const task = slot.busy;
    if (!task || reply?.id !== task.id) return; // progress or stray messages are not pool replies
    if (reply.type === 'progress') return;
    slot.busy = null;
    this.crashesInARow = 0;
    if (reply.type === 'error' && reply.error) task.reject(deserializeError(reply.error));
    else task.resolve(reply);
    this.pump();
  }

  private onCrash(slot: Slot, message: string): void {
    const task = slot.busy;
    slot.busy = null;
    try { void slot.worker.terminate(); } catch { /* already gone */ }
    const err = new CrowntallyError('INTERNAL', `a worker stopped unexpectedly: ${message}`);
    task?.reject(err);
    const i = this.slots.indexOf(slot);
    if (++this.crashesInARow > 2 * this.size) {
      // Workers that die as they start (a script that fails to load): stop and fail everything queued.
      this.broken = `the decoding workers could not be started (${message}); reload the app, or process with one worker`;
      for (const t of this.queue.splice(0)) t.reject(new CrowntallyError('INTERNAL', this.broken));
      if (i >= 0) this.slots.splice(i, 1);
      return;
    }
    if (!this.closed && i >= 0) this.slots[i] = this.spawn();
    this.pump();
  }

  /** Stops every worker; queued tasks fail with ABORTED. */
  async close(): Promise<void> {
    this.closed = true;
    for (const t of this.queue.splice(0)) t.reject(new CrowntallyError('ABORTED', 'the worker pool was closed'));
    for (const s of this.slots) {
      s.busy?.reject(new CrowntallyError('ABORTED', 'the worker pool was closed'));
      await s.worker.terminate();
    }
    this.slots.length = 0;
  }
}
