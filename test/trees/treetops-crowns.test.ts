import { describe, expect, it } from 'vitest';
import { findTreetops } from '../../lib/trees/treetops.js';
import { growCrowns } from '../../lib/trees/crowns.js';
import type { Grid } from '../../lib/raster/grid.js';

function grid(w: number, h: number, f: (c: number, r: number) => number, cellSize = 1): Grid {
  const data = new Float32Array(w * h);
  for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) data[r * w + c] = f(c, r);
  return { width: w, height: h, cellSize, originX: 0, originY: 100, data };
}

describe('findTreetops', () => {
  it('a plateau yields one top near its centre', () => {
    const g = grid(20, 20, (c, r) => (c >= 5 && c <= 9 && r >= 6 && r <= 8 ? 10 : 0));
    const t = findTreetops(g, { minHeightM: 2, window: 3 });
    expect(t.count).toBe(1);
    expect([t.col[0], t.row[0]]).toEqual([7, 7]);
    expect(t.heightM[0]).toBe(10);
    expect(t.x[0]).toBe(7.5); // cell centre, grid.ts convention
    expect(t.y[0]).toBe(100 - 7.5);
  });

  it('cells below minHeightM are never tops; the window suppresses nearby lower peaks', () => {
    const g = grid(30, 10, (c) => (c === 5 ? 1.5 : c === 15 ? 10 : c === 17 ? 9 : 0));
    expect(findTreetops(g, { minHeightM: 2, window: 5 }).count).toBe(1); // peak at 17 is within 2.5 m of 15
    expect(findTreetops(g, { minHeightM: 2, window: 3 }).count).toBe(2);
    expect(findTreetops(g, { minHeightM: 1, window: 3 }).count).toBe(3);
  });

  it('a survey in feet finds the same tops as the same survey in metres', () => {
    const f = (c: number, r: number) => 12 * Math.exp(-((c - 10) ** 2 + (r - 10) ** 2) / 20) + 11 * Math.exp(-((c - 13) ** 2 + (r - 10) ** 2) / 20);
    const m = findTreetops(grid(25, 25, f, 1), { minHeightM: 2, window: 'combined' });
    const ft = findTreetops(grid(25, 25, f, 1 / 0.3048), { minHeightM: 2, window: 'combined', unitM: 0.3048 });
    expect(Array.from(ft.col)).toEqual(Array.from(m.col));
    expect(ft.count).toBe(m.count);
    expect(m.count).toBeGreaterThan(0);
  });

  it('equal maxima within one window that do not touch give one top', () => {
    const g = grid(12, 5, (c, r) => (r === 2 && (c === 4 || c === 6) ? 10 : r === 2 && c === 5 ? 9.9 : 0));
    const t = findTreetops(g, { minHeightM: 2, window: 5 });
    expect(t.count).toBe(1);
    expect(t.col[0]).toBe(4);
    expect(findTreetops(g, { minHeightM: 2, window: 3 }).count).toBe(2); // 2 m apart, outside a 1.5 m radius
  });

  it('NaN cells are ignored', () => {
    const g = grid(5, 5, (c, r) => (c === 2 && r === 2 ? 8 : NaN));
    expect(findTreetops(g, { minHeightM: 2, window: 3 }).count).toBe(1);
  });
});

describe('growCrowns', () => {
  const twin = grid(30, 12, (c, r) => 10 * Math.exp(-((c - 8) ** 2 + (r - 6) ** 2) / 12) + 14 * Math.exp(-((c - 20) ** 2 + (r - 6) ** 2) / 12));

  it('each top gets its crown; 4-connected; floor and minimum height respected', () => {
    const tops = findTreetops(twin, { minHeightM: 2, window: 3 });
    expect(tops.count).toBe(2);
    const lab = growCrowns(twin, tops, { minHeightM: 2, floorFraction: 0.3, reachM: Infinity });
    const W = twin.width;
    for (let i = 0; i < lab.data.length; i++) {
      const k = lab.data[i]!;
      if (k === 0) continue;
      expect(twin.data[i]!).toBeGreaterThanOrEqual(2);
      expect(twin.data[i]!).toBeGreaterThan(0.3 * tops.heightM[k - 1]!);
    }
    expect(lab.data[6 * W + 8]).toBe(1);
    expect(lab.data[6 * W + 20]).toBe(2);
    // 4-connectivity: flood fill each label from its top through 4-neighbours reaches every cell of it.
    for (let k = 1; k <= 2; k++) {
      const seen = new Uint8Array(lab.data.length);
      const st = [tops.row[k - 1]! * W + tops.col[k - 1]!];
      seen[st[0]!] = 1;
      let n = 0;
      while (st.length) {
        const i = st.pop()!; n++;
        const c = i % W;
        for (const j of [c + 1 < W ? i + 1 : -1, c > 0 ? i - 1 : -1, i + W, i - W]) {
          if (j >= 0 && j < lab.data.length && !seen[j] && lab.data[j] === k) { seen[j] = 1; st.push(j); }
        }
      }
      expect(n).toBe(lab.data.filter((v) => v === k).length);
    }
  });

  it('reach limits the crown to a disc around the top', () => {
    const tops = findTreetops(twin, { minHeightM: 2, window: 3 });
    const lab = growCrowns(twin, tops, { minHeightM: 0.5, floorFraction: 0, reachM: 2.5 });
    for (let i = 0; i < lab.data.length; i++) {
      const k = lab.data[i]!;
      if (!k) continue;
      const c = i % twin.width, r = Math.floor(i / twin.width);
      expect(Math.hypot(c - tops.col[k - 1]!, r - tops.row[k - 1]!)).toBeLessThanOrEqual(2.5);
    }
    expect(lab.data.filter((v) => v === 1).length).toBe(21); // cells within 2.5 of a centre: common practice count 1+4+8+8
  });

  it('a flat crown larger than the queue\'s first block floods whole; NaN and low cells stay out', () => {
    // 90 x 90 cells of one height join the flood level at once (more than the 4096 the level queue starts
    // with); one marker on a connected region labels all of it (marker watershed by definition: common practice).
    const g = grid(100, 100, (c, r) => (c === 50 && r === 50 ? NaN : c >= 5 && c < 95 && r >= 5 && r < 95 ? 10 : 1));
    const tops = { count: 1, col: Int32Array.of(20), row: Int32Array.of(20), x: Float64Array.of(0), y: Float64Array.of(0), heightM: Float32Array.of(10) };
    const lab = growCrowns(g, tops, { minHeightM: 2, floorFraction: 0, reachM: Infinity });
    expect(lab.data.filter((v) => v === 1).length).toBe(90 * 90 - 1);
    expect(lab.data[50 * 100 + 50]).toBe(0);
    expect(lab.data[0]).toBe(0);
  });

  it('feet and metres give the same crowns', () => {
    const ft: Grid = { ...twin, cellSize: 1 / 0.3048 };
    const a = growCrowns(twin, findTreetops(twin, { minHeightM: 2, window: 'combined' }), { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined' });
    const b = growCrowns(ft, findTreetops(ft, { minHeightM: 2, window: 'combined', unitM: 0.3048 }), { minHeightM: 2, floorFraction: 0.3, reachM: 'auto', window: 'combined', unitM: 0.3048 });
    expect(Array.from(b.data)).toEqual(Array.from(a.data));
  });
});
