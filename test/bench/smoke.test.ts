/**
 * The benchmark at a tiny scale, so it cannot rot: every row is produced
 * with a numeric ratio (not the targets: those are for `npm run bench`),
 * and latest.json carries the same rows. Chromium is left out here; the
 * browser tests cover that path.
 */
import { execFile } from 'node:child_process';
import { existsSync } from 'node:fs';
import { mkdtemp, readFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { promisify } from 'node:util';
import { beforeAll, describe, expect, it } from 'vitest';

const run = promisify(execFile);
const repo = path.resolve(__dirname, '../..');
const entry = path.join(repo, 'dist/bench/run.js');

interface Row { key: string; ratio: number | null; status: string; context: Record<string, unknown>; limits?: string }
interface Report { rows: Row[]; machine: { cores: number; node: string; cpu: string }; inputs: Record<string, string>; scale: number }

const ROWS = ['e2e-vs-decode', 'pool-decode', 'pool-e2e', 'crowns', 'treetops', 'e2e-vs-scipy', 'memory', 'area', 'chromium'];

describe('benchmark smoke run', () => {
  let report: Report;
  let printed = '';
  beforeAll(async () => {
    // The bench runs compiled (its worker threads need dist/lib/node/worker-main.js).
    if (!existsSync(entry)) await run('npx', ['tsc', '-p', 'tsconfig.build.json'], { cwd: repo });
    const out = await mkdtemp(path.join(tmpdir(), 'crowntally-bench-'));
    const r = await run(process.execPath, [entry], {
      cwd: repo, maxBuffer: 1 << 24,
      env: { ...process.env, CROWNTALLY_BENCH_SCALE: '0.005', CROWNTALLY_BENCH_REPEATS: '1', CROWNTALLY_BENCH_SKIP: 'chromium', CROWNTALLY_BENCH_OUT: out },
    });
    printed = r.stdout;
    report = JSON.parse(await readFile(path.join(out, 'latest.json'), 'utf8')) as Report;
  }, 300_000);

  it('produces every row, each measured one with a finite positive ratio and a verdict', () => {
    expect(report.rows.map((r) => r.key)).toEqual(ROWS);
    for (const r of report.rows) {
      if (r.key === 'chromium') {
        expect(r.status).toBe('NOT MEASURED');
        expect(r.limits).toMatch(/skipped/);
        continue;
      }
      expect(r.ratio, r.key).not.toBeNull();
      expect(Number.isFinite(r.ratio) && r.ratio! > 0, `${r.key} ratio ${r.ratio}`).toBe(true);
      expect(['MET', 'MISSED']).toContain(r.status);
      if (r.status === 'MISSED') expect(r.limits, `${r.key} says what limits it`).toBeTruthy();
    }
  });

  it('states the machine and input sizes, and prints the same rows as a table', () => {
    expect(report.machine.cores).toBeGreaterThan(0);
    expect(report.machine.node).toBe(process.version);
    for (const k of ['laz', 'chm', 'demo', 'memory', 'area']) expect(report.inputs[k], k).toMatch(/\d/);
    const tableRows = printed.split('\n').filter((l) => /^\| (?!figure|---)/.test(l));
    expect(tableRows).toHaveLength(ROWS.length);
  });

  it('crown labels of the two watersheds agree on nearly all cells even at this size', () => {
    // skimage.segmentation.watershed (Debian python3-skimage) is the outside reference; plateau ties may differ.
    const crowns = report.rows.find((r) => r.key === 'crowns')!;
    expect(crowns.context['agreementPercent'] as number).toBeGreaterThan(95);
  });
});
