import type { SurveyReadout } from './types.js';

/**
 * One read-out for several tiles of one survey: counts add up, bounds join,
 * density is first returns over the summed measured areas (tiles of a
 * survey do not overlap).
 */
export function mergeReadouts(rs: SurveyReadout[]): SurveyReadout {
  if (rs.length === 1) return rs[0]!;
  const first = rs[0]!;
  const add = (a: Record<string, number>, b: Record<string, number>) => { for (const [k, v] of Object.entries(b)) a[k] = (a[k] ?? 0) + v; };
  const classes: Record<string, number> = {}, returns: Record<string, number> = {}, classNames: Record<string, string> = {};
  let points = 0, firstReturns = 0, area = 0, skipped = 0;
  const bounds = { ...first.bounds };
  const warnings = new Set<string>();
  for (const r of rs) {
    add(classes, r.classes); add(returns, r.returns); Object.assign(classNames, r.classNames);
    points += r.points; firstReturns += r.firstReturns; area += r.densityAreaM2; skipped += r.skippedLines ?? 0;
    bounds.minX = Math.min(bounds.minX, r.bounds.minX); bounds.minY = Math.min(bounds.minY, r.bounds.minY); bounds.minZ = Math.min(bounds.minZ, r.bounds.minZ);
    bounds.maxX = Math.max(bounds.maxX, r.bounds.maxX); bounds.maxY = Math.max(bounds.maxY, r.bounds.maxY); bounds.maxZ = Math.max(bounds.maxZ, r.bounds.maxZ);
    for (const w of r.warnings) warnings.add(w);
  }
  const density = area > 0 ? firstReturns / area : 0;
  // The quality level follows density, so take the level of the file whose density is nearest the merged one.
  const nearest = rs.reduce((a, b) => (Math.abs(b.firstReturnDensityPerM2 - density) < Math.abs(a.firstReturnDensityPerM2 - density) ? b : a));
  return {
    ...first,
    name: rs.map((r) => r.name).join(' + '),
    points, bounds, classes, classNames, returns, firstReturns,
    firstReturnDensityPerM2: density, densityAreaM2: area,
    qualityLevel: nearest.qualityLevel, qualityNote: nearest.qualityNote,
    hasRgb: rs.every((r) => r.hasRgb), hasGpsTime: rs.every((r) => r.hasGpsTime),
    looksPhotogrammetric: rs.some((r) => r.looksPhotogrammetric),
    photogrammetricReason: rs.map((r) => r.photogrammetricReason).filter(Boolean)[0] ?? '',
    ...(skipped ? { skippedLines: skipped } : {}),
    warnings: [...warnings],
  };
}
