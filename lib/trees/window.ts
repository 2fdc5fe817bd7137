import { CrowntallyError } from '../errors.js';
import type { WindowPreset, WindowTable } from '../options.js';

/**
 * Treetop search window: diameter (m) as a function of tree height (m).
 *
 * Presets are the crown width vs height regressions of Popescu, Wynne &
 * Nelson (2002, Computers and Electronics in Agriculture 37) and Popescu &
 * Wynne (2004, PE&RS 70(5)); the crown width in metres is used as the window
 * diameter. Coefficients as commonly quoted (from memory):
 *   deciduous CW = 3.09632 + 0.00895 H^2
 *   pines     CW = 3.75105 - 0.17919 H + 0.01241 H^2
 *   combined  CW = 2.51503 + 0.00901 H^2
 * Every curve is made non-decreasing in H: a taller cell never searches a
 * smaller window. The pines parabola has its minimum at H = 0.17919 /
 * (2 * 0.01241), about 7.22 m; below that it is held at the minimum.
 */
export type WindowFunction = (heightM: number) => number;

const PINES_A = 3.75105, PINES_B = -0.17919, PINES_C = 0.01241;
const PINES_HMIN = -PINES_B / (2 * PINES_C);

function deciduous(h: number): number { const x = Math.max(0, h); return 3.09632 + 0.00895 * x * x; }
function combined(h: number): number { const x = Math.max(0, h); return 2.51503 + 0.00901 * x * x; }
function pines(h: number): number {
  const x = Math.max(PINES_HMIN, h);
  return PINES_A + PINES_B * x + PINES_C * x * x;
}

/** Linear interpolation through a user table, flat beyond its ends, made non-decreasing by a running maximum. */
export function tableWindow(table: WindowTable): WindowFunction {
  if (!Array.isArray(table) || table.length === 0) {
    throw new CrowntallyError('BAD_OPTIONS', 'window table must list at least one (heightM, windowM) pair');
  }
  for (const p of table) {
    if (!(Number.isFinite(p.heightM) && Number.isFinite(p.windowM) && p.windowM > 0)) {
      throw new CrowntallyError('BAD_OPTIONS', `window table entries need a finite height and a positive window (got ${JSON.stringify(p)})`);
    }
  }
  const sorted = [...table].sort((a, b) => a.heightM - b.heightM);
  const hs = new Float64Array(sorted.length);
  const ws = new Float64Array(sorted.length);
  let run = 0;
  for (let i = 0; i < sorted.length; i++) {
    hs[i] = sorted[i]!.heightM;
    run = Math.max(run, sorted[i]!.windowM);
    ws[i] = run;
  }
  const n = hs.length;
  return (h: number): number => {
    if (!(h > hs[0]!)) return ws[0]!;
    if (h >= hs[n - 1]!) return ws[n - 1]!;
    let lo = 0, hi = n - 1; // binary search: hs[lo] <= h < hs[hi]
    while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (hs[mid]! <= h) lo = mid; else hi = mid; }
    const span = hs[hi]! - hs[lo]!;
    if (span === 0) return ws[hi]!;
    const t = (h - hs[lo]!) / span;
    return ws[lo]! + t * (ws[hi]! - ws[lo]!);
  };
}

/**
 * The window function for a preset, a user table, or a fixed diameter (m).
 * A fixed number is for tests and for users who want one window everywhere.
 */
export function windowFunction(w: WindowPreset | WindowTable | number): WindowFunction {
  if (typeof w === 'number') {
    if (!(w > 0 && Number.isFinite(w))) throw new CrowntallyError('BAD_OPTIONS', `a fixed window must be a positive number of metres (got ${w})`);
    return () => w;
  }
  if (w === 'deciduous') return deciduous;
  if (w === 'pines') return pines;
  if (w === 'combined') return combined;
  if (Array.isArray(w)) return tableWindow(w);
  throw new CrowntallyError('BAD_OPTIONS', `window must be deciduous, pines, combined, a table or a number of metres (got ${String(w)})`);
}

/** Window diameter (m) at a height (m). */
export function windowDiameterM(w: WindowPreset | WindowTable | number, heightM: number): number {
  return windowFunction(w)(heightM);
}
