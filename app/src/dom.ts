/**
 * Tiny element builder. Text always goes in as text nodes (textContent), so
 * a file name or a note such as `<img onerror=...>` shows as characters and
 * never becomes markup. No inline style attributes (the CSP forbids them):
 * layout comes from classes in styles.css.
 */
export type Child = Node | string | number | null | undefined | false;

export function h<K extends keyof HTMLElementTagNameMap>(tag: K, props: Record<string, string | boolean | number | undefined> = {}, ...children: Child[]): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  for (const [k, v] of Object.entries(props)) {
    if (v === undefined || v === false) continue;
    if (k === 'class') el.className = String(v);
    else if (k === 'text') el.textContent = String(v);
    else if (k === 'style' || k.startsWith('on')) throw new Error(`h(): "${k}" is not allowed; use classes and addEventListener`);
    else el.setAttribute(k, v === true ? '' : String(v));
  }
  append(el, children);
  return el;
}

export function append(el: Element, children: Child[]): void {
  for (const c of children) {
    if (c === null || c === undefined || c === false) continue;
    el.append(typeof c === 'string' || typeof c === 'number' ? document.createTextNode(String(c)) : c);
  }
}

export function clear(el: Element): void {
  while (el.firstChild) el.firstChild.remove();
}

export function button(label: string, onClick: (ev: MouseEvent) => void, cls = 'btn', attrs: Record<string, string | boolean | undefined> = {}): HTMLButtonElement {
  const b = h('button', { type: 'button', class: cls, ...attrs }, label);
  b.addEventListener('click', onClick);
  return b;
}

/** Formats a number for display; NaN shows as an en dash (metric absent for this survey). */
export function fmt(v: number, decimals = 1, grouping = true): string {
  if (!Number.isFinite(v)) return '\u2013';
  return v.toLocaleString(undefined, { minimumFractionDigits: decimals, maximumFractionDigits: decimals, useGrouping: grouping });
}

export function bytes(n: number): string {
  if (!Number.isFinite(n)) return '\u2013';
  const u = ['B', 'KB', 'MB', 'GB', 'TB'];
  let i = 0;
  while (n >= 1024 && i < u.length - 1) { n /= 1024; i++; }
  return `${n.toFixed(i === 0 ? 0 : 1)} ${u[i]}`;
}

/** Replaces the children of `el`, skipping empty slots. */
export function put(el: Element, ...children: Child[]): void {
  clear(el);
  append(el, children);
}
