export { epsgDefinition, epsgInfo, epsgBaseGeographic, carriedEpsgCodes, UNIT_M } from './epsg.js';
export type { CarriedCrs, DatumName } from './epsg.js';
export { makeLonLatTransform, makeTransform } from './transform.js';
export type { LonLatTransform } from './transform.js';
