import { readFile, mkdir } from 'node:fs/promises';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { check as checkGeoJSON } from '@placemarkio/check-geojson';
import Papa from 'papaparse';
import { chromium, type Browser, type BrowserContext, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateSurvey } from '../../demo/index.js';
import { bufferSource } from '../../lib/io/sources.js';
import { tally } from '../../lib/pipeline.js';
import { serveDist, type TestServer } from './server.js';

/**
 * The field app in Debian's Chromium: the demo job end to end, corrections
 * that survive a reload, the whole job again with the server gone and the
 * browser offline, downloads checked by outside readers, and no request
 * leaving the app's origin.
 */

const here = path.dirname(fileURLToPath(import.meta.url));
const dist = path.resolve(here, '../../app/dist');
const shots = path.resolve(here, 'screenshots');
const XSS = '<img src=x onerror="window.__xss=1">';

// Service-worker traffic is reported to the context only with this switch (playwright-core).
process.env['PW_EXPERIMENTAL_SERVICE_WORKER_NETWORK_EVENTS'] = '1';

let server: TestServer;
let browser: Browser;
let context: BrowserContext;
let page: Page;
let origin = '';
const seen: string[] = [];
const foreign: string[] = [];
const consoleErrors: string[] = [];
let expectedPark = 0;
let expectedOrchard = 0;

async function shot(name: string): Promise<void> {
  await page.screenshot({ path: path.join(shots, `${name}.png`), fullPage: false });
}

async function treeCountShown(): Promise<number> {
  const t = await page.locator('.count').first().textContent();
  const m = /(\d+) of (\d+) trees/.exec(t ?? '');
  expect(m, `count text "${t}"`).not.toBeNull();
  return Number(m![2]);
}

async function processDemo(kind: 'park' | 'orchard'): Promise<void> {
  await page.locator(`[data-demo="${kind}"]`).click();
  await page.locator('.readout').first().waitFor({ timeout: 60_000 });
  await page.locator('#start').click();
  await page.locator('.trows .trow').first().waitFor({ timeout: 150_000 });
}

beforeAll(async () => {
  await mkdir(shots, { recursive: true });
  // The expected tree counts: the library itself run in Node on the same invented surveys.
  for (const kind of ['park', 'orchard'] as const) {
    const r = await tally([bufferSource(generateSurvey(kind).las, `demo-${kind}.las`)]);
    if (kind === 'park') expectedPark = r.trees.count; else expectedOrchard = r.trees.count;
  }
  server = await serveDist(dist);
  origin = new URL(server.url).origin;
  browser = await chromium.launch({
    executablePath: '/usr/bin/chromium',
    args: ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'],
  });
  context = await browser.newContext({ viewport: { width: 1280, height: 900 }, acceptDownloads: true, serviceWorkers: 'allow' });
  // Every request of the page, its workers and the service worker passes here; anything off the origin is refused and recorded.
  await context.route('**/*', (route) => {
    const u = route.request().url();
    seen.push(u);
    if (new URL(u).origin !== origin && !u.startsWith('blob:') && !u.startsWith('data:')) { foreign.push(u); return route.abort(); }
    return route.continue();
  });
  context.on('request', (r) => { const u = r.url(); seen.push(u); if (!u.startsWith(origin) && !u.startsWith('blob:') && !u.startsWith('data:')) foreign.push(u); });
  page = await context.newPage();
  page.on('console', (m) => { if (m.type() === 'error') consoleErrors.push(m.text()); });
  page.on('pageerror', (e) => consoleErrors.push(String(e)));
}, 240_000);

afterAll(async () => {
  await browser?.close();
  await server?.close().catch(() => undefined);
});

describe('field app in Chromium', () => {
  it('serves the page with the CSP as a header and as a meta tag', async () => {
    const res = await page.goto(server.url);
    const header = res!.headers()['content-security-policy'] ?? '';
    for (const d of ["script-src 'self' 'wasm-unsafe-eval'", "style-src 'self'", "connect-src 'self'", "object-src 'none'"]) expect(header).toContain(d);
    expect(header).not.toContain('unsafe-inline');
    expect(header).not.toMatch(/'unsafe-eval'/);
    const meta = await page.locator('meta[http-equiv="Content-Security-Policy"]').getAttribute('content');
    expect(meta).toContain("script-src 'self' 'wasm-unsafe-eval'");
    // The service worker installs and precaches on first load.
    const ready = await page.evaluate(async () => { const r = await navigator.serviceWorker.ready; return !!r.active; });
    expect(ready).toBe(true);
    // The browser-side recording must see what the server saw, the service worker's precache
    // fetches included; otherwise "no request left the origin" below would prove nothing.
    await page.waitForTimeout(500);
    const seenPaths = new Set(seen.filter((u) => u.startsWith(origin)).map((u) => new URL(u).pathname));
    expect(server.requests.length).toBeGreaterThan(3);
    expect(server.requests.filter((p) => !seenPaths.has(p))).toEqual([]);
    await page.locator('[data-demo="park"]').waitFor();
    await shot('01-home');
  });

  it('processes the demo park and lists the trees the library finds', async () => {
    await processDemo('park');
    expect(expectedPark).toBeGreaterThan(5);
    expect(await treeCountShown()).toBe(expectedPark);
    await shot('02-results');
  });

  it('sorts by height both ways and selects a tree shared with the detail', async () => {
    const heights = async () => (await page.locator('.trows .trow').evaluateAll((rows) =>
      rows.map((r) => ({ top: parseFloat((r as HTMLElement).style.top), h: Number((r.children[4]!.textContent ?? '').replace(/,/g, '')) }))
        .sort((a, b) => a.top - b.top).map((x) => x.h)));
    const hdr = page.locator('.th[data-col="height_m"]');
    let hs = await heights(); // default: tallest first
    expect(hs.length).toBeGreaterThan(3);
    for (let i = 1; i < hs.length; i++) expect(hs[i]!).toBeLessThanOrEqual(hs[i - 1]!);
    await hdr.click();
    hs = await heights();
    for (let i = 1; i < hs.length; i++) expect(hs[i]!).toBeGreaterThanOrEqual(hs[i - 1]!);
    await hdr.click();
    const first = page.locator('.trows .trow').first();
    const id = (await first.locator('.tcell').nth(1).textContent())!.trim();
    await first.click();
    await expect.poll(() => page.locator('.detail h2').textContent()).toBe(`Tree ${id}`);
    expect(await page.locator('.trows .trow.selected').count()).toBe(1);
    await shot('03-detail');
  });

  it('saves a correction with a note that stays text, and finds it after a reload', async () => {
    await page.locator('#f-species').fill('Tilia cordata');
    await page.locator('#f-note').fill(XSS);
    await page.locator('#f-condition').selectOption('fair');
    await page.locator('.saved').first().waitFor();
    const treeTitle = await page.locator('.detail h2').textContent();
    await page.reload();
    await page.locator('.trows .trow').first().waitFor({ timeout: 60_000 });
    await page.locator('#edited-only').check();
    await expect.poll(() => page.locator('.trows .trow').count()).toBe(1);
    await page.locator('.trows .trow.edited').first().click();
    expect(await page.locator('.detail h2').textContent()).toBe(treeTitle);
    expect(await page.locator('#f-species').inputValue()).toBe('Tilia cordata');
    expect(await page.locator('.note-text').textContent()).toBe(XSS);
    expect(await page.locator('.detail img').count()).toBe(0);
    expect(await page.evaluate(() => (window as unknown as { __xss?: unknown }).__xss)).toBeUndefined();
    await page.locator('#edited-only').uncheck();
    await shot('04-edited');
  });

  it('runs with the server stopped and the browser offline, processing a second scenario', async () => {
    await server.close();
    await context.setOffline(true);
    await page.goto(`${origin}/#/`);
    await page.locator('[data-demo="orchard"]').waitFor({ timeout: 30_000 });
    expect(await page.locator('.project').count()).toBe(1);
    expect(await page.locator('.net').textContent()).toContain('Offline');
    await processDemo('orchard');
    expect(await treeCountShown()).toBe(expectedOrchard);
    await shot('05-offline-orchard');
  });

  it('exports GeoJSON and CSV that outside readers accept', async () => {
    const [gj] = await Promise.all([page.waitForEvent('download'), page.locator('[data-export="geojson"]').click()]);
    const text = await readFile((await gj.path())!, 'utf8');
    // RFC 7946 validity as judged by @placemarkio/check-geojson (throws on an invalid document).
    const fc = checkGeoJSON(text) as { type: string; features: unknown[] };
    expect(fc.type).toBe('FeatureCollection');
    expect(fc.features.length).toBe(expectedOrchard);
    const [csv] = await Promise.all([page.waitForEvent('download'), page.locator('[data-export="csv"]').click()]);
    const parsed = Papa.parse<Record<string, string>>(await readFile((await csv.path())!, 'utf8'), { header: true, skipEmptyLines: true });
    // RFC 4180 text read back by papaparse: no parse errors, one row per tree.
    expect(parsed.errors).toEqual([]);
    expect(parsed.data.length).toBe(expectedOrchard);
    expect(parsed.meta.fields).toContain('height_m');
  });

  it('opens a LAZ survey from a file, deletes a false tree and adds a missed one (measured again by the worker)', async () => {
    // Fixture: shared/fixtures/laz-pairs/autzen_trim.laz (see NOTICE.md there); expected count from the library in Node.
    const fixture = path.resolve(here, '../../../shared/fixtures/laz-pairs/autzen_trim.laz');
    const { lazPerfProvider } = await import('../../lib/io/laz.js');
    const buf = await readFile(fixture);
    const expected = (await tally([bufferSource(new Uint8Array(buf), 'autzen_trim.laz')], { lazPerf: lazPerfProvider() })).trees.count;
    await page.setViewportSize({ width: 1280, height: 900 });
    await page.goto(`${origin}/#/`);
    await page.locator('#file-input').setInputFiles(fixture);
    await page.locator('.readout').first().waitFor({ timeout: 60_000 });
    expect(await page.locator('.readout .fname').first().textContent()).toBe('autzen_trim.laz');
    await shot('08-setup-file');
    await page.locator('#start').click();
    await page.locator('.trows .trow').first().waitFor({ timeout: 150_000 });
    expect(await treeCountShown()).toBe(expected);
    await page.locator('.trows .trow').first().click();
    await page.locator('[data-action="delete"]').click();
    await page.locator('[data-action="restore"]').waitFor();
    expect(await page.locator('.trows .trow.deleted').count()).toBe(1);
    await page.locator('[data-action="add-mode"]').click();
    const box = (await page.locator('.map-canvas').boundingBox())!;
    await page.mouse.click(box.x + box.width * 0.37, box.y + box.height * 0.61);
    await expect.poll(() => treeCountShown(), { timeout: 90_000 }).toBe(expected + 1);
    await expect.poll(() => page.locator('.tree-state').textContent()).toContain('added');
    await shot('09-added');
    const [gj] = await Promise.all([page.waitForEvent('download'), page.locator('[data-export="geojson"]').click()]);
    const fc = checkGeoJSON(await readFile((await gj.path())!, 'utf8')) as { features: { properties: Record<string, unknown> }[] };
    // One deleted, one added: the download has the detected count.
    expect(fc.features.length).toBe(expected);
    expect(fc.features.filter((f) => f.properties['added'] === true).length).toBe(1);
  });

  it('shows well at tablet width and sent no request off its origin', async () => {
    await page.setViewportSize({ width: 768, height: 1024 });
    await page.waitForTimeout(300);
    await shot('06-tablet');
    await page.locator('.trows .trow').first().click();
    await page.locator('.detail').scrollIntoViewIfNeeded();
    await shot('07-tablet-detail');
    expect(seen.length).toBeGreaterThan(5);
    expect(foreign).toEqual([]);
    expect(consoleErrors.filter((e) => /Content Security Policy|Refused/.test(e))).toEqual([]);
  });
});
