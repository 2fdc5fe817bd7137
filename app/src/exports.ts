import { makeLonLatTransform } from '../../lib/crs/index.js';
import { chmToGeoTIFF, treesToCSV, treesToGeoJSON, type ExtraValue } from '../../lib/export/index.js';
import type { CrsInfo } from '../../lib/io/types.js';
import type { Grid } from '../../lib/raster/grid.js';
import { TREE_COLUMNS, type CrownOutlines, type TreeTable } from '../../lib/trees/table.js';
import type { EditRecord, StoredTrees } from './store.js';

/**
 * Downloads: the library writes the files; the app picks the rows (trees the
 * user deleted or merged away are left out), adds the user's corrections as
 * extra fields, and hands the bytes to the browser as a download.
 */

/** Rows kept for export: not deleted, not merged into another crown. */
export function exportRows(count: number, editByRow: Map<number, EditRecord>): number[] {
  const rows: number[] = [];
  for (let i = 0; i < count; i++) {
    const e = editByRow.get(i);
    if (e && (e.deleted || e.mergedInto)) continue;
    rows.push(i);
  }
  return rows;
}

/** A table of the chosen rows only (columns, profiles, histograms and outlines). */
export function subsetTable(t: StoredTrees, o: CrownOutlines, rows: number[]): TreeTable {
  const n = rows.length;
  const columns = {} as TreeTable['columns'];
  for (const c of TREE_COLUMNS) {
    const src = t.columns[c], dst = new Float64Array(n);
    for (let k = 0; k < n; k++) dst[k] = src[rows[k]!]!;
    columns[c] = dst;
  }
  const L = t.profileLayers, R = t.returnHistogram.length / Math.max(1, t.count);
  const profiles = new Uint32Array(n * L), returnHistogram = new Uint32Array(n * R);
  rows.forEach((r, k) => {
    profiles.set(t.profiles.subarray(r * L, (r + 1) * L), k * L);
    returnHistogram.set(t.returnHistogram.subarray(r * R, (r + 1) * R), k * R);
  });
  const treeRingStart = new Uint32Array(n + 1);
  const ringStart: number[] = [0], ringKind: number[] = [], coords: number[] = [];
  rows.forEach((r, k) => {
    for (let ring = o.treeRingStart[r]!; ring < o.treeRingStart[r + 1]!; ring++) {
      for (let v = o.ringStart[ring]!; v < o.ringStart[ring + 1]!; v++) coords.push(o.coords[2 * v]!, o.coords[2 * v + 1]!);
      ringStart.push(coords.length / 2);
      ringKind.push(o.ringKind[ring]!);
    }
    treeRingStart[k + 1] = ringKind.length;
  });
  return {
    ...t, count: n, columns, profiles, returnHistogram,
    outlines: { coords: Float64Array.from(coords), ringStart: Uint32Array.from(ringStart), ringKind: Uint8Array.from(ringKind), treeRingStart },
  };
}

function extraFor(rows: number[], editByRow: Map<number, EditRecord>): (i: number) => Record<string, ExtraValue> {
  return (i) => {
    const e = editByRow.get(rows[i]!);
    return {
      edited: e ? true : false,
      added: e?.added ? true : false,
      species: e?.species ?? '',
      condition: e?.condition ?? '',
      note: e?.note ?? '',
    };
  };
}

export function download(name: string, data: BlobPart, type: string): void {
  const url = URL.createObjectURL(new Blob([data], { type }));
  const a = document.createElement('a');
  a.href = url;
  a.download = name;
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 10_000);
}

export function safeName(s: string): string {
  return s.replace(/[^A-Za-z0-9._-]+/g, '-').replace(/^-+|-+$/g, '').slice(0, 60) || 'survey';
}

export interface ExportInput { name: string; trees: StoredTrees; outlines: CrownOutlines; chm: Grid<Float32Array>; crs: CrsInfo; editByRow: Map<number, EditRecord> }

export function exportGeoJSON(x: ExportInput): void {
  const rows = exportRows(x.trees.count, x.editByRow);
  const table = subsetTable(x.trees, x.outlines, rows);
  const tf = makeLonLatTransform(x.crs);
  const text = treesToGeoJSON(table, (a, b) => tf.toLonLat(a, b), { extra: extraFor(rows, x.editByRow) });
  download(`${safeName(x.name)}-trees.geojson`, text, 'application/geo+json');
}

export function exportCSV(x: ExportInput): void {
  const rows = exportRows(x.trees.count, x.editByRow);
  const table = subsetTable(x.trees, x.outlines, rows);
  let toLonLat: ((a: number, b: number) => [number, number]) | null = null;
  if (x.crs.proj4) { const tf = makeLonLatTransform(x.crs); toLonLat = (a, b) => tf.toLonLat(a, b); }
  const text = treesToCSV(table, toLonLat, { extra: extraFor(rows, x.editByRow) });
  download(`${safeName(x.name)}-trees.csv`, text, 'text/csv');
}

export function exportGeoTIFF(x: ExportInput): void {
  download(`${safeName(x.name)}-chm.tif`, chmToGeoTIFF(x.chm, x.crs), 'image/tiff');
}
