import { select, zoom, zoomIdentity, type ZoomBehavior, type ZoomTransform } from 'd3';
import type { Grid } from '../../lib/raster/grid.js';
import type { CrownOutlines } from '../../lib/trees/table.js';
import { button, h } from './dom.js';
import { heightRgb, MARK, rgbCss, scaleTopM } from './palette.js';
import type { StoredTrees } from './store.js';

/**
 * The survey map: the canopy height model as a shaded raster on a canvas,
 * crown outlines and treetops over it, pan and zoom by touch or mouse
 * (d3-zoom). Drawing works in CHM cell units (1 unit = one cell), so a tap
 * maps straight to a cell of the label grid, which says which crown it hit.
 */

export interface MapData {
  chm: Grid<Float32Array>;
  labels: Grid<Int32Array>;
  trees: StoredTrees;
  outlines: CrownOutlines;
  /** Row -> 'edited' | 'deleted' for marking. */
  marks: Map<number, 'edited' | 'deleted'>;
}

export interface MapTap { row: number; x: number; y: number }

/** A rectangle in survey CRS units. */
export interface MapRect { minX: number; minY: number; maxX: number; maxY: number }

/** Rectangle drawing in progress: corners in CHM cell units. */
interface RectDraw { onDone: (r: MapRect | null) => void; from: [number, number] | null; to: [number, number] | null; pointer: number }

export class MapView {
  readonly el: HTMLElement;
  private canvas: HTMLCanvasElement;
  private ctx: CanvasRenderingContext2D;
  private image: HTMLCanvasElement | null = null;
  private data: MapData | null = null;
  private crownPath: Path2D | null = null;
  private treePaths: Path2D[] = [];
  private transform: ZoomTransform = zoomIdentity;
  private zoomer: ZoomBehavior<HTMLCanvasElement, unknown>;
  private selected = -1;
  private partner = -1;
  private frame = 0;
  private legend: HTMLElement;
  private fitted = false;
  private rectDraw: RectDraw | null = null;
  /** Rings (survey CRS) of the area the run was limited to; outside it the map holds no trees. */
  private areaRings: number[][][] | null = null;
  /** A click that ends a drag is not a tap on a crown. */
  private swallowClick = false;
  private readonly onKey = (ev: KeyboardEvent) => { if (ev.key === 'Escape' && this.rectDraw) this.endRectangle(null); };

  constructor(private readonly onTap: (t: MapTap) => void) {
    this.canvas = h('canvas', { class: 'map-canvas', 'aria-label': 'Canopy height map: tap a crown to select its tree' });
    this.ctx = this.canvas.getContext('2d')!;
    this.legend = h('div', { class: 'legend' });
    const zoomBar = h('div', { class: 'map-tools' },
      button('+', () => this.zoomBy(1.6), 'btn icon', { 'aria-label': 'Zoom in' }),
      button('\u2212', () => this.zoomBy(1 / 1.6), 'btn icon', { 'aria-label': 'Zoom out' }),
      button('Fit', () => this.fit(), 'btn icon', { 'aria-label': 'Show the whole survey' }),
    );
    this.el = h('div', { class: 'map' }, this.canvas, zoomBar, this.legend);
    this.zoomer = zoom<HTMLCanvasElement, unknown>().scaleExtent([0.05, 400]).on('zoom', (ev: { transform: ZoomTransform }) => {
      this.transform = ev.transform;
      this.schedule();
    });
    select(this.canvas).call(this.zoomer);
    this.canvas.addEventListener('click', (ev) => { if (this.swallowClick || this.rectDraw) { this.swallowClick = false; return; } this.tap(ev); });
    this.canvas.addEventListener('pointerdown', (ev) => this.rectDown(ev));
    this.canvas.addEventListener('pointermove', (ev) => this.rectMove(ev));
    this.canvas.addEventListener('pointerup', (ev) => this.rectUp(ev));
    this.canvas.addEventListener('pointercancel', (ev) => { if (this.rectDraw?.pointer === ev.pointerId) { this.rectDraw.from = null; this.rectDraw.to = null; this.schedule(); } });
    new ResizeObserver(() => this.resize()).observe(this.el);
  }

  setData(d: MapData): void {
    const sameGrid = this.data && this.data.chm === d.chm;
    this.data = d;
    if (!sameGrid) { this.image = this.shade(d.chm); this.fitted = false; }
    this.buildPaths(d);
    this.resize();
  }

  setMarks(marks: MapData['marks']): void {
    if (this.data) { this.data.marks = marks; this.schedule(); }
  }

  select(row: number, partner = -1): void {
    this.selected = row;
    this.partner = partner;
    this.schedule();
  }

  /** Centres the view on a tree without changing the zoom (keeps the user's zoom if it is close enough). */
  reveal(row: number): void {
    if (!this.data || row < 0) return;
    const { chm, trees } = this.data;
    const px = (trees.columns.x[row]! - chm.originX) / chm.cellSize;
    const py = (chm.originY - trees.columns.y[row]!) / chm.cellSize;
    const [sx, sy] = this.transform.apply([px, py]);
    const w = this.canvas.clientWidth, hgt = this.canvas.clientHeight;
    if (sx > 40 && sx < w - 40 && sy > 40 && sy < hgt - 40) return;
    const t = zoomIdentity.translate(w / 2 - px * this.transform.k, hgt / 2 - py * this.transform.k).scale(this.transform.k);
    select(this.canvas).call(this.zoomer.transform, t);
  }

  /**
   * Lets the user drag a rectangle (mouse, pen or finger); pan and zoom are
   * off meanwhile. Calls back with the rectangle in CRS units, or null when
   * cancelled (Esc, or cancelRectangle()).
   */
  startRectangle(onDone: (r: MapRect | null) => void): void {
    if (this.rectDraw) this.endRectangle(null);
    this.rectDraw = { onDone, from: null, to: null, pointer: -1 };
    select(this.canvas).on('.zoom', null);
    this.canvas.classList.add('is-drawing');
    document.addEventListener('keydown', this.onKey);
    this.schedule();
  }

  /** Shows the area of interest: outside it is veiled (nothing there was processed). */
  setArea(rings: number[][][] | null): void {
    this.areaRings = rings;
    this.schedule();
  }

  cancelRectangle(): void {
    if (this.rectDraw) this.endRectangle(null);
  }

  get drawingRectangle(): boolean {
    return this.rectDraw !== null;
  }

  private endRectangle(r: MapRect | null): void {
    const d = this.rectDraw;
    if (!d) return;
    this.rectDraw = null;
    document.removeEventListener('keydown', this.onKey);
    this.canvas.classList.remove('is-drawing');
    select(this.canvas).call(this.zoomer);
    this.schedule();
    d.onDone(r);
  }

  private cellAt(ev: PointerEvent): [number, number] {
    const r = this.canvas.getBoundingClientRect();
    const [px, py] = this.transform.invert([ev.clientX - r.left, ev.clientY - r.top]);
    if (!this.data) return [px, py];
    const { chm } = this.data; // clamp to the map, so a drag past its edge keeps the edge
    return [Math.min(chm.width, Math.max(0, px)), Math.min(chm.height, Math.max(0, py))];
  }

  private rectDown(ev: PointerEvent): void {
    const d = this.rectDraw;
    if (!d || d.from) return;
    ev.preventDefault();
    d.pointer = ev.pointerId;
    d.from = this.cellAt(ev);
    d.to = d.from;
    this.canvas.setPointerCapture?.(ev.pointerId);
    this.schedule();
  }

  private rectMove(ev: PointerEvent): void {
    const d = this.rectDraw;
    if (!d || !d.from || ev.pointerId !== d.pointer) return;
    d.to = this.cellAt(ev);
    this.schedule();
  }

  private rectUp(ev: PointerEvent): void {
    const d = this.rectDraw;
    if (!d || !d.from || ev.pointerId !== d.pointer || !this.data) return;
    d.to = this.cellAt(ev);
    this.swallowClick = true;
    const [ax, ay] = d.from, [bx, by] = d.to;
    // Fewer than two cells across is a slip, not an area: keep drawing.
    if (Math.abs(ax - bx) < 2 || Math.abs(ay - by) < 2) { d.from = null; d.to = null; this.schedule(); return; }
    const { chm } = this.data;
    const cs = chm.cellSize;
    this.endRectangle({
      minX: chm.originX + Math.min(ax, bx) * cs, maxX: chm.originX + Math.max(ax, bx) * cs,
      minY: chm.originY - Math.max(ay, by) * cs, maxY: chm.originY - Math.min(ay, by) * cs,
    });
  }

  private zoomBy(f: number): void {
    select(this.canvas).call(this.zoomer.scaleBy, f);
  }

  fit(): void {
    if (!this.data) return;
    const { chm } = this.data;
    const w = this.canvas.clientWidth, hgt = this.canvas.clientHeight;
    if (!w || !hgt) return;
    const k = Math.min(w / chm.width, hgt / chm.height) * 0.96;
    const t = zoomIdentity.translate((w - chm.width * k) / 2, (hgt - chm.height * k) / 2).scale(k);
    select(this.canvas).call(this.zoomer.transform, t);
    this.fitted = true;
  }

  private resize(): void {
    const dpr = window.devicePixelRatio || 1;
    const w = this.canvas.clientWidth, hgt = this.canvas.clientHeight;
    if (!w || !hgt) return;
    this.canvas.width = Math.round(w * dpr);
    this.canvas.height = Math.round(hgt * dpr);
    if (!this.fitted) this.fit();
    this.schedule();
  }

  /**
   * Where on the canvas (CSS px from its top-left) a tap lands inside the
   * crown of `row`: the crown cell nearest its top. Null if the crown has no
   * cell. One pass over the label grid; used by the browser tests.
   */
  screenOf(row: number): [number, number] | null {
    if (!this.data || row < 0) return null;
    const { labels, chm, trees } = this.data;
    const tx = (trees.columns.x[row]! - chm.originX) / chm.cellSize, ty = (chm.originY - trees.columns.y[row]!) / chm.cellSize;
    let best = -1, bestD = Infinity;
    for (let i = 0; i < labels.data.length; i++) {
      if (labels.data[i] !== row + 1) continue;
      const d = Math.hypot((i % labels.width) + 0.5 - tx, Math.floor(i / labels.width) + 0.5 - ty);
      if (d < bestD) { bestD = d; best = i; }
    }
    if (best < 0) return null;
    const [sx, sy] = this.transform.apply([(best % labels.width) + 0.5, Math.floor(best / labels.width) + 0.5]);
    return [sx, sy];
  }

  private tap(ev: MouseEvent): void {
    if (!this.data) return;
    const r = this.canvas.getBoundingClientRect();
    const [px, py] = this.transform.invert([ev.clientX - r.left, ev.clientY - r.top]);
    const { labels, chm } = this.data;
    const col = Math.floor(px), rowCell = Math.floor(py);
    let row = -1;
    if (col >= 0 && col < labels.width && rowCell >= 0 && rowCell < labels.height) row = labels.data[rowCell * labels.width + col]! - 1;
    this.onTap({ row, x: chm.originX + px * chm.cellSize, y: chm.originY - py * chm.cellSize });
  }

  private shade(chm: Grid<Float32Array>): HTMLCanvasElement {
    let max = 0;
    for (let i = 0; i < chm.data.length; i++) { const v = chm.data[i]!; if (v > max) max = v; }
    const top = scaleTopM(max);
    const c = document.createElement('canvas');
    c.width = chm.width;
    c.height = chm.height;
    const g = c.getContext('2d')!;
    const img = g.createImageData(chm.width, chm.height);
    const px = img.data;
    for (let i = 0; i < chm.data.length; i++) {
      const v = chm.data[i]!;
      if (Number.isNaN(v)) { px[i * 4 + 3] = 0; continue; }
      const [r, gg, b] = heightRgb(v, top);
      px[i * 4] = r; px[i * 4 + 1] = gg; px[i * 4 + 2] = b; px[i * 4 + 3] = 255;
    }
    g.putImageData(img, 0, 0);
    this.drawLegend(top);
    return c;
  }

  private drawLegend(top: number): void {
    this.legend.replaceChildren();
    const bar = document.createElement('canvas');
    bar.width = 240; bar.height = 16;
    bar.className = 'legend-bar';
    const g = bar.getContext('2d')!;
    for (let x = 0; x < bar.width; x++) { g.fillStyle = rgbCss(heightRgb((x / (bar.width - 1)) * top, top)); g.fillRect(x, 0, 1, bar.height); }
    const ticks = h('div', { class: 'legend-ticks' }, h('span', {}, '0'), h('span', {}, String(top / 2)), h('span', {}, `${top} m`));
    const keys = h('div', { class: 'legend-keys' },
      h('span', { class: 'key key-top' }, 'treetop'),
      h('span', { class: 'key key-crown' }, 'crown'),
      h('span', { class: 'key key-sel' }, 'selected'),
      h('span', { class: 'key key-edit' }, 'edited'),
      h('span', { class: 'key key-del' }, 'deleted'));
    this.legend.append(h('div', { class: 'legend-title' }, 'Canopy height above ground'), bar, ticks, keys);
  }

  private ringPath(o: CrownOutlines, t: number, chm: Grid<Float32Array>, into: Path2D): void {
    const cs = chm.cellSize;
    for (let r = o.treeRingStart[t]!; r < o.treeRingStart[t + 1]!; r++) {
      const a = o.ringStart[r]!, b = o.ringStart[r + 1]!;
      for (let v = a; v < b; v++) {
        const x = (o.coords[2 * v]! - chm.originX) / cs, y = (chm.originY - o.coords[2 * v + 1]!) / cs;
        if (v === a) into.moveTo(x, y); else into.lineTo(x, y);
      }
      into.closePath();
    }
  }

  private buildPaths(d: MapData): void {
    const all = new Path2D();
    this.treePaths = [];
    const n = Math.max(0, d.outlines.treeRingStart.length - 1);
    for (let t = 0; t < n; t++) {
      const p = new Path2D();
      this.ringPath(d.outlines, t, d.chm, p);
      this.treePaths.push(p);
      all.addPath(p);
    }
    this.crownPath = all;
  }

  private schedule(): void {
    if (this.frame) return;
    this.frame = requestAnimationFrame(() => { this.frame = 0; this.draw(); });
  }

  private draw(): void {
    const g = this.ctx;
    const dpr = window.devicePixelRatio || 1;
    g.setTransform(1, 0, 0, 1, 0, 0);
    g.fillStyle = '#e4e2da';
    g.fillRect(0, 0, this.canvas.width, this.canvas.height);
    if (!this.data || !this.image) return;
    const { k, x, y } = this.transform;
    g.setTransform(dpr * k, 0, 0, dpr * k, dpr * x, dpr * y);
    g.imageSmoothingEnabled = false;
    g.drawImage(this.image, 0, 0);
    const px = 1 / k; // one screen pixel in cell units
    if (this.crownPath) {
      g.lineWidth = 1.2 * px;
      g.strokeStyle = MARK.outline;
      g.stroke(this.crownPath);
    }
    const { trees, chm, marks } = this.data;
    const cs = chm.cellSize;
    const rTop = Math.max(2.5, Math.min(6, k * 0.4)) * px;
    for (let i = 0; i < trees.count; i++) {
      const tx = (trees.columns.x[i]! - chm.originX) / cs, ty = (chm.originY - trees.columns.y[i]!) / cs;
      const m = marks.get(i);
      if (m === 'deleted') {
        g.strokeStyle = MARK.deleted; g.lineWidth = 2 * px;
        g.beginPath(); g.moveTo(tx - rTop, ty - rTop); g.lineTo(tx + rTop, ty + rTop); g.moveTo(tx + rTop, ty - rTop); g.lineTo(tx - rTop, ty + rTop); g.stroke();
        continue;
      }
      g.beginPath();
      if (m === 'edited') { // a diamond, so edited trees differ by shape as well as colour
        g.moveTo(tx, ty - rTop * 1.4); g.lineTo(tx + rTop * 1.4, ty); g.lineTo(tx, ty + rTop * 1.4); g.lineTo(tx - rTop * 1.4, ty); g.closePath();
        g.fillStyle = MARK.edited;
      } else {
        g.arc(tx, ty, rTop, 0, Math.PI * 2);
        g.fillStyle = MARK.top;
      }
      g.fill();
      g.lineWidth = 1 * px; g.strokeStyle = MARK.topRing; g.stroke();
    }
    for (const [row, colour, width] of [[this.partner, MARK.merge, 3], [this.selected, MARK.selected, 4]] as const) {
      const p = row >= 0 ? this.treePaths[row] : undefined;
      if (!p) continue;
      g.lineWidth = (width + 2) * px; g.strokeStyle = '#000000'; g.stroke(p);
      g.lineWidth = width * px; g.strokeStyle = colour; g.stroke(p);
    }
    if (this.areaRings) {
      const p = new Path2D();
      for (const ring of this.areaRings) {
        ring.forEach((v, i) => {
          const ax = (v[0]! - chm.originX) / cs, ay = (chm.originY - v[1]!) / cs;
          if (i === 0) p.moveTo(ax, ay); else p.lineTo(ax, ay);
        });
        p.closePath();
      }
      const veil = new Path2D();
      veil.rect(-1, -1, chm.width + 2, chm.height + 2);
      veil.addPath(p);
      g.fillStyle = MARK.outsideArea; g.fill(veil, 'evenodd');
      g.setLineDash([6 * px, 4 * px]);
      g.lineWidth = 3 * px; g.strokeStyle = MARK.areaEdge; g.stroke(p);
      g.setLineDash([]);
    }
    const d = this.rectDraw;
    if (d?.from && d.to) {
      const x0 = Math.min(d.from[0], d.to[0]), y0 = Math.min(d.from[1], d.to[1]);
      const w = Math.abs(d.from[0] - d.to[0]), hh = Math.abs(d.from[1] - d.to[1]);
      g.fillStyle = MARK.areaFill; g.fillRect(x0, y0, w, hh);
      g.setLineDash([6 * px, 4 * px]);
      g.lineWidth = 4 * px; g.strokeStyle = '#000000'; g.strokeRect(x0, y0, w, hh);
      g.lineWidth = 2 * px; g.strokeStyle = MARK.area; g.strokeRect(x0, y0, w, hh);
      g.setLineDash([]);
    }
  }
}
