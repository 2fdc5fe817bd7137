import 'fake-indexeddb/auto';
import { openDB } from 'idb';
import { describe, expect, it } from 'vitest';
import { openStore } from '../../app/src/store.js';
import { freshName, meta, run } from './fixtures.js';

// Behaviour tests of the device store on fake-indexeddb, an implementation of
// the W3C Indexed Database API (the source for transaction rollback: a
// transaction that fails is aborted and none of its writes are kept).

describe('field store', () => {
  it('creates, lists and deletes projects with their files, runs and edits', async () => {
    const store = await openStore(freshName());
    const a = await store.createProject({ name: 'North lawn', source: { kind: 'files', names: ['a.laz'], sizes: [3] } }, [{ name: 'a.laz', blob: new Blob([new Uint8Array([1, 2, 3])]) }]);
    const b = await store.createProject({ name: 'Orchard', source: { kind: 'demo', demo: 'orchard' } });
    expect((await store.listProjects()).map((p) => p.name).sort()).toEqual(['North lawn', 'Orchard']);
    const files = await store.getFiles(a.id);
    expect(files).toHaveLength(1);
    expect(files[0]!.blob.size).toBe(3);
    await store.saveRun(a.id, run(1, 7), meta(1));
    await store.putEdit({ projectId: a.id, key: 'k1', x: 0, y: 5, treeId: 1, note: 'hollow', updatedAt: 0 });
    await store.deleteProject(a.id);
    expect((await store.listProjects()).map((p) => p.id)).toEqual([b.id]);
    expect(await store.getFiles(a.id)).toEqual([]);
    expect(await store.loadRun(a.id)).toBeUndefined();
    expect(await store.listEdits(a.id)).toEqual([]);
    store.close();
  });

  it('keeps edits and runs across a reopen, typed arrays intact', async () => {
    const name = freshName();
    let store = await openStore(name);
    const p = await store.createProject({ name: 'Park', source: { kind: 'demo', demo: 'park' } });
    await store.saveRun(p.id, run(3, 12.5), meta(3));
    await store.putEdit({ projectId: p.id, key: 'k', x: 10, y: 5, treeId: 2, species: 'Quercus robur', condition: 'fair', note: '<b>x</b>', updatedAt: 0 });
    store.close();
    store = await openStore(name);
    const edits = await store.listEdits(p.id);
    expect(edits).toHaveLength(1);
    expect(edits[0]!.species).toBe('Quercus robur');
    expect(edits[0]!.note).toBe('<b>x</b>');
    const r = await store.loadRun(p.id);
    expect(r!.trees.columns.height_m).toBeInstanceOf(Float64Array);
    expect(Array.from(r!.trees.columns.height_m)).toEqual([12.5, 12.5, 12.5]);
    expect(r!.labels.data).toBeInstanceOf(Int32Array);
    expect((await store.getProject(p.id))!.run!.treeCount).toBe(3);
    store.close();
  });

  it('upgrades a version 1 database, moving outlines out of the tree record without losing data', async () => {
    const name = freshName();
    // Version 1 layout, as the first release created it.
    const v1 = await openDB(name, 1, {
      upgrade(db) {
        db.createObjectStore('projects', { keyPath: 'id' }).createIndex('byUpdated', 'updatedAt');
        db.createObjectStore('files', { keyPath: ['projectId', 'index'] }).createIndex('byProject', 'projectId');
        db.createObjectStore('trees', { keyPath: 'projectId' });
        db.createObjectStore('rasters', { keyPath: ['projectId', 'kind'] }).createIndex('byProject', 'projectId');
        db.createObjectStore('edits', { keyPath: ['projectId', 'key'] }).createIndex('byProject', 'projectId');
      },
    });
    const old = run(2, 9);
    await v1.put('projects', { id: 'p1', name: 'Old survey', createdAt: 1, updatedAt: 1, source: { kind: 'demo', demo: 'park' }, options: {}, run: meta(2) });
    await v1.put('trees', { projectId: 'p1', trees: { ...old.trees, outlines: old.outlines } });
    await v1.put('rasters', { projectId: 'p1', kind: 'chm', grid: old.chm });
    await v1.put('rasters', { projectId: 'p1', kind: 'dtm', grid: old.dtm });
    await v1.put('rasters', { projectId: 'p1', kind: 'labels', grid: old.labels });
    await v1.put('edits', { projectId: 'p1', key: 'e', x: 0, y: 5, treeId: 1, note: 'kept', updatedAt: 1 });
    v1.close();

    const store = await openStore(name);
    expect(store.db.version).toBe(2);
    expect((await store.listProjects()).map((p) => p.name)).toEqual(['Old survey']);
    const r = await store.loadRun('p1');
    expect(r).toBeDefined();
    expect(Array.from(r!.outlines.coords)).toEqual(Array.from(old.outlines.coords));
    expect('outlines' in r!.trees).toBe(false);
    expect(r!.trees.count).toBe(2);
    expect((await store.listEdits('p1'))[0]!.note).toBe('kept');
    store.close();
  });

  it('a failed write leaves the earlier run intact', async () => {
    const store = await openStore(freshName());
    const p = await store.createProject({ name: 'Avenue', source: { kind: 'demo', demo: 'park' } });
    await store.saveRun(p.id, run(2, 8), meta(2));
    const bad = run(5, 20);
    // A function cannot be stored (structured clone throws DataCloneError): the whole transaction must roll back.
    (bad.outlines as unknown as { extra: unknown }).extra = () => 1;
    await expect(store.saveRun(p.id, bad, meta(5))).rejects.toMatchObject({ name: 'StoreError', code: 'WRITE_FAILED' });
    const r = await store.loadRun(p.id);
    expect(r!.trees.count).toBe(2);
    expect(r!.chm.data[0]).toBe(8);
    expect((await store.getProject(p.id))!.run!.treeCount).toBe(2);
    store.close();
  });
});
