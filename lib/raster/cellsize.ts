import { CrowntallyError } from '../errors.js';

/** Smallest and largest automatic cell edge, metres. */
export const MIN_AUTO_CELL_M = 0.25;
export const MAX_AUTO_CELL_M = 2;
/** First returns a cell should hold on average for its highest return to sit on the canopy. */
export const FIRST_RETURNS_PER_CELL = 4;

/**
 * Default CHM cell edge (metres) from first-return density (returns per m2).
 *
 * Rule (common practice): a cell should hold several first returns, about 4,
 * so that its highest return is a canopy hit and not a gap between pulses:
 *   cell = sqrt(4 / density),
 * rounded to the nearest 0.25 m step and clamped to [0.25, 2] m. A density of
 * 0 (or no first returns) gives the coarsest cell, 2 m.
 */
export function defaultCellSizeM(firstReturnDensityPerM2: number): number {
  const d = firstReturnDensityPerM2;
  if (typeof d !== 'number' || Number.isNaN(d) || d < 0) {
    throw new CrowntallyError('BAD_OPTIONS', `first-return density must be a number of returns per m2, 0 or more (got ${String(d)})`);
  }
  if (d === 0) return MAX_AUTO_CELL_M;
  const raw = Math.sqrt(FIRST_RETURNS_PER_CELL / d);
  const stepped = Math.round(raw / 0.25) * 0.25;
  return Math.min(MAX_AUTO_CELL_M, Math.max(MIN_AUTO_CELL_M, stepped));
}
