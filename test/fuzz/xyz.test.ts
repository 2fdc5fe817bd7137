/**
 * Fuzzing the XYZ text reader: random token soup, NaN and Inf tokens, huge
 * numbers, binary garbage, odd separators and header lines, and lines of
 * 10 MB. Same rules as the LAS/LAZ fuzz (harness.ts): only typed errors
 * with known codes, points inside the bounds the reader reported, every
 * promised point streamed, no read beyond the file, bounded memory, no hang.
 * Replay a case with CROWNTALLY_FUZZ_SEED and CROWNTALLY_FUZZ_ONLY.
 */
import { describe, expect, it } from 'vitest';
import { Rng, caseSeed } from './prng.js';
import { hostileXyz, longLineXyz } from './mutate.js';
import { fastLazPerf, runCase } from './harness.js';
import { bufferSource } from '../../lib/io/sources.js';
import { openPointCloud } from '../../lib/io/open.js';

const SEED = Number(process.env['CROWNTALLY_FUZZ_SEED'] ?? 0x7e47) >>> 0;
const CASES = Math.max(1, Math.round(Number(process.env['CROWNTALLY_FUZZ_CASES'] ?? 2400) / 3));
const ONLY = process.env['CROWNTALLY_FUZZ_ONLY'] !== undefined ? Number(process.env['CROWNTALLY_FUZZ_ONLY']) : null;
const lazPerf = fastLazPerf();
const enc = new TextEncoder();

describe('XYZ reader under hostile text', () => {
  it(`${CASES} random texts (seed ${SEED})`, async () => {
    const outcomes: Record<string, number> = {};
    const from = ONLY ?? 0;
    const to = ONLY !== null ? ONLY + 1 : CASES;
    for (let i = from; i < to; i++) {
      const rng = new Rng(caseSeed(SEED, i));
      const { bytes, what } = hostileXyz(rng);
      const label = `seed ${SEED} case ${i} (${what})`;
      try {
        const r = await runCase(bytes, label, lazPerf);
        outcomes[r.outcome] = (outcomes[r.outcome] ?? 0) + 1;
      } catch (e) {
        throw new Error(`${(e as Error).message}\nreplay: CROWNTALLY_FUZZ_SEED=${SEED} CROWNTALLY_FUZZ_ONLY=${i} npx vitest run test/fuzz/xyz.test.ts`);
      }
    }
    if (ONLY === null && CASES >= 300) {
      expect(outcomes['ok'] ?? 0, JSON.stringify(outcomes)).toBeGreaterThan(CASES / 20);
      expect(outcomes['BAD_XYZ'] ?? 0, JSON.stringify(outcomes)).toBeGreaterThan(CASES / 20);
    }
  });

  it('NaN and Inf lines are skipped and counted, never taken as points', async () => {
    const text = '1 2 3\nNaN 2 3\n1 Inf 3\n1 2 -Infinity\n1e309 2 3\n4 5 6\n';
    const pc = await openPointCloud(bufferSource(enc.encode(text), 'nan.xyz'));
    // Only the two finite lines count (common practice: a non-finite coordinate is not a measurement).
    expect(pc.header.pointCount).toBe(2);
    expect((pc as unknown as { skippedLines: number }).skippedLines).toBe(4);
    const r = await runCase(enc.encode(text), 'nan lines', lazPerf);
    expect(r.outcome).toBe('ok');
    expect(r.points).toBe(2);
  });

  it('a colour channel without the other two (8 positional columns, a lone red header) reads without colour', async () => {
    for (const t of ['1 2 3 4 1 1 2 200\n5 6 7 8 1 1 2 100\n', 'x y z red\n1 2 3 4\n5 6 7 8\n', 'x y z r g\n1 2 3 4 5\n5 6 7 8 9\n']) {
      const r = await runCase(enc.encode(t), JSON.stringify(t), lazPerf);
      expect(r.outcome, t).toBe('ok');
      expect(r.points, t).toBe(2);
    }
  });

  it('a 10 MB line is dropped without being held whole; the lines around it still read', async () => {
    for (const digits of [true, false]) {
      const bytes = longLineXyz(10, digits);
      const r = await runCase(bytes, `10 MB line (${digits ? 'digits' : 'printable'})`, lazPerf);
      expect(r.outcome).toBe('ok');
      expect(r.points).toBe(2);
      // Reads are blocks, never the whole file at once.
      expect(r.maxRead).toBeLessThan(bytes.length);
    }
  });

  it('a file of one 10 MB line and nothing else: BAD_XYZ', async () => {
    const b = new Uint8Array(10 * 1024 * 1024).fill(0x37);
    const r = await runCase(b, 'one long line', lazPerf);
    expect(r.outcome).toBe('BAD_XYZ');
  });

  it('huge but finite coordinates stay finite and inside the reported bounds', async () => {
    const text = '1e308 -1e308 1e300\n-1.7976931348623157e308 1.7976931348623157e308 0\n';
    const r = await runCase(enc.encode(text), 'huge numbers', lazPerf);
    expect(r.outcome).toBe('ok');
    expect(r.points).toBe(2);
  });
});
