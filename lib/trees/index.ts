export { windowFunction, windowDiameterM, tableWindow, type WindowFunction } from './window.js';
export { findTreetops, discRadiusCells, type Treetops, type TreetopOptions } from './treetops.js';
export { growCrowns, type CrownOptions } from './crowns.js';
export { rejectNonTrees, type NonTreeOptions, type NonTreeResult } from './nontree.js';
export { traceOutlines, outlineArea, outlinePerimeter, outlineExtent, ringSignedArea } from './outlines.js';
export { TreeMetricsAccumulator, HEIGHT_BINS, GROUND_HEIGHT_M, type TreeMetricsOptions } from './metrics.js';
export { ProfileAccumulator, surveySummary } from './summary.js';
export * from './table.js';
