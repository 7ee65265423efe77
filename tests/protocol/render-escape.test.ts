/**
 * Markdown and HTML escaping of every text field a user or the shelf puts on a sheet (docs/model.md §11): species
 * and chemical names, the plan's name, the buffer, the operator, a stock's description, and the hazard data's
 * texts (source, handling, storage, disposal, incompatibilities, author, a band's statement and a precautionary
 * statement). Each carries every line
 * ending (CR, LF, CRLF, U+2028, U+2029), table pipes, backticks, emphasis, link and heading syntax and raw HTML.
 * The check: the sheet made with these texts has exactly the lines, headings and table rows of the same sheet made
 * with plain texts (a lone CR used to end a table row and open a heading), and every text is still all there.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { escapeMarkdown, escapeMarkdownLine } from '../../server/protocol/render.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { freshApp } from '../helpers/app.js';
import { planRequest, postPlan } from '../helpers/plans.js';
import { expectParity } from './render-helpers.js';

const EVIL = 'E\r# cr heading\n## lf heading\r\n| pipe | cell |\u2028### ls\u2029> quote `tick` *star* _under_ [link](http://x) <b>bold</b> <img src=x onerror=alert(1)> \\ ~~del~~ &amp; #tag';
const PLAIN = 'plain name of the same kind for comparison only, without anything special in it at all';

async function sheetWith(text: string, prefix: string) {
  const app = await freshApp({ demo: true });
  for (const [kind, id] of [['species', 'ptj-1um-b07'], ['species', 'ptj-1um-b09'], ['chemicals', 'h2o2']] as const) {
    const cur = (await app.inject({ method: 'GET', url: `/api/${kind}/${id}` })).json();
    const put = await app.inject({ method: 'PUT', url: `/api/${kind}/${id}`, payload: { baseRevision: cur.revision, record: { ...cur.typed, name: `${prefix}${id} ${text}` } } });
    expect(put.statusCode).toBe(200);
  }
  // the hazard data's own texts (source, notes, a band's statement text and a precautionary statement)
  const hz = (await app.inject({ method: 'GET', url: '/api/chemicals/h2o2/hazards' })).json().current;
  const bands = hz.body.bands.map((b: { text: string; precautionary: string[] }) => ({ ...b, text: `${b.text} ${text}`.slice(0, 500), precautionary: [...b.precautionary, `P000 ${text}`] }));
  const hazards = { ...hz.body, bands, source: text, handling: text, storage: text, disposal: text, incompatibilities: text };
  expect((await app.inject({ method: 'PUT', url: '/api/chemicals/h2o2/hazards', payload: { baseVersion: hz.version, hazards, author: text.slice(0, 100) } })).statusCode).toBe(200);
  const plan = (await postPlan(app, { ...planRequest, name: `${prefix}${text}`, uncertainty: undefined })).json();
  const options = {
    buffer: `- ${text.slice(0, 90)}`,
    operator: `1. ${text}`,
    stocks: { 'ptj-1um-b07': { massConcentration: '10 mg/mL', description: `+ ${text}` } },
  };
  const sheet = app.sheets.build(plan.id, options, '2026-12-02T08:00:00.000Z');
  const out = { sheet, md: app.sheets.render(sheet, 'md'), html: app.sheets.render(sheet, 'html'), json: app.sheets.render(sheet, 'json') };
  await app.close();
  return out;
}

let evil: Awaited<ReturnType<typeof sheetWith>>;
let plain: Awaited<ReturnType<typeof sheetWith>>;
beforeAll(async () => {
  evil = await sheetWith(EVIL, '');
  plain = await sheetWith(PLAIN, '');
}, 60_000);

/** The Markdown's structure: per line, its kind (heading level, table row with its count of unescaped pipes, list item, quote, blank, text). */
function shape(md: string): string[] {
  return md.split('\n').map((line) => {
    const h = /^(#{1,6}) /.exec(line);
    if (h) return `h${h[1]!.length}`;
    if (line.startsWith('|')) {
      let pipes = 0;
      for (let i = 0; i < line.length; i++) {
        if (line[i] === '\\') i++;
        else if (line[i] === '|') pipes++;
      }
      return `row${pipes}`;
    }
    if (/^(- |\d+\. )/.test(line)) return 'item';
    if (line.startsWith('> ')) return 'quote';
    return line === '' ? 'blank' : 'text';
  });
}

describe('escaping every text field', () => {
  it('the texts reach the sheet (species, chemical, plan name, buffer, operator, stock description)', () => {
    const s = evil.sheet as Sheet;
    expect(s.candidate.name).toContain('\r# cr heading');
    expect(s.options.buffer.startsWith('- E\r#')).toBe(true);
    expect(s.options.operator!.startsWith('1. E\r#')).toBe(true);
    expect(s.stocks.find((x) => x.id === 'ptj-1um-b07')!.described.startsWith('+ E\r')).toBe(true);
    expect(s.hazards.map((h) => h.name)).toContain(`h2o2 ${EVIL}`);
    expect(s.title).toContain(EVIL);
    const h = s.hazards.find((x) => x.chemical === 'h2o2')!;
    expect([h.source, h.handling, h.storage, h.disposal, h.incompatibilities]).toEqual([EVIL, EVIL, EVIL, EVIL, EVIL]);
    expect(h.verify).toContain('E\r# cr heading');
    expect(h.asHandled[0]!.classification.precautionary).toContain(`P000 ${EVIL}`);
  });

  it('Markdown: the same lines, headings, table rows and pipes per row as the plain sheet; no line is broken out of', () => {
    const a = shape(evil.md);
    const b = shape(plain.md);
    expect(a.length).toBe(b.length);
    expect(a).toEqual(b);
    // none of the injected headings, quotes or raw HTML made it as such
    for (const bad of ['# cr heading', '## lf heading', '### ls', '<b>', '<img']) expect(evil.md.split('\n').some((l) => l.startsWith(bad) || l.includes(bad) && bad.startsWith('<'))).toBe(false);
    expect(evil.md).not.toMatch(/[\r\u2028\u2029]/);
    // and every text is still there, each table row as a row
    expectParity(evil.sheet.sections, evil.html, evil.md);
  });

  it('HTML: no raw tag from a text, every text escaped', () => {
    expect(evil.html).not.toContain('<b>bold');
    expect(evil.html).not.toContain('<img');
    expect(evil.html).toContain('&lt;img src=x onerror=alert(1)&gt;');
    expect(evil.html).toContain('&lt;b&gt;bold&lt;/b&gt;');
  });

  it('JSON keeps the texts as given', () => {
    expect(JSON.parse(evil.json).options.operator).toBe(`1. ${EVIL}`);
  });

  it('the escape functions, one character class at a time', () => {
    expect(escapeMarkdown('a\rb\nc\r\nd\u2028e\u2029f\u0085g')).toBe('a b c d e f g');
    expect(escapeMarkdown('| ` * _ [ ] ~ # \\')).toBe('\\| \\` \\* \\_ \\[ \\] \\~ \\# \\\\');
    expect(escapeMarkdown('<b>&amp;</b>')).toBe('&lt;b&gt;&amp;amp;&lt;/b&gt;');
    expect(escapeMarkdown('    four blanks would open a code block')).toBe('four blanks would open a code block');
    // at the start of a line (paragraph, list item) a list or heading marker is escaped; inside a cell it need not be
    expect(escapeMarkdownLine('- a')).toBe('\\- a');
    expect(escapeMarkdownLine('+ a')).toBe('\\+ a');
    expect(escapeMarkdownLine('= a')).toBe('\\= a');
    expect(escapeMarkdownLine('12. a')).toBe('12\\. a');
    expect(escapeMarkdownLine('3) a')).toBe('3\\) a');
    expect(escapeMarkdown('1.5 µL')).toBe('1.5 µL');
  });
});
