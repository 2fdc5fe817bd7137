import 'fake-indexeddb/auto';
import { describe, expect, it } from 'vitest';
import { openStore } from '../../app/src/store.js';
import { freshName, meta, run } from './fixtures.js';

// Which stored projects are whole, on fake-indexeddb (W3C Indexed Database
// API: a transaction that does not commit leaves none of its writes). The
// broken states are written by hand here, as storage cleared part way or a
// record left by an older version would leave them.

describe('project status', () => {
  it('a saved run is complete; a project missing any part of its run or its files is incomplete and deletable', async () => {
    const store = await openStore(freshName());
    const whole = await store.createProject({ name: 'Whole', source: { kind: 'demo', demo: 'park' } });
    await store.saveRun(whole.id, run(2, 8), meta(2));
    expect((await store.getProject(whole.id))!.status).toBe('complete');

    const noTrees = await store.createProject({ name: 'No trees', source: { kind: 'demo', demo: 'park' } });
    await store.saveRun(noTrees.id, run(2, 8), meta(2));
    await store.db.delete('trees', noTrees.id);

    const noFile = await store.createProject({ name: 'No file', source: { kind: 'files', names: ['a.las', 'b.las'], sizes: [1, 1] } }, [{ name: 'a.las', blob: new Blob([new Uint8Array(1)]) }]);

    const marked = await store.createProject({ name: 'Marked', source: { kind: 'demo', demo: 'orchard' } });
    await store.updateProject(marked.id, (p) => { p.status = 'incomplete'; });

    const fresh = await store.createProject({ name: 'Not run yet', source: { kind: 'demo', demo: 'orchard' } });

    const broken = await store.incompleteIds();
    expect([...broken].sort()).toEqual([noTrees.id, noFile.id, marked.id].sort());
    expect(broken.has(whole.id)).toBe(false);
    expect(broken.has(fresh.id)).toBe(false);
    for (const id of broken) await store.deleteProject(id);
    expect((await store.listProjects()).map((p) => p.name).sort()).toEqual(['Not run yet', 'Whole']);
    expect((await store.loadRun(whole.id))!.trees.count).toBe(2);
    store.close();
  });

  it('a save held open and then abandoned leaves the project as it was before', async () => {
    const store = await openStore(freshName());
    const p = await store.createProject({ name: 'Held', source: { kind: 'demo', demo: 'park' } });
    await store.saveRun(p.id, run(2, 8), meta(2));
    let spins = 0;
    store.holdSave = () => { spins++; if (spins === 3) throw new Error('page closed'); return true; };
    await expect(store.saveRun(p.id, run(6, 20), meta(6))).rejects.toMatchObject({ code: 'WRITE_FAILED' });
    store.holdSave = null;
    expect((await store.getProject(p.id))!.run!.treeCount).toBe(2);
    expect((await store.loadRun(p.id))!.trees.count).toBe(2);
    store.close();
  });
});
