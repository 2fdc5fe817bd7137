import { throwIfAborted } from '../errors.js';
import { readLazChunkTable } from './laz-chunk-table.js';
import { applyColourScale, colourScaleFor } from './las-points.js';
import { readExact } from './sources.js';
import type { PointChunk, PointCloud } from './types.js';

/** Decodes one LAZ chunk somewhere else (a worker of the pool). Colour comes back as stored. */
export type ChunkDecoder = ((req: {
  bytes: Uint8Array; pointFormat: number; recordLength: number; pointCount: number;
  header: PointCloud['header']; label: string;
}) => Promise<PointChunk>) & { readonly parallelism: number };

/**
 * Streams a cloud's chunks in file order. With a decoder (a pool) and a LAZ
 * file that has a chunk table, several chunks are decoded at once; results
 * are taken in file order, so the output is identical to one worker's.
 */
export class ChunkStreamer {
  constructor(private readonly cloud: PointCloud, private readonly decoder?: ChunkDecoder) {}

  async *chunks(signal?: AbortSignal): AsyncGenerator<PointChunk> {
    const { cloud, decoder } = this;
    const table = decoder && decoder.parallelism > 1 && cloud.kind === 'laz' && cloud.source
      ? await readLazChunkTable(cloud.source, cloud.header, cloud.vlrs)
      : null;
    if (!table || !decoder || !cloud.source) {
      for await (const c of cloud.chunks(signal ? { signal } : {})) {
        throwIfAborted(signal);
        yield c;
      }
      return;
    }
    const source = cloud.source;
    const h = cloud.header;
    // Two chunks in flight per worker keeps every worker busy while one result is consumed.
    const depth = Math.max(2, decoder.parallelism * 2);
    const inFlight: Promise<PointChunk>[] = [];
    let next = 0;
    let scale = 0;
    const launch = () => {
      const i = next++;
      const e = table[i]!;
      const label = `${source.name}: LAZ chunk ${i + 1} of ${table.length}`;
      const p = readExact(source, e.offset, e.byteLength, `LAZ chunk ${i + 1}`)
        .then((bytes) => decoder({ bytes, pointFormat: h.pointFormat, recordLength: h.pointRecordLength, pointCount: e.pointCount, header: h, label }));
      p.catch(() => { /* surfaced when awaited in order */ });
      inFlight.push(p);
    };
    try {
      while (next < table.length && inFlight.length < depth) launch();
      while (inFlight.length > 0) {
        throwIfAborted(signal);
        const c = await inFlight.shift()!;
        if (next < table.length) launch();
        if (scale === 0) scale = colourScaleFor(c);
        applyColourScale(c, scale);
        yield c;
      }
    } finally {
      // Let the rest settle quietly if the consumer stops early.
      await Promise.allSettled(inFlight);
    }
  }
}
