import { mkdir, mkdtemp, rm, writeFile } from 'node:fs/promises';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import proj4 from 'proj4';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateSurvey } from '../../demo/index.js';
import { serveDist, type TestServer } from './server.js';

/**
 * The field app in Debian's Chromium: limiting the demo park to an area.
 * A rectangle dragged on the map keeps only trees inside it; a GeoJSON
 * boundary file (RFC 7946 lon/lat) replaces it; a reload keeps the area;
 * processing again from the settings screen keeps it; "Use whole survey"
 * removes it. Pages open with ?test-hooks=1.
 */

const here = path.dirname(fileURLToPath(import.meta.url));
const dist = path.resolve(here, '../../app/dist');
const shots = path.resolve(here, 'screenshots');
const LAUNCH = ['--no-sandbox', '--disable-gpu', '--disable-background-networking', '--disable-component-update', '--disable-sync', '--no-first-run', '--disable-quic'];
// UTM zone 33 north on WGS 84 (EPSG:32633, the demo's CRS) as the standard proj4 definition (common practice).
const UTM33 = '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs';

let server: TestServer;
let browser: Browser;
let page: Page;
let tmp = '';
const pageErrors: string[] = [];

interface TreesView { tree_id: number[]; x: number[]; y: number[]; area: number[] }
type Area = { kind: 'rect'; minX: number; minY: number; maxX: number; maxY: number } | { kind: 'polygon'; rings: number[][][]; lonLat?: boolean } | null;
type Hooks = { __crowntally: { results: { trees(): TreesView; area(): Area; screenOf(r: number): [number, number] | null } } };

const trees = (p: Page) => p.evaluate(() => (window as unknown as Hooks).__crowntally.results.trees());
const area = (p: Page) => p.evaluate(() => (window as unknown as Hooks).__crowntally.results.area());
const kept = async (p: Page) => Number(await p.locator('#kept-count').getAttribute('data-kept'));

async function open(p: Page, hash = '#/'): Promise<void> {
  await p.goto(`${server.url}?test-hooks=1${hash}`);
  await p.waitForFunction(() => !!(window as unknown as { __crowntally?: unknown }).__crowntally);
}

/** Waits for a reprocess started from the results screen to finish and the results to be shown again. */
async function settled(p: Page, kind: 'rect' | 'polygon' | null): Promise<void> {
  await p.locator('.area-bar progress').waitFor({ timeout: 5_000 }).catch(() => undefined);
  await p.locator('.area-bar progress').waitFor({ state: 'detached', timeout: 150_000 });
  await p.locator('[data-action="area-draw"]').waitFor({ timeout: 30_000 });
  await expect.poll(async () => (await area(p))?.kind ?? null, { timeout: 30_000 }).toBe(kind);
}

/** Even-odd ray crossing (common practice), in the test so the page's own test is not reused. */
function inside(ring: number[][], x: number, y: number): boolean {
  let c = false;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) {
    const [xi, yi] = ring[i]!, [xj, yj] = ring[j]!;
    if ((yi! > y) !== (yj! > y) && x < ((xj! - xi!) * (y - yi!)) / (yj! - yi!) + xi!) c = !c;
  }
  return c;
}

beforeAll(async () => {
  await mkdir(shots, { recursive: true });
  tmp = await mkdtemp(path.join(os.tmpdir(), 'crowntally-area-'));
  server = await serveDist(dist);
  browser = await chromium.launch({ executablePath: '/usr/bin/chromium', args: LAUNCH });
  const context = await browser.newContext({ viewport: { width: 1280, height: 900 } });
  page = await context.newPage();
  page.on('pageerror', (e) => pageErrors.push(String(e)));
}, 120_000);

afterAll(async () => {
  await browser?.close();
  await server?.close().catch(() => undefined);
  if (tmp) await rm(tmp, { recursive: true, force: true });
});

describe('field app in Chromium: area of interest', () => {
  let whole: TreesView;

  it('a rectangle dragged on the map keeps fewer trees, all inside it', async () => {
    await open(page);
    await page.locator('[data-demo="park"]').click();
    await page.locator('.readout').first().waitFor({ timeout: 60_000 });
    await page.locator('#start').click();
    await page.locator('.trows .trow').first().waitFor({ timeout: 150_000 });
    whole = await trees(page);
    expect(whole.x.length).toBeGreaterThan(20);
    expect(await page.locator('#area-note').textContent()).toContain('whole survey');

    await page.locator('[data-action="area-draw"]').click();
    await page.locator('[data-action="area-cancel"]').waitFor();
    // Esc leaves drawing without changing anything.
    await page.keyboard.press('Escape');
    await page.locator('[data-action="area-draw"]').waitFor();
    // A correction in the middle of the map (a tree deleted) must follow its tree through the reprocessing.
    const screenAll = () => page.evaluate((n) => Array.from({ length: n }, (_v, i) => (window as unknown as Hooks).__crowntally.results.screenOf(i)), whole.x.length);
    await page.locator('.map-canvas').scrollIntoViewIfNeeded();
    let box = (await page.locator('.map-canvas').boundingBox())!;
    let screen = await screenAll();
    let del = -1, bestD = Infinity;
    screen.forEach((s, i) => { if (s) { const d = Math.hypot(s[0] - box.width * 0.5, s[1] - box.height * 0.475); if (d < bestD) { bestD = d; del = i; } } });
    expect(del).toBeGreaterThanOrEqual(0);
    await page.mouse.click(box.x + screen[del]![0], box.y + screen[del]![1]);
    await page.locator('[data-action="delete"]').click();
    await page.locator('.saved', { hasText: 'Saved' }).waitFor();
    expect(await kept(page)).toBe(whole.x.length - 1);

    await page.locator('[data-action="area-draw"]').click();
    await page.locator('.map-canvas').scrollIntoViewIfNeeded();
    box = (await page.locator('.map-canvas').boundingBox())!;
    // Screen positions of the tops just before the drag (the map does not move while drawing).
    screen = await screenAll();
    const x0 = box.x + box.width * 0.3, y0 = box.y + box.height * 0.25, x1 = box.x + box.width * 0.7, y1 = box.y + box.height * 0.7;
    await page.mouse.move(x0, y0);
    await page.mouse.down();
    await page.mouse.move((x0 + x1) / 2, (y0 + y1) / 2, { steps: 5 });
    await page.mouse.move(x1, y1, { steps: 5 });
    await page.screenshot({ path: path.join(shots, '20-area-drawing-1280.png') });
    await page.mouse.up();
    await settled(page, 'rect');

    const a = await area(page);
    expect(a?.kind).toBe('rect');
    const r = a as Extract<Area, { kind: 'rect' }>;
    const now = await trees(page);
    expect(now.x.length).toBeGreaterThan(3);
    expect(now.x.length).toBeLessThan(whole.x.length);
    for (let i = 0; i < now.x.length; i++) {
      expect(now.x[i]!).toBeGreaterThanOrEqual(r.minX); expect(now.x[i]!).toBeLessThan(r.maxX);
      expect(now.y[i]!).toBeGreaterThanOrEqual(r.minY); expect(now.y[i]!).toBeLessThan(r.maxY);
    }
    // Trees drawn well inside the dragged box are still there; trees well outside it are gone.
    const near = (x: number, y: number) => now.x.some((nx, j) => Math.hypot(nx - x, now.y[j]! - y) < 1.0);
    let checkedIn = 0, checkedOut = 0;
    screen.forEach((s, i) => {
      if (!s) return;
      const sx = box.x + s[0], sy = box.y + s[1];
      const m = 25; // px: crown cell nearest the top may sit a little off it
      if (sx > x0 + m && sx < x1 - m && sy > y0 + m && sy < y1 - m) { expect(near(whole.x[i]!, whole.y[i]!)).toBe(true); checkedIn++; }
      if (sx < x0 - m || sx > x1 + m || sy < y0 - m || sy > y1 + m) { expect(near(whole.x[i]!, whole.y[i]!)).toBe(false); checkedOut++; }
    });
    expect(checkedIn).toBeGreaterThan(2);
    expect(checkedOut).toBeGreaterThan(2);
    expect(await page.locator('#area-note').textContent()).toContain('drawn rectangle');
    expect(await kept(page)).toBe(now.x.length - 1); // the deleted tree is still deleted
    await page.locator('.map-card').evaluate((el) => el.scrollIntoView({ block: 'start' }));
    await page.evaluate(() => window.scrollBy(0, -80)); // clear of the sticky header
    await page.screenshot({ path: path.join(shots, '21-area-rectangle-1280.png') });
    await page.setViewportSize({ width: 768, height: 1024 });
    await page.waitForTimeout(250);
    await page.locator('.map-card').evaluate((el) => el.scrollIntoView({ block: 'start' }));
    await page.evaluate(() => window.scrollBy(0, -80));
    await page.screenshot({ path: path.join(shots, '21-area-rectangle-768.png') });
    await page.setViewportSize({ width: 1280, height: 900 });
  });

  it('a GeoJSON boundary replaces the rectangle; a bad file gets a clear message', async () => {
    const rectCount = (await trees(page)).x.length;
    // A triangle over the park's south-west half, in lon/lat (RFC 7946), from the demo's own origin.
    const { truth } = generateSurvey('park');
    const utm: number[][] = [[truth.originX + 10, truth.originY + 10], [truth.originX + 170, truth.originY + 10], [truth.originX + 10, truth.originY + 130], [truth.originX + 10, truth.originY + 10]];
    const t = proj4(UTM33, 'WGS84');
    const lonlat = utm.map(([x, y]) => t.forward([x!, y!]));
    const file = path.join(tmp, 'west-triangle.geojson');
    await writeFile(file, JSON.stringify({ type: 'FeatureCollection', features: [{ type: 'Feature', properties: { name: 'west' }, geometry: { type: 'Polygon', coordinates: [lonlat] } }] }));
    const bad = path.join(tmp, 'not-a-boundary.geojson');
    await writeFile(bad, JSON.stringify({ type: 'Point', coordinates: [15, 50] }));

    await page.locator('#boundary-input').setInputFiles(bad);
    await expect.poll(() => page.locator('.area-status .error').textContent()).toContain('no polygon');
    expect((await trees(page)).x.length).toBe(rectCount);

    await page.locator('#boundary-input').setInputFiles(file);
    await settled(page, 'polygon');
    expect((await area(page))?.kind).toBe('polygon');
    const now = await trees(page);
    expect(now.x.length).not.toBe(rectCount);
    expect(now.x.length).toBeGreaterThan(3);
    expect(now.x.length).toBeLessThan(whole.x.length);
    for (let i = 0; i < now.x.length; i++) expect(inside(utm, now.x[i]!, now.y[i]!)).toBe(true);
    expect(await page.locator('#area-note').textContent()).toContain('imported boundary');
    await page.screenshot({ path: path.join(shots, '22-area-boundary-1280.png') });
  });

  it('a reload keeps the area; "Use whole survey" brings every tree back', async () => {
    const before = await trees(page);
    await page.reload();
    await page.waitForFunction(() => !!(window as unknown as { __crowntally?: unknown }).__crowntally);
    await page.locator('.trows .trow').first().waitFor({ timeout: 60_000 });
    expect((await area(page))?.kind).toBe('polygon');
    expect(await page.locator('#area-note').textContent()).toContain('imported boundary');
    expect((await trees(page)).x).toEqual(before.x);

    // Processing again from the settings screen keeps the area too.
    await page.locator('button', { hasText: 'Change settings and reprocess' }).click();
    await page.locator('#setup-area').waitFor({ timeout: 30_000 });
    await page.locator('#start').click();
    await page.locator('#area-note').waitFor({ timeout: 150_000 });
    await expect.poll(async () => (await area(page))?.kind ?? null, { timeout: 30_000 }).toBe('polygon');
    expect((await trees(page)).x).toEqual(before.x);

    await page.locator('[data-action="area-clear"]').click();
    await settled(page, null);
    expect(await area(page)).toBeNull();
    expect((await trees(page)).x.length).toBe(whole.x.length);
    expect(await kept(page)).toBe(whole.x.length - 1);
    expect(await page.locator('[data-action="area-clear"]').count()).toBe(0);
    expect(pageErrors).toEqual([]);
  });
});
