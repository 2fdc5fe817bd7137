import { AbortError, deserializeError } from '../errors.js';
import type { SurveyReadout } from '../io/types.js';
import type { ProgressEvent, TallyResult } from '../result.js';
import type { TreeTable } from '../trees/table.js';
import type { WorkerLike } from './pool.js';
import type { InspectRequest, RemeasureRequest, TallyRequest, TreePoints, TreePointsRequest, WorkerReply } from './protocol.js';

type Pending = { resolve: (r: WorkerReply) => void; reject: (e: unknown) => void; onProgress?: (p: ProgressEvent) => void };

/**
 * The caller's side of the protocol: one worker, many requests, each with
 * its own id, progress callback and AbortSignal (cancel is sent to the
 * worker, and the promise rejects with AbortError at once).
 */
export class TallyClient {
  private nextId = 1;
  private readonly pending = new Map<number, Pending>();

  constructor(private readonly worker: WorkerLike) {
    worker.addEventListener('message', (ev) => this.onReply(ev.data as WorkerReply));
    worker.addEventListener('error', (ev) => {
      const err = deserializeError({ code: 'INTERNAL', message: `the worker stopped: ${ev.message ?? 'unknown error'}` });
      for (const p of this.pending.values()) p.reject(err);
      this.pending.clear();
    });
  }

  private onReply(r: WorkerReply): void {
    const p = this.pending.get(r?.id);
    if (!p) return;
    if (r.type === 'progress') { p.onProgress?.(r.progress); return; }
    this.pending.delete(r.id);
    if (r.type === 'error') p.reject(deserializeError(r.error));
    else p.resolve(r);
  }

  private send(msg: Record<string, unknown>, transfer: ArrayBuffer[], opts: { onProgress?: (p: ProgressEvent) => void; signal?: AbortSignal } = {}): Promise<WorkerReply> {
    const id = this.nextId++;
    return new Promise<WorkerReply>((resolve, reject) => {
      if (opts.signal?.aborted) { reject(new AbortError()); return; }
      this.pending.set(id, { resolve, reject, ...(opts.onProgress ? { onProgress: opts.onProgress } : {}) });
      opts.signal?.addEventListener('abort', () => {
        if (!this.pending.has(id)) return;
        this.pending.delete(id);
        this.worker.postMessage({ type: 'cancel', id });
        reject(new AbortError());
      }, { once: true });
      this.worker.postMessage({ ...msg, id }, transfer);
    });
  }

  async inspect(req: Omit<InspectRequest, 'type' | 'id'>, opts: { signal?: AbortSignal } = {}): Promise<SurveyReadout[]> {
    const r = await this.send({ type: 'inspect', ...req }, [], opts);
    return (r as Extract<WorkerReply, { type: 'readout' }>).readouts;
  }

  async tally(req: Omit<TallyRequest, 'type' | 'id'>, opts: { onProgress?: (p: ProgressEvent) => void; signal?: AbortSignal } = {}): Promise<TallyResult> {
    const r = await this.send({ type: 'tally', ...req }, [], opts);
    return (r as Extract<WorkerReply, { type: 'result' }>).result;
  }

  /** Note: the grids' buffers are transferred to the worker (pass copies if you keep using them). */
  async remeasure(req: Omit<RemeasureRequest, 'type' | 'id'>, opts: { signal?: AbortSignal } = {}): Promise<TreeTable> {
    const transfer = [req.labels.data.buffer, req.chm.data.buffer, req.dtm.data.buffer] as ArrayBuffer[];
    const r = await this.send({ type: 'remeasure', ...req }, transfer, opts);
    return (r as Extract<WorkerReply, { type: 'remeasured' }>).trees;
  }

  /** The points of one crown for its side view. The grids are copied, not transferred. */
  async treePoints(req: Omit<TreePointsRequest, 'type' | 'id'>, opts: { signal?: AbortSignal } = {}): Promise<TreePoints> {
    const r = await this.send({ type: 'tree-points', ...req }, [], opts);
    return (r as Extract<WorkerReply, { type: 'tree-points' }>).points;
  }

  terminate(): void {
    for (const p of this.pending.values()) p.reject(new AbortError('the worker was stopped'));
    this.pending.clear();
    void this.worker.terminate();
  }
}
