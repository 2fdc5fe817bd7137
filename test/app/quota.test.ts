import 'fake-indexeddb/auto';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { openStore } from '../../app/src/store.js';
import { freshName, meta, run } from './fixtures.js';

// A full device: the browser rejects a write with a DOMException named
// QuotaExceededError (W3C Indexed Database API and WHATWG Storage Standard).
// The stub makes the store's put throw exactly that; the store must turn it
// into a QUOTA error that says how much is used and what to delete, and the
// transaction rollback (same IndexedDB specification) must keep earlier data.

afterEach(() => { vi.restoreAllMocks(); vi.unstubAllGlobals(); });

function quotaError(): DOMException {
  return new DOMException('The quota has been exceeded.', 'QuotaExceededError');
}

describe('store on a full device', () => {
  it('a save that hits the quota gives QUOTA with use and what to delete; the earlier run stays', async () => {
    const store = await openStore(freshName());
    const big = await store.createProject({ name: 'Riverside 2023', source: { kind: 'files', names: ['r.laz'], sizes: [80 * 1048576] } }, [{ name: 'r.laz', blob: new Blob([new Uint8Array(4)]) }]);
    const p = await store.createProject({ name: 'Avenue', source: { kind: 'demo', demo: 'park' } });
    await store.saveRun(p.id, run(2, 8), meta(2));
    await store.putEdit({ projectId: p.id, key: 'e1', x: 0, y: 5, treeId: 1, note: 'kept', updatedAt: 0 });
    vi.stubGlobal('navigator', { storage: { estimate: async () => ({ usage: 120 * 1048576, quota: 125 * 1048576 }) } });
    // Every put on an object store now fails as a full disk does.
    const proto = Object.getPrototypeOf(store.db.transaction('trees', 'readwrite').store) as { put: (...a: unknown[]) => unknown };
    vi.spyOn(proto, 'put').mockImplementation(() => Promise.reject(quotaError()));
    const err = await store.saveRun(p.id, run(5, 20), meta(5)).then(() => null, (e: unknown) => e as { code: string; message: string; name: string });
    expect(err).not.toBeNull();
    expect(err!.name).toBe('StoreError');
    expect(err!.code).toBe('QUOTA');
    expect(err!.message).toContain('120 MB of about 125 MB');
    expect(err!.message).toMatch(/delete a survey you no longer need/);
    expect(err!.message).toContain('"Riverside 2023" 80 MB');
    // An edit on the full device fails the same way.
    await expect(store.putEdit({ projectId: p.id, key: 'e2', x: 0, y: 5, treeId: 2, updatedAt: 0 })).rejects.toMatchObject({ code: 'QUOTA' });
    vi.restoreAllMocks();
    const r = await store.loadRun(p.id);
    expect(r!.trees.count).toBe(2);
    expect(r!.chm.data[0]).toBe(8);
    expect((await store.getProject(p.id))!.run!.treeCount).toBe(2);
    expect((await store.listEdits(p.id)).map((e) => e.note)).toEqual(['kept']);
    expect((await store.listProjects()).map((x) => x.id).sort()).toEqual([big.id, p.id].sort());
    store.close();
  });

  it('without a storage estimate the message still says what to delete', async () => {
    const store = await openStore(freshName());
    await store.createProject({ name: 'Old orchard', source: { kind: 'files', names: ['o.las'], sizes: [3 * 1048576] } }, [{ name: 'o.las', blob: new Blob([new Uint8Array(2)]) }]);
    vi.stubGlobal('navigator', {});
    const e = await store.explain(quotaError(), 'the results');
    expect(e.code).toBe('QUOTA');
    expect(e.message).toContain('does not say how much');
    expect(e.message).toContain('"Old orchard" 3.0 MB');
    store.close();
  });
});
