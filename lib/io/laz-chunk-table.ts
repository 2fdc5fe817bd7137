/**
 * The LAZ chunk table and the laszip VLR (Isenburg 2013, "LASzip: lossless
 * compression of LiDAR data", PE&RS 79(2); the LAZ format as LASzip writes it).
 *
 * Layout: the 8 bytes at the start of the point data hold the file offset of
 * the table (int64; -1 when the writer could not seek back, in which case the
 * last 8 bytes of the file hold it). At that offset: version (uint32, 0),
 * chunk count (uint32), then the entries, arithmetic-coded with one integer
 * coder of two contexts: for variable-size chunks the point count (context 0)
 * then the byte count (context 1), each predicted by the previous entry's value
 * (0 for the first); for fixed-size chunks only the byte counts. Chunks follow
 * each other from the byte after the 8-byte table offset.
 */
import { CrowntallyError } from '../errors.js';
import type { ByteSource, LasHeader, Vlr } from './types.js';
import { ArithmeticDecoder, ArithmeticEncoder, IntegerCoder } from './arith.js';
import { findLazVlr } from './las-header.js';
import { readExact } from './sources.js';

/** Chunk size value that marks variable-size chunks. */
export const VARIABLE_CHUNK_SIZE = 0xffffffff;

export interface LazChunkEntry {
  /** File offset of the chunk's first byte. */
  offset: number;
  byteLength: number;
  pointCount: number;
}

export interface LazItem { type: number; size: number; version: number }

export interface LazInfo {
  /** 1 pointwise, 2 pointwise chunked, 3 layered chunked (formats 6-10). */
  compressor: number;
  coder: number;
  version: [number, number, number];
  options: number;
  /** Points per chunk, or VARIABLE_CHUNK_SIZE. */
  chunkSize: number;
  items: LazItem[];
}

/** Item types the laz-perf decoder handles (no waveform items: types 9 and 13). */
const DECODABLE_ITEMS = new Set([0, 6, 7, 8, 10, 11, 12, 14]);

export function parseLazVlr(vlr: Vlr, src = 'file'): LazInfo {
  const d = vlr.data;
  if (d.length < 34) throw new CrowntallyError('BAD_HEADER', `${src}: the LAZ description record is cut short (${d.length} bytes)`);
  const dv = new DataView(d.buffer, d.byteOffset, d.byteLength);
  const n = dv.getUint16(32, true);
  if (d.length < 34 + 6 * n) throw new CrowntallyError('BAD_HEADER', `${src}: the LAZ description record lists ${n} items but is too short for them`);
  const items: LazItem[] = [];
  for (let i = 0; i < n; i++) {
    items.push({ type: dv.getUint16(34 + 6 * i, true), size: dv.getUint16(36 + 6 * i, true), version: dv.getUint16(38 + 6 * i, true) });
  }
  return {
    compressor: dv.getUint16(0, true), coder: dv.getUint16(2, true),
    version: [d[4]!, d[5]!, dv.getUint16(6, true)], options: dv.getUint32(8, true), chunkSize: dv.getUint32(12, true), items,
  };
}

/** Throws UNSUPPORTED for LAZ layouts the decoder cannot handle. */
export function checkLazSupported(info: LazInfo, src = 'file'): void {
  if (info.coder !== 0) throw new CrowntallyError('UNSUPPORTED', `${src}: LAZ coder ${info.coder} is not supported (only the arithmetic coder, 0)`);
  if (info.compressor !== 2 && info.compressor !== 3) {
    throw new CrowntallyError('UNSUPPORTED',
      `${src}: LAZ compressor ${info.compressor} (${info.compressor === 1 ? 'pointwise, not chunked' : 'unknown'}) is not supported; recompress the file with a current LAZ writer`);
  }
  for (const it of info.items) {
    if (!DECODABLE_ITEMS.has(it.type)) {
      throw new CrowntallyError('UNSUPPORTED', `${src}: LAZ item type ${it.type}${it.type === 9 || it.type === 13 ? ' (waveform)' : ''} cannot be decoded; export the file without waveforms`);
    }
  }
}

/** Decodes the coded entries (the bytes after version and count). */
export function decodeChunkTableEntries(coded: Uint8Array, chunkCount: number, variable: boolean, fixedSize: number): { counts: number[]; bytes: number[] } {
  const dec = new ArithmeticDecoder(coded);
  const ic = new IntegerCoder(2);
  const counts: number[] = [];
  const bytes: number[] = [];
  for (let i = 0; i < chunkCount; i++) {
    counts.push(variable ? ic.decode(dec, i ? counts[i - 1]! : 0, 0) : fixedSize);
    bytes.push(ic.decode(dec, i ? bytes[i - 1]! : 0, 1));
  }
  return { counts, bytes };
}

/**
 * Encodes a chunk table: version 0, count, coded entries. `counts` is used
 * only for variable-size chunks.
 */
export function encodeLazChunkTable(byteLengths: ArrayLike<number>, counts: ArrayLike<number> | null): Uint8Array {
  const n = byteLengths.length;
  const enc = new ArithmeticEncoder();
  const ic = new IntegerCoder(2);
  for (let i = 0; i < n; i++) {
    if (counts) ic.encode(enc, i ? counts[i - 1]! : 0, counts[i]!, 0);
    ic.encode(enc, i ? byteLengths[i - 1]! : 0, byteLengths[i]!, 1);
  }
  const body = enc.finish();
  const out = new Uint8Array(8 + body.length);
  const dv = new DataView(out.buffer);
  dv.setUint32(0, 0, true);
  dv.setUint32(4, n, true);
  out.set(body, 8);
  return out;
}

function corrupt(src: string, what: string): CrowntallyError {
  return new CrowntallyError('CORRUPT_LAZ', `${src}: the LAZ chunk table is damaged (${what}); the file cannot be read in chunks`);
}

/** Where the table starts, or null when the file has none to find. */
export async function chunkTableOffset(source: ByteSource, header: LasHeader): Promise<number | null> {
  const start = header.offsetToPointData;
  const p = await readExact(source, start, 8, 'LAZ chunk table offset');
  let off = Number(new DataView(p.buffer, p.byteOffset, 8).getBigInt64(0, true));
  if (off === -1 && source.size >= start + 16) {
    // Stream-written files put the offset in the file's last 8 bytes.
    const t = await readExact(source, source.size - 8, 8, 'LAZ chunk table offset');
    off = Number(new DataView(t.buffer, t.byteOffset, 8).getBigInt64(0, true));
  }
  if (off > source.size && p[7] === 0) {
    throw new CrowntallyError('TRUNCATED', `${source.name}: the LAZ chunk table should be at byte ${off} but the file has ${source.size} bytes; the file is cut short, copy it again`);
  }
  if (!(off >= start + 8) || off + 8 > source.size) return null;
  return off;
}

/**
 * Reads the chunk table: each chunk's file offset, byte length and point count.
 * Returns [] for a 0-point file and null when the file has no usable table
 * (the caller then decodes the whole stream in order).
 */
export async function readLazChunkTable(source: ByteSource, header: LasHeader, vlrs: Vlr[]): Promise<LazChunkEntry[] | null> {
  const src = source.name;
  const vlr = findLazVlr(vlrs);
  if (!vlr) throw new CrowntallyError('BAD_HEADER', `${src}: compressed file without its LAZ description record`);
  const info = parseLazVlr(vlr, src);
  checkLazSupported(info, src);
  if (header.pointCount === 0) return [];
  const tableAt = await chunkTableOffset(source, header);
  if (tableAt === null) return null;
  const first = header.offsetToPointData + 8;
  const head = await readExact(source, tableAt, 8, 'LAZ chunk table');
  const hdv = new DataView(head.buffer, head.byteOffset, 8);
  const version = hdv.getUint32(0, true);
  const n = hdv.getUint32(4, true);
  if (version !== 0) return null;
  const variable = info.chunkSize === VARIABLE_CHUNK_SIZE;
  // Every chunk holds at least one point and one byte: bound the count before allocating.
  if (n === 0 || n > header.pointCount || n > tableAt - first) throw corrupt(src, `${n} chunks for ${header.pointCount} points`);
  if (!variable && (info.chunkSize === 0 || Math.ceil(header.pointCount / info.chunkSize) !== n)) {
    throw new CrowntallyError('BAD_HEADER', `${src}: the header's point count ${header.pointCount} disagrees with the LAZ chunk table (${n} chunks of ${info.chunkSize} points)`);
  }
  // At most ~10 bytes per coded entry: read no more than that.
  const coded = await source.read(tableAt + 8, Math.min(source.size - tableAt - 8, 16 + 12 * n));
  const { counts, bytes } = decodeChunkTableEntries(coded, n, variable, info.chunkSize);
  const entries: LazChunkEntry[] = [];
  let at = first;
  let left = header.pointCount;
  for (let i = 0; i < n; i++) {
    const pc = variable ? counts[i]! : Math.min(info.chunkSize, left);
    const bl = bytes[i]!;
    if (!(pc > 0) || pc > left) throw corrupt(src, `chunk ${i + 1} claims ${pc} points, ${left} remain`);
    if (!(bl > 0) || at + bl > tableAt) throw corrupt(src, `chunk ${i + 1} (${bl} bytes) runs past the table`);
    entries.push({ offset: at, byteLength: bl, pointCount: pc });
    at += bl;
    left -= pc;
  }
  if (left !== 0) throw corrupt(src, `chunks hold ${header.pointCount - left} of ${header.pointCount} points`);
  return entries;
}
