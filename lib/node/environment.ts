import { CrowntallyError } from '../errors.js';
import { bufferSource } from '../io/sources.js';
import type { WorkerEnvironment } from '../worker/entry.js';
import type { DemoKind, WorkerReply } from '../worker/protocol.js';
import { fileSource } from './file-source.js';
import { nodeLazPerf } from './laz-perf.js';

/** What the shared worker handler needs in Node: file paths, laz-perf from the package, the demo generator. */
export function nodeEnvironment(post: (reply: WorkerReply, transfer: ArrayBuffer[]) => void): WorkerEnvironment {
  return {
    post,
    lazPerf: nodeLazPerf(),
    async openInput(input, name) {
      if (typeof input === 'string') return fileSource(input);
      if (input instanceof ArrayBuffer) return bufferSource(input, name);
      throw new CrowntallyError('BAD_MESSAGE', `input ${name} is neither a file path nor an ArrayBuffer`);
    },
    demo: demoBytes,
  };
}

export async function demoBytes(kind: DemoKind): Promise<Uint8Array> {
  const { generateSurvey } = await import('../../demo/index.js');
  return generateSurvey(kind).las;
}
