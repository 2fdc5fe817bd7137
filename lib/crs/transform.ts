import proj4 from 'proj4';
import { CrowntallyError } from '../errors.js';
import type { CrsInfo } from '../io/types.js';

/** Longitude/latitude on WGS 84 (degrees), the frame GeoJSON (RFC 7946) asks for. */
const WGS84_LONLAT = '+proj=longlat +datum=WGS84 +no_defs';

export interface LonLatTransform {
  /** File CRS coordinates (in the CRS unit, feet included) to WGS 84 longitude, latitude in degrees. */
  toLonLat(x: number, y: number): [number, number];
  /** WGS 84 longitude, latitude in degrees to file CRS coordinates. */
  fromLonLat(lon: number, lat: number): [number, number];
}

/**
 * A transformer between the survey CRS and WGS 84 longitude/latitude, built
 * from CrsInfo.proj4 (a carried EPSG definition, one built from GeoKeys, or
 * WKT). The proj4 string carries the unit (+units=ft / us-ft), so coordinates
 * go in and come out in the file's unit.
 */
export function makeLonLatTransform(crs: CrsInfo): LonLatTransform {
  if (!crs.proj4) {
    if (crs.epsg !== null) {
      throw new CrowntallyError('CRS_UNSUPPORTED',
        `EPSG:${crs.epsg} is not among the carried CRS definitions, so positions cannot be given in longitude/latitude; ` +
        'give a carried equivalent with the --crs option (for example --crs EPSG:32633) or reproject the survey first',
        { epsg: crs.epsg });
    }
    throw new CrowntallyError('CRS_UNKNOWN',
      'the survey has no usable CRS, so positions cannot be given in longitude/latitude; ' +
      'give the CRS with the --crs option, for example --crs EPSG:27700');
  }
  let conv: proj4.Converter;
  try {
    conv = proj4(crs.proj4, WGS84_LONLAT);
  } catch (e) {
    throw new CrowntallyError('CRS_UNSUPPORTED',
      `the survey CRS could not be set up for reprojection (${e instanceof Error ? e.message : String(e)}); ` +
      'give a carried EPSG code with the --crs option', { proj4: crs.proj4 });
  }
  return {
    toLonLat(x, y) {
      const r = conv.forward([x, y]);
      return [r[0]!, r[1]!];
    },
    fromLonLat(lon, lat) {
      const r = conv.inverse([lon, lat]);
      return [r[0]!, r[1]!];
    },
  };
}

/** Converter between two proj4 definitions (x, y in each CRS's own unit). */
export function makeTransform(fromDef: string, toDef: string): (x: number, y: number) => [number, number] {
  let conv: proj4.Converter;
  try {
    conv = proj4(fromDef, toDef);
  } catch (e) {
    throw new CrowntallyError('CRS_UNSUPPORTED',
      `a CRS definition could not be read (${e instanceof Error ? e.message : String(e)}); give a carried EPSG code with the --crs option`);
  }
  return (x, y) => {
    const r = conv.forward([x, y]);
    return [r[0]!, r[1]!];
  };
}
