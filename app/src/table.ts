import { TREE_COLUMNS, type TreeColumn } from '../../lib/trees/table.js';
import { columnDecimals } from '../../lib/export/csv.js';
import { button, fmt, h } from './dom.js';
import type { EditRecord, StoredTrees } from './store.js';

/**
 * The tree list: every metric as a column, sortable by any of them,
 * filterable by ranges on any of them, and virtualised (only the rows in
 * view exist in the page), so 20,000 trees scroll as smoothly as 20.
 */

export const ROW_PX = 48;
const OVERSCAN = 8;

export const COLUMN_LABEL: Record<TreeColumn, string> = {
  tree_id: 'Tree', x: 'Easting', y: 'Northing', height_m: 'Height (m)', chm_height_m: 'Canopy model height (m)',
  crown_area_m2: 'Crown area (m\u00b2)', crown_diameter_m: 'Crown diameter (m)', crown_extent_m: 'Crown extent (m)',
  crown_perimeter_m: 'Crown perimeter (m)', crown_base_m: 'Crown base (m)', point_count: 'Points',
  first_returns: 'First returns', intermediate_returns: 'Middle returns', last_returns: 'Last returns', single_returns: 'Single returns',
  intensity_mean: 'Intensity mean', intensity_max: 'Intensity max',
  h25_m: 'Height 25% (m)', h50_m: 'Height 50% (m)', h75_m: 'Height 75% (m)', h95_m: 'Height 95% (m)',
  ground_share: 'Ground share', red_mean: 'Red mean', green_mean: 'Green mean', blue_mean: 'Blue mean',
};

export interface RangeFilter { column: TreeColumn; min: number; max: number }

export interface TableState {
  sort: { column: TreeColumn; descending: boolean };
  filters: RangeFilter[];
  editedOnly: boolean;
}

export class TreeListView {
  readonly el: HTMLElement;
  private body: HTMLElement;
  private spacer: HTMLElement;
  private rowsEl: HTMLElement;
  private countEl: HTMLElement;
  private chips: HTMLElement;
  private header: HTMLElement;
  private trees: StoredTrees | null = null;
  private edits = new Map<number, EditRecord>();
  private order = new Int32Array(0);
  private selected = -1;
  private rendered = { from: -1, to: -1 };
  readonly state: TableState = { sort: { column: 'height_m', descending: true }, filters: [], editedOnly: false };

  constructor(private readonly onSelect: (row: number) => void) {
    this.countEl = h('span', { class: 'count', 'aria-live': 'polite' });
    this.chips = h('div', { class: 'chips' });
    const colSel = h('select', { class: 'field', 'aria-label': 'Metric to filter' }, ...TREE_COLUMNS.map((c) => h('option', { value: c }, COLUMN_LABEL[c])));
    colSel.value = 'height_m';
    const min = h('input', { class: 'field num', type: 'number', step: 'any', placeholder: 'from', 'aria-label': 'Lowest value' });
    const max = h('input', { class: 'field num', type: 'number', step: 'any', placeholder: 'to', 'aria-label': 'Highest value' });
    const edited = h('input', { type: 'checkbox', id: 'edited-only' });
    edited.addEventListener('change', () => { this.state.editedOnly = edited.checked; this.refresh(); });
    const addFilter = button('Add filter', () => {
      const lo = min.value === '' ? -Infinity : Number(min.value);
      const hi = max.value === '' ? Infinity : Number(max.value);
      if (Number.isNaN(lo) || Number.isNaN(hi)) return;
      this.state.filters.push({ column: colSel.value as TreeColumn, min: lo, max: hi });
      min.value = ''; max.value = '';
      this.refresh();
    });
    const tools = h('div', { class: 'table-tools' }, colSel, min, max, addFilter,
      h('label', { class: 'check', for: 'edited-only' }, edited, 'Edited only'), this.countEl);
    this.header = h('div', { class: 'trow thead', role: 'row' });
    this.spacer = h('div', { class: 'tspacer' });
    this.rowsEl = h('div', { class: 'trows', role: 'rowgroup' });
    this.body = h('div', { class: 'tbody', role: 'grid', tabindex: '0', 'aria-label': 'Trees' }, this.header, this.spacer, this.rowsEl);
    this.body.addEventListener('scroll', () => this.paint());
    this.body.addEventListener('keydown', (ev) => this.key(ev));
    new ResizeObserver(() => this.paint(true)).observe(this.body);
    this.el = h('div', { class: 'tree-list' }, tools, this.chips, this.body);
    this.buildHeader();
  }

  setData(trees: StoredTrees, edits: Map<number, EditRecord>): void {
    this.trees = trees;
    this.edits = edits;
    this.refresh();
  }

  setEdits(edits: Map<number, EditRecord>): void {
    this.edits = edits;
    this.refresh();
  }

  /** Rows in the current order (after filters), for tests and exports of the view. */
  visibleRows(): Int32Array { return this.order; }

  select(row: number, scroll = true): void {
    this.selected = row;
    if (scroll) {
      const pos = this.order.indexOf(row);
      if (pos >= 0) {
        const top = pos * ROW_PX, view = this.body.clientHeight - ROW_PX;
        if (top < this.body.scrollTop || top > this.body.scrollTop + view - ROW_PX) this.body.scrollTop = Math.max(0, top - view / 2);
      }
    }
    this.paint(true);
  }

  private buildHeader(): void {
    this.header.replaceChildren(h('span', { class: 'tcell mark', role: 'columnheader' }, ''),
      ...TREE_COLUMNS.map((c) => {
        const s = this.state.sort;
        const arrow = s.column === c ? (s.descending ? ' \u25bc' : ' \u25b2') : '';
        const b = h('button', { type: 'button', class: `tcell th${c === 'x' || c === 'y' ? ' wide' : ''}${s.column === c ? ' sorted' : ''}`, role: 'columnheader', 'data-col': c,
          'aria-sort': s.column === c ? (s.descending ? 'descending' : 'ascending') : 'none' }, COLUMN_LABEL[c] + arrow);
        b.addEventListener('click', () => {
          if (s.column === c) s.descending = !s.descending; else { s.column = c; s.descending = c === 'height_m' || c === 'crown_area_m2'; }
          this.refresh();
        });
        return b;
      }));
  }

  private refresh(): void {
    const t = this.trees;
    this.buildHeader();
    this.chips.replaceChildren(...this.state.filters.map((f, i) => {
      const label = `${COLUMN_LABEL[f.column]}: ${Number.isFinite(f.min) ? f.min : '\u2026'} to ${Number.isFinite(f.max) ? f.max : '\u2026'}`;
      return button(`${label}  \u2715`, () => { this.state.filters.splice(i, 1); this.refresh(); }, 'chip', { 'aria-label': `Remove filter ${label}` });
    }));
    if (!t) return;
    const keep: number[] = [];
    for (let i = 0; i < t.count; i++) {
      if (this.state.editedOnly && !this.edits.has(i)) continue;
      let ok = true;
      for (const f of this.state.filters) {
        const v = t.columns[f.column][i]!;
        if (!(v >= f.min && v <= f.max)) { ok = false; break; }
      }
      if (ok) keep.push(i);
    }
    const col = t.columns[this.state.sort.column];
    const sign = this.state.sort.descending ? -1 : 1;
    // NaN (metric absent) sorts last either way.
    keep.sort((a, b) => {
      const va = col[a]!, vb = col[b]!;
      if (Number.isNaN(va)) return Number.isNaN(vb) ? a - b : 1;
      if (Number.isNaN(vb)) return -1;
      return va === vb ? a - b : (va - vb) * sign;
    });
    this.order = Int32Array.from(keep);
    this.countEl.textContent = `${keep.length} of ${t.count} trees`;
    this.spacer.className = 'tspacer';
    this.spacer.replaceChildren();
    // The spacer's height sets the scroll range; set through the CSSOM (allowed by the CSP, unlike style attributes).
    this.spacer.style.height = `${keep.length * ROW_PX}px`;
    this.paint(true);
  }

  private paint(force = false): void {
    if (!this.trees) return;
    const top = this.body.scrollTop;
    const from = Math.max(0, Math.floor(top / ROW_PX) - OVERSCAN);
    const to = Math.min(this.order.length, Math.ceil((top + this.body.clientHeight) / ROW_PX) + OVERSCAN);
    if (!force && from === this.rendered.from && to === this.rendered.to) return;
    this.rendered = { from, to };
    const t = this.trees;
    const rows: HTMLElement[] = [];
    for (let p = from; p < to; p++) {
      const i = this.order[p]!;
      const e = this.edits.get(i);
      const mark = e ? (e.deleted || e.mergedInto ? 'deleted' : 'edited') : '';
      const r = h('div', { class: `trow${i === this.selected ? ' selected' : ''}${mark ? ` ${mark}` : ''}`, role: 'row', 'data-row': i, 'aria-selected': i === this.selected ? 'true' : 'false' },
        h('span', { class: 'tcell mark', title: mark }, mark === 'deleted' ? '\u2715' : mark === 'edited' ? '\u25c6' : ''),
        ...TREE_COLUMNS.map((c) => h('span', { class: c === 'x' || c === 'y' ? 'tcell wide' : 'tcell' }, fmt(t.columns[c][i]!, columnDecimals(c), !(c === 'x' || c === 'y' || c === 'tree_id')))));
      r.style.top = `${ROW_PX * (p + 1)}px`;
      r.addEventListener('click', () => this.onSelect(i));
      rows.push(r);
    }
    this.rowsEl.replaceChildren(...rows);
  }

  private key(ev: KeyboardEvent): void {
    if (ev.key !== 'ArrowDown' && ev.key !== 'ArrowUp') return;
    ev.preventDefault();
    const pos = this.order.indexOf(this.selected);
    const next = Math.max(0, Math.min(this.order.length - 1, pos + (ev.key === 'ArrowDown' ? 1 : -1)));
    if (this.order.length) this.onSelect(this.order[next]!);
  }
}
