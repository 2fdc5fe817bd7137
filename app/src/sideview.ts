import { max as d3max, axisBottom, axisLeft, scaleLinear, select } from 'd3';
import type { TreePoints } from '../../lib/worker/protocol.js';
import { h } from './dom.js';
import { CLASS_KEYS, RETURN_KEYS } from './palette.js';

/**
 * Side view of one tree's own points: horizontal distance from the treetop
 * (m) against height above ground (m), coloured by return number or by
 * class. The key of each point is computed once into a small index array, so
 * switching the colouring repaints without touching the points again.
 */

export type SideColouring = 'return' | 'class';

const W = 360, H = 260, M = { top: 10, right: 12, bottom: 38, left: 48 };
const NS = 'http://www.w3.org/2000/svg';

/** Index into `keys` for each point (the first key whose test passes). */
export function keyIndex(values: Uint8Array, keys: { test: (v: number) => boolean }[]): Uint8Array {
  const out = new Uint8Array(values.length);
  for (let i = 0; i < values.length; i++) {
    let k = 0;
    while (k < keys.length - 1 && !keys[k]!.test(values[i]!)) k++;
    out[i] = k;
  }
  return out;
}

/** `maxPoints` is the cap the request set: a crown with exactly that many points was probably thinned to an even sample. */
export function sideView(pts: TreePoints, initial: SideColouring, hasReturns: boolean, maxPoints = Infinity): HTMLElement {
  const wrap = h('figure', { class: 'chart side-view' });
  const cap = h('figcaption', {}, `Side view of this tree\u2019s points (${pts.count.toLocaleString()} shown${pts.count >= maxPoints ? ', an even sample of a larger crown' : ''})`);
  const svg = document.createElementNS(NS, 'svg');
  svg.setAttribute('viewBox', `0 0 ${W} ${H}`);
  svg.setAttribute('role', 'img');
  svg.setAttribute('aria-label', 'Points of this tree: distance from the top against height above ground');
  const legend = h('ul', { class: 'legend-keys side-legend', 'aria-label': 'Colour key' });
  let mode: SideColouring = hasReturns ? initial : 'class';
  const byReturn = keyIndex(pts.returnNumber, RETURN_KEYS);
  const byClass = keyIndex(pts.classification, CLASS_KEYS);

  const n = pts.count;
  const x = scaleLinear().domain([0, Math.max(1, d3max(pts.distanceM) ?? 1)]).nice().range([M.left, W - M.right]);
  const y = scaleLinear().domain([Math.min(0, lowest(pts.heightM)), Math.max(1, d3max(pts.heightM) ?? 1)]).nice().range([H - M.bottom, M.top]);
  const s = select(svg);
  const dots = s.append('g').attr('class', 'side-points');
  const circles: SVGCircleElement[] = new Array(n);
  for (let i = 0; i < n; i++) {
    const c = document.createElementNS(NS, 'circle');
    c.setAttribute('cx', x(pts.distanceM[i]!).toFixed(1));
    c.setAttribute('cy', y(pts.heightM[i]!).toFixed(1));
    c.setAttribute('r', '1.6');
    circles[i] = c;
  }
  dots.node()!.append(...circles);
  s.append('g').attr('transform', `translate(0, ${H - M.bottom})`).call(axisBottom(x).ticks(5));
  s.append('g').attr('transform', `translate(${M.left}, 0)`).call(axisLeft(y).ticks(5));
  s.append('text').attr('x', M.left + (W - M.left - M.right) / 2).attr('y', H - 4).attr('text-anchor', 'middle').attr('class', 'axis-label').text('distance from the treetop (m)');
  s.append('text').attr('transform', `translate(12, ${M.top + (H - M.top - M.bottom) / 2}) rotate(-90)`).attr('text-anchor', 'middle').attr('class', 'axis-label').text('height above ground (m)');

  const paint = () => {
    const keys = mode === 'return' ? RETURN_KEYS : CLASS_KEYS;
    const idx = mode === 'return' ? byReturn : byClass;
    const counts = new Uint32Array(keys.length);
    for (let i = 0; i < n; i++) { counts[idx[i]!]!++; circles[i]!.setAttribute('fill', keys[idx[i]!]!.colour); }
    legend.replaceChildren(...keys.map((k, i) => counts[i] ? h('li', { class: 'side-key' }, swatch(k.colour), `${k.label}: ${counts[i]!.toLocaleString()}`) : null).filter((e): e is HTMLLIElement => e !== null));
    byRet.setAttribute('aria-pressed', String(mode === 'return'));
    byCls.setAttribute('aria-pressed', String(mode === 'class'));
    wrap.dataset['colouring'] = mode;
  };
  const byRet = h('button', { type: 'button', class: 'btn seg', 'data-colouring': 'return', disabled: !hasReturns, title: hasReturns ? undefined : 'This survey has no return numbers' }, 'Colour by return');
  const byCls = h('button', { type: 'button', class: 'btn seg', 'data-colouring': 'class' }, 'Colour by class');
  byRet.addEventListener('click', () => { mode = 'return'; paint(); });
  byCls.addEventListener('click', () => { mode = 'class'; paint(); });
  paint();
  wrap.append(cap, h('div', { class: 'row wrap seg-row', role: 'group', 'aria-label': 'Colouring of the points' }, byRet, byCls), svg, legend);
  return wrap;
}

/** Lowest value (0 for none): a loop, not Math.min(...a), which overflows the stack on large arrays. */
function lowest(a: Float32Array): number {
  let lo = 0;
  for (let i = 0; i < a.length; i++) if (a[i]! < lo) lo = a[i]!;
  return lo;
}

function swatch(colour: string): SVGSVGElement {
  const s = document.createElementNS(NS, 'svg');
  s.setAttribute('viewBox', '0 0 12 12');
  s.setAttribute('class', 'swatch');
  s.setAttribute('aria-hidden', 'true');
  const c = document.createElementNS(NS, 'circle');
  c.setAttribute('cx', '6'); c.setAttribute('cy', '6'); c.setAttribute('r', '5');
  c.setAttribute('fill', colour); c.setAttribute('stroke', '#111'); c.setAttribute('stroke-width', '0.8');
  s.append(c);
  return s;
}
