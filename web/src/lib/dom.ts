/**
 * A small hyperscript helper: `h('button', { type: 'button', onclick: f }, 'Run')`. Text children are
 * text nodes (never parsed as HTML), so a value from the shelf can never become markup.
 */
export type Child = Node | string | number | null | undefined | false | Child[];
type Handler<E extends Event = Event> = (ev: E) => void;
export type Attrs = Record<string, string | number | boolean | null | undefined | Handler<never>> & {
  class?: string;
  dataset?: never;
};

function append(el: Node, c: Child): void {
  if (c === null || c === undefined || c === false) return;
  if (Array.isArray(c)) for (const x of c) append(el, x);
  else el.appendChild(typeof c === 'string' || typeof c === 'number' ? document.createTextNode(String(c)) : c);
}

export function h<K extends keyof HTMLElementTagNameMap>(tag: K, attrs?: Attrs | null, ...children: Child[]): HTMLElementTagNameMap[K] {
  const el = document.createElement(tag);
  for (const [k, v] of Object.entries(attrs ?? {})) {
    if (v === null || v === undefined || v === false) continue;
    if (k.startsWith('on') && typeof v === 'function') el.addEventListener(k.slice(2), v as EventListener);
    else if (k === 'class') el.className = String(v);
    else if (k === 'value' && 'value' in el) (el as HTMLInputElement).value = String(v);
    else if (k === 'checked' && 'checked' in el) (el as HTMLInputElement).checked = Boolean(v);
    else el.setAttribute(k, v === true ? '' : String(v));
  }
  append(el, children);
  return el;
}

/** Replace an element's children. */
export function put(el: Element, ...children: Child[]): void {
  el.replaceChildren();
  append(el, children);
}

/** The element with this id, or an error naming it (a page's own markup is missing something). */
export function byId<T extends HTMLElement = HTMLElement>(id: string): T {
  const el = document.getElementById(id);
  if (!el) throw new Error(`the page has no #${id}`);
  return el as T;
}

/** A unique id for label/for pairs. */
let counter = 0;
export const uid = (prefix = 'f') => `${prefix}-${++counter}`;

/** A labelled field: `<label for=…>text</label>` and the control, wrapped in a div.field. */
export function field(label: string, control: HTMLElement, hint?: Child): HTMLDivElement {
  if (!control.id) control.id = uid();
  return h('div', { class: 'field' }, h('label', { for: control.id }, label), control, hint ? h('div', { class: 'hint' }, hint) : null);
}

/** A table from a header and rows of children. */
export function table(headers: Child[], rows: Child[][], attrs: Attrs = {}): HTMLTableElement {
  return h('table', attrs, h('thead', null, h('tr', null, headers.map((x) => h('th', { scope: 'col' }, x)))), h('tbody', null, rows.map((r) => h('tr', null, r.map((c) => h('td', null, c))))));
}

/** Wait `ms` after the last call before running f (typing in a field). */
export function debounce<A extends unknown[]>(f: (...a: A) => void, ms = 250): (...a: A) => void {
  let t: ReturnType<typeof setTimeout> | undefined;
  return (...a: A) => {
    if (t !== undefined) clearTimeout(t);
    t = setTimeout(() => f(...a), ms);
  };
}

/** Download text as a file (export). */
export function download(name: string, text: string, type = 'application/json'): void {
  const a = h('a', { href: URL.createObjectURL(new Blob([text], { type })), download: name });
  document.body.append(a);
  a.click();
  a.remove();
  setTimeout(() => URL.revokeObjectURL(a.href), 10_000);
}
