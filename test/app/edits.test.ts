import { describe, expect, it } from 'vitest';
import { addCrown, mergeLabels, reattachEdits } from '../../app/src/edits.js';
import type { EditRecord, StoredTrees } from '../../app/src/store.js';
import { emptyColumns } from '../../lib/trees/table.js';

// Behaviour of the correction bookkeeping on small hand-made tables (common practice: nearest-neighbour matching within a tolerance).

function table(points: [number, number][]): StoredTrees {
  const columns = emptyColumns(points.length);
  points.forEach(([x, y], i) => { columns.tree_id[i] = 100 + i; columns.x[i] = x; columns.y[i] = y; });
  return { count: points.length, columns, profileLayerM: 1, profileLayers: 1, profiles: new Uint32Array(points.length), returnHistogram: new Uint32Array(points.length * 15), hasReturns: true, hasRgb: false };
}
const edit = (key: string, x: number, y: number, extra: Partial<EditRecord> = {}): EditRecord => ({ projectId: 'p', key, x, y, treeId: 1, updatedAt: 0, ...extra });

describe('corrections', () => {
  it('re-attaches edits to the nearest new top, one edit per tree, and lists the rest', () => {
    const t = table([[0, 0], [10, 0], [20.5, 0]]);
    const r = reattachEdits(t, [edit('a', 0.4, 0, { note: 'a' }), edit('b', 0.1, 0.1, { note: 'b' }), edit('c', 20, 0, { added: true }), edit('d', 50, 50)], 1);
    const byKey = new Map(r.placed.map((e) => [e.key, e]));
    expect(byKey.get('b')!.treeId).toBe(100); // the nearer edit wins the tree
    expect(byKey.get('c')!.treeId).toBe(102);
    expect(byKey.get('c')!.added).toBe(true);
    expect(r.unplaced.map((e) => e.key).sort()).toEqual(['a', 'd']);
  });

  it('merging relabels one crown into another without touching the stored grid', () => {
    const g = { width: 3, height: 1, cellSize: 1, originX: 0, originY: 1, data: new Int32Array([1, 2, 2]) };
    const m = mergeLabels(g, 1, 2);
    expect(Array.from(m.data)).toEqual([1, 1, 1]);
    expect(Array.from(g.data)).toEqual([1, 2, 2]);
  });

  it('an added crown takes nearby tall cells closer to it than to their old top', () => {
    const labels = { width: 5, height: 1, cellSize: 1, originX: 0, originY: 1, data: new Int32Array([1, 1, 1, 1, 0]) };
    const chm = { ...labels, data: new Float32Array([9, 9, 9, 9, 1]) };
    const tops = { x: new Float64Array([0.5]), y: new Float64Array([0.5]) };
    const { labels: out, label } = addCrown(labels, chm, tops, 3.5, 0.5, 1.5, 2);
    expect(label).toBe(2);
    // cell 4 is below the minimum height; cell 1 is nearer the old top.
    expect(Array.from(out.data)).toEqual([1, 1, 2, 2, 0]);
  });
});
