import { CrowntallyError } from '../errors.js';
import { MAX_RETURN_NUMBER, TREE_COLUMNS, type TreeColumn, type TreeTable } from '../trees/table.js';

/** Maps a treetop in the file's CRS to WGS 84 [longitude, latitude] in degrees. */
export type ToLonLat = (x: number, y: number) => [number, number];

/** A value an edit may attach to a tree (species, condition, notes, edited flag). */
export type ExtraValue = string | number | boolean | null;

export interface TreeExportOptions {
  /** Extra per-tree values (edits from the app), keyed by column / property name. */
  extra?: (i: number) => Record<string, ExtraValue>;
}

/**
 * Decimals written for each metric. Positions in CRS units get 3 (mm in a
 * metric CRS), lengths and areas 2 (cm and cm2 scale: the data are not finer
 * than that), counts none, shares 3. Degrees get 7 (about 1 cm on the ground).
 */
const DECIMALS: Partial<Record<TreeColumn, number>> = {
  tree_id: 0, x: 3, y: 3,
  point_count: 0, first_returns: 0, intermediate_returns: 0, last_returns: 0, single_returns: 0,
  intensity_mean: 1, intensity_max: 0, ground_share: 3,
  red_mean: 0, green_mean: 0, blue_mean: 0,
};
export const LONLAT_DECIMALS = 7;

/** Decimals of a metric column (metres and square metres: 2). */
export function columnDecimals(c: TreeColumn): number {
  return DECIMALS[c] ?? 2;
}

/** Rounds to `d` decimals; the result prints without binary noise for the magnitudes used here. */
export function roundTo(v: number, d: number): number {
  const f = 10 ** d;
  const r = Math.round(v * f) / f;
  return r === 0 ? 0 : r; // no "-0"
}

/** Columns written first, in this order; the rest of TREE_COLUMNS follow in table order. */
const LEADING: readonly TreeColumn[] = ['tree_id', 'x', 'y'];
const AFTER_LONLAT: readonly TreeColumn[] = ['height_m', 'crown_area_m2', 'crown_diameter_m', 'crown_extent_m'];

/** Metric columns in export order (lon/lat go between `y` and `height_m`). */
export function exportColumnOrder(): { head: TreeColumn[]; tail: TreeColumn[] } {
  const tail = TREE_COLUMNS.filter((c) => !LEADING.includes(c) && !AFTER_LONLAT.includes(c));
  return { head: [...LEADING], tail: [...AFTER_LONLAT, ...tail] };
}

/**
 * Highest return number with any point in the table's histogram (0 when the
 * cloud has no return numbers), so the per-return columns stop where data stop.
 */
export function highestReturnNumber(t: TreeTable): number {
  if (!t.hasReturns) return 0;
  const h = t.returnHistogram;
  let top = 0;
  for (let i = 0; i < t.count; i++) {
    const base = i * MAX_RETURN_NUMBER;
    for (let r = MAX_RETURN_NUMBER; r > top; r--) if (h[base + r - 1]! > 0) { top = r; break; }
  }
  return top;
}

/** Name of the per-tree count of points with return number r. */
export function returnColumnName(r: number): string {
  return `points_return_${r}`;
}

/** Checks the table's arrays agree with its count before any export indexes them. */
export function checkTable(t: TreeTable): void {
  if (!Number.isInteger(t.count) || t.count < 0) {
    throw new CrowntallyError('INTERNAL', `tree table count must be a whole number of 0 or more (got ${t.count})`);
  }
  for (const c of TREE_COLUMNS) {
    const col = t.columns[c];
    if (!col || col.length < t.count) {
      throw new CrowntallyError('INTERNAL', `tree table column ${c} holds ${col ? col.length : 0} values for ${t.count} trees`);
    }
  }
  if (t.hasReturns && t.returnHistogram.length < t.count * MAX_RETURN_NUMBER) {
    throw new CrowntallyError('INTERNAL', `tree table return histogram is shorter than ${t.count} x ${MAX_RETURN_NUMBER}`);
  }
}

/** Checks one transformed position; a CRS that cannot map to WGS 84 must not give a quietly wrong file. */
export function checkLonLat(p: [number, number], x: number, y: number): void {
  const [lon, lat] = p;
  if (!(Number.isFinite(lon) && Number.isFinite(lat) && lon >= -180 && lon <= 180 && lat >= -90 && lat <= 90)) {
    throw new CrowntallyError(
      'CRS_UNSUPPORTED',
      `the position ${x}, ${y} does not transform to a valid longitude/latitude (got ${lon}, ${lat}); ` +
        'check the survey CRS, or export without longitude/latitude',
    );
  }
}

// OWASP CSV injection guidance: a text cell that a spreadsheet would read as a
// formula (leading = + - @, tab or carriage return) gets a leading single quote.
const FORMULA_START = /^[=+\-@\t\r]/;

/** One text cell: neutralised against formula injection, then quoted per RFC 4180 when needed. */
export function csvText(s: string): string {
  const safe = FORMULA_START.test(s) ? `'${s}` : s;
  // RFC 4180 section 2: fields with comma, double quote, CR or LF are enclosed in
  // double quotes, and a double quote inside is written twice.
  return /[",\r\n]/.test(safe) ? `"${safe.replace(/"/g, '""')}"` : safe;
}

/** One number cell: plain decimal, empty for NaN/Infinity (a missing metric). */
export function csvNumber(v: number, decimals: number): string {
  if (!Number.isFinite(v)) return '';
  const s = roundTo(v, decimals).toFixed(decimals);
  return s;
}

function csvExtra(v: ExtraValue | undefined): string {
  if (v === null || v === undefined) return '';
  if (typeof v === 'number') return Number.isFinite(v) ? String(v) : '';
  if (typeof v === 'boolean') return v ? 'true' : 'false';
  return csvText(String(v));
}

/**
 * The tree table as RFC 4180 CSV: a header row, one record per tree, CRLF
 * line ends (the last record ends with CRLF too). Columns: tree_id, x, y,
 * lon, lat (only when `toLonLat` is given: without it the file holds local
 * CRS positions only), height_m, crown_area_m2, crown_diameter_m,
 * crown_extent_m, the other metrics, `points_return_1..N` when the cloud
 * has return numbers, then the extra columns in order of first appearance.
 * Numbers are plain decimals (NaN -> empty cell); text cells are
 * neutralised against formula injection.
 */
export function treesToCSV(table: TreeTable, toLonLat: ToLonLat | null, opts: TreeExportOptions = {}): string {
  checkTable(table);
  const { head, tail } = exportColumnOrder();
  const metricNames = new Set<string>(TREE_COLUMNS);
  const topReturn = highestReturnNumber(table);
  const returnNames: string[] = [];
  for (let r = 1; r <= topReturn; r++) returnNames.push(returnColumnName(r));

  // Extras: collect every row once, so the header can list the union of keys.
  let extras: Record<string, ExtraValue>[] | null = null;
  const extraNames: string[] = [];
  if (opts.extra) {
    const seen = new Set<string>();
    extras = new Array(table.count);
    for (let i = 0; i < table.count; i++) {
      const e = opts.extra(i) ?? {};
      extras[i] = e;
      for (const k of Object.keys(e)) {
        if (seen.has(k)) continue;
        if (metricNames.has(k) || k === 'lon' || k === 'lat' || returnNames.includes(k)) {
          throw new CrowntallyError('BAD_OPTIONS', `extra column "${k}" has the name of a metric column; give the edit another name`);
        }
        seen.add(k);
        extraNames.push(k);
      }
    }
  }

  const header = [...head, ...(toLonLat ? ['lon', 'lat'] : []), ...tail, ...returnNames, ...extraNames];
  const lines: string[] = [header.map(csvText).join(',')];
  const cells: string[] = [];
  const cols = table.columns;
  for (let i = 0; i < table.count; i++) {
    cells.length = 0;
    for (const c of head) cells.push(csvNumber(cols[c][i]!, columnDecimals(c)));
    if (toLonLat) {
      const x = cols.x[i]!, y = cols.y[i]!;
      if (Number.isFinite(x) && Number.isFinite(y)) {
        const p = toLonLat(x, y);
        checkLonLat(p, x, y);
        cells.push(csvNumber(p[0], LONLAT_DECIMALS), csvNumber(p[1], LONLAT_DECIMALS));
      } else {
        cells.push('', '');
      }
    }
    for (const c of tail) cells.push(csvNumber(cols[c][i]!, columnDecimals(c)));
    const base = i * MAX_RETURN_NUMBER;
    for (let r = 1; r <= topReturn; r++) cells.push(String(table.returnHistogram[base + r - 1]!));
    if (extras) {
      const e = extras[i]!;
      for (const k of extraNames) cells.push(csvExtra(e[k]));
    }
    lines.push(cells.join(','));
  }
  return lines.join('\r\n') + '\r\n';
}
