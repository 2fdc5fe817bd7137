import type { CrsInfo, SurveyReadout } from './io/types.js';
import type { TallyOptions } from './options.js';
import type { Grid } from './raster/grid.js';
import type { SurveySummary, TreeTable } from './trees/table.js';

/** Everything one run produces. All arrays are transferable. */
export interface TallyResult {
  readout: SurveyReadout;
  crs: CrsInfo;
  /** Options as used, `cellSizeM` resolved to a number. */
  options: TallyOptions & { cellSizeM: number };
  /** Canopy height model, metres. */
  chm: Grid;
  /** Ground model, metres (elevation in the file's vertical datum, converted to metres). */
  dtm: Grid;
  /** Crown label per CHM cell: 0 = no crown, k = row k-1 of the tree table. */
  labels: Grid<Int32Array>;
  trees: TreeTable;
  summary: SurveySummary;
  /** Things the user should know (no ground class, low density, buildings removed, ...). */
  warnings: string[];
}

export interface ProgressEvent {
  /** Stage name: 'read', 'ground', 'dtm', 'chm', 'treetops', 'crowns', 'metrics', 'outlines', 'export'. */
  stage: string;
  /** Fraction of the whole job done, 0-1. */
  fraction: number;
  pointsRead: number;
  pointsTotal: number;
}
