/** Node default for laz-perf: the .wasm bytes read from the installed package. */
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { lazPerfProvider, type LazPerfProvider } from '../io/laz.js';

export function nodeLazPerf(): LazPerfProvider {
  let wasm: Promise<Uint8Array> | null = null;
  return async () => {
    if (!wasm) {
      const req = createRequire(import.meta.url);
      wasm = readFile(req.resolve('laz-perf/lib/node/laz-perf.wasm'));
    }
    return lazPerfProvider({ wasmBinary: await wasm })();
  };
}
