/** A file on disk as a ByteSource: ranged reads through a FileHandle, never the whole file. */
import { open } from 'node:fs/promises';
import { basename } from 'node:path';
import { CrowntallyError } from '../errors.js';
import type { ByteSource } from '../io/types.js';

export async function fileSource(path: string): Promise<ByteSource> {
  let fh;
  try {
    fh = await open(path, 'r');
  } catch (e) {
    throw new CrowntallyError('NOT_LAS', `cannot open ${path}: ${(e as Error).message}; check the path`);
  }
  const st = await fh.stat();
  const handle = fh;
  let closed = false;
  return {
    size: st.size,
    name: basename(path),
    async read(offset: number, length: number): Promise<Uint8Array> {
      if (closed) throw new CrowntallyError('INTERNAL', `${path} was read after close`);
      const end = Math.min(st.size, offset + length);
      if (!(offset >= 0) || offset >= end) return new Uint8Array(0);
      const out = new Uint8Array(end - offset);
      let got = 0;
      while (got < out.length) {
        const { bytesRead } = await handle.read(out, got, out.length - got, offset + got);
        if (bytesRead === 0) break;
        got += bytesRead;
      }
      return got === out.length ? out : out.subarray(0, got);
    },
    async close(): Promise<void> {
      if (closed) return;
      closed = true;
      await handle.close();
    },
  };
}
