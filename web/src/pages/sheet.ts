/**
 * The Bench sheet page (/plans/:id/sheet?candidate=…): the sheet's options as a form, the sheet itself as it
 * prints (the JSON sheet's sections rendered on the page, web/src/pages/sheet-render.ts), the fixes a plan
 * that cannot be made as asked suggests as buttons that set the option and rebuild the sheet, a Print button
 * (the print stylesheet prints the sheet alone), and links to the Markdown, JSON and HTML forms with the same
 * options. The sheet is drawn on the page rather than framed: the service refuses to be framed
 * (frame-ancestors 'none'), and that protection stays on for every page.
 */
import { mountPage, pathId } from '../lib/layout.js';
import { api, ApiError, authHeaders, type Problem } from '../lib/api.js';
import { download, field, h, put } from '../lib/dom.js';
import { quantityField, type QuantityField } from '../lib/fields.js';
import type { Section } from '../../../server/protocol/sections.js';
import { renderSections } from './sheet-render.js';
import { optionsBody, optionsFromQuery, apiQuery, pageQuery, qs, splitList, type SheetOptions } from './sheet-options.js';
import './sheet.css';

interface Amount {
  value: number;
  unit: string;
}
interface HazardEntry {
  kind: 'species' | 'chemical';
  chemical: string;
  name: string;
  classified: boolean;
  asHandled: { where: string; classified: boolean; classification: { status: string; statements: { code: string }[]; signal: string | null; note?: string } }[];
}
interface Sheet {
  fits: true;
  title: string;
  plan: { id: number; name: string };
  candidate: { id: string; name: string };
  options: { sampleVolume: Amount; replicates: number; minVolume: Amount; overage: number; buffer: string; operator: string | null };
  stocks: { id: string; name: string; kind: 'species' | 'chemical'; concentration: Amount; described: string; source: 'shelf' | 'option' }[];
  tubes: { code: string; tubes: string[] }[];
  warnings: { code: string; message: string }[];
  hazards: HazardEntry[];
  safety: string[];
  sections: Section[];
}
interface FitOption {
  option: string;
  value: string;
  text: string;
}
interface NotFit {
  fits: false;
  title: string;
  code: string;
  reasons: string[];
  options: FitOption[];
  candidate: { id: string; name: string } | null;
  sections: Section[];
}
interface PlanRow {
  id: number;
  name: string;
  result: { candidates: { species: string; feasible: boolean; reason?: string; message?: string }[] };
}

const page = mountPage('Bench sheet', 'none');
const planId = pathId(/^\/plans\/(\d+)\/sheet\/?$/);
const PRECEDENCE = 'Local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence over this sheet.';

// ------------------------------------------------------------------ the form

const initial = optionsFromQuery(new URLSearchParams(location.search));
const initialPaper = new URLSearchParams(location.search).get('paper') === 'Letter' ? 'Letter' : 'A4';

const candidate = h('select', { name: 'candidate' }, h('option', { value: '' }, 'the top-ranked candidate that crosses'));
const sampleVolume = quantityField({ label: 'Sample volume (one tube)', quantity: 'volume', sign: 'positive', value: initial.sampleVolume, placeholder: '100 uL (default)', name: 'sampleVolume' });
const replicates = h('input', { type: 'number', name: 'replicates', min: 1, max: 24, step: 1, value: initial.replicates ?? '', placeholder: '3 (default)', inputmode: 'numeric' });
const minVolume = quantityField({ label: 'Smallest volume to pipette', quantity: 'volume', sign: 'positive', value: initial.minVolume, placeholder: '1 uL (default)', name: 'minVolume' });
const overage = h('input', { type: 'number', name: 'overage', min: 0, max: 100, step: 1, value: initial.overage !== undefined ? String(Math.round(initial.overage * 1000) / 10) : '', placeholder: '10 (default)' });
const doses = h('input', { type: 'text', name: 'doses', class: 'wide', value: initial.doses?.join(', ') ?? '', placeholder: 'the default series (factors of the median threshold)', autocomplete: 'off', spellcheck: 'false' });
const buffer = h('input', { type: 'text', name: 'buffer', value: initial.buffer ?? '', placeholder: 'buffer (default)' });
const operator = h('input', { type: 'text', name: 'operator', value: initial.operator ?? '', placeholder: 'left blank to fill in by hand' });
const tubeVolume = quantityField({ label: 'Tube each sample is made in', quantity: 'volume', sign: 'positive', value: initial.tubeVolume, placeholder: '1.5 mL (default)', name: 'tubeVolume' });
const chamberVolume = quantityField({ label: 'Imaging chamber volume', quantity: 'volume', sign: 'positive', value: initial.chamberVolume, placeholder: 'length² × depth of the plan', name: 'chamberVolume' });
const closedChamber = h('input', { type: 'checkbox', name: 'closedChamber', checked: initial.closedChamber === true });
const paper = h('select', { name: 'paper' }, h('option', { value: 'A4' }, 'A4'), h('option', { value: 'Letter' }, 'Letter'));
paper.value = initialPaper;

/** One field per stock the sheet pipettes: blank uses the shelf's stock. */
const stockFields = new Map<string, { kind: 'species' | 'chemical'; f: QuantityField }>();
const stocksBox = h('div', { id: 'stock-fields' });
function stockField(id: string, kind: 'species' | 'chemical', label: string, shelf?: string): QuantityField {
  const have = stockFields.get(id);
  if (have) {
    if (shelf) have.f.input.placeholder = shelf;
    return have.f;
  }
  const given = initial.stocks?.[id];
  const f = quantityField({
    label: `${label} stock`,
    quantity: kind === 'species' ? 'numberDensity' : 'concentration',
    sign: 'positive',
    value: kind === 'species' ? given?.density : given?.molarConcentration,
    placeholder: shelf ?? (kind === 'species' ? 'e.g. 5e9 1/mL' : 'e.g. 0.5 mol/L'),
    name: `stocks.${id}`,
  });
  f.input.dataset.stock = id;
  f.input.classList.add('wide');
  stockFields.set(id, { kind, f });
  stocksBox.append(f.el);
  return f;
}
for (const [id, s] of Object.entries(initial.stocks ?? {})) stockField(id, s.molarConcentration !== undefined ? 'chemical' : 'species', id);

const stocksGiven = Object.keys(initial.stocks ?? {}).length > 0;
const vesselsGiven = [initial.tubeVolume, initial.chamberVolume, initial.buffer, initial.operator, initial.closedChamber].some((x) => x !== undefined) || initialPaper !== 'A4';
const form = h(
  'form',
  { id: 'sheet-options', class: 'no-print', 'aria-label': 'Options of the sheet' },
  h('h2', null, 'Options'),
  field('Candidate (dopant)', candidate),
  sampleVolume.el,
  field('Replicate tubes per sample', replicates, '1 to 24'),
  minVolume.el,
  field('Master-mix overage (%)', overage),
  field('Dopant doses (comma-separated)', doses, 'e.g. 0, 1e8 1/mL, 2e8 1/mL; blank: the default series. Include 0 for the no-dopant control.'),
  h('details', { id: 'stocks-box', ...(stocksGiven ? { open: true } : {}) }, h('summary', null, 'Stocks'), h('p', { class: 'hint' }, 'Blank: the stock on the shelf (greyed). A species as particles per volume (1/mL), a chemical as a molar concentration (mol/L, mM).'), stocksBox),
  h(
    'details',
    { ...(vesselsGiven ? { open: true } : {}) },
    h('summary', null, 'Vessels, names and paper'),
    tubeVolume.el,
    chamberVolume.el,
    field('The imaging chamber will be closed', closedChamber, 'glued, clamped or greased: the sheet then cautions about gas'),
    field('Diluent', buffer),
    field('Operator', operator),
    field('Paper', paper),
  ),
  h('div', { class: 'actions' }, h('button', { type: 'submit', id: 'rebuild' }, 'Update the sheet'), h('button', { type: 'button', class: 'secondary', id: 'reset' }, 'Back to the defaults')),
);

const heading = h('h1', null, `Bench sheet of plan ${planId ?? '?'}`);
const sub = h('p', { class: 'muted', id: 'plan-line' });
const status = h('p', { class: 'sheet-status', id: 'sheet-status', role: 'status', 'aria-live': 'polite' });
const fixes = h('div', { id: 'fixes', class: 'no-print' });
const glance = h('aside', { id: 'glance', class: 'glance no-print', 'aria-label': 'Safety at a glance' });
const view = h('div', { id: 'sheet-view' });
const toolbar = h('div', { class: 'actions no-print', id: 'sheet-toolbar' }, h('button', { type: 'button', id: 'print' }, 'Print the sheet…'), h('span', { id: 'links', class: 'links' }));
page.main.append(heading, sub, h('div', { class: 'sheet-layout' }, form, h('div', { class: 'sheet-right' }, toolbar, status, fixes, glance, view)));

// ------------------------------------------------------------------ reading the form

function currentOptions(): SheetOptions {
  const o: SheetOptions = {};
  if (candidate.value) o.candidate = candidate.value;
  const text = (f: QuantityField) => {
    const v = f.value();
    return typeof v === 'string' ? v : undefined;
  };
  const sv = text(sampleVolume);
  if (sv) o.sampleVolume = sv;
  if (replicates.value.trim() !== '') o.replicates = Number(replicates.value);
  const mv = text(minVolume);
  if (mv) o.minVolume = mv;
  if (overage.value.trim() !== '') o.overage = Number(overage.value) / 100;
  if (doses.value.trim() !== '') o.doses = splitList(doses.value);
  if (buffer.value.trim() !== '') o.buffer = buffer.value.trim();
  if (operator.value.trim() !== '') o.operator = operator.value.trim();
  const tv = text(tubeVolume);
  if (tv) o.tubeVolume = tv;
  const cv = text(chamberVolume);
  if (cv) o.chamberVolume = cv;
  if (closedChamber.checked) o.closedChamber = true;
  const stocks: NonNullable<SheetOptions['stocks']> = {};
  for (const [id, { kind, f }] of stockFields) {
    const v = text(f);
    if (v) stocks[id] = kind === 'species' ? { density: v } : { molarConcentration: v };
  }
  if (Object.keys(stocks).length > 0) o.stocks = stocks;
  return o;
}

/** The control for an option path of a problem (sampleVolume, stocks.h2o2.molarConcentration, doses.2 …). */
function controlFor(path: string): HTMLElement | null {
  const head = path.split(/[.[]/)[0] ?? '';
  if (head === 'stocks') return stockFields.get(path.split('.')[1] ?? '')?.f.input ?? null;
  const map: Record<string, HTMLElement> = { candidate, sampleVolume: sampleVolume.input, replicates, minVolume: minVolume.input, overage, doses, buffer, operator, tubeVolume: tubeVolume.input, chamberVolume: chamberVolume.input, closedChamber };
  return map[head] ?? null;
}

function clearProblems(): void {
  for (const el of form.querySelectorAll('.field-problem')) el.remove();
  for (const el of form.querySelectorAll('[aria-invalid="true"]')) el.removeAttribute('aria-invalid');
}

function showProblems(problems: Problem[]): void {
  for (const p of problems) {
    const c = controlFor(p.path);
    if (!c) continue;
    c.setAttribute('aria-invalid', 'true');
    c.closest('.field')?.append(h('div', { class: 'field-problem', role: 'alert' }, p.message));
  }
}

// ------------------------------------------------------------------ building the sheet

let controller: AbortController | null = null;
let last: Sheet | null = null;

function sheetUrl(format: 'md' | 'json' | 'html', o: SheetOptions): string {
  const q = apiQuery(o);
  q.set('format', format);
  q.set('paper', paper.value);
  return `/api/plans/${planId}/sheet?${q.toString()}`;
}

async function downloadPost(format: 'md' | 'json', o: SheetOptions): Promise<void> {
  const r = await fetch(`/api/plans/${planId}/sheet?format=${format}&paper=${paper.value}`, { method: 'POST', headers: { 'content-type': 'application/json', ...authHeaders() }, body: JSON.stringify(optionsBody(o)) });
  const text = await r.text();
  download(`plan-${planId}-sheet.${format}`, text, format === 'md' ? 'text/markdown' : 'application/json');
}

/** The links to the other forms of the same sheet, and to the Outcomes page for its tubes. */
function putLinks(o: SheetOptions): void {
  const links = document.getElementById('links')!;
  const outcomes = h('a', { href: `/plans/${planId}/outcomes${qs(pageQuery(o))}`, id: 'to-outcomes' }, 'Enter outcomes for these tubes →');
  if (o.stocks) {
    // the GET form takes no stocks: the sheet with its stocks is fetched with POST and saved as a file
    put(
      links,
      h('button', { type: 'button', class: 'secondary', onclick: () => void downloadPost('md', o).catch(page.fail) }, 'Download Markdown'),
      h('button', { type: 'button', class: 'secondary', onclick: () => void downloadPost('json', o).catch(page.fail) }, 'Download JSON'),
      h('span', { class: 'hint' }, 'the stocks given here cannot travel in a link, so these are downloads'),
      outcomes,
    );
  } else {
    // a plain link cannot send an access token: with one in this tab, the link fetches with it and saves the file
    const withToken = (format: 'md' | 'json' | 'html', type: string) => (ev: MouseEvent) => {
      if (Object.keys(authHeaders()).length === 0) return;
      ev.preventDefault();
      void fetch(sheetUrl(format, o), { headers: authHeaders() })
        .then(async (r) => {
          // a refusal (a revoked token, a sheet that no longer fits) is said, never saved as if it were the sheet
          if (!r.ok) {
            const b = (await r.json().catch(() => ({}))) as { error?: string; message?: string };
            throw new ApiError(r.status, b.error ?? String(r.status), b.message ?? `the service answered ${r.status}`, b);
          }
          return r.text();
        })
        .then((t) => download(`plan-${planId}-sheet.${format}`, t, type))
        .catch(page.fail);
    };
    put(
      links,
      h('a', { href: sheetUrl('md', o), id: 'link-md', type: 'text/markdown', onclick: withToken('md', 'text/markdown') }, 'Markdown'),
      h('a', { href: sheetUrl('json', o), id: 'link-json', type: 'application/json', onclick: withToken('json', 'application/json') }, 'JSON'),
      h('a', { href: sheetUrl('html', o), id: 'link-html', onclick: withToken('html', 'text/html') }, 'the service’s print page'),
      outcomes,
    );
  }
}

/** Hazards at a glance (the full section is in the sheet): classified, below the limits, or no data — never "no hazard". */
function putGlance(sh: Sheet): void {
  const items = sh.hazards.map((x) => {
    const codes = [...new Set(x.asHandled.flatMap((a) => (a.classification.status === 'classified' ? a.classification.statements.map((s) => s.code) : [])))];
    const noData = x.asHandled.filter((a) => a.classification.status === 'no-data' || a.classification.status === 'no-data-for-form');
    const parts: string[] = [];
    if (codes.length) parts.push(`${codes.join(', ')} (${x.asHandled.filter((a) => a.classification.status === 'classified').map((a) => a.where).join('; ')})`);
    if (noData.length) parts.push(`no hazard data on the shelf for ${noData.map((a) => a.where).join('; ')}: not classified, which does not mean harmless — read the supplier’s safety data sheet`);
    const below = x.asHandled.filter((a) => a.classification.status === 'below-limits');
    if (below.length) parts.push(`below the classification limits of the shelf’s data ${below.map((a) => a.where).join('; ')}`);
    return h('li', null, h('strong', null, x.name), ': ', parts.join('; ') || 'see the hazards section');
  });
  put(
    glance,
    h('h2', null, 'Safety at a glance'),
    h('p', { class: 'precedence' }, h('strong', null, PRECEDENCE)),
    h('ul', null, items),
    h('p', null, h('a', { href: '#sec-hazards' }, 'The hazards section of the sheet'), ' holds each substance as handled, with its signal word, pictograms and precautions.'),
  );
}

function fixButton(o: FitOption, label: string, apply: () => void): HTMLElement {
  return h('li', null, h('button', { type: 'button', class: 'fix', 'data-option': o.option, onclick: () => (apply(), void build()) }, label), ' ', h('span', null, o.text));
}

/** The fixes a plan that does not fit suggests (each tried alone by the service): a button each. */
function putFixes(nf: NotFit): void {
  const list: HTMLElement[] = [];
  for (const o of nf.options) {
    if (o.option === 'sampleVolume') list.push(fixButton(o, `Use ${o.value.replace('uL', 'µL')}`, () => sampleVolume.set(o.value)));
    else if (o.option === 'doses') list.push(fixButton(o, 'Use these doses', () => (doses.value = o.value.split(',').join(', '))));
    else if (o.option.startsWith('stocks.')) {
      const id = o.option.slice('stocks.'.length);
      const kind = /mol\s*\/\s*L|M$/.test(o.value) ? 'chemical' : 'species';
      list.push(fixButton(o, `Use a stock of ${o.value.replace('1/mL', 'particles/mL')}`, () => (stockField(id, kind, id).set(o.value), ((document.getElementById('stocks-box') as HTMLDetailsElement).open = true))));
    } else if (o.option === 'candidate') {
      for (const c of splitList(o.value)) list.push(fixButton({ ...o, text: '' }, `Sheet for ${c}`, () => (candidate.value = c)));
      list.push(h('li', { class: 'hint' }, o.text));
    } else list.push(h('li', null, o.text, ' ', h('a', { href: `/plans/${planId}` }, 'Open the plan'), ' · ', h('a', { href: '/planner' }, 'the planner')));
  }
  put(
    fixes,
    h(
      'div',
      { class: 'not-fit', role: 'group', 'aria-labelledby': 'fixes-title' },
      h('h2', { id: 'fixes-title' }, 'This sheet cannot be made as asked'),
      h('ul', null, nf.reasons.map((r) => h('li', null, r))),
      list.length
        ? [h('h3', null, 'Apply a fix'), h('p', { class: 'hint' }, 'Each was tried alone by the service and makes every tube fit; a button sets the option on the left and rebuilds the sheet.'), h('ul', { class: 'fix-list' }, list)]
        : h('p', null, 'No single change the service tried makes it fit: change several options above, or make a new plan.'),
    ),
  );
}

function showNotFit(nf: NotFit): void {
  last = null;
  putFixes(nf);
  put(glance);
  // the service's explanation, as it would print (nothing below is a protocol)
  put(view, renderSections(nf.sections, paper.value as 'A4' | 'Letter'));
  status.textContent = 'No sheet: this plan cannot be made with these options (see the fixes below).';
  status.className = 'sheet-status error';
}

/** The "what forms past onset" link (set once the plan is read) and its address: the sheet's candidate and its doses when typed. */
let formsLink: HTMLElement | null = null;
function formsHref(): void {
  if (!formsLink || !planId) return;
  const q = new URLSearchParams();
  if (candidate.value) q.set('candidate', candidate.value);
  const list = splitList(doses.value);
  if (list.length) q.set('doses', list.join(','));
  formsLink.setAttribute('href', `/plans/${planId}/forms${qs(q)}`);
}

async function build(): Promise<void> {
  if (!planId) return;
  controller?.abort();
  const mine = new AbortController();
  controller = mine;
  const o = currentOptions();
  clearProblems();
  page.clear();
  put(fixes);
  status.textContent = 'Building the sheet…';
  view.setAttribute('aria-busy', 'true');
  history.replaceState(null, '', `${location.pathname}${qs(pageQuery(o, paper.value !== 'A4' ? { paper: paper.value } : {}))}`);
  putLinks(o);
  formsHref();
  try {
    // a plan that does not fit is answered as an explanation with its fixes (200 here: it is what the page shows)
    const sh = await api<Sheet | NotFit>(`/api/plans/${planId}/sheet?format=json&paper=${paper.value}&notFitStatus=200`, { body: optionsBody(o), signal: mine.signal });
    if (mine !== controller) return;
    if (sh.fits === false) {
      showNotFit(sh);
      return;
    }
    last = sh;
    for (const s of sh.stocks) stockField(s.id, s.kind, s.name, s.source === 'shelf' ? `shelf: ${s.described}` : undefined);
    if (!candidate.value) candidate.value = sh.candidate.id;
    formsHref();
    put(view, renderSections(sh.sections, paper.value as 'A4' | 'Letter'));
    putGlance(sh);
    const tubes = sh.tubes.reduce((n, t) => n + t.tubes.length, 0);
    status.textContent = `Sheet for ${sh.candidate.name} (${sh.candidate.id}): ${sh.tubes.length} samples, ${tubes} tubes of ${sh.options.sampleVolume.value} ${sh.options.sampleVolume.unit}, ${sh.options.replicates} replicate${sh.options.replicates === 1 ? '' : 's'} each.`;
    status.className = 'sheet-status ok';
  } catch (e) {
    if ((e as Error).name === 'AbortError' || mine !== controller) return;
    if (e instanceof ApiError && e.status === 422 && e.body.fits === false) {
      showNotFit(e.body as unknown as NotFit);
      return;
    }
    if (e instanceof ApiError && e.status === 400) showProblems(e.problems.length ? e.problems : [{ path: e.message.split(':')[0] ?? '', message: e.message }]);
    page.fail(e);
    status.textContent = last ? 'The sheet below is the last one built: the options above were refused.' : 'No sheet yet: the options above were refused.';
    status.className = 'sheet-status error';
  } finally {
    if (mine === controller) view.removeAttribute('aria-busy');
  }
}

form.addEventListener('submit', (ev) => {
  ev.preventDefault();
  void build();
});
// a changed option rebuilds the sheet (text fields when they lose focus or on Enter)
form.addEventListener('change', (ev) => {
  if ((ev.target as HTMLElement).closest('.field')) void build();
});
document.getElementById('print')!.addEventListener('click', () => window.print());
document.getElementById('reset')!.addEventListener('click', () => {
  for (const f of [sampleVolume, minVolume, tubeVolume, chamberVolume, ...[...stockFields.values()].map((s) => s.f)]) f.set('');
  for (const el of [replicates, overage, doses, buffer, operator]) el.value = '';
  closedChamber.checked = false;
  void build();
});

async function start(): Promise<void> {
  if (!planId) {
    page.say('This address names no plan: open a plan from the planner, then its bench sheet.', 'error');
    return;
  }
  try {
    const plan = await api<PlanRow>(`/api/plans/${planId}`);
    document.title = `Bench sheet — plan ${plan.id} — brink`;
    const forms = h('a', { href: `/plans/${plan.id}/forms`, id: 'to-forms' }, 'what forms past onset');
    formsLink = forms;
    candidate.addEventListener('change', formsHref);
    put(sub, `Plan ${plan.id}: ${plan.name} · `, h('a', { href: `/plans/${plan.id}` }, 'the plan'), ' · ', h('a', { href: `/plans/${plan.id}/outcomes` }, 'its outcomes'), ' · ', forms);
    for (const c of plan.result.candidates) candidate.append(h('option', { value: c.species, disabled: !c.feasible }, c.feasible ? c.species : `${c.species} — does not cross (${c.reason ?? 'no threshold'})`));
    if (initial.candidate) candidate.value = initial.candidate;
    formsHref();
    if (initial.candidate && candidate.value !== initial.candidate) page.say(`"${initial.candidate}" is not a candidate of plan ${plan.id} that crosses: showing the top-ranked one instead.`, 'error');
  } catch (e) {
    page.fail(e);
    if (e instanceof ApiError && e.status === 404) {
      put(view, h('div', { class: 'empty' }, `There is no plan ${planId}. `, h('a', { href: '/planner' }, 'Make a plan in the planner'), ', then open its bench sheet.'));
      return;
    }
  }
  await build();
}

void start();
