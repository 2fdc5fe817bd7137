/**
 * Opens a point cloud: LAS or LAZ by the 'LASF' signature and the compression
 * marks (format byte bits 6-7, laszip VLR), anything else as XYZ text.
 */
import { CrowntallyError } from '../errors.js';
import type { ByteSource, CrsInfo, PointCloud, PointChunk, ReadOptions } from './types.js';
import { findLazVlr, hasLasSignature, readLasHeader } from './las-header.js';
import { lasChunks } from './las-points.js';
import { LazPerfHandle, lazChunks, lazPerfProvider, type LazPerfProvider } from './laz.js';
import { crsFromVlrs } from './crs.js';
import { checkLazSupported, parseLazVlr } from './laz-chunk-table.js';
import { openXyz } from './xyz.js';

export type { LazPerfProvider } from './laz.js';

export interface OpenOptions {
  /** Force the reader instead of detecting it. */
  kind?: 'las' | 'laz' | 'xyz';
  /** Overrides the CRS recorded in the file. */
  crs?: CrsInfo;
  /** laz-perf loader; defaults to importing the `laz-perf` package (works in Node as is). */
  lazPerf?: LazPerfProvider;
}

export async function openPointCloud(source: ByteSource, opts: OpenOptions = {}): Promise<PointCloud> {
  if (source.size === 0) throw new CrowntallyError('NOT_LAS', `${source.name} is empty (0 bytes); choose a LAS, LAZ or XYZ file`);
  const sig = await source.read(0, 4);
  const isLas = hasLasSignature(sig);
  if (!isLas && opts.kind !== 'xyz' && looksBinary(await source.read(0, Math.min(source.size, 4096)))) {
    throw new CrowntallyError('NOT_LAS', `${source.name} is neither a LAS/LAZ file (no "LASF" signature) nor XYZ text; choose a LAS, LAZ or XYZ file`);
  }
  const kind = opts.kind ?? (isLas ? undefined : 'xyz');
  if (kind === 'xyz') return openXyz(source, opts.crs ? { crs: opts.crs } : {});
  if (!isLas) throw new CrowntallyError('NOT_LAS', `${source.name} is not a LAS/LAZ file (it does not start with "LASF")`);
  const { header, vlrs } = await readLasHeader(source);
  const hasLazVlr = findLazVlr(vlrs) !== undefined;
  const compressed = header.compressed || hasLazVlr || kind === 'laz';
  if (compressed && !hasLazVlr) {
    throw new CrowntallyError('BAD_HEADER', `${source.name}: marked as compressed but has no LAZ description record (user "laszip encoded", 22204)`);
  }
  // Refuse a LAZ layout the decoder cannot handle now, not after the caller starts streaming.
  if (compressed) {
    const info = parseLazVlr(findLazVlr(vlrs)!, source.name);
    checkLazSupported(info, source.name);
    // The first item is the core point record: type 6 (point10) for formats 0-5, type 10 (point14) for 6-10.
    const core = header.pointFormat < 6 ? 6 : 10;
    if (info.items[0]?.type !== core) {
      throw new CrowntallyError('BAD_HEADER',
        `${source.name}: point format ${header.pointFormat} disagrees with the LAZ description record (its first item is type ${info.items[0]?.type ?? 'none'}, not ${core}); the header is damaged`);
    }
    // The compressed items make up the record: their sizes add up to the record length.
    const itemBytes = info.items.reduce((s, it) => s + it.size, 0);
    if (itemBytes !== header.pointRecordLength) {
      throw new CrowntallyError('BAD_HEADER',
        `${source.name}: the header's record length ${header.pointRecordLength} disagrees with the ${itemBytes} bytes of the LAZ description record's items; the header is damaged`);
    }
  }
  if (kind === 'las' && compressed) {
    throw new CrowntallyError('BAD_HEADER', `${source.name} is compressed (LAZ) but was opened as uncompressed LAS`);
  }
  const h = { ...header, compressed };
  if (!compressed && header.offsetToPointData + header.pointCount * header.pointRecordLength > source.size) {
    const fit = Math.floor((source.size - header.offsetToPointData) / header.pointRecordLength);
    throw new CrowntallyError('TRUNCATED',
      `${source.name}: the header promises ${header.pointCount} points but the file holds only ${fit}; the file is cut short or its header is wrong`,
      { pointCount: header.pointCount, pointsInFile: fit });
  }
  const crs = opts.crs ?? crsFromVlrs(vlrs, h);
  const handle = compressed ? new LazPerfHandle(opts.lazPerf ?? lazPerfProvider()) : null;
  let closed = false;
  return {
    kind: compressed ? 'laz' : 'las',
    name: source.name,
    header: h,
    crs,
    vlrs,
    source,
    chunks(ro?: ReadOptions): AsyncIterable<PointChunk> {
      if (closed) throw new CrowntallyError('INTERNAL', `${source.name} was read after close`);
      return handle ? lazChunks(source, h, vlrs, handle, ro) : lasChunks(source, h, ro);
    },
    async close(): Promise<void> {
      if (closed) return;
      closed = true;
      handle?.discard();
      await source.close?.();
    },
  };
}

/** Text clouds hold printable characters and line ends; a NUL or many control bytes mean binary. */
function looksBinary(b: Uint8Array): boolean {
  let ctrl = 0;
  for (let i = 0; i < b.length; i++) {
    const c = b[i]!;
    if (c === 0) return true;
    if (c < 9 || (c > 13 && c < 32)) ctrl++;
  }
  return ctrl > b.length / 20;
}
