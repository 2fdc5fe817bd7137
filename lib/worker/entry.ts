/**
 * The worker's message handler, the same code in a browser Web Worker and a
 * Node worker thread: each environment passes in how to post replies, how to
 * turn an input into a byte source, and how to load the LAZ decoder.
 */
import { AbortError, CrowntallyError, serializeError } from '../errors.js';
import { chunkTransferables } from '../io/chunks.js';
import type { ChunkDecoder } from '../io/chunk-stream.js';
import { decodeLazChunk, LazPerfHandle, type LazPerfProvider } from '../io/laz.js';
import { bufferSource } from '../io/sources.js';
import type { ByteSource } from '../io/types.js';
import { inspectInputs, remeasure, tally, treePoints } from '../pipeline.js';
import { treeTableTransferables } from '../trees/table.js';
import type { DemoKind, SurveyInput, WorkerReply, WorkerRequest } from './protocol.js';
import { validateRequest } from './validate.js';

export interface WorkerEnvironment {
  post(reply: WorkerReply, transfer: ArrayBuffer[]): void;
  /** A byte source for an input (Blob in the browser, path in Node). */
  openInput(input: SurveyInput, name: string): Promise<ByteSource>;
  lazPerf?: LazPerfProvider;
  /** A pool for LAZ chunks, when this worker may start more workers. */
  chunkDecoder?: () => ChunkDecoder | undefined;
  /** The built-in scenarios (kept out of the library core so it stays small). */
  demo?: (kind: DemoKind) => Promise<Uint8Array>;
}

export function createHandler(env: WorkerEnvironment): (data: unknown) => Promise<void> {
  const running = new Map<number, AbortController>();
  const decoderHandle = env.lazPerf ? new LazPerfHandle(env.lazPerf) : null;

  async function sources(files: SurveyInput[], names: string[], demo?: DemoKind): Promise<ByteSource[]> {
    if (demo) {
      if (!env.demo) throw new CrowntallyError('UNSUPPORTED', 'the built-in scenarios are not available in this worker');
      return [bufferSource(await env.demo(demo), `demo-${demo}.las`)];
    }
    return Promise.all(files.map((f, i) => env.openInput(f, names[i] ?? `file ${i + 1}`)));
  }

  return async function handle(data: unknown): Promise<void> {
    let msg: WorkerRequest;
    try {
      msg = validateRequest(data);
    } catch (e) {
      const id = typeof (data as { id?: unknown })?.id === 'number' ? (data as { id: number }).id : -1;
      env.post({ type: 'error', id, error: serializeError(e) }, []);
      return;
    }
    if (msg.type === 'cancel') {
      running.get(msg.id)?.abort();
      return;
    }
    const ctrl = new AbortController();
    running.set(msg.id, ctrl);
    const id = msg.id;
    try {
      switch (msg.type) {
        case 'decode-chunk': {
          if (!decoderHandle) throw new CrowntallyError('UNSUPPORTED', 'this worker has no LAZ decoder');
          const lp = await decoderHandle.get();
          let chunk;
          try {
            chunk = decodeLazChunk(lp, msg.bytes, msg.pointFormat, msg.recordLength, msg.pointCount, msg.header, msg.label);
          } catch (e) {
            decoderHandle.discard(); // a WASM instance that has thrown is not trusted again
            throw e;
          }
          env.post({ type: 'chunk', id, chunk }, chunkTransferables(chunk));
          break;
        }
        case 'inspect': {
          const readouts = await inspectInputs(await sources(msg.files, msg.names, msg.demo), {
            ...(msg.crs ? { crs: msg.crs } : {}), ...(env.lazPerf ? { lazPerf: env.lazPerf } : {}), signal: ctrl.signal,
          });
          env.post({ type: 'readout', id, readouts }, []);
          break;
        }
        case 'tally': {
          const decoder = env.chunkDecoder?.();
          const result = await tally(await sources(msg.files, msg.names, msg.demo), {
            ...(msg.options ? { options: msg.options } : {}),
            ...(msg.crs ? { crs: msg.crs } : {}),
            ...(msg.aoi ? { aoi: msg.aoi } : {}),
            ...(env.lazPerf ? { lazPerf: env.lazPerf } : {}),
            ...(decoder ? { chunkDecoder: decoder } : {}),
            signal: ctrl.signal,
            onProgress: (progress) => env.post({ type: 'progress', id, progress }, []),
          });
          const transfer = [...treeTableTransferables(result.trees), result.chm.data.buffer, result.dtm.data.buffer, result.labels.data.buffer] as ArrayBuffer[];
          env.post({ type: 'result', id, result }, transfer);
          break;
        }
        case 'tree-points': {
          const points = await treePoints(await sources(msg.files, msg.names, msg.demo), {
            ...(msg.crs ? { crs: msg.crs } : {}), ...(env.lazPerf ? { lazPerf: env.lazPerf } : {}), signal: ctrl.signal,
            labels: msg.labels, dtm: msg.dtm, label: msg.label, topX: msg.topX, topY: msg.topY,
            ...(msg.maxPoints !== undefined ? { maxPoints: msg.maxPoints } : {}),
          });
          const p = points;
          env.post({ type: 'tree-points', id, points }, [p.distanceM.buffer, p.heightM.buffer, p.returnNumber.buffer, p.numberOfReturns.buffer, p.classification.buffer] as ArrayBuffer[]);
          break;
        }
        case 'remeasure': {
          const trees = await remeasure(await sources(msg.files, msg.names, msg.demo), {
            ...(msg.options ? { options: msg.options } : {}), ...(msg.crs ? { crs: msg.crs } : {}),
            ...(env.lazPerf ? { lazPerf: env.lazPerf } : {}), signal: ctrl.signal,
            labels: msg.labels, chm: msg.chm, dtm: msg.dtm, tops: msg.tops,
          });
          env.post({ type: 'remeasured', id, trees }, treeTableTransferables(trees));
          break;
        }
      }
    } catch (e) {
      env.post({ type: 'error', id, error: serializeError(ctrl.signal.aborted ? new AbortError() : e) }, []);
    } finally {
      running.delete(id);
    }
  };
}
