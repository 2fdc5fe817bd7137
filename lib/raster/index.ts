export { defaultCellSizeM, MIN_AUTO_CELL_M, MAX_AUTO_CELL_M, FIRST_RETURNS_PER_CELL } from './cellsize.js';
export { SurfaceAccumulator, type SurfaceOptions, type Surfaces, type GroundPoints } from './surfaces.js';
export { tinDtm, fillNearest, type TinOptions } from './tin.js';
export { canopyHeight, canopyHeightModel, type ChmOptions, type ChmResult } from './chm.js';
export { fillPits, type PitOptions } from './pits.js';
export { gaussianSmooth } from './smooth.js';
export * from './grid.js';
