/** Reading a rendered sheet back as text, and the parity check of the section model against its renderings (docs/model.md §11). */
import { expect } from 'vitest';
import { escapeHtml, escapeMarkdown, LINE_BREAKS } from '../../server/protocol/render.js';
import { sectionTexts, type Block, type Section } from '../../server/protocol/sections.js';

/** Text as a reader sees it: one line, blanks collapsed. */
export const norm = (x: string) => x.replace(LINE_BREAKS, ' ').replace(/\s+/g, ' ').trim();

const ENTITIES: Record<string, string> = { '&lt;': '<', '&gt;': '>', '&quot;': '"', '&#39;': "'", '&amp;': '&' };
/** The text of an HTML page: tags dropped (each a space), the five entities decoded (ampersand last). */
export function htmlText(html: string): string {
  const body = html.slice(html.indexOf('<body>'));
  return norm(body.replace(/<[^>]*>/g, ' ').replace(/&(lt|gt|quot|#39);/g, (m) => ENTITIES[m]!).replace(/&amp;/g, '&'));
}
/** The text of a Markdown page: backslash escapes undone, entities decoded. */
export function markdownText(md: string): string {
  return norm(md.replace(/\\([\\`*_[\]|~#\-+=.)])/g, '$1').replace(/&(lt|gt);/g, (m) => ENTITIES[m]!).replace(/&amp;/g, '&'));
}

/** Every text of the model in both renderings, and every table row as a row of each. */
export function expectParity(sections: Section[], html: string, md: string) {
  const h = htmlText(html);
  const m = markdownText(md);
  const texts = sectionTexts(sections);
  expect(texts.length).toBeGreaterThan(0);
  for (const t of texts) {
    const want = norm(t);
    if (!h.includes(want)) throw new Error(`HTML lacks: ${want}`);
    if (!m.includes(want)) throw new Error(`Markdown lacks: ${want}`);
  }
  const tables = sections.flatMap((s) => s.blocks).filter((b): b is Extract<Block, { kind: 'table' }> => b.kind === 'table');
  const mdLines = new Set(md.split('\n'));
  for (const tb of tables) {
    for (const r of tb.rows) {
      const line = `| ${r.cells.map((c, i) => (c === null ? (tb.columns[i]!.check ? '[ ]' : ' ') : escapeMarkdown(c))).join(' | ')} |`;
      if (!mdLines.has(line)) throw new Error(`Markdown lacks the row: ${line}`);
      const cells = r.cells.map((c, i) => `<td[^>]*>${c === null ? (tb.columns[i]!.check ? '<span class="box" aria-hidden="true">☐</span>' : '') : escapeHtml(c).replace(/[.*+?^${}()|[\]\\]/g, '\\$&')}</td>`);
      if (!new RegExp(`<tr[^>]*>${cells.join('')}</tr>`).test(html)) throw new Error(`HTML lacks the row: ${r.cells.join(' | ')}`);
    }
  }
  return texts.length;
}

