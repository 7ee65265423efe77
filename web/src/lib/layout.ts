/**
 * The frame every page shares: the header with the navigation (the current page marked for
 * screen readers too), a region for messages, and the page's <main>. Import it first in a page's
 * entry so the shared stylesheet is part of the page.
 */
import '../style.css';
import { describeError } from './api.js';
import { h, put, type Child } from './dom.js';

export type PageName = 'shelf' | 'calibrate' | 'planner' | 'plans' | 'none';

const NAV: { name: PageName; href: string; label: string }[] = [
  { name: 'shelf', href: '/', label: 'Shelf' },
  { name: 'calibrate', href: '/calibrate', label: 'Calibrate' },
  { name: 'planner', href: '/planner', label: 'Planner' },
];

export interface Page {
  main: HTMLElement;
  /** say something in the page's message region (polite live region) */
  say(text: Child, kind?: 'info' | 'ok' | 'error'): void;
  /** an error in words (the service's message and each problem) */
  fail(e: unknown): void;
  clear(): void;
}

export function mountPage(title: string, current: PageName): Page {
  document.title = `${title} — brink`;
  const messages = h('div', { id: 'messages', role: 'status', 'aria-live': 'polite' });
  const main = h('main', { id: 'main', tabindex: -1 });
  const header = h(
    'header',
    { class: 'top' },
    h('a', { class: 'skip', href: '#main' }, 'Skip to the page'),
    h('a', { class: 'brand', href: '/' }, h('img', { src: '/favicon.svg', alt: '', width: 22, height: 22 }), 'brink'),
    h(
      'nav',
      { 'aria-label': 'Pages' },
      NAV.map((n) => h('a', { href: n.href, ...(n.name === current ? { 'aria-current': 'page' } : {}) }, n.label)),
      h('a', { href: '/api/docs' }, 'API'),
    ),
  );
  document.body.replaceChildren(header, messages, main);
  const say = (text: Child, kind: 'info' | 'ok' | 'error' = 'info') => put(messages, h('p', { class: `msg ${kind}`, ...(kind === 'error' ? { role: 'alert' } : {}) }, text));
  return {
    main,
    say,
    fail: (e) => {
      const lines = describeError(e);
      put(messages, h('div', { class: 'msg error', role: 'alert' }, h('p', null, lines[0] ?? ''), lines.length > 1 ? h('ul', null, lines.slice(1).map((l) => h('li', null, l))) : null));
    },
    clear: () => put(messages),
  };
}

/** The numeric id at the end of the path (/plans/12 → 12), or null. */
export function pathId(pattern: RegExp): string | null {
  const m = pattern.exec(location.pathname);
  return m?.[1] ? decodeURIComponent(m[1]) : null;
}
