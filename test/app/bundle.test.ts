import 'fake-indexeddb/auto';
import { describe, expect, it } from 'vitest';
import { exportProject, importProject, parseProjectFile, readBundle, BUNDLE_MAGIC } from '../../app/src/bundle.js';
import { openStore } from '../../app/src/store.js';
import { freshName, meta, run } from './fixtures.js';

// Round trip of the one-file project format on fake-indexeddb (an
// implementation of the W3C Indexed Database API). The reference for
// "restored exactly" is the set of records read straight from the first
// store: the imported store must hold deep-equal records, typed arrays of
// the same kind, Blob bytes identical.

async function blobBytes(b: Blob): Promise<number[]> {
  return Array.from(new Uint8Array(await b.arrayBuffer()));
}

async function comparable(bundle: Awaited<ReturnType<typeof readBundle>>) {
  return { ...bundle, files: await Promise.all(bundle.files.map(async (f) => ({ ...f, blob: { type: f.blob.type, bytes: await blobBytes(f.blob) } }))) };
}

async function seeded() {
  const store = await openStore(freshName());
  const bytes = new Uint8Array(300);
  for (let i = 0; i < bytes.length; i++) bytes[i] = (i * 37) & 255;
  const p = await store.createProject({ name: 'North lawn', source: { kind: 'files', names: ['a.laz', 'b.las'], sizes: [300, 5] }, crs: 'EPSG:27700' },
    [{ name: 'a.laz', blob: new Blob([bytes], { type: 'application/octet-stream' }) }, { name: 'b.las', blob: new Blob([new Uint8Array([9, 8, 7, 6, 5])]) }]);
  const r = run(3, 12.5);
  r.trees.columns.crown_base_m[1] = Number.NaN; // a metric absent for one tree must come back as NaN
  await store.saveRun(p.id, r, meta(3));
  await store.putEdits([
    { projectId: p.id, key: 'k1', x: 10, y: 5, treeId: 2, species: 'Quercus robur', condition: 'fair', note: 'hollow at 2 m, "see photo"', updatedAt: 0 },
    { projectId: p.id, key: 'k2', x: 20, y: 5, treeId: 3, mergedInto: 'k1', updatedAt: 0 },
    { projectId: p.id, key: 'k3', x: 0, y: 5, treeId: 1, deleted: true, updatedAt: 0 },
  ]);
  return { store, p };
}

describe('project file', () => {
  it('export then import into another device store restores every record exactly, edits included', async () => {
    const { store, p } = await seeded();
    const before = await readBundle(store, p.id);
    const file = await exportProject(store, p.id);
    expect(new TextDecoder().decode(new Uint8Array(await file.slice(0, 8).arrayBuffer()))).toBe(BUNDLE_MAGIC);
    const other = await openStore(freshName());
    const imported = await importProject(other, file);
    expect(imported.id).toBe(p.id);
    const after = await readBundle(other, p.id);
    expect(await comparable(after)).toEqual(await comparable(before));
    expect(after.trees!.trees.columns.height_m).toBeInstanceOf(Float64Array);
    expect(Number.isNaN(after.trees!.trees.columns.crown_base_m[1]!)).toBe(true);
    expect(Number.isNaN(after.project.run!.summary.meanHeightM)).toBe(true);
    expect(after.rasters.find((r) => r.kind === 'labels')!.grid.data).toBeInstanceOf(Int32Array);
    expect(after.edits.map((e) => e.key).sort()).toEqual(['k1', 'k2', 'k3']);
    // The imported project opens like any other.
    expect((await other.loadRun(p.id))!.trees.count).toBe(3);
    expect((await other.incompleteIds()).size).toBe(0);
    store.close(); other.close();
  });

  it('importing where the same project exists adds a copy and leaves the original alone', async () => {
    const { store, p } = await seeded();
    const file = await exportProject(store, p.id);
    const copy = await importProject(store, file);
    expect(copy.id).not.toBe(p.id);
    expect(copy.name).toBe('North lawn (copy)');
    expect((await store.listProjects()).length).toBe(2);
    expect((await store.listEdits(copy.id)).length).toBe(3);
    expect((await store.getFiles(copy.id)).map((f) => f.name)).toEqual(['a.laz', 'b.las']);
    expect((await store.getProject(p.id))!.name).toBe('North lawn');
    store.close();
  });

  it('refuses damaged, foreign and newer files with a message, storing nothing', async () => {
    const { store, p } = await seeded();
    const good = new Uint8Array(await (await exportProject(store, p.id)).arrayBuffer());
    const other = await openStore(freshName());
    await expect(importProject(other, new Blob([new TextEncoder().encode('{"type":"FeatureCollection"}')]))).rejects.toThrow(/not a readable Crowntally project file/);
    await expect(importProject(other, new Blob([good.slice(0, good.length - 40)]))).rejects.toThrow(/outside the file/);
    const newer = good.slice();
    new DataView(newer.buffer).setUint32(8, 99, true);
    await expect(parseProjectFile(new Blob([newer]))).rejects.toThrow(/newer version/);
    const hugeLen = good.slice();
    new DataView(hugeLen.buffer).setUint32(12, 0xffffffff, true);
    await expect(parseProjectFile(new Blob([hugeLen]))).rejects.toThrow(/cut off/);
    expect(await other.listProjects()).toEqual([]);
    store.close(); other.close();
  });

  it('refuses a well-formed file whose records have the wrong shape', async () => {
    const { store, p } = await seeded();
    const good = new Uint8Array(await (await exportProject(store, p.id)).arrayBuffer());
    const len = new DataView(good.buffer).getUint32(12, true);
    const manifest = JSON.parse(new TextDecoder().decode(good.subarray(16, 16 + len))) as { trees: { trees: { count: number } } };
    // Rewrites the manifest with a tree count that no column matches, keeping the data block as it was.
    const remade = (m: unknown) => {
      const text = new TextEncoder().encode(JSON.stringify(m));
      const head = new Uint8Array(16);
      head.set(good.subarray(0, 8));
      new DataView(head.buffer).setUint32(8, 1, true);
      new DataView(head.buffer).setUint32(12, text.length, true);
      const pad = new Uint8Array((8 - ((16 + text.length) % 8)) % 8);
      const dataStart = 16 + len + ((8 - ((16 + len) % 8)) % 8);
      return new Blob([head, text, pad, good.subarray(dataStart)]);
    };
    expect((await parseProjectFile(remade(manifest))).trees!.trees.count).toBe(3); // the rewrite itself keeps a good file good
    manifest.trees.trees.count = 5;
    await expect(parseProjectFile(remade(manifest))).rejects.toThrow(/wrong length/);
    store.close();
  });
});
