export { CAUTION } from './caution.js';
export { treesToCSV, csvText, csvNumber, type ToLonLat, type ExtraValue, type TreeExportOptions } from './csv.js';
export { treesToGeoJSON, treesToGeoJSONChunks, ringSignedArea2, type GeoJSONChunkOptions } from './geojson.js';
export { chmToGeoTIFF } from './geotiff.js';
export { buildSummaryJson, SUMMARY_FORMAT_VERSION, type SummaryInput, type OutputRecord } from './summary.js';
