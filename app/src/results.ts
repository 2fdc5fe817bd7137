import { CAUTION } from '../../lib/export/caution.js';
import { MAX_RETURN_NUMBER, TREE_COLUMNS } from '../../lib/trees/table.js';
import { columnDecimals } from '../../lib/export/csv.js';
import { columnChart, profileChart, scatterChart } from './charts.js';
import { button, fmt, h, put } from './dom.js';
import { addCrown, editByRow, mergeLabels, reattachEdits, topsOf } from './edits.js';
import { exportCSV, exportGeoJSON, exportGeoTIFF, exportRows, type ExportInput } from './exports.js';
import type { Jobs } from './jobs.js';
import { MapView } from './map.js';
import { newEditKey, type EditRecord, type FieldStore, type ProjectRecord, type StoredRun } from './store.js';
import { COLUMN_LABEL, TreeListView } from './table.js';
import { sideView, type SideColouring } from './sideview.js';
import type { AreaOfInterest, TreePoints } from '../../lib/worker/protocol.js';
import type { ProgressEvent } from '../../lib/result.js';
import { boundaryFromGeoJSON, BoundaryError, MAX_BOUNDARY_BYTES } from './boundary.js';
import { makeLonLatTransform } from '../../lib/crs/transform.js';

/**
 * The results of a survey: map and tree list side by side on wide screens
 * (stacked on a tablet held upright), the selected tree's detail and
 * corrections, survey-wide charts and downloads. One selection is shared by
 * map, list and detail.
 */

const CONDITIONS = ['', 'good', 'fair', 'poor', 'dead', 'not assessed'];
/** Most points drawn in a side view: enough to read a crown's shape, few enough for a tablet to draw as SVG. */
const SIDE_POINTS = 4000;

export interface ResultsNav {
  toSetup: () => void;
  /** Processes the survey again limited to `aoi` (null: whole survey), stores it, and shows the new results. */
  reprocess: (aoi: AreaOfInterest | null, onProgress: (p: ProgressEvent) => void, signal: AbortSignal) => Promise<void>;
}

export async function openResults(main: HTMLElement, store: FieldStore, jobs: Jobs, project: ProjectRecord, nav: ResultsNav): Promise<void> {
  const loaded = await store.loadRun(project.id);
  if (!loaded || !project.run) { nav.toSetup(); return; }
  let run: StoredRun = loaded;
  let meta = project.run;
  let edits = await store.listEdits(project.id);
  let byRow = editByRow(run.trees, edits);
  let selected = -1;
  let mode: 'select' | 'add' | 'merge' = 'select';
  const status = h('div', { class: 'status', role: 'status' });
  // Side-view points per row of the current run (cleared whenever crowns change).
  let sidePoints = new Map<number, TreePoints>();
  let sideColouring: SideColouring = 'return';

  const marks = () => {
    const m = new Map<number, 'edited' | 'deleted'>();
    for (const [r, e] of byRow) m.set(r, e.deleted || e.mergedInto ? 'deleted' : 'edited');
    return m;
  };

  const modeBar = h('div', { class: 'mode-bar', 'aria-live': 'polite' });
  const areaBar = h('div', { class: 'area-bar', 'aria-live': 'polite' });
  const areaStatus = h('div', { class: 'status area-status' });
  const boundaryInput = h('input', { type: 'file', id: 'boundary-input', accept: '.geojson,.json,application/geo+json,application/json', class: 'visually-hidden', 'aria-label': 'GeoJSON boundary file' });
  boundaryInput.addEventListener('change', () => { void importBoundary(); });
  let areaJob: AbortController | null = null;
  const map = new MapView((t) => { void onMapTap(t.row, t.x, t.y); });
  const list = new TreeListView((row) => select(row));
  const detail = h('aside', { class: 'detail card', 'aria-label': 'Selected tree' });
  const overview = h('section', { class: 'card overview' });
  const unplacedBox = h('div', {});

  const caution = h('p', { class: 'caution', role: 'note' }, h('strong', {}, 'Caution. '), CAUTION);
  const exportsBox = h('div', { class: 'row wrap' },
    button('Download GeoJSON', () => doExport(exportGeoJSON), 'btn', { 'data-export': 'geojson' }),
    button('Download CSV', () => doExport(exportCSV), 'btn', { 'data-export': 'csv' }),
    button('Download canopy model (GeoTIFF)', () => doExport(exportGeoTIFF), 'btn', { 'data-export': 'geotiff' }),
    button('Change settings and reprocess', () => nav.toSetup(), 'btn'));

  put(main, 
    caution,
    meta.warnings.length ? h('ul', { class: 'warnings' }, ...meta.warnings.map((w) => h('li', {}, w))) : null,
    unplacedBox,
    h('div', { class: 'results' },
      h('section', { class: 'card map-card' }, h('h2', {}, 'Map'), areaBar, boundaryInput, areaStatus, modeBar, map.el),
      detail),
    h('section', { class: 'card' }, h('h2', {}, 'Trees'), list.el),
    overview,
    h('section', { class: 'card' }, h('h2', {}, 'Downloads'), h('p', { class: 'hint' }, 'Deleted and merged-away trees are left out; corrected trees carry edited = true with their species, condition and note.'), exportsBox, status),
  );

  showUnplaced();
  refreshAll();
  renderAreaBar();
  map.setArea(areaRings());

  // Browser-test view of the current run (present only when the page was opened with ?test-hooks=1).
  const hooks = (globalThis as unknown as { __crowntally?: Record<string, unknown> }).__crowntally;
  if (hooks) {
    hooks['results'] = {
      trees: () => ({ tree_id: Array.from(run.trees.columns.tree_id), x: Array.from(run.trees.columns.x), y: Array.from(run.trees.columns.y), area: Array.from(run.trees.columns.crown_area_m2) }),
      screenOf: (row: number) => map.screenOf(row),
      selected: () => selected,
      area: () => project.aoi ?? null,
    };
  }

  function refreshAll(): void {
    sidePoints = new Map();
    byRow = editByRow(run.trees, edits);
    map.setData({ chm: run.chm, labels: run.labels, trees: run.trees, outlines: run.outlines, marks: marks() });
    list.setData(run.trees, byRow);
    renderModeBar();
    renderDetail();
    renderOverview();
    map.select(selected);
  }

  function refreshMarks(): void {
    byRow = editByRow(run.trees, edits);
    map.setMarks(marks());
    list.setEdits(byRow);
    renderOverview();
  }

  function select(row: number): void {
    selected = row;
    map.select(row);
    map.reveal(row);
    list.select(row);
    renderDetail();
    renderOverview();
  }

  function renderModeBar(): void {
    if (mode === 'add') {
      modeBar.replaceChildren(h('span', { class: 'mode-note' }, 'Tap the map where a tree was missed.'), button('Stop adding', () => { mode = 'select'; renderModeBar(); }, 'btn'));
    } else if (mode === 'merge') {
      modeBar.replaceChildren(h('span', { class: 'mode-note' }, `Tap the crown to merge into tree ${treeLabel(selected)}.`), button('Cancel merge', () => { mode = 'select'; renderModeBar(); }, 'btn'));
    } else {
      modeBar.replaceChildren(h('span', { class: 'mode-note' }, 'Tap a crown to select its tree.'), button('Add a missed tree', () => { mode = 'add'; renderModeBar(); }, 'btn', { 'data-action': 'add-mode' }));
    }
  }

  // ---- area of interest: a drawn rectangle or an imported boundary ------------

  function areaText(): string {
    const a = project.aoi;
    if (!a) return 'Showing the whole survey.';
    if (a.kind === 'rect') {
      const u = meta.crs.unitM;
      return `Limited to a drawn rectangle of ${fmt((a.maxX - a.minX) * u, 0)} m \u00d7 ${fmt((a.maxY - a.minY) * u, 0)} m.`;
    }
    return 'Limited to an imported boundary.';
  }

  /** The area as rings in the survey CRS for the map; null for the whole survey or if it cannot be placed. */
  function areaRings(): number[][][] | null {
    const a = project.aoi;
    if (!a) return null;
    if (a.kind === 'rect') return [[[a.minX, a.minY], [a.maxX, a.minY], [a.maxX, a.maxY], [a.minX, a.maxY]]];
    if (!a.lonLat) return a.rings;
    try {
      const t = makeLonLatTransform(meta.crs);
      return a.rings.map((ring) => ring.map((p) => t.fromLonLat(p[0]!, p[1]!)));
    } catch {
      return null; // the run itself needed the CRS, so this only happens with an edited record
    }
  }

  function renderAreaBar(): void {
    if (areaJob) return;
    if (map.drawingRectangle) {
      areaBar.replaceChildren(h('span', { class: 'area-note' }, 'Drag a rectangle over the area to keep. Esc or Cancel leaves.'),
        button('Cancel', () => map.cancelRectangle(), 'btn', { 'data-action': 'area-cancel' }));
      return;
    }
    put(areaBar, h('span', { class: 'area-note', id: 'area-note' }, areaText()),
      button('Limit to an area', () => drawArea(), 'btn', { 'data-action': 'area-draw' }),
      button('Import boundary (GeoJSON)', () => boundaryInput.click(), 'btn', { 'data-action': 'area-import' }),
      project.aoi ? button('Use whole survey', () => { void applyArea(null); }, 'btn', { 'data-action': 'area-clear' }) : null);
  }

  function drawArea(): void {
    mode = 'select'; renderModeBar();
    areaStatus.replaceChildren();
    map.startRectangle((r) => {
      renderAreaBar();
      if (r) void applyArea({ kind: 'rect', ...r });
    });
    renderAreaBar();
  }

  async function importBoundary(): Promise<void> {
    const f = boundaryInput.files?.[0];
    boundaryInput.value = '';
    if (!f) return;
    areaStatus.replaceChildren();
    try {
      if (f.size > MAX_BOUNDARY_BYTES) throw new BoundaryError('the boundary file is too large for an area outline (over 20 MB)');
      const rings = boundaryFromGeoJSON(await f.text());
      await applyArea({ kind: 'polygon', rings, lonLat: true });
    } catch (err) {
      areaStatus.replaceChildren(h('p', { class: 'error', role: 'alert' }, `${f.name}: ${(err as Error).message}.`));
    }
  }

  async function applyArea(aoi: AreaOfInterest | null): Promise<void> {
    if (areaJob) return;
    const ctrl = new AbortController();
    areaJob = ctrl;
    const progress = h('progress', { max: '1', value: '0', class: 'bar-progress', 'aria-label': 'Processing progress' });
    const stage = h('span', { class: 'stage' }, aoi ? 'Processing the area\u2026' : 'Processing the whole survey\u2026');
    areaBar.replaceChildren(stage, progress, button('Cancel', () => ctrl.abort(), 'btn', { 'data-action': 'area-job-cancel' }));
    try {
      await nav.reprocess(aoi, (ev) => { progress.value = ev.fraction; }, ctrl.signal);
    } catch (err) {
      areaStatus.replaceChildren(h('p', { class: 'error', role: 'alert' },
        ctrl.signal.aborted ? 'Cancelled; the results below are unchanged.' : `${(err as Error).message}. The results below are unchanged.`));
    } finally {
      areaJob = null;
      if (areaBar.isConnected) renderAreaBar();
    }
  }

  function treeLabel(row: number): string {
    return row >= 0 ? String(run.trees.columns.tree_id[row]) : '';
  }

  async function onMapTap(row: number, x: number, y: number): Promise<void> {
    if (mode === 'add') { mode = 'select'; renderModeBar(); await addTree(x, y); return; }
    if (mode === 'merge') {
      mode = 'select'; renderModeBar();
      if (row >= 0 && row !== selected && selected >= 0) await merge(selected, row);
      return;
    }
    select(row);
  }

  function editFor(row: number): EditRecord {
    const e = byRow.get(row);
    if (e) return e;
    return { projectId: project.id, key: newEditKey(), x: run.trees.columns.x[row]!, y: run.trees.columns.y[row]!, treeId: run.trees.columns.tree_id[row]!, updatedAt: Date.now() };
  }

  async function saveEdit(e: EditRecord): Promise<void> {
    try {
      await store.putEdit(e);
      edits = edits.filter((x) => x.key !== e.key).concat(e);
      refreshMarks();
      status.replaceChildren(h('span', { class: 'saved' }, 'Saved on this device.'));
    } catch (err) {
      status.replaceChildren(h('p', { class: 'error', role: 'alert' }, (err as Error).message));
    }
  }

  // ---- corrections that change crowns: the worker measures them again ----

  function remeasureInput() {
    return store.getFiles(project.id).then((files) => ({
      files: files.map((f) => f.blob), names: files.map((f) => f.name),
      ...(project.crs ? { crs: project.crs } : {}),
      ...(project.source.kind === 'demo' ? { demo: project.source.demo } : {}),
      options: meta.usedOptions,
    }));
  }

  async function applyRemeasure(labels: StoredRun['labels'], tops: { x: Float64Array; y: Float64Array }, extraEdits: EditRecord[], busy: string): Promise<boolean> {
    status.replaceChildren(h('span', { class: 'stage' }, busy));
    try {
      const table = await jobs.remeasure({ ...(await remeasureInput()), labels, chm: run.chm, dtm: run.dtm, tops });
      const { outlines, ...trees } = table;
      await store.saveRemeasured(project.id, trees, outlines, labels, trees.count);
      // Row numbers may shift: put every correction back on its tree by position.
      const all = edits.filter((e) => !extraEdits.some((x) => x.key === e.key)).concat(extraEdits);
      const { placed, unplaced } = reattachEdits(trees, all, run.chm.cellSize * 0.75);
      edits = [...placed, ...unplaced.map((e) => ({ ...e, treeId: -1 }))];
      await store.putEdits(edits);
      run = { ...run, trees, outlines, labels };
      meta = { ...meta, treeCount: trees.count };
      refreshAll();
      status.replaceChildren(h('span', { class: 'saved' }, 'Measured again and saved.'));
      return true;
    } catch (err) {
      status.replaceChildren(h('p', { class: 'error', role: 'alert' }, `${(err as Error).message}. Nothing was changed.`));
      return false;
    }
  }

  async function merge(a: number, b: number): Promise<void> {
    const ea = { ...editFor(a) }, eb = { ...editFor(b), mergedInto: '' };
    eb.mergedInto = ea.key;
    eb.note = eb.note ?? '';
    const labels = mergeLabels(run.labels, a + 1, b + 1);
    if (await applyRemeasure(labels, topsOf(run.trees), [ea, eb], `Merging trees ${treeLabel(a)} and ${treeLabel(b)}\u2026`)) select(byRowKey(ea.key));
  }

  async function addTree(x: number, y: number): Promise<void> {
    const unitM = meta.crs.unitM;
    const { labels } = addCrown(run.labels, run.chm, topsOf(run.trees), x, y, 2 / unitM, meta.usedOptions.minHeightM);
    const e: EditRecord = { projectId: project.id, key: newEditKey(), x, y, treeId: -1, added: true, updatedAt: Date.now() };
    if (await applyRemeasure(labels, topsOf(run.trees, { x, y }), [e], 'Measuring the added tree\u2026')) select(byRowKey(e.key));
  }

  function byRowKey(key: string): number {
    for (const [r, e] of byRow) if (e.key === key) return r;
    return -1;
  }

  // ---- detail -------------------------------------------------------------

  function renderDetail(): void {
    const row = selected;
    if (row < 0 || row >= run.trees.count) {
      detail.replaceChildren(h('h2', {}, 'Tree'), h('p', { class: 'hint' }, 'Select a tree on the map or in the list to see its measurements and to correct it.'));
      return;
    }
    const t = run.trees;
    const e = byRow.get(row);
    const state = e?.mergedInto ? 'merged into another tree' : e?.deleted ? 'deleted (not a tree)' : e?.added ? 'added by hand' : e ? 'edited' : 'as detected';
    const facts = h('dl', { class: 'facts' }, ...TREE_COLUMNS.flatMap((c) => [h('dt', {}, COLUMN_LABEL[c]), h('dd', {}, fmt(t.columns[c][row]!, columnDecimals(c), !(c === 'x' || c === 'y' || c === 'tree_id')))]));

    const species = h('input', { class: 'field', id: 'f-species', type: 'text', maxlength: '120', autocomplete: 'off', value: e?.species ?? '' });
    const condition = h('select', { class: 'field', id: 'f-condition' }, ...CONDITIONS.map((c) => h('option', { value: c }, c || '\u2014')));
    condition.value = e?.condition ?? '';
    const note = h('textarea', { class: 'field', id: 'f-note', rows: '3', maxlength: '2000' });
    note.value = e?.note ?? '';
    let timer = 0;
    const save = () => {
      clearTimeout(timer);
      const next = { ...editFor(row), species: species.value, condition: condition.value, note: note.value };
      void saveEdit(next);
    };
    const soon = () => { clearTimeout(timer); timer = window.setTimeout(save, 300); };
    species.addEventListener('input', soon); note.addEventListener('input', soon);
    species.addEventListener('change', save); note.addEventListener('change', save); condition.addEventListener('change', save);

    const del = e?.deleted
      ? button('Restore this tree', () => { const n = { ...editFor(row) }; delete n.deleted; void saveEdit(n).then(renderDetail); }, 'btn', { 'data-action': 'restore' })
      : button('Delete: not a tree', () => { void saveEdit({ ...editFor(row), deleted: true }).then(renderDetail); }, 'btn danger', { 'data-action': 'delete' });
    const mergeBtn = button('Merge with another crown', () => { mode = 'merge'; renderModeBar(); map.select(row); }, 'btn', { 'data-action': 'merge' });

    const layers = Array.from(t.profiles.subarray(row * t.profileLayers, (row + 1) * t.profileLayers));
    const R = t.returnHistogram.length / Math.max(1, t.count);
    const hist = Array.from(t.returnHistogram.subarray(row * R, row * R + Math.min(R, MAX_RETURN_NUMBER)));
    let last = hist.length; while (last > 1 && !hist[last - 1]) last--;
    put(detail, 
      h('h2', {}, `Tree ${treeLabel(row)}`),
      h('p', { class: `tree-state${e ? ' is-edited' : ''}` }, `Status: ${state}`),
      h('p', { class: 'caution small' }, 'Estimated from the point cloud; not a risk assessment. See the caution above.'),
      h('div', { class: 'edit-form' },
        h('label', { class: 'lbl', for: 'f-species' }, 'Species'), species,
        h('label', { class: 'lbl', for: 'f-condition' }, 'Condition'), condition,
        h('label', { class: 'lbl', for: 'f-note' }, 'Note'), note,
        h('div', { class: 'row wrap' }, del, mergeBtn)),
      e?.note ? h('p', { class: 'note-view' }, h('strong', {}, 'Saved note: '), h('span', { class: 'note-text' }, e.note)) : null,
      facts,
      profileChart('Returns by height in this crown', t.profileLayerM, layers, 'returns'),
      t.hasReturns
        ? columnChart('Returns by return number', hist.slice(0, last).map((_v, i) => String(i + 1)), hist.slice(0, last), 'return number', 'points')
        : h('p', { class: 'hint' }, 'This survey has no return numbers (a photogrammetric cloud), so there is no return histogram.'),
      sideBox(row),
    );
  }

  function sideBox(row: number): HTMLElement {
    const box = h('div', { class: 'side-box' });
    const show = (pts: TreePoints) => {
      const fig = sideView(pts, sideColouring, run.trees.hasReturns, SIDE_POINTS);
      fig.addEventListener('click', (ev) => {
        const m = (ev.target as HTMLElement).closest?.('[data-colouring]')?.getAttribute('data-colouring');
        if (m === 'return' || m === 'class') sideColouring = m;
      });
      box.replaceChildren(fig);
    };
    const have = sidePoints.get(row);
    if (have) { show(have); return box; }
    box.append(h('p', { class: 'hint side-wait' }, 'Reading this tree\u2019s points for the side view\u2026'));
    const ask = run;
    void store.getFiles(project.id).then((files) => jobs.treePoints({
      files: files.map((f) => f.blob), names: files.map((f) => f.name),
      ...(project.crs ? { crs: project.crs } : {}),
      ...(project.source.kind === 'demo' ? { demo: project.source.demo } : {}),
      labels: ask.labels, dtm: ask.dtm, label: row + 1,
      topX: ask.trees.columns.x[row]!, topY: ask.trees.columns.y[row]!, maxPoints: SIDE_POINTS,
    })).then((pts) => {
      if (ask !== run) return; // crowns changed meanwhile: this answer belongs to an older table
      sidePoints.set(row, pts);
      if (box.isConnected) show(pts);
    }, (err: unknown) => {
      box.replaceChildren(h('p', { class: 'error', role: 'alert' }, `The side view could not be drawn: ${(err as Error).message}`));
    });
    return box;
  }

  function renderOverview(): void {
    const s = meta.summary;
    const hh = s.heightHistogram;
    const kept = exportRows(run.trees.count, byRow).length;
    overview.replaceChildren(
      h('h2', {}, 'Survey overview'),
      h('dl', { class: 'facts' },
        h('dt', {}, 'Trees'), h('dd', { id: 'kept-count', 'data-kept': kept }, kept === run.trees.count ? String(kept) : `${kept} (${run.trees.count - kept} deleted or merged away)`),
        h('dt', {}, 'Area'), h('dd', {}, `${fmt(s.areaM2 / 10000, 2)} ha`),
        h('dt', {}, 'Trees per hectare'), h('dd', {}, fmt(s.treesPerHa, 1)),
        h('dt', {}, 'Canopy cover'), h('dd', {}, `${fmt(s.canopyCover * 100, 1)} %`),
        h('dt', {}, 'Mean / tallest height'), h('dd', {}, `${fmt(s.meanHeightM, 1)} m / ${fmt(s.maxHeightM, 1)} m`)),
      h('div', { class: 'charts' },
        columnChart('Tree heights', hh.counts.map((_c, i) => String(i * hh.binM)), hh.counts, 'height (m)', 'trees'),
        scatterChart('Crown area against height', run.trees.columns.height_m, run.trees.columns.crown_area_m2, 'height (m)', 'crown area (m\u00b2)', selected)),
    );
  }

  function showUnplaced(): void {
    const raw = sessionStorage.getItem(`unplaced-${project.id}`);
    const lost = edits.filter((e) => e.treeId === -1);
    if (!lost.length) { unplacedBox.replaceChildren(); if (raw) sessionStorage.removeItem(`unplaced-${project.id}`); return; }
    unplacedBox.replaceChildren(h('section', { class: 'card warn' }, h('h2', {}, 'Corrections that found no tree'),
      h('p', { class: 'hint' }, 'After reprocessing, no tree was close enough to these corrections. They are kept; check the places and correct again if needed.'),
      h('ul', {}, ...lost.map((e) => h('li', {}, `at ${fmt(e.x, 1)}, ${fmt(e.y, 1)}: ${[e.deleted ? 'deleted' : '', e.added ? 'added tree' : '', e.species ?? '', e.condition ?? '', e.note ?? ''].filter(Boolean).join(' \u00b7 ') || 'edited'}`)))));
  }

  function doExport(fn: (x: ExportInput) => void): void {
    try {
      fn({ name: project.name, trees: run.trees, outlines: run.outlines, chm: run.chm, crs: meta.crs, editByRow: byRow });
      status.replaceChildren(h('span', { class: 'saved' }, 'Download started.'));
    } catch (err) {
      status.replaceChildren(h('p', { class: 'error', role: 'alert' }, (err as Error).message));
    }
  }
}
