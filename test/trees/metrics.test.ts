import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { TreeMetricsAccumulator } from '../../lib/trees/metrics.js';
import { ProfileAccumulator, surveySummary } from '../../lib/trees/summary.js';
import { traceOutlines } from '../../lib/trees/outlines.js';
import type { Treetops } from '../../lib/trees/treetops.js';
import type { Grid } from '../../lib/raster/grid.js';
import { FLAG_OVERLAP, FLAG_WITHHELD, type PointChunk } from '../../lib/io/types.js';
import { PY, referenceAvailable, rng } from './reference.js';

interface P { x: number; y: number; hM: number; cls?: number; rn?: number; nr?: number; flags?: number; i?: number; rgb?: [number, number, number] }

// Invented plot, 10 x 10 cells of 1 m: crown 1 = west half, crown 2 = north-east quarter; ground at 100 m.
function plot(u: number) {
  const W = 10, H = 10, cs = 1 / u;
  const lab = new Int32Array(W * H);
  for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) lab[r * W + c] = c < 5 ? 1 : r < 5 ? 2 : 0;
  const geo = { width: W, height: H, cellSize: cs, originX: 1000 / u, originY: 2000 / u };
  const labels: Grid<Int32Array> = { ...geo, data: lab };
  const dtm: Grid = { ...geo, data: new Float32Array(W * H).fill(100) };
  const chm: Grid = { ...geo, data: new Float32Array(W * H).fill(5) };
  const tops: Treetops = {
    count: 2, col: Int32Array.of(2, 7), row: Int32Array.of(5, 2),
    x: Float64Array.of(1000 / u + 2.5 * cs, 1000 / u + 7.5 * cs), y: Float64Array.of(2000 / u - 5.5 * cs, 2000 / u - 2.5 * cs),
    heightM: Float32Array.of(15, 12),
  };
  return { labels, dtm, chm, tops };
}

function points(): P[] {
  const rand = rng(9), out: P[] = [];
  for (let k = 0; k < 600; k++) { // crown 1: 0-15 m, mixed returns
    const nr = 1 + Math.floor(rand() * 3), rn = 1 + Math.floor(rand() * nr);
    out.push({ x: rand() * 5, y: -rand() * 10, hM: rand() < 0.2 ? rand() * 0.3 : 2 + 13 * rand() ** 0.7, rn, nr, cls: 1, i: Math.floor(rand() * 1000), rgb: [1000, 2000, 3000] });
  }
  for (let k = 0; k < 400; k++) { // crown 2: ground returns and a crown from 6 to 12 m, nothing between
    const g = rand() < 0.25;
    out.push({ x: 5 + rand() * 5, y: -rand() * 5, hM: g ? rand() * 0.2 : 6 + 6 * rand(), cls: g ? 2 : 5, rn: g ? 2 : 1, nr: g ? 2 : 2, i: 500, rgb: [0, 0, 60000] });
  }
  out.push({ x: 2, y: -2, hM: 80, cls: 18, rn: 1, nr: 1 });              // high noise
  out.push({ x: 2, y: -2, hM: 70, cls: 5, rn: 1, nr: 1, flags: FLAG_WITHHELD });
  out.push({ x: 2, y: -2, hM: 60, cls: 5, rn: 1, nr: 1, flags: FLAG_OVERLAP });
  out.push({ x: 7, y: -8, hM: 9, cls: 5, rn: 1, nr: 1 });               // unlabelled cell
  return out;
}

function chunkOf(ps: P[], u: number, vu: number, withReturns = true): PointChunk {
  const n = ps.length;
  const ch: PointChunk = {
    count: n, x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n), intensity: new Uint16Array(n),
    returnNumber: new Uint8Array(n), numberOfReturns: new Uint8Array(n), classification: new Uint8Array(n), flags: new Uint8Array(n),
    scanAngleDeg: new Float32Array(n), red: new Uint16Array(n), green: new Uint16Array(n), blue: new Uint16Array(n),
  };
  ps.forEach((p, k) => {
    ch.x[k] = (1000 + p.x) / u; ch.y[k] = (2000 + p.y) / u; ch.z[k] = (100 + p.hM) / vu;
    ch.intensity[k] = p.i ?? 0; ch.classification[k] = p.cls ?? 1; ch.flags[k] = p.flags ?? 0;
    if (withReturns) { ch.returnNumber[k] = p.rn ?? 1; ch.numberOfReturns[k] = p.nr ?? 1; }
    if (p.rgb) { ch.red![k] = p.rgb[0]; ch.green![k] = p.rgb[1]; ch.blue![k] = p.rgb[2]; }
  });
  return ch;
}

function measure(u: number, vu: number, withReturns = true) {
  const { labels, dtm, chm, tops } = plot(u);
  const acc = new TreeMetricsAccumulator(labels, dtm, tops, { profileLayerM: 1, verticalUnitM: vu, unitM: u, hasReturns: withReturns, hasRgb: true, chm });
  const ps = points();
  acc.add(chunkOf(ps.slice(0, 500), u, vu, withReturns));
  acc.add(chunkOf(ps.slice(500), u, vu, withReturns));
  return { table: acc.finish(traceOutlines(labels, 2)), ps, chm, dtm };
}

const inCrown = (p: P, k: number) => (k === 0 ? p.x < 5 : p.x >= 5 && p.y > -5);
const kept = (p: P) => p.cls !== 18 && !(p.flags ?? 0);

describe('TreeMetricsAccumulator', () => {
  const { table, ps } = measure(1, 1);
  const col = table.columns;

  it('ids, positions, heights from the highest kept return', () => {
    expect(Array.from(col.tree_id)).toEqual([1, 2]);
    expect(col.x[0]).toBe(1002.5);
    for (let k = 0; k < 2; k++) {
      const hs = ps.filter((p) => kept(p) && inCrown(p, k)).map((p) => p.hM);
      expect(col.height_m[k]!).toBeCloseTo(Math.max(...hs), 6);
      expect(col.point_count[k]).toBe(hs.length);
    }
    expect(col.chm_height_m[0]).toBe(15);
  });

  it('return counts follow the LAS definitions', () => {
    // ASPRS LAS 1.4 R15: first = return 1, last = return number equal to number of returns.
    for (let k = 0; k < 2; k++) {
      const q = ps.filter((p) => kept(p) && inCrown(p, k));
      expect(col.first_returns[k]).toBe(q.filter((p) => p.rn === 1).length);
      expect(col.last_returns[k]).toBe(q.filter((p) => p.rn === p.nr).length);
      expect(col.single_returns[k]).toBe(q.filter((p) => p.rn === 1 && p.nr === 1).length);
      expect(col.intermediate_returns[k]).toBe(q.filter((p) => p.rn! > 1 && p.rn! < p.nr!).length);
      expect(table.returnHistogram[k * 15]).toBe(q.filter((p) => p.rn === 1).length);
    }
  });

  it('crown shape figures', () => {
    expect(col.crown_area_m2[0]).toBe(50);
    expect(col.crown_diameter_m[0]).toBeCloseTo(2 * Math.sqrt(50 / Math.PI), 12); // equal-area circle, common practice
    expect(col.crown_extent_m[0]).toBeCloseTo(Math.hypot(5, 10), 12); // diagonal of the 5 x 10 m rectangle (Pythagoras)
    expect(col.crown_perimeter_m[0]).toBe(30);
  });

  it('intensity, colour, ground share, crown base', () => {
    const q = ps.filter((p) => kept(p) && inCrown(p, 0));
    expect(col.intensity_mean[0]!).toBeCloseTo(q.reduce((s, p) => s + (p.i ?? 0), 0) / q.length, 9);
    expect(col.intensity_max[0]).toBe(Math.max(...q.map((p) => p.i ?? 0)));
    expect(col.blue_mean[1]).toBe(60000);
    expect(col.red_mean[0]).toBe(1000);
    const q2 = ps.filter((p) => kept(p) && inCrown(p, 1));
    expect(col.ground_share[1]!).toBeCloseTo(q2.filter((p) => p.cls === 2).length / q2.length, 12);
    expect(col.crown_base_m[1]).toBe(6); // crown returns start at 6 m in this invented profile
    let sum = 0;
    for (let l = 0; l < table.profileLayers; l++) sum += table.profiles[table.profileLayers + l]!;
    expect(sum).toBe(q2.length);
  });

  it.skipIf(!referenceAvailable())('height percentiles agree with numpy.percentile within a bin', () => {
    const sets = [0, 1].map((k) => ps.filter((p) => kept(p) && inCrown(p, k) && p.hM >= 2).map((p) => p.hM));
    // numpy.percentile (linear interpolation): the outside reference.
    const ref = JSON.parse(execFileSync(PY, ['-c', 'import json,sys,numpy as np; d=json.load(sys.stdin); print(json.dumps([np.percentile(s,[25,50,75,95]).tolist() for s in d]))'], { input: JSON.stringify(sets) }).toString()) as number[][];
    for (let k = 0; k < 2; k++) {
      [col.h25_m[k]!, col.h50_m[k]!, col.h75_m[k]!, col.h95_m[k]!].forEach((v, j) => expect(Math.abs(v - ref[k]![j]!)).toBeLessThan(0.15));
    }
  });

  it('a survey in feet gives the same table', () => {
    const ft = measure(0.3048, 0.3048).table;
    for (const c of ['height_m', 'crown_area_m2', 'crown_extent_m', 'h50_m', 'crown_base_m', 'point_count', 'first_returns'] as const) {
      for (let k = 0; k < 2; k++) expect(ft.columns[c][k]!).toBeCloseTo(col[c][k]!, 6);
    }
  });

  it('no return numbers: return statistics are NaN, not zero', () => {
    const t = measure(1, 1, false).table;
    expect(t.hasReturns).toBe(false);
    for (const c of ['first_returns', 'last_returns', 'single_returns', 'intermediate_returns'] as const) expect(Number.isNaN(t.columns[c][0])).toBe(true);
    expect(t.columns.point_count[0]).toBe(col.point_count[0]);
  });
});

describe('surveySummary and ProfileAccumulator', () => {
  it('counts, density, cover, histogram, profile', () => {
    const { table, ps, chm, dtm } = measure(1, 1);
    chm.data.fill(NaN, 0, 20); // two empty rows
    chm.data.fill(1, 20, 40);  // below the minimum height
    const prof = new ProfileAccumulator(dtm, { layerM: 1, verticalUnitM: 1 });
    prof.add(chunkOf(ps, 1, 1));
    const s = surveySummary(table, chm, { minHeightM: 2, unitM: 1 }, prof.finish());
    expect(s.treeCount).toBe(2);
    expect(s.areaM2).toBe(80);
    expect(s.treesPerHa).toBeCloseTo(2 / 0.008, 9); // 1 ha = 10 000 m2 (SI)
    expect(s.canopyCover).toBeCloseTo(60 / 80, 12);
    expect(s.heightHistogram.counts.reduce((a, b) => a + b, 0)).toBe(2);
    expect(s.maxHeightM).toBe(Math.max(table.columns.height_m[0]!, table.columns.height_m[1]!));
    const keptAll = ps.filter(kept);
    expect(s.profile.counts.reduce((a, b) => a + b, 0)).toBe(keptAll.length);
    expect(s.profile.counts[9]).toBe(keptAll.filter((p) => p.hM >= 9 && p.hM < 10).length);
  });
});
