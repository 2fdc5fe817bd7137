import type { Bounds, PointChunk, PointCloud, ReadOptions, SurveyReadout } from './types.js';

/*
 * Survey read-out, built in one streaming pass: counts by class and return,
 * first-return density, the quality level that density meets, colour and
 * time presence, and whether the cloud looks photogrammetric.
 */

/** ASPRS standard point classes (ASPRS LAS 1.4 R15, table of ASPRS standard point classes). */
export const ASPRS_CLASS_NAMES: Readonly<Record<number, string>> = Object.freeze({
  0: 'never classified', 1: 'unclassified', 2: 'ground', 3: 'low vegetation', 4: 'medium vegetation',
  5: 'high vegetation', 6: 'building', 7: 'low point (noise)', 8: 'reserved (model key-point, legacy)', 9: 'water',
  10: 'rail', 11: 'road surface', 12: 'reserved (overlap, legacy)', 13: 'wire guard (shield)', 14: 'wire conductor (phase)',
  15: 'transmission tower', 16: 'wire-structure connector (insulator)', 17: 'bridge deck', 18: 'high noise',
  19: 'overhead structure', 20: 'ignored ground', 21: 'snow', 22: 'temporal exclusion',
});

export function asprsClassName(code: number): string {
  const n = ASPRS_CLASS_NAMES[code];
  if (n) return n;
  return code >= 64 && code <= 255 ? 'user definable' : 'reserved';
}

/*
 * USGS Lidar Base Specification, aggregate nominal pulse density (first
 * returns per m2), from memory: QL0 and QL1 >= 8, QL2 >= 2, QL3 >= 0.5.
 */
export const QL_DENSITY = { QL1: 8, QL2: 2, QL3: 0.5 } as const;

export function qualityLevelByDensity(firstPerM2: number): { level: string; note: string } {
  const caveat = 'a file shows point density, not vertical accuracy, so this is only the level its density meets (USGS Lidar Base Specification)';
  if (firstPerM2 >= QL_DENSITY.QL1) return { level: 'QL1 by density', note: `${caveat}; QL0 has the same density floor (8 per m2), so density alone cannot tell QL0 from QL1` };
  if (firstPerM2 >= QL_DENSITY.QL2) return { level: 'QL2 by density', note: caveat };
  if (firstPerM2 >= QL_DENSITY.QL3) return { level: 'QL3 by density', note: caveat };
  return { level: 'below QL3', note: `${caveat}; below 0.5 first returns per m2 meets no level` };
}

/** Occupancy cell edge for the density area, metres. */
export const DENSITY_CELL_M = 2;
/** Most cells the occupancy bitmap may have (1 bit each: 32 MiB); beyond it the cell grows. */
const MAX_OCCUPANCY_CELLS = 1 << 28;

export class ReadoutAccumulator {
  private readonly cloud: PointCloud;
  private points = 0;
  private firstReturns = 0;
  private readonly classCounts = new Float64Array(256);
  private readonly returnCounts = new Float64Array(16);
  private multiReturn = false;
  private anyIntensity = false;
  private anyColour = false;
  private colourFields = false;
  private gpsTime = false;
  private readonly b: Bounds = { minX: Infinity, minY: Infinity, minZ: Infinity, maxX: -Infinity, maxY: -Infinity, maxZ: -Infinity };
  // Occupancy grid over the header bounds, in CRS units.
  private readonly ox: number;
  private readonly oy: number;
  private readonly cellM: number;
  private readonly cellX: number;
  private readonly cellY: number;
  private readonly nx: number;
  private readonly ny: number;
  private readonly occupied: Uint8Array;
  private occupiedCount = 0;
  /** Metres per CRS unit along x and y (differ for degrees). */
  private readonly mx: number;
  private readonly my: number;
  private readonly geographic: boolean;

  constructor(cloud: PointCloud) {
    this.cloud = cloud;
    const hb = cloud.header.bounds;
    const crs = cloud.crs;
    this.geographic = /^\s*\+proj=longlat/.test(crs.proj4 ?? '') || crs.notes.some((n) => /^geographic CRS/.test(n));
    if (this.geographic) {
      // Degrees: metres per degree at the middle latitude on a sphere of the WGS 84 equatorial radius (common practice).
      const lat = Number.isFinite(hb.minY + hb.maxY) ? ((hb.minY + hb.maxY) / 2) * (Math.PI / 180) : 0;
      this.my = (Math.PI / 180) * 6378137;
      this.mx = this.my * Math.max(Math.cos(lat), 1e-6);
    } else {
      this.mx = this.my = crs.unitM > 0 ? crs.unitM : 1;
    }
    const w = Number.isFinite(hb.maxX - hb.minX) ? Math.max(0, hb.maxX - hb.minX) : 0;
    const h = Number.isFinite(hb.maxY - hb.minY) ? Math.max(0, hb.maxY - hb.minY) : 0;
    let cellM = DENSITY_CELL_M;
    const cells = (m: number): number => (Math.floor((w * this.mx) / m) + 1) * (Math.floor((h * this.my) / m) + 1);
    while (cells(cellM) > MAX_OCCUPANCY_CELLS) cellM *= 2;
    this.cellM = cellM;
    this.cellX = cellM / this.mx;
    this.cellY = cellM / this.my;
    this.ox = Number.isFinite(hb.minX) ? hb.minX : 0;
    this.oy = Number.isFinite(hb.minY) ? hb.minY : 0;
    this.nx = Math.floor(w / this.cellX) + 1;
    this.ny = Math.floor(h / this.cellY) + 1;
    this.occupied = new Uint8Array(Math.ceil((this.nx * this.ny) / 8));
  }

  add(c: PointChunk): void {
    const n = c.count;
    const b = this.b;
    if (c.red && c.green && c.blue) this.colourFields = true;
    if (c.gpsTime) this.gpsTime = true;
    for (let i = 0; i < n; i++) {
      const x = c.x[i]!, y = c.y[i]!, z = c.z[i]!;
      if (x < b.minX) b.minX = x; if (x > b.maxX) b.maxX = x;
      if (y < b.minY) b.minY = y; if (y > b.maxY) b.maxY = y;
      if (z < b.minZ) b.minZ = z; if (z > b.maxZ) b.maxZ = z;
      this.classCounts[c.classification[i]!]!++;
      const r = c.returnNumber[i]!;
      this.returnCounts[r & 15]!++;
      if (r > 1 || c.numberOfReturns[i]! > 1) this.multiReturn = true;
      if (c.intensity[i] !== 0) this.anyIntensity = true;
      // A record without a return number (0) is taken as a single, hence first, return.
      if (r <= 1) {
        this.firstReturns++;
        const gx = Math.floor((x - this.ox) / this.cellX), gy = Math.floor((y - this.oy) / this.cellY);
        // Points outside the header bounds (a stale header) are clamped to its edge cells.
        const ix = gx < 0 ? 0 : gx >= this.nx ? this.nx - 1 : gx;
        const iy = gy < 0 ? 0 : gy >= this.ny ? this.ny - 1 : gy;
        const k = iy * this.nx + ix;
        const byte = k >> 3, bit = 1 << (k & 7);
        if ((this.occupied[byte]! & bit) === 0) { this.occupied[byte]! |= bit; this.occupiedCount++; }
      }
    }
    if (this.colourFields && !this.anyColour) {
      const rr = c.red!, gg = c.green!, bb = c.blue!;
      for (let i = 0; i < n; i++) if (rr[i] !== 0 || gg[i] !== 0 || bb[i] !== 0) { this.anyColour = true; break; }
    }
    this.points += n;
  }

  finish(): SurveyReadout {
    const cloud = this.cloud;
    const h = cloud.header;
    const bounds = this.points > 0 ? { ...this.b } : { ...h.bounds };
    const classes: Record<string, number> = {};
    const classNames: Record<string, string> = {};
    for (let k = 0; k < 256; k++) {
      if (this.classCounts[k]! > 0) { classes[String(k)] = this.classCounts[k]!; classNames[String(k)] = asprsClassName(k); }
    }
    const returns: Record<string, number> = {};
    for (let k = 0; k < 16; k++) if (this.returnCounts[k]! > 0) returns[String(k)] = this.returnCounts[k]!;

    const boxM2 = Math.max(0, bounds.maxX - bounds.minX) * this.mx * Math.max(0, bounds.maxY - bounds.minY) * this.my;
    const cellAreaM2 = this.cellM * this.cellM;
    const occM2 = this.occupiedCount * cellAreaM2;
    const boxDensity = boxM2 > 0 ? this.firstReturns / boxM2 : 0;
    // Every occupied cell holds at least one point, so for a sparse cloud the occupied-cell figure is
    // bounded below by 1 / cell area whatever the truth: below 2 first returns per cell use the box.
    const perCell = this.occupiedCount > 0 ? this.firstReturns / this.occupiedCount : 0;
    const useCells = perCell >= 2;
    const density = useCells ? (occM2 > 0 ? this.firstReturns / occM2 : 0) : boxDensity;
    const densityAreaM2 = useCells ? occM2 : boxM2;
    const densityArea = useCells
      ? `occupied ${this.cellM} m cells (${this.occupiedCount} cells holding a first return); ` +
        `over the bounding box (${boxM2.toFixed(0)} m2) it is ${boxDensity.toFixed(2)} per m2`
      : `bounding box (${boxM2.toFixed(0)} m2): too sparse for ${this.cellM} m cells ` +
        `(${perCell.toFixed(2)} first returns per occupied cell)`;
    const ql = qualityLevelByDensity(density);

    const hasRgb = this.colourFields && this.anyColour;
    const hasGpsTime = this.gpsTime;
    let looksPhotogrammetric = false;
    let reason: string;
    if (this.multiReturn) reason = 'multiple returns per pulse: lidar';
    else if (!hasRgb) reason = this.colourFields ? 'single returns, colour fields all zero: lidar or unknown' : 'single returns without colour: lidar or unknown';
    else if (!this.anyIntensity || !hasGpsTime) {
      looksPhotogrammetric = true;
      reason = `single returns with colour and ${!this.anyIntensity ? 'zero intensity' : 'no GPS time'}: looks photogrammetric (image matching), so the ground under canopy is unseen`;
    } else reason = 'single returns with colour, intensity and GPS time: single-return lidar';

    const warnings: string[] = [];
    if (this.points === 0) warnings.push('the file holds no points');
    if (!classes['2'] && this.points > 0) warnings.push('no ground class (2): the ground will be found by the ground filter');
    if (cloud.crs.epsg === null && cloud.crs.proj4 === null) warnings.push('no CRS: positions cannot be placed on a map; give one with the --crs option');
    if (this.geographic) warnings.push('the CRS is geographic (degrees): densities and areas are approximate; reproject the survey for crown metrics');
    if (this.points > 0 && density < 2) warnings.push(`very low density (${density.toFixed(2)} first returns per m2): small trees may be missed and crowns merged`);
    if (looksPhotogrammetric) warnings.push('looks photogrammetric: heights under dense canopy and crown bottoms are not seen');
    if (this.returnCounts[0]! > 0 && cloud.kind !== 'xyz') warnings.push(`${this.returnCounts[0]} point(s) have return number 0 (invalid in LAS): taken as first returns`);

    const crs = cloud.crs;
    const out: SurveyReadout = {
      name: cloud.name,
      kind: cloud.kind,
      points: this.points,
      version: cloud.kind === 'xyz' ? 'text' : `${h.versionMajor}.${h.versionMinor}`,
      pointFormat: cloud.kind === 'xyz' ? null : h.pointFormat,
      bounds,
      crs: { epsg: crs.epsg, wkt: crs.wkt, proj4: crs.proj4, unitM: crs.unitM, verticalUnitM: crs.verticalUnitM, unitName: crs.unitName, notes: [...crs.notes] },
      classes, classNames, returns,
      firstReturns: this.firstReturns,
      firstReturnDensityPerM2: density,
      densityAreaM2,
      densityArea,
      qualityLevel: ql.level,
      qualityNote: ql.note,
      hasRgb, hasGpsTime, looksPhotogrammetric,
      photogrammetricReason: reason,
      warnings,
    };
    const skipped = (cloud as { skippedLines?: number }).skippedLines;
    if (typeof skipped === 'number') out.skippedLines = skipped;
    return out;
  }

  /** First-return density over the bounding box (per m2), for comparison with the occupied-cell figure. */
  boxDensityPerM2(): number {
    const b = this.b;
    const a = Math.max(0, b.maxX - b.minX) * this.mx * Math.max(0, b.maxY - b.minY) * this.my;
    return a > 0 ? this.firstReturns / a : 0;
  }
}

/** Streams the cloud once and returns its read-out. */
export async function surveyReadout(cloud: PointCloud, opts: ReadOptions = {}): Promise<SurveyReadout> {
  const acc = new ReadoutAccumulator(cloud);
  for await (const c of cloud.chunks(opts)) acc.add(c);
  return acc.finish();
}
