/**
 * The same job in headless Chromium: a tiny page served from 127.0.0.1
 * hands the survey bytes to a module Web Worker that runs the library's
 * `tally` (one thread, no decode pool, as the Node run it is compared with).
 * The page and worker are bundled with Vite's JS API into bench/.cache/ and
 * Debian's /usr/bin/chromium is driven by playwright-core (no browser is
 * downloaded). Time is measured inside the page, from handing the bytes to
 * the worker to the finished result, so serving the file does not count.
 */
import { createServer, type Server } from 'node:http';
import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { existsSync } from 'node:fs';
import path from 'node:path';
import type { AddressInfo } from 'node:net';

const CHROMIUM = '/usr/bin/chromium';
const ARGS = ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'];

const WORKER_SRC = (repo: string) => `
import wasmUrl from 'laz-perf/lib/web/laz-perf.wasm?url';
import { tally } from '${repo}/lib/pipeline.ts';
import { bufferSource } from '${repo}/lib/io/sources.ts';
import { lazPerfProvider } from '${repo}/lib/io/laz.ts';
const lazPerf = lazPerfProvider({ wasmUrl: new URL(wasmUrl, self.location.href) });
self.onmessage = async (ev) => {
  try {
    const t0 = performance.now();
    const r = await tally([bufferSource(ev.data, 'survey')], { lazPerf });
    self.postMessage({ ms: performance.now() - t0, trees: r.trees.count, points: r.readout.points });
  } catch (e) { self.postMessage({ error: String(e && e.message || e) }); }
};
`;

const PAGE_SRC = `
window.runJob = async (url, repeats) => {
  const bytes = await (await fetch(url)).arrayBuffer();
  const out = [];
  for (let i = 0; i < repeats; i++) {
    const w = new Worker(new URL('./worker.js', import.meta.url), { type: 'module' });
    const copy = bytes.slice(0);
    const t0 = performance.now();
    const r = await new Promise((res) => { w.onmessage = (e) => res(e.data); w.onerror = (e) => res({ error: e.message || 'worker failed to load' }); w.postMessage(copy, [copy]); });
    r.wallMs = performance.now() - t0;
    w.terminate();
    if (r.error) throw new Error(r.error);
    out.push(r);
  }
  return out;
};
`;

export interface BrowserRun { seconds: number[]; inWorkerSeconds: number[]; trees: number; points: number }

/** Bundles the bench page (once per run) and returns its folder. */
async function buildPage(repo: string): Promise<string> {
  const src = path.join(repo, 'bench/.cache/browser-src');
  const out = path.join(repo, 'bench/.cache/browser');
  await mkdir(src, { recursive: true });
  await writeFile(path.join(src, 'worker.js'), WORKER_SRC(repo));
  await writeFile(path.join(src, 'page.js'), PAGE_SRC);
  await writeFile(path.join(src, 'index.html'), '<!doctype html><meta charset="utf-8"><title>bench</title><script type="module" src="./page.js"></script>');
  const { build } = await import('vite');
  await build({
    root: src, logLevel: 'silent', configFile: false, base: './',
    build: { outDir: out, emptyOutDir: true, target: 'es2022', minify: true },
    worker: { format: 'es' },
    server: { fs: { allow: [repo] } },
  });
  return out;
}

const TYPES: Record<string, string> = { '.html': 'text/html', '.js': 'text/javascript', '.wasm': 'application/wasm', '.las': 'application/octet-stream', '.laz': 'application/octet-stream' };

function serve(root: string, files: Record<string, string>): Promise<Server> {
  const server = createServer(async (req, res) => {
    const u = new URL(req.url ?? '/', 'http://127.0.0.1');
    const rel = u.pathname === '/' ? 'index.html' : decodeURIComponent(u.pathname.slice(1));
    const p = files[rel] ?? path.join(root, path.normalize(rel).replace(/^(\.\.[/\\])+/, ''));
    if (!p.startsWith(root) && !files[rel]) { res.writeHead(403).end(); return; }
    try {
      const body = await readFile(p);
      res.writeHead(200, { 'content-type': TYPES[path.extname(p)] ?? 'application/octet-stream' }).end(body);
    } catch { res.writeHead(404).end(); }
  });
  return new Promise((resolve) => server.listen(0, '127.0.0.1', () => resolve(server)));
}

/** Runs the job `repeats` times in a fresh worker each time; throws when Chromium or the bundle is unavailable. */
export async function browserRun(repo: string, surveyPath: string, repeats: number): Promise<BrowserRun> {
  if (!existsSync(CHROMIUM)) throw new Error(`${CHROMIUM} is not installed`);
  const root = await buildPage(repo);
  const server = await serve(root, { 'survey.bin': surveyPath });
  const { chromium } = await import('playwright-core');
  const browser = await chromium.launch({ executablePath: CHROMIUM, args: ARGS, headless: true });
  try {
    const page = await browser.newPage();
    const port = (server.address() as AddressInfo).port;
    await page.goto(`http://127.0.0.1:${port}/`);
    await page.waitForFunction(() => typeof (window as unknown as { runJob?: unknown }).runJob === 'function');
    const r = await page.evaluate(async ([n]) => (window as unknown as { runJob: (u: string, n: number) => Promise<{ ms: number; wallMs: number; trees: number; points: number }[]> }).runJob('/survey.bin', n!), [repeats]);
    return { seconds: r.map((x) => x.wallMs / 1000), inWorkerSeconds: r.map((x) => x.ms / 1000), trees: r[0]!.trees, points: r[0]!.points };
  } finally {
    await browser.close();
    await new Promise((res) => server.close(res));
  }
}
