/**
 * Carried EPSG definitions: proj4 strings for the CRSs surveys commonly use,
 * generated from their defining parameters (EPSG Geodetic Parameter Dataset)
 * so the table stays small and works with no network.
 *
 * Datums: GRS80-based realisations (NAD83, ETRS89, GDA94/2020, RGF93) are tied
 * to WGS 84 with a zero shift, as PROJ does when no grid is at hand: the
 * difference is about 1-2 m, far below a crown. OSGB 1936 and Amersfoort carry
 * their published seven-parameter Helmert shifts (a few metres of residual
 * against the national grid models).
 */

/** Datum part of a proj4 string, by short name. */
export const DATUMS = {
  wgs84: '+datum=WGS84',
  nad83: '+datum=NAD83',
  grs80: '+ellps=GRS80 +towgs84=0,0,0,0,0,0,0',
  // Ordnance Survey's Helmert approximation OSGB 1936 <-> WGS 84 (EPSG transformation 1314, from memory).
  osgb36: '+ellps=airy +towgs84=446.448,-125.157,542.06,0.15,0.247,0.842,-20.489',
  // Amersfoort <-> WGS 84 (EPSG transformation 15739, from memory).
  amersfoort: '+ellps=bessel +towgs84=565.4171,50.3319,465.5524,1.9342,-1.6677,9.1019,4.0725',
  // CH1903 / CH1903+ three-parameter shift (EPSG transformations 1753/1676, from memory).
  ch1903: '+ellps=bessel +towgs84=674.374,15.056,405.346,0,0,0,0',
  // Pseudo-Mercator: spherical formulas applied to WGS 84 lon/lat, with no datum change (the null grid says so).
  pseudo: '+a=6378137 +b=6378137 +nadgrids=@null +wktext',
} as const;
export type DatumName = keyof typeof DATUMS;

export interface CarriedCrs {
  name: string;
  /** Projection part of the proj4 string (without datum and units). */
  proj: string;
  datum: DatumName;
  /** proj4 unit name: 'm', 'ft' (international foot) or 'us-ft'. */
  units: 'm' | 'ft' | 'us-ft' | 'deg';
}

const table = new Map<number, CarriedCrs>();

function add(code: number, name: string, proj: string, datum: DatumName, units: CarriedCrs['units'] = 'm'): void {
  table.set(code, { name, proj, datum, units });
}

function utmFamily(first: number, zoneFrom: number, zoneTo: number, south: boolean, datum: DatumName, prefix: string): void {
  for (let z = zoneFrom; z <= zoneTo; z++) {
    add(first + (z - zoneFrom), `${prefix} / UTM zone ${z}${south ? 'S' : 'N'}`,
      `+proj=utm +zone=${z}${south ? ' +south' : ''}`, datum);
  }
}

// Geographic 2D.
add(4326, 'WGS 84', '+proj=longlat', 'wgs84', 'deg');
add(4269, 'NAD83', '+proj=longlat', 'nad83', 'deg');
add(4152, 'NAD83(HARN)', '+proj=longlat', 'grs80', 'deg');
add(6318, 'NAD83(2011)', '+proj=longlat', 'grs80', 'deg');
add(4258, 'ETRS89', '+proj=longlat', 'grs80', 'deg');
add(4283, 'GDA94', '+proj=longlat', 'grs80', 'deg');
add(7844, 'GDA2020', '+proj=longlat', 'grs80', 'deg');
add(4167, 'NZGD2000', '+proj=longlat', 'grs80', 'deg');
add(4171, 'RGF93', '+proj=longlat', 'grs80', 'deg');
add(4277, 'OSGB 1936', '+proj=longlat', 'osgb36', 'deg');
add(4289, 'Amersfoort', '+proj=longlat', 'amersfoort', 'deg');

// UTM families.
utmFamily(32601, 1, 60, false, 'wgs84', 'WGS 84');
utmFamily(32701, 1, 60, true, 'wgs84', 'WGS 84');
utmFamily(26901, 1, 23, false, 'nad83', 'NAD83');
utmFamily(25828, 28, 38, false, 'grs80', 'ETRS89');
utmFamily(6330, 1, 19, false, 'grs80', 'NAD83(2011)');
utmFamily(6328, 59, 60, false, 'grs80', 'NAD83(2011)');
utmFamily(7846, 46, 59, true, 'grs80', 'GDA2020 / MGA');
utmFamily(28348, 48, 58, true, 'grs80', 'GDA94 / MGA');

// National and regional grids.
add(27700, 'OSGB 1936 / British National Grid',
  '+proj=tmerc +lat_0=49 +lon_0=-2 +k=0.9996012717 +x_0=400000 +y_0=-100000', 'osgb36');
add(3857, 'WGS 84 / Pseudo-Mercator',
  '+proj=merc +lat_ts=0 +lon_0=0 +x_0=0 +y_0=0 +k=1', 'pseudo');
add(3035, 'ETRS89 / LAEA Europe', '+proj=laea +lat_0=52 +lon_0=10 +x_0=4321000 +y_0=3210000', 'grs80');
add(28992, 'Amersfoort / RD New',
  '+proj=sterea +lat_0=52.1561605555556 +lon_0=5.38763888888889 +k=0.9999079 +x_0=155000 +y_0=463000', 'amersfoort');
add(2154, 'RGF93 / Lambert-93', '+proj=lcc +lat_0=46.5 +lon_0=3 +lat_1=49 +lat_2=44 +x_0=700000 +y_0=6600000', 'grs80');
add(2193, 'NZGD2000 / NZTM 2000', '+proj=tmerc +lat_0=0 +lon_0=173 +k=0.9996 +x_0=1600000 +y_0=10000000', 'grs80');
add(2056, 'CH1903+ / LV95',
  '+proj=somerc +lat_0=46.9524055555556 +lon_0=7.43958333333333 +k_0=1 +x_0=2600000 +y_0=1200000', 'ch1903');
add(3006, 'SWEREF99 TM', '+proj=utm +zone=33', 'grs80');
add(3067, 'ETRS89 / TM35FIN(E,N)', '+proj=utm +zone=35', 'grs80');
add(6350, 'NAD83(2011) / Conus Albers', '+proj=aea +lat_0=23 +lon_0=-96 +lat_1=29.5 +lat_2=45.5 +x_0=0 +y_0=0', 'grs80');
add(5070, 'NAD83 / Conus Albers', '+proj=aea +lat_0=23 +lon_0=-96 +lat_1=29.5 +lat_2=45.5 +x_0=0 +y_0=0', 'nad83');
add(6580, 'NAD83(2011) / Texas Centric Lambert Conformal',
  '+proj=lcc +lat_0=18 +lon_0=-100 +lat_1=27.5 +lat_2=35 +x_0=1500000 +y_0=5000000', 'grs80');

/*
 * State Plane (SPCS 83) zones. Parameters are the zone's published constants;
 * false origins are in metres as proj4 wants them (a zone defined in feet
 * stores its false easting in feet: 6561666.667 US ft is 2000000.0001016 m).
 * [code, name, lat_0, lon_0, lat_1, lat_2, x_0 m, y_0 m, datum, units] for
 * Lambert zones; Transverse Mercator zones put the scale in lat_1 and null in lat_2.
 */
type SpcsRow = [number, string, number, number, number, number | null, number, number, DatumName, CarriedCrs['units']];
const SPCS: SpcsRow[] = [
  [2227, 'NAD83 / California zone 3 (ftUS)', 36.5, -120.5, 38.4333333333333, 37.0666666666667, 2000000.0001016, 500000.0001016, 'nad83', 'us-ft'],
  [26943, 'NAD83 / California zone 3', 36.5, -120.5, 38.4333333333333, 37.0666666666667, 2000000, 500000, 'nad83', 'm'],
  [2229, 'NAD83 / California zone 5 (ftUS)', 33.5, -118, 35.4666666666667, 34.0333333333333, 2000000.0001016, 500000.0001016, 'nad83', 'us-ft'],
  [26945, 'NAD83 / California zone 5', 33.5, -118, 35.4666666666667, 34.0333333333333, 2000000, 500000, 'nad83', 'm'],
  [2277, 'NAD83 / Texas Central (ftUS)', 29.6666666666667, -100.333333333333, 31.8833333333333, 30.1166666666667, 699999.9998984, 3000000, 'nad83', 'us-ft'],
  [32140, 'NAD83 / Texas South Central', 27.8333333333333, -99, 30.2833333333333, 28.3833333333333, 600000, 4000000, 'nad83', 'm'],
  [2236, 'NAD83 / Florida East (ftUS)', 24.3333333333333, -81, 0.999941177, null, 200000.0001016, 0, 'nad83', 'us-ft'],
  [2263, 'NAD83 / New York Long Island (ftUS)', 40.1666666666667, -74, 41.0333333333333, 40.6666666666667, 300000, 0, 'nad83', 'us-ft'],
  [2285, 'NAD83 / Washington North (ftUS)', 47, -120.833333333333, 48.7333333333333, 47.5, 500000.0001016, 0, 'nad83', 'us-ft'],
  [2286, 'NAD83 / Washington South (ftUS)', 45.3333333333333, -120.5, 47.3333333333333, 45.8333333333333, 500000.0001016, 0, 'nad83', 'us-ft'],
  [2269, 'NAD83 / Oregon North (ft)', 43.6666666666667, -120.5, 46, 44.3333333333333, 2500000.0001424, 0, 'nad83', 'ft'],
  [2992, 'NAD83 / Oregon GIC Lambert (ft)', 41.75, -120.5, 43, 45.5, 399999.9999984, 0, 'nad83', 'ft'],
  [2994, 'NAD83(HARN) / Oregon GIC Lambert (ft)', 41.75, -120.5, 43, 45.5, 399999.9999984, 0, 'grs80', 'ft'],
  [2232, 'NAD83 / Colorado Central (ftUS)', 37.8333333333333, -105.5, 39.75, 38.45, 914401.828803658, 304800.609601219, 'nad83', 'us-ft'],
  [2283, 'NAD83 / Virginia North (ftUS)', 37.6666666666667, -78.5, 39.2, 38.0333333333333, 3500000.0001016, 2000000.0001016, 'nad83', 'us-ft'],
  [2248, 'NAD83 / Maryland (ftUS)', 37.6666666666667, -77, 39.45, 38.3, 399999.9998984, 0, 'nad83', 'us-ft'],
];
for (const [code, name, lat0, lon0, a, b, x0, y0, datum, units] of SPCS) {
  const proj = b === null
    ? `+proj=tmerc +lat_0=${lat0} +lon_0=${lon0} +k=${a} +x_0=${x0} +y_0=${y0}`
    : `+proj=lcc +lat_0=${lat0} +lon_0=${lon0} +lat_1=${a} +lat_2=${b} +x_0=${x0} +y_0=${y0}`;
  add(code, name, proj, datum, units);
}

function assemble(c: CarriedCrs, proj: string): string {
  const units = c.units === 'deg' ? '' : ` +units=${c.units}`;
  return `${proj} ${DATUMS[c.datum]}${units} +no_defs`;
}

/** The proj4 definition of a carried EPSG code, or null when the code is not carried. */
export function epsgDefinition(code: number): string | null {
  const c = table.get(code);
  return c ? assemble(c, c.proj) : null;
}

/** Name, datum and unit facts of a carried code, or null. */
export function epsgInfo(code: number): Readonly<CarriedCrs> | null {
  return table.get(code) ?? null;
}

/** The geographic (longitude, latitude in degrees) CRS on the same datum as a carried code. */
export function epsgBaseGeographic(code: number): string | null {
  const c = table.get(code);
  if (!c) return null;
  return `+proj=longlat ${DATUMS[c.datum === 'pseudo' ? 'wgs84' : c.datum]} +no_defs`;
}

/** Every carried code, ascending. */
export function carriedEpsgCodes(): number[] {
  return [...table.keys()].sort((a, b) => a - b);
}

/** Metres per unit of a proj4 unit name. */
export const UNIT_M: Record<string, number> = { m: 1, ft: 0.3048, 'us-ft': 1200 / 3937 };
