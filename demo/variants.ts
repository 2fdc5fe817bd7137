import { CrowntallyError } from '../lib/errors.js';
import { openPointCloud } from '../lib/io/open.js';
import { bufferSource } from '../lib/io/sources.js';
import type { LasHeader, PointChunk } from '../lib/io/types.js';
import { writeLas, type WritablePointFormat } from '../lib/io/las-writer.js';
import { makeRng } from './random.js';
import { US_SURVEY_FOOT_M, utmWkt } from './crs.js';
import { MATERIALS, MAT } from './scene.js';

/**
 * The same invented survey under other conditions, for testing that the
 * pipeline finds the same trees: without classes, in US survey feet, and as a
 * colour-only top-surface cloud like one made from overlapping photographs.
 * Each takes LAS bytes and returns new LAS bytes (read with the project reader).
 */

/** All points of a LAS file in one chunk, with its header and WKT. */
export async function readSurvey(las: Uint8Array): Promise<{ points: PointChunk; header: LasHeader; wkt: string | null }> {
  const pc = await openPointCloud(bufferSource(las, 'survey.las'));
  const parts: PointChunk[] = [];
  for await (const c of pc.chunks()) parts.push(c);
  await pc.close();
  const wktVlr = pc.vlrs.find((v) => v.userId === 'LASF_Projection' && v.recordId === 2112);
  const wkt = wktVlr ? String.fromCharCode(...wktVlr.data).replace(/\0+$/, '') : null;
  return { points: concatChunks(parts), header: pc.header, wkt };
}

export function concatChunks(parts: PointChunk[]): PointChunk {
  const n = parts.reduce((s, p) => s + p.count, 0);
  const first = parts[0];
  const out: PointChunk = {
    count: n, x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n), intensity: new Uint16Array(n),
    returnNumber: new Uint8Array(n), numberOfReturns: new Uint8Array(n), classification: new Uint8Array(n),
    flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n),
  };
  if (first?.gpsTime) out.gpsTime = new Float64Array(n);
  if (first?.red && first.green && first.blue) { out.red = new Uint16Array(n); out.green = new Uint16Array(n); out.blue = new Uint16Array(n); }
  let at = 0;
  for (const p of parts) {
    for (const k of ['x', 'y', 'z', 'intensity', 'returnNumber', 'numberOfReturns', 'classification', 'flags', 'scanAngleDeg', 'gpsTime', 'red', 'green', 'blue'] as const) {
      const dst = out[k], src = p[k];
      if (dst && src) (dst as Float64Array).set(src.subarray(0, p.count) as Float64Array, at);
    }
    at += p.count;
  }
  return out;
}

function format(h: LasHeader): WritablePointFormat {
  const f = h.pointFormat;
  if (f === 0 || f === 1 || f === 2 || f === 3 || f === 6 || f === 7) return f;
  throw new CrowntallyError('UNSUPPORTED', `point format ${f} cannot be rewritten here; use a survey in format 0-3, 6 or 7`);
}

const DEMO_DATE = { creationDay: 152, creationYear: 2024 } as const;

/** Every class set to 1 (unclassified) or 0 (never classified): the pipeline must find ground itself. */
export async function unclassified(las: Uint8Array, code: 0 | 1 = 1): Promise<Uint8Array> {
  const { points, header, wkt } = await readSurvey(las);
  points.classification.fill(code);
  return writeLas(points, { pointFormat: format(header), scale: header.scale, offset: header.offset, ...(wkt ? { wkt } : {}), ...DEMO_DATE, software: 'Crowntally demo' });
}

/** Largest 1-2-5 step at or below v (a tidy coordinate quantum). */
function tidyStep(v: number): number {
  const p = 10 ** Math.floor(Math.log10(v));
  return v >= 5 * p ? 5 * p : v >= 2 * p ? 2 * p : p;
}

/**
 * Coordinates and heights in US survey feet (1 ftUS = 1200/3937 m, NIST),
 * the CRS as a WKT of UTM zone 33N with the US survey foot as its unit
 * (formats 6-10 carry WKT), the scale rescaled to a tidy step of similar size.
 */
export async function toUsSurveyFeet(las: Uint8Array): Promise<Uint8Array> {
  const { points, header } = await readSurvey(las);
  const f = 1 / US_SURVEY_FOOT_M;
  for (let i = 0; i < points.count; i++) { points.x[i]! *= f; points.y[i]! *= f; points.z[i]! *= f; }
  const scale = header.scale.map((s) => tidyStep(s * f)) as [number, number, number];
  const offset = header.offset.map((o) => Math.round(o * f)) as [number, number, number];
  const fmt = format(header);
  if (fmt < 6) throw new CrowntallyError('UNSUPPORTED', 'toUsSurveyFeet writes the CRS as WKT and needs a point format 6 or 7 survey');
  return writeLas(points, { pointFormat: fmt, scale, offset, wkt: utmWkt(33, 'us-survey-foot'), ...DEMO_DATE, software: 'Crowntally demo' });
}

/**
 * A top-surface cloud like one matched from overlapping photographs: point
 * format 7 with colour, every point return 1 of 1, intensity 0, no GPS time,
 * only the first return of each pulse (nothing under the canopy), and denser:
 * each kept point is joined by `densityFactor - 1` neighbours within 0.15 m
 * horizontally with 5 cm of height noise (surface matching is noisier than ranging).
 * Low noise (class 7) is dropped.
 */
export async function photogrammetricLike(las: Uint8Array, opts: { densityFactor?: number; seed?: number } = {}): Promise<Uint8Array> {
  const k = opts.densityFactor ?? 2;
  if (!(Number.isInteger(k) && k >= 1 && k <= 8)) throw new CrowntallyError('BAD_OPTIONS', `densityFactor must be a whole number 1-8 (got ${k})`);
  const { points: p, header, wkt } = await readSurvey(las);
  const rng = makeRng(opts.seed ?? 7);
  // Unclassified points (in the demo surveys: the lone high outliers) are not densified, so a
  // lone outlier stays a lone point instead of turning into a small cluster.
  const copies = (cls: number) => (cls === 1 || cls === 0 ? 1 : k);
  let n = 0;
  for (let i = 0; i < p.count; i++) if (p.returnNumber[i]! <= 1 && p.classification[i] !== 7) n += copies(p.classification[i]!);
  const o: PointChunk = {
    count: n, x: new Float64Array(n), y: new Float64Array(n), z: new Float64Array(n), intensity: new Uint16Array(n),
    returnNumber: new Uint8Array(n).fill(1), numberOfReturns: new Uint8Array(n).fill(1), classification: new Uint8Array(n),
    flags: new Uint8Array(n), scanAngleDeg: new Float32Array(n), gpsTime: new Float64Array(n),
    red: new Uint16Array(n), green: new Uint16Array(n), blue: new Uint16Array(n),
  };
  const fallback = (cls: number) => MATERIALS[cls === 2 ? MAT.grass : cls === 6 ? MAT.flatRoof : cls >= 3 && cls <= 5 ? MAT.broadleaf : MAT.soil]!.rgb;
  let j = 0;
  for (let i = 0; i < p.count; i++) {
    if (p.returnNumber[i]! > 1 || p.classification[i] === 7) continue;
    const rgb = p.red && p.green && p.blue ? [p.red[i]!, p.green[i]!, p.blue[i]!] : fallback(p.classification[i]!);
    for (let c = 0, m = copies(p.classification[i]!); c < m; c++, j++) {
      const jitter = c === 0 ? 0 : 0.15;
      o.x[j] = p.x[i]! + rng.range(-jitter, jitter);
      o.y[j] = p.y[i]! + rng.range(-jitter, jitter);
      o.z[j] = p.z[i]! + rng.normal(0, 0.05);
      o.classification[j] = p.classification[i]!;
      o.red![j] = rgb[0]!; o.green![j] = rgb[1]!; o.blue![j] = rgb[2]!;
    }
  }
  return writeLas(o, { pointFormat: 7, scale: header.scale, offset: header.offset, ...(wkt ? { wkt } : {}), ...DEMO_DATE, software: 'Crowntally demo' });
}
