/**
 * A bench sheet's sections (server/protocol/sections.ts, the `sections` of the JSON sheet) as the page shows
 * and prints them: the same order, texts and blanks as the service's own HTML rendering (server/protocol/render.ts),
 * built as DOM nodes (text is never parsed as HTML). `sec-<id>` on each section and `data-tube` on each tube's
 * row, as in the service's rendering.
 */
import type { Block, Section } from '../../../server/protocol/sections.js';
import { h } from '../lib/dom.js';

function block(b: Block): HTMLElement {
  switch (b.kind) {
    case 'heading':
      return h('h3', null, b.text);
    case 'paragraph':
      return h('p', b.muted ? { class: 'muted' } : null, b.text);
    case 'list':
      return h(b.ordered ? 'ol' : 'ul', null, b.items.map((i) => h('li', null, i)));
    case 'keyValue':
      return h('table', { class: 'kv' }, h('tbody', null, b.rows.map((r) => h('tr', null, h('th', { scope: 'row' }, r.key), h('td', r.value === null ? { class: 'fill' } : null, r.value ?? '')))));
    case 'table': {
      const cls = (c: (typeof b.columns)[number]) => [c.numeric ? 'num' : '', c.check ? 'chk' : '', c.blank ? 'fill' : ''].filter(Boolean).join(' ') || undefined;
      return h(
        'table',
        null,
        b.caption !== undefined ? h('caption', null, b.caption) : null,
        h('thead', null, h('tr', null, b.columns.map((c) => h('th', { scope: 'col', class: cls(c) }, c.label)))),
        h(
          'tbody',
          null,
          b.rows.map((r) =>
            h(
              'tr',
              r.code !== undefined ? { 'data-tube': r.code } : null,
              r.cells.map((v, i) => {
                const c = b.columns[i]!;
                return h('td', { class: cls(c) }, v === null ? (c.check ? h('span', { class: 'box', 'aria-hidden': 'true' }, '☐') : '') : v);
              }),
            ),
          ),
        ),
      );
    }
    case 'caution':
      return h('div', { class: 'caution', role: 'note' }, h('strong', null, b.title), ' ', h('span', null, b.text));
  }
}

/** The sections as an <article>: the first section's title is the h1, the others h2. */
export function renderSections(sections: readonly Section[], paper: 'A4' | 'Letter'): HTMLElement {
  return h(
    'article',
    { class: `sheet-doc paper-${paper.toLowerCase()}`, id: 'sheet-doc', 'aria-label': 'The bench sheet as it prints' },
    sections.map((s, i) => h('section', { id: `sec-${s.id}`, class: `sec sec-${s.id}` }, i === 0 ? h('h1', null, s.title) : h('h2', null, s.title), s.blocks.map(block))),
  );
}
