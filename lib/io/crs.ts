import proj4 from 'proj4';
import { CrowntallyError } from '../errors.js';
import { DATUMS, UNIT_M, epsgDefinition, epsgInfo } from '../crs/epsg.js';
import type { CrsInfo, LasHeader, Vlr } from './types.js';

/*
 * CRS read-out. LAS (ASPRS LAS 1.4 R15, section 2.5) stores the CRS either as
 * a GeoTIFF key directory (OGC GeoTIFF 1.1) in three VLRs of user
 * "LASF_Projection" (34735 keys, 34736 doubles, 34737 ascii) or as OGC WKT
 * (record 2112, a VLR or, in 1.4, an EVLR).
 */

export const GEOKEY_DIRECTORY = 34735;
export const GEOKEY_DOUBLES = 34736;
export const GEOKEY_ASCII = 34737;
export const WKT_RECORD = 2112;

/** GeoKey ids used here (OGC GeoTIFF 1.1, table of GeoKeys). */
export const GeoKey = {
  ModelType: 1024,
  GeographicType: 2048,
  GeogGeodeticDatum: 2050,
  GeogAngularUnits: 2054,
  GeogEllipsoid: 2056,
  GeogSemiMajorAxis: 2057,
  GeogSemiMinorAxis: 2058,
  GeogInvFlattening: 2059,
  GeogPrimeMeridianLong: 2061,
  ProjectedCSType: 3072,
  ProjCoordTrans: 3075,
  ProjLinearUnits: 3076,
  ProjLinearUnitSize: 3077,
  ProjStdParallel1: 3078,
  ProjStdParallel2: 3079,
  ProjNatOriginLong: 3080,
  ProjNatOriginLat: 3081,
  ProjFalseEasting: 3082,
  ProjFalseNorthing: 3083,
  ProjFalseOriginLong: 3084,
  ProjFalseOriginLat: 3085,
  ProjFalseOriginEasting: 3086,
  ProjFalseOriginNorthing: 3087,
  ProjCenterLong: 3088,
  ProjCenterLat: 3089,
  ProjCenterEasting: 3090,
  ProjCenterNorthing: 3091,
  ProjScaleAtNatOrigin: 3092,
  ProjScaleAtCenter: 3093,
  VerticalCSType: 4096,
  VerticalUnits: 4099,
} as const;

/** "user-defined" in GeoTIFF code space. */
export const USER_DEFINED = 32767;

/** Linear unit codes (EPSG unit of measure) with metres per unit; foot lengths from NIST. */
export const LINEAR_UNITS: Record<number, { m: number; name: string; proj4: string }> = {
  9001: { m: 1, name: 'metre', proj4: 'm' },
  9002: { m: 0.3048, name: 'international foot', proj4: 'ft' },
  9003: { m: 1200 / 3937, name: 'US survey foot', proj4: 'us-ft' },
};

const UNIT_NAMES: Record<string, string> = { m: 'metre', ft: 'international foot', 'us-ft': 'US survey foot' };

/** Ellipsoid codes to proj4 names (EPSG dataset). */
const ELLIPSOIDS: Record<number, string> = {
  7030: 'WGS84', 7019: 'GRS80', 7001: 'airy', 7004: 'bessel', 7022: 'intl', 7008: 'clrk66',
};

/** Geodetic datum codes to the carried datum parts (see lib/crs/epsg.ts for the shifts). */
const DATUM_CODES: Record<number, keyof typeof DATUMS> = {
  6326: 'wgs84', 6269: 'nad83', 6152: 'grs80', 1116: 'grs80', 6258: 'grs80', 6283: 'grs80',
  1168: 'grs80', 6171: 'grs80', 6167: 'grs80', 6277: 'osgb36', 6289: 'amersfoort',
};

/** Geographic CRS codes to datum parts. */
const GEOG_CODES: Record<number, keyof typeof DATUMS> = {
  4326: 'wgs84', 4269: 'nad83', 4152: 'grs80', 6318: 'grs80', 4258: 'grs80', 4283: 'grs80',
  7844: 'grs80', 4171: 'grs80', 4167: 'grs80', 4277: 'osgb36', 4289: 'amersfoort',
};

export function unknownCrs(note = 'no CRS record in the file'): CrsInfo {
  return { epsg: null, wkt: null, proj4: null, unitM: 1, verticalUnitM: 1, unitName: 'unknown (taken as metre)', notes: [note] };
}

/** One GeoKey value: a short, a run of doubles or a string. */
type KeyValue = number | number[] | string;

export interface GeoKeySet {
  directory: Uint16Array;
  doubles: Float64Array;
  ascii: string;
  keys: Map<number, KeyValue>;
}

function findVlr(vlrs: Vlr[], recordId: number, userId?: string): Vlr | undefined {
  return vlrs.find((v) => v.recordId === recordId && (userId === undefined || v.userId === userId));
}

/** Parses the GeoKeyDirectory VLRs; null when the file has none. Bad entries are skipped with a note. */
export function readGeoKeys(vlrs: Vlr[], notes: string[]): GeoKeySet | null {
  const dirVlr = findVlr(vlrs, GEOKEY_DIRECTORY, 'LASF_Projection') ?? findVlr(vlrs, GEOKEY_DIRECTORY);
  if (!dirVlr) return null;
  const d = dirVlr.data;
  const nShorts = Math.floor(d.byteLength / 2);
  const dv = new DataView(d.buffer, d.byteOffset, d.byteLength);
  const directory = new Uint16Array(nShorts);
  for (let i = 0; i < nShorts; i++) directory[i] = dv.getUint16(i * 2, true);

  const dblVlr = findVlr(vlrs, GEOKEY_DOUBLES, 'LASF_Projection') ?? findVlr(vlrs, GEOKEY_DOUBLES);
  const nd = dblVlr ? Math.floor(dblVlr.data.byteLength / 8) : 0;
  const doubles = new Float64Array(nd);
  if (dblVlr) {
    const ddv = new DataView(dblVlr.data.buffer, dblVlr.data.byteOffset, dblVlr.data.byteLength);
    for (let i = 0; i < nd; i++) doubles[i] = ddv.getFloat64(i * 8, true);
  }
  const ascVlr = findVlr(vlrs, GEOKEY_ASCII, 'LASF_Projection') ?? findVlr(vlrs, GEOKEY_ASCII);
  let ascii = '';
  if (ascVlr) for (const b of ascVlr.data) ascii += String.fromCharCode(b);

  const keys = new Map<number, KeyValue>();
  if (nShorts < 4) {
    notes.push('GeoKey directory is shorter than its 4-value header; CRS keys ignored');
    return { directory, doubles, ascii, keys };
  }
  let count = directory[3]!;
  if (4 + count * 4 > nShorts) {
    notes.push(`GeoKey directory lists ${count} keys but holds only ${Math.floor((nShorts - 4) / 4)}; read those`);
    count = Math.floor((nShorts - 4) / 4);
  }
  for (let k = 0; k < count; k++) {
    const o = 4 + k * 4;
    const id = directory[o]!, loc = directory[o + 1]!, n = directory[o + 2]!, val = directory[o + 3]!;
    if (loc === 0) keys.set(id, val);
    else if (loc === GEOKEY_DOUBLES) {
      if (val + n <= nd && n > 0) keys.set(id, n === 1 ? doubles[val]! : Array.from(doubles.subarray(val, val + n)));
      else notes.push(`GeoKey ${id} points past the doubles record; ignored`);
    } else if (loc === GEOKEY_ASCII) {
      if (val + n <= ascii.length) keys.set(id, ascii.slice(val, val + n).replace(/[|\0]+$/, ''));
      else notes.push(`GeoKey ${id} points past the ascii record; ignored`);
    } else notes.push(`GeoKey ${id} stored in unknown tag ${loc}; ignored`);
  }
  return { directory, doubles, ascii, keys };
}

function num(keys: Map<number, KeyValue>, id: number): number | undefined {
  const v = keys.get(id);
  if (typeof v === 'number') return v;
  if (Array.isArray(v)) return v[0];
  return undefined;
}

function firstNum(keys: Map<number, KeyValue>, ...ids: number[]): number | undefined {
  for (const id of ids) {
    const v = num(keys, id);
    if (v !== undefined && Number.isFinite(v)) return v;
  }
  return undefined;
}

/** The datum/ellipsoid part of a proj4 string from the geographic keys, or null. */
function datumFromKeys(keys: Map<number, KeyValue>, notes: string[]): string | null {
  const geog = num(keys, GeoKey.GeographicType);
  if (geog !== undefined && GEOG_CODES[geog]) return DATUMS[GEOG_CODES[geog]];
  const datum = num(keys, GeoKey.GeogGeodeticDatum);
  if (datum !== undefined && DATUM_CODES[datum]) return DATUMS[DATUM_CODES[datum]];
  const pm = num(keys, GeoKey.GeogPrimeMeridianLong);
  if (pm !== undefined && pm !== 0) {
    notes.push(`prime meridian ${pm} is not Greenwich; not supported`);
    return null;
  }
  const ell = num(keys, GeoKey.GeogEllipsoid);
  let part: string | null = null;
  if (ell !== undefined && ELLIPSOIDS[ell]) part = `+ellps=${ELLIPSOIDS[ell]}`;
  else {
    const a = num(keys, GeoKey.GeogSemiMajorAxis);
    const rf = num(keys, GeoKey.GeogInvFlattening);
    const b = num(keys, GeoKey.GeogSemiMinorAxis);
    if (a && rf) part = `+a=${a} +rf=${rf}`;
    else if (a && b) part = `+a=${a} +b=${b}`;
  }
  if (part === null) {
    notes.push('the geographic keys give no ellipsoid; cannot build a projection');
    return null;
  }
  notes.push('datum not among the carried ones: taken as coincident with WGS 84 (error up to the datum shift, which can be hundreds of metres)');
  return `${part} +towgs84=0,0,0,0,0,0,0`;
}

/** A proj4 string for a user-defined projection (ProjectedCSType 32767) from its GeoKeys, or null. */
function projFromKeys(keys: Map<number, KeyValue>, unit: { m: number; proj4: string | null }, notes: string[]): string | null {
  const ct = num(keys, GeoKey.ProjCoordTrans);
  if (ct === undefined) {
    notes.push('user-defined projection without a ProjCoordTransGeoKey (3075); cannot build it');
    return null;
  }
  const ang = num(keys, GeoKey.GeogAngularUnits) ?? 9102;
  // Angular parameters are in the geographic angular unit (GeoTIFF 1.1): degree 9102, radian 9101.
  const toDeg = ang === 9102 ? 1 : ang === 9101 ? 180 / Math.PI : NaN;
  if (!Number.isFinite(toDeg)) {
    notes.push(`angular unit code ${ang} is not supported (degree or radian only)`);
    return null;
  }
  // 15 significant digits: drops float noise of the unit conversion (399999.99999999994 -> 400000).
  const tidy = (v: number): number => Number(v.toPrecision(15));
  const deg = (...ids: number[]): number => tidy((firstNum(keys, ...ids) ?? 0) * toDeg);
  // False eastings/northings are in the projection's linear unit; proj4 wants metres.
  const lin = (...ids: number[]): number => tidy((firstNum(keys, ...ids) ?? 0) * unit.m);
  const k = firstNum(keys, GeoKey.ProjScaleAtNatOrigin, GeoKey.ProjScaleAtCenter) ?? 1;
  const K = GeoKey;
  let p: string;
  switch (ct) {
    case 1: // Transverse Mercator
      p = `+proj=tmerc +lat_0=${deg(K.ProjNatOriginLat)} +lon_0=${deg(K.ProjNatOriginLong)} +k=${k} ` +
        `+x_0=${lin(K.ProjFalseEasting)} +y_0=${lin(K.ProjFalseNorthing)}`;
      break;
    case 7: // Mercator
      p = keys.has(K.ProjStdParallel1)
        ? `+proj=merc +lat_ts=${deg(K.ProjStdParallel1)} +lon_0=${deg(K.ProjNatOriginLong)} `
        : `+proj=merc +lon_0=${deg(K.ProjNatOriginLong)} +k=${k} `;
      p += `+x_0=${lin(K.ProjFalseEasting)} +y_0=${lin(K.ProjFalseNorthing)}`;
      break;
    case 8: // Lambert conformal conic, 2 standard parallels
      p = `+proj=lcc +lat_1=${deg(K.ProjStdParallel1)} +lat_2=${deg(K.ProjStdParallel2)} ` +
        `+lat_0=${deg(K.ProjFalseOriginLat, K.ProjNatOriginLat)} +lon_0=${deg(K.ProjFalseOriginLong, K.ProjNatOriginLong)} ` +
        `+x_0=${lin(K.ProjFalseOriginEasting, K.ProjFalseEasting)} +y_0=${lin(K.ProjFalseOriginNorthing, K.ProjFalseNorthing)}`;
      break;
    case 9: { // Lambert conformal conic, 1 standard parallel
      const lat0 = deg(K.ProjNatOriginLat);
      p = `+proj=lcc +lat_1=${lat0} +lat_0=${lat0} +lon_0=${deg(K.ProjNatOriginLong)} +k_0=${k} ` +
        `+x_0=${lin(K.ProjFalseEasting)} +y_0=${lin(K.ProjFalseNorthing)}`;
      break;
    }
    case 10: // Lambert azimuthal equal area
      p = `+proj=laea +lat_0=${deg(K.ProjCenterLat, K.ProjNatOriginLat)} +lon_0=${deg(K.ProjCenterLong, K.ProjNatOriginLong)} ` +
        `+x_0=${lin(K.ProjFalseEasting, K.ProjCenterEasting)} +y_0=${lin(K.ProjFalseNorthing, K.ProjCenterNorthing)}`;
      break;
    case 11: // Albers equal area
      p = `+proj=aea +lat_1=${deg(K.ProjStdParallel1)} +lat_2=${deg(K.ProjStdParallel2)} ` +
        `+lat_0=${deg(K.ProjNatOriginLat, K.ProjFalseOriginLat)} +lon_0=${deg(K.ProjNatOriginLong, K.ProjFalseOriginLong)} ` +
        `+x_0=${lin(K.ProjFalseEasting, K.ProjFalseOriginEasting)} +y_0=${lin(K.ProjFalseNorthing, K.ProjFalseOriginNorthing)}`;
      break;
    case 16: // Oblique stereographic
      p = `+proj=sterea +lat_0=${deg(K.ProjNatOriginLat)} +lon_0=${deg(K.ProjNatOriginLong)} +k=${k} ` +
        `+x_0=${lin(K.ProjFalseEasting)} +y_0=${lin(K.ProjFalseNorthing)}`;
      break;
    default:
      notes.push(`projection method code ${ct} (ProjCoordTransGeoKey) is not supported`);
      return null;
  }
  const datum = datumFromKeys(keys, notes);
  if (datum === null) return null;
  const units = unit.proj4 ? `+units=${unit.proj4}` : `+to_meter=${unit.m}`;
  return `${p} ${datum} ${units} +no_defs`;
}

/** Linear unit of the WKT's projected CRS (the last UNIT or LENGTHUNIT in it that is not angular). */
function wktLinearUnit(wkt: string): { m: number; name: string } | null {
  if (!/^\s*(PROJCS|PROJCRS|PROJECTEDCRS|COMPD_CS|COMPOUNDCRS)/i.test(wkt)) return null;
  const head = wkt.replace(/VERT_CS\[.*$|VERTCRS\[.*$/is, '');
  let found: { m: number; name: string } | null = null;
  for (const m of head.matchAll(/(?:LENGTHUNIT|UNIT)\["([^"]+)"\s*,\s*([0-9.eE+-]+)/g)) {
    const name = m[1]!, f = Number(m[2]);
    if (/degree|radian|grad|arc/i.test(name) || !(f > 0)) continue;
    found = { m: f, name };
  }
  return found;
}

/** EPSG code of the WKT's top-level CRS (its last AUTHORITY/ID), or null. */
function wktEpsg(wkt: string): number | null {
  const t = wkt.trim();
  const m = /(?:AUTHORITY|ID)\["EPSG"\s*,\s*"?(\d+)"?\]\]\s*$/i.exec(t);
  return m ? Number(m[1]) : null;
}

function proj4Accepts(def: string): boolean {
  try {
    proj4(def, '+proj=longlat +datum=WGS84 +no_defs');
    return true;
  } catch {
    return false;
  }
}

function unitOfDefinition(def: string): string | null {
  return /\+units=(\S+)/.exec(def)?.[1] ?? null;
}

function withUnits(def: string, unitProj4: string): string {
  return /\+units=\S+/.test(def) ? def.replace(/\+units=\S+/, `+units=${unitProj4}`) : def.replace('+no_defs', `+units=${unitProj4} +no_defs`);
}

/** CRS read-out from the GeoKeyDirectory (34735/34736/34737) and OGC WKT (2112) records. */
export function crsFromVlrs(vlrs: Vlr[], header: LasHeader): CrsInfo {
  const notes: string[] = [];
  const wktVlr = findVlr(vlrs, WKT_RECORD, 'LASF_Projection') ?? findVlr(vlrs, WKT_RECORD);
  let wkt: string | null = null;
  if (wktVlr) {
    let s = '';
    for (const b of wktVlr.data) { if (b === 0) break; s += String.fromCharCode(b); }
    wkt = s.trim() || null;
  }
  const gk = readGeoKeys(vlrs, notes);
  // LAS 1.4 global encoding bit 4: the CRS is WKT; GeoKeys, if any, are then not authoritative.
  const wktBit = header.versionMajor === 1 && header.versionMinor >= 4 && (header.globalEncoding & 16) !== 0;
  if (!gk && !wkt) return unknownCrs('no CRS record in the file (neither GeoKeys nor WKT)');

  const keys = gk && !(wktBit && wkt) ? gk.keys : new Map<number, KeyValue>();
  if (gk && wktBit && wkt) notes.push('LAS 1.4 WKT flag set: CRS read from the WKT record, GeoKeys ignored');

  // Horizontal unit: ProjLinearUnits, else the EPSG definition's, else the WKT's.
  let unit: { m: number; name: string; proj4: string | null } | null = null;
  const unitCode = num(keys, GeoKey.ProjLinearUnits);
  if (unitCode !== undefined) {
    if (LINEAR_UNITS[unitCode]) unit = LINEAR_UNITS[unitCode];
    else if (unitCode === USER_DEFINED && (num(keys, GeoKey.ProjLinearUnitSize) ?? 0) > 0) {
      const m = num(keys, GeoKey.ProjLinearUnitSize)!;
      unit = { m, name: `user-defined unit of ${m} m`, proj4: null };
    } else notes.push(`linear unit code ${unitCode} is not known`);
  }

  const projCode = num(keys, GeoKey.ProjectedCSType);
  const geogCode = num(keys, GeoKey.GeographicType);
  const modelType = num(keys, GeoKey.ModelType);
  let epsg: number | null = null;
  if (projCode !== undefined && projCode > 0 && projCode < USER_DEFINED) epsg = projCode;
  else if (modelType === 2 && geogCode !== undefined && geogCode > 0 && geogCode < USER_DEFINED) epsg = geogCode;
  if (epsg === null && wkt) epsg = wktEpsg(wkt);

  let def: string | null = null;
  if (epsg !== null) {
    def = epsgDefinition(epsg);
    if (def) {
      notes.push(`EPSG:${epsg} (${epsgInfo(epsg)!.name}) from ${keys.size ? 'GeoKeys' : 'WKT'}`);
      const defUnit = unitOfDefinition(def);
      if (unit && unit.proj4 && defUnit && defUnit !== unit.proj4) {
        notes.push(`the file's linear unit (${unit.name}) differs from the unit of EPSG:${epsg} (${UNIT_NAMES[defUnit] ?? defUnit}); the file's unit is used`);
        def = withUnits(def, unit.proj4);
      }
      if (!unit && defUnit && UNIT_M[defUnit] !== undefined) unit = { m: UNIT_M[defUnit]!, name: UNIT_NAMES[defUnit]!, proj4: defUnit };
    } else notes.push(`EPSG:${epsg} is not among the carried definitions`);
  }
  if (!def && projCode === USER_DEFINED) {
    def = projFromKeys(keys, unit ?? { m: 1, proj4: 'm' }, notes);
    if (def) notes.push('user-defined projection: proj4 definition built from the GeoKeys');
  }
  if (wkt) {
    const wu = wktLinearUnit(wkt);
    if (!unit && wu) {
      const code = Object.values(LINEAR_UNITS).find((u) => Math.abs(u.m - wu.m) < 1e-12);
      unit = code ?? { m: wu.m, name: wu.name, proj4: null };
    }
    if (!def) {
      if (proj4Accepts(wkt)) {
        def = wkt;
        notes.push('proj4 definition taken from the WKT record');
      } else notes.push('the WKT record could not be turned into a projection');
    }
  }
  if (!def && modelType === 2 && epsg === null) {
    const datum = datumFromKeys(keys, notes);
    if (datum) def = `+proj=longlat ${datum} +no_defs`;
  }
  if (!def) notes.push('no usable projection: give the CRS with the --crs option');
  if (modelType === 2 || (epsg !== null && epsgInfo(epsg)?.units === 'deg')) {
    notes.push('geographic CRS: x and y are degrees, not lengths; reproject the survey before measuring crowns');
  }
  if (!unit) {
    unit = { m: 1, name: 'metre (assumed)', proj4: 'm' };
    notes.push('no linear unit recorded: taken as metre');
  }

  let verticalUnitM = unit.m;
  const vCode = num(keys, GeoKey.VerticalUnits);
  if (vCode !== undefined && LINEAR_UNITS[vCode]) verticalUnitM = LINEAR_UNITS[vCode].m;
  else if (vCode !== undefined) notes.push(`vertical unit code ${vCode} is not known: vertical unit taken as the horizontal unit (${unit.name})`);
  else notes.push(`no vertical unit key (4099): vertical unit taken as the horizontal unit (${unit.name})`);

  const info: CrsInfo = { epsg, wkt, proj4: def, unitM: unit.m, verticalUnitM, unitName: unit.name, notes };
  if (gk) info.geoKeys = { directory: gk.directory, doubles: gk.doubles, ascii: gk.ascii };
  return info;
}

/** A CRS given by the user as "EPSG:NNNN" (files without one, such as XYZ text). */
export function crsFromUserText(text: string): CrsInfo {
  const t = text.trim();
  const m = /^(?:EPSG:)?(\d{4,6})$/i.exec(t);
  if (!m) {
    throw new CrowntallyError('BAD_OPTIONS',
      `the CRS "${t.slice(0, 60)}" is not understood; give it as an EPSG code with the --crs option, for example --crs EPSG:27700`);
  }
  const code = Number(m[1]);
  const def = epsgDefinition(code);
  if (!def) {
    return { epsg: code, wkt: null, proj4: null, unitM: 1, verticalUnitM: 1, unitName: 'unknown (taken as metre)',
      notes: [`EPSG:${code} given by the user is not among the carried definitions: no reprojection; units taken as metre`] };
  }
  const info = epsgInfo(code)!;
  const u = info.units === 'deg' ? 'm' : info.units;
  const notes = [`EPSG:${code} (${info.name}) given by the user`];
  if (info.units === 'deg') notes.push('geographic CRS: x and y are degrees, not lengths; reproject the survey before measuring crowns');
  notes.push(`vertical unit taken as the horizontal unit (${info.units === 'deg' ? 'metre' : UNIT_NAMES[u]})`);
  return { epsg: code, wkt: null, proj4: def, unitM: UNIT_M[u]!, verticalUnitM: UNIT_M[u]!, unitName: info.units === 'deg' ? 'degree (heights in metres)' : UNIT_NAMES[u]!, notes };
}
