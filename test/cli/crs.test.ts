/**
 * Surveys that carry no CRS: `crowntally tally` stops and names --crs, writes
 * local outputs only with --local-only, and places the trees with --crs.
 * The inputs are the invented demo park, written here as a LAS 1.4 file with
 * no CRS record and as an x y z text cloud.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import Papa from 'papaparse';
import proj4 from 'proj4';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { cli, ensureBuilt, ROOT, type CliRun as Run } from '../built.js';
import { buildScene, scanDemo, toPointChunk } from '../../demo/index.js';
import { writeLas } from '../../lib/io/las-writer.js';

const here = path.dirname(fileURLToPath(import.meta.url));



let work: string, las: string, xyz: string;
beforeAll(() => {
  ensureBuilt();
  work = mkdtempSync(path.join(tmpdir(), 'crowntally-crs-'));
  const scene = buildScene('park', { seed: 5, widthM: 60, heightM: 60 });
  const { cloud } = scanDemo(scene, { seed: 5 });
  const pts = toPointChunk(cloud, scene);
  las = path.join(work, 'nocrs.las');
  writeFileSync(las, writeLas(pts, {
    pointFormat: 6, scale: [0.001, 0.001, 0.001], offset: [Math.round(scene.originX), Math.round(scene.originY), 0],
    creationDay: 1, creationYear: 2024,
  }));
  const lines = ['x y z'];
  for (let i = 0; i < pts.count; i += 4) lines.push(`${pts.x[i]!.toFixed(3)} ${pts.y[i]!.toFixed(3)} ${pts.z[i]!.toFixed(3)}`);
  xyz = path.join(work, 'nocrs.xyz');
  writeFileSync(xyz, lines.join('\n') + '\n');
});
afterAll(() => { if (work) rmSync(work, { recursive: true, force: true }); });

describe('a survey with no CRS', () => {
  it('stops with exit 2 and one error line naming --crs (LAS and XYZ text), writing nothing', () => {
    for (const f of [las, xyz]) {
      const dir = path.join(work, `stop-${path.basename(f)}`);
      const r = cli('tally', f, '--out', dir, '--workers', '1');
      expect(r.code).toBe(2);
      const lines = r.stderr.split('\n').filter(Boolean);
      expect(lines).toHaveLength(1);
      expect(lines[0]).toMatch(/^error: .*--crs/);
      expect(existsSync(path.join(dir, 'trees.csv'))).toBe(false);
    }
  });

  it('--local-only writes trees.csv with x/y and no lon/lat, no trees.geojson, and says so', () => {
    const dir = path.join(work, 'local');
    // A trees.geojson of an earlier run in the same folder must not survive as if it were this run's.
    mkdirSync(dir, { recursive: true });
    writeFileSync(path.join(dir, 'trees.geojson'), '{"type":"FeatureCollection","features":[]}');
    const r = cli('tally', las, '--out', dir, '--workers', '1', '--local-only');
    expect(r.code, r.stderr).toBe(0);
    expect(existsSync(path.join(dir, 'trees.geojson'))).toBe(false);
    expect(existsSync(path.join(dir, 'chm.tif'))).toBe(true);
    const csv = Papa.parse<Record<string, number>>(readFileSync(path.join(dir, 'trees.csv'), 'utf8'), { header: true, dynamicTyping: true, skipEmptyLines: true });
    expect(csv.errors).toEqual([]);
    expect(csv.data.length).toBeGreaterThan(3);
    expect(csv.meta.fields!.slice(0, 3)).toEqual(['tree_id', 'x', 'y']);
    expect(csv.meta.fields).not.toContain('lon');
    expect(csv.meta.fields).not.toContain('lat');
    expect(r.stderr).toMatch(/no lon\/lat; no GeoJSON was written/);
    const s = JSON.parse(readFileSync(path.join(dir, 'summary.json'), 'utf8'));
    expect(s.warnings.some((w: string) => /no GeoJSON was written/.test(w))).toBe(true);
    expect(s.outputs.map((o: { file: string }) => o.file)).not.toContain('trees.geojson');
  });

  it('--crs EPSG:32633 places the trees: lon/lat back through UTM 33N land on x/y within 1 cm', () => {
    const dir = path.join(work, 'utm');
    const r = cli('tally', las, '--out', dir, '--workers', '1', '--crs', 'EPSG:32633');
    expect(r.code, r.stderr).toBe(0);
    expect(existsSync(path.join(dir, 'trees.geojson'))).toBe(true);
    const csv = Papa.parse<Record<string, number>>(readFileSync(path.join(dir, 'trees.csv'), 'utf8'), { header: true, dynamicTyping: true, skipEmptyLines: true });
    expect(csv.data.length).toBeGreaterThan(3);
    // EPSG:32633 is WGS 84 / UTM zone 33N (EPSG registry; definition written from memory).
    const utm = proj4('+proj=longlat +datum=WGS84 +no_defs', '+proj=utm +zone=33 +datum=WGS84 +units=m +no_defs');
    for (const row of csv.data) {
      const [x, y] = utm.forward([row.lon!, row.lat!]);
      expect(Math.hypot(x! - row.x!, y! - row.y!)).toBeLessThan(0.01);
      // Zone 33 spans 12 to 18 degrees east (UTM zone layout, common practice).
      expect(row.lon!).toBeGreaterThan(12);
      expect(row.lon!).toBeLessThan(18);
    }
    const s = JSON.parse(readFileSync(path.join(dir, 'summary.json'), 'utf8'));
    expect(s.survey.crs.epsg).toBe(32633);
  });

  it('a malformed --crs is refused with one error line', () => {
    const r = cli('tally', las, '--out', path.join(work, 'bad'), '--crs', 'UTM33');
    expect(r.code).toBe(2);
    expect(r.stderr.split('\n').filter(Boolean)).toEqual([expect.stringMatching(/^error: --crs must look like EPSG:/)]);
  });
});
