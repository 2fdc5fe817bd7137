import { describe, expect, it } from 'vitest';
import { evaluateDetections, type Detections } from '../../demo/evaluate.js';
import type { DemoTruth, TruthTree } from '../../demo/truth.js';

// Behaviour tests of our own scoring rules on hand-made cases (answers reasoned out by hand).

function tree(id: number, x: number, y: number, heightM: number, crownRadiusM: number, overtopped = false, visibleCrownAreaM2 = 50): TruthTree {
  return { id, group: 'broadleaf', x, y, heightM, crownRadiusM, visibleCrownAreaM2, visible: !overtopped, overtopped };
}
function truthOf(trees: TruthTree[]): DemoTruth {
  return { kind: 'park', name: 't', epsg: 32633, wkt: '', originX: 0, originY: 0, widthM: 100, heightM: 100, firstReturnsPerM2: 10, pointCount: 0, trees, visibleAreaCellM: 0.2 };
}
function det(rows: Array<[number, number, number, number]>): Detections {
  return {
    count: rows.length, x: Float64Array.from(rows.map((r) => r[0])), y: Float64Array.from(rows.map((r) => r[1])),
    heightM: Float64Array.from(rows.map((r) => r[2])), crownAreaM2: Float64Array.from(rows.map((r) => r[3])),
  };
}

describe('evaluateDetections (behaviour)', () => {
  it('scores a perfect detection set as 1', () => {
    const t = truthOf([tree(1, 10, 10, 20, 4), tree(2, 30, 10, 15, 3)]);
    const e = evaluateDetections(t, det([[10, 10, 20, 50], [30, 10, 15, 50]]));
    expect([e.precision, e.recall, e.f1, e.heightRmseM, e.medianCrownAreaErrorFraction]).toEqual([1, 1, 1, 0, 0]);
    expect([e.matched, e.falsePositives, e.missed]).toEqual([1 + 1, 0, 0]);
  });

  it('uses max(1.5 m, half the crown radius) as the reach', () => {
    // Radius 2 -> reach 1.5 m; radius 6 -> reach 3 m.
    const t = truthOf([tree(1, 10, 10, 20, 2), tree(2, 50, 10, 20, 6)]);
    const e = evaluateDetections(t, det([[11.6, 10, 20, 50], [52.9, 10, 20, 50]]));
    expect(Array.from(e.truthOfDetection)).toEqual([-1, 1]);
    expect([e.matched, e.falsePositives, e.missed]).toEqual([1, 1, 1]);
    expect(e.precision).toBe(0.5);
    expect(e.recall).toBe(0.5);
    expect(e.f1).toBe(0.5);
  });

  it('matches one-to-one, nearest pair first', () => {
    // Two tops 2 m apart (reach 2.5 m each); detection A at 0.2 m from tree 1, B at 1.0 m from tree 1 and 1.0 m from tree 2.
    const t = truthOf([tree(1, 10, 10, 20, 5), tree(2, 12, 10, 18, 5)]);
    const e = evaluateDetections(t, det([[10.2, 10, 21, 50], [11, 10, 17, 50]]));
    // Nearest first: (A, 1) at 0.2 m; then B's best free tree is 2 (1.0 m).
    expect(Array.from(e.truthOfDetection)).toEqual([0, 1]);
    expect(e.matched).toBe(2);
    expect(e.heightRmseM).toBeCloseTo(1, 12); // errors +1 and -1
    // A third detection on the same spot cannot take an already matched tree.
    const e2 = evaluateDetections(t, det([[10.2, 10, 21, 50], [11, 10, 17, 50], [10.1, 10, 20, 50]]));
    expect(Array.from(e2.truthOfDetection)).toEqual([-1, 1, 0]);
    expect(e2.falsePositives).toBe(1);
  });

  it('neither misses nor penalises overtopped trees', () => {
    const t = truthOf([tree(1, 10, 10, 20, 5), tree(2, 11.5, 10, 8, 2, true)]);
    const none = evaluateDetections(t, det([[10, 10, 20, 50]]));
    expect([none.matched, none.falsePositives, none.missed, none.recall]).toEqual([1, 0, 0, 1]);
    const both = evaluateDetections(t, det([[10, 10, 20, 50], [11.6, 10, 8, 50]]));
    expect([both.matched, both.falsePositives, both.missed, both.precision]).toEqual([1, 0, 0, 1]);
  });

  it('takes the median relative crown-area error over matched trees', () => {
    const t = truthOf([tree(1, 10, 10, 20, 4, false, 40), tree(2, 30, 10, 20, 4, false, 40), tree(3, 50, 10, 20, 4, false, 40)]);
    const e = evaluateDetections(t, det([[10, 10, 20, 44], [30, 10, 20, 30], [50, 10, 20, 80]]));
    expect(e.medianCrownAreaErrorFraction).toBeCloseTo(0.25, 12); // errors 0.1, 0.25, 1.0
  });

  it('handles no detections and rejects mismatched arrays', () => {
    const t = truthOf([tree(1, 10, 10, 20, 4)]);
    const e = evaluateDetections(t, det([]));
    expect(Number.isNaN(e.precision)).toBe(true);
    expect([e.recall, e.missed, e.matched]).toEqual([0, 1, 0]);
    expect(() => evaluateDetections(t, { ...det([]), count: 3 })).toThrow(/does not match/);
  });
});
