/** Node default for laz-perf: the .wasm bytes read from the installed package. */
import { readFile } from 'node:fs/promises';
import { createRequire } from 'node:module';
import { lazPerfProvider, type LazPerfProvider } from '../io/laz.js';

const HOOKED = ['uncaughtException', 'unhandledRejection'] as const;

export function nodeLazPerf(): LazPerfProvider {
  let wasm: Promise<Uint8Array> | null = null;
  return async () => {
    if (!wasm) {
      const req = createRequire(import.meta.url);
      wasm = readFile(req.resolve('laz-perf/lib/node/laz-perf.wasm'));
    }
    // Each Emscripten instance adds process-wide error listeners and never removes them; a long
    // session opening many files would pile them up. The decoder does not need them: drop them.
    const before = HOOKED.map((e) => new Set<unknown>(process.listeners(e as NodeJS.Signals)));
    const instance = await lazPerfProvider({ wasmBinary: await wasm })();
    HOOKED.forEach((e, i) => {
      for (const l of process.listeners(e as NodeJS.Signals)) if (!before[i]!.has(l)) process.removeListener(e as NodeJS.Signals, l as () => void);
    });
    return instance;
  };
}
