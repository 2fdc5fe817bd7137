/**
 * The `crowntally` command line. Contract (scripts depend on it):
 *   exit 0 done; 2 bad input or options (one `error:` line on stderr); 1 internal failure.
 */
import { readFileSync } from 'node:fs';
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { CrowntallyError, isCrowntallyError } from '../errors.js';
import { CAUTION } from '../export/caution.js';
import { makeLonLatTransform } from '../crs/transform.js';
import type { TallyOptions, WindowTable } from '../options.js';
import type { TallyResult } from '../result.js';
import { tallyTiled } from '../tiles.js';
import { tally } from '../pipeline.js';
import { bufferSource } from '../io/sources.js';
import { numberArg, parseArgs, type ParsedArgs } from './args.js';
import { demoBytes } from './environment.js';
import { fileSource } from './file-source.js';
import { inspectFiles, withPool } from './index.js';
import { LOCAL_ONLY_WARNING, writeOutputs } from './outputs.js';
import { progressBar } from './progress.js';
import { nodeParallelism } from './worker-adapter.js';

const VERSION: string = (() => {
  try {
    return JSON.parse(readFileSync(new URL('../../../package.json', import.meta.url), 'utf8')).version as string;
  } catch { return '0.0.0'; }
})();

const HELP = `crowntally ${VERSION}: trees from a lidar survey (LAS, LAZ or XYZ text)

usage:
  crowntally inspect FILE [--json] [--crs EPSG:NNNN]
  crowntally tally FILE [FILE...] --out DIR [options]
  crowntally demo [--scene park|orchard|canopy] [--out DIR] [options]

tally options (lengths in metres):
  --cell-size M         CHM cell edge (default: from point density)
  --min-height M        lowest tree height (default 2)
  --window NAME|TABLE   treetop search window: deciduous, pines, combined (default),
                        or a table of height:window pairs, e.g. 5:3,15:5,30:9
  --crown-floor F       a cell joins a crown only above F x its top height (default 0.3)
  --crown-reach M       largest distance from a top to its crown edge (default: 1.5 windows, at least 3)
  --smooth M            Gaussian smoothing of the CHM before treetops, sigma in m (default 0.3)
  --ground auto|class|filter   ground source (default auto: class 2 if present)
  --keep-overlap        keep points flagged as overlap
  --no-pit-fill         leave CHM pits as they are
  --crs EPSG:NNNN       CRS for files that carry none (XYZ text)
  --local-only          no CRS: write trees.csv with x/y only, no lon/lat and no GeoJSON
  --tile M              process in square tiles of M metres (large areas)
  --workers N           threads decoding LAZ (default: all cores)
  --quiet               no progress bar

outputs in DIR: trees.csv, trees.geojson, chm.tif, summary.json

${CAUTION}
`;

const TALLY_VALUES = ['out', 'cell-size', 'min-height', 'window', 'crown-floor', 'crown-reach', 'smooth', 'ground', 'crs', 'tile', 'workers', 'scene'] as const;
const TALLY_FLAGS = ['keep-overlap', 'no-pit-fill', 'local-only', 'quiet', 'json'] as const;

function parseWindow(s: string): TallyOptions['window'] {
  if (s === 'deciduous' || s === 'pines' || s === 'combined') return s;
  const pairs = s.split(',').map((p) => p.split(':').map(Number));
  if (pairs.length === 0 || pairs.some((p) => p.length !== 2 || !p.every(Number.isFinite))) {
    throw new CrowntallyError('BAD_OPTIONS', `--window must be deciduous, pines, combined or height:window pairs such as 5:3,15:5 (got "${s}")`);
  }
  return pairs.map(([heightM, windowM]) => ({ heightM: heightM!, windowM: windowM! })) as WindowTable;
}

function optionsFrom(p: ParsedArgs): Partial<TallyOptions> {
  const o: Partial<TallyOptions> = {};
  const cell = numberArg(p, 'cell-size', 0.05, 50, 'm'); if (cell !== undefined) o.cellSizeM = cell;
  const mh = numberArg(p, 'min-height', 0, 100, 'm'); if (mh !== undefined) o.minHeightM = mh;
  const fl = numberArg(p, 'crown-floor', 0, 0.99, ''); if (fl !== undefined) o.crownFloorFraction = fl;
  const re = numberArg(p, 'crown-reach', 0.1, 100, 'm'); if (re !== undefined) o.crownReachM = re;
  const sm = numberArg(p, 'smooth', 0, 10, 'm'); if (sm !== undefined) o.smoothSigmaM = sm;
  const w = p.values.get('window'); if (w !== undefined) o.window = parseWindow(w);
  const g = p.values.get('ground');
  if (g !== undefined) {
    if (g !== 'auto' && g !== 'class' && g !== 'filter') throw new CrowntallyError('BAD_OPTIONS', `--ground must be auto, class or filter (got "${g}")`);
    o.ground = g;
  }
  if (p.flags.has('keep-overlap')) o.dropOverlap = false;
  if (p.flags.has('no-pit-fill')) o.fillPits = false;
  return o;
}

function checkCrsArg(p: ParsedArgs): string | undefined {
  const c = p.values.get('crs');
  if (c !== undefined && !/^EPSG:\d{4,6}$/i.test(c)) throw new CrowntallyError('BAD_OPTIONS', `--crs must look like EPSG:32633 (got "${c}")`);
  return c?.toUpperCase();
}

function say(s: string): void { process.stderr.write(s + '\n'); }

function report(r: TallyResult, dir: string, localOnly: boolean): void {
  const s = r.summary;
  say(`${s.treeCount} trees (${s.treesPerHa.toFixed(1)} per ha, canopy cover ${(s.canopyCover * 100).toFixed(1)}%, ` +
    `tallest ${Number.isFinite(s.maxHeightM) ? s.maxHeightM.toFixed(1) : '-'} m), cell ${r.options.cellSizeM} m; written to ${dir}`);
  for (const w of r.warnings) say(`warning: ${w}`);
  if (localOnly) say(`warning: ${LOCAL_ONLY_WARNING}`);
  say(`note: ${CAUTION}`);
}

async function runTally(files: string[] | 'demo', p: ParsedArgs, dir: string): Promise<number> {
  const options = optionsFrom(p);
  const crs = checkCrsArg(p);
  const localOnly = p.flags.has('local-only');
  const workers = numberArg(p, 'workers', 1, 256, 'threads') ?? nodeParallelism();
  if (!Number.isInteger(workers)) throw new CrowntallyError('BAD_OPTIONS', '--workers must be a whole number');
  const tile = numberArg(p, 'tile', 10, 100000, 'm');
  const bar = progressBar(process.stderr, !p.flags.has('quiet') && Boolean(process.stderr.isTTY));
  const ctrl = new AbortController();
  const onSig = () => ctrl.abort();
  process.once('SIGINT', onSig);
  try {
    const sources = files === 'demo'
      ? [bufferSource(await demoBytes((p.values.get('scene') ?? 'park') as 'park' | 'orchard' | 'canopy'), 'demo.las')]
      : await Promise.all(files.map((f) => fileSource(f)));
    const result = await withPool(workers, async (extra) => {
      const run = { options, ...(crs ? { crs } : {}), requireCrs: !localOnly, signal: ctrl.signal, onProgress: bar.update, ...extra };
      return tile ? tallyTiled(sources, run, tile) : tally(sources, run);
    });
    bar.done();
    if (!localOnly) makeLonLatTransform(result.crs); // fail before writing anything when the CRS cannot be used
    await writeOutputs(dir, result, { localOnly, version: VERSION });
    report(result, dir, localOnly);
    return 0;
  } finally {
    bar.done();
    process.off('SIGINT', onSig);
  }
}

async function runInspect(p: ParsedArgs): Promise<number> {
  if (p.positional.length !== 1) throw new CrowntallyError('BAD_OPTIONS', 'inspect takes one FILE');
  const crs = checkCrsArg(p);
  const [r] = await inspectFiles(p.positional, crs ? { crs } : {});
  if (p.flags.has('json')) {
    process.stdout.write(JSON.stringify(r, (_k, v) => (typeof v === 'number' && !Number.isFinite(v) ? null : v), 2) + '\n');
    return 0;
  }
  const o = r!;
  const lines = [
    `file            ${o.name}`,
    `format          ${o.kind.toUpperCase()} ${o.version}${o.pointFormat !== null ? `, point format ${o.pointFormat}` : ''}`,
    `points          ${o.points.toLocaleString('en')}`,
    `bounds          x ${o.bounds.minX} to ${o.bounds.maxX}, y ${o.bounds.minY} to ${o.bounds.maxY}, z ${o.bounds.minZ} to ${o.bounds.maxZ}`,
    `CRS             ${o.crs.epsg ? `EPSG:${o.crs.epsg}` : o.crs.proj4 ? 'user-defined' : 'unknown'}, unit ${o.crs.unitName} (${o.crs.unitM} m)`,
    ...o.crs.notes.map((n) => `                ${n}`),
    `density         ${o.firstReturnDensityPerM2.toFixed(2)} first returns per m2 over ${o.densityArea}`,
    `quality level   ${o.qualityLevel} (${o.qualityNote})`,
    `classes         ${Object.entries(o.classes).map(([k, v]) => `${k} ${o.classNames[k] ?? ''}: ${v}`).join('; ')}`,
    `returns         ${Object.entries(o.returns).map(([k, v]) => `${k}: ${v}`).join(', ')}`,
    `colour          ${o.hasRgb ? 'yes' : 'no'}; GPS time ${o.hasGpsTime ? 'yes' : 'no'}`,
    `photogrammetric ${o.looksPhotogrammetric ? 'looks so' : 'no'}${o.photogrammetricReason ? ` (${o.photogrammetricReason})` : ''}`,
    ...(o.skippedLines ? [`skipped lines   ${o.skippedLines}`] : []),
    ...o.warnings.map((w) => `warning: ${w}`),
  ];
  process.stdout.write(lines.join('\n') + '\n');
  return 0;
}

export async function main(argv: string[]): Promise<number> {
  const [cmd, ...rest] = argv;
  try {
    if (!cmd || cmd === 'help' || cmd === '--help' || cmd === '-h') { process.stdout.write(HELP); return cmd ? 0 : 2; }
    if (cmd === '--version') { process.stdout.write(VERSION + '\n'); return 0; }
    const p = parseArgs(rest, { values: TALLY_VALUES, flags: TALLY_FLAGS });
    if (cmd === 'inspect') return await runInspect(p);
    if (cmd === 'tally') {
      const dir = p.values.get('out');
      if (!dir) throw new CrowntallyError('BAD_OPTIONS', 'tally needs --out DIR for its outputs');
      if (p.positional.length === 0) throw new CrowntallyError('BAD_OPTIONS', 'tally needs at least one FILE');
      return await runTally(p.positional, p, dir);
    }
    if (cmd === 'demo') {
      const dir = p.values.get('out') ?? 'demo-output';
      const scene = p.values.get('scene') ?? 'park';
      if (scene !== 'park' && scene !== 'orchard' && scene !== 'canopy') throw new CrowntallyError('BAD_OPTIONS', `--scene must be park, orchard or canopy (got "${scene}")`);
      await mkdir(dir, { recursive: true });
      const las = await demoBytes(scene);
      await writeFile(join(dir, `demo-${scene}.las`), las);
      say(`demo: an invented ${scene} survey (${(las.byteLength / 1e6).toFixed(1)} MB) written to ${join(dir, `demo-${scene}.las`)}`);
      return await runTally([join(dir, `demo-${scene}.las`)], p, dir);
    }
    throw new CrowntallyError('BAD_OPTIONS', `unknown command "${cmd}"; use inspect, tally or demo (crowntally --help)`);
  } catch (e) {
    if (isCrowntallyError(e)) {
      if (e.code === 'ABORTED') { say('error: cancelled'); return 2; }
      say(`error: ${e.message.replace(/\s*\n\s*/g, ' ')}`);
      return e.code === 'INTERNAL' ? 1 : 2;
    }
    say(`error: internal failure: ${e instanceof Error ? e.message : String(e)}`);
    return 1;
  }
}
