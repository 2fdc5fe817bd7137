import type { Grid } from '../../lib/raster/grid.js';
import type { EditRecord, StoredTrees } from './store.js';

/**
 * Bookkeeping of user corrections: which row each edit belongs to, putting
 * edits back on trees after a reprocess, and the label-grid changes a merge
 * or an added tree makes before the worker measures the crowns again.
 * Nothing here reads points: metrics always come from the worker.
 */

/** Row index of each edit in the current table (by tree_id), or -1. */
export function rowsByEdit(trees: StoredTrees, edits: EditRecord[]): Map<string, number> {
  const byId = new Map<number, number>();
  const ids = trees.columns.tree_id;
  for (let i = 0; i < trees.count; i++) byId.set(ids[i]!, i);
  const out = new Map<string, number>();
  for (const e of edits) out.set(e.key, byId.get(e.treeId) ?? -1);
  return out;
}

/** Edit per row, for marking rows in the table, map and exports. */
export function editByRow(trees: StoredTrees, edits: EditRecord[]): Map<number, EditRecord> {
  const rows = rowsByEdit(trees, edits);
  const out = new Map<number, EditRecord>();
  for (const e of edits) {
    const r = rows.get(e.key)!;
    if (r >= 0) out.set(r, e);
  }
  return out;
}

export interface Reattached {
  placed: EditRecord[];
  unplaced: EditRecord[];
}

/**
 * Puts edits back on the trees of a new run: each edit goes to the nearest
 * treetop within `toleranceM` of its anchor, nearest pairs first, one edit
 * per tree. Edits with no tree close enough are returned as unplaced so the
 * user can see them; they are never dropped silently. An added tree keeps
 * its mark when it lands on a tree of the new run.
 */
export function reattachEdits(trees: StoredTrees, edits: EditRecord[], toleranceCrs: number): Reattached {
  const xs = trees.columns.x;
  const ys = trees.columns.y;
  const ids = trees.columns.tree_id;
  // A coarse bucket grid over the tops keeps this linear in trees + edits.
  const cell = Math.max(toleranceCrs, 1e-9);
  const buckets = new Map<string, number[]>();
  for (let i = 0; i < trees.count; i++) {
    const k = `${Math.floor(xs[i]! / cell)},${Math.floor(ys[i]! / cell)}`;
    let b = buckets.get(k);
    if (!b) buckets.set(k, (b = []));
    b.push(i);
  }
  const pairs: { d: number; e: number; row: number }[] = [];
  edits.forEach((ed, e) => {
    const cx = Math.floor(ed.x / cell);
    const cy = Math.floor(ed.y / cell);
    for (let dx = -1; dx <= 1; dx++) {
      for (let dy = -1; dy <= 1; dy++) {
        for (const row of buckets.get(`${cx + dx},${cy + dy}`) ?? []) {
          const d = Math.hypot(xs[row]! - ed.x, ys[row]! - ed.y);
          if (d <= toleranceCrs) pairs.push({ d, e, row });
        }
      }
    }
  });
  pairs.sort((a, b) => a.d - b.d);
  const editDone = new Uint8Array(edits.length);
  const rowDone = new Set<number>();
  const placed: EditRecord[] = [];
  for (const p of pairs) {
    if (editDone[p.e] || rowDone.has(p.row)) continue;
    editDone[p.e] = 1;
    rowDone.add(p.row);
    const ed = edits[p.e]!;
    placed.push({ ...ed, treeId: ids[p.row]!, x: xs[p.row]!, y: ys[p.row]! });
  }
  const unplaced = edits.filter((_, i) => !editDone[i]);
  return { placed, unplaced };
}

/** Relabels every cell of crown `from` as crown `into` (labels are row + 1). A copy: the stored grid stays as it was until the worker answers. */
export function mergeLabels(labels: Grid<Int32Array>, into: number, from: number): Grid<Int32Array> {
  const data = labels.data.slice();
  for (let i = 0; i < data.length; i++) if (data[i] === from) data[i] = into;
  return { ...labels, data };
}

/**
 * Gives a new label to the cells within `radiusCrs` of a tapped point that
 * are nearer the new top than the top of the crown they were in, and whose
 * CHM height is at least `minHeightM`. The tapped cell always joins, so an
 * added tree has at least one cell.
 */
export function addCrown(labels: Grid<Int32Array>, chm: Grid<Float32Array>, tops: { x: Float64Array; y: Float64Array }, x: number, y: number, radiusCrs: number, minHeightM: number): { labels: Grid<Int32Array>; label: number } {
  const data = labels.data.slice();
  const label = tops.x.length + 1;
  const cs = labels.cellSize;
  const c0 = Math.floor((x - labels.originX) / cs);
  const r0 = Math.floor((labels.originY - y) / cs);
  const reach = Math.ceil(radiusCrs / cs);
  for (let r = Math.max(0, r0 - reach); r <= Math.min(labels.height - 1, r0 + reach); r++) {
    for (let c = Math.max(0, c0 - reach); c <= Math.min(labels.width - 1, c0 + reach); c++) {
      const cx = labels.originX + (c + 0.5) * cs;
      const cy = labels.originY - (r + 0.5) * cs;
      const d = Math.hypot(cx - x, cy - y);
      if (d > radiusCrs) continue;
      const i = r * labels.width + c;
      const h = chm.data[i]!;
      if (!(h >= minHeightM)) continue;
      const old = data[i]!;
      if (old > 0) {
        const dOld = Math.hypot(cx - tops.x[old - 1]!, cy - tops.y[old - 1]!);
        if (dOld < d) continue;
      }
      data[i] = label;
    }
  }
  if (c0 >= 0 && c0 < labels.width && r0 >= 0 && r0 < labels.height) data[r0 * labels.width + c0] = label;
  return { labels: { ...labels, data }, label };
}

/** Tops per label for a remeasure request, with one more top appended when a tree is added. */
export function topsOf(trees: StoredTrees, extra?: { x: number; y: number }): { x: Float64Array; y: Float64Array } {
  const n = trees.count + (extra ? 1 : 0);
  const x = new Float64Array(n);
  const y = new Float64Array(n);
  x.set(trees.columns.x.subarray(0, trees.count));
  y.set(trees.columns.y.subarray(0, trees.count));
  if (extra) {
    x[n - 1] = extra.x;
    y[n - 1] = extra.y;
  }
  return { x, y };
}
