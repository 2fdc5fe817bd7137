import type { PointChunk } from './types.js';

/** A copy of the points of `chunk` whose `keep` byte is non-zero (area-of-interest and tile clipping). */
export function subsetChunk(chunk: PointChunk, keep: Uint8Array, kept: number): PointChunk {
  const pick = <T extends Float64Array | Float32Array | Uint16Array | Uint8Array>(a: T): T => {
    const out = new (a.constructor as { new (n: number): T })(kept);
    for (let i = 0, j = 0; i < chunk.count; i++) if (keep[i]) out[j++] = a[i]!;
    return out;
  };
  const out: PointChunk = {
    count: kept,
    x: pick(chunk.x), y: pick(chunk.y), z: pick(chunk.z),
    intensity: pick(chunk.intensity),
    returnNumber: pick(chunk.returnNumber), numberOfReturns: pick(chunk.numberOfReturns),
    classification: pick(chunk.classification), flags: pick(chunk.flags),
    scanAngleDeg: pick(chunk.scanAngleDeg),
  };
  if (chunk.gpsTime) out.gpsTime = pick(chunk.gpsTime);
  if (chunk.red) out.red = pick(chunk.red);
  if (chunk.green) out.green = pick(chunk.green);
  if (chunk.blue) out.blue = pick(chunk.blue);
  if (chunk.nir) out.nir = pick(chunk.nir);
  return out;
}

/** Bytes a chunk's arrays take (the point cache's budget counts these). */
export function chunkBytes(c: PointChunk): number {
  let n = c.x.byteLength + c.y.byteLength + c.z.byteLength + c.intensity.byteLength + c.returnNumber.byteLength +
    c.numberOfReturns.byteLength + c.classification.byteLength + c.flags.byteLength + c.scanAngleDeg.byteLength;
  for (const a of [c.gpsTime, c.red, c.green, c.blue, c.nir]) if (a) n += a.byteLength;
  return n;
}

/** Every buffer of a chunk, for a transfer list. */
export function chunkTransferables(c: PointChunk): ArrayBuffer[] {
  const set = new Set<ArrayBuffer>();
  for (const a of [c.x, c.y, c.z, c.intensity, c.returnNumber, c.numberOfReturns, c.classification, c.flags, c.scanAngleDeg,
    c.gpsTime, c.red, c.green, c.blue, c.nir]) if (a) set.add(a.buffer as ArrayBuffer);
  return [...set];
}
