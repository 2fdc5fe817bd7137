/**
 * Fuzzing the LAS and LAZ readers with mutated fixtures. Each case is one
 * mutation of one file, replayable from the run seed and its case number:
 *
 *   CROWNTALLY_FUZZ_SEED=<seed> CROWNTALLY_FUZZ_ONLY=<case> npx vitest run test/fuzz
 *
 * CROWNTALLY_FUZZ_CASES sets the number of cases (default a CI-sized run;
 * 200000 for a long run). Rules checked on every case (see harness.ts): only
 * a CrowntallyError with a known code escapes, never INTERNAL; a file that
 * opened fails while streaming only with CORRUPT_LAZ, BAD_HEADER or
 * TRUNCATED; streamed points lie within the header bounds and never exceed
 * the header's count; no read asks for more than the file; ArrayBuffer memory
 * grows by less than 256 MiB; no case runs past 20 s.
 */
import { describe, expect, it } from 'vitest';
import path from 'node:path';
import { readFileSync } from 'node:fs';
import { Rng, caseSeed } from './prng.js';
import { layoutOf, mutateLas, MUTATIONS, boundaries, extremeEdits, applyEdit, type Layout } from './mutate.js';
import { fastLazPerf, runCase, type CaseOutcome } from './harness.js';

const FIX = path.resolve(__dirname, '../../../shared/fixtures/laz-pairs');
const SEED = Number(process.env['CROWNTALLY_FUZZ_SEED'] ?? 0x5eed2024) >>> 0;
const CASES = Number(process.env['CROWNTALLY_FUZZ_CASES'] ?? 2400);
const ONLY = process.env['CROWNTALLY_FUZZ_ONLY'] !== undefined ? Number(process.env['CROWNTALLY_FUZZ_ONLY']) : null;
const lazPerf = fastLazPerf();

/** Fixtures and their weight in the draw; the large real scene is drawn rarely (it takes longer per case). */
const FILES: [string, number][] = [
  ['point10-1.0.las', 2], ['point10-1.0.laz', 2], ['no-points-1.3.las', 2], ['no-points-1.3.laz', 2],
  ['point10.las', 3], ['point10.las.laz', 4], ['point-time.las', 2], ['point-time.las.laz', 3],
  ['point-color.las', 2], ['point-color.las.laz', 3], ['point-color-time.las', 2], ['point-color-time.las.laz', 3],
  ['point-time-1.4.las.laz', 5], ['extrabytes.las', 2], ['extrabytes.laz', 3], ['1815.las', 2], ['1815.laz', 3],
  ['autzen_trim.las', 0.3], ['autzen_trim.laz', 0.3],
];
const loaded = FILES.map(([name, w]) => {
  const bytes = new Uint8Array(readFileSync(path.join(FIX, name)));
  return { name, w, bytes, layout: layoutOf(bytes) as Layout };
});
const totalW = loaded.reduce((s, f) => s + f.w, 0);

function drawFile(rng: Rng) {
  let r = rng.next() * totalW;
  for (const f of loaded) { if ((r -= f.w) < 0) return f; }
  return loaded[loaded.length - 1]!;
}

const tally = new Map<string, number>();
const count = (k: string) => tally.set(k, (tally.get(k) ?? 0) + 1);

describe('LAS/LAZ readers under mutated input', () => {
  it('every unmutated fixture streams cleanly through the harness', async () => {
    for (const f of loaded) {
      const r = await runCase(f.bytes, `unmutated ${f.name}`, lazPerf);
      expect(r.outcome, f.name).toBe('ok');
      // Reads stay within the file (harness cap) and the readers use ranged reads, not one whole-file read, for LAS.
      if (f.name.endsWith('.las') && f.bytes.length > 4096) expect(r.maxRead, f.name).toBeLessThan(f.bytes.length);
    }
  });

  it('every truncation at a structure boundary gives a typed error', async () => {
    for (const f of loaded) {
      for (const n of boundaries(f.layout)) {
        if (n >= f.bytes.length) continue;
        const label = `${f.name} cut at ${n}`;
        const r = await runCase(f.bytes.slice(0, n), label, lazPerf);
        count(`boundary:${r.outcome}`);
        // A file cut inside its header or point records may never stream all the points it
        // promised; a LAZ file cut only in its trailing chunk table may (its chunks are whole).
        const pointsWhole = f.layout.chunkTable > 0 ? n >= f.layout.chunkTable : false;
        if (r.outcome === 'ok' && !pointsWhole) {
          expect(r.points, `${label}: streamed ${r.points} points without error`).toBe(0);
        }
      }
    }
  });

  it('every header extreme, one at a time, on every fixture', async () => {
    let cases = 0;
    for (const f of loaded) {
      if (f.bytes.length > 1_000_000) continue; // the large scene joins the random draw only
      for (const e of extremeEdits(f.layout)) {
        const b = f.bytes.slice();
        applyEdit(b, e);
        await runCase(b, `${f.name} with ${e.what}`, lazPerf);
        cases++;
      }
    }
    expect(cases).toBeGreaterThan(500);
  });

  it(`${CASES} random mutations (seed ${SEED})`, async () => {
    const outcomes: Record<string, number> = {};
    const from = ONLY ?? 0;
    const to = ONLY !== null ? ONLY + 1 : CASES;
    for (let i = from; i < to; i++) {
      const rng = new Rng(caseSeed(SEED, i));
      const f = drawFile(rng);
      const kind = rng.pick(MUTATIONS);
      const { bytes, what } = mutateLas(f.bytes, f.layout, rng, kind);
      const label = `seed ${SEED} case ${i} (${f.name}, ${what})`;
      let r: CaseOutcome;
      try {
        r = await runCase(bytes, label, lazPerf);
      } catch (e) {
        throw new Error(`${(e as Error).message}\nreplay: CROWNTALLY_FUZZ_SEED=${SEED} CROWNTALLY_FUZZ_ONLY=${i} npx vitest run test/fuzz/readers.test.ts`);
      }
      const k = `${r.phase ?? ''}:${r.outcome}`;
      outcomes[k] = (outcomes[k] ?? 0) + 1;
    }
    if (process.env['CROWNTALLY_FUZZ_REPORT']) console.log(JSON.stringify({ seed: SEED, cases: to - from, outcomes }));
    if (ONLY === null && CASES >= 1000) {
      // The draw must reach both ends: files that still read, and each kind of refusal.
      expect(outcomes[':ok'] ?? 0, JSON.stringify(outcomes)).toBeGreaterThan(CASES / 50);
      for (const code of ['TRUNCATED', 'BAD_HEADER', 'CORRUPT_LAZ']) {
        const n = Object.entries(outcomes).filter(([k]) => k.endsWith(`:${code}`)).reduce((s, [, v]) => s + v, 0);
        expect(n, `${code} in ${JSON.stringify(outcomes)}`).toBeGreaterThan(0);
      }
    }
  });
});
