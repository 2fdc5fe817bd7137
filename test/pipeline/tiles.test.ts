/**
 * Tiles: an invented park survey processed whole and in four tiles
 * (tallyTiled) must give the same trees. Trees are matched by top position
 * (within half a cell; ids are renumbered by the merge). Heights and crown
 * areas must agree within 1 cm and 0.01 m2: the tiles snap their grids to
 * the same cell lattice and read a buffer wider than two crown reaches plus
 * a window, so every tile sees the same CHM cells around the trees it keeps;
 * the tolerance only allows for float rounding, not for a different answer.
 */
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { describe, expect, it } from 'vitest';
import { generateSurvey } from '../../demo/index.js';
import { bufferSource } from '../../lib/io/sources.js';
import { fileSource } from '../../lib/node/file-source.js';
import { nodeLazPerf } from '../../lib/node/laz-perf.js';
import { tally } from '../../lib/pipeline.js';
import type { TallyResult } from '../../lib/result.js';
import { tallyTiled } from '../../lib/tiles.js';

const here = path.dirname(fileURLToPath(import.meta.url));
const SIZE = { widthM: 120, heightM: 100 };
const TILE_M = 65; // 245 x 200 cells of 0.5 m -> 2 x 2 tiles

/** For each tree of `a`, the index of the tree of `b` whose top is nearest, and that distance (CRS units). */
function match(a: TallyResult, b: TallyResult): Array<[number, number]> {
  const A = a.trees.columns, B = b.trees.columns;
  const out: Array<[number, number]> = [];
  for (let i = 0; i < a.trees.count; i++) {
    let best = -1, bd = Infinity;
    for (let j = 0; j < b.trees.count; j++) {
      const d = Math.hypot(A.x[i]! - B.x[j]!, A.y[i]! - B.y[j]!);
      if (d < bd) { bd = d; best = j; }
    }
    out.push([best, bd]);
  }
  return out;
}

describe('tallyTiled', () => {
  it('four tiles give the trees, heights and crown areas of the whole park', async () => {
    const { las } = generateSurvey('park', { seed: 7, ...SIZE });
    const whole = await tally([bufferSource(las, 'park.las')]);
    const tiled = await tallyTiled([bufferSource(las, 'park.las')], {}, TILE_M);
    expect(tiled.warnings).toContain('processed in 4 tiles');
    expect(whole.trees.count).toBeGreaterThan(20);
    expect(tiled.trees.count).toBe(whole.trees.count);
    const half = whole.options.cellSizeM / 2;
    const W = whole.trees.columns, T = tiled.trees.columns;
    const m = match(whole, tiled);
    const used = new Set<number>();
    m.forEach(([j, d], i) => {
      expect(d).toBeLessThanOrEqual(half);
      used.add(j);
      expect(Math.abs(W.height_m[i]! - T.height_m[j]!)).toBeLessThanOrEqual(0.01);
      expect(Math.abs(W.crown_area_m2[i]! - T.crown_area_m2[j]!)).toBeLessThanOrEqual(0.01);
      expect(T.point_count[j]).toBe(W.point_count[i]);
    });
    expect(used.size).toBe(tiled.trees.count); // one-to-one: no duplicates at the seams
    // Ids are 1..n in both.
    expect(Array.from(T.tree_id)).toEqual(Array.from({ length: tiled.trees.count }, (_, k) => k + 1));

    // The seams pass through crowns: at least one kept crown has cells on both sides of a tile edge,
    // so the agreement above covers cut-crown handling, not only trees far from edges.
    const g = tiled.labels;
    const x0 = g.originX, y1 = g.originY, tile = Math.round(TILE_M / whole.options.cellSizeM);
    let straddling = 0;
    for (let t = 1; t <= tiled.trees.count; t++) {
      let left = false, right = false, top = false, bottom = false;
      for (let r = 0; r < g.height; r++) {
        for (let c = 0; c < g.width; c++) {
          if (g.data[r * g.width + c] !== t) continue;
          if (c < tile) left = true; else right = true;
          if (r < tile) top = true; else bottom = true;
        }
      }
      if ((left && right) || (top && bottom)) straddling++;
    }
    expect(straddling).toBeGreaterThan(0);
    expect(x0).toBe(whole.labels.originX);
    expect(y1).toBe(whole.labels.originY);

    // The merged rasters equal the whole run's, cell by cell.
    expect(tiled.chm.width).toBe(whole.chm.width);
    expect(tiled.chm.height).toBe(whole.chm.height);
    let chmDiff = 0, labelDiff = 0;
    for (let k = 0; k < whole.chm.data.length; k++) {
      const a = whole.chm.data[k]!, b = tiled.chm.data[k]!;
      if (!(a === b || (Number.isNaN(a) && Number.isNaN(b)))) chmDiff++;
      if ((whole.labels.data[k] === 0) !== (tiled.labels.data[k] === 0)) labelDiff++;
    }
    expect(chmDiff).toBe(0);
    expect(labelDiff).toBe(0);
    expect(tiled.summary.treeCount).toBe(whole.summary.treeCount);
    expect(tiled.summary.canopyCover).toBeCloseTo(whole.summary.canopyCover, 9);
    // A tile without trees must not make the merged survey claim there are none.
    expect(tiled.warnings.some((w) => w.startsWith('no trees of at least'))).toBe(false);
  });

  it('six tiles, some without trees: the same count and no claim that the survey has none', async () => {
    const { las } = generateSurvey('park', { seed: 7, ...SIZE });
    const whole = await tally([bufferSource(las, 'park.las')]);
    const tiled = await tallyTiled([bufferSource(las, 'park.las')], {}, 60); // 245 x 200 cells -> 3 x 2 tiles
    expect(tiled.warnings).toContain('processed in 6 tiles');
    expect(tiled.trees.count).toBe(whole.trees.count);
    expect(tiled.warnings.some((w) => w.startsWith('no trees of at least'))).toBe(false);
    // Each kind of warning once, not one line per tile with different counts.
    const kinds = tiled.warnings.map((w) => w.replace(/^\d+ /, ''));
    expect(new Set(kinds).size).toBe(kinds.length);
  });

  it('autzen_trim.laz (international feet) in 100 m tiles: the same table as whole, each warning once', async () => {
    const file = path.resolve(here, '../../../shared/fixtures/laz-pairs/autzen_trim.laz');
    const run = { options: { cellSizeM: 2 }, lazPerf: nodeLazPerf() };
    const whole = await tally([await fileSource(file)], run);
    const tiled = await tallyTiled([await fileSource(file)], run, 100);
    expect(tiled.warnings.find((w) => /^processed in \d+ tiles$/.test(w))).not.toBe('processed in 1 tiles');
    expect(tiled.trees.count).toBe(whole.trees.count);
    // Tops agree to float rounding of the tile grid origins (1e-6 ft), heights and areas within 1 cm / 0.01 m2.
    const tol = { x: 1e-6, y: 1e-6, height_m: 0.01, crown_area_m2: 0.01, point_count: 0 } as const;
    for (const [c, t] of Object.entries(tol) as Array<[keyof typeof tol, number]>) {
      for (let i = 0; i < whole.trees.count; i++) expect(Math.abs(tiled.trees.columns[c][i]! - whole.trees.columns[c][i]!), `${c} of tree ${i + 1}`).toBeLessThanOrEqual(t);
    }
    const kinds = tiled.warnings.map((w) => w.replace(/^\d+ /, ''));
    expect(new Set(kinds).size).toBe(kinds.length);
  });

  it('refuses a tile smaller than 10 m with a typed error', async () => {
    const { las } = generateSurvey('park', { seed: 7, widthM: 40, heightM: 40 });
    await expect(tallyTiled([bufferSource(las, 'park.las')], {}, 5)).rejects.toMatchObject({ code: 'BAD_OPTIONS' });
  });
});
