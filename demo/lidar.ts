import type { Rng } from './random.js';
import {
  MATERIALS, OWNER_BUILDING, OWNER_SHRUB, SOLID_BOX, SOLID_CONE, SOLID_CYLINDER,
  groundZ, hashCell, intersectGround, intersectSolid, type Scene, type Solids,
} from './scene.js';

/**
 * A simulated airborne lidar survey of an invented scene (our own simple
 * model, not any published simulator): parallel flight lines north-south,
 * pulses on a jittered grid across each swath, each pulse a slanted ray in
 * the across-track plane. The first return is where the ray meets the first
 * surface; inside a crown, further returns come from foliage at random
 * depths, and a share of pulses pass on through gaps to lower crowns and the
 * ground. Because rays are slanted, later returns of one pulse lie sideways
 * of its first return, growing with the scan angle.
 */
export interface ScanOptions {
  /** Pulses (= first returns) per m2 in a single swath, outside the overlap strips. */
  firstReturnsPerM2: number;
  /** Flying height above the base terrain level (m). */
  altitudeM: number;
  /** Largest scan angle off nadir (degrees). */
  maxScanDeg: number;
  /**
   * Width of the strip two neighbouring swaths share at ground level (m); the later line's points
   * there get the overlap flag. It must exceed 2 tan(maxScanDeg) times the tallest crown, or crowns
   * along the seam get no returns (20 m covers 37 m tall trees at 15 degrees).
   */
  overlapM: number;
  /** Ranging noise, standard deviation (m). */
  rangeNoiseM: number;
  /** Low noise points (class 7) and high unflagged outliers (class 1, birds), per hectare. */
  lowNoisePerHa: number;
  highOutliersPerHa: number;
  /** Adjusted standard GPS time of the first pulse (s). */
  gpsStart: number;
}

export const DEFAULT_SCAN: Readonly<ScanOptions> = Object.freeze({
  firstReturnsPerM2: 10, altitudeM: 120, maxScanDeg: 15, overlapM: 20, rangeNoiseM: 0.03,
  lowNoisePerHa: 8, highOutliersPerHa: 3, gpsStart: 352_000_000,
});

export type ReturnSource = 'ground' | 'tree' | 'shrub' | 'building';

/** Points in local metres, in growable typed arrays (structure of arrays). */
export interface RawCloud {
  count: number;
  x: Float64Array; y: Float64Array; z: Float64Array;
  intensity: Uint16Array; returnNumber: Uint8Array; numberOfReturns: Uint8Array;
  classification: Uint8Array; flags: Uint8Array; scanAngleDeg: Float32Array; gpsTime: Float64Array;
  red: Uint16Array; green: Uint16Array; blue: Uint16Array; pointSourceId: Uint16Array;
  /** Tree index (into scene.trees) a return came from, -1 otherwise (truth, not written to LAS). */
  tree: Int32Array;
}

function emptyCloud(cap: number): RawCloud {
  return {
    count: 0, x: new Float64Array(cap), y: new Float64Array(cap), z: new Float64Array(cap),
    intensity: new Uint16Array(cap), returnNumber: new Uint8Array(cap), numberOfReturns: new Uint8Array(cap),
    classification: new Uint8Array(cap), flags: new Uint8Array(cap), scanAngleDeg: new Float32Array(cap),
    gpsTime: new Float64Array(cap), red: new Uint16Array(cap), green: new Uint16Array(cap), blue: new Uint16Array(cap),
    pointSourceId: new Uint16Array(cap), tree: new Int32Array(cap),
  };
}

function grow(c: RawCloud, need: number): RawCloud {
  if (need <= c.x.length) return c;
  const n = emptyCloud(Math.max(need, Math.ceil(c.x.length * 1.5)));
  n.count = c.count;
  for (const k of Object.keys(c) as Array<keyof RawCloud>) {
    if (k === 'count') continue;
    (n[k] as Float64Array).set(c[k] as Float64Array);
  }
  return n;
}

/** Vegetation class by height above ground: our own thresholds (the ASPRS class table names the classes, not the heights). */
export function vegetationClass(hM: number): number {
  return hM < 2 ? 3 : hM < 5 ? 4 : 5;
}

const SEP_M = 0.9; // two returns of one pulse closer than this along the ray merge (pulse length)
const MAX_RETURNS = 5;

export function scanScene(scene: Scene, solids: Solids, rng: Rng, opt: ScanOptions): RawCloud {
  const W = scene.widthM, H = scene.heightM, t = scene.terrain;
  const sp = 1 / Math.sqrt(opt.firstReturnsPerM2);
  const halfSwath = opt.altitudeM * Math.tan((opt.maxScanDeg * Math.PI) / 180);
  const lineStep = 2 * halfSwath - opt.overlapM;
  const lines: number[] = [];
  // Slanted rays meet tall crowns sideways of where they meet the ground, so pulses are
  // cast over a margin beyond the scene and kept by where their first return lies.
  const margin = Math.tan((opt.maxScanDeg * Math.PI) / 180) * (solids.topZ - t.baseZ) + 1;
  for (let xl = halfSwath - margin; xl - halfSwath < W + margin; xl += lineStep) lines.push(xl);
  let c = emptyCloud(Math.ceil(W * H * opt.firstReturnsPerM2 * 1.8) + 1024);

  const z0 = solids.topZ + 2;
  const zRef = t.baseZ;
  const stamp = new Int32Array(solids.count).fill(-1);
  const seg = new Float64Array(2);
  const hitU = new Float64Array(64), hitOut = new Float64Array(64), hitS = new Int32Array(64);
  // Candidate returns of one pulse: drop u, solid (-1 ground), opaque flag.
  const rU = new Float64Array(32), rS = new Int32Array(32), rOpaque = new Uint8Array(32);
  let pulseId = 0;
  const speed = 8; // m/s along track

  const emit = (x: number, y: number, z: number, src: number, k: number, nk: number, angle: number, time: number, line: number, overlap: boolean, cls: number, mat: number): void => {
    c = grow(c, c.count + 1);
    const i = c.count++;
    c.x[i] = x; c.y[i] = y; c.z[i] = z;
    const m = MATERIALS[mat]!;
    // Energy is shared among returns: later returns come back weaker.
    const share = nk === 1 ? 1 : k === 1 ? 0.8 : 0.55;
    c.intensity[i] = Math.min(65535, Math.max(1, Math.round(m.intensity * share * rng.range(0.85, 1.15))));
    c.returnNumber[i] = k; c.numberOfReturns[i] = nk;
    c.classification[i] = cls; c.flags[i] = overlap ? 8 : 0;
    c.scanAngleDeg[i] = angle; c.gpsTime[i] = time; c.pointSourceId[i] = line + 1;
    const f = rng.range(0.92, 1.08);
    c.red[i] = Math.min(65535, Math.round(m.rgb[0] * f));
    c.green[i] = Math.min(65535, Math.round(m.rgb[1] * f));
    c.blue[i] = Math.min(65535, Math.round(m.rgb[2] * f));
    c.tree[i] = src;
  };

  lines.forEach((xl, li) => {
    const northbound = li % 2 === 0;
    const x0l = Math.max(-margin, xl - halfSwath), x1l = Math.min(W + margin, xl + halfSwath);
    const cols = Math.max(1, Math.round((x1l - x0l) / sp)), rows = Math.max(1, Math.round(H / sp));
    const spx = (x1l - x0l) / cols, spy = H / rows;
    const prevLine = li > 0 ? lines[li - 1]! : -Infinity;
    const nextLine = li + 1 < lines.length ? lines[li + 1]! : Infinity;
    // Where two swaths overlap, a return farther from its own line than from the other (the larger
    // scan angle) carries the overlap flag, decided by where the return itself lies, so every place
    // keeps the returns of the nearer-nadir swath, canopy included (common practice).
    const isOverlap = (x: number) => (x < prevLine + halfSwath && xl - x > x - prevLine) || (x > nextLine - halfSwath && x - xl > nextLine - x);
    const lineStart = opt.gpsStart + li * 120;
    const rowDt = spy / speed;
    for (let r = 0; r < rows; r++) {
      const rowAlong = northbound ? r : rows - 1 - r; // time runs along the flight direction
      for (let q = 0; q < cols; q++) {
        const xg = x0l + (q + 0.5 + rng.range(-0.35, 0.35)) * spx;
        const yg = (rowAlong + 0.5 + rng.range(-0.35, 0.35)) * spy;
        const slope = (xg - xl) / opt.altitudeM;
        // Scan angle sign: positive to the right of the flight direction (from memory of the LAS convention).
        const angle = ((northbound ? 1 : -1) * Math.atan(slope) * 180) / Math.PI;
        const time = lineStart + r * rowDt + (q / cols) * rowDt;
        const x0 = xg - slope * (z0 - zRef);
        const uG = intersectGround(t, x0, yg, z0, slope);
        // Candidate solids from the hash cells the ray's footprint crosses.
        let nh = 0;
        pulseId++;
        const xa = Math.min(x0, x0 + slope * uG), xb = Math.max(x0, x0 + slope * uG);
        for (let xs = xa; ; xs += solids.cell) {
          const cell = hashCell(solids, Math.min(xs, xb), yg);
          for (let k = solids.start[cell]!; k < solids.start[cell + 1]!; k++) {
            const s = solids.list[k]!;
            if (stamp[s] === pulseId) continue;
            stamp[s] = pulseId;
            if (intersectSolid(solids, s, x0, yg, z0, slope, seg) && seg[0]! < uG && seg[1]! > 0 && nh < 64) {
              // insertion by entry drop
              let j = nh++;
              while (j > 0 && hitU[j - 1]! > seg[0]!) { hitU[j] = hitU[j - 1]!; hitOut[j] = hitOut[j - 1]!; hitS[j] = hitS[j - 1]!; j--; }
              hitU[j] = seg[0]!; hitOut[j] = seg[1]!; hitS[j] = s;
            }
          }
          if (xs >= xb) break;
        }
        let nr = 0, blocked = false;
        const addR = (u: number, s: number, opaque: boolean) => {
          if (nr < 32) { rU[nr] = u; rS[nr] = s; rOpaque[nr] = opaque ? 1 : 0; nr++; }
        };
        for (let h = 0; h < nh && !blocked; h++) {
          const s = hitS[h]!, kind = solids.kind[s]!, uIn = Math.max(0, hitU[h]!), uOut = Math.min(hitOut[h]!, uG);
          if (kind === SOLID_BOX || kind === SOLID_CYLINDER) { addR(uIn, s, true); blocked = true; break; }
          const conifer = kind === SOLID_CONE, shrub = solids.ownerKind[s] === OWNER_SHRUB;
          if (nr === 0 || rng.chance(0.75)) addR(Math.min(uOut, uIn - 0.12 * Math.log(1 - rng.next())), s, false);
          const pInner = shrub ? 0.2 : conifer ? 0.35 : 0.45;
          if (rng.chance(pInner)) addR(rng.range(uIn, uOut), s, false);
          if (rng.chance(pInner * 0.35)) addR(rng.range(uIn, uOut), s, false);
          const pass = shrub ? 0.35 : conifer ? 0.65 : 0.5;
          if (!rng.chance(pass)) blocked = true;
        }
        if (!blocked) addR(uG, -1, true);
        // Order along the ray, stop at the first opaque surface, merge returns closer than a pulse length.
        for (let a = 1; a < nr; a++) {
          const u = rU[a]!, s = rS[a]!, o = rOpaque[a]!;
          let j = a;
          while (j > 0 && rU[j - 1]! > u) { rU[j] = rU[j - 1]!; rS[j] = rS[j - 1]!; rOpaque[j] = rOpaque[j - 1]!; j--; }
          rU[j] = u; rS[j] = s; rOpaque[j] = o;
        }
        let kept = 0;
        for (let a = 0; a < nr; a++) {
          if (kept > 0 && rU[a]! - rU[kept - 1]! < SEP_M) { if (rOpaque[a]) break; continue; }
          rU[kept] = rU[a]!; rS[kept] = rS[a]!; rOpaque[kept] = rOpaque[a]!; kept++;
          if (rOpaque[a] || kept === MAX_RETURNS) break;
        }
        const xFirst = x0 + slope * rU[0]!;
        if (kept === 0 || xFirst < 0 || xFirst >= W) continue;
        for (let a = 0; a < kept; a++) {
          const u = rU[a]! + rng.normal(0, opt.rangeNoiseM);
          const x = x0 + slope * u, z = z0 - u, s = rS[a]!;
          let cls: number, mat: number, tree = -1;
          if (s < 0) { cls = 2; mat = scene.groundMaterial(x, yg); }
          else if (solids.ownerKind[s] === OWNER_BUILDING) { cls = 6; mat = solids.material[s]!; }
          else {
            cls = vegetationClass(z - groundZ(t, x, yg)); mat = solids.material[s]!;
            if (solids.ownerKind[s] !== OWNER_SHRUB) tree = solids.owner[s]!;
          }
          emit(x, yg, z, tree, a + 1, kept, angle, time, li, isOverlap(x), cls, mat);
        }
      }
    }
  });

  // Noise: low points (multipath, class 7) and unflagged high outliers (birds).
  const ha = (W * H) / 10000;
  const nLow = Math.round(opt.lowNoisePerHa * ha), nHigh = Math.round(opt.highOutliersPerHa * ha);
  for (let k = 0; k < nLow + nHigh; k++) {
    const x = rng.range(0, W), y = rng.range(0, H), g = groundZ(t, x, y);
    const low = k < nLow;
    const z = low ? g - rng.range(3, 12) : g + rng.range(30, 60);
    emit(x, y, z, -1, 1, 1, 0, opt.gpsStart + rng.range(0, lines.length * 120), 0, false, low ? 7 : 1, MAT_GRASS_FOR_NOISE);
    c.intensity[c.count - 1] = low ? 60 : 200;
  }
  return c;
}

const MAT_GRASS_FOR_NOISE = 0;
