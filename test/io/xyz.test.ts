import { describe, expect, it } from 'vitest';
import { openXyz } from '../../lib/io/xyz.js';
import { crsFromUserText } from '../../lib/io/crs.js';
import type { ByteSource, PointChunk } from '../../lib/io/types.js';

/** An in-memory source that hands out at most `maxRead` bytes per read, so lines split across reads. */
function src(text: string, maxRead = 1 << 30): ByteSource {
  const bytes = new TextEncoder().encode(text);
  let reads = 0;
  return {
    size: bytes.byteLength, name: 'test.xyz',
    async read(offset, length) { reads++; return bytes.subarray(offset, offset + Math.min(length, maxRead)); },
    get reads() { return reads; },
  } as ByteSource;
}

async function all(cloudText: string): Promise<{ pts: PointChunk[]; n: number; skipped: number; cloud: Awaited<ReturnType<typeof openXyz>> }> {
  const cloud = await openXyz(src(cloudText));
  const pts: PointChunk[] = [];
  let n = 0;
  for await (const c of cloud.chunks()) { pts.push(c); n += c.count; }
  return { pts, n, skipped: cloud.skippedLines, cloud };
}

describe('XYZ text reader', () => {
  it('reads space, comma and tab separated x y z alike', async () => {
    for (const sep of [' ', ',', '\t', ', ']) {
      const text = [[1, 2, 3], [4.5, -5, 6.25], [7, 8, 9]].map((r) => r.join(sep)).join('\r\n') + '\r\n';
      const { pts, n, cloud } = await all(text);
      expect(n).toBe(3);
      expect(Array.from(pts[0]!.y)).toEqual([2, -5, 8]);
      expect(cloud.header.pointCount).toBe(3);
      expect(cloud.header.bounds).toEqual({ minX: 1, minY: -5, minZ: 3, maxX: 7, maxY: 8, maxZ: 9 });
      expect(cloud.crs.notes[0]).toMatch(/no CRS/);
    }
  });

  it('counts NaN, Inf and malformed lines and never takes them as points', async () => {
    const text = '1 2 3\nNaN 2 3\n1 Infinity 3\n1 2 -inf\n1 2\nhello world foo\n1 2 3abc\n\n4 5 6\n';
    const { n, skipped, pts } = await all(text);
    expect(n).toBe(2);
    expect(skipped).toBe(6);
    expect(Array.from(pts[0]!.z)).toEqual([3, 6]);
  });

  it('a header line maps named columns in any order, with common spellings', async () => {
    const text = '//Easting,Northing,Elevation,Classification,R,G,B,Intensity\n10,20,30,2,255,0,128,900\n11,21,31,5,0,255,0,100\n';
    const { pts, cloud } = await all(text);
    const c = pts[0]!;
    expect(Array.from(c.x)).toEqual([10, 11]);
    expect(Array.from(c.classification)).toEqual([2, 5]);
    expect(Array.from(c.intensity)).toEqual([900, 100]);
    // 8-bit colour scaled by 257 to the 16-bit range of LAS (ASPRS LAS 1.4 R15 stores 16-bit colour).
    expect(Array.from(c.red!)).toEqual([65535, 0]);
    expect(Array.from(c.blue!)).toEqual([128 * 257, 0]);
    expect(cloud.header.pointFormat).toBe(2);
  });

  it('without a header, columns go by position', async () => {
    const ten = await all('1 2 3 40 2 3 5 1000 2000 3000\n');
    const c = ten.pts[0]!;
    expect([c.intensity[0], c.returnNumber[0], c.numberOfReturns[0], c.classification[0]]).toEqual([40, 2, 3, 5]);
    expect([c.red![0], c.green![0], c.blue![0]]).toEqual([1000, 2000, 3000]);
    expect(ten.cloud.header.pointsByReturn[1]).toBe(1);
    const six = await all('1 2 3 10 20 30\n');
    expect(six.pts[0]!.red![0]).toBe(10 * 257);
    expect(six.pts[0]!.intensity[0]).toBe(0);
    const four = await all('1 2 3 77\n');
    expect(four.pts[0]!.intensity[0]).toBe(77);
    expect(four.pts[0]!.red).toBeUndefined();
  });

  it('lines split across reads and chunk boundaries come out whole', async () => {
    const rows: string[] = [];
    for (let i = 0; i < 70_000; i++) rows.push(`${i} ${i * 2} ${i % 97}`);
    const text = rows.join('\n');
    const cloud = await openXyz(src(text, 1000));
    let n = 0, sumX = 0, okY = true;
    const counts: number[] = [];
    for await (const c of cloud.chunks()) {
      counts.push(c.count);
      for (let i = 0; i < c.count; i++) { sumX += c.x[i]!; if (c.y[i] !== c.x[i]! * 2) okY = false; }
      n += c.count;
    }
    expect(n).toBe(70_000);
    expect(cloud.header.pointCount).toBe(70_000);
    expect(sumX).toBe((69_999 * 70_000) / 2);
    expect(okY).toBe(true);
    expect(counts.length).toBeGreaterThan(1);
    expect(cloud.skippedLines).toBe(0);
  });

  it('a file with no usable points throws BAD_XYZ; a header without x y z too', async () => {
    await expect(openXyz(src('NaN NaN NaN\nfoo\n'))).rejects.toMatchObject({ code: 'BAD_XYZ' });
    await expect(openXyz(src(''))).rejects.toMatchObject({ code: 'BAD_XYZ' });
    await expect(openXyz(src('a b c\n1 2 3\n'))).rejects.toMatchObject({ code: 'BAD_XYZ' });
  });

  it('binary bytes give BAD_XYZ without holding a huge line', async () => {
    const bytes = new Uint8Array(300_000);
    for (let i = 0; i < bytes.length; i++) bytes[i] = (i * 7919) % 251 === 10 ? 65 : (i * 7919) % 251;
    const s: ByteSource = { size: bytes.length, name: 'bin', async read(o, l) { return bytes.subarray(o, o + l); } };
    await expect(openXyz(s)).rejects.toMatchObject({ code: 'BAD_XYZ' });
  });

  it('takes the caller CRS', async () => {
    const cloud = await openXyz(src('1 2 3\n'), { crs: crsFromUserText('EPSG:27700') });
    expect(cloud.crs.epsg).toBe(27700);
  });

  it('honours the abort signal', async () => {
    const cloud = await openXyz(src('1 2 3\n'));
    const ac = new AbortController();
    ac.abort();
    await expect((async () => { for await (const _ of cloud.chunks({ signal: ac.signal })) { /* none */ } })()).rejects.toMatchObject({ code: 'ABORTED' });
  });
});
