import { CrowntallyError } from '../lib/errors.js';
import type { PointChunk } from '../lib/io/types.js';
import { writeLas } from '../lib/io/las-writer.js';
import { makeRng } from './random.js';
import { buildSolids, type Scene } from './scene.js';
import { DEFAULT_SCAN, scanScene, type RawCloud, type ScanOptions } from './lidar.js';
import { parkScene } from './park.js';
import { orchardScene } from './orchard.js';
import { canopyScene } from './canopy.js';
import { truthTrees, type DemoTruth } from './truth.js';
import { utmWkt } from './crs.js';

/**
 * The invented demo surveys: `generateSurvey('park' | 'orchard' | 'canopy')`
 * returns LAS 1.4 bytes and the truth of the scene (every tree's top, height,
 * crown radius, visible crown area, overtopped flag). Seeded: the same options
 * give the same bytes. Runs in a browser worker as in Node (no Node built-ins).
 */
export type { DemoTruth, TruthTree } from './truth.js';
export { evaluateDetections, type Detections, type Evaluation } from './evaluate.js';
export type DemoSurveyKind = 'park' | 'orchard' | 'canopy';

export interface SurveyOptions {
  seed?: number;
  firstReturnsPerM2?: number;
  widthM?: number;
  heightM?: number;
  /** Further scan settings (altitude, scan angle, overlap, noise). */
  scan?: Partial<ScanOptions>;
  /** 7 (default) carries the scene's colours; 6 has none. */
  pointFormat?: 6 | 7;
  /** Park only: include the gabled tool shed (default true). */
  shed?: boolean;
}

export const DEMO_EPSG = 32633;
const DEFAULT_SIZE: Record<DemoSurveyKind, [number, number]> = { park: [180, 140], orchard: [120, 80], canopy: [100, 100] };

/** The invented scene of a kind, before scanning. */
export function buildScene(kind: DemoSurveyKind, opts: SurveyOptions = {}): Scene {
  const [dw, dh] = DEFAULT_SIZE[kind] ?? bad(`unknown demo kind ${String(kind)}: use park, orchard or canopy`);
  const w = opts.widthM ?? dw, h = opts.heightM ?? dh;
  if (!(w >= 20 && w <= 2000 && h >= 20 && h <= 2000)) bad(`demo width and height must be 20-2000 m (got ${w} x ${h})`);
  const rng = makeRng(opts.seed ?? 1).fork(1);
  return kind === 'park' ? parkScene(rng, w, h, opts.shed ?? true) : kind === 'orchard' ? orchardScene(rng, w, h) : canopyScene(rng, w, h);
}

function bad(msg: string): never {
  throw new CrowntallyError('BAD_OPTIONS', msg);
}

/** Scans a scene: the simulated lidar points in local metres, plus the scan settings used. */
export function scanDemo(scene: Scene, opts: SurveyOptions = {}): { cloud: RawCloud; scan: ScanOptions } {
  const scan: ScanOptions = { ...DEFAULT_SCAN, ...opts.scan, ...(opts.firstReturnsPerM2 !== undefined ? { firstReturnsPerM2: opts.firstReturnsPerM2 } : {}) };
  if (!(scan.firstReturnsPerM2 >= 0.1 && scan.firstReturnsPerM2 <= 200)) bad(`firstReturnsPerM2 must be 0.1-200 (got ${scan.firstReturnsPerM2})`);
  if (!(scan.maxScanDeg >= 0 && scan.maxScanDeg <= 40)) bad(`maxScanDeg must be 0-40 (got ${scan.maxScanDeg})`);
  if (!(scan.altitudeM >= 20 && scan.altitudeM <= 5000)) bad(`altitudeM must be 20-5000 (got ${scan.altitudeM})`);
  if (!(scan.overlapM >= 0 && scan.overlapM < 2 * scan.altitudeM * Math.tan((scan.maxScanDeg * Math.PI) / 180))) bad('overlapM must be at least 0 and narrower than a swath');
  const area = scene.widthM * scene.heightM * scan.firstReturnsPerM2;
  if (area > 40_000_000) throw new CrowntallyError('TOO_LARGE', `the demo would make about ${Math.round(area)} pulses; lower firstReturnsPerM2 or the area`);
  const rng = makeRng(opts.seed ?? 1).fork(2);
  return { cloud: scanScene(scene, buildSolids(scene), rng, scan), scan };
}

/** Local cloud -> PointChunk in CRS metres (subarrays, no copy of attributes). */
export function toPointChunk(c: RawCloud, scene: Scene): PointChunk {
  const n = c.count;
  const x = new Float64Array(n), y = new Float64Array(n);
  for (let i = 0; i < n; i++) { x[i] = c.x[i]! + scene.originX; y[i] = c.y[i]! + scene.originY; }
  return {
    count: n, x, y, z: c.z.subarray(0, n), intensity: c.intensity.subarray(0, n),
    returnNumber: c.returnNumber.subarray(0, n), numberOfReturns: c.numberOfReturns.subarray(0, n),
    classification: c.classification.subarray(0, n), flags: c.flags.subarray(0, n), scanAngleDeg: c.scanAngleDeg.subarray(0, n),
    gpsTime: c.gpsTime.subarray(0, n), red: c.red.subarray(0, n), green: c.green.subarray(0, n), blue: c.blue.subarray(0, n),
  };
}

/** An invented survey as LAS 1.4 bytes (format 7 by default, with the CRS as OGC WKT), and its truth. */
export function generateSurvey(kind: DemoSurveyKind, opts: SurveyOptions = {}): { las: Uint8Array; truth: DemoTruth } {
  const scene = buildScene(kind, opts);
  const { cloud, scan } = scanDemo(scene, opts);
  const wkt = utmWkt(33);
  const las = writeLas(toPointChunk(cloud, scene), {
    pointFormat: opts.pointFormat ?? 7, scale: [0.001, 0.001, 0.001], offset: [Math.round(scene.originX), Math.round(scene.originY), 0],
    wkt, systemId: 'OTHER', software: 'Crowntally demo', creationDay: 152, creationYear: 2024,
    pointSourceId: cloud.pointSourceId.subarray(0, cloud.count),
  });
  const truth: DemoTruth = {
    kind, name: scene.name, epsg: DEMO_EPSG, wkt, originX: scene.originX, originY: scene.originY,
    widthM: scene.widthM, heightM: scene.heightM, firstReturnsPerM2: scan.firstReturnsPerM2, pointCount: cloud.count,
    trees: truthTrees(scene, 0.2), visibleAreaCellM: 0.2,
  };
  return { las, truth };
}
