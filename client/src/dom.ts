/** Tiny DOM helpers: elements are built with the DOM API only (no innerHTML, no inline styles). */

type Child = Node | string | null | undefined | false;
type Attrs = Record<string, string | number | boolean | null | undefined>;

function applyAttrs(el: Element, attrs: Attrs): void {
  for (const [k, v] of Object.entries(attrs)) {
    if (v === null || v === undefined || v === false) continue;
    el.setAttribute(k, v === true ? '' : String(v));
  }
}

function append(el: Element, children: Child[]): void {
  for (const c of children) {
    if (c === null || c === undefined || c === false) continue;
    el.append(typeof c === 'string' ? document.createTextNode(c) : c);
  }
}

export function h<K extends keyof HTMLElementTagNameMap>(tag: K, attrs: Attrs = {}, ...children: Child[]): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  applyAttrs(el, attrs);
  append(el, children);
  return el;
}

const svgNs = 'http://www.w3.org/2000/svg';

export function svg<K extends keyof SVGElementTagNameMap>(tag: K, attrs: Attrs = {}, ...children: Child[]): SVGElementTagNameMap[K] {
  const el = document.createElementNS(svgNs, tag);
  applyAttrs(el, attrs);
  append(el, children);
  return el;
}

export function byId<T extends HTMLElement = HTMLElement>(id: string): T {
  const el = document.getElementById(id);
  if (!el) throw new Error(`page element #${id} is missing`);
  return el as T;
}

/** Id for a field from its JSON path: "doses[0].amount" → "f-doses-0-amount". */
export function fieldId(path: string): string {
  return `f-${path.replace(/[^A-Za-z0-9]+/g, '-').replace(/-$/, '')}`;
}

/** Finds the element carrying a JSON path (an input, select or textarea). */
export function findByPath(root: ParentNode, path: string): HTMLElement | null {
  return root.querySelector<HTMLElement>(`[data-path="${CSS.escape(path)}"]`);
}

/** Key that identifies a focusable control across re-renders. */
export function focusKey(el: Element | null): string | null {
  if (!(el instanceof HTMLElement)) return null;
  return el.dataset.path !== undefined ? `path:${el.dataset.path}` : el.dataset.focusKey !== undefined ? `key:${el.dataset.focusKey}` : null;
}

export function findByFocusKey(root: ParentNode, key: string): HTMLElement | null {
  const [kind, value] = [key.slice(0, key.indexOf(':')), key.slice(key.indexOf(':') + 1)];
  const attr = kind === 'path' ? 'data-path' : 'data-focus-key';
  return root.querySelector<HTMLElement>(`[${attr}="${CSS.escape(value)}"]`);
}

/** Starts a download of text as a file (a blob URL; nothing inline). */
export function download(filename: string, text: string, type: string): void {
  const url = URL.createObjectURL(new Blob([text], { type }));
  const a = h('a', { href: url, download: filename, class: 'visually-hidden' });
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(url), 1000);
}

/** A file name from a title: "Brennock 400 mg…" → "brennock-400-mg". */
export function slug(text: string | undefined, fallback: string): string {
  const s = (text ?? '')
    .toLowerCase()
    .normalize('NFKD')
    .replace(/[^a-z0-9]+/g, '-')
    .replace(/^-+|-+$/g, '')
    .slice(0, 60);
  return s || fallback;
}
