import { axisBottom, axisLeft, max as d3max, scaleBand, scaleLinear, select } from 'd3';

/**
 * Small d3 charts drawn as SVG with presentation attributes only (no style
 * attributes, which the CSP forbids). Each takes plain numbers and returns an
 * element; what the numbers mean is the caller's business.
 */

const W = 320, H = 200, M = { top: 10, right: 12, bottom: 36, left: 48 };
const BAR = '#2f6f8f';
const DOT = '#173f5f';

function frame(title: string): { svg: SVGSVGElement; wrap: HTMLElement } {
  const wrap = document.createElement('figure');
  wrap.className = 'chart';
  const cap = document.createElement('figcaption');
  cap.textContent = title;
  const svg = document.createElementNS('http://www.w3.org/2000/svg', 'svg');
  svg.setAttribute('viewBox', `0 0 ${W} ${H}`);
  svg.setAttribute('role', 'img');
  svg.setAttribute('aria-label', title);
  wrap.append(cap, svg);
  return { svg, wrap };
}

function axisLabels(svg: SVGSVGElement, x: string, y: string): void {
  const s = select(svg);
  s.append('text').attr('x', M.left + (W - M.left - M.right) / 2).attr('y', H - 4).attr('text-anchor', 'middle').attr('class', 'axis-label').text(x);
  s.append('text').attr('transform', `translate(12, ${M.top + (H - M.top - M.bottom) / 2}) rotate(-90)`).attr('text-anchor', 'middle').attr('class', 'axis-label').text(y);
}

/** Vertical bars over labelled categories (return numbers, height bins). */
export function columnChart(title: string, labels: string[], values: number[], xLabel: string, yLabel: string): HTMLElement {
  const { svg, wrap } = frame(title);
  const x = scaleBand<string>().domain(labels).range([M.left, W - M.right]).padding(0.15);
  const y = scaleLinear().domain([0, Math.max(1, d3max(values) ?? 1)]).nice().range([H - M.bottom, M.top]);
  const s = select(svg);
  s.append('g').selectAll('rect').data(values).join('rect')
    .attr('x', (_d, i) => x(labels[i]!)!).attr('width', x.bandwidth())
    .attr('y', (d) => y(d)).attr('height', (d) => y(0) - y(d)).attr('fill', BAR);
  const every = Math.ceil(labels.length / 10);
  s.append('g').attr('transform', `translate(0, ${H - M.bottom})`).call(axisBottom(x).tickValues(labels.filter((_l, i) => i % every === 0)));
  s.append('g').attr('transform', `translate(${M.left}, 0)`).call(axisLeft(y).ticks(4));
  axisLabels(svg, xLabel, yLabel);
  return wrap;
}

/** Horizontal bars from the ground up: returns per height layer. */
export function profileChart(title: string, layerM: number, counts: ArrayLike<number>, xLabel: string): HTMLElement {
  const { svg, wrap } = frame(title);
  let top = counts.length;
  while (top > 1 && !counts[top - 1]) top--;
  const vals = Array.from({ length: top }, (_v, i) => counts[i] ?? 0);
  const x = scaleLinear().domain([0, Math.max(1, d3max(vals) ?? 1)]).nice().range([M.left, W - M.right]);
  const y = scaleLinear().domain([0, top * layerM]).range([H - M.bottom, M.top]);
  const s = select(svg);
  s.append('g').selectAll('rect').data(vals).join('rect')
    .attr('x', M.left).attr('width', (d) => x(d) - M.left)
    .attr('y', (_d, i) => y((i + 1) * layerM)).attr('height', (_d, i) => Math.max(1, y(i * layerM) - y((i + 1) * layerM) - 1)).attr('fill', BAR);
  s.append('g').attr('transform', `translate(0, ${H - M.bottom})`).call(axisBottom(x).ticks(4));
  s.append('g').attr('transform', `translate(${M.left}, 0)`).call(axisLeft(y).ticks(5));
  axisLabels(svg, xLabel, 'height above ground (m)');
  return wrap;
}

/** Dots: one per tree, with the selected one ringed. */
export function scatterChart(title: string, xs: ArrayLike<number>, ys: ArrayLike<number>, xLabel: string, yLabel: string, highlight = -1): HTMLElement {
  const { svg, wrap } = frame(title);
  const idx: number[] = [];
  for (let i = 0; i < xs.length; i++) if (Number.isFinite(xs[i]!) && Number.isFinite(ys[i]!)) idx.push(i);
  const x = scaleLinear().domain([0, Math.max(1, d3max(idx, (i) => xs[i]!) ?? 1)]).nice().range([M.left, W - M.right]);
  const y = scaleLinear().domain([0, Math.max(1, d3max(idx, (i) => ys[i]!) ?? 1)]).nice().range([H - M.bottom, M.top]);
  const s = select(svg);
  s.append('g').selectAll('circle').data(idx).join('circle')
    .attr('cx', (i) => x(xs[i]!)).attr('cy', (i) => y(ys[i]!)).attr('r', 2).attr('fill', DOT).attr('fill-opacity', 0.5);
  if (highlight >= 0 && Number.isFinite(xs[highlight]!) && Number.isFinite(ys[highlight]!)) {
    s.append('circle').attr('cx', x(xs[highlight]!)).attr('cy', y(ys[highlight]!)).attr('r', 6)
      .attr('fill', 'none').attr('stroke', '#000').attr('stroke-width', 2.5);
    s.append('circle').attr('cx', x(xs[highlight]!)).attr('cy', y(ys[highlight]!)).attr('r', 6)
      .attr('fill', 'none').attr('stroke', '#f2a900').attr('stroke-width', 1.5);
  }
  s.append('g').attr('transform', `translate(0, ${H - M.bottom})`).call(axisBottom(x).ticks(5));
  s.append('g').attr('transform', `translate(${M.left}, 0)`).call(axisLeft(y).ticks(5));
  axisLabels(svg, xLabel, yLabel);
  return wrap;
}
