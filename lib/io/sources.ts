/**
 * Byte sources read by ranges. A reader asks only for the bytes it needs
 * (header, VLRs, one chunk at a time), so a multi-gigabyte File never has to
 * sit in memory whole.
 */
import { CrowntallyError } from '../errors.js';
import type { ByteSource } from './types.js';

function checkRange(offset: number, length: number): void {
  if (!Number.isSafeInteger(offset) || offset < 0 || !Number.isSafeInteger(length) || length < 0) {
    throw new CrowntallyError('INTERNAL', `bad byte range ${offset}+${length}`);
  }
}

/** A Blob or File (browser, or Node's Blob). Reads slices; never loads the whole blob. */
export function blobSource(blob: Blob, name?: string): ByteSource {
  const fileName = name ?? (typeof (blob as { name?: unknown }).name === 'string' ? (blob as unknown as { name: string }).name : 'blob');
  return {
    size: blob.size,
    name: fileName,
    async read(offset: number, length: number): Promise<Uint8Array> {
      checkRange(offset, length);
      const end = Math.min(blob.size, offset + length);
      if (offset >= end) return new Uint8Array(0);
      return new Uint8Array(await blob.slice(offset, end).arrayBuffer());
    },
  };
}

/** Bytes already in memory. Reads return views (no copy): callers must not write into them. */
export function bufferSource(buf: ArrayBuffer | Uint8Array, name = 'buffer'): ByteSource {
  const bytes = buf instanceof Uint8Array ? buf : new Uint8Array(buf);
  return {
    size: bytes.byteLength,
    name,
    async read(offset: number, length: number): Promise<Uint8Array> {
      checkRange(offset, length);
      const end = Math.min(bytes.byteLength, offset + length);
      if (offset >= end) return new Uint8Array(0);
      return bytes.subarray(offset, end);
    },
  };
}

/** Reads exactly `length` bytes or throws TRUNCATED naming `what`. */
export async function readExact(source: ByteSource, offset: number, length: number, what: string): Promise<Uint8Array> {
  if (offset + length > source.size) {
    throw new CrowntallyError('TRUNCATED',
      `${source.name}: the ${what} (bytes ${offset} to ${offset + length}) runs past the end of the file (${source.size} bytes); the file is cut short, copy it again`,
      { offset, length, size: source.size });
  }
  const b = await source.read(offset, length);
  if (b.byteLength < length) {
    throw new CrowntallyError('TRUNCATED', `${source.name}: could read only ${b.byteLength} of ${length} bytes of the ${what}`,
      { offset, length });
  }
  return b;
}
