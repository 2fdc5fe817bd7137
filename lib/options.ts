import { CrowntallyError } from './errors.js';

/**
 * All processing options in one place. Lengths and heights are metres in the
 * names and in the values, whatever the survey's CRS unit: the pipeline
 * converts with the unit factors of the CRS read-out.
 */

/** Crown width vs height regressions of Popescu & Wynne (2004), used as treetop search windows. */
export type WindowPreset = 'deciduous' | 'pines' | 'combined';

/** A user table: window diameter (m) at tree height (m), interpolated linearly, held flat beyond the ends. */
export type WindowTable = ReadonlyArray<{ heightM: number; windowM: number }>;

export interface TallyOptions {
  /** CHM cell edge (m); 'auto' follows first-return density (see lib/raster/cellsize.ts). */
  cellSizeM: number | 'auto';
  /**
   * Lowest height (m) above ground that counts as tree. Default 2 m: below
   * that lie shrubs, hedges, cars and people, and common inventory practice
   * starts trees at 2 m.
   */
  minHeightM: number;
  /** Treetop search window: a published preset or a user table. */
  window: WindowPreset | WindowTable;
  /** A cell joins a crown only while its height is above this fraction of the crown's top height (0-1). */
  crownFloorFraction: number;
  /** A cell joins a crown only within this distance (m) of the top; 'auto' = 1.5 window diameters at the top's height, at least 3 m (lib/trees/crowns.ts). */
  crownReachM: number | 'auto';
  /**
   * Gaussian smoothing of the CHM used to find treetops (crowns and heights use the
   * unsmoothed CHM and the points), sigma in metres; 0 turns it off. Default 0.3 m: enough
   * to merge the small bumps of a rough crown surface into one top (common practice),
   * too little to merge neighbouring trees.
   */
  smoothSigmaM: number;
  /**
   * Smallest prominence (m) of a treetop: a local maximum joined to a higher one by a path that
   * never dips this far is a bump of the same crown (lib/trees/treetops.ts). 0 turns it off.
   */
  topProminenceM: number;
  /** The same as a fraction of the top's height (0-0.5); the larger of the two applies. 0 turns it off. */
  topProminenceFraction: number;
  /** Fill dropouts inside crowns (pit filling). */
  fillPits: boolean;
  /** Leave out points flagged as overlap (formats 6-10). */
  dropOverlap: boolean;
  /** Ground source: 'auto' uses class 2 where present, else the ground filter. */
  ground: 'auto' | 'class' | 'filter';
  /** Height layer thickness (m) of the vertical profiles. */
  profileLayerM: number;
  /** Memory (MiB) the decoded-point cache may take, so a LAZ file decodes once; 0 decodes twice. */
  pointCacheMiB: number;
  /** Largest number of cells a working grid may have. */
  maxGridCells: number;
}

export const DEFAULT_OPTIONS: Readonly<TallyOptions> = Object.freeze({
  cellSizeM: 'auto',
  minHeightM: 2,
  window: 'combined',
  crownFloorFraction: 0.3,
  crownReachM: 'auto',
  smoothSigmaM: 0.3,
  topProminenceM: 0,
  topProminenceFraction: 0.0125,
  fillPits: true,
  dropOverlap: true,
  ground: 'auto',
  profileLayerM: 1,
  pointCacheMiB: 512,
  maxGridCells: 64_000_000,
});

function bad(msg: string): never {
  throw new CrowntallyError('BAD_OPTIONS', msg);
}

/** Fills defaults and checks ranges; throws BAD_OPTIONS with a message naming the option. */
export function resolveOptions(partial: Partial<TallyOptions> = {}): TallyOptions {
  const o: TallyOptions = { ...DEFAULT_OPTIONS, ...stripUndefined(partial) };
  if (o.cellSizeM !== 'auto' && !(typeof o.cellSizeM === 'number' && o.cellSizeM > 0.05 && o.cellSizeM <= 50)) {
    bad(`cellSizeM must be 'auto' or a number of metres between 0.05 and 50 (got ${String(o.cellSizeM)})`);
  }
  if (!(o.minHeightM >= 0 && o.minHeightM < 100)) bad(`minHeightM must be between 0 and 100 m (got ${o.minHeightM})`);
  if (typeof o.window === 'string') {
    if (!['deciduous', 'pines', 'combined'].includes(o.window)) bad(`window must be deciduous, pines, combined or a table (got ${o.window})`);
  } else if (!Array.isArray(o.window) || o.window.length === 0) {
    bad('window table must list at least one (heightM, windowM) pair');
  } else {
    for (const p of o.window) {
      if (!(Number.isFinite(p.heightM) && Number.isFinite(p.windowM) && p.windowM > 0 && p.windowM < 200)) {
        bad(`window table entries need a finite height and a window between 0 and 200 m (got ${JSON.stringify(p)})`);
      }
    }
  }
  if (!(o.crownFloorFraction >= 0 && o.crownFloorFraction < 1)) bad(`crownFloorFraction must be in [0, 1) (got ${o.crownFloorFraction})`);
  if (o.crownReachM !== 'auto' && !(o.crownReachM > 0 && o.crownReachM <= 100)) bad(`crownReachM must be 'auto' or 0-100 m (got ${o.crownReachM})`);
  if (!(o.smoothSigmaM >= 0 && o.smoothSigmaM <= 10)) bad(`smoothSigmaM must be between 0 and 10 m (got ${o.smoothSigmaM})`);
  if (!(o.topProminenceM >= 0 && o.topProminenceM <= 10)) bad(`topProminenceM must be between 0 and 10 m (got ${o.topProminenceM})`);
  if (!(o.topProminenceFraction >= 0 && o.topProminenceFraction <= 0.5)) bad(`topProminenceFraction must be between 0 and 0.5 (got ${o.topProminenceFraction})`);
  if (!(o.profileLayerM >= 0.1 && o.profileLayerM <= 10)) bad(`profileLayerM must be between 0.1 and 10 m (got ${o.profileLayerM})`);
  if (!(o.pointCacheMiB >= 0)) bad(`pointCacheMiB must be 0 or more (got ${o.pointCacheMiB})`);
  if (!(o.maxGridCells >= 1)) bad(`maxGridCells must be positive (got ${o.maxGridCells})`);
  if (!['auto', 'class', 'filter'].includes(o.ground)) bad(`ground must be auto, class or filter (got ${o.ground})`);
  return o;
}

function stripUndefined<T extends object>(p: T): Partial<T> {
  const out: Partial<T> = {};
  for (const [k, v] of Object.entries(p)) if (v !== undefined) (out as Record<string, unknown>)[k] = v;
  return out;
}
