/**
 * LAZ point decoding through laz-perf (WASM). The module is injected as a
 * provider so the browser can hand in its own .wasm URL or bytes; Node's
 * default lives in lib/node/laz-perf.ts.
 *
 * Chunks are decoded one at a time from the chunk table (so a pool can decode
 * them in parallel); files without a usable table are decoded as one stream.
 * laz-perf can return wrong points from damaged data and may throw a bare
 * number: every chunk is checked against the header bounds, any throw becomes
 * CORRUPT_LAZ naming the chunk, and the WASM instance is dropped after a throw.
 */
import { CrowntallyError, throwIfAborted } from '../errors.js';
import type { ByteSource, LasHeader, PointChunk, ReadOptions, Vlr } from './types.js';
import { CHUNK_POINTS, allocChunk, applyColourScale, colourScaleFor, decodeRecords } from './las-points.js';
import { VARIABLE_CHUNK_SIZE, parseLazVlr, readLazChunkTable } from './laz-chunk-table.js';
import { findLazVlr } from './las-header.js';
import { readExact } from './sources.js';

/** The part of the laz-perf Emscripten module this reader uses. */
export interface LazPerf {
  HEAPU8: Uint8Array;
  _malloc(size: number): number;
  _free(ptr: number): void;
  LASZip: new () => {
    open(ptr: number, length: number): void;
    getPoint(dest: number): void;
    getCount(): number;
    getPointLength(): number;
    getPointFormat(): number;
    delete(): void;
  };
  ChunkDecoder: new () => {
    open(pointFormat: number, recordLength: number, ptr: number): void;
    getPoint(dest: number): void;
    delete(): void;
  };
}

/** Makes a fresh laz-perf instance. Called again after an instance has thrown. */
export type LazPerfProvider = () => Promise<LazPerf>;

/**
 * A provider that loads the `laz-perf` package. In Node its own loader finds
 * the .wasm beside it. In a bundled browser app pass the .wasm location
 * (with Vite: `import wasmUrl from 'laz-perf/lib/web/laz-perf.wasm?url'`) or
 * its bytes, since the bundle moves the script away from the .wasm. `factory`
 * picks a particular Emscripten build, e.g. the default export of
 * 'laz-perf/lib/worker/laz-perf.js' inside a Web Worker.
 */
export function lazPerfProvider(opts: { wasmUrl?: string | URL; wasmBinary?: ArrayBuffer | Uint8Array; factory?: Factory } = {}): LazPerfProvider {
  return async () => {
    let create = opts.factory;
    if (!create) {
      const mod = (await import('laz-perf')) as unknown as { createLazPerf?: Factory; default?: { createLazPerf?: Factory } };
      create = mod.createLazPerf ?? mod.default?.createLazPerf;
    }
    if (!create) throw new CrowntallyError('INTERNAL', 'the laz-perf package does not export createLazPerf');
    const args: Record<string, unknown> = {};
    if (opts.wasmBinary) args['wasmBinary'] = opts.wasmBinary;
    if (opts.wasmUrl) { const u = String(opts.wasmUrl); args['locateFile'] = (p: string) => (p.endsWith('.wasm') ? u : p); }
    return create(args);
  };
}
/** An Emscripten module factory such as laz-perf's createLazPerf. */
export type Factory = (args?: Record<string, unknown>) => Promise<LazPerf>;

/** Holds one laz-perf instance; `discard` after a throw so the next use starts clean. */
export class LazPerfHandle {
  private current: Promise<LazPerf> | null = null;
  constructor(private readonly provider: LazPerfProvider) {}
  get(): Promise<LazPerf> {
    if (!this.current) {
      const p = this.provider().catch((e: unknown) => {
        throw new CrowntallyError('INTERNAL', `the LAZ decoder (laz-perf WASM) could not be loaded: ${thrownText(e)}; check that its .wasm file is available to the app`);
      });
      this.current = p;
      p.catch(() => { if (this.current === p) this.current = null; });
    }
    return this.current;
  }
  discard(): void { this.current = null; }
}

function thrownText(e: unknown): string {
  if (e instanceof Error) return e.message;
  return typeof e === 'number' ? `decoder aborted with code ${e}` : String(e);
}

/** Throws CORRUPT_LAZ when a decoded coordinate lies outside the header bounds by more than a few scale steps. */
export function checkChunkBounds(c: PointChunk, header: LasHeader, label: string, from = 0, to = c.count): void {
  const b = header.bounds;
  const tx = 4 * Math.abs(header.scale[0]) + 1e-9 * Math.max(Math.abs(b.minX), Math.abs(b.maxX));
  const ty = 4 * Math.abs(header.scale[1]) + 1e-9 * Math.max(Math.abs(b.minY), Math.abs(b.maxY));
  const tz = 4 * Math.abs(header.scale[2]) + 1e-9 * Math.max(Math.abs(b.minZ), Math.abs(b.maxZ));
  const { x, y, z } = c;
  const lx = b.minX - tx, hx = b.maxX + tx, ly = b.minY - ty, hy = b.maxY + ty, lz = b.minZ - tz, hz = b.maxZ + tz;
  for (let i = from; i < to; i++) {
    const xi = x[i]!, yi = y[i]!, zi = z[i]!;
    // Negated tests so NaN fails too.
    if (!(xi >= lx && xi <= hx && yi >= ly && yi <= hy && zi >= lz && zi <= hz)) {
      throw new CrowntallyError('CORRUPT_LAZ',
        `${label}: point ${i + 1} decodes to (${xi}, ${yi}, ${zi}), outside the file's bounds; the compressed data is damaged`,
        { point: i });
    }
  }
}

/**
 * Decodes one LAZ chunk (its compressed bytes) into a PointChunk of `pointCount`
 * points. Pure apart from the laz-perf heap it borrows and frees. Colour is
 * returned as stored (see colourScaleFor for the 8-bit rule).
 */
export function decodeLazChunk(lazPerf: LazPerf, bytes: Uint8Array, pointFormat: number, recordLength: number,
  pointCount: number, header: LasHeader, label = 'LAZ chunk'): PointChunk {
  // One piece holds the whole chunk; returning from the loop frees the WASM buffers.
  for (const piece of decodeLazChunkPieces(lazPerf, bytes, pointFormat, recordLength, pointCount, header, pointCount, label)) return piece;
  return allocChunk(0, pointFormat);
}

/** Decodes a chunk in pieces of at most `pieceSize` points, each a PointChunk. */
export function* decodeLazChunkPieces(lp: LazPerf, bytes: Uint8Array, pointFormat: number, recordLength: number,
  pointCount: number, header: LasHeader, pieceSize: number, label: string): Generator<PointChunk> {
  if (pointCount === 0) return;
  // Padding: the arithmetic decoder looks a few bytes ahead of what it uses.
  const inPtr = lp._malloc(bytes.length + 64);
  const piecePts = Math.min(pieceSize, pointCount);
  // Records go through a small batch buffer that stays in cache between the
  // WASM writes and the field decoding, rather than one buffer per piece.
  const batch = Math.min(BATCH_POINTS, piecePts);
  const outPtr = lp._malloc(batch * recordLength);
  let dec: InstanceType<LazPerf['ChunkDecoder']> | null = null;
  try {
    lp.HEAPU8.fill(0, inPtr + bytes.length, inPtr + bytes.length + 64);
    lp.HEAPU8.set(bytes, inPtr);
    dec = new lp.ChunkDecoder();
    dec.open(pointFormat, recordLength, inPtr);
    for (let done = 0; done < pointCount;) {
      const n = Math.min(piecePts, pointCount - done);
      const c = allocChunk(n, pointFormat);
      for (let at = 0; at < n; at += batch) {
        const m = Math.min(batch, n - at);
        for (let i = 0, p = outPtr; i < m; i++, p += recordLength) dec.getPoint(p);
        decodeRecords(lp.HEAPU8, outPtr, m, pointFormat, recordLength, header, c, at);
        checkChunkBounds(c, header, label, at, at + m);
      }
      done += n;
      yield c;
    }
  } catch (e) {
    if (e instanceof CrowntallyError) throw e;
    throw new CrowntallyError('CORRUPT_LAZ', `${label}: the compressed data could not be decoded (${thrownText(e)}); the file is damaged`);
  } finally {
    try { dec?.delete(); lp._free(outPtr); lp._free(inPtr); } catch { /* the instance is dropped by the caller */ }
  }
}

/** Records decoded per batch (about 17 KB for 34-byte records). */
const BATCH_POINTS = 512;

/** Largest file decoded as a single stream (no chunk table): it has to sit in WASM memory whole. */
const MAX_STREAM_BYTES = 1536 * 1024 * 1024;

/** Decodes a LAZ file without a usable chunk table, in order, with LASZip over the whole file. */
function* decodeStream(lp: LazPerf, file: Uint8Array, header: LasHeader, label: string): Generator<PointChunk> {
  const ptr = lp._malloc(file.length);
  const len = header.pointRecordLength;
  const outPtr = lp._malloc(CHUNK_POINTS * len);
  let zip: InstanceType<LazPerf['LASZip']> | null = null;
  try {
    lp.HEAPU8.set(file, ptr);
    zip = new lp.LASZip();
    zip.open(ptr, file.length);
    const total = header.pointCount;
    for (let done = 0; done < total;) {
      const n = Math.min(CHUNK_POINTS, total - done);
      for (let i = 0, p = outPtr; i < n; i++, p += len) zip.getPoint(p);
      const c = allocChunk(n, header.pointFormat);
      decodeRecords(lp.HEAPU8, outPtr, n, header.pointFormat, len, header, c);
      checkChunkBounds(c, header, `${label}, points ${done + 1} to ${done + n}`);
      done += n;
      yield c;
    }
  } catch (e) {
    if (e instanceof CrowntallyError) throw e;
    throw new CrowntallyError('CORRUPT_LAZ', `${label}: the compressed data could not be decoded (${thrownText(e)}); the file is damaged`);
  } finally {
    try { zip?.delete(); lp._free(outPtr); lp._free(ptr); } catch { /* dropped by the caller */ }
  }
}

/** End of the point data: the first EVLR (LAS 1.4) or the end of the file. */
function dataEnd(source: ByteSource, header: LasHeader, vlrs: Vlr[]): number {
  let e = source.size;
  for (const v of vlrs) if (v.extended && v.dataOffset - 60 > header.offsetToPointData) e = Math.min(e, v.dataOffset - 60);
  return e;
}

/** Streams the points of a LAZ file chunk by chunk. */
export async function* lazChunks(source: ByteSource, header: LasHeader, vlrs: Vlr[], handle: LazPerfHandle,
  opts: ReadOptions = {}): AsyncGenerator<PointChunk> {
  let table = await readLazChunkTable(source, header, vlrs);
  if (table && table.length === 0) return;
  const total = header.pointCount;
  let scale = 0;
  let done = 0;
  const emit = (c: PointChunk): PointChunk => {
    if (scale === 0) scale = colourScaleFor(c);
    applyColourScale(c, scale);
    done += c.count;
    opts.onProgress?.(done, total);
    return c;
  };
  if (table === null) {
    // No chunk table. A file of one chunk decodes from the first chunk byte on;
    // otherwise LASZip gets the whole stream (it finds tables we could not, or fails).
    const info = parseLazVlr(findLazVlr(vlrs)!, source.name);
    const first = header.offsetToPointData + 8;
    if (info.chunkSize !== VARIABLE_CHUNK_SIZE && total <= info.chunkSize) {
      table = [{ offset: first, byteLength: dataEnd(source, header, vlrs) - first, pointCount: total }];
    } else {
      if (source.size > MAX_STREAM_BYTES) {
        throw new CrowntallyError('TOO_LARGE', `${source.name}: this LAZ file has no chunk table and is too large to decode as one stream; recompress it with a chunked LAZ writer`);
      }
      const file = await readExact(source, 0, source.size, 'LAZ file');
      const lp = await handle.get();
      try {
        for (const c of decodeStream(lp, file, header, source.name)) { throwIfAborted(opts.signal); yield emit(c); }
      } catch (e) {
        handle.discard();
        if (e instanceof CrowntallyError && e.code !== 'CORRUPT_LAZ') throw e;
        throw new CrowntallyError('CORRUPT_LAZ',
          `${source.name}: this LAZ file has no chunk table (it was cut short or written as a stream) and its ${total} points could not be decoded without one; recompress the file or copy it again`);
      }
      return;
    }
  }
  for (let i = 0; i < table.length; i++) {
    throwIfAborted(opts.signal);
    const e = table[i]!;
    const bytes = await readExact(source, e.offset, e.byteLength, `LAZ chunk ${i + 1}`);
    const lp = await handle.get();
    const label = `${source.name}: LAZ chunk ${i + 1} of ${table.length}`;
    try {
      for (const c of decodeLazChunkPieces(lp, bytes, header.pointFormat, header.pointRecordLength, e.pointCount, header, CHUNK_POINTS, label)) {
        yield emit(c);
        throwIfAborted(opts.signal);
      }
    } catch (err) {
      if (!(err instanceof CrowntallyError) || err.code === 'CORRUPT_LAZ') handle.discard();
      throw err;
    }
  }
}
