import { StoreError, type EditRecord, type FieldStore, type FileRecord, type ProjectRecord, type RasterRecord, type StoredTrees } from './store.js';
import type { CrownOutlines } from '../../lib/trees/table.js';

/**
 * One survey as one file, to move it between devices or keep a copy.
 *
 * Format "Crowntally project file", version 1 (extension .ctproject):
 *
 *   bytes 0-7    ASCII "CTPROJ01" (magic; the digits are not the version)
 *   bytes 8-11   uint32 little-endian: format version (1)
 *   bytes 12-15  uint32 little-endian: manifest length L in bytes
 *   bytes 16..   L bytes of UTF-8 JSON: the manifest
 *   then         zero padding to a multiple of 8, then the data block
 *
 * The manifest is `{ format: "crowntally-project", version: 1, sections:
 * [[offset, length], ...], project, files, trees, outlines, rasters, edits }`
 * holding the stored records as they are in the device store. Values JSON
 * cannot hold are written as tagged objects:
 *   { "$typed": "Float64Array" | "Float32Array" | "Int32Array" | "Uint32Array" | "Uint8Array", "s": n }
 *   { "$blob": "<MIME type>", "s": n }          (a source file)
 *   { "$num": "NaN" | "Infinity" | "-Infinity" }
 * where n indexes `sections`, whose offsets count from the start of the data
 * block; every section starts on an 8-byte boundary so typed arrays can be
 * viewed in place. Numbers in typed arrays are little-endian. A plain object
 * whose only keys start with "$" is never a record value, so the tags cannot
 * collide with data. Readers refuse a newer version rather than guess.
 */

export const BUNDLE_MAGIC = 'CTPROJ01';
export const BUNDLE_VERSION = 1;
/** Largest manifest accepted (bytes): a guard against a corrupt length field. */
const MAX_MANIFEST = 256 * 1024 * 1024;

export interface ProjectBundle {
  project: ProjectRecord;
  files: FileRecord[];
  trees: { projectId: string; trees: StoredTrees } | null;
  outlines: { projectId: string; outlines: CrownOutlines } | null;
  rasters: RasterRecord[];
  edits: EditRecord[];
}

type Typed = Float64Array | Float32Array | Int32Array | Uint32Array | Uint8Array;
const TYPED: Record<string, new (b: ArrayBuffer, o: number, n: number) => Typed> = {
  Float64Array, Float32Array, Int32Array, Uint32Array, Uint8Array,
};

/** Reads every record of one project from the store. */
export async function readBundle(store: FieldStore, projectId: string): Promise<ProjectBundle> {
  const db = store.db;
  const tx = db.transaction(['projects', 'files', 'trees', 'outlines', 'rasters', 'edits'], 'readonly');
  const [project, files, trees, outlines, rasters, edits] = await Promise.all([
    tx.objectStore('projects').get(projectId),
    tx.objectStore('files').index('byProject').getAll(projectId),
    tx.objectStore('trees').get(projectId),
    tx.objectStore('outlines').get(projectId),
    tx.objectStore('rasters').index('byProject').getAll(projectId),
    tx.objectStore('edits').index('byProject').getAll(projectId),
  ]);
  if (!project) throw new StoreError('NOT_FOUND', 'that project is no longer on this device');
  return { project, files: files.sort((a, b) => a.index - b.index), trees: trees ?? null, outlines: outlines ?? null, rasters, edits };
}

/** The whole project as one file (see the format above). */
export async function exportProject(store: FieldStore, projectId: string): Promise<Blob> {
  const b = await readBundle(store, projectId);
  const parts: Uint8Array[] = [];
  const sections: [number, number][] = [];
  let offset = 0;
  const add = (bytes: Uint8Array): number => {
    const pad = (8 - (offset % 8)) % 8;
    if (pad) { parts.push(new Uint8Array(pad)); offset += pad; }
    sections.push([offset, bytes.byteLength]);
    parts.push(bytes);
    offset += bytes.byteLength;
    return sections.length - 1;
  };
  const enc = async (v: unknown): Promise<unknown> => {
    if (typeof v === 'number') return Number.isFinite(v) ? v : { $num: String(v) };
    if (v === null || typeof v !== 'object') return v;
    if (ArrayBuffer.isView(v)) {
      const name = v.constructor.name;
      if (!(name in TYPED)) throw new StoreError('WRITE_FAILED', `cannot write a ${name} into a project file`);
      return { $typed: name, s: add(new Uint8Array(v.buffer, v.byteOffset, v.byteLength).slice()) };
    }
    if (v instanceof Blob) return { $blob: v.type, s: add(new Uint8Array(await v.arrayBuffer())) };
    if (Array.isArray(v)) { const out = []; for (const x of v) out.push(await enc(x)); return out; }
    const out: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(v)) if (x !== undefined) out[k] = await enc(x);
    return out;
  };
  const body = await enc(b) as Record<string, unknown>;
  const manifest = new TextEncoder().encode(JSON.stringify({ format: 'crowntally-project', version: BUNDLE_VERSION, sections, ...body }));
  const head = new Uint8Array(16);
  head.set(new TextEncoder().encode(BUNDLE_MAGIC), 0);
  const dv = new DataView(head.buffer);
  dv.setUint32(8, BUNDLE_VERSION, true);
  dv.setUint32(12, manifest.byteLength, true);
  const pad = new Uint8Array((8 - ((16 + manifest.byteLength) % 8)) % 8);
  return new Blob([head, manifest, pad, ...parts] as BlobPart[], { type: 'application/octet-stream' });
}

function bad(why: string): never {
  throw new StoreError('WRITE_FAILED', `this is not a readable Crowntally project file (${why}); choose a file the app exported with "Save as one file"`);
}

/** Parses a project file back into records (nothing is stored yet). */
export async function parseProjectFile(file: Blob): Promise<ProjectBundle> {
  if (file.size < 16) bad('too short');
  const head = new Uint8Array(await file.slice(0, 16).arrayBuffer());
  if (new TextDecoder().decode(head.subarray(0, 8)) !== BUNDLE_MAGIC) bad('it does not start with the project-file mark');
  const dv = new DataView(head.buffer);
  const version = dv.getUint32(8, true);
  if (version > BUNDLE_VERSION) bad(`it was written by a newer version of the app (file version ${version}); update the app first`);
  const len = dv.getUint32(12, true);
  if (len > MAX_MANIFEST || 16 + len > file.size) bad('its contents list is cut off');
  let manifest: Record<string, unknown>;
  try { manifest = JSON.parse(new TextDecoder('utf-8', { fatal: true }).decode(await file.slice(16, 16 + len).arrayBuffer())) as Record<string, unknown>; } catch { bad('its contents list is damaged'); }
  if (manifest['format'] !== 'crowntally-project') bad('its contents list names another format');
  const dataStart = 16 + len + ((8 - ((16 + len) % 8)) % 8);
  const data = await file.slice(dataStart).arrayBuffer();
  const sections = manifest['sections'];
  if (!Array.isArray(sections)) bad('its section table is missing');
  const section = (s: unknown): [number, number] => {
    const e = Number.isInteger(s) ? (sections as unknown[])[s as number] : undefined;
    if (!Array.isArray(e) || !Number.isInteger(e[0]) || !Number.isInteger(e[1]) || e[0] < 0 || e[1] < 0 || e[0] + e[1] > data.byteLength) bad('a data section lies outside the file');
    return [e[0] as number, e[1] as number];
  };
  const dec = (v: unknown): unknown => {
    if (v === null || typeof v !== 'object') return v;
    if (Array.isArray(v)) return v.map(dec);
    const o = v as Record<string, unknown>;
    if (typeof o['$num'] === 'string') return Number(o['$num']);
    if (typeof o['$typed'] === 'string') {
      const T = TYPED[o['$typed']];
      if (!T) bad(`unknown array kind ${o['$typed']}`);
      const [off, n] = section(o['s']);
      const per = (T as unknown as { BYTES_PER_ELEMENT: number }).BYTES_PER_ELEMENT;
      if (n % per) bad('an array section has a partial element');
      return new T(data.slice(off, off + n), 0, n / per);
    }
    if (typeof o['$blob'] === 'string') {
      const [off, n] = section(o['s']);
      return new Blob([data.slice(off, off + n)], { type: o['$blob'] });
    }
    const out: Record<string, unknown> = {};
    for (const [k, x] of Object.entries(o)) out[k] = dec(x);
    return out;
  };
  const b = dec(manifest) as Record<string, unknown>;
  const project = b['project'] as ProjectRecord | undefined;
  if (!project || typeof project.id !== 'string' || typeof project.name !== 'string') bad('it holds no project');
  const out: ProjectBundle = {
    project,
    files: (b['files'] as FileRecord[] | undefined) ?? [],
    trees: (b['trees'] as ProjectBundle['trees']) ?? null,
    outlines: (b['outlines'] as ProjectBundle['outlines']) ?? null,
    rasters: (b['rasters'] as RasterRecord[] | undefined) ?? [],
    edits: (b['edits'] as EditRecord[] | undefined) ?? [],
  };
  checkBundle(out);
  return out;
}

/**
 * The shape checks the results screen relies on: a file that passes the
 * container checks but holds records of the wrong shape is refused here
 * rather than stored and failing later on the map or in the list.
 */
function checkBundle(b: ProjectBundle): void {
  const p = b.project;
  const src = p.source as { kind?: unknown; names?: unknown; sizes?: unknown; demo?: unknown } | undefined;
  if (!src || (src.kind !== 'files' && src.kind !== 'demo')) bad('the survey source is missing');
  if (src.kind === 'files' && (!Array.isArray(src.names) || !Array.isArray(src.sizes))) bad('the survey file list is damaged');
  if (!Array.isArray(b.files) || !Array.isArray(b.rasters) || !Array.isArray(b.edits)) bad('a record list is damaged');
  for (const f of b.files) if (!(f?.blob instanceof Blob) || typeof f.name !== 'string' || !Number.isInteger(f.index)) bad('a survey file record is damaged');
  for (const r of b.rasters) {
    const g = r?.grid;
    if (!g || !ArrayBuffer.isView(g.data) || !Number.isInteger(g.width) || !Number.isInteger(g.height) || g.width < 0 || g.height < 0 || g.data.length !== g.width * g.height || !(g.cellSize > 0)) bad('a raster record is damaged');
  }
  for (const e of b.edits) if (typeof e?.key !== 'string' || !Number.isFinite(e.x) || !Number.isFinite(e.y)) bad('a correction record is damaged');
  if (p.run) {
    const t = b.trees?.trees;
    if (!t || !b.outlines || b.rasters.length < 3) bad('the results are missing a part');
    if (!Number.isInteger(t.count) || t.count < 0 || typeof t.columns !== 'object' || t.columns === null) bad('the tree table is damaged');
    for (const col of Object.values(t.columns)) if (!(col instanceof Float64Array) || col.length !== t.count) bad('a tree table column has the wrong length');
    const o = b.outlines.outlines;
    if (!(o?.treeRingStart instanceof Uint32Array) || o.treeRingStart.length !== t.count + 1) bad('the crown outlines do not match the tree table');
  }
}

/**
 * Stores a project file as a project of this device, in one transaction
 * with the project record last. If a project with the same id is already
 * here, the import gets a new id (and "(copy)" in its name) instead of
 * overwriting it.
 */
export async function importProject(store: FieldStore, file: Blob): Promise<ProjectRecord> {
  const b = await parseProjectFile(file);
  const exists = await store.getProject(b.project.id);
  let id = b.project.id;
  let project = b.project;
  if (exists) {
    const a = new Uint8Array(8);
    crypto.getRandomValues(a);
    id = Array.from(a, (x) => x.toString(16).padStart(2, '0')).join('');
    project = { ...b.project, id, name: `${b.project.name} (copy)` };
  }
  const tx = store.db.transaction(['projects', 'files', 'trees', 'outlines', 'rasters', 'edits'], 'readwrite');
  const writes: Promise<unknown>[] = [];
  try {
    for (const f of b.files) writes.push(tx.objectStore('files').put({ ...f, projectId: id }));
    if (b.trees) writes.push(tx.objectStore('trees').put({ ...b.trees, projectId: id }));
    if (b.outlines) writes.push(tx.objectStore('outlines').put({ ...b.outlines, projectId: id }));
    for (const r of b.rasters) writes.push(tx.objectStore('rasters').put({ ...r, projectId: id }));
    for (const e of b.edits) writes.push(tx.objectStore('edits').put({ ...e, projectId: id }));
    writes.push(tx.objectStore('projects').put(project));
    await Promise.all([...writes, tx.done]);
  } catch (e) {
    try { tx.abort(); } catch { /* already over */ }
    for (const w of writes) w.catch(() => undefined);
    tx.done.catch(() => undefined);
    throw await store.explain(e, `the project "${b.project.name}"`);
  }
  return project;
}
