import { CrowntallyError } from '../lib/errors.js';
import type { DemoTruth } from './truth.js';

export interface Detections { x: Float64Array; y: Float64Array; heightM: Float64Array; crownAreaM2: Float64Array; count: number }

export interface Evaluation {
  /** matched / (matched + falsePositives). NaN when nothing was detected. */
  precision: number;
  /** matched / visible trees. NaN when the truth has no visible tree. */
  recall: number;
  f1: number;
  /** Root mean square of (detected - true) height over matched pairs (m). */
  heightRmseM: number;
  /** Median over matched visible trees of |detected area - visible area| / visible area. */
  medianCrownAreaErrorFraction: number;
  matched: number;
  falsePositives: number;
  /** Visible truth trees with no detection. */
  missed: number;
  /** Per detection: index of the matched truth tree, or -1. */
  truthOfDetection: Int32Array;
}

/**
 * Scores detected trees against the truth of an invented survey. Matching is
 * one-to-one, nearest first: every (truth, detection) pair whose distance is
 * within max(1.5 m, half the true crown radius) is a candidate; candidates
 * are taken in order of distance, each tree and detection used at most once.
 * Overtopped truth trees are not counted as missed, and a detection matched
 * to one is neither a hit nor a false positive. Coordinates in CRS metres.
 */
export function evaluateDetections(truth: DemoTruth, det: Detections): Evaluation {
  const n = det.count, m = truth.trees.length;
  if (!(Number.isInteger(n) && n >= 0 && det.x.length >= n && det.y.length >= n && det.heightM.length >= n && det.crownAreaM2.length >= n)) {
    throw new CrowntallyError('BAD_OPTIONS', `detections: count ${n} does not match the arrays`);
  }
  // Candidate pairs through a grid of truth tops (cell 15 m > the largest reach), so cost follows trees.
  const cell = 15;
  const buckets = new Map<string, number[]>();
  truth.trees.forEach((t, k) => {
    const key = `${Math.floor(t.x / cell)},${Math.floor(t.y / cell)}`;
    (buckets.get(key) ?? buckets.set(key, []).get(key)!).push(k);
  });
  const pairs: Array<{ d: number; t: number; q: number }> = [];
  for (let q = 0; q < n; q++) {
    const cx = Math.floor(det.x[q]! / cell), cy = Math.floor(det.y[q]! / cell);
    for (let a = -1; a <= 1; a++) for (let b = -1; b <= 1; b++) {
      for (const k of buckets.get(`${cx + a},${cy + b}`) ?? []) {
        const t = truth.trees[k]!;
        const d = Math.hypot(t.x - det.x[q]!, t.y - det.y[q]!);
        if (d <= Math.max(1.5, t.crownRadiusM / 2)) pairs.push({ d, t: k, q });
      }
    }
  }
  pairs.sort((p, r) => p.d - r.d || p.t - r.t || p.q - r.q);
  const tUsed = new Uint8Array(m), of = new Int32Array(n).fill(-1);
  for (const p of pairs) {
    if (tUsed[p.t] || of[p.q]! >= 0) continue;
    tUsed[p.t] = 1; of[p.q] = p.t;
  }
  let matched = 0, fp = 0, sq = 0, nh = 0;
  const areaErr: number[] = [];
  for (let q = 0; q < n; q++) {
    const k = of[q]!;
    if (k < 0) { fp++; continue; }
    const t = truth.trees[k]!;
    if (t.overtopped) continue;
    matched++;
    const dh = det.heightM[q]! - t.heightM;
    if (Number.isFinite(dh)) { sq += dh * dh; nh++; }
    if (t.visibleCrownAreaM2 > 0 && Number.isFinite(det.crownAreaM2[q]!)) areaErr.push(Math.abs(det.crownAreaM2[q]! - t.visibleCrownAreaM2) / t.visibleCrownAreaM2);
  }
  const visible = truth.trees.filter((t) => !t.overtopped).length;
  const precision = matched + fp > 0 ? matched / (matched + fp) : NaN;
  const recall = visible > 0 ? matched / visible : NaN;
  const f1 = precision + recall > 0 ? (2 * precision * recall) / (precision + recall) : precision === 0 && recall === 0 ? 0 : NaN;
  areaErr.sort((a, b) => a - b);
  const mid = areaErr.length >> 1;
  const median = areaErr.length === 0 ? NaN : areaErr.length % 2 ? areaErr[mid]! : (areaErr[mid - 1]! + areaErr[mid]!) / 2;
  return {
    precision, recall, f1, heightRmseM: nh > 0 ? Math.sqrt(sq / nh) : NaN, medianCrownAreaErrorFraction: median,
    matched, falsePositives: fp, missed: visible - matched, truthOfDetection: of,
  };
}
