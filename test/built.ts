// Tests that run the compiled library (the bin, the Node worker threads) share these:
// `npm test` builds first; a single test file run on its own builds when dist/ is missing.
import { spawnSync } from 'node:child_process';
import { existsSync } from 'node:fs';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

export const ROOT = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..');
export const BIN = path.join(ROOT, 'bin/crowntally.js');
export const WORKER = path.join(ROOT, 'dist/lib/node/worker-main.js');

/** Builds dist/ with tsc unless `marker` (a path under the repo) is already there. */
export function ensureBuilt(marker = 'dist/lib/node/cli.js'): void {
  if (existsSync(path.join(ROOT, marker))) return;
  const r = spawnSync(process.execPath, [path.join(ROOT, 'node_modules/typescript/bin/tsc'), '-p', 'tsconfig.build.json'], { cwd: ROOT, encoding: 'utf8' });
  if (r.status !== 0) throw new Error(`build failed: ${r.stdout}${r.stderr}`);
}

export interface CliRun { code: number | null; stdout: string; stderr: string }

/** Runs the `crowntally` bin with `args` from the repo root. */
export function cli(...args: string[]): CliRun {
  const r = spawnSync(process.execPath, [BIN, ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}
