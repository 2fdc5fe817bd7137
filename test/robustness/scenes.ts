/**
 * A second, independent family of invented scenes, built to see whether tree
 * detection holds up on shapes the demo generator never makes. Everything
 * here is our own invention: lumpy crowns (a union of overlapping spheres),
 * leaning and flat-topped crowns, multi-stemmed trees, very small street
 * trees and very large ones, hedges, shrubs, parked cars and vans, a flat
 * and a pitched roof, sloped terrain, three pulse densities, with and
 * without a ground class.
 *
 * Sampling is deliberately simple and unlike a scanner simulation: vertical
 * pulses at uniformly random positions; a pulse meeting foliage returns
 * first somewhere below the crown surface (exponential depth, so the upper
 * crown is sampled most), may return again deeper in the crown, and may
 * reach the ground; a pulse meeting a roof, car or the ground returns once.
 *
 * Truth as the generator knows it: each tree's apex (position and height
 * above the terrain under it), its equal-area crown radius and its visible
 * crown area (where it is the highest surface seen from above, 0.2 m cells).
 */
import type { PointChunk } from '../../lib/io/types.js';
import { writeLas } from '../../lib/io/las-writer.js';
import { makeRng, type Rng } from '../../demo/random.js';
import { utmWkt } from '../../demo/crs.js';
import type { DemoTruth, TruthTree } from '../../demo/truth.js';
import { evaluateDetections, type Evaluation } from '../../demo/evaluate.js';
import { bufferSource } from '../../lib/io/sources.js';
import { tally } from '../../lib/pipeline.js';
import type { TallyOptions } from '../../lib/options.js';

/** What an object is: foliage lets pulses in and returns several times; solids return once. */
type Kind = 'tree' | 'shrub' | 'hedge' | 'car' | 'roof';

/** A sphere (rz may differ from r: a spheroid) of one object; `cap` cuts its top flat (m above the datum). */
interface Blob { cx: number; cy: number; cz: number; r: number; rz: number; cap: number; obj: number }
/**
 * An axis-aligned solid: box, or a gable along x (ridge at cy) when ridge > eave. A vehicle
 * (`onGround`) stands on the terrain: eave and ridge are then heights above the ground under each point.
 */
interface Solid { x0: number; y0: number; x1: number; y1: number; eave: number; ridge: number; obj: number; onGround?: (x: number, y: number) => number }

interface Obj { kind: Kind; tree: number }

export interface SceneSpec {
  name: string;
  seed: number;
  widthM: number;
  heightM: number;
  firstReturnsPerM2: number;
  /** Terrain slope (degrees) downhill towards +x, plus gentle undulation. */
  slopeDeg: number;
  /** 'classified': ground 2, foliage 5, roofs 6; 'ground': ground 2, the rest 1; 'none': every point 1. */
  classes: 'classified' | 'ground' | 'none';
  /** Which kinds of trees and clutter the scene holds. */
  layout: 'mixed' | 'street' | 'giants' | 'lumpy' | 'lean-flat' | 'multistem';
}

export interface RobustTruthTree extends TruthTree { shape: string }

export interface RobustSurvey {
  las: Uint8Array;
  trees: RobustTruthTree[];
  pointCount: number;
  /** Every placed object (trees by shape, and the clutter), its footprint centre in CRS metres: for reading false positives. */
  objects: Array<{ kind: string; x: number; y: number }>;
}

const ORIGIN_X = 512_000, ORIGIN_Y = 5_402_000;

class Scene {
  blobs: Blob[] = [];
  solids: Solid[] = [];
  objs: Obj[] = [];
  shapes: string[] = [];
  /** Trees by index: their objects (a multi-stemmed tree is one object). */
  treeObj: number[] = [];
  /** Footprints already taken (x, y, radius) for spacing. */
  taken: Array<[number, number, number]> = [];
  constructor(readonly w: number, readonly h: number, readonly ground: (x: number, y: number) => number) {}

  free(x: number, y: number, r: number, overlap = 0.75): boolean {
    if (x < r * 0.5 || y < r * 0.5 || x > this.w - r * 0.5 || y > this.h - r * 0.5) return false;
    for (const [a, b, q] of this.taken) if (Math.hypot(a - x, b - y) < (q + r) * overlap) return false;
    return true;
  }
  object(kind: Kind, shape: string): number {
    const tree = kind === 'tree' ? this.treeObj.length : -1;
    this.objs.push({ kind, tree });
    if (tree >= 0) { this.treeObj.push(this.objs.length - 1); this.shapes.push(shape); }
    return this.objs.length - 1;
  }
}

/**
 * A lumpy crown: 3-12 overlapping spheres inside an envelope of radius R
 * from crown base `base` to apex height `top` above the ground at (x, y).
 * `lean` shifts blobs sideways in proportion to their height in the crown,
 * so the apex ends up to `lean` x R from the footprint's centre.
 */
function lumpyCrown(s: Scene, rng: Rng, obj: number, x: number, y: number, R: number, top: number, opts: { blobs?: number; lean?: number; flatten?: number } = {}): void {
  const g = s.ground(x, y);
  const n = opts.blobs ?? rng.int(3, 12);
  const dir = rng.range(0, 2 * Math.PI);
  const lean = opts.lean ?? 0;
  const base = top * rng.range(0.3, 0.5);
  const depth = top - base;
  const first = s.blobs.length;
  for (let k = 0; k < n; k++) {
    // The first blob is the apex blob; the others spread over the envelope.
    const rb = k === 0 ? R * rng.range(0.5, 0.7) : R * rng.range(0.3, 0.55);
    const a = rng.range(0, 2 * Math.PI), d = k === 0 ? 0 : rng.range(0, R - rb);
    const rz = Math.min(rb, depth / 2) * (opts.flatten ?? 1);
    const cz = k === 0 ? top - rz : rng.range(base + rz, top - rz * 1.3);
    const t = (cz - base) / depth;
    s.blobs.push({
      cx: x + d * Math.cos(a) + Math.cos(dir) * lean * R * t, cy: y + d * Math.sin(a) + Math.sin(dir) * lean * R * t,
      cz: g + cz, r: rb, rz, cap: Infinity, obj,
    });
  }
  void first;
}

function buildScene(spec: SceneSpec): Scene {
  const rng = makeRng(spec.seed);
  const slope = Math.tan((spec.slopeDeg * Math.PI) / 180);
  const phase = rng.range(0, 6);
  const ground = (x: number, y: number) => 100 - slope * x + 0.6 * Math.sin(x / 23 + phase) * Math.cos(y / 31);
  const s = new Scene(spec.widthM, spec.heightM, ground);
  const place = (r: number, tries = 200, overlap = 0.75): [number, number] | null => {
    for (let t = 0; t < tries; t++) {
      const x = rng.range(0, s.w), y = rng.range(0, s.h);
      if (s.free(x, y, r, overlap)) { s.taken.push([x, y, r]); return [x, y]; }
    }
    return null;
  };
  const tree = (shape: string, R: number, H: number, opts: { lean?: number; flatten?: number; blobs?: number } = {}, overlap = 0.75) => {
    const p = place(R, 200, overlap);
    if (!p) return;
    const obj = s.object('tree', shape);
    lumpyCrown(s, rng, obj, p[0], p[1], R, H, opts);
  };
  const flatTop = (R: number, H: number) => {
    const p = place(R);
    if (!p) return;
    const obj = s.object('tree', 'flat-topped');
    const g = ground(p[0], p[1]);
    // A wide spheroid whose top is cut flat: a plateau of radius about 0.6 R, rough only by sampling.
    const rz = H * 0.35;
    s.blobs.push({ cx: p[0], cy: p[1], cz: g + H - rz * 0.2, r: R, rz, cap: g + H, obj });
  };
  const multiStem = (R: number, H: number) => {
    const p = place(R * 1.3);
    if (!p) return;
    const obj = s.object('tree', 'multi-stemmed');
    const a = rng.range(0, Math.PI), d = R * rng.range(0.3, 0.45);
    lumpyCrown(s, rng, obj, p[0] + d * Math.cos(a), p[1] + d * Math.sin(a), R * 0.75, H, { blobs: rng.int(3, 5) });
    lumpyCrown(s, rng, obj, p[0] - d * Math.cos(a), p[1] - d * Math.sin(a), R * 0.75, H - rng.range(0.2, 1.0), { blobs: rng.int(3, 5) });
  };
  const shrub = () => {
    const R = rng.range(0.6, 1.5), p = place(R, 50, 1);
    if (!p) return;
    lumpyCrown(s, rng, s.object('shrub', ''), p[0], p[1], R, rng.range(0.8, 1.7), { blobs: rng.int(2, 4) });
  };
  const hedge = () => {
    const L = rng.range(12, 25), hh = rng.range(1.4, 2.6);
    const p = place(L / 2, 200, 1);
    if (!p) return;
    const obj = s.object('hedge', '');
    for (let u = -L / 2; u <= L / 2; u += 0.6) {
      const g = ground(p[0] + u, p[1]);
      s.blobs.push({ cx: p[0] + u, cy: p[1] + rng.range(-0.1, 0.1), cz: g + hh - 0.6, r: 0.7, rz: 0.6 + rng.range(-0.05, 0.1), cap: Infinity, obj });
    }
  };
  const car = (van: boolean) => {
    const p = place(3, 100, 1);
    if (!p) return;
    const obj = s.object('car', '');
    const L = van ? 5.5 : 4.4, Wd = van ? 2.0 : 1.8, Hc = van ? 2.6 : 1.5;
    s.solids.push({ x0: p[0] - L / 2, x1: p[0] + L / 2, y0: p[1] - Wd / 2, y1: p[1] + Wd / 2, eave: Hc, ridge: Hc, obj, onGround: ground });
  };
  const roof = (pitched: boolean) => {
    const p = place(8, 200, 1);
    if (!p) return;
    const obj = s.object('roof', '');
    const g = ground(p[0], p[1]);
    const L = rng.range(10, 14), Wd = rng.range(8, 10), eave = rng.range(4, 6);
    s.solids.push({ x0: p[0] - L / 2, x1: p[0] + L / 2, y0: p[1] - Wd / 2, y1: p[1] + Wd / 2, eave: g + eave, ridge: g + eave + (pitched ? rng.range(2.5, 4) : 0), obj });
  };

  const area = spec.widthM * spec.heightM;
  switch (spec.layout) {
    case 'mixed': {
      roof(false); roof(true); for (let k = 0; k < 3; k++) car(k === 2);
      for (let k = 0; k < 2; k++) hedge();
      tree('very large', rng.range(8.5, 10), rng.range(30, 40));
      for (let k = 0; k < area / 260; k++) {
        const u = rng.next();
        if (u < 0.35) tree('lumpy', rng.range(2.5, 5.5), rng.range(9, 22));
        else if (u < 0.55) tree('leaning', rng.range(3, 5), rng.range(10, 20), { lean: rng.range(0.2, 0.4) });
        else if (u < 0.7) flatTop(rng.range(3, 5), rng.range(8, 16));
        else if (u < 0.8) multiStem(rng.range(3.5, 5), rng.range(10, 18));
        else tree('small', rng.range(1.4, 2.2), rng.range(3, 5));
      }
      for (let k = 0; k < area / 400; k++) shrub();
      break;
    }
    case 'street': {
      // Rows of small street trees along a road with parked cars, a hedge and two houses.
      roof(false); roof(true);
      for (let k = 0; k < 6; k++) car(k % 3 === 0);
      hedge();
      for (let k = 0; k < area / 60; k++) tree('small', rng.range(1.3, 2.3), rng.range(3, 5), {}, 0.9);
      for (let k = 0; k < area / 300; k++) shrub();
      break;
    }
    case 'giants': {
      for (let k = 0; k < area / 500; k++) tree('very large', rng.range(8, 10), rng.range(30, 40), { blobs: rng.int(6, 12) }, 0.8);
      for (let k = 0; k < area / 500; k++) tree('lumpy', rng.range(3, 5), rng.range(10, 18));
      break;
    }
    case 'lumpy': {
      for (let k = 0; k < area / 70; k++) tree('lumpy', rng.range(2.5, 5), rng.range(8, 22), {}, 0.8);
      break;
    }
    case 'lean-flat': {
      for (let k = 0; k < area / 90; k++) {
        if (rng.chance(0.5)) tree('leaning', rng.range(3, 5), rng.range(10, 20), { lean: rng.range(0.25, 0.4) });
        else flatTop(rng.range(3, 5), rng.range(8, 16));
      }
      break;
    }
    case 'multistem': {
      for (let k = 0; k < area / 100; k++) multiStem(rng.range(3.5, 5.5), rng.range(10, 18));
      break;
    }
  }
  return s;
}

/** Top (and bottom) of a blob above (x, y); NaN where the blob does not cover it. */
function blobTop(b: Blob, x: number, y: number): number {
  const q = 1 - ((x - b.cx) ** 2 + (y - b.cy) ** 2) / (b.r * b.r);
  return q > 0 ? Math.min(b.cap, b.cz + b.rz * Math.sqrt(q)) : NaN;
}
function blobBottom(b: Blob, x: number, y: number): number {
  const q = 1 - ((x - b.cx) ** 2 + (y - b.cy) ** 2) / (b.r * b.r);
  return q > 0 ? b.cz - b.rz * Math.sqrt(q) : NaN;
}
function solidTop(s: Solid, x: number, y: number): number {
  if (x < s.x0 || x > s.x1 || y < s.y0 || y > s.y1) return NaN;
  if (s.onGround) return s.onGround(x, y) + s.eave;
  if (s.ridge === s.eave) return s.eave;
  const half = (s.y1 - s.y0) / 2, cy = (s.y0 + s.y1) / 2;
  return s.eave + (s.ridge - s.eave) * (1 - Math.abs(y - cy) / half);
}

/** Buckets of blob and solid indices on a 4 m grid, so each pulse looks only at what is near it. */
class Index {
  readonly cell = 4;
  readonly cols: number;
  readonly rows: number;
  readonly blobs: number[][];
  readonly solids: number[][];
  constructor(readonly s: Scene) {
    this.cols = Math.ceil(s.w / this.cell) + 1; this.rows = Math.ceil(s.h / this.cell) + 1;
    this.blobs = Array.from({ length: this.cols * this.rows }, () => []);
    this.solids = Array.from({ length: this.cols * this.rows }, () => []);
    const add = (list: number[][], k: number, x0: number, y0: number, x1: number, y1: number) => {
      const c0 = Math.max(0, Math.floor(x0 / this.cell)), c1 = Math.min(this.cols - 1, Math.floor(x1 / this.cell));
      const r0 = Math.max(0, Math.floor(y0 / this.cell)), r1 = Math.min(this.rows - 1, Math.floor(y1 / this.cell));
      for (let r = r0; r <= r1; r++) for (let c = c0; c <= c1; c++) list[r * this.cols + c]!.push(k);
    };
    s.blobs.forEach((b, k) => add(this.blobs, k, b.cx - b.r, b.cy - b.r, b.cx + b.r, b.cy + b.r));
    s.solids.forEach((q, k) => add(this.solids, k, q.x0, q.y0, q.x1, q.y1));
  }
  /** The highest surface above (x, y): its height, object and lowest foliage bottom of that object there. */
  hit(x: number, y: number): { z: number; obj: number; bottom: number } {
    const c = Math.min(this.cols - 1, Math.max(0, Math.floor(x / this.cell))), r = Math.min(this.rows - 1, Math.max(0, Math.floor(y / this.cell)));
    let z = -Infinity, obj = -1;
    for (const k of this.blobs[r * this.cols + c]!) {
      const t = blobTop(this.s.blobs[k]!, x, y);
      if (t > z) { z = t; obj = this.s.blobs[k]!.obj; }
    }
    for (const k of this.solids[r * this.cols + c]!) {
      const t = solidTop(this.s.solids[k]!, x, y);
      if (t > z) { z = t; obj = this.s.solids[k]!.obj; }
    }
    let bottom = z;
    if (obj >= 0) for (const k of this.blobs[r * this.cols + c]!) {
      const b = this.s.blobs[k]!;
      if (b.obj === obj) { const v = blobBottom(b, x, y); if (v < bottom) bottom = v; }
    }
    return { z, obj, bottom };
  }
}

/** The truth: apex, height, equal-area radius and visible area of every tree, on 0.2 m cells. */
function truthOf(s: Scene, idx: Index): RobustTruthTree[] {
  const cm = 0.2;
  const nT = s.treeObj.length;
  const apexZ = new Float64Array(nT).fill(-Infinity), apexX = new Float64Array(nT), apexY = new Float64Array(nT);
  const foot = new Float64Array(nT), visible = new Float64Array(nT);
  const cols = Math.ceil(s.w / cm), rows = Math.ceil(s.h / cm);
  for (let r = 0; r < rows; r++) {
    const y = (r + 0.5) * cm;
    for (let c = 0; c < cols; c++) {
      const x = (c + 0.5) * cm;
      const h = idx.hit(x, y);
      if (h.obj >= 0 && s.objs[h.obj]!.tree >= 0) visible[s.objs[h.obj]!.tree]! += cm * cm;
      // Per-tree footprint and apex over the tree's own blobs (so an overtopped apex is still known).
      const ci = Math.min(idx.cols - 1, Math.floor(x / idx.cell)), ri = Math.min(idx.rows - 1, Math.floor(y / idx.cell));
      const seen = new Set<number>();
      for (const k of idx.blobs[ri * idx.cols + ci]!) {
        const b = s.blobs[k]!;
        const t = s.objs[b.obj]!.tree;
        if (t < 0) continue;
        const z = blobTop(b, x, y);
        if (!(z > -Infinity)) continue;
        if (!seen.has(t)) { seen.add(t); foot[t]! += cm * cm; }
        if (z > apexZ[t]!) { apexZ[t] = z; apexX[t] = x; apexY[t] = y; }
      }
    }
  }
  // The apex of a plateau (a flat-topped crown) is its middle: the centroid of the tree's cells within 2 cm of its top.
  const sx = new Float64Array(nT), sy = new Float64Array(nT), sn = new Float64Array(nT);
  for (let r = 0; r < rows; r++) {
    const y = (r + 0.5) * cm;
    for (let c = 0; c < cols; c++) {
      const x = (c + 0.5) * cm;
      const ci = Math.min(idx.cols - 1, Math.floor(x / idx.cell)), ri = Math.min(idx.rows - 1, Math.floor(y / idx.cell));
      for (const k of idx.blobs[ri * idx.cols + ci]!) {
        const b = s.blobs[k]!, t = s.objs[b.obj]!.tree;
        if (t >= 0 && blobTop(b, x, y) > apexZ[t]! - 0.02) { sx[t]! += x; sy[t]! += y; sn[t]!++; break; }
      }
    }
  }
  for (let t = 0; t < nT; t++) if (sn[t]! > 0) { apexX[t] = sx[t]! / sn[t]!; apexY[t] = sy[t]! / sn[t]!; }
  const out: RobustTruthTree[] = [];
  for (let t = 0; t < nT; t++) {
    const top = idx.hit(apexX[t]!, apexY[t]!);
    // Overtopped: another surface lies above this tree's apex (by more than 5 cm).
    const overtopped = top.obj !== s.treeObj[t] && top.z > apexZ[t]! + 0.05;
    out.push({
      id: t + 1, group: 'broadleaf', shape: s.shapes[t]!,
      x: ORIGIN_X + apexX[t]!, y: ORIGIN_Y + apexY[t]!, heightM: apexZ[t]! - s.ground(apexX[t]!, apexY[t]!),
      crownRadiusM: Math.sqrt(foot[t]! / Math.PI), visibleCrownAreaM2: visible[t]!, visible: !overtopped, overtopped,
    });
  }
  return out;
}

/** An invented survey of one scene spec: LAS 1.4 (format 6) bytes and the truth. */
export function robustSurvey(spec: SceneSpec): RobustSurvey {
  const s = buildScene(spec);
  const idx = new Index(s);
  const rng = makeRng(spec.seed).fork(7);
  const pulses = Math.round(spec.widthM * spec.heightM * spec.firstReturnsPerM2);
  const cap = pulses * 3;
  const x = new Float64Array(cap), y = new Float64Array(cap), z = new Float64Array(cap);
  const rn = new Uint8Array(cap), nr = new Uint8Array(cap), cls = new Uint8Array(cap), inten = new Uint16Array(cap);
  const gps = new Float64Array(cap);
  let n = 0;
  const veg = spec.classes === 'classified' ? 5 : 1;
  const bld = spec.classes === 'classified' ? 6 : 1;
  const gnd = spec.classes === 'none' ? 1 : 2;
  const zs: number[] = [], cs: number[] = [];
  for (let p = 0; p < pulses; p++) {
    const px = rng.range(0, spec.widthM), py = rng.range(0, spec.heightM);
    const g = s.ground(px, py) + rng.normal(0, 0.03);
    const h = idx.hit(px, py);
    zs.length = 0; cs.length = 0;
    const kind = h.obj >= 0 ? s.objs[h.obj]!.kind : null;
    if (kind === 'car' || kind === 'roof') {
      zs.push(h.z + rng.normal(0, 0.02)); cs.push(kind === 'roof' ? bld : 1);
    } else if (kind) {
      // Foliage: 8% of pulses pass through a gap; otherwise first return at an exponential depth (mean 0.3 m).
      if (!rng.chance(0.08)) {
        const d = Math.min(h.z - h.bottom, -0.3 * Math.log(1 - rng.next()));
        const z1 = h.z - d;
        zs.push(z1); cs.push(veg);
        if (rng.chance(0.5) && z1 - h.bottom > 0.3) { zs.push(rng.range(h.bottom, z1 - 0.2)); cs.push(veg); }
      }
      if (zs.length === 0 || rng.chance(0.4)) { zs.push(g); cs.push(gnd); }
    } else { zs.push(g); cs.push(gnd); }
    for (let k = 0; k < zs.length; k++) {
      x[n] = ORIGIN_X + px; y[n] = ORIGIN_Y + py; z[n] = zs[k]!;
      rn[n] = k + 1; nr[n] = zs.length; cls[n] = cs[k]!; inten[n] = 200 + ((p * 37) % 600); gps[n] = p * 1e-5;
      n++;
    }
  }
  const chunk: PointChunk = {
    count: n, x: x.subarray(0, n), y: y.subarray(0, n), z: z.subarray(0, n), intensity: inten.subarray(0, n),
    returnNumber: rn.subarray(0, n), numberOfReturns: nr.subarray(0, n), classification: cls.subarray(0, n),
    flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n), gpsTime: gps.subarray(0, n),
  };
  const las = writeLas(chunk, {
    pointFormat: 6, scale: [0.001, 0.001, 0.001], offset: [ORIGIN_X, ORIGIN_Y, 0], wkt: utmWkt(33),
    systemId: 'OTHER', software: 'Crowntally robustness', creationDay: 100, creationYear: 2025,
  });
  const objects = s.objs.map((o, k) => ({ kind: o.tree >= 0 ? s.shapes[o.tree]! : o.kind, x: ORIGIN_X + s.taken[k]![0], y: ORIGIN_Y + s.taken[k]![1] }));
  return { las, trees: truthOf(s, idx), pointCount: n, objects };
}

export interface RobustRow {
  spec: SceneSpec; trees: number; truth: number; ev: Evaluation; byShape: Record<string, { found: number; of: number }>;
  /** False positives by the kind of the nearest placed object. */
  falseBy: Record<string, number>;
}

/** Runs the whole job on one invented scene and scores it against the truth. */
export async function scoreScene(spec: SceneSpec, options: Partial<TallyOptions> = {}): Promise<RobustRow> {
  const survey = robustSurvey(spec);
  const r = await tally([bufferSource(survey.las, `${spec.name}.las`)], { options });
  const t = r.trees;
  // evaluateDetections reads only the trees of the truth.
  const truth = { trees: survey.trees } as unknown as DemoTruth;
  const ev = evaluateDetections(truth, {
    count: t.count, x: t.columns.x, y: t.columns.y, heightM: t.columns.height_m, crownAreaM2: t.columns.crown_area_m2,
  });
  const byShape: Record<string, { found: number; of: number }> = {};
  const hit = new Uint8Array(survey.trees.length);
  for (let q = 0; q < t.count; q++) if (ev.truthOfDetection[q]! >= 0) hit[ev.truthOfDetection[q]!] = 1;
  survey.trees.forEach((tr, k) => {
    if (tr.overtopped) return;
    const e = (byShape[tr.shape] ??= { found: 0, of: 0 });
    e.of++; e.found += hit[k]!;
  });
  const falseBy: Record<string, number> = {};
  for (let q = 0; q < t.count; q++) {
    if (ev.truthOfDetection[q]! >= 0) continue;
    let best = 'nothing', bd = Infinity;
    for (const o of survey.objects) { const d = Math.hypot(o.x - t.columns.x[q]!, o.y - t.columns.y[q]!); if (d < bd) { bd = d; best = o.kind; } }
    falseBy[best] = (falseBy[best] ?? 0) + 1;
  }
  return { spec, trees: t.count, truth: ev.matched + ev.missed, ev, byShape, falseBy };
}

const BASE = { widthM: 80, heightM: 80, slopeDeg: 0, classes: 'classified' as const };

/** The scenes of the full table: every layout, the three densities, slopes and the class variants. */
export const ROBUST_SCENES: SceneSpec[] = [
  { ...BASE, name: 'mixed-8', seed: 11, firstReturnsPerM2: 8, layout: 'mixed' },
  { ...BASE, name: 'mixed-3', seed: 11, firstReturnsPerM2: 3, layout: 'mixed' },
  { ...BASE, name: 'mixed-20', seed: 11, firstReturnsPerM2: 20, layout: 'mixed' },
  { ...BASE, name: 'mixed-8-noclass', seed: 11, firstReturnsPerM2: 8, layout: 'mixed', classes: 'none' },
  { ...BASE, name: 'mixed-8-ground', seed: 11, firstReturnsPerM2: 8, layout: 'mixed', classes: 'ground' },
  { ...BASE, name: 'mixed-8-slope20', seed: 12, firstReturnsPerM2: 8, layout: 'mixed', slopeDeg: 20 },
  { ...BASE, name: 'mixed-8-slope20-noclass', seed: 12, firstReturnsPerM2: 8, layout: 'mixed', slopeDeg: 20, classes: 'none' },
  { ...BASE, name: 'street-8', seed: 13, firstReturnsPerM2: 8, layout: 'street' },
  { ...BASE, name: 'street-3-ground', seed: 13, firstReturnsPerM2: 3, layout: 'street', classes: 'ground' },
  { ...BASE, name: 'street-20-noclass', seed: 13, firstReturnsPerM2: 20, layout: 'street', classes: 'none' },
  { ...BASE, name: 'giants-3', seed: 14, widthM: 120, heightM: 120, firstReturnsPerM2: 3, layout: 'giants' },
  { ...BASE, name: 'giants-8-slope10', seed: 14, widthM: 120, heightM: 120, firstReturnsPerM2: 8, layout: 'giants', slopeDeg: 10 },
  { ...BASE, name: 'lumpy-8', seed: 15, firstReturnsPerM2: 8, layout: 'lumpy' },
  { ...BASE, name: 'lumpy-20-slope15', seed: 15, firstReturnsPerM2: 20, layout: 'lumpy', slopeDeg: 15 },
  { ...BASE, name: 'lean-flat-8', seed: 16, firstReturnsPerM2: 8, layout: 'lean-flat' },
  { ...BASE, name: 'lean-flat-3-noclass', seed: 16, firstReturnsPerM2: 3, layout: 'lean-flat', classes: 'none' },
  { ...BASE, name: 'multistem-8', seed: 17, firstReturnsPerM2: 8, layout: 'multistem' },
];
