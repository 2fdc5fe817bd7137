export { progressiveMorphologicalGround, pmfGroundMask, groundFromFilter, type PmfOptions } from './pmf.js';
export { squareFilter, opening } from './morphology.js';
