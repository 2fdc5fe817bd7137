import { openDB, type DBSchema, type IDBPDatabase } from 'idb';
import type { CrsInfo, SurveyReadout } from '../../lib/io/types.js';
import type { TallyOptions } from '../../lib/options.js';
import type { Grid } from '../../lib/raster/grid.js';
import type { CrownOutlines, SurveySummary, TreeTable } from '../../lib/trees/table.js';
import type { AreaOfInterest, DemoKind } from '../../lib/worker/protocol.js';

/**
 * The device store: one IndexedDB database, one store per kind of thing, so
 * listing projects never loads a CHM. Every multi-store write is one
 * transaction: if any part fails (quota, clone error) the whole write rolls
 * back and what was stored before stays as it was.
 */

export const DB_NAME = 'crowntally-field';
/** Version 1 kept outlines inside the tree record; version 2 moved them to their own store. */
export const DB_VERSION = 2;

export interface ProjectRecord {
  id: string;
  name: string;
  createdAt: number;
  updatedAt: number;
  source: { kind: 'files'; names: string[]; sizes: number[] } | { kind: 'demo'; demo: DemoKind };
  /** "EPSG:NNNN" typed by the user for files without a CRS. */
  crs?: string;
  options: Partial<TallyOptions>;
  /** The area the runs are limited to (a drawn rectangle or an imported boundary); absent = whole survey. */
  aoi?: AreaOfInterest;
  readouts?: SurveyReadout[];
  /**
   * 'complete' once every record the project needs is stored; written last
   * in the transaction that stores them. A record without it (older
   * versions) counts as complete; `incompleteIds` also checks the parts.
   */
  status?: 'complete' | 'incomplete';
  /** Set once a run has been stored. */
  run?: {
    at: number;
    treeCount: number;
    summary: SurveySummary;
    warnings: string[];
    crs: CrsInfo;
    usedOptions: TallyOptions & { cellSizeM: number };
  };
}

/** The tree table without its outlines (those live in their own store). */
export type StoredTrees = Omit<TreeTable, 'outlines'>;

export type RasterKind = 'chm' | 'dtm' | 'labels';

export interface RasterRecord {
  projectId: string;
  kind: RasterKind;
  grid: Grid<Float32Array> | Grid<Int32Array>;
}

/**
 * A user correction, anchored by position so it can be put back on the
 * right tree after reprocessing. `key` is stable for the life of the edit.
 */
export interface EditRecord {
  projectId: string;
  key: string;
  /** Anchor: treetop position (CRS units) of the tree the edit was made on. */
  x: number;
  y: number;
  /** tree_id in the run the edit was last attached to. */
  treeId: number;
  deleted?: boolean;
  added?: boolean;
  /** Key of the edit of the tree this crown was merged into. */
  mergedInto?: string;
  note?: string;
  species?: string;
  condition?: string;
  updatedAt: number;
}

export interface FileRecord { projectId: string; index: number; name: string; blob: Blob }

export interface FieldDB extends DBSchema {
  projects: { key: string; value: ProjectRecord; indexes: { byUpdated: number } };
  files: { key: [string, number]; value: FileRecord; indexes: { byProject: string } };
  trees: { key: string; value: { projectId: string; trees: StoredTrees } };
  outlines: { key: string; value: { projectId: string; outlines: CrownOutlines } };
  rasters: { key: [string, RasterKind]; value: RasterRecord; indexes: { byProject: string } };
  edits: { key: [string, string]; value: EditRecord; indexes: { byProject: string } };
}

export class StoreError extends Error {
  readonly code: 'QUOTA' | 'WRITE_FAILED' | 'NOT_FOUND';
  constructor(code: StoreError['code'], message: string) {
    super(message);
    this.name = 'StoreError';
    this.code = code;
  }
}

/** Bytes of source files per project, largest first: what deleting each would free at least. */
function largest(projects: ProjectRecord[]): string {
  const sized = projects.map((p) => ({ name: p.name, size: p.source.kind === 'files' ? p.source.sizes.reduce((a, b) => a + b, 0) : 0 }))
    .sort((a, b) => b.size - a.size).slice(0, 3);
  if (!sized.length) return 'there are no surveys stored to delete; free space on the device';
  return `delete a survey you no longer need (largest first: ${sized.map((x) => `"${x.name}" ${mb(x.size)}`).join(', ')}) or free space on the device`;
}

function mb(n: number): string {
  return `${(n / 1048576).toFixed(n < 10 * 1048576 ? 1 : 0)} MB`;
}

/** Storage use as the browser reports it, for the quota message. */
async function usageText(): Promise<string> {
  try {
    const est = await globalThis.navigator?.storage?.estimate?.();
    if (est && Number.isFinite(est.usage) && Number.isFinite(est.quota)) return `this app uses ${mb(est.usage!)} of about ${mb(est.quota!)} the browser allows it`;
  } catch { /* the estimate is a courtesy */ }
  return 'the browser does not say how much this app uses';
}

function isQuota(e: unknown): boolean {
  const err = e as { name?: string; inner?: { name?: string } } | null;
  return err?.name === 'QuotaExceededError' || err?.inner?.name === 'QuotaExceededError';
}

/**
 * Opens (and upgrades) the database. All schema changes live in this one
 * upgrade function, step by step from the version found on the device.
 */
export async function openStore(name = DB_NAME): Promise<FieldStore> {
  const db = await openDB<FieldDB>(name, DB_VERSION, {
    async upgrade(db, oldVersion, _newVersion, tx) {
      if (oldVersion < 1) {
        const p = db.createObjectStore('projects', { keyPath: 'id' });
        p.createIndex('byUpdated', 'updatedAt');
        const f = db.createObjectStore('files', { keyPath: ['projectId', 'index'] });
        f.createIndex('byProject', 'projectId');
        db.createObjectStore('trees', { keyPath: 'projectId' });
        const r = db.createObjectStore('rasters', { keyPath: ['projectId', 'kind'] });
        r.createIndex('byProject', 'projectId');
        const e = db.createObjectStore('edits', { keyPath: ['projectId', 'key'] });
        e.createIndex('byProject', 'projectId');
      }
      if (oldVersion < 2) {
        db.createObjectStore('outlines', { keyPath: 'projectId' });
        if (oldVersion >= 1) {
          // Version 1 kept outlines inside the tree record: move them out so a tree list loads without polygons.
          const trees = tx.objectStore('trees');
          const outlines = tx.objectStore('outlines');
          let cur = await trees.openCursor();
          while (cur) {
            const v = cur.value as { projectId: string; trees: StoredTrees & { outlines?: CrownOutlines } };
            if (v.trees.outlines) {
              await outlines.put({ projectId: v.projectId, outlines: v.trees.outlines });
              const { outlines: _o, ...rest } = v.trees;
              await cur.update({ projectId: v.projectId, trees: rest });
            }
            cur = await cur.continue();
          }
        }
      }
    },
  });
  return new FieldStore(db);
}

export interface StoredRun {
  trees: StoredTrees;
  outlines: CrownOutlines;
  chm: Grid<Float32Array>;
  dtm: Grid<Float32Array>;
  labels: Grid<Int32Array>;
}

/**
 * Runs the writes of one transaction and aborts it on any failure. A request
 * that throws synchronously (a value that cannot be cloned) does not abort
 * the transaction by itself: requests already queued would still commit.
 */
async function allOrNothing(tx: { abort(): void; done: Promise<void> }, writes: Array<() => Promise<unknown>>): Promise<void> {
  const done = tx.done;
  done.catch(() => undefined); // observed below; keeps an abort from surfacing as an unhandled rejection
  const pending: Promise<unknown>[] = [];
  try {
    for (const w of writes) pending.push(w());
    await Promise.all([...pending, done]);
  } catch (e) {
    try { tx.abort(); } catch { /* already finished or aborted */ }
    for (const p of pending) p.catch(() => undefined);
    throw e;
  }
}

function newId(): string {
  const a = new Uint8Array(8);
  crypto.getRandomValues(a);
  return Array.from(a, (b) => b.toString(16).padStart(2, '0')).join('');
}

export class FieldStore {
  constructor(readonly db: IDBPDatabase<FieldDB>) {}

  /**
   * Test hook (only set by the app when opened with ?test-hooks=1): while it
   * returns true, saveRun keeps its transaction open before the project
   * record is written, so a test can close the page in the middle of a save.
   */
  holdSave: (() => boolean) | null = null;

  close(): void { this.db.close(); }

  /** The error to throw for a failed write: QUOTA (with use and what to delete), or WRITE_FAILED. */
  async explain(e: unknown, what: string): Promise<StoreError> {
    if (e instanceof StoreError) return e;
    if (isQuota(e)) {
      let projects: ProjectRecord[] = [];
      try { projects = await this.listProjects(); } catch { /* listing is a courtesy */ }
      return new StoreError('QUOTA', `the device has no room left to save ${what}: ${await usageText()}. To make room, ${largest(projects)}, then try again. Nothing already saved was lost.`);
    }
    const msg = e instanceof Error ? e.message : String(e);
    return new StoreError('WRITE_FAILED', `could not save ${what} (${msg}); nothing already saved was changed`);
  }

  /** Creates a project and stores its source files as Blobs, in one transaction. */
  async createProject(p: { name: string; source: ProjectRecord['source']; crs?: string; options?: Partial<TallyOptions> }, files: { name: string; blob: Blob }[] = []): Promise<ProjectRecord> {
    const now = Date.now();
    const rec: ProjectRecord = { id: newId(), name: p.name, createdAt: now, updatedAt: now, source: p.source, options: p.options ?? {}, status: 'complete' };
    if (p.crs) rec.crs = p.crs;
    try {
      const tx = this.db.transaction(['projects', 'files'], 'readwrite');
      // The project record goes last: a survey is listed only once its files are in.
      await allOrNothing(tx, [
        ...files.map((f, index) => () => tx.objectStore('files').add({ projectId: rec.id, index, name: f.name, blob: f.blob })),
        () => tx.objectStore('projects').add(rec),
      ]);
    } catch (e) {
      throw await this.explain(e, `the project "${p.name}"`);
    }
    return rec;
  }

  /** Projects, newest first; metadata only. */
  async listProjects(): Promise<ProjectRecord[]> {
    const all = await this.db.getAllFromIndex('projects', 'byUpdated');
    return all.reverse();
  }

  async getProject(id: string): Promise<ProjectRecord | undefined> {
    return this.db.get('projects', id);
  }

  async updateProject(id: string, change: (p: ProjectRecord) => void): Promise<ProjectRecord> {
    try {
      const tx = this.db.transaction('projects', 'readwrite');
      const p = await tx.store.get(id);
      if (!p) throw new StoreError('NOT_FOUND', 'that project is no longer on this device');
      change(p);
      p.updatedAt = Date.now();
      await tx.store.put(p);
      await tx.done;
      return p;
    } catch (e) {
      throw await this.explain(e, 'the project settings');
    }
  }

  async getFiles(projectId: string): Promise<FileRecord[]> {
    const files = await this.db.getAllFromIndex('files', 'byProject', projectId);
    return files.sort((a, b) => a.index - b.index);
  }

  /**
   * Stores a run (trees, outlines, rasters) and its project summary in one
   * transaction: either all of it lands or the previous run stays whole.
   */
  async saveRun(projectId: string, run: StoredRun, meta: NonNullable<ProjectRecord['run']>, readouts?: SurveyReadout[]): Promise<void> {
    try {
      const tx = this.db.transaction(['projects', 'trees', 'outlines', 'rasters'], 'readwrite');
      const projects = tx.objectStore('projects');
      const p = await projects.get(projectId);
      if (!p) throw new StoreError('NOT_FOUND', 'that project is no longer on this device');
      p.run = meta;
      if (readouts) p.readouts = readouts;
      p.updatedAt = Date.now();
      p.status = 'complete';
      await allOrNothing(tx, [
        () => tx.objectStore('trees').put({ projectId, trees: run.trees }),
        () => tx.objectStore('outlines').put({ projectId, outlines: run.outlines }),
        () => tx.objectStore('rasters').put({ projectId, kind: 'chm', grid: run.chm }),
        () => tx.objectStore('rasters').put({ projectId, kind: 'dtm', grid: run.dtm }),
        () => tx.objectStore('rasters').put({ projectId, kind: 'labels', grid: run.labels }),
        async () => {
          // Reads keep the transaction alive while a test holds it open (the hook is unset in normal use).
          while (this.holdSave?.()) await projects.get(projectId);
          // The project record with its run summary and status is written last.
          await projects.put(p);
        },
      ]);
    } catch (e) {
      throw await this.explain(e, 'the results');
    }
  }

  /** Replaces the tree table, outlines and label grid after a correction that changed crowns. */
  async saveRemeasured(projectId: string, trees: StoredTrees, outlines: CrownOutlines, labels: Grid<Int32Array>, treeCount: number): Promise<void> {
    try {
      const tx = this.db.transaction(['projects', 'trees', 'outlines', 'rasters'], 'readwrite');
      const p = await tx.objectStore('projects').get(projectId);
      if (!p || !p.run) throw new StoreError('NOT_FOUND', 'that project has no results to correct');
      p.run.treeCount = treeCount;
      p.updatedAt = Date.now();
      await allOrNothing(tx, [
        () => tx.objectStore('projects').put(p),
        () => tx.objectStore('trees').put({ projectId, trees }),
        () => tx.objectStore('outlines').put({ projectId, outlines }),
        () => tx.objectStore('rasters').put({ projectId, kind: 'labels', grid: labels }),
      ]);
    } catch (e) {
      throw await this.explain(e, 'the corrected crowns');
    }
  }

  async loadRun(projectId: string): Promise<StoredRun | undefined> {
    const tx = this.db.transaction(['trees', 'outlines', 'rasters'], 'readonly');
    const [t, o, chm, dtm, labels] = await Promise.all([
      tx.objectStore('trees').get(projectId),
      tx.objectStore('outlines').get(projectId),
      tx.objectStore('rasters').get([projectId, 'chm']),
      tx.objectStore('rasters').get([projectId, 'dtm']),
      tx.objectStore('rasters').get([projectId, 'labels']),
    ]);
    if (!t || !o || !chm || !dtm || !labels) return undefined;
    return {
      trees: t.trees,
      outlines: o.outlines,
      chm: chm.grid as Grid<Float32Array>,
      dtm: dtm.grid as Grid<Float32Array>,
      labels: labels.grid as Grid<Int32Array>,
    };
  }

  /** Saves one edit at once (each tap is its own transaction). */
  async putEdit(edit: EditRecord): Promise<void> {
    try {
      await this.db.put('edits', { ...edit, updatedAt: Date.now() });
    } catch (e) {
      throw await this.explain(e, 'the correction');
    }
  }

  /** Saves several edits together (a merge touches two trees). */
  async putEdits(edits: EditRecord[]): Promise<void> {
    try {
      const tx = this.db.transaction('edits', 'readwrite');
      const now = Date.now();
      await allOrNothing(tx, edits.map((e) => () => tx.store.put({ ...e, updatedAt: now })));
    } catch (e) {
      throw await this.explain(e, 'the corrections');
    }
  }

  async deleteEdit(projectId: string, key: string): Promise<void> {
    await this.db.delete('edits', [projectId, key]);
  }

  async listEdits(projectId: string): Promise<EditRecord[]> {
    return this.db.getAllFromIndex('edits', 'byProject', projectId);
  }

  /**
   * Projects that are not whole: marked incomplete, or with a run summary
   * but a missing tree table, outline set or raster, or with fewer stored
   * files than their source names. They can be deleted, not opened.
   */
  async incompleteIds(): Promise<Set<string>> {
    const tx = this.db.transaction(['projects', 'files', 'trees', 'outlines', 'rasters'], 'readonly');
    const [projects, fileKeys, treeKeys, outlineKeys, rasterKeys] = await Promise.all([
      tx.objectStore('projects').getAll(), tx.objectStore('files').getAllKeys(), tx.objectStore('trees').getAllKeys(),
      tx.objectStore('outlines').getAllKeys(), tx.objectStore('rasters').getAllKeys(),
    ]);
    const files = new Map<string, number>();
    for (const [id] of fileKeys) files.set(id, (files.get(id) ?? 0) + 1);
    const rasters = new Map<string, number>();
    for (const [id] of rasterKeys) rasters.set(id, (rasters.get(id) ?? 0) + 1);
    const trees = new Set(treeKeys), outlines = new Set(outlineKeys);
    const out = new Set<string>();
    for (const p of projects) {
      const wantFiles = p.source.kind === 'files' ? p.source.names.length : 0;
      if (p.status === 'incomplete' || (files.get(p.id) ?? 0) < wantFiles) out.add(p.id);
      else if (p.run && (!trees.has(p.id) || !outlines.has(p.id) || (rasters.get(p.id) ?? 0) < 3)) out.add(p.id);
    }
    return out;
  }

  /** Removes a project and everything stored for it, in one transaction. */
  async deleteProject(projectId: string): Promise<void> {
    const stores = ['projects', 'files', 'trees', 'outlines', 'rasters', 'edits'] as const;
    const tx = this.db.transaction([...stores], 'readwrite');
    const jobs: Array<() => Promise<unknown>> = [
      () => tx.objectStore('projects').delete(projectId),
      () => tx.objectStore('trees').delete(projectId),
      () => tx.objectStore('outlines').delete(projectId),
    ];
    for (const s of ['files', 'rasters', 'edits'] as const) {
      const idx = tx.objectStore(s).index('byProject');
      jobs.push(async () => {
        let cur = await idx.openCursor(projectId);
        while (cur) {
          await cur.delete();
          cur = await cur.continue();
        }
      });
    }
    await allOrNothing(tx, jobs);
  }
}

export function newEditKey(): string {
  return newId();
}
