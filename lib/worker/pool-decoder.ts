import type { ChunkDecoder } from '../io/chunk-stream.js';
import type { PointChunk } from '../io/types.js';
import type { WorkerPool } from './pool.js';
import type { DecodeChunkReply } from './protocol.js';

/** A ChunkDecoder that sends each chunk's bytes (transferred) to a worker of the pool. */
export function poolDecoder(pool: WorkerPool): ChunkDecoder {
  const decode = async (req: Parameters<ChunkDecoder>[0]): Promise<PointChunk> => {
    // Copy into a buffer of its own so the transfer never detaches a shared one.
    const bytes = req.bytes.byteOffset === 0 && req.bytes.byteLength === req.bytes.buffer.byteLength ? req.bytes : req.bytes.slice();
    const reply = await pool.run<DecodeChunkReply>({
      type: 'decode-chunk', bytes, pointFormat: req.pointFormat, recordLength: req.recordLength,
      pointCount: req.pointCount, header: req.header, label: req.label,
    }, [bytes.buffer as ArrayBuffer]);
    return reply.chunk;
  };
  return Object.assign(decode, { parallelism: pool.size });
}
