/**
 * OGC WKT (version 1) for the projected CRS of the invented surveys: WGS 84 /
 * UTM zone 33N (EPSG:32633), in metres or in US survey feet. Transverse
 * Mercator parameters of UTM (central meridian 6 zone - 183 degrees, scale
 * 0.9996, false easting 500 000 m) are common practice; the WGS 84 ellipsoid
 * (a = 6378137 m, 1/f = 298.257223563) is from the WGS 84 definition (NIMA TR8350.2).
 */

/** US survey foot in metres: 1200/3937 (NIST). */
export const US_SURVEY_FOOT_M = 1200 / 3937;

export function utmWkt(zone: number, unit: 'metre' | 'us-survey-foot' = 'metre'): string {
  const cm = zone * 6 - 183;
  const feet = unit === 'us-survey-foot';
  const toUnit = feet ? 1 / US_SURVEY_FOOT_M : 1;
  const fe = +(500000 * toUnit).toFixed(6);
  const unitWkt = feet ? `UNIT["US survey foot",${US_SURVEY_FOOT_M.toPrecision(15)},AUTHORITY["EPSG","9003"]]` : 'UNIT["metre",1,AUTHORITY["EPSG","9001"]]';
  const name = feet ? `WGS 84 / UTM zone ${zone}N (US survey feet)` : `WGS 84 / UTM zone ${zone}N`;
  const geog = 'GEOGCS["WGS 84",DATUM["WGS_1984",SPHEROID["WGS 84",6378137,298.257223563,AUTHORITY["EPSG","7030"]],AUTHORITY["EPSG","6326"]],' +
    'PRIMEM["Greenwich",0,AUTHORITY["EPSG","8901"]],UNIT["degree",0.0174532925199433,AUTHORITY["EPSG","9122"]],AUTHORITY["EPSG","4326"]]';
  const authority = feet ? '' : `,AUTHORITY["EPSG","${32600 + zone}"]`;
  return `PROJCS["${name}",${geog},PROJECTION["Transverse_Mercator"],` +
    `PARAMETER["latitude_of_origin",0],PARAMETER["central_meridian",${cm}],PARAMETER["scale_factor",0.9996],` +
    `PARAMETER["false_easting",${fe}],PARAMETER["false_northing",0],${unitWkt},AXIS["Easting",EAST],AXIS["Northing",NORTH]${authority}]`;
}
