import { execFileSync } from 'node:child_process';
import path from 'node:path';
import { fileURLToPath } from 'node:url';

/** Builds the app once before the browser tests (vite build, output app/dist). */
export default function setup(): void {
  const repo = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '../..');
  if (process.env['CROWNTALLY_E2E_SKIP_BUILD'] === '1') return;
  execFileSync(process.execPath, [path.join(repo, 'node_modules/vite/bin/vite.js'), 'build', '--config', 'app/vite.config.ts', '--logLevel', 'warn'], { cwd: repo, stdio: 'inherit' });
}
