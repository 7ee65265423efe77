/**
 * Rendering a bench sheet: HTML for print (A4 or Letter, `@media print`, table
 * headers repeated on every page, check boxes, blank fields to fill in) and
 * Markdown. Both read only `sheet.sections` (sections.ts), so nothing one shows
 * is missing from the other; JSON is the model itself (service.ts). All text is
 * escaped: HTML entities for HTML, and for Markdown every line ending and every
 * character with meaning in Markdown tables or inline syntax.
 */
import { formatNumber, type Block, type Section } from './sections.js';

export { formatNumber };

/** What a concentration without hazard data on the shelf says: not classified, never "no hazard" (the wording of hazards.ts). */
export { NO_HAZARD_DATA as NOT_CLASSIFIED } from './hazards.js';

/** Escape for HTML text and attribute values. */
export function escapeHtml(x: unknown): string {
  return String(x).replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/** Every line ending a text may carry: CRLF, CR, LF, NEL, VT, FF, LINE and PARAGRAPH SEPARATOR. */
// eslint-disable-next-line no-control-regex -- VT and FF break lines in some readers: they go too
export const LINE_BREAKS = /\r\n|[\r\n\u0085\u000b\u000c\u2028\u2029]/g;

/**
 * Escape for Markdown (CommonMark and GitHub tables), for one line of text inside a table cell, a list item,
 * a heading or a paragraph: every line ending becomes a space (a lone CR must not end a table row); &, < and >
 * become entities (no raw HTML, no autolinks); every other character with inline or table meaning
 * (\ ` * _ [ ] | ~ #) gets a backslash, and leading blanks go (four would open a code block). A text that
 * starts a line goes through escapeMarkdownLine, which also escapes a list or heading marker at its start.
 */
export function escapeMarkdown(x: unknown): string {
  return String(x)
    .replace(LINE_BREAKS, ' ')
    .replace(/[&<>]/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;' })[c]!)
    .replace(/([\\`*_[\]|~#])/g, '\\$1')
    .replace(/^\s+/, '');
}

/** escapeMarkdown for a text that starts a line (a paragraph, a list item): a leading -, +, = or "1." / "1)" is escaped too. */
export function escapeMarkdownLine(x: unknown): string {
  return escapeMarkdown(x)
    .replace(/^([-+=])/, '\\$1')
    .replace(/^(\d+)([.)])/, '$1\\$2');
}

const e = escapeHtml;
const box = '<span class="box" aria-hidden="true">☐</span>';

function htmlBlock(b: Block): string {
  switch (b.kind) {
    case 'heading':
      return `<h3>${e(b.text)}</h3>`;
    case 'paragraph':
      return `<p${b.muted ? ' class="muted"' : ''}>${e(b.text)}</p>`;
    case 'list': {
      const tag = b.ordered ? 'ol' : 'ul';
      return `<${tag}>${b.items.map((i) => `<li>${e(i)}</li>`).join('')}</${tag}>`;
    }
    case 'keyValue':
      return `<table class="kv"><tbody>${b.rows.map((r) => `<tr><th>${e(r.key)}</th><td${r.value === null ? ' class="fill"' : ''}>${r.value === null ? '' : e(r.value)}</td></tr>`).join('')}</tbody></table>`;
    case 'table': {
      const cls = (c: (typeof b.columns)[number]) => [c.numeric ? 'num' : '', c.check ? 'chk' : '', c.blank ? 'fill' : ''].filter(Boolean).join(' ');
      const attr = (c: (typeof b.columns)[number]) => (cls(c) ? ` class="${cls(c)}"` : '');
      const head = `<thead><tr>${b.columns.map((c) => `<th${attr(c)}>${e(c.label)}</th>`).join('')}</tr></thead>`;
      const body = b.rows
        .map((r) => `<tr${r.code !== undefined ? ` data-tube="${e(r.code)}"` : ''}>${r.cells.map((v, i) => `<td${attr(b.columns[i]!)}>${v === null ? (b.columns[i]!.check ? box : '') : e(v)}</td>`).join('')}</tr>`)
        .join('');
      return `<table>${b.caption !== undefined ? `<caption>${e(b.caption)}</caption>` : ''}${head}<tbody>${body}</tbody></table>`;
    }
    case 'caution':
      return `<div class="caution" role="note"><strong>${e(b.title)}</strong> <span>${e(b.text)}</span></div>`;
  }
}

/** The sheet as one HTML page for print; `data-tube` on each tube's row, `sec-<id>` on each section (print tests select by them). */
export function renderHtml(sh: { title: string; sections: Section[] }, paper: 'A4' | 'Letter' = 'A4'): string {
  const sections = sh.sections
    .map((s, i) => `<section id="sec-${e(s.id)}" class="sec sec-${e(s.id)}">${i === 0 ? `<h1>${e(s.title)}</h1>` : `<h2>${e(s.title)}</h2>`}\n${s.blocks.map(htmlBlock).join('\n')}\n</section>`)
    .join('\n');
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>${e(sh.title)}</title>
<style>
  @page { size: ${paper === 'A4' ? 'A4' : 'letter'}; margin: 12mm 10mm; }
  body { font: 10pt/1.3 system-ui, sans-serif; color: #111; max-width: 190mm; margin: 0 auto; padding: 8mm; }
  h1 { font-size: 15pt; margin: 0 0 2mm; } h2 { font-size: 12pt; border-bottom: 1.5px solid #2f6f5e; margin: 5mm 0 2mm; } h3 { font-size: 10.5pt; margin: 3mm 0 1mm; }
  table { border-collapse: collapse; width: 100%; margin: 1.5mm 0 3mm; }
  th, td { border: 0.6px solid #999; padding: 0.9mm 1.4mm; text-align: left; vertical-align: top; }
  th { background: #eef2ee; } td.num, th.num { text-align: right; white-space: nowrap; } .chk { width: 8mm; text-align: center; }
  td.fill { min-width: 14mm; height: 6mm; } table.kv th { width: 30%; }
  caption { text-align: left; font-weight: 600; padding: 1mm 0; }
  .box { font-size: 11pt; } .muted { color: #555; font-size: 9pt; }
  .caution { border: 2px solid #b33; background: #fff4f2; padding: 1.5mm 3mm; margin: 2mm 0; page-break-inside: avoid; }
  .caution strong { text-transform: uppercase; color: #8b1a1a; }
  .sec-hazards h3 { border-top: 1px solid #b33; padding-top: 1mm; }
  @media print {
    body { padding: 0; max-width: none; }
    thead { display: table-header-group; } tr { page-break-inside: avoid; }
    h2, h3, caption { page-break-after: avoid; } a { color: inherit; text-decoration: none; }
  }
</style></head><body>
${sections}
</body></html>
`;
}

function mdBlock(b: Block): string {
  const m = escapeMarkdown;
  switch (b.kind) {
    case 'heading':
      return `### ${m(b.text)}`;
    case 'paragraph':
      return escapeMarkdownLine(b.text);
    case 'list':
      return b.items.map((i, k) => `${b.ordered ? `${k + 1}.` : '-'} ${escapeMarkdownLine(i)}`).join('\n');
    case 'keyValue':
      return b.rows.map((r) => `- **${m(r.key)}**: ${r.value === null ? '______________________' : m(r.value)}`).join('\n');
    case 'table': {
      const row = (cells: string[]) => `| ${cells.join(' | ')} |`;
      const lines = [
        row(b.columns.map((c) => m(c.label))),
        row(b.columns.map((c) => (c.numeric ? '---:' : '---'))),
        ...b.rows.map((r) => row(r.cells.map((v, i) => (v === null ? (b.columns[i]!.check ? '[ ]' : ' ') : m(v))))),
      ];
      return [...(b.caption !== undefined ? [`**${m(b.caption)}**`, ''] : []), ...lines].join('\n');
    }
    case 'caution':
      return `> **⚠ ${m(b.title)}** ${m(b.text)}`;
  }
}

/** The sheet as Markdown: `#` for the first section, `##` for the others, `###` for their sub-headings. */
export function renderMarkdown(sh: { sections: Section[] }): string {
  return (
    sh.sections
      .map((s, i) => [`${i === 0 ? '#' : '##'} ${escapeMarkdown(s.title)}`, ...s.blocks.map(mdBlock)].join('\n\n'))
      .join('\n\n') + '\n'
  );
}
