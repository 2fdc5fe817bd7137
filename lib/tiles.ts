/**
 * Large areas in tiles. Each tile reads its points plus a buffer wide enough
 * for the largest crown and its competing neighbours, keeps only the trees
 * whose top lies inside the tile, and the tiles merge into one table with
 * no duplicates and no crown cut at a seam. Cells align across tiles (the
 * grid origin snaps to whole cells), so a tile sees the same CHM as the whole.
 */
import type { Rect } from './aoi.js';
import { CrowntallyError, isCrowntallyError } from './errors.js';
import type { ByteSource } from './io/types.js';
import { resolveOptions } from './options.js';
import { chooseCellSizeM, geometryFor, largestReachM, openInputs, tallyClouds, type TallyRun } from './pipeline.js';
import { checkGeometry, type Grid } from './raster/grid.js';
import type { TallyResult } from './result.js';
import { surveySummary } from './trees/summary.js';
import { TREE_COLUMNS, emptyColumns, MAX_RETURN_NUMBER, type TreeTable } from './trees/table.js';
import { windowDiameterM } from './trees/window.js';

export async function tallyTiled(inputs: ByteSource[], run: TallyRun, tileSizeM: number): Promise<TallyResult> {
  if (!(tileSizeM >= 10)) throw new CrowntallyError('BAD_OPTIONS', `tile size must be at least 10 m (got ${tileSizeM})`);
  const clouds = await openInputs(inputs, run);
  try {
    const base = resolveOptions(run.options);
    const cellSizeM = chooseCellSizeM(clouds, base);
    const options = { ...base, cellSizeM };
    const unitM = clouds[0]!.crs.unitM;
    const vu = clouds[0]!.crs.verticalUnitM;
    const cell = cellSizeM / unitM;
    const all: Rect = { minX: Infinity, minY: Infinity, maxX: -Infinity, maxY: -Infinity };
    let relief = 0;
    for (const c of clouds) {
      const b = c.header.bounds;
      all.minX = Math.min(all.minX, b.minX); all.minY = Math.min(all.minY, b.minY);
      all.maxX = Math.max(all.maxX, b.maxX); all.maxY = Math.max(all.maxY, b.maxY);
      relief = Math.max(relief, (b.maxZ - b.minZ) * vu);
    }
    const whole = geometryFor(all, cell);
    checkGeometry(whole, options.maxGridCells, unitM);
    // A crown reaches at most `reach` from its top, and a neighbour competing for its cells is within
    // another reach; the window decides the tops near the edge. Heights are capped at 100 m.
    const hMax = Math.min(100, relief);
    const bufferM = 2 * largestReachM(options, hMax) + windowDiameterM(options.window, hMax) + 2 * cellSizeM;
    const buffer = Math.ceil(bufferM / cellSizeM) * cell;
    const tile = Math.max(1, Math.round(tileSizeM / cellSizeM)) * cell;
    const x0 = whole.originX, y1 = whole.originY;
    const x1 = x0 + whole.width * cell, y0 = y1 - whole.height * cell;
    const nx = Math.max(1, Math.ceil((x1 - x0) / tile)), ny = Math.max(1, Math.ceil((y1 - y0) / tile));
    const parts: TallyResult[] = [];
    const keeps: Rect[] = [];
    const total = nx * ny;
    for (let j = 0; j < ny; j++) {
      for (let i = 0; i < nx; i++) {
        const keep: Rect = { minX: x0 + i * tile, maxX: i === nx - 1 ? x1 + cell : x0 + (i + 1) * tile, maxY: y1 - j * tile, minY: j === ny - 1 ? y0 - cell : y1 - (j + 1) * tile };
        const clip: Rect = { minX: keep.minX - buffer, maxX: keep.maxX + buffer, minY: keep.minY - buffer, maxY: keep.maxY + buffer };
        const k = j * nx + i;
        try {
          parts.push(await tallyClouds(clouds, options, {
            ...run, clip, keep,
            ...(run.onProgress ? { onProgress: (p) => run.onProgress!({ ...p, stage: `tile ${k + 1}/${total}: ${p.stage}`, fraction: (k + p.fraction) / total }) } : {}),
          }));
          keeps.push(keep);
        } catch (e) {
          if (isCrowntallyError(e) && e.code === 'EMPTY') continue; // a tile with no points
          throw e;
        }
      }
    }
    if (parts.length === 0) throw new CrowntallyError('EMPTY', 'the survey has no usable points');
    return mergeTiles(parts, keeps, whole, options, unitM);
  } finally {
    await Promise.all(clouds.map((c) => c.close()));
  }
}

/** Copies cells of a tile's grid into the whole-area grid: those `keepCore` accepts, or with `map`, every non-zero label renumbered. */
function paste<T extends Float32Array | Int32Array>(dst: Grid<T>, src: Grid<T>, keepCore: (x: number, y: number) => boolean, map?: (v: number) => number): void {
  const dc = Math.round((src.originX - dst.originX) / dst.cellSize);
  const dr = Math.round((dst.originY - src.originY) / dst.cellSize);
  for (let r = 0; r < src.height; r++) {
    const R = r + dr;
    if (R < 0 || R >= dst.height) continue;
    const y = src.originY - (r + 0.5) * src.cellSize;
    for (let c = 0; c < src.width; c++) {
      const C = c + dc;
      if (C < 0 || C >= dst.width) continue;
      const v = src.data[r * src.width + c]!;
      const x = src.originX + (c + 0.5) * src.cellSize;
      if (map) { if (v !== 0) dst.data[R * dst.width + C] = map(v); }
      else if (keepCore(x, y)) dst.data[R * dst.width + C] = v;
    }
  }
}

function mergeTiles(parts: TallyResult[], keeps: Rect[], g: { width: number; height: number; cellSize: number; originX: number; originY: number }, options: TallyResult['options'], unitM: number): TallyResult {
  const n = parts.reduce((s, p) => s + p.trees.count, 0);
  // Global order: north to south, then west to east, as the single-area run orders its tops.
  const order: Array<[number, number]> = [];
  parts.forEach((p, k) => { for (let i = 0; i < p.trees.count; i++) order.push([k, i]); });
  const key = (k: number, i: number) => {
    const t = parts[k]!.trees.columns;
    return [Math.floor((g.originY - t.y[i]!) / g.cellSize), Math.floor((t.x[i]! - g.originX) / g.cellSize)] as const;
  };
  order.sort((a, b) => { const A = key(a[0], a[1]), B = key(b[0], b[1]); return A[0] - B[0] || A[1] - B[1]; });
  const first = parts[0]!.trees;
  const layers = Math.max(...parts.map((p) => p.trees.profileLayers));
  const cols = emptyColumns(n);
  const profiles = new Uint32Array(n * layers);
  const hist = new Uint32Array(n * MAX_RETURN_NUMBER);
  const newIndex = parts.map((p) => new Int32Array(p.trees.count));
  const coords: number[] = [], ringStart: number[] = [0], ringKind: number[] = [], treeRingStart: number[] = [0];
  order.forEach(([k, i], j) => {
    const t = parts[k]!.trees;
    newIndex[k]![i] = j;
    for (const c of TREE_COLUMNS) cols[c][j] = t.columns[c][i]!;
    cols.tree_id[j] = j + 1;
    for (let l = 0; l < t.profileLayers; l++) profiles[j * layers + l] = t.profiles[i * t.profileLayers + l]!;
    for (let r = 0; r < MAX_RETURN_NUMBER; r++) hist[j * MAX_RETURN_NUMBER + r] = t.returnHistogram[i * MAX_RETURN_NUMBER + r]!;
    const o = t.outlines;
    for (let q = o.treeRingStart[i]!; q < o.treeRingStart[i + 1]!; q++) {
      for (let v = o.ringStart[q]!; v < o.ringStart[q + 1]!; v++) coords.push(o.coords[2 * v]!, o.coords[2 * v + 1]!);
      ringStart.push(coords.length / 2);
      ringKind.push(o.ringKind[q]!);
    }
    treeRingStart.push(ringKind.length);
  });
  const trees: TreeTable = {
    count: n, columns: cols, profileLayerM: first.profileLayerM, profileLayers: layers, profiles, returnHistogram: hist,
    hasReturns: parts.every((p) => p.trees.hasReturns), hasRgb: parts.every((p) => p.trees.hasRgb),
    outlines: { coords: Float64Array.from(coords), ringStart: Uint32Array.from(ringStart), ringKind: Uint8Array.from(ringKind), treeRingStart: Uint32Array.from(treeRingStart) },
  };
  const chm: Grid = { ...g, data: new Float32Array(g.width * g.height).fill(NaN) };
  const dtm: Grid = { ...g, data: new Float32Array(g.width * g.height).fill(NaN) };
  const labels: Grid<Int32Array> = { ...g, data: new Int32Array(g.width * g.height) };
  parts.forEach((p, k) => {
    // Rasters: each cell from the tile whose core holds its centre (a tile's buffer edge is less sure).
    const K = keeps[k]!;
    const core = (x: number, y: number) => x >= K.minX && x < K.maxX && y >= K.minY && y < K.maxY;
    paste(dtm, p.dtm, core);
    paste(chm, p.chm, core);
    paste(labels, p.labels, () => true, (v) => newIndex[k]![v - 1]! + 1);
  });
  const profileCounts: number[] = [];
  for (const p of parts) p.summary.profile.counts.forEach((v, i) => { profileCounts[i] = (profileCounts[i] ?? 0) + v; });
  const summary = surveySummary(trees, chm, { minHeightM: options.minHeightM, unitM }, { layerM: parts[0]!.summary.profile.layerM, counts: profileCounts.map((v) => v ?? 0) });
  // A tile without trees says so in its own warnings; the merged survey only when it has none at all.
  const warnings = tileWarnings(parts.map((p) => p.warnings)).filter((w) => n === 0 || !w.startsWith('no trees of at least'));
  warnings.push(`processed in ${parts.length} tiles`);
  return { ...parts[0]!, options, chm, dtm, labels, trees, summary, warnings };
}

/**
 * The tiles' warnings, each once. A warning that starts with a count ("12 candidate crowns were ...")
 * is said once with the count of every tile that had it: tiles read overlapping buffers, so the
 * counts cannot simply be added, and one line per tile would read as contradictory totals.
 */
function tileWarnings(perTile: string[][]): string[] {
  const out: string[] = [];
  const counted = new Map<string, number[]>();
  for (const list of perTile) {
    for (const w of list) {
      const m = /^(\d+) (.*)$/s.exec(w);
      if (!m) { if (!out.includes(w)) out.push(w); continue; }
      const rest = m[2]!;
      if (!counted.has(rest)) { counted.set(rest, []); out.push(rest); }
      counted.get(rest)!.push(Number(m[1]));
    }
  }
  return out.map((w) => {
    const c = counted.get(w);
    if (!c) return w;
    return c.length === 1 ? `${c[0]} ${w}` : `${w} (by tile, overlaps counted in each tile: ${c.join(', ')})`;
  });
}
