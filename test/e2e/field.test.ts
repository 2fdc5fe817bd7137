import { cp, mkdir, mkdtemp, readFile, rm } from 'node:fs/promises';
import { execFileSync } from 'node:child_process';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { check as checkGeoJSON } from '@placemarkio/check-geojson';
import Papa from 'papaparse';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateSurvey } from '../../demo/index.js';
import { bufferSource } from '../../lib/io/sources.js';
import { tally, treePoints } from '../../lib/pipeline.js';
import { serveDist, type TestServer } from './server.js';

/**
 * The field app in Debian's Chromium, second part: the side view of a
 * tree's points, merging two crowns, a 20,000-tree list, pages closed in the
 * middle of processing and of saving, a project saved as one file and
 * opened again, and the prompt when a new version of the app is waiting.
 * Pages open with ?test-hooks=1, which adds a small test API to the page.
 */

const here = path.dirname(fileURLToPath(import.meta.url));
const repo = path.resolve(here, '../..');
const dist = path.resolve(repo, 'app/dist');
const shots = path.resolve(here, 'screenshots');
const LAUNCH = ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'];

let server: TestServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let url = '';
const pageErrors: string[] = [];

interface TreesView { tree_id: number[]; x: number[]; y: number[]; area: number[] }

async function shot(p: Page, name: string): Promise<void> {
  await p.screenshot({ path: path.join(shots, `${name}.png`), fullPage: false });
}

/** Both widths the app is made for: a laptop and a tablet held upright. */
async function shotBoth(p: Page, name: string, scroll?: string): Promise<void> {
  for (const [w, hgt] of [[1280, 900], [768, 1024]] as const) {
    await p.setViewportSize({ width: w, height: hgt });
    await p.waitForTimeout(250);
    if (scroll) {
      await p.locator(scroll).first().evaluate((el) => el.scrollIntoView({ block: 'start' }));
      await p.evaluate(() => window.scrollBy(0, -80)); // clear of the sticky header
    }
    await shot(p, `${name}-${w}`);
  }
  await p.setViewportSize({ width: 1280, height: 900 });
}

async function open(p: Page, hash = '#/'): Promise<void> {
  await p.goto(`${url}?test-hooks=1${hash}`);
  await p.waitForFunction(() => !!(window as unknown as { __crowntally?: unknown }).__crowntally);
}

const treesInPage = (p: Page) => p.evaluate(() => (window as unknown as { __crowntally: { results: { trees(): TreesView } } }).__crowntally.results.trees());
const selectedRow = (p: Page) => p.evaluate(() => (window as unknown as { __crowntally: { results: { selected(): number } } }).__crowntally.results.selected());
const kept = async (p: Page) => Number(await p.locator('#kept-count').getAttribute('data-kept'));

interface Listed { id: string; name: string; state: string; info: string }
async function listed(p: Page): Promise<Listed[]> {
  await p.locator('.projects').waitFor();
  return p.locator('.project').evaluateAll((lis) => lis.map((li) => ({
    id: li.getAttribute('data-id') ?? '', name: li.querySelector('.pname')?.textContent ?? '', state: li.getAttribute('data-state') ?? '',
    info: li.querySelectorAll('.hint')[1]?.textContent ?? '',
  })));
}

beforeAll(async () => {
  await mkdir(shots, { recursive: true });
  server = await serveDist(dist);
  url = server.url;
  browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: LAUNCH });
  context = await browser.newContext({ viewport: { width: 1280, height: 900 }, acceptDownloads: true, serviceWorkers: 'allow' });
  page = await context.newPage();
  page.on('pageerror', (e) => pageErrors.push(String(e)));
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await server?.close().catch(() => undefined);
});

describe('field app in Chromium: side view, merge, large lists, safe storage', () => {
  it('draws the points of the selected tree, by return number and by class, with a key', async () => {
    await open(page);
    await page.locator('[data-demo="park"]').click();
    await page.locator('.readout').first().waitFor({ timeout: 60_000 });
    await shotBoth(page, '16-setup');
    await page.locator('#start').click();
    await page.locator('.trows .trow').first().waitFor({ timeout: 150_000 });
    await page.locator('.trows .trow').first().click();
    const circles = page.locator('.side-view .side-points circle');
    await expect.poll(() => circles.count(), { timeout: 60_000 }).toBeGreaterThan(20);
    const drawn = await circles.count();
    // The same crown's points from the library run in Node on the same invented survey: the page draws every point the worker sent.
    const row = await selectedRow(page);
    const las = generateSurvey('park').las;
    const r = await tally([bufferSource(las, 'demo-park.las')]);
    const pts = await treePoints([bufferSource(las, 'demo-park.las')], { labels: r.labels, dtm: r.dtm, label: row + 1, topX: r.trees.columns.x[row]!, topY: r.trees.columns.y[row]!, maxPoints: 4000 });
    expect(drawn).toBe(pts.count);
    expect(await page.locator('.side-view figcaption').textContent()).toContain(`${pts.count.toLocaleString('en-US')} shown`);
    // Every dot has a colour from the key, and the key counts add up to the points drawn.
    const legendTotal = async () => (await page.locator('.side-key').allTextContents()).reduce((a, t) => a + Number(t.split(': ').pop()!.replace(/,/g, '')), 0);
    expect(await page.locator('[data-colouring="return"][aria-pressed="true"]').count()).toBe(1);
    expect(await legendTotal()).toBe(drawn);
    expect(await page.locator('.side-key').first().textContent()).toContain('1st return');
    await page.locator('button[data-colouring="class"]').click();
    expect(await page.locator('button[data-colouring="class"]').getAttribute('aria-pressed')).toBe('true');
    expect(await legendTotal()).toBe(drawn);
    expect((await page.locator('.side-key').allTextContents()).join(' ')).toMatch(/vegetation|ground|other classes/);
    const fills = new Set(await circles.evaluateAll((cs) => cs.map((c) => c.getAttribute('fill'))));
    expect(fills.has(null)).toBe(false);
    await shotBoth(page, '10-side-view', '.side-view');
  });

  it('merges two neighbouring crowns: one tree fewer, area about the sum, marked edited in list and downloads', async () => {
    const before = await kept(page);
    const t = await treesInPage(page);
    const a = await selectedRow(page);
    // The nearest other top is the neighbour to merge with.
    let b = -1, best = Infinity;
    for (let i = 0; i < t.x.length; i++) {
      if (i === a) continue;
      const d = Math.hypot(t.x[i]! - t.x[a]!, t.y[i]! - t.y[a]!);
      if (d < best) { best = d; b = i; }
    }
    const idA = t.tree_id[a]!, idB = t.tree_id[b]!;
    const sum = t.area[a]! + t.area[b]!;
    await page.locator('[data-action="merge"]').click();
    await page.locator('.map-canvas').scrollIntoViewIfNeeded();
    const at = await page.evaluate((row) => (window as unknown as { __crowntally: { results: { screenOf(r: number): [number, number] | null } } }).__crowntally.results.screenOf(row), b);
    expect(at).not.toBeNull();
    const box = (await page.locator('.map-canvas').boundingBox())!;
    await page.mouse.click(box.x + at![0], box.y + at![1]);
    await page.locator('.saved', { hasText: 'Measured again' }).waitFor({ timeout: 90_000 });
    expect(await kept(page)).toBe(before - 1);
    const after = await treesInPage(page);
    const rowA = after.tree_id.indexOf(idA);
    expect(await selectedRow(page)).toBe(rowA);
    // Area is additive over the two disjoint crowns (common practice); the worker measures the merged crown again from its cells.
    expect(Math.abs(after.area[rowA]! - sum)).toBeLessThanOrEqual(0.01 * sum);
    expect(await page.locator('.tree-state').textContent()).toContain('edited');
    await page.locator('#edited-only').check();
    await expect.poll(() => page.locator('.trows .trow').count()).toBe(2);
    expect(await page.locator('.trows .trow.edited').count()).toBe(1);
    expect(await page.locator('.trows .trow.deleted').count()).toBe(1);
    expect((await page.locator('.trows .trow.edited .tcell').nth(1).textContent())!.trim()).toBe(String(idA));
    await shotBoth(page, '11-merged', '.map-card');
    await page.locator('#edited-only').uncheck();

    const [csv] = await Promise.all([page.waitForEvent('download'), page.locator('[data-export="csv"]').click()]);
    // RFC 4180 text read back by papaparse.
    const rows = Papa.parse<Record<string, string>>(await readFile((await csv.path())!, 'utf8'), { header: true, skipEmptyLines: true });
    expect(rows.errors).toEqual([]);
    expect(rows.data.length).toBe(before - 1);
    const merged = rows.data.find((r) => Number(r['tree_id']) === idA)!;
    expect(merged['edited']).toBe('true');
    expect(Math.abs(Number(merged['crown_area_m2']) - sum)).toBeLessThanOrEqual(0.01 * sum + 0.01);
    expect(rows.data.some((r) => Number(r['tree_id']) === idB)).toBe(false);
    const [gj] = await Promise.all([page.waitForEvent('download'), page.locator('[data-export="geojson"]').click()]);
    // RFC 7946 validity as judged by @placemarkio/check-geojson.
    const fc = checkGeoJSON(await readFile((await gj.path())!, 'utf8')) as { features: { properties: Record<string, unknown> }[] };
    expect(fc.features.length).toBe(before - 1);
    const f = fc.features.find((x) => x.properties['tree_id'] === idA)!;
    expect(f.properties['edited']).toBe(true);
    expect(fc.features.some((x) => x.properties['tree_id'] === idB)).toBe(false);
  });

  it('lists 20,000 trees with only a window of rows in the page, reaches the last one, and sorts right', async () => {
    const N = 20_000;
    await open(page);
    const id = await page.evaluate((n) => (window as unknown as { __crowntally: { seedLarge(n: number, name: string): Promise<string> } }).__crowntally.seedLarge(n, 'Invented grid of 20,000 trees'), N);
    await open(page, `#/results/${id}`);
    await page.locator('.trows .trow').first().waitFor({ timeout: 60_000 });
    expect(await page.locator('.count').first().textContent()).toContain(`${N} of ${N} trees`);
    expect(await page.locator('.trows .trow').count()).toBeLessThan(80);
    const cellsOf = (col: number) => page.locator('.trows .trow').evaluateAll((rows, c) => rows
      .map((r) => ({ top: parseFloat((r as HTMLElement).style.top), v: Number((r.children[c]!.textContent ?? '').replace(/,/g, '')) }))
      .sort((p, q) => p.top - q.top).map((x) => x.v), col);
    // The invented heights are 5 + ((i * 7919) mod 1000) / 200 m: the tallest is 9.995 m, the lowest 5.
    let hs = await cellsOf(4);
    expect(hs[0]).toBeCloseTo(10.0, 1);
    for (let i = 1; i < hs.length; i++) expect(hs[i]!).toBeLessThanOrEqual(hs[i - 1]!);
    await page.locator('.th[data-col="tree_id"]').click();
    const body = page.locator('.tbody');
    await body.evaluate((el) => { el.scrollTop = el.scrollHeight; });
    await expect.poll(async () => (await cellsOf(1)).at(-1)).toBe(N);
    const ids = await cellsOf(1);
    for (let i = 1; i < ids.length; i++) expect(ids[i]).toBe(ids[i - 1]! + 1);
    expect(await page.locator('.trows .trow').count()).toBeLessThan(80);
    await shotBoth(page, '12-large-list-end', '.tree-list');
    await page.locator('.th[data-col="height_m"]').click(); // a new height sort starts tallest first
    await body.evaluate((el) => { el.scrollTop = el.scrollHeight; });
    await expect.poll(async () => (await cellsOf(4)).at(-1)).toBe(5);
    hs = await cellsOf(4);
    for (let i = 1; i < hs.length; i++) expect(hs[i]!).toBeLessThanOrEqual(hs[i - 1]!);
    // Pressed again: lowest first, and the end of the list is now the tallest.
    await page.locator('.th[data-col="height_m"]').click();
    await body.evaluate((el) => { el.scrollTop = 0; });
    await expect.poll(async () => (await cellsOf(4))[0]).toBe(5);
    await body.evaluate((el) => { el.scrollTop = el.scrollHeight; });
    await expect.poll(async () => (await cellsOf(4)).at(-1)).toBeCloseTo(10.0, 1);
    hs = await cellsOf(4);
    for (let i = 1; i < hs.length; i++) expect(hs[i]!).toBeGreaterThanOrEqual(hs[i - 1]!);
  });

  it('a page closed while processing or while saving leaves every earlier survey whole and openable', async () => {
    await open(page);
    const earlier = (await listed(page)).filter((p) => p.state === 'processed');
    expect(earlier.length).toBe(2);

    // Closed in the middle of processing.
    const p1 = await context.newPage();
    await open(p1);
    await p1.locator('[data-demo="orchard"]').click();
    await p1.locator('.readout').first().waitFor({ timeout: 60_000 });
    await p1.locator('#start').click();
    await p1.locator('.progress-box:not([hidden]) .stage').waitFor();
    await p1.close();

    // Closed in the middle of saving: the save's transaction is held open just before the project record is written.
    const p2 = await context.newPage();
    await open(p2);
    await p2.evaluate(() => (window as unknown as { __crowntally: { holdSaves(on: boolean): void } }).__crowntally.holdSaves(true));
    await p2.locator('[data-demo="park"]').click();
    await p2.locator('.readout').first().waitFor({ timeout: 60_000 });
    await p2.locator('#start').click();
    await p2.waitForFunction(() => (window as unknown as { __crowntally: { saveHeld(): boolean } }).__crowntally.saveHeld(), undefined, { timeout: 120_000 });
    await p2.close();

    const p3 = await context.newPage();
    await open(p3);
    const now = await listed(p3);
    for (const e of earlier) {
      const same = now.find((x) => x.id === e.id);
      expect(same, e.name).toBeDefined();
      expect(same!.state).toBe('processed');
      expect(same!.info.split(',')[0]).toBe(e.info.split(',')[0]);
    }
    // The two interrupted surveys: present but never shown as processed, and deletable.
    const interrupted = now.filter((x) => !earlier.some((e) => e.id === x.id));
    expect(interrupted.length).toBe(2);
    for (const x of interrupted) expect(['new', 'incomplete']).toContain(x.state);
    await shotBoth(p3, '13-after-interruption');
    for (const x of interrupted) {
      const del = p3.locator(`.project[data-id="${x.id}"] [data-action="delete-project"]`);
      await del.click(); await del.click();
      await expect.poll(() => p3.locator(`.project[data-id="${x.id}"]`).count()).toBe(0);
    }
    // Every earlier survey opens with its trees.
    for (const e of earlier) {
      await open(p3, `#/results/${e.id}`);
      await p3.locator('.trows .trow').first().waitFor({ timeout: 60_000 });
      // Only the hash changes between surveys, so the previous survey's list may still be up: wait for this one's.
      await expect.poll(async () => await p3.locator('.count').first().textContent(), { timeout: 60_000 }).toContain(`of ${e.info.split(' ')[0]} trees`);
    }
    await p3.close();
  });

  it('saves a survey as one file and opens it again as a copy with its corrections', async () => {
    await open(page);
    const park = (await listed(page)).find((p) => p.name.startsWith('Demo park'))!;
    const [dl] = await Promise.all([page.waitForEvent('download'), page.locator(`.project[data-id="${park.id}"] [data-action="export-project"]`).click()]);
    expect(dl.suggestedFilename()).toMatch(/\.ctproject$/);
    const file = (await dl.path())!;
    expect((await readFile(file)).subarray(0, 8).toString('latin1')).toBe('CTPROJ01');
    await page.locator('#import-input').setInputFiles(file);
    await page.locator('.saved', { hasText: 'from the file' }).waitFor();
    const copy = (await listed(page)).find((p) => p.name === `${park.name} (copy)`)!;
    expect(copy.info.split(',')[0]).toBe(park.info.split(',')[0]);
    await shotBoth(page, '14-home-with-copy');
    await open(page, `#/results/${copy.id}`);
    await page.locator('.trows .trow').first().waitFor({ timeout: 60_000 });
    await page.locator('#edited-only').check();
    await expect.poll(() => page.locator('.trows .trow').count()).toBe(2); // the merged pair travels with the file
    expect(pageErrors).toEqual([]);
  });
});

describe('field app update prompt', () => {
  let tmp = '';
  let live = '';
  let srv: TestServer;
  beforeAll(async () => {
    tmp = await mkdtemp(path.join(os.tmpdir(), 'crowntally-update-'));
    for (const v of ['A', 'B']) {
      execFileSync(process.execPath, [path.join(repo, 'node_modules/vite/bin/vite.js'), 'build', '--config', 'app/vite.config.ts', '--logLevel', 'warn', '--outDir', path.join(tmp, v)],
        { cwd: repo, stdio: 'inherit', env: { ...process.env, CROWNTALLY_APP_VERSION: `update-test-${v}` } });
    }
    live = path.join(tmp, 'live');
    await cp(path.join(tmp, 'A'), live, { recursive: true });
    srv = await serveDist(live);
  }, 120_000);
  afterAll(async () => {
    await srv?.close().catch(() => undefined);
    if (tmp) await rm(tmp, { recursive: true, force: true });
  });

  it('shows "A new version is ready" when a new service worker waits, and updates on the button', async () => {
    const ctx = await browser.newContext({ viewport: { width: 1280, height: 900 }, serviceWorkers: 'allow' });
    const p = await ctx.newPage();
    await p.goto(srv.url);
    await p.evaluate(async () => { await navigator.serviceWorker.ready; });
    expect(await p.locator('#version').textContent()).toBe('version update-test-A');
    // The server now serves the second build.
    await rm(live, { recursive: true, force: true });
    await cp(path.join(tmp, 'B'), live, { recursive: true });
    await p.reload();
    await p.locator('#update', { hasText: 'A new version is ready' }).waitFor({ timeout: 60_000 });
    expect(await p.locator('#version').textContent()).toBe('version update-test-A'); // nothing changes until the user says so
    await shotBoth(p, '15-update-ready');
    await Promise.all([p.waitForEvent('load', { timeout: 60_000 }), p.locator('[data-action="update-now"]').click()]);
    await expect.poll(() => p.locator('#version').textContent(), { timeout: 30_000 }).toBe('version update-test-B');
    await ctx.close();
  });
});
