export { progressiveMorphologicalGround, pmfGroundMask, type PmfOptions } from './pmf.js';
export { squareFilter, opening } from './morphology.js';
