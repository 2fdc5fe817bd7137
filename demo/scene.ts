/**
 * The invented scenes: terrain, trees, shrubs and buildings as simple solids,
 * in local metres (x east, y north, from the scene's south-west corner),
 * with a spatial hash so a slanted lidar ray meets only the solids near it.
 *
 * Solids (all our own shapes): a broadleaf crown is an ellipsoid of
 * revolution, a conifer crown a solid cone with its apex at the treetop,
 * a trunk a vertical cylinder, a building a box whose roof may be gabled.
 * Rays lie in a vertical plane of constant y (the scan runs across track,
 * along x), so a ridge running along x gives a roof of constant height along
 * one ray and a gabled building is a box for each ray.
 */

export type TreeGroup = 'broadleaf' | 'conifer';

/** Surface materials: lidar intensity (16-bit scale) and colour (16-bit). */
export interface Material { name: string; intensity: number; rgb: [number, number, number] }

export const MATERIALS: readonly Material[] = [
  { name: 'grass', intensity: 1150, rgb: [22000, 36000, 17000] },
  { name: 'gravel path', intensity: 1900, rgb: [46000, 42000, 35000] },
  { name: 'bare soil', intensity: 1400, rgb: [30000, 24000, 18000] },
  { name: 'flat roof', intensity: 1500, rgb: [33000, 33000, 34000] },
  { name: 'tiled roof', intensity: 900, rgb: [42000, 19000, 14000] },
  { name: 'broadleaf foliage', intensity: 520, rgb: [17000, 33000, 12000] },
  { name: 'conifer foliage', intensity: 380, rgb: [9000, 22000, 11000] },
  { name: 'shrub foliage', intensity: 600, rgb: [20000, 30000, 14000] },
  { name: 'bark', intensity: 700, rgb: [21000, 16000, 12000] },
];
export const MAT = { grass: 0, path: 1, soil: 2, flatRoof: 3, tiledRoof: 4, broadleaf: 5, conifer: 6, shrub: 7, bark: 8 } as const;

export interface SceneTree {
  id: number;
  group: TreeGroup;
  /** Trunk position = top position (crowns are upright), local metres. */
  x: number;
  y: number;
  groundZ: number;
  heightM: number;
  crownRadiusM: number;
  /** Vertical extent of the crown (m). */
  crownDepthM: number;
  trunkRadiusM: number;
}

export interface SceneShrub { x: number; y: number; groundZ: number; heightM: number; radiusM: number }

export interface SceneBuilding {
  minX: number; maxX: number; minY: number; maxY: number;
  /** Absolute elevations: footing (below ground), eaves, ridge (= eaves for a flat roof). */
  baseZ: number; eaveZ: number; ridgeZ: number;
  material: number;
}

/** Smooth terrain: a base level plus a few long sine waves (a few metres of relief). */
export interface Terrain { baseZ: number; waves: Array<{ amp: number; kx: number; ky: number; phase: number }> }

export interface Scene {
  name: string;
  widthM: number;
  heightM: number;
  /** CRS position of the local origin (south-west corner), metres. */
  originX: number;
  originY: number;
  terrain: Terrain;
  trees: SceneTree[];
  shrubs: SceneShrub[];
  buildings: SceneBuilding[];
  /** Ground material at a local position. */
  groundMaterial(x: number, y: number): number;
}

export function groundZ(t: Terrain, x: number, y: number): number {
  let z = t.baseZ;
  for (const w of t.waves) z += w.amp * Math.sin(w.kx * x + w.ky * y + w.phase);
  return z;
}

/** d(ground)/dx, for the ray-ground Newton step. */
function groundDx(t: Terrain, x: number, y: number): number {
  let d = 0;
  for (const w of t.waves) d += w.amp * w.kx * Math.cos(w.kx * x + w.ky * y + w.phase);
  return d;
}

// ---- solids ---------------------------------------------------------------

export const SOLID_ELLIPSOID = 0;
export const SOLID_CONE = 1;
export const SOLID_CYLINDER = 2;
export const SOLID_BOX = 3;

/** What a solid belongs to, for classification. */
export const OWNER_TREE = 0;
export const OWNER_SHRUB = 1;
export const OWNER_BUILDING = 2;

/**
 * All solids of a scene in parallel typed arrays. Per solid: kind, owner kind,
 * owner index, material, and shape numbers a..f:
 *   ellipsoid: centre (a, b, c), horizontal semi-axis d, vertical semi-axis e
 *   cone:      apex (a, b, c), base radius d, depth e
 *   cylinder:  axis (a, b), bottom c, top e, radius d
 *   box:       minX a, maxX b, minY c, maxY d, baseZ e; eave/ridge in roof arrays
 */
export interface Solids {
  count: number;
  kind: Uint8Array; ownerKind: Uint8Array; owner: Int32Array; material: Uint8Array;
  a: Float64Array; b: Float64Array; c: Float64Array; d: Float64Array; e: Float64Array;
  eave: Float64Array; ridge: Float64Array;
  /** Highest z of any solid. */
  topZ: number;
  /** Spatial hash: cells of `cell` metres; solids of cell k are list[start[k]..start[k+1]). */
  cell: number; cols: number; rows: number; start: Uint32Array; list: Uint32Array;
}

export function buildSolids(scene: Scene, hashCellM = 6): Solids {
  const n = scene.trees.length * 2 + scene.shrubs.length + scene.buildings.length;
  const s: Solids = {
    count: 0, kind: new Uint8Array(n), ownerKind: new Uint8Array(n), owner: new Int32Array(n), material: new Uint8Array(n),
    a: new Float64Array(n), b: new Float64Array(n), c: new Float64Array(n), d: new Float64Array(n), e: new Float64Array(n),
    eave: new Float64Array(n), ridge: new Float64Array(n), topZ: -Infinity,
    cell: hashCellM, cols: 0, rows: 0, start: new Uint32Array(0), list: new Uint32Array(0),
  };
  const minX = new Float64Array(n), maxX = new Float64Array(n), minY = new Float64Array(n), maxY = new Float64Array(n);
  const add = (kind: number, ok: number, owner: number, mat: number, a: number, b: number, c: number, d: number, e: number,
    bx0: number, bx1: number, by0: number, by1: number, top: number): void => {
    const i = s.count++;
    s.kind[i] = kind; s.ownerKind[i] = ok; s.owner[i] = owner; s.material[i] = mat;
    s.a[i] = a; s.b[i] = b; s.c[i] = c; s.d[i] = d; s.e[i] = e;
    minX[i] = bx0; maxX[i] = bx1; minY[i] = by0; maxY[i] = by1;
    if (top > s.topZ) s.topZ = top;
  };
  scene.trees.forEach((t, k) => {
    const top = t.groundZ + t.heightM;
    const r = t.crownRadiusM;
    if (t.group === 'broadleaf') {
      add(SOLID_ELLIPSOID, OWNER_TREE, k, MAT.broadleaf, t.x, t.y, top - t.crownDepthM / 2, r, t.crownDepthM / 2, t.x - r, t.x + r, t.y - r, t.y + r, top);
    } else {
      add(SOLID_CONE, OWNER_TREE, k, MAT.conifer, t.x, t.y, top, r, t.crownDepthM, t.x - r, t.x + r, t.y - r, t.y + r, top);
    }
    // The trunk reaches into the crown, so a ray through a foliage gap may meet it.
    const tr = t.trunkRadiusM;
    add(SOLID_CYLINDER, OWNER_TREE, k, MAT.bark, t.x, t.y, t.groundZ - 0.5, tr, top - t.crownDepthM * 0.5, t.x - tr, t.x + tr, t.y - tr, t.y + tr, top);
  });
  scene.shrubs.forEach((sh, k) => {
    const c = sh.heightM / 2;
    add(SOLID_ELLIPSOID, OWNER_SHRUB, k, MAT.shrub, sh.x, sh.y, sh.groundZ + c, sh.radiusM, c, sh.x - sh.radiusM, sh.x + sh.radiusM, sh.y - sh.radiusM, sh.y + sh.radiusM, sh.groundZ + sh.heightM);
  });
  scene.buildings.forEach((bd, k) => {
    add(SOLID_BOX, OWNER_BUILDING, k, bd.material, bd.minX, bd.maxX, bd.minY, bd.maxY, bd.baseZ, bd.minX, bd.maxX, bd.minY, bd.maxY, bd.ridgeZ);
    s.eave[s.count - 1] = bd.eaveZ; s.ridge[s.count - 1] = bd.ridgeZ;
  });
  // Spatial hash in CSR form (counting pass, then fill).
  const pad = 20; // solids may stick out of the scene a little
  const cols = Math.ceil((scene.widthM + 2 * pad) / hashCellM), rows = Math.ceil((scene.heightM + 2 * pad) / hashCellM);
  const cellOf = (v: number, m: number) => Math.max(0, Math.min(m - 1, Math.floor((v + pad) / hashCellM)));
  const counts = new Uint32Array(cols * rows + 1);
  for (let pass = 0; pass < 2; pass++) {
    const fill = pass === 1 ? new Uint32Array(counts) : null;
    for (let i = 0; i < s.count; i++) {
      for (let r = cellOf(minY[i]!, rows); r <= cellOf(maxY[i]!, rows); r++) {
        for (let q = cellOf(minX[i]!, cols); q <= cellOf(maxX[i]!, cols); q++) {
          if (fill) s.list[fill[r * cols + q]!++] = i; else counts[r * cols + q + 1]!++;
        }
      }
    }
    if (!fill) {
      for (let k = 1; k <= cols * rows; k++) counts[k]! += counts[k - 1]!;
      s.list = new Uint32Array(counts[cols * rows]!);
    }
  }
  s.start = counts; s.cols = cols; s.rows = rows;
  return s;
}

/** Hash cell lookup in local metres (the hash is padded by 20 m). */
export function hashCell(s: Solids, x: number, y: number): number {
  const q = Math.max(0, Math.min(s.cols - 1, Math.floor((x + 20) / s.cell)));
  const r = Math.max(0, Math.min(s.rows - 1, Math.floor((y + 20) / s.cell)));
  return r * s.cols + q;
}

/**
 * A ray in the plane y = y0: it starts at (x0, y0, z0) and for a drop of u
 * metres it is at (x0 + slope * u, y0, z0 - u), slope = tan(scan angle).
 * Writes the entry and exit drops into out[0], out[1]; false when missed.
 */
export function intersectSolid(s: Solids, i: number, x0: number, y0: number, z0: number, slope: number, out: Float64Array): boolean {
  const kind = s.kind[i]!;
  if (kind === SOLID_ELLIPSOID) {
    const px = x0 - s.a[i]!, py = y0 - s.b[i]!, pz = z0 - s.c[i]!;
    const ia2 = 1 / (s.d[i]! * s.d[i]!), ic2 = 1 / (s.e[i]! * s.e[i]!);
    const A = slope * slope * ia2 + ic2;
    const B = 2 * (px * slope * ia2 - pz * ic2);
    const C = (px * px + py * py) * ia2 + pz * pz * ic2 - 1;
    const disc = B * B - 4 * A * C;
    if (disc <= 0) return false;
    const r = Math.sqrt(disc);
    out[0] = (-B - r) / (2 * A); out[1] = (-B + r) / (2 * A);
    return true;
  }
  if (kind === SOLID_CONE) {
    // Inside: (px + slope u)^2 + py^2 <= k^2 (u - q)^2 for u in [q, q + depth], q = drop to the apex.
    const px = x0 - s.a[i]!, py = y0 - s.b[i]!;
    const q = z0 - s.c[i]!, depth = s.e[i]!, k = s.d[i]! / depth;
    const A = slope * slope - k * k;
    const B = 2 * px * slope + 2 * k * k * q;
    const C = px * px + py * py - k * k * q * q;
    return convexInterval(A, B, C, q, q + depth, out);
  }
  if (kind === SOLID_CYLINDER) {
    const px = x0 - s.a[i]!, py = y0 - s.b[i]!, r2 = s.d[i]! * s.d[i]!;
    const lo = z0 - s.e[i]!, hi = z0 - s.c[i]!;
    return convexInterval(slope * slope, 2 * px * slope, px * px + py * py - r2, lo, hi, out);
  }
  // Box with the roof height it has at this y (gable ridge along x, at mid y).
  if (y0 < s.c[i]! || y0 > s.d[i]!) return false;
  const mid = (s.c[i]! + s.d[i]!) / 2, half = (s.d[i]! - s.c[i]!) / 2;
  const roof = s.eave[i]! + (s.ridge[i]! - s.eave[i]!) * (1 - Math.abs(y0 - mid) / half);
  let lo = z0 - roof, hi = z0 - s.e[i]!;
  if (slope === 0) {
    if (x0 < s.a[i]! || x0 > s.b[i]!) return false;
  } else {
    let u1 = (s.a[i]! - x0) / slope, u2 = (s.b[i]! - x0) / slope;
    if (u1 > u2) { const t = u1; u1 = u2; u2 = t; }
    lo = Math.max(lo, u1); hi = Math.min(hi, u2);
  }
  if (lo >= hi) return false;
  out[0] = lo; out[1] = hi;
  return true;
}

/** The interval of u in [lo, hi] where A u^2 + B u + C <= 0, for solids whose cut with a line is one interval. */
function convexInterval(A: number, B: number, C: number, lo: number, hi: number, out: Float64Array): boolean {
  const f = (u: number) => (A * u + B) * u + C;
  const pts = [lo, hi];
  if (Math.abs(A) < 1e-12) {
    if (Math.abs(B) > 1e-12) pts.push(-C / B);
  } else {
    const disc = B * B - 4 * A * C;
    if (disc >= 0) { const r = Math.sqrt(disc); pts.push((-B - r) / (2 * A), (-B + r) / (2 * A)); }
  }
  const cut = pts.filter((u) => u >= lo && u <= hi).sort((p, q) => p - q);
  let a = Infinity, b = -Infinity;
  for (let j = 0; j + 1 < cut.length; j++) {
    const m = (cut[j]! + cut[j + 1]!) / 2;
    if (cut[j + 1]! > cut[j]! && f(m) <= 0) { if (cut[j]! < a) a = cut[j]!; if (cut[j + 1]! > b) b = cut[j + 1]!; }
  }
  if (!(b > a)) return false;
  out[0] = a; out[1] = b;
  return true;
}

/** Drop u at which the ray meets the terrain (Newton on z0 - u = ground(x0 + slope u, y0)). */
export function intersectGround(t: Terrain, x0: number, y0: number, z0: number, slope: number): number {
  let u = z0 - groundZ(t, x0, y0);
  for (let k = 0; k < 6; k++) {
    const x = x0 + slope * u;
    const f = z0 - u - groundZ(t, x, y0);
    const df = -1 - groundDx(t, x, y0) * slope;
    const du = f / df;
    u -= du;
    if (Math.abs(du) < 1e-4) break;
  }
  return u;
}

/** Height of a tree's crown surface seen from straight above at (x, y), or -Infinity outside it. */
export function crownTopZ(t: SceneTree, x: number, y: number): number {
  const dx = x - t.x, dy = y - t.y, r2 = dx * dx + dy * dy, R = t.crownRadiusM;
  if (r2 > R * R) return -Infinity;
  const top = t.groundZ + t.heightM;
  if (t.group === 'conifer') return top - (Math.sqrt(r2) / R) * t.crownDepthM;
  const c = t.crownDepthM / 2;
  return top - c + c * Math.sqrt(1 - r2 / (R * R));
}
