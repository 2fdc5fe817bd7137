/**
 * The job, stage by stage: points -> surfaces -> ground -> DTM -> CHM ->
 * treetops -> crowns -> non-tree rejection -> outlines -> per-tree metrics.
 * This module only orders the stages, streams the points, reports progress
 * and checks the abort signal; each stage lives in its own module.
 */
import { aoiBounds, markInside, rectIntersect, type Rect } from './aoi.js';
import { CrowntallyError, throwIfAborted } from './errors.js';
import { chunkBytes, subsetChunk } from './io/chunks.js';
import { crsFromUserText } from './io/crs.js';
import { makeLonLatTransform } from './crs/transform.js';
import { openPointCloud } from './io/open.js';
import type { LazPerfProvider } from './io/laz.js';
import { ReadoutAccumulator } from './io/readout.js';
import type { ByteSource, CrsInfo, PointChunk, PointCloud, SurveyReadout } from './io/types.js';
import { resolveOptions, type TallyOptions } from './options.js';
import { defaultCellSizeM } from './raster/cellsize.js';
import { checkGeometry, type Grid, type GridGeometry } from './raster/grid.js';
import { SurfaceAccumulator } from './raster/surfaces.js';
import { groundFromFilter } from './ground/index.js';
import { tinDtm } from './raster/tin.js';
import { canopyHeight } from './raster/chm.js';
import { gaussianSmooth } from './raster/smooth.js';
import type { ProgressEvent, TallyResult } from './result.js';
import { findTreetops, type Treetops } from './trees/treetops.js';
import { autoReachM, growCrowns } from './trees/crowns.js';
import { rejectNonTrees } from './trees/nontree.js';
import { traceOutlines } from './trees/outlines.js';
import { TreeMetricsAccumulator } from './trees/metrics.js';
import { ProfileAccumulator, surveySummary } from './trees/summary.js';
import { pointHeightBuffers, pointHeights } from './trees/heights.js';
import type { TreeTable } from './trees/table.js';
import type { AreaOfInterest, TreePoints } from './worker/protocol.js';
import { mergeReadouts } from './io/readout-merge.js';
import { ChunkStreamer, type ChunkDecoder } from './io/chunk-stream.js';

export interface TallyRun {
  options?: Partial<TallyOptions>;
  /** "EPSG:NNNN" for files without a CRS. */
  crs?: string;
  aoi?: AreaOfInterest;
  signal?: AbortSignal;
  onProgress?: (p: ProgressEvent) => void;
  lazPerf?: LazPerfProvider;
  /** Decodes LAZ chunks elsewhere (a worker pool); absent: in this thread. */
  chunkDecoder?: ChunkDecoder;
  /** Tiles: only points inside `clip` are read, only trees whose top lies in `keep` are kept. */
  clip?: Rect;
  keep?: Rect;
  /** Stop at once when the survey's CRS is unknown (outputs need lon/lat). */
  requireCrs?: boolean;
}

/** Stage weights for the progress fraction (reading dominates). */
const W = { read: 0.45, ground: 0.05, dtm: 0.07, chm: 0.05, treetops: 0.05, crowns: 0.05, outlines: 0.03, metrics: 0.25 };
const ORDER = ['read', 'ground', 'dtm', 'chm', 'treetops', 'crowns', 'outlines', 'metrics'] as const;

function progressReporter(run: TallyRun, pointsTotal: number) {
  let pointsRead = 0;
  const base = (stage: (typeof ORDER)[number]) => {
    let f = 0;
    for (const s of ORDER) { if (s === stage) break; f += W[s]; }
    return f;
  };
  return {
    set points(n: number) { pointsRead = n; },
    report(stage: (typeof ORDER)[number], within: number): void {
      throwIfAborted(run.signal);
      run.onProgress?.({ stage, fraction: Math.min(1, base(stage) + W[stage] * Math.min(1, Math.max(0, within))), pointsRead, pointsTotal });
    },
  };
}

/** Opens every input; a CRS given by the caller overrides the files'. */
export async function openInputs(inputs: ByteSource[], run: Pick<TallyRun, 'crs' | 'lazPerf'>): Promise<PointCloud[]> {
  if (inputs.length === 0) throw new CrowntallyError('EMPTY', 'no survey files were given');
  const crs = run.crs ? crsFromUserText(run.crs) : undefined;
  const clouds: PointCloud[] = [];
  try {
    for (const s of inputs) clouds.push(await openPointCloud(s, { ...(crs ? { crs } : {}), ...(run.lazPerf ? { lazPerf: run.lazPerf } : {}) }));
  } catch (e) {
    await Promise.all(clouds.map((c) => c.close()));
    throw e;
  }
  const u = clouds[0]!.crs.unitM;
  for (const c of clouds) {
    if (Math.abs(c.crs.unitM - u) > 1e-12 || c.crs.epsg !== clouds[0]!.crs.epsg) {
      await Promise.all(clouds.map((k) => k.close()));
      throw new CrowntallyError('BAD_OPTIONS', `${c.name} is in a different CRS from ${clouds[0]!.name}; tiles processed together must share one CRS`);
    }
  }
  return clouds;
}

/** The read-out of each input, streaming each once. */
export async function inspectInputs(inputs: ByteSource[], run: Pick<TallyRun, 'crs' | 'lazPerf' | 'signal' | 'chunkDecoder'>): Promise<SurveyReadout[]> {
  const clouds = await openInputs(inputs, run);
  try {
    const out: SurveyReadout[] = [];
    for (const c of clouds) {
      const acc = new ReadoutAccumulator(c);
      for await (const chunk of new ChunkStreamer(c, run.chunkDecoder).chunks(run.signal)) acc.add(chunk);
      out.push(acc.finish());
    }
    return out;
  } finally {
    await Promise.all(clouds.map((c) => c.close()));
  }
}

function unionBounds(clouds: PointCloud[]): Rect {
  const r = { minX: Infinity, minY: Infinity, maxX: -Infinity, maxY: -Infinity };
  for (const c of clouds) {
    const b = c.header.bounds;
    r.minX = Math.min(r.minX, b.minX); r.minY = Math.min(r.minY, b.minY);
    r.maxX = Math.max(r.maxX, b.maxX); r.maxY = Math.max(r.maxY, b.maxY);
  }
  return r;
}

/**
 * Cell size: the user's, or the density rule of lib/raster/cellsize.ts with
 * first returns per m2 over the header's bounding box (known before the
 * points are read; over occupied cells it would be higher, so this errs to
 * the coarser cell).
 */
export function chooseCellSizeM(clouds: PointCloud[], options: TallyOptions, area?: Rect): number {
  if (options.cellSizeM !== 'auto') return options.cellSizeM;
  const b = area ?? unionBounds(clouds);
  const unitM = clouds[0]!.crs.unitM;
  let first = 0;
  for (const c of clouds) first += c.header.pointsByReturn[0] || c.header.pointCount;
  const areaM2 = Math.max(1, (b.maxX - b.minX) * (b.maxY - b.minY) * unitM * unitM);
  return defaultCellSizeM(first / areaM2);
}

/** A grid geometry covering `r`, cells aligned to whole multiples of the cell size (so tiles and the whole share cells). */
export function geometryFor(r: Rect, cellSize: number): GridGeometry {
  const originX = Math.floor(r.minX / cellSize) * cellSize;
  const originY = Math.ceil(r.maxY / cellSize) * cellSize;
  const width = Math.max(1, Math.floor((r.maxX - originX) / cellSize) + 1);
  const height = Math.max(1, Math.floor((originY - r.minY) / cellSize) + 1);
  return { width, height, cellSize, originX, originY };
}

/** Reach used by the crowns and the tile buffer: the option, or the window at the top's height. */
function largestReachM(o: TallyOptions, maxHeightM: number): number {
  return o.crownReachM === 'auto' ? autoReachM(o.window, maxHeightM) : o.crownReachM;
}

/** Runs the whole job over one area (all inputs together, as one survey). */
export async function tally(inputs: ByteSource[], run: TallyRun = {}): Promise<TallyResult> {
  const options = resolveOptions(run.options);
  const clouds = await openInputs(inputs, run);
  try {
    return await tallyClouds(clouds, options, run);
  } finally {
    await Promise.all(clouds.map((c) => c.close()));
  }
}

/**
 * The area of interest in survey CRS units: a lon/lat polygon (GeoJSON,
 * RFC 7946 order: longitude first) has its vertices reprojected; edges stay
 * straight in the survey CRS, which over a survey's extent differs from the
 * geodesic by far less than a cell.
 */
function surveyAoi(a: AreaOfInterest, crs: CrsInfo): AreaOfInterest {
  if (a.kind !== 'polygon' || !a.lonLat) return a;
  let t: ReturnType<typeof makeLonLatTransform>;
  try {
    t = makeLonLatTransform(crs);
  } catch (e) {
    if (e instanceof CrowntallyError) {
      throw new CrowntallyError(e.code, `the boundary is in longitude/latitude but ${e.message}`);
    }
    throw e;
  }
  const rings = a.rings.map((ring) => ring.map((p) => {
    const lon = p[0], lat = p[1];
    if (typeof lon !== 'number' || typeof lat !== 'number' || !(Math.abs(lon) <= 180) || !(Math.abs(lat) <= 90)) {
      throw new CrowntallyError('BAD_OPTIONS', 'the boundary has a vertex that is not a longitude/latitude in degrees (longitude first, as GeoJSON asks)');
    }
    const [x, y] = t.fromLonLat(lon, lat);
    return [x, y];
  }));
  return { kind: 'polygon', rings };
}

export async function tallyClouds(clouds: PointCloud[], options: TallyOptions, run: TallyRun): Promise<TallyResult> {
  const crs: CrsInfo = clouds[0]!.crs;
  if (run.requireCrs && !crs.proj4) {
    throw new CrowntallyError(crs.epsg !== null ? 'CRS_UNSUPPORTED' : 'CRS_UNKNOWN', `the CRS of ${clouds[0]!.name} is unknown, so trees cannot be placed on the globe; give it with --crs EPSG:NNNN, or ask for local outputs only (--local-only)`);
  }
  const unitM = crs.unitM;
  const vu = crs.verticalUnitM;
  const warnings: string[] = [];
  // A code the carried definitions do not know: its unit is a guess, so say so in the result.
  if (!crs.proj4 && crs.epsg !== null) {
    warnings.push(`EPSG:${crs.epsg} is not among the carried CRS definitions: lengths and heights were taken as metres and trees cannot be placed on a map; give a carried EPSG code if the unit is not the metre`);
  }

  const survey = unionBounds(clouds);
  let area: Rect | null = survey;
  const aoi = run.aoi ? surveyAoi(run.aoi, crs) : undefined;
  const polygon = aoi?.kind === 'polygon' ? aoi.rings : undefined;
  if (aoi) area = rectIntersect(area, aoiBounds(aoi));
  if (run.clip) area = area && rectIntersect(area, run.clip);
  if (!area) throw new CrowntallyError('EMPTY', 'the area of interest does not overlap the survey');
  if (aoi) warnings.push('the survey was limited to an area of interest: trees are those with their top inside it, and a crown that crosses its edge is measured only inside it');
  // Half-open edges in markInside: widen by a hair so the survey's own max points
  // stay in; only there, since an area's or a tile's own max edge must stay exact
  // (the hair is millimetres at UTM northings).
  const hair = (v: number): number => v + 1e-9 * Math.max(1, Math.abs(v));
  const readRect: Rect = {
    ...area,
    maxX: area.maxX >= survey.maxX ? hair(area.maxX) : area.maxX,
    maxY: area.maxY >= survey.maxY ? hair(area.maxY) : area.maxY,
  };
  const clipping = Boolean(run.aoi || run.clip);

  // Density is the whole survey's points over the whole survey's area: an area
  // of interest or a tile holds only part of the points the header counts.
  const cellSizeM = chooseCellSizeM(clouds, options);
  const cellSize = cellSizeM / unitM;
  const geometry = geometryFor(area, cellSize);
  checkGeometry(geometry, options.maxGridCells, unitM);

  const pointsTotal = clouds.reduce((s, c) => s + c.header.pointCount, 0);
  const progress = progressReporter(run, pointsTotal);
  progress.report('read', 0);

  // Pass 1: read-out, surfaces, and the point cache while it fits the budget.
  const readouts = clouds.map((c) => new ReadoutAccumulator(c));
  const surfaces = new SurfaceAccumulator(geometry, { verticalUnitM: vu, horizontalUnitM: unitM, dropOverlap: options.dropOverlap, maxGridCells: options.maxGridCells });
  const budget = options.pointCacheMiB * 1024 * 1024;
  let cache: PointChunk[] | null = budget > 0 ? [] : null;
  let cacheBytes = 0;
  let read = 0;
  let keep = new Uint8Array(0);
  for (let i = 0; i < clouds.length; i++) {
    for await (let chunk of new ChunkStreamer(clouds[i]!, run.chunkDecoder).chunks(run.signal)) {
      readouts[i]!.add(chunk);
      read += chunk.count;
      if (clipping) {
        if (keep.length < chunk.count) keep = new Uint8Array(chunk.count);
        const n = markInside(chunk, readRect, keep, polygon);
        chunk = n === chunk.count ? chunk : subsetChunk(chunk, keep, n);
      }
      if (chunk.count > 0) {
        surfaces.add(chunk);
        if (cache) {
          cacheBytes += chunkBytes(chunk);
          if (cacheBytes <= budget) cache.push(chunk);
          else cache = null; // over budget: decode again in pass 2
        }
      }
      progress.points = read;
      progress.report('read', pointsTotal > 0 ? read / pointsTotal : 1);
    }
  }
  const readout = mergeReadouts(readouts.map((r) => r.finish()));
  const s = surfaces.finish();
  if (s.pointsUsed === 0) {
    throw new CrowntallyError('EMPTY', clipping
      ? 'no usable points inside the area of interest (noise, withheld and overlap points are left out)'
      : 'the survey has no usable points (all are noise, withheld or overlap)');
  }
  if (s.outliersRemoved > 0) warnings.push(`${s.outliersRemoved} isolated high returns (birds, multipath) were left out of the canopy surface`);

  // Ground.
  progress.report('ground', 0);
  let ground = s.groundPoints;
  const useClass = options.ground === 'class' || (options.ground === 'auto' && s.groundPoints.count >= 3);
  if (options.ground === 'class' && s.groundPoints.count === 0) {
    throw new CrowntallyError('NO_GROUND', 'the survey has no ground-class (2) points; choose the ground filter instead of the ground class');
  }
  if (!useClass) {
    ground = groundFromFilter(s, { unitM });
    if (options.ground === 'auto') warnings.push('the survey has no ground class: ground was found by the progressive morphological filter');
  }
  if (ground.count === 0) throw new CrowntallyError('NO_GROUND', 'no ground could be found under the survey, so heights above ground cannot be measured');

  progress.report('dtm', 0);
  const dtm = tinDtm(ground, geometry, { maxGridCells: options.maxGridCells, horizontalUnitM: unitM });
  progress.report('chm', 0);
  const chm = canopyHeight(s.dsm, dtm, { fillPits: options.fillPits });
  const sigmaCells = options.smoothSigmaM / cellSizeM;
  const chmTops = sigmaCells > 0 ? gaussianSmooth(chm, sigmaCells) : chm;

  progress.report('treetops', 0);
  let tops: Treetops = findTreetops(chmTops, { minHeightM: options.minHeightM, window: options.window, unitM, minProminenceM: options.topProminenceM, minProminenceFraction: options.topProminenceFraction });
  progress.report('crowns', 0);
  let labels = growCrowns(chm, tops, {
    minHeightM: options.minHeightM, floorFraction: options.crownFloorFraction,
    reachM: options.crownReachM, window: options.window, unitM,
  });
  // Pulses that came back as one return: roofs, decks and roads do that, foliage rarely does.
  // Only meaningful where the survey records multiple returns at all.
  const multi = s.multiReturnCounts.data;
  let anyMulti = false;
  for (let k = 0; k < multi.length && !anyMulti; k++) anyMulti = multi[k]! > 0;
  let singles: Grid<Uint32Array> | undefined;
  if (anyMulti) {
    const all = s.count.data, one = new Uint32Array(all.length);
    for (let k = 0; k < all.length; k++) one[k] = all[k]! - multi[k]!;
    singles = { ...s.geometry, data: one };
  }
  const nt = rejectNonTrees(labels, tops, {
    dsm: s.dsm, chm, pointCount: s.count, buildingCount: s.buildingCount, unitM, hasBuildingClass: s.hasBuildingClass,
    ...(singles ? { singleReturnCount: singles } : {}),
  });
  labels = nt.labels; tops = nt.tops;
  if (nt.removed > 0) warnings.push(`${nt.removed} candidate crowns were roofs or other flat surfaces and were left out`);
  if (run.keep) ({ labels, tops } = keepTopsIn(labels, tops, run.keep));

  progress.report('outlines', 0);
  const outlines = traceOutlines(labels, tops.count);

  // Pass 2: each point to its crown.
  progress.report('metrics', 0);
  // A photogrammetric cloud records every point as 1 of 1: its return statistics mean nothing, so they are absent.
  const hasReturns = (readout.returns['0'] ?? 0) !== readout.points && !readout.looksPhotogrammetric;
  const metrics = new TreeMetricsAccumulator(labels, dtm, tops, { profileLayerM: options.profileLayerM, verticalUnitM: vu, unitM, hasReturns, hasRgb: readout.hasRgb, chm });
  const profile = new ProfileAccumulator(dtm, { layerM: options.profileLayerM, verticalUnitM: vu });
  let done = 0;
  let keepMask = new Uint8Array(0);
  const heights = pointHeightBuffers();
  const feed = (c: PointChunk) => {
    // One pass places each point and measures its height; returns the isolation
    // test took out of the DSM stay out of the crowns' metrics too.
    pointHeights(c, s.dsm, dtm, vu, heights);
    metrics.addHeights(c, heights);
    if (run.keep) {
      // Tiles: the survey-wide profile counts each point once, in the tile that owns it.
      if (keepMask.length < c.count) keepMask = new Uint8Array(c.count);
      if (markInside(c, run.keep, keepMask) > 0) profile.addHeights(heights, keepMask);
    } else profile.addHeights(heights);
    done += c.count;
    progress.report('metrics', done / Math.max(1, read));
  };
  if (cache) {
    for (const c of cache) feed(c);
  } else {
    for (const cloud of clouds) {
      for await (let chunk of new ChunkStreamer(cloud, run.chunkDecoder).chunks(run.signal)) {
        if (clipping) {
          if (keep.length < chunk.count) keep = new Uint8Array(chunk.count);
          const n = markInside(chunk, readRect, keep, polygon);
          chunk = n === chunk.count ? chunk : subsetChunk(chunk, keep, n);
        }
        feed(chunk);
      }
    }
  }
  const trees: TreeTable = metrics.finish(outlines);
  const summary = surveySummary(trees, chm, { minHeightM: options.minHeightM, unitM }, profile.finish());
  if (trees.count === 0) warnings.push(`no trees of at least ${options.minHeightM} m were found`);
  if (readout.firstReturnDensityPerM2 < 2) warnings.push(`low point density (${readout.firstReturnDensityPerM2.toFixed(1)} first returns per m2): small trees may be missed and crowns merged`);
  for (const w of readout.warnings) if (!warnings.includes(w)) warnings.push(w);
  run.onProgress?.({ stage: 'done', fraction: 1, pointsRead: read, pointsTotal });
  return { readout, crs, options: { ...options, cellSizeM }, chm, dtm, labels, trees, summary, warnings };
}

/** Drops trees whose top lies outside `keep` (tiles) and renumbers labels compactly. */
function keepTopsIn(labels: Grid<Int32Array>, tops: Treetops, keep: Rect): { labels: Grid<Int32Array>; tops: Treetops } {
  const remap = new Int32Array(tops.count + 1);
  let n = 0;
  for (let i = 0; i < tops.count; i++) {
    const x = tops.x[i]!, y = tops.y[i]!;
    if (x >= keep.minX && x < keep.maxX && y >= keep.minY && y < keep.maxY) remap[i + 1] = ++n;
  }
  const pick = <T extends Int32Array | Float64Array | Float32Array>(a: T): T => {
    const out = new (a.constructor as { new (k: number): T })(n);
    for (let i = 0; i < tops.count; i++) if (remap[i + 1]) out[remap[i + 1]! - 1] = a[i]!;
    return out;
  };
  const nt: Treetops = { count: n, col: pick(tops.col), row: pick(tops.row), x: pick(tops.x), y: pick(tops.y), heightM: pick(tops.heightM) };
  const d = labels.data;
  for (let k = 0; k < d.length; k++) d[k] = remap[d[k]!]!;
  return { labels, tops: nt };
}

/**
 * Metrics again for edited crowns (merge, add): a second pass over the
 * points with the caller's label grid, DTM and tops.
 */
export async function remeasure(inputs: ByteSource[], run: TallyRun & {
  labels: Grid<Int32Array>; dtm: Grid; chm: Grid; tops: { x: Float64Array; y: Float64Array };
}): Promise<TreeTable> {
  const options = resolveOptions(run.options);
  const clouds = await openInputs(inputs, run);
  try {
    const crs = clouds[0]!.crs;
    const count = run.tops.x.length;
    const col = new Int32Array(count), row = new Int32Array(count), heightM = new Float32Array(count);
    const g = run.labels;
    for (let i = 0; i < count; i++) {
      col[i] = Math.min(g.width - 1, Math.max(0, Math.floor((run.tops.x[i]! - g.originX) / g.cellSize)));
      row[i] = Math.min(g.height - 1, Math.max(0, Math.floor((g.originY - run.tops.y[i]!) / g.cellSize)));
      heightM[i] = run.chm.data[row[i]! * g.width + col[i]!]!;
    }
    const tops: Treetops = { count, col, row, x: Float64Array.from(run.tops.x), y: Float64Array.from(run.tops.y), heightM };
    const outlines = traceOutlines(run.labels, count);
    let hasReturns = false, hasRgb = false;
    for (const c of clouds) { hasRgb ||= [2, 3, 5, 7, 8, 10].includes(c.header.pointFormat) && c.kind !== 'xyz'; }
    const metrics = new TreeMetricsAccumulator(run.labels, run.dtm, tops, { profileLayerM: options.profileLayerM, verticalUnitM: crs.verticalUnitM, unitM: crs.unitM, hasReturns: true, hasRgb, chm: run.chm });
    for (const cloud of clouds) {
      for await (const chunk of new ChunkStreamer(cloud, run.chunkDecoder).chunks(run.signal)) {
        for (let i = 0; i < chunk.count && !hasReturns; i++) if (chunk.returnNumber[i]! > 0) hasReturns = true;
        metrics.add(chunk);
      }
    }
    const t = metrics.finish(outlines);
    if (!hasReturns) t.hasReturns = false;
    return t;
  } finally {
    await Promise.all(clouds.map((c) => c.close()));
  }
}

/**
 * The points of one crown (noise, withheld and isolated returns left out),
 * for a side view: distance from the top and height above ground in metres.
 * More than `maxPoints` are thinned to an even sample (every k-th point).
 */
export async function treePoints(inputs: ByteSource[], run: TallyRun & {
  labels: Grid<Int32Array>; dtm: Grid; label: number; topX: number; topY: number; maxPoints?: number;
}): Promise<TreePoints> {
  const max = Math.max(1, Math.min(200_000, Math.floor(run.maxPoints ?? 20_000)));
  const clouds = await openInputs(inputs, run);
  try {
    const { unitM, verticalUnitM: vu } = clouds[0]!.crs;
    const L = run.labels, D = run.dtm;
    // First count the crown's points, then keep every k-th so the sample spans the whole crown.
    const scan = async (visit: (c: PointChunk, i: number, g: number) => void) => {
      for (const cloud of clouds) {
        for await (const c of new ChunkStreamer(cloud, run.chunkDecoder).chunks(run.signal)) {
          for (let i = 0; i < c.count; i++) {
            const cls = c.classification[i]!;
            if (cls === 7 || cls === 18 || c.flags[i]! & 4) continue;
            const col = Math.floor((c.x[i]! - L.originX) / L.cellSize), row = Math.floor((L.originY - c.y[i]!) / L.cellSize);
            if (col < 0 || row < 0 || col >= L.width || row >= L.height || L.data[row * L.width + col] !== run.label) continue;
            const dc = Math.floor((c.x[i]! - D.originX) / D.cellSize), dr = Math.floor((D.originY - c.y[i]!) / D.cellSize);
            const g = dc >= 0 && dr >= 0 && dc < D.width && dr < D.height ? D.data[dr * D.width + dc]! : NaN;
            if (Number.isFinite(g)) visit(c, i, g);
          }
        }
      }
    };
    let total = 0;
    await scan(() => { total++; });
    const step = Math.max(1, Math.ceil(total / max));
    const n = Math.ceil(total / step);
    const out: TreePoints = {
      count: 0, distanceM: new Float32Array(n), heightM: new Float32Array(n),
      returnNumber: new Uint8Array(n), numberOfReturns: new Uint8Array(n), classification: new Uint8Array(n),
    };
    let seen = 0;
    await scan((c, i, g) => {
      if (seen++ % step !== 0 || out.count >= n) return;
      const k = out.count++;
      out.distanceM[k] = Math.hypot(c.x[i]! - run.topX, c.y[i]! - run.topY) * unitM;
      out.heightM[k] = c.z[i]! * vu - g;
      out.returnNumber[k] = c.returnNumber[i]!; out.numberOfReturns[k] = c.numberOfReturns[i]!;
      out.classification[k] = c.classification[i]!;
    });
    return out;
  } finally {
    await Promise.all(clouds.map((c) => c.close()));
  }
}

export { largestReachM };
