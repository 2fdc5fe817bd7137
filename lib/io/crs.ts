import type { CrsInfo, LasHeader, Vlr } from './types.js';

// Placeholder with the final signatures; the CRS read-out replaces the bodies.

export function unknownCrs(note = 'no CRS record in the file'): CrsInfo {
  return { epsg: null, wkt: null, proj4: null, unitM: 1, verticalUnitM: 1, unitName: 'unknown (taken as metre)', notes: [note] };
}

/** CRS read-out from the GeoKeyDirectory (34735/34736/34737) and OGC WKT (2112) records. */
export function crsFromVlrs(_vlrs: Vlr[], _header: LasHeader): CrsInfo {
  return unknownCrs();
}

/** A CRS given by the user as "EPSG:NNNN" (files without one, such as XYZ text). */
export function crsFromUserText(_text: string): CrsInfo {
  return unknownCrs();
}
