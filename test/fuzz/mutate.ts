/**
 * Mutations of LAS/LAZ bytes and generators of hostile XYZ text. Field
 * offsets are those of the public header in ASPRS LAS Specification 1.4 R15,
 * table 3 (the 1.0-1.3 headers are its first 227/235 bytes); the laszip VLR
 * and chunk table layout is the LAZ format as LASzip writes it (Isenburg 2013,
 * PE&RS 79(2)): compressor u16 at 0, coder u16 at 2, chunk size u32 at 12,
 * item count u16 at 32, then 6-byte items; the chunk table offset is the
 * int64 at the start of the point data, the table holds version u32, count u32.
 */
import type { Rng } from './prng.js';

/** Structural landmarks of an unmutated file. */
export interface Layout {
  size: number;
  headerSize: number;
  versionMinor: number;
  pointFormat: number;
  recordLength: number;
  offsetToPointData: number;
  /** Start of each VLR header. */
  vlrStarts: number[];
  /** Start of the laszip VLR payload, or -1. */
  lazVlrData: number;
  /** Chunk table offset (LAZ), or -1. */
  chunkTable: number;
}

const RECORD = [20, 28, 26, 34, 57, 63, 30, 36, 38, 59, 67];

export function layoutOf(b: Uint8Array): Layout {
  const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const headerSize = dv.getUint16(94, true);
  const offsetToPointData = dv.getUint32(96, true);
  const vlrCount = dv.getUint32(100, true);
  const vlrStarts: number[] = [];
  let lazVlrData = -1;
  let p = headerSize;
  for (let i = 0; i < vlrCount && p + 54 <= offsetToPointData; i++) {
    vlrStarts.push(p);
    const user = new TextDecoder().decode(b.subarray(p + 2, p + 18)).replace(/\0.*$/s, '');
    if (user === 'laszip encoded' && dv.getUint16(p + 18, true) === 22204) lazVlrData = p + 54;
    p += 54 + dv.getUint16(p + 20, true);
  }
  let chunkTable = -1;
  if (lazVlrData >= 0 && offsetToPointData + 8 <= b.length) chunkTable = Number(dv.getBigInt64(offsetToPointData, true));
  return {
    size: b.length, headerSize, versionMinor: b[25]!, pointFormat: b[104]! & 0x3f, recordLength: dv.getUint16(105, true),
    offsetToPointData, vlrStarts, lazVlrData, chunkTable,
  };
}

type Width = 'u8' | 'u16' | 'u32' | 'u64' | 'i64' | 'f64';
export interface FieldEdit { at: number; width: Width; value: number | bigint; what: string }

/** Writes one edit into `b` (little-endian, as LAS stores every field). */
export function applyEdit(b: Uint8Array, e: FieldEdit): void {
  const w = { u8: 1, u16: 2, u32: 4, u64: 8, i64: 8, f64: 8 }[e.width];
  if (e.at < 0 || e.at + w > b.length) return;
  const dv = new DataView(b.buffer, b.byteOffset, b.byteLength);
  const v = e.value;
  switch (e.width) {
    case 'u8': dv.setUint8(e.at, Number(v) & 0xff); break;
    case 'u16': dv.setUint16(e.at, Number(v) & 0xffff, true); break;
    case 'u32': dv.setUint32(e.at, Number(v) >>> 0, true); break;
    case 'u64': dv.setBigUint64(e.at, BigInt.asUintN(64, BigInt(v)), true); break;
    case 'i64': dv.setBigInt64(e.at, BigInt.asIntN(64, BigInt(v)), true); break;
    case 'f64': dv.setFloat64(e.at, Number(v), true); break;
  }
}

/** Header and LAZ fields set to extremes: every edit the fuzzer may choose from, for this file. */
export function extremeEdits(L: Layout): FieldEdit[] {
  const e: FieldEdit[] = [];
  const add = (at: number, width: Width, values: (number | bigint)[], what: string) => {
    for (const value of values) e.push({ at, width, value, what: `${what}=${String(value)}` });
  };
  const rec = RECORD[L.pointFormat] ?? 20;
  add(107, 'u32', [0, 1, 2, 0xffffffff, 1_000_000], 'legacy point count');
  add(111, 'u32', [0xffffffff], 'points of return 1');
  if (L.versionMinor >= 4) {
    add(247, 'u64', [0n, 1n, 2n ** 32n - 1n, 2n ** 53n, 2n ** 53n - 1n, 2n ** 64n - 1n], '64-bit point count');
    add(235, 'u64', [BigInt(L.size), BigInt(L.size - 10), 2n ** 53n, 2n ** 63n, 1n], 'EVLR offset');
    add(243, 'u32', [1, 0xffffffff], 'EVLR count');
  }
  add(96, 'u32', [0, L.headerSize - 1, L.headerSize, L.size, L.size + 1, L.size - 1, 0xffffffff, L.offsetToPointData + 1], 'offset to point data');
  add(105, 'u16', [0, 1, rec - 1, rec + 1, 65535], 'record length');
  add(94, 'u16', [0, 226, 228, 376, 65535], 'header size');
  add(100, 'u32', [0, 1000, 0xffffffff, 0x7fffffff], 'VLR count');
  add(24, 'u8', [0, 2], 'version major');
  add(25, 'u8', [0, 3, 4, 5, 255], 'version minor');
  add(104, 'u8', [11, 63, 0x80 | L.pointFormat, 0x40 | L.pointFormat, L.pointFormat & 0x3f, 6, 10], 'point format byte');
  for (const [at, axis] of [[131, 'x'], [139, 'y'], [147, 'z']] as const) {
    add(at, 'f64', [0, NaN, Infinity, -Infinity, 1e-300, -0.01, 1e300, 5e-324], `${axis} scale`);
  }
  for (const [at, axis] of [[155, 'x'], [163, 'y'], [171, 'z']] as const) add(at, 'f64', [NaN, 1e308, -1e308], `${axis} offset`);
  for (const [at, name] of [[179, 'max x'], [187, 'min x'], [195, 'max y'], [203, 'min y'], [211, 'max z'], [219, 'min z']] as const) {
    add(at, 'f64', [NaN, Infinity, -Infinity, 0, 1e308, -1e308], name);
  }
  for (const v of L.vlrStarts) {
    add(v + 20, 'u16', [0, 1, 65535], `VLR length at ${v}`);
    add(v + 18, 'u16', [0, 22204, 34735], `VLR record id at ${v}`);
  }
  if (L.lazVlrData >= 0) {
    const d = L.lazVlrData;
    add(d, 'u16', [0, 1, 3, 4, 65535], 'laszip compressor');
    add(d + 2, 'u16', [1, 65535], 'laszip coder');
    add(d + 12, 'u32', [0, 1, 2, 1000, 0xffffffff, 0x80000000], 'laszip chunk size');
    add(d + 32, 'u16', [0, 1, 65535], 'laszip item count');
    for (let i = 0; i < 3; i++) {
      add(d + 34 + 6 * i, 'u16', [9, 13, 65535, 0], `laszip item ${i} type`);
      add(d + 36 + 6 * i, 'u16', [0, 1, 65535], `laszip item ${i} size`);
      add(d + 38 + 6 * i, 'u16', [0, 99], `laszip item ${i} version`);
    }
    const p = L.offsetToPointData;
    add(p, 'i64', [-1n, 0n, BigInt(L.size), BigInt(L.size + 1000), 2n ** 62n, BigInt(p + 8), BigInt(p), BigInt(L.size - 8), BigInt(L.size - 4)], 'chunk table offset');
    if (L.chunkTable > 0) {
      add(L.chunkTable, 'u32', [1, 0xffffffff], 'chunk table version');
      add(L.chunkTable + 4, 'u32', [0, 2, 1000, 0xffffffff, 0x7fffffff], 'chunk table count');
    }
  }
  return e;
}

/** Offsets worth cutting the file at: structure boundaries and one either side. */
export function boundaries(L: Layout): number[] {
  const at = [0, 1, 4, 24, 94, 100, 227, 235, 375, L.headerSize, L.offsetToPointData, L.offsetToPointData + 8,
    L.offsetToPointData + L.recordLength, L.size - 8, L.size - 1];
  for (const v of L.vlrStarts) at.push(v, v + 54);
  if (L.lazVlrData >= 0) at.push(L.lazVlrData + 34);
  if (L.chunkTable > 0) at.push(L.chunkTable, L.chunkTable + 4, L.chunkTable + 8);
  const out = new Set<number>();
  for (const a of at) for (const d of [-1, 0, 1]) if (a + d >= 0 && a + d < L.size) out.add(a + d);
  return [...out].sort((a, b) => a - b);
}

export type Mutation = 'bitflip' | 'byterun' | 'truncate-random' | 'truncate-boundary' | 'extreme' | 'extreme+bitflip' | 'extreme2';
export const MUTATIONS: readonly Mutation[] = ['bitflip', 'byterun', 'truncate-random', 'truncate-boundary', 'extreme', 'extreme+bitflip', 'extreme2'];

/** Applies one mutation (chosen by `rng`) to a copy of `orig`; returns the bytes and what was done. */
export function mutateLas(orig: Uint8Array, L: Layout, rng: Rng, kind: Mutation = rng.pick(MUTATIONS)): { bytes: Uint8Array; what: string } {
  const flips = (b: Uint8Array, n: number): string[] => {
    const done: string[] = [];
    for (let k = 0; k < n; k++) {
      // Half the flips land in the header, VLRs and first records, where structure lives.
      const lim = rng.chance(0.5) ? Math.min(b.length, L.offsetToPointData + 256) : b.length;
      const at = rng.int(lim);
      const bit = rng.int(8);
      b[at]! ^= 1 << bit;
      done.push(`${at}.${bit}`);
    }
    return done;
  };
  switch (kind) {
    case 'bitflip': {
      const b = orig.slice();
      return { bytes: b, what: `bit flips ${flips(b, 1 + rng.int(8)).join(',')}` };
    }
    case 'byterun': {
      const b = orig.slice();
      const at = rng.chance(0.5) ? rng.int(Math.min(b.length, L.offsetToPointData + 64)) : rng.int(b.length);
      const len = 1 + rng.int(rng.chance(0.8) ? 64 : 4096);
      const fill = rng.pick(['zero', 'ff', 'random'] as const);
      for (let i = at; i < Math.min(b.length, at + len); i++) b[i] = fill === 'zero' ? 0 : fill === 'ff' ? 0xff : rng.int(256);
      return { bytes: b, what: `byte run ${fill} at ${at} length ${len}` };
    }
    case 'truncate-random': {
      const n = rng.int(orig.length);
      return { bytes: orig.slice(0, n), what: `cut to ${n} bytes` };
    }
    case 'truncate-boundary': {
      const n = rng.pick(boundaries(L));
      return { bytes: orig.slice(0, n), what: `cut at boundary ${n}` };
    }
    case 'extreme':
    case 'extreme2':
    case 'extreme+bitflip': {
      const b = orig.slice();
      const edits = extremeEdits(L);
      const n = kind === 'extreme2' ? 2 + rng.int(2) : 1;
      const done: string[] = [];
      for (let k = 0; k < n; k++) { const e = rng.pick(edits); applyEdit(b, e); done.push(e.what); }
      if (kind === 'extreme+bitflip') done.push(`bit flips ${flips(b, 1 + rng.int(4)).join(',')}`);
      return { bytes: b, what: done.join('; ') };
    }
  }
}

const enc = new TextEncoder();

/** Hostile XYZ text: random tokens, NaN/Inf, huge numbers, binary garbage, odd separators. */
export function hostileXyz(rng: Rng): { bytes: Uint8Array; what: string } {
  const kind = rng.pick(['tokens', 'nan-inf', 'huge', 'binary', 'mixed', 'header'] as const);
  const lines = 1 + rng.int(300);
  const num = (): string => {
    const r = rng.int(10);
    if (r === 0) return rng.pick(['NaN', 'nan', 'Inf', '-Infinity', 'Infinity', '+inf', '1e309', '-1e309', '0x1F', '']);
    if (r === 1) return rng.pick(['1e308', '-1.7976931348623157e308', '4.9e-324', '1e-400', '123456789012345678901234567890']);
    return ((rng.next() - 0.5) * 10 ** rng.int(8)).toFixed(rng.int(6));
  };
  const sep = (): string => rng.pick([' ', '\t', ',', ';', '  ', ', ', '\r']);
  let text = '';
  switch (kind) {
    case 'tokens': {
      const alphabet = '0123456789 .,-+eE\t\n;xyzNaIfn#/\r';
      const n = 1 + rng.int(4000);
      for (let i = 0; i < n; i++) text += alphabet[rng.int(alphabet.length)];
      break;
    }
    case 'nan-inf':
      for (let i = 0; i < lines; i++) text += [num(), num(), num()].join(sep()) + '\n';
      break;
    case 'huge':
      for (let i = 0; i < lines; i++) text += [rng.pick(['1e308', '-1e308', '1e300']), rng.pick(['1e308', '0', '-1e308']), num()].join(' ') + '\n';
      break;
    case 'binary': {
      const b = new Uint8Array(1 + rng.int(20000));
      for (let i = 0; i < b.length; i++) b[i] = rng.int(256);
      // Never the LAS signature: these cases are for the text reader.
      if (b[0] === 0x4c) b[0] = 0;
      return { bytes: b, what: `binary garbage of ${b.length} bytes` };
    }
    case 'mixed':
      for (let i = 0; i < lines; i++) {
        const k = 1 + rng.int(12);
        const f: string[] = [];
        for (let j = 0; j < k; j++) f.push(num());
        text += f.join(sep()) + rng.pick(['\n', '\r\n', '\n\n']);
      }
      break;
    case 'header': {
      text = rng.pick(['x y z', 'X,Y,Z,Intensity', 'easting northing elevation r g b', 'x x x', 'lat lon', '//X Y Z', 'x y z classification return']) + '\n';
      for (let i = 0; i < lines; i++) text += [num(), num(), num(), num(), num(), num()].slice(0, 3 + rng.int(4)).join(sep()) + '\n';
      break;
    }
  }
  if (text.startsWith('L')) text = ' ' + text;
  return { bytes: enc.encode(text), what: `${kind} text, ${text.length} chars` };
}

/** A text cloud whose one line is `megabytes` long, between two good lines. */
export function longLineXyz(megabytes: number, digits: boolean): Uint8Array {
  const n = megabytes * 1024 * 1024;
  const b = new Uint8Array(n + 40);
  const head = enc.encode('1 2 3\n');
  b.set(head, 0);
  for (let i = head.length; i < head.length + n; i++) b[i] = digits ? 0x30 + (i % 10) : 0x20 + (i % 90);
  b.set(enc.encode('\n4 5 6\n'), head.length + n);
  return b.subarray(0, head.length + n + 7);
}
