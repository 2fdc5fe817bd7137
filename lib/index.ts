/** Crowntally: trees from a lidar survey. Environment-neutral entry (browser worker or Node). */
export { tally, tallyClouds, inspectInputs, remeasure, openInputs, type TallyRun } from './pipeline.js';
export { tallyTiled } from './tiles.js';
export { DEFAULT_OPTIONS, resolveOptions, type TallyOptions, type WindowPreset, type WindowTable } from './options.js';
export type { TallyResult, ProgressEvent } from './result.js';
export { CrowntallyError, AbortError, isCrowntallyError, type ErrorCode } from './errors.js';
export { blobSource, bufferSource } from './io/sources.js';
export { openPointCloud } from './io/open.js';
export { lazPerfProvider, type LazPerfProvider } from './io/laz.js';
export type { ByteSource, PointChunk, PointCloud, SurveyReadout, CrsInfo, LasHeader } from './io/types.js';
export type { Grid } from './raster/grid.js';
export { TREE_COLUMNS, treeRow, treeTableTransferables, type TreeTable, type TreeColumn, type SurveySummary, type CrownOutlines } from './trees/table.js';
export { treesToCSV, treesToGeoJSON, chmToGeoTIFF, buildSummaryJson, CAUTION } from './export/index.js';
export { makeLonLatTransform } from './crs/transform.js';
export { TallyClient } from './worker/client.js';
export { WorkerPool, type WorkerLike } from './worker/pool.js';
export type * from './worker/protocol.js';
