/**
 * One fuzz case: open mutated bytes with openPointCloud, stream every chunk
 * through the read-out accumulator, and check what a hostile file may and may
 * not do. A broken rule throws a plain Error (a test failure); a typed
 * CrowntallyError from the reader is a pass and is returned as the outcome.
 */
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { CrowntallyError, type ErrorCode } from '../../lib/errors.js';
import { openPointCloud } from '../../lib/io/open.js';
import { bufferSource } from '../../lib/io/sources.js';
import { ReadoutAccumulator } from '../../lib/io/readout.js';
import type { LazPerf, LazPerfProvider } from '../../lib/io/laz.js';
import type { ByteSource, PointCloud } from '../../lib/io/types.js';

/** Every code lib/errors.ts defines; a code outside this list is a failure. */
export const KNOWN_CODES: readonly ErrorCode[] = [
  'NOT_LAS', 'TRUNCATED', 'BAD_HEADER', 'UNSUPPORTED', 'CORRUPT_LAZ', 'BAD_XYZ', 'BAD_OPTIONS', 'CRS_UNKNOWN',
  'CRS_UNSUPPORTED', 'TOO_LARGE', 'NO_GROUND', 'EMPTY', 'ABORTED', 'BAD_MESSAGE', 'INTERNAL',
];

/** Codes a LAS/LAZ file that opened may still throw while its points stream. */
export const STREAM_CODES: readonly ErrorCode[] = ['CORRUPT_LAZ', 'BAD_HEADER', 'TRUNCATED'];

/** Largest single read a reader may ask for: never more than the file, never more than this. */
export const READ_CAP = 64 * 1024 * 1024;
/** Largest growth of ArrayBuffer memory one case may cause (the case's own bytes excluded). */
export const MEMORY_CAP = 256 * 1024 * 1024;
/** A case running longer than this is a hang. Generous: a case normally takes milliseconds. */
export const CASE_TIME_MS = 20_000;

/**
 * laz-perf compiled once and instantiated afresh for each request, so a
 * thousand cases do not compile the WASM a thousand times while each opened
 * file still gets an instance no earlier case has touched.
 */
export function fastLazPerf(): LazPerfProvider {
  const req = createRequire(import.meta.url);
  const wasmPath = req.resolve('laz-perf/lib/node/laz-perf.wasm');
  const mod = new WebAssembly.Module(readFileSync(wasmPath));
  const create = (req('laz-perf') as { createLazPerf: (a: Record<string, unknown>) => Promise<LazPerf> }).createLazPerf;
  return async () => {
    // The Emscripten build adds process listeners per instance and never removes
    // them (so no instance is ever freed); drop the new ones here so thousands of
    // cases do not pile up instances.
    const before = new Set([...process.listeners('unhandledRejection'), ...process.listeners('uncaughtException')]);
    const lp = await create({
      instantiateWasm(imports: WebAssembly.Imports, done: (i: WebAssembly.Instance) => void) {
        WebAssembly.instantiate(mod, imports).then(done);
        return {};
      },
    });
    for (const l of process.listeners('unhandledRejection')) if (!before.has(l)) process.removeListener('unhandledRejection', l);
    for (const l of process.listeners('uncaughtException')) if (!before.has(l)) process.removeListener('uncaughtException', l);
    return lp;
  };
}

/** A broken fuzz rule: distinct from anything the readers throw. */
export class FuzzFailure extends Error {
  override name = 'FuzzFailure';
}

export interface CaseOutcome {
  /** 'ok' when every point streamed; otherwise the typed error's code. */
  outcome: 'ok' | ErrorCode;
  /** Where a typed error came from. */
  phase?: 'open' | 'stream';
  points: number;
  maxRead: number;
  memoryGrowth: number;
  message?: string;
}

/** Wraps a source to record the largest read length requested and the number of reads. */
export function recordingSource(inner: ByteSource): ByteSource & { maxRead: number; reads: number } {
  const s = {
    size: inner.size, name: inner.name, maxRead: 0, reads: 0,
    read(offset: number, length: number): Promise<Uint8Array> {
      s.reads++;
      if (length > s.maxRead) s.maxRead = length;
      if (length > Math.min(READ_CAP, Math.max(inner.size, 16))) {
        throw new FuzzFailure(`a read of ${length} bytes was requested from a ${inner.size}-byte file`);
      }
      return inner.read(offset, length);
    },
  };
  return s;
}

function withTimeout<T>(p: Promise<T>, ms: number, label: string): Promise<T> {
  let timer: ReturnType<typeof setTimeout> | undefined;
  const guard = new Promise<never>((_, reject) => {
    timer = setTimeout(() => reject(new FuzzFailure(`${label}: no answer after ${ms} ms (a hang)`)), ms);
  });
  return Promise.race([p, guard]).finally(() => clearTimeout(timer));
}

/** Tolerance of the bounds check: a few scale steps plus float noise (the LAZ reader's own rule). */
function slack(scale: number, a: number, b: number): number {
  return 4 * Math.abs(scale) + 1e-9 * Math.max(Math.abs(a), Math.abs(b));
}

async function streamAll(cloud: PointCloud, started: number, label: string, sample: () => void): Promise<number> {
  const h = cloud.header;
  const b = h.bounds;
  const tx = slack(h.scale[0], b.minX, b.maxX), ty = slack(h.scale[1], b.minY, b.maxY), tz = slack(h.scale[2], b.minZ, b.maxZ);
  const acc = new ReadoutAccumulator(cloud);
  let points = 0;
  for await (const c of cloud.chunks()) {
    points += c.count;
    if (points > h.pointCount) throw new FuzzFailure(`${label}: ${points} points streamed, more than the ${h.pointCount} the header promises`);
    for (let i = 0; i < c.count; i++) {
      const x = c.x[i]!, y = c.y[i]!, z = c.z[i]!;
      // Negated so NaN fails too.
      if (!(x >= b.minX - tx && x <= b.maxX + tx && y >= b.minY - ty && y <= b.maxY + ty && z >= b.minZ - tz && z <= b.maxZ + tz)) {
        throw new FuzzFailure(`${label}: point ${points - c.count + i + 1} (${x}, ${y}, ${z}) lies outside the header bounds ${JSON.stringify(b)} and no error was raised`);
      }
    }
    acc.add(c);
    sample();
    if (Date.now() - started > CASE_TIME_MS) throw new FuzzFailure(`${label}: still streaming after ${CASE_TIME_MS} ms (a hang)`);
  }
  const r = acc.finish();
  if (r.points !== points) throw new FuzzFailure(`${label}: the read-out counts ${r.points} points, ${points} streamed`);
  if (points !== h.pointCount) throw new FuzzFailure(`${label}: ${points} points streamed without error, the header promises ${h.pointCount}`);
  return points;
}

/**
 * Runs one case. `kind` says what the bytes started as: a LAS/LAZ file whose
 * stream errors must be CORRUPT_LAZ / BAD_HEADER / TRUNCATED, or XYZ text.
 */
export async function runCase(bytes: Uint8Array, label: string, lazPerf: LazPerfProvider): Promise<CaseOutcome> {
  const src = recordingSource(bufferSource(bytes, 'fuzz'));
  const base = process.memoryUsage().arrayBuffers;
  let peak = base;
  const sample = () => { const m = process.memoryUsage().arrayBuffers; if (m > peak) peak = m; };
  const started = Date.now();
  // Set inside the guarded closure, so widen it for the compiler.
  let phase = 'open' as 'open' | 'stream';
  let points = 0;
  const finish = (outcome: CaseOutcome['outcome'], message?: string): CaseOutcome => {
    sample();
    const memoryGrowth = peak - base;
    if (memoryGrowth > MEMORY_CAP) throw new FuzzFailure(`${label}: ArrayBuffer memory grew by ${memoryGrowth} bytes, over the ${MEMORY_CAP}-byte cap`);
    return { outcome, ...(outcome === 'ok' ? {} : { phase }), points, maxRead: src.maxRead, memoryGrowth, ...(message ? { message } : {}) };
  };
  let cloud: PointCloud | undefined;
  try {
    const work = (async () => {
      cloud = await openPointCloud(src, { lazPerf });
      sample();
      phase = 'stream';
      points = await streamAll(cloud, started, label, sample);
    })();
    await withTimeout(work, CASE_TIME_MS, label);
    return finish('ok');
  } catch (e) {
    if (e instanceof FuzzFailure) throw e.message.startsWith(label) ? e : new FuzzFailure(`${label}: ${e.message}`);
    if (!(e instanceof CrowntallyError)) {
      const what = e instanceof Error ? `${e.name}: ${e.message}` : `a thrown ${typeof e}: ${String(e)}`;
      throw new FuzzFailure(`${label}: ${phase === 'open' ? 'opening' : 'streaming'} let an untyped error escape (${what})`);
    }
    if (!KNOWN_CODES.includes(e.code)) throw new FuzzFailure(`${label}: unknown error code ${String(e.code)}`);
    if (e.code === 'INTERNAL') throw new FuzzFailure(`${label}: INTERNAL error from hostile input (${e.message})`);
    if (typeof e.message !== 'string' || e.message.length < 10) throw new FuzzFailure(`${label}: error ${e.code} without a useful message`);
    const wasLas = bytes.length >= 4 && bytes[0] === 0x4c && bytes[1] === 0x41 && bytes[2] === 0x53 && bytes[3] === 0x46;
    if (phase === 'stream' && wasLas && !STREAM_CODES.includes(e.code)) {
      throw new FuzzFailure(`${label}: a file that opened failed while streaming with ${e.code}, not CORRUPT_LAZ / BAD_HEADER / TRUNCATED (${e.message})`);
    }
    return finish(e.code, e.message);
  } finally {
    await (cloud as PointCloud | undefined)?.close();
  }
}
