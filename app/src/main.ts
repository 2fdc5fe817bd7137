import { registerSW } from 'virtual:pwa-register';
import { DEFAULT_OPTIONS, type TallyOptions, type WindowPreset } from '../../lib/options.js';
import type { SurveyReadout } from '../../lib/io/types.js';
import type { ProgressEvent, TallyResult } from '../../lib/result.js';
import type { AreaOfInterest } from '../../lib/worker/protocol.js';
import { button, bytes, clear, fmt, h, put } from './dom.js';
import { Jobs } from './jobs.js';
import { openStore, StoreError, type FieldStore, type ProjectRecord } from './store.js';
import { openResults } from './results.js';
import { reattachEdits } from './edits.js';
import { exportProject, importProject } from './bundle.js';
import { download, safeName } from './exports.js';
import './styles.css';

/**
 * App shell: the survey list, a survey's read-out and options, processing
 * with progress and cancel. Results (map, tree list, detail, corrections,
 * downloads) live in results.ts. Screens are plain DOM; text from users and
 * files always goes in as text, never as markup.
 */

const main = document.getElementById('main')!;
const crumb = document.getElementById('crumb')!;
let store: FieldStore;
export const jobs = new Jobs(() => new Worker(new URL('./worker.ts', import.meta.url), { type: 'module', name: 'crowntally' }));

function message(e: unknown): string {
  if (e instanceof StoreError) return e.message;
  if (e && typeof e === 'object' && 'message' in e) return String((e as { message: unknown }).message);
  return String(e);
}

export function showError(where: HTMLElement, e: unknown): void {
  where.replaceChildren(h('p', { class: 'error', role: 'alert' }, message(e)));
}

// ---- offline / update -------------------------------------------------------

function netStatus(): void {
  const net = document.getElementById('net')!;
  net.textContent = navigator.onLine ? 'Online' : 'Offline: everything still works';
  net.className = navigator.onLine ? 'net on' : 'net off';
}
window.addEventListener('online', netStatus);
window.addEventListener('offline', netStatus);
netStatus();
document.getElementById('version')!.textContent = `version ${__APP_VERSION__}`;

const updateSW = registerSW({
  onNeedRefresh() {
    const u = document.getElementById('update')!;
    u.hidden = false;
    u.replaceChildren(h('span', { class: 'update-text' }, 'A new version is ready. Your surveys and corrections are saved on this device and stay as they are.'),
      button('Update now', () => { void updateSW(true); }, 'btn primary', { 'data-action': 'update-now' }),
      button('Later', () => { u.hidden = true; }, 'btn'));
  },
  onOfflineReady() {
    const u = document.getElementById('update')!;
    u.hidden = false;
    u.replaceChildren(h('span', {}, 'Ready to work offline.'), button('OK', () => { u.hidden = true; }, 'btn'));
  },
});

// ---- routing ---------------------------------------------------------------

function go(hash: string): void {
  if (location.hash === hash) void route(); else location.hash = hash;
}
window.addEventListener('hashchange', () => { void route(); });
document.getElementById('home-btn')!.addEventListener('click', () => go('#/'));

async function route(): Promise<void> {
  const m = /^#\/(setup|results)\/([0-9a-f]+)$/.exec(location.hash);
  try {
    if (!m) return await homeScreen();
    const p = await store.getProject(m[2]!);
    if (!p) return go('#/');
    crumb.textContent = p.name;
    if (m[1] === 'results' && p.run) {
      return await openResults(main, store, jobs, p, {
        toSetup: () => go(`#/setup/${p.id}`),
        reprocess: async (aoi, onProgress, signal) => { await reprocessArea(p.id, aoi, onProgress, signal); go(`#/results/${p.id}`); },
      });
    }
    return await setupScreen(p);
  } catch (e) {
    showError(main, e);
  }
}

// ---- survey list -----------------------------------------------------------

async function homeScreen(): Promise<void> {
  crumb.textContent = 'Surveys';
  const list = h('ul', { class: 'projects' });
  const fileInput = h('input', { type: 'file', id: 'file-input', multiple: true, accept: '.las,.laz,.xyz,.txt,.csv,.pts', class: 'visually-hidden' });
  const nameInput = h('input', { type: 'text', class: 'field', id: 'survey-name', placeholder: 'e.g. Riverside park, east half', maxlength: '120' });
  const status = h('div', { class: 'status' });
  const drop = h('label', { class: 'drop', for: 'file-input' }, h('strong', {}, 'Choose survey files'), h('span', {}, 'or drop LAS, LAZ or XYZ files here'));
  const create = async (files: File[]) => {
    if (!files.length) return;
    const name = nameInput.value.trim() || files[0]!.name.replace(/\.(laz|las|xyz|txt|csv|pts)$/i, '');
    try {
      const p = await store.createProject({ name, source: { kind: 'files', names: files.map((f) => f.name), sizes: files.map((f) => f.size) } }, files.map((f) => ({ name: f.name, blob: f })));
      go(`#/setup/${p.id}`);
    } catch (e) { showError(status, e); }
  };
  fileInput.addEventListener('change', () => { void create(Array.from(fileInput.files ?? [])); });
  drop.addEventListener('dragover', (ev) => { ev.preventDefault(); drop.classList.add('over'); });
  drop.addEventListener('dragleave', () => drop.classList.remove('over'));
  drop.addEventListener('drop', (ev) => { ev.preventDefault(); drop.classList.remove('over'); void create(Array.from(ev.dataTransfer?.files ?? [])); });
  const demo = (kind: 'park' | 'orchard', label: string) => button(label, async () => {
    try {
      const p = await store.createProject({ name: kind === 'park' ? 'Demo park (invented)' : 'Demo orchard (invented)', source: { kind: 'demo', demo: kind } });
      go(`#/setup/${p.id}`);
    } catch (e) { showError(status, e); }
  }, 'btn', { 'data-demo': kind });
  const storage = h('div', { class: 'storage' });
  const importInput = h('input', { type: 'file', id: 'import-input', accept: '.ctproject', class: 'visually-hidden' });
  const importStatus = h('div', { class: 'status' });
  importInput.addEventListener('change', () => {
    const f = importInput.files?.[0];
    if (!f) return;
    void importProject(store, f).then(async (p) => {
      importInput.value = '';
      importStatus.replaceChildren(h('span', { class: 'saved' }, `Added "${p.name}" from the file.`));
      await renderList(list);
    }, (e: unknown) => { importInput.value = ''; showError(importStatus, e); });
  });
  main.replaceChildren(
    h('section', { class: 'card' }, h('h1', {}, 'New survey'),
      h('label', { class: 'lbl', for: 'survey-name' }, 'Survey name (optional)'), nameInput, fileInput, drop,
      h('p', { class: 'hint' }, 'Files stay on this device. Several tiles of one survey can be chosen together.'),
      h('div', { class: 'row' }, h('span', { class: 'lbl' }, 'Or try an invented survey:'), demo('park', 'Demo park'), demo('orchard', 'Demo orchard')),
      status),
    h('section', { class: 'card' }, h('h2', {}, 'Surveys on this device'), list,
      h('div', { class: 'row wrap' }, importInput, h('label', { class: 'btn', for: 'import-input', 'data-action': 'import' }, 'Open a project file\u2026'),
        h('span', { class: 'hint' }, 'A survey saved with \u201cSave as one file\u201d, from this or another device.')),
      importStatus),
    h('section', { class: 'card' }, h('h2', {}, 'Storage'), storage),
  );
  await renderList(list);
  void renderStorage(storage);
}

async function renderList(list: HTMLElement): Promise<void> {
  const ps = await store.listProjects();
  const broken = await store.incompleteIds();
  if (!ps.length) { list.replaceChildren(h('li', { class: 'empty' }, 'No surveys yet.')); return; }
  list.replaceChildren(...ps.map((p) => {
    const src = p.source.kind === 'demo' ? 'invented scenario' : `${p.source.names.length} file${p.source.names.length > 1 ? 's' : ''}: ${p.source.names.join(', ')}`;
    const incomplete = broken.has(p.id);
    const info = incomplete ? 'Incomplete: saving stopped part way. Delete it and start the survey again.'
      : p.run ? `${p.run.treeCount} trees, processed ${new Date(p.run.at).toLocaleString()}` : 'not processed yet';
    let armed = false;
    const del = button('Delete', async () => {
      if (!armed) { armed = true; del.textContent = 'Tap again to delete'; del.classList.add('danger'); return; }
      await store.deleteProject(p.id);
      await renderList(list);
      const st = document.querySelector<HTMLElement>('.storage');
      if (st) void renderStorage(st);
    }, 'btn', { 'aria-label': `Delete ${p.name}`, 'data-action': 'delete-project' });
    const save = button('Save as one file', async () => {
      try {
        download(`${safeName(p.name)}.ctproject`, await exportProject(store, p.id), 'application/octet-stream');
      } catch (e) { showError(list.parentElement!.querySelector<HTMLElement>('.status') ?? list, e); }
    }, 'btn', { 'aria-label': `Save ${p.name} as one file`, 'data-action': 'export-project' });
    return h('li', { class: `project${incomplete ? ' incomplete' : ''}`, 'data-id': p.id, 'data-state': incomplete ? 'incomplete' : p.run ? 'processed' : 'new' },
      h('div', { class: 'grow' }, h('strong', { class: 'pname' }, p.name), h('div', { class: 'hint' }, src), h('div', { class: incomplete ? 'hint warn-text' : 'hint' }, info)),
      incomplete ? null : button('Open', () => go(p.run ? `#/results/${p.id}` : `#/setup/${p.id}`), 'btn primary', { 'aria-label': `Open ${p.name}` }),
      incomplete ? null : save,
      del);
  }));
}

async function renderStorage(el: HTMLElement): Promise<void> {
  if (!navigator.storage?.estimate) { el.replaceChildren(h('p', {}, 'This browser does not report storage use.')); return; }
  const est = await navigator.storage.estimate();
  const persisted = (await navigator.storage.persisted?.()) ?? false;
  const keep = button('Keep my data on this device', async () => {
    const ok = (await navigator.storage.persist?.()) ?? false;
    keep.textContent = ok ? 'Data is kept' : 'The browser declined; install the app to the home screen and try again';
  }, 'btn');
  put(el, 
    h('p', {}, `Used ${bytes(est.usage ?? NaN)} of about ${bytes(est.quota ?? NaN)} available to this app.`),
    h('p', { class: 'hint' }, persisted ? 'The browser keeps this data even when space runs low.' : 'The browser may clear this data when space runs low unless you ask it to keep it.'),
    persisted ? null : keep);
}

// ---- survey set-up ---------------------------------------------------------

interface OptionField { key: keyof TallyOptions; label: string; unit: string; help: string; auto?: boolean; min?: number; max?: number; step?: number }
const FIELDS: OptionField[] = [
  { key: 'cellSizeM', label: 'Cell size', unit: 'm', help: 'Edge of a canopy-model cell. Auto follows the point density.', auto: true, min: 0.1, max: 50, step: 0.05 },
  { key: 'minHeightM', label: 'Lowest tree height', unit: 'm', help: 'Anything lower counts as shrub, hedge or ground, not tree.', min: 0, max: 99, step: 0.5 },
  { key: 'crownFloorFraction', label: 'Crown floor', unit: 'of top height', help: 'A cell joins a crown only above this share of its top height (0 to 0.95).', min: 0, max: 0.95, step: 0.05 },
  { key: 'crownReachM', label: 'Crown reach', unit: 'm', help: 'Farthest a crown may spread from its top. Auto uses the search window at the top height.', auto: true, min: 0.5, max: 100, step: 0.5 },
];

function readoutCard(r: SurveyReadout): HTMLElement {
  const classes = Object.entries(r.classes).map(([c, n]) => `${c} ${r.classNames[c] ?? ''}: ${n.toLocaleString()}`);
  const crs = r.crs.epsg ? `EPSG:${r.crs.epsg} (${r.crs.unitName})` : r.crs.wkt ? `custom definition (${r.crs.unitName})` : 'none in the file';
  const rows: [string, string][] = [
    ['Points', r.points.toLocaleString()],
    ['Format', r.kind === 'xyz' ? 'text (XYZ)' : `${r.kind.toUpperCase()} ${r.version}, point format ${r.pointFormat}`],
    ['First-return density', `${fmt(r.firstReturnDensityPerM2, 2)} per m\u00b2 over ${fmt(r.densityAreaM2, 0)} m\u00b2 (${r.densityArea})`],
    ['Quality level', `${r.qualityLevel}`],
    ['Classes', classes.length ? classes.join('; ') : 'none'],
    ['CRS', crs],
    ['Kind of cloud', r.looksPhotogrammetric ? `photogrammetric (${r.photogrammetricReason})` : 'lidar'],
    ['Colour', r.hasRgb ? 'yes' : 'no'],
  ];
  return h('div', { class: 'readout' }, h('h3', { class: 'fname' }, r.name),
    h('dl', { class: 'facts' }, ...rows.flatMap(([k, v]) => [h('dt', {}, k), h('dd', {}, v)])),
    r.qualityNote ? h('p', { class: 'hint' }, r.qualityNote) : null,
    r.warnings.length ? h('ul', { class: 'warnings' }, ...r.warnings.map((w) => h('li', {}, w))) : null);
}

async function setupScreen(p: ProjectRecord): Promise<void> {
  const readoutBox = h('div', { class: 'readouts' }, h('p', { class: 'hint' }, 'Reading the survey\u2026'));
  const status = h('div', { class: 'status' });
  const files = await store.getFiles(p.id);
  const input = () => ({ files: files.map((f) => f.blob), names: files.map((f) => f.name), ...(p.source.kind === 'demo' ? { demo: p.source.demo } : {}) });

  // Options form.
  const opts: Partial<TallyOptions> = { ...p.options };
  const form = h('div', { class: 'options' });
  for (const f of FIELDS) {
    const id = `opt-${f.key}`;
    const cur = opts[f.key] ?? DEFAULT_OPTIONS[f.key];
    const num = h('input', { class: 'field num', type: 'number', id, min: f.min, max: f.max, step: f.step, inputmode: 'decimal' });
    const autoBox = f.auto ? h('input', { type: 'checkbox', id: `${id}-auto` }) : null;
    if (cur === 'auto') { if (autoBox) autoBox.checked = true; num.disabled = true; } else num.value = String(cur);
    const commit = () => {
      if (autoBox?.checked) { (opts as Record<string, unknown>)[f.key] = 'auto'; num.disabled = true; return; }
      num.disabled = false;
      const v = Number(num.value);
      if (num.value !== '' && Number.isFinite(v)) (opts as Record<string, unknown>)[f.key] = v; else delete opts[f.key];
    };
    num.addEventListener('change', commit);
    autoBox?.addEventListener('change', () => { if (!autoBox.checked && num.value === '') num.value = String(f.key === 'cellSizeM' ? 0.5 : 5); commit(); });
    form.append(h('div', { class: 'opt' },
      h('label', { class: 'lbl', for: id }, `${f.label} (${f.unit})`),
      h('div', { class: 'row' }, num, autoBox ? h('label', { class: 'check', for: `${id}-auto` }, autoBox, 'Auto') : null),
      h('p', { class: 'hint' }, `${f.help} Default: ${DEFAULT_OPTIONS[f.key] === 'auto' ? 'auto' : String(DEFAULT_OPTIONS[f.key])}.`)));
  }
  const win = h('select', { class: 'field', id: 'opt-window' },
    h('option', { value: 'combined' }, 'Mixed stands'), h('option', { value: 'deciduous' }, 'Broadleaf'), h('option', { value: 'pines' }, 'Conifers'));
  win.value = typeof (opts.window ?? DEFAULT_OPTIONS.window) === 'string' ? String(opts.window ?? DEFAULT_OPTIONS.window) : 'combined';
  win.addEventListener('change', () => { opts.window = win.value as WindowPreset; });
  form.append(h('div', { class: 'opt' }, h('label', { class: 'lbl', for: 'opt-window' }, 'Treetop search window'), win,
    h('p', { class: 'hint' }, 'Window width grows with tree height, from published crown-width curves for broadleaf, conifer or mixed stands. Default: mixed.')));

  const crsInput = h('input', { class: 'field', id: 'crs', type: 'text', placeholder: 'EPSG:32633', value: p.crs ?? '', autocomplete: 'off' });
  const crsBox = h('div', { class: 'opt', hidden: true }, h('label', { class: 'lbl', for: 'crs' }, 'Coordinate system of the files (EPSG code)'), crsInput,
    h('p', { class: 'hint' }, 'The files name no coordinate system. Give the EPSG code they were surveyed in, e.g. EPSG:27700.'));

  const progress = h('progress', { max: '1', value: '0', class: 'bar-progress', 'aria-label': 'Processing progress' });
  const stage = h('span', { class: 'stage', 'aria-live': 'polite' });
  const progressBox = h('div', { class: 'progress-box', hidden: true }, h('div', { class: 'row' }, stage), progress);
  let ctrl: AbortController | null = null;
  const cancel = button('Cancel', () => ctrl?.abort(), 'btn', { hidden: true });
  const start = button('Count trees', () => { void run(); }, 'btn primary big', { id: 'start' });
  const openBtn = p.run ? button('Open last results', () => go(`#/results/${p.id}`), 'btn') : null;

  main.replaceChildren(
    h('section', { class: 'card' }, h('h1', {}, p.name), h('h2', {}, 'What is in the survey'), readoutBox, crsBox),
    h('section', { class: 'card' }, h('h2', {}, 'Settings'), form),
    h('section', { class: 'card' },
      p.aoi ? h('p', { class: 'hint', id: 'setup-area' }, 'Processing is limited to the area of interest set on the results screen ("Use whole survey" there removes it).') : null,
      h('div', { class: 'row' }, start, cancel, openBtn), progressBox, status),
  );

  const stageNames: Record<string, string> = {
    read: 'Reading points', ground: 'Finding the ground', dtm: 'Building the ground model', chm: 'Building the canopy model',
    treetops: 'Finding treetops', crowns: 'Outlining crowns', metrics: 'Measuring trees', outlines: 'Tracing crown edges', export: 'Finishing',
  };

  async function run(): Promise<void> {
    const crs = crsInput.value.trim();
    if (crs && !/^EPSG:\d{4,6}$/i.test(crs)) { showError(status, new Error('write the coordinate system as EPSG: and its number, e.g. EPSG:27700')); return; }
    await store.updateProject(p.id, (q) => { q.options = opts; if (crs) q.crs = crs.toUpperCase(); else delete q.crs; });
    ctrl = new AbortController();
    start.disabled = true; cancel.hidden = false; progressBox.hidden = false; status.replaceChildren();
    stage.textContent = 'Starting\u2026';
    const t0 = performance.now();
    try {
      const aoi = (await store.getProject(p.id))?.aoi;
      const result = await jobs.tally({ ...input(), options: opts, ...(crs ? { crs: crs.toUpperCase() } : {}), ...(aoi ? { aoi } : {}) }, (ev) => {
        progress.value = ev.fraction;
        const pts = ev.pointsTotal ? ` \u2014 ${ev.pointsRead.toLocaleString()} of ${ev.pointsTotal.toLocaleString()} points` : '';
        stage.textContent = `${stageNames[ev.stage] ?? ev.stage} (${Math.round(ev.fraction * 100)}%)${pts}`;
      }, ctrl.signal);
      stage.textContent = 'Saving\u2026';
      const unplaced = await saveResult(p, result);
      stage.textContent = `Done in ${((performance.now() - t0) / 1000).toFixed(1)} s: ${result.trees.count} trees.`;
      noteUnplaced(p.id, unplaced);
      go(`#/results/${p.id}`);
    } catch (e) {
      showError(status, e);
      stage.textContent = ctrl.signal.aborted ? 'Cancelled.' : 'Stopped.';
    } finally {
      start.disabled = false; cancel.hidden = true;
    }
  }

  try {
    const readouts = await jobs.inspect({ ...input(), ...(p.crs ? { crs: p.crs } : {}) });
    readoutBox.replaceChildren(...readouts.map(readoutCard));
    if (readouts.some((r) => r.crs.epsg === null && !r.crs.proj4)) crsBox.hidden = false;
    await store.updateProject(p.id, (q) => { q.readouts = readouts; });
  } catch (e) {
    showError(readoutBox, e);
    crsBox.hidden = false;
  }
}

function noteUnplaced(id: string, unplaced: Awaited<ReturnType<typeof saveResult>>): void {
  if (unplaced.length) {
    sessionStorage.setItem(`unplaced-${id}`, JSON.stringify(unplaced.map((e) => ({ x: e.x, y: e.y, note: e.note ?? '', species: e.species ?? '', deleted: !!e.deleted }))));
  }
}

/**
 * Processes the survey again limited to `aoi` (null: the whole survey) with
 * the project's stored options, then stores the area with the run. The area
 * is stored only once the run succeeded, so a boundary that misses the survey
 * leaves the last results and their area as they were.
 */
async function reprocessArea(id: string, aoi: AreaOfInterest | null, onProgress: (p: ProgressEvent) => void, signal: AbortSignal): Promise<void> {
  const p = await store.getProject(id);
  if (!p) throw new Error('that project is no longer on this device');
  const files = await store.getFiles(id);
  const result = await jobs.tally({
    files: files.map((f) => f.blob), names: files.map((f) => f.name),
    ...(p.source.kind === 'demo' ? { demo: p.source.demo } : {}),
    options: p.options, ...(p.crs ? { crs: p.crs } : {}), ...(aoi ? { aoi } : {}),
  }, onProgress, signal);
  const q = await store.updateProject(id, (r) => { if (aoi) r.aoi = aoi; else delete r.aoi; });
  noteUnplaced(id, await saveResult(q, result));
}

/** Stores a run and puts earlier corrections back on the new trees; returns those that found no tree. */
async function saveResult(p: ProjectRecord, r: TallyResult) {
  const { outlines, ...trees } = r.trees;
  await store.saveRun(p.id, { trees, outlines, chm: r.chm, dtm: r.dtm, labels: r.labels }, {
    at: Date.now(), treeCount: r.trees.count, summary: r.summary, warnings: r.warnings, crs: r.crs, usedOptions: r.options,
  }, [r.readout]);
  const edits = await store.listEdits(p.id);
  if (!edits.length) return [];
  // An edit follows its tree if the new top is within 1.5 m or two cells, whichever is larger.
  const tol = Math.max(1.5 / r.crs.unitM, 2 * r.chm.cellSize);
  const { placed, unplaced } = reattachEdits(trees, edits, tol);
  await store.putEdits([...placed, ...unplaced.map((e) => ({ ...e, treeId: -1 }))]);
  return unplaced;
}

// ---- start -----------------------------------------------------------------

async function startApp(): Promise<void> {
  try {
    store = await openStore();
    if (new URLSearchParams(location.search).get('test-hooks') === '1') (await import('./testhooks.js')).installTestHooks(store);
  } catch (e) {
    showError(main, new Error(`the app cannot open its storage on this device (${message(e)}); private browsing may block it`));
    return;
  }
  clear(main);
  await route();
}

void startApp();
