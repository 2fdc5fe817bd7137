import { AbortError } from '../../lib/errors.js';
import type { SurveyReadout } from '../../lib/io/types.js';
import type { ProgressEvent, TallyResult } from '../../lib/result.js';
import type { TreeTable } from '../../lib/trees/table.js';
import { TallyClient } from '../../lib/worker/client.js';
import type { WorkerLike } from '../../lib/worker/pool.js';
import type { InspectRequest, RemeasureRequest, TallyRequest, TreePoints, TreePointsRequest } from '../../lib/worker/protocol.js';

/**
 * The app's line to the processing worker (all computation happens there).
 * A cancelled job ends its worker outright and the next job gets a fresh
 * one: a job stuck deep in a stage can then never keep the device busy.
 */
export class Jobs {
  private client: TallyClient | null = null;

  constructor(private readonly spawn: () => Worker) {}

  private get(): TallyClient {
    if (!this.client) this.client = new TallyClient(this.spawn() as unknown as WorkerLike);
    return this.client;
  }

  private restart(): void {
    this.client?.terminate();
    this.client = null;
  }

  inspect(r: Omit<InspectRequest, 'type' | 'id'>): Promise<SurveyReadout[]> {
    return this.get().inspect(r);
  }

  async tally(r: Omit<TallyRequest, 'type' | 'id'>, onProgress: (p: ProgressEvent) => void, signal: AbortSignal): Promise<TallyResult> {
    const onAbort = () => this.restart();
    signal.addEventListener('abort', onAbort, { once: true });
    try {
      return await this.get().tally(r, { onProgress, signal });
    } catch (e) {
      if (signal.aborted) throw new AbortError();
      throw e;
    } finally {
      signal.removeEventListener('abort', onAbort);
    }
  }

  /** Sends copies of the grids (their buffers are transferred), so stored copies stay usable. */
  remeasure(r: Omit<RemeasureRequest, 'type' | 'id'>): Promise<TreeTable> {
    return this.get().remeasure({
      ...r,
      labels: { ...r.labels, data: r.labels.data.slice() },
      chm: { ...r.chm, data: r.chm.data.slice() },
      dtm: { ...r.dtm, data: r.dtm.data.slice() },
    });
  }

  /** The points of one crown for the side view (the worker reads the survey again and keeps that crown's cells). */
  treePoints(r: Omit<TreePointsRequest, 'type' | 'id'>): Promise<TreePoints> {
    return this.get().treePoints(r);
  }
}
