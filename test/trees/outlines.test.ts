import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { outlineArea, outlineExtent, outlinePerimeter, ringSignedArea, traceOutlines } from '../../lib/trees/outlines.js';
import { findTreetops } from '../../lib/trees/treetops.js';
import { growCrowns } from '../../lib/trees/crowns.js';
import type { Grid } from '../../lib/raster/grid.js';
import type { CrownOutlines } from '../../lib/trees/table.js';
import { PY, referenceAvailable, syntheticCanopy } from './reference.js';

function labelsFrom(rows: string[], cellSize = 2, originX = 500000, originY = 4000000): Grid<Int32Array> {
  const H = rows.length, W = rows[0]!.length;
  const data = new Int32Array(W * H);
  rows.forEach((s, r) => { for (let c = 0; c < W; c++) data[r * W + c] = s[c] === '.' ? 0 : Number(s[c]); });
  return { width: W, height: H, cellSize, originX, originY, data };
}

function rings(o: CrownOutlines, t: number): { kind: number; xy: number[] }[] {
  const out = [];
  for (let k = o.treeRingStart[t]!; k < o.treeRingStart[t + 1]!; k++) {
    out.push({ kind: o.ringKind[k]!, xy: Array.from(o.coords.subarray(2 * o.ringStart[k]!, 2 * o.ringStart[k + 1]!)) });
  }
  return out;
}

describe('traceOutlines', () => {
  it('a square: one closed counter-clockwise ring of 4 corners', () => {
    const g = labelsFrom(['....', '.11.', '.11.', '....'], 1, 0, 4);
    const o = traceOutlines(g, 1);
    const r = rings(o, 0);
    expect(r.length).toBe(1);
    expect(r[0]!.kind).toBe(0);
    expect(r[0]!.xy.length).toBe(10); // 4 corners + closing vertex: collinear vertices merged
    expect(r[0]!.xy.slice(0, 2)).toEqual(r[0]!.xy.slice(-2));
    expect(ringSignedArea(r[0]!.xy, 0, 5)).toBe(4); // shoelace, positive = counter-clockwise (common practice)
    expect(outlinePerimeter(o, 0)).toBe(8);
    expect(outlineExtent(o, 0)).toBeCloseTo(Math.SQRT2 * 2, 12);
  });

  it('a ring with a hole: exterior counter-clockwise, hole clockwise, area = cells x cell area', () => {
    const g = labelsFrom(['.....', '.111.', '.1.1.', '.111.', '.....']);
    const o = traceOutlines(g, 1);
    const r = rings(o, 0);
    expect(r.map((x) => x.kind)).toEqual([0, 1]);
    expect(ringSignedArea(r[0]!.xy, 0, r[0]!.xy.length / 2)).toBe(36);
    expect(ringSignedArea(r[1]!.xy, 0, r[1]!.xy.length / 2)).toBe(-4);
    expect(outlineArea(o, 0)).toBe(8 * 4);
  });

  it('diagonal pinch points and neighbouring crowns: areas stay exact', () => {
    const g = labelsFrom([
      '1.22..',
      '.1.2.3',
      '1.22.3',
      '.1..33',
      '111.3.',
    ], 1.5);
    const o = traceOutlines(g, 3);
    for (let t = 0; t < 3; t++) {
      const cells = Array.from(g.data).filter((v) => v === t + 1).length;
      expect(outlineArea(o, t)).toBeCloseTo(cells * 2.25, 6);
      for (const r of rings(o, t)) {
        const a = ringSignedArea(r.xy, 0, r.xy.length / 2);
        expect(r.kind === 0 ? a > 0 : a < 0).toBe(true);
      }
    }
    // Crown 1 touches itself only at corners: four 4-connected parts, four exterior rings.
    expect(rings(o, 0).map((r) => r.kind)).toEqual([0, 0, 0, 0]);
  });

  it('watershed crowns of a synthetic canopy: area = cells x cell area for every crown', () => {
    const { grid } = syntheticCanopy(11, 70, 60, 20, 0.5, 0.2);
    const tops = findTreetops(grid, { minHeightM: 2, window: 'combined' });
    const lab = growCrowns(grid, tops, { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined' });
    const o = traceOutlines(lab, tops.count);
    const cells = new Float64Array(tops.count);
    for (const v of lab.data) if (v) cells[v - 1]!++;
    for (let t = 0; t < tops.count; t++) expect(outlineArea(o, t)).toBeCloseTo(cells[t]! * 0.25, 6);
    for (let t = 0; t < tops.count; t++) expect(o.ringKind[o.treeRingStart[t]!]).toBe(0);
  });

  it.skipIf(!referenceAvailable())('areas agree with shapely', () => {
    const { grid } = syntheticCanopy(12, 60, 50, 15, 0.5, 0.3);
    const tops = findTreetops(grid, { minHeightM: 2, window: 'combined' });
    const lab = growCrowns(grid, tops, { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined' });
    const o = traceOutlines(lab, tops.count);
    const polys = [];
    for (let t = 0; t < tops.count; t++) {
      const rs = rings(o, t).map((r) => ({ kind: r.kind, pts: Array.from({ length: r.xy.length / 2 }, (_, k) => [r.xy[2 * k], r.xy[2 * k + 1]]) }));
      polys.push(rs);
    }
    // shapely.geometry.Polygon(exterior, holes).area, planar in the CRS: the outside check.
    const script = [
      'import json, sys',
      'from shapely.geometry import Polygon',
      'trees = json.load(sys.stdin)',
      'out = []',
      'for rs in trees:',
      '    a = 0.0',
      '    ext = None; holes = []',
      '    for r in rs + [{"kind": 0, "pts": None}]:',
      '        if r["kind"] == 0:',
      '            if ext is not None: a += Polygon(ext, holes).area',
      '            ext = r["pts"]; holes = []',
      '        else: holes.append(r["pts"])',
      '    out.append(a)',
      'print(json.dumps(out))',
    ].join('\n');
    const res = JSON.parse(execFileSync(PY, ['-c', script], { input: JSON.stringify(polys) }).toString()) as number[];
    expect(res.length).toBe(tops.count);
    for (let t = 0; t < tops.count; t++) expect(outlineArea(o, t)).toBeCloseTo(res[t]!, 6);
  });
});
