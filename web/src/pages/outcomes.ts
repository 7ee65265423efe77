/**
 * The Outcomes page (/plans/:id/outcomes, with the sheet's options in the query as the Sheet page links it):
 * what each tube of the bench sheet did, entered against the sheet's own tube codes and saved as a revision;
 * the empirical dose–response (fraction of tubes that crossed against dose, the plan's predicted band marked);
 * the model update as a job (progress, cancel), with the consistency check and the updated threshold band;
 * applying it to the shelf (old → new coefficients with their uncertainties; a refusal explained in words);
 * and the next series designed from the outcomes, with a link to the plan it makes.
 */
import { prettyUnits } from './shelf-logic.js';
import { mountPage, pathId } from '../lib/layout.js';
import { api, ApiError, type Problem } from '../lib/api.js';
import { field, h, put, table } from '../lib/dom.js';
import { followJob, jobView, type Job } from '../lib/job.js';
import { figure, Plot, ACCENT, INK, MUTED } from '../lib/plot.js';
import { fmtAmountOf, fmtWithSd, formatNumber, kindOfSiUnit, type AmountContext } from '../lib/format.js';
import { optionsBody, optionsFromQuery, pageQuery, qs, type SheetOptions } from './sheet-options.js';
import './outcomes.css';

// ------------------------------------------------------------------ the API's shapes (the parts used here)

type State = 'stable' | 'stationary' | 'oscillatory' | 'unclear';
const STATES: State[] = ['stable', 'stationary', 'oscillatory', 'unclear'];

interface Amount {
  value: number;
  unit: string;
}
interface SheetTube {
  code: string;
  sample: string;
  kind: string;
  tubes: string[];
  dose: Amount | null;
  doseSi: number | null;
}
interface Sheet {
  fits: true;
  candidate: { id: string; name: string };
  plan: { id: number; boundary: string };
  options: { sampleVolume: Amount; replicates: number };
  tubes: SheetTube[];
  outcomes: { tube: string; state: string | null; flags: string[] }[];
  request?: Record<string, unknown>;
}
interface NotFit {
  fits: false;
  reasons: string[];
}
interface OutcomeTube {
  tube: string;
  kind: string;
  dose: number | null;
  state: State;
  onsetTime: number | null;
  patternLength: number | null;
  notes: string;
}
interface OutcomeSet {
  id: number;
  revision: number;
  candidate: string;
  sheetOptions: Record<string, unknown>;
  tubes: OutcomeTube[];
  author: string;
  note: string | null;
  createdAt: string;
}
interface Saved extends OutcomeSet {
  unobserved: string[];
  disagreements: { tube: string; kind: string; expected: string; seen: string; message: string }[];
}
interface DoseResponse {
  candidate: string;
  outcomesRevision: number;
  boundary: string;
  responseIs: string;
  groups: { dose: number; dosePerMl: number; tubes: number; responded: number; unclear: number; codes: string[] }[];
  unclear: { count: number; tubes: string[] };
  controls: { tube: string; kind: string; state: State }[];
  fit: {
    link: 'logit' | 'probit' | 'cloglog';
    scale: 'log10' | 'linear';
    stop: string;
    parameters: { intercept: { value: number | null }; slope: { value: number | null } };
    goodnessOfFit: { p: number } | null;
    notes: string[];
  };
  ed50PerMl: { value: number | null; interval: { lower: number; upper: number } | null; bracket?: { from: number | null; to: number | null } };
  predicted: { threshold: number | null; anyDose: boolean; p05: number | null; median: number | null; p95: number | null } | null;
  notes: string[];
}
interface Band {
  p05: number | null;
  median: number | null;
  p95: number | null;
  feasibleFraction: number;
  alreadyPast: number;
}
interface Coefficient {
  owner: 'chemical' | 'species';
  id: string;
  field: string;
  chemical: string | null;
  value: number;
  sd: number;
  posteriorMean: number;
  posteriorSd: number;
}
interface UpdateJobResult {
  planId: number;
  outcomes: { id: number; revision: number; candidate: string };
  ignored: { tube: string; reason: string }[];
  update: {
    candidate: string;
    tubes: { used: number; unclear: number };
    method: 'importance' | 'smc';
    ess: number;
    importanceEss: number;
    samples: number;
    coefficients: Coefficient[];
    /** coefficients the tubes' model does not depend on: never updated (docs/model.md §13) */
    unaffected?: { owner: string; id: string; field: string; chemical: string | null; reason: string }[];
    bands: { species: string; prior: Band; posterior: Band }[];
    consistency: { consistent: boolean; message: string };
  };
}
interface Applied {
  revisions: { type: string; key: string; revisionId: number; changes: { field: string; chemical: string | null; from: number; to: { value: string; sd?: string } }[] }[];
  kept: { type: string; key: string; field: string; chemical: string | null; reason: string }[];
}
interface NextJobResult {
  design: {
    criterion: string;
    designed: { doses: number[]; expectedBandFactor: number | null };
    fixed: { doses: number[]; expectedBandFactor: number | null } | null;
    current: { bandFactor: number | null };
  };
  update: { consistency: { consistent: boolean; message: string } };
  shelf: { changedSincePlan: boolean; note: string };
  nextPlanId: number;
}
interface PlanRow {
  id: number;
  name: string;
  request: { boundary: string };
  inputs?: { candidates: { id: string; radius?: number | null; materialDensity?: number | null }[] };
  result: { candidates: { species: string; feasible: boolean }[] };
}

/** SI unit of each coefficient an update reports (the fields of server/engine/update.ts FIELD_UNIT). */
const FIELD_SI: Record<string, string> = {
  diffusivity: 'm^2/s',
  lossRate: '1/s',
  concentration: 'mol/m^3',
  solubility: 'mol/m^3',
  radius: 'm',
  density: '1/m^3',
  materialDensity: 'kg/m^3',
  mobility: 'm^5/(mol*s)',
  rate: 'mol/s',
  maxRate: 'mol/s',
  michaelis: 'mol/m^3',
};
/** The sample's own amounts: an update reports them, an apply never writes them to the shelf (server/outcomes/update.ts). */
const SAMPLE_FIELDS = new Set(['concentration', 'density']);

const withSd = (si: number, sd: number, field: string): string => {
  const kind = kindOfSiUnit(FIELD_SI[field] ?? '');
  return kind ? fmtWithSd(si, sd, kind) : `${formatNumber(si)} ± ${formatNumber(sd, 2)} ${FIELD_SI[field] ?? ''}`;
};
/** What the candidate's doses are shown with (loadAmountContext): nM for an enzyme, particles/mL for a colloid, with µg/mL when its mass is known, as on the Plan page. */
let amountCtx: AmountContext = {};
const dose = (si: number | null | undefined) => fmtAmountOf(si, amountCtx);
const perMl = (x: number | null | undefined) => (x === null || x === undefined ? '—' : dose(x * 1e6));
const bandText = (b: Band | { p05: number | null; median: number | null; p95: number | null }) => [b.p05, b.median, b.p95].map((x) => (x === null ? 'above the dose cap' : dose(x))).join(' · ');

// ------------------------------------------------------------------ the page

const page = mountPage('Outcomes', 'none');
const planId = pathId(/^\/plans\/(\d+)\/outcomes\/?$/);
const query = new URLSearchParams(location.search);
const fromUrl = optionsFromQuery(query);

const heading = h('h1', null, `Outcomes of plan ${planId ?? '?'}`);
const sub = h('p', { class: 'muted', id: 'plan-line' });
const entry = h('section', { id: 'entry', 'aria-labelledby': 'entry-title' }, h('h2', { id: 'entry-title' }, 'What each tube did'));
const responseSec = h('section', { id: 'dose-response', 'aria-labelledby': 'dr-title' }, h('h2', { id: 'dr-title' }, 'Dose–response at the bench'));
const updateSec = h('section', { id: 'update', 'aria-labelledby': 'up-title' }, h('h2', { id: 'up-title' }, 'Update the shelf from these outcomes'));
const nextSec = h('section', { id: 'next', 'aria-labelledby': 'next-title' }, h('h2', { id: 'next-title' }, 'The next series'));
page.main.append(heading, sub, entry, responseSec, updateSec, nextSec);

let plan: PlanRow | null = null;
let sheet: Sheet | null = null;
let options: SheetOptions = {};
let current: OutcomeSet | null = null;
let lastResponse: DoseResponse | null = null;
let posteriorBand: Band | null = null;
let updateJob: Job<UpdateJobResult> | null = null;

// ------------------------------------------------------------------ entering the tubes

interface RowControls {
  lid: string;
  tr: HTMLTableRowElement;
  state: HTMLSelectElement;
  onset: HTMLInputElement;
  length: HTMLInputElement;
  notes: HTMLInputElement;
}
let rows: RowControls[] = [];
const author = h('input', { type: 'text', name: 'author', autocomplete: 'name', placeholder: 'who observed them' });
const note = h('input', { type: 'text', name: 'note', class: 'wide', placeholder: 'e.g. imaged 40 min, room at 22 °C' });
const saveResult = h('div', { id: 'save-result', 'aria-live': 'polite' });

function expectedOf(code: string): string {
  const o = sheet?.outcomes.find((x) => x.tube === code);
  return o?.state ?? 'not predicted';
}

function renderEntry(): void {
  if (!sheet) return;
  const prior = new Map((current?.tubes ?? []).map((t) => [t.tube, t] as const));
  rows = [];
  const body: HTMLTableRowElement[] = [];
  for (const t of sheet.tubes) {
    t.tubes.forEach((lid, i) => {
      const was = prior.get(lid);
      const state = h('select', { name: `state-${lid}`, 'aria-label': `state seen in tube ${lid}` }, h('option', { value: '' }, '— not observed'), STATES.map((s) => h('option', { value: s }, s)));
      state.value = was?.state ?? '';
      const onset = h('input', { type: 'text', name: `onset-${lid}`, 'aria-label': `onset time of tube ${lid}`, placeholder: 'e.g. 12 min', value: was?.onsetTime != null ? `${formatNumber(was.onsetTime / 60)} min` : '', size: 9 });
      const length = h('input', { type: 'text', name: `length-${lid}`, 'aria-label': `pattern wavelength (cluster to cluster) in tube ${lid}`, placeholder: 'e.g. 0.4 mm', value: was?.patternLength != null ? `${formatNumber(was.patternLength * 1e3)} mm` : '', size: 9 });
      const notes = h('input', { type: 'text', name: `notes-${lid}`, 'aria-label': `notes on tube ${lid}`, value: was?.notes ?? '', class: 'notes' });
      const tr = h(
        'tr',
        { 'data-tube': lid, class: i === 0 ? 'first' : undefined },
        h('th', { scope: 'row' }, lid),
        h('td', null, i === 0 ? t.sample : ''),
        h('td', { class: 'num' }, t.doseSi === null ? '—' : dose(t.doseSi)),
        h('td', null, String.fromCharCode(97 + i)),
        h('td', null, h('span', { class: `state state-${expectedOf(t.code)}` }, expectedOf(t.code))),
        h('td', null, state),
        h('td', null, onset),
        h('td', null, length),
        h('td', null, notes),
      );
      state.addEventListener('change', () => tr.setAttribute('data-state', state.value));
      tr.setAttribute('data-state', state.value);
      rows.push({ lid, tr, state, onset, length, notes });
      body.push(tr);
    });
  }
  const tbl = h(
    'table',
    { id: 'tubes', class: 'entry' },
    h(
      'caption',
      null,
      `One row per tube of the sheet (${sheet.candidate.id}); a tube left “not observed” is recorded as not observed, never as stable. `,
      h('span', { id: 'wavelength-hint' }, 'Wavelength: the distance from one cluster or band to the next, the length the model predicts. Where a single cluster or band spans the chamber between its walls, that is half a wavelength: enter twice the chamber length. Leave it empty when unsure: a wrong length counts against the model.'),
    ),
    h('thead', null, h('tr', null, ['tube', 'sample', 'dose delivered', 'replicate', 'expected', 'state seen', 'onset time', 'wavelength (cluster to cluster)', 'notes'].map((x) => h('th', { scope: 'col' }, x)))),
    h('tbody', null, body),
  );
  const opts = describeOptions(options, sheet);
  put(
    entry,
    h('h2', { id: 'entry-title' }, 'What each tube did'),
    h('p', null, `The tube codes of the bench sheet for ${sheet.candidate.name} (${sheet.candidate.id}) printed with ${opts}. `, h('a', { href: `/plans/${planId}/sheet${qs(pageQuery(options))}`, id: 'to-sheet' }, 'Open that sheet'), '. Tubes from a sheet printed with other options have other codes: open this page from that sheet’s “Enter outcomes” link.'),
    current ? h('p', { class: 'muted' }, `Shown: revision ${current.revision} of these outcomes, entered by ${current.author} on ${current.createdAt.slice(0, 16).replace('T', ' ')}${current.note ? ` (${current.note})` : ''}. Saving writes revision ${current.revision + 1}; earlier revisions are kept.`) : h('p', { class: 'muted' }, 'No outcomes entered yet for this plan and candidate.'),
    h('div', { class: 'table-scroll' }, tbl),
    h('form', { id: 'save-form', class: 'row' }, field('Observed by', author), field('Note on this entry', note), h('div', { class: 'actions' }, h('button', { type: 'submit', id: 'save' }, current ? `Save as revision ${current.revision + 1}` : 'Save the outcomes'))),
    saveResult,
  );
  document.getElementById('save-form')!.addEventListener('submit', (ev) => {
    ev.preventDefault();
    void save(current?.revision ?? 0);
  });
}

function describeOptions(o: SheetOptions, sh: Sheet): string {
  const parts = [`${sh.options.sampleVolume.value} ${sh.options.sampleVolume.unit} per tube`, `${sh.options.replicates} replicate${sh.options.replicates === 1 ? '' : 's'}`, o.doses ? `the doses ${o.doses.join(', ')}` : 'its default doses'];
  if (o.stocks) parts.push(`stocks given for ${Object.keys(o.stocks).join(', ')}`);
  return parts.join(', ');
}

function clearRowProblems(): void {
  for (const el of entry.querySelectorAll('tr.problem')) el.remove();
  for (const el of entry.querySelectorAll('[aria-invalid="true"]')) el.removeAttribute('aria-invalid');
}

/** Problems of a refused entry, each under the row it names (tubes[3].state → the fourth tube sent). */
function showRowProblems(problems: Problem[], sent: RowControls[]): Problem[] {
  const rest: Problem[] = [];
  for (const p of problems) {
    const m = /^tubes\[(\d+)\]\.?(\w*)/.exec(p.path);
    const r = m ? sent[Number(m[1])] : undefined;
    if (!r) {
      rest.push(p);
      continue;
    }
    const ctl = { state: r.state, onsetTime: r.onset, patternLength: r.length, notes: r.notes }[m![2] ?? ''] ?? r.state;
    ctl.setAttribute('aria-invalid', 'true');
    r.tr.after(h('tr', { class: 'problem', 'data-problem-for': r.lid }, h('td', { colspan: 9 }, h('span', { role: 'alert' }, `${r.lid}: ${p.message}`))));
  }
  return rest;
}

async function save(baseRevision: number): Promise<void> {
  if (!sheet) return;
  clearRowProblems();
  page.clear();
  const sent = rows.filter((r) => r.state.value || r.onset.value.trim() || r.length.value.trim() || r.notes.value.trim());
  if (sent.length === 0) {
    page.say('Choose the state seen for at least one tube first.', 'error');
    return;
  }
  const body = {
    sheet: optionsBody({ ...options, candidate: sheet.candidate.id }),
    tubes: sent.map((r) => ({
      tube: r.lid,
      ...(r.state.value ? { state: r.state.value } : {}),
      ...(r.onset.value.trim() ? { onsetTime: r.onset.value.trim() } : {}),
      ...(r.length.value.trim() ? { patternLength: r.length.value.trim() } : {}),
      ...(r.notes.value.trim() ? { notes: r.notes.value.trim() } : {}),
    })),
    ...(author.value.trim() ? { author: author.value.trim() } : {}),
    ...(note.value.trim() ? { note: note.value.trim() } : {}),
    baseRevision,
  };
  const button = document.getElementById('save') as HTMLButtonElement;
  button.disabled = true;
  try {
    const saved = await api<Saved>(`/api/plans/${planId}/outcomes`, { body });
    current = saved;
    renderEntry();
    put(
      saveResult,
      h('div', { class: 'msg ok', id: 'saved' }, h('p', null, `Saved as revision ${saved.revision}: ${saved.tubes.length} tube${saved.tubes.length === 1 ? '' : 's'} recorded.`), saved.unobserved.length ? h('p', null, `Not observed (left out, never read as stable): ${saved.unobserved.join(', ')}.`) : null),
      disagreementView(saved.disagreements),
    );
    resetUpdate();
    renderNextIntro();
    await loadResponse();
  } catch (e) {
    if (e instanceof ApiError && e.status === 400) {
      const rest = showRowProblems(e.problems.length ? e.problems : [{ path: '', message: e.message }], sent);
      const n = (e.problems.length || 1) - rest.length;
      page.fail(rest.length ? e : new Error(`Not saved: ${n} problem${n === 1 ? '' : 's'} in the rows marked below.`));
      entry.querySelector('tr.problem')?.scrollIntoView({ block: 'center' });
    } else if (e instanceof ApiError && e.status === 409) {
      const cur = (e.body.current ?? null) as { revision?: number; author?: string } | null;
      put(
        saveResult,
        h(
          'div',
          { class: 'msg error', role: 'alert' },
          h('p', null, `Not saved: someone saved outcomes for this plan while this page was open (now revision ${cur?.revision ?? '?'}${cur?.author ? `, by ${cur.author}` : ''}). Your entries are still in the table.`),
          h('div', { class: 'actions' }, h('button', { type: 'button', onclick: () => void save(cur?.revision ?? baseRevision) }, `Save mine as revision ${(cur?.revision ?? baseRevision) + 1}`), h('a', { href: location.href }, 'Reload to see theirs')),
        ),
      );
    } else page.fail(e);
  } finally {
    button.disabled = false;
  }
}

/** Tubes whose state seen is not the one the sheet expected, in words. */
function disagreementView(list: { tube: string; kind: string; expected: string; seen: string; message: string }[]): HTMLElement {
  if (list.length === 0) return h('p', { id: 'disagreements', class: 'ok-line' }, 'Every tube with a state agrees with the sheet’s expectation (unclear tubes aside).');
  return h('div', { id: 'disagreements', class: 'warn' }, h('p', null, h('strong', null, `${list.length} tube${list.length === 1 ? '' : 's'} disagree with the sheet’s expectation:`)), h('ul', null, list.map((d) => h('li', null, d.message))));
}

/** The same comparison for a stored set (the save answer carries it; a reload computes it the same way from the sheet). */
function storedDisagreements(set: OutcomeSet, sh: Sheet) {
  const expected = new Map<string, string>();
  for (const t of sh.tubes) {
    const o = sh.outcomes.find((x) => x.tube === t.code);
    if (o?.state) for (const lid of t.tubes) expected.set(lid, o.state);
  }
  return set.tubes
    .filter((t) => t.state !== 'unclear' && expected.has(t.tube) && expected.get(t.tube) !== t.state)
    .map((t) => ({ tube: t.tube, kind: t.kind, expected: expected.get(t.tube)!, seen: t.state, message: `${t.tube}: the sheet expected ${expected.get(t.tube)}, the bench saw ${t.state}${t.kind === 'no-fuel' || t.kind === 'dopant-alone' ? ' — a control of another mixture, which the model update does not weigh' : ''}` }));
}

// ------------------------------------------------------------------ the dose–response

const invLink = (link: DoseResponse['fit']['link'], eta: number): number => {
  if (link === 'logit') return 1 / (1 + Math.exp(-eta));
  if (link === 'cloglog') return 1 - Math.exp(-Math.exp(eta));
  // probit: Φ(η) from erf (Abramowitz & Stegun 7.1.26, |error| < 1.5e-7)
  const x = Math.abs(eta) / Math.SQRT2;
  const t = 1 / (1 + 0.3275911 * x);
  const erf = 1 - ((((1.061405429 * t - 1.453152027) * t + 1.421413741) * t - 0.284496736) * t + 0.254829592) * t * Math.exp(-x * x);
  return eta >= 0 ? 0.5 * (1 + erf) : 0.5 * (1 - erf);
};

function responsePlot(dr: DoseResponse): HTMLElement {
  const on = dr.groups.filter((g) => g.dose > 0 && g.tubes > 0);
  const pts = on.map((g) => ({ x: g.dosePerMl, y: g.responded / g.tubes, label: `${g.responded}/${g.tubes}` }));
  const xs = pts.map((p) => p.x);
  const p = dr.predicted;
  const bandLo = p?.p05 ?? null;
  const bandHi = p?.p95 ?? null;
  const all = [...xs, ...[bandLo, bandHi, p?.threshold, posteriorBand?.p05, posteriorBand?.p95].filter((x): x is number => typeof x === 'number' && x > 0).map((x) => x * 1e-6)];
  const lo = Math.min(...all) / 1.3;
  const hi = Math.max(...all) * 1.3;
  const marks: Plot.Markish[] = [];
  if (bandLo !== null) marks.push(Plot.rect([{ x1: bandLo * 1e-6, x2: (bandHi ?? hi * 1e6) * 1e-6 }], { x1: 'x1', x2: 'x2', y1: 0, y2: 1, fill: '#cfe3dc', fillOpacity: 0.55 }));
  if (posteriorBand && posteriorBand.p05 !== null)
    marks.push(Plot.rect([{ x1: posteriorBand.p05 * 1e-6, x2: (posteriorBand.p95 ?? hi * 1e6) * 1e-6 }], { x1: 'x1', x2: 'x2', y1: 0.02, y2: 0.98, fill: 'url(#brink-pat-stationary)', fillOpacity: 0.45, stroke: ACCENT }));
  const b = dr.ed50PerMl.bracket;
  if (dr.ed50PerMl.value === null && b && b.from !== null && b.to !== null) marks.push(Plot.rect([{ x1: b.from, x2: b.to }], { x1: 'x1', x2: 'x2', y1: 0.46, y2: 0.54, fill: INK, fillOpacity: 0.25 }));
  if (p?.median) marks.push(Plot.ruleX([p.median * 1e-6], { stroke: MUTED, strokeDasharray: '5,3' }));
  if (p?.threshold) marks.push(Plot.ruleX([p.threshold * 1e-6], { stroke: INK, strokeWidth: 1.5 }));
  const a = dr.fit.parameters.intercept.value;
  const s = dr.fit.parameters.slope.value;
  if (a !== null && s !== null) {
    const curve = Array.from({ length: 121 }, (_, i) => {
      const x = lo * Math.pow(hi / lo, i / 120);
      const z = dr.fit.scale === 'log10' ? Math.log10(x * 1e6) : x * 1e6;
      return { x, y: invLink(dr.fit.link, a + s * z) };
    });
    marks.push(Plot.line(curve, { x: 'x', y: 'y', stroke: ACCENT, strokeWidth: 2 }));
  }
  if (dr.ed50PerMl.value !== null) {
    const iv = dr.ed50PerMl.interval;
    if (iv) marks.push(Plot.ruleY([0.5], { x1: iv.lower, x2: iv.upper, stroke: ACCENT, strokeWidth: 3 }));
    marks.push(Plot.dot([{ x: dr.ed50PerMl.value, y: 0.5 }], { x: 'x', y: 'y', r: 4, fill: '#fff', stroke: ACCENT, strokeWidth: 2, symbol: 'diamond' }));
  }
  marks.push(Plot.dot(pts, { x: 'x', y: 'y', r: 5, fill: INK }), Plot.text(pts, { x: 'x', y: 'y', text: 'label', dy: -12, fontSize: 11 }));
  const caption = `Fraction of the tubes at each delivered dose whose state seen was ${dr.responseIs.replace(/^state seen /, '')} (the plan's boundary: ${dr.boundary}), outcomes revision ${dr.outcomesRevision}. Shaded green: the plan's predicted 5–95 % threshold band; solid line: its threshold; dashed: the band's median${posteriorBand ? '; hatched: the band after the update' : ''}${a !== null ? `; curve: the ${dr.fit.link} fit on ${dr.fit.scale === 'log10' ? 'log dose' : 'dose'} with its ED50 (diamond) and 95 % interval` : ''}${dr.ed50PerMl.value === null && b ? '; grey bar at one half: the doses between which the response switches (no fit: the data are all-or-nothing)' : ''}.`;
  return figure({
    caption,
    width: 720,
    height: 340,
    marginTop: 28,
    // label the 1, 2, 3, 5 ticks of each decade only: the others crowd at this width
    x: { type: 'log', domain: [lo, hi], label: `dopant dose delivered (particles/mL, log scale${amountCtx.kind === 'enzyme' ? '; 1 nM = 6.022 × 10¹¹ molecules/mL' : ''})`, tickFormat: (v: number) => ([1, 2, 3, 5].includes(Math.round(v / Math.pow(10, Math.floor(Math.log10(v) + 1e-9)))) ? formatNumber(v) : '') },
    y: { domain: [0, 1], label: 'fraction of tubes that crossed (0–1)' },
    marks,
  });
}

function responseWords(dr: DoseResponse): HTMLElement {
  const items: string[] = [];
  const e = dr.ed50PerMl;
  if (e.value !== null) items.push(`Empirical threshold (ED50, half the tubes cross): ${perMl(e.value)}${e.interval ? `, 95 % interval ${perMl(e.interval.lower)} to ${perMl(e.interval.upper)}` : ''}.`);
  else if (e.bracket) items.push(`No fitted curve (${dr.fit.stop}): the response switches between ${perMl(e.bracket.from)} and ${perMl(e.bracket.to)}, with no tube crossing below and every tube crossing above; more doses in between would place it.`);
  else items.push(`No fitted curve (${dr.fit.stop}).`);
  if (dr.predicted) items.push(`The plan predicted the threshold at ${dr.predicted.anyDose ? 'any dose above 0' : dose(dr.predicted.threshold)}, with its band (5 % · median · 95 %) ${bandText(dr.predicted)}.`);
  const zero = dr.groups.find((g) => g.dose === 0);
  if (zero) items.push(`Dose 0 (no dopant: ${zero.codes.join(', ') || '—'}): ${zero.responded} of ${zero.tubes} crossed — not drawn on the log dose axis.`);
  // the fit's own notes give doses in SI (1/m^3): shown here as the sheet prints doses
  const asPerMl = (t: string) => t.replace(/(\d+(?:\.\d+)?(?:e[+-]?\d+)?) 1\/m\^3/g, (_m, x: string) => dose(Number(x)));
  items.push(...dr.notes, ...dr.fit.notes.map(asPerMl));
  return h('ul', { id: 'dr-words' }, items.map((x) => h('li', null, x)));
}

async function loadResponse(): Promise<void> {
  if (!current) {
    put(responseSec, h('h2', { id: 'dr-title' }, 'Dose–response at the bench'), h('div', { class: 'empty' }, 'Enter and save what the tubes did above: the fraction of tubes that crossed at each dose is then drawn here against the plan’s predicted band.'));
    return;
  }
  try {
    const dr = await api<DoseResponse>(`/api/plans/${planId}/outcomes/dose-response?candidate=${encodeURIComponent(current.candidate)}`);
    lastResponse = dr;
    drawResponse();
  } catch (e) {
    page.fail(e);
  }
}

function drawResponse(): void {
  const dr = lastResponse;
  if (!dr) return;
  const consistency = sheet && current ? disagreementView(storedDisagreements(current, sheet)) : null;
  put(responseSec, h('h2', { id: 'dr-title' }, 'Dose–response at the bench'), responsePlot(dr), responseWords(dr), h('h3', null, 'Against the sheet’s expectation'), consistency);
}

// ------------------------------------------------------------------ the update and applying it

const applyAuthor = h('input', { type: 'text', name: 'apply-author', autocomplete: 'name', placeholder: 'who applies it' });
const updateOut = h('div', { id: 'update-result' });

function resetUpdate(): void {
  updateJob = null;
  posteriorBand = null;
  renderUpdateIntro();
}

function renderUpdateIntro(): void {
  const can = current !== null;
  put(
    updateSec,
    h('h2', { id: 'up-title' }, 'Update the shelf from these outcomes'),
    h('p', null, 'The update weighs every tube on the dose path against the model over the plan’s Monte Carlo draws of the shelf’s uncertain coefficients, and says whether the outcomes are consistent with the model at all. Nothing is written until you apply it.'),
    h('div', { class: 'actions' }, h('button', { type: 'button', id: 'run-update', disabled: !can, onclick: () => void runUpdate() }, 'Run the update'), can ? null : h('span', { class: 'hint' }, 'save the outcomes first')),
    updateOut,
  );
  put(updateOut);
}

async function runUpdate(): Promise<void> {
  if (!current) return;
  page.clear();
  const jv = jobView('Model update');
  put(updateOut, jv.el);
  const button = document.getElementById('run-update') as HTMLButtonElement;
  button.disabled = true;
  try {
    const job = await api<Job<UpdateJobResult>>(`/api/plans/${planId}/update`, { body: { candidate: current.candidate } });
    const ended = await followJob(job, jv.update);
    if (ended.state !== 'done' || !ended.result) {
      updateOut.append(h('p', { class: ended.state === 'cancelled' ? 'muted' : 'msg error' }, ended.state === 'cancelled' ? 'The update was cancelled: nothing was computed or written.' : `The update did not finish: ${ended.error?.message ?? ended.state}.`));
      return;
    }
    updateJob = ended;
    showUpdate(ended.result);
  } catch (e) {
    page.fail(e);
  } finally {
    button.disabled = false;
  }
}

function coefficientName(c: { owner?: string; type?: string; id?: string; key?: string; field: string; chemical: string | null }): string {
  return `${c.owner ?? c.type} ${c.id ?? c.key}: ${c.field}${c.chemical ? ` on ${c.chemical}` : ''}`;
}

function showUpdate(r: UpdateJobResult): void {
  const u = r.update;
  const band = u.bands.find((b) => b.species === u.candidate);
  posteriorBand = band?.posterior ?? null;
  drawResponse();
  const method = u.method === 'importance' ? `importance sampling over the plan’s ${u.samples} draws (effective sample size ${u.ess.toFixed(0)})` : `sequential Monte Carlo from ${u.samples} prior draws (importance sampling’s effective sample size, ${u.importanceEss.toFixed(0)}, was too small), effective sample size ${u.ess.toFixed(0)}`;
  const rowsC = u.coefficients.map((c) => {
    const moved = c.sd > 0 ? (c.posteriorMean - c.value) / c.sd : 0;
    const shrink = c.sd > 0 ? c.posteriorSd / c.sd : 1;
    return [
      coefficientName(c),
      withSd(c.value, c.sd, c.field),
      withSd(c.posteriorMean, c.posteriorSd, c.field),
      `${moved >= 0 ? '+' : '−'}${Math.abs(moved).toFixed(2)} prior sd; sd × ${shrink.toFixed(2)}`,
      SAMPLE_FIELDS.has(c.field) ? 'the sample’s own amount: reported, never written to the shelf' : '',
    ];
  });
  put(
    updateOut,
    h('div', { class: u.consistency.consistent ? 'msg ok' : 'msg error', id: 'consistency', role: u.consistency.consistent ? null : 'alert' }, h('p', null, h('strong', null, u.consistency.consistent ? 'Consistent: ' : 'Not consistent: '), u.consistency.message)),
    h('p', null, `From outcome set ${r.outcomes.id} revision ${r.outcomes.revision} (${r.outcomes.candidate}): ${u.tubes.used} tubes used, ${u.tubes.unclear} unclear; ${method}.`),
    r.ignored.length ? h('p', { class: 'muted' }, `Not weighed: ${r.ignored.map((x) => `${x.tube} (${x.reason})`).join('; ')}.`) : null,
    band ? h('p', { id: 'band-update' }, h('strong', null, `Threshold band of ${band.species} (5 % · median · 95 %): `), `${bandText(band.prior)} before → ${bandText(band.posterior)} after the outcomes.`) : null,
    h('h3', null, 'Coefficients: the shelf now → after the outcomes (value ± standard uncertainty)'),
    table(['coefficient', 'shelf now', 'after the outcomes', 'moved', ''], rowsC, { id: 'coefficients' }),
    u.unaffected?.length
      ? h('details', { id: 'unaffected' }, h('summary', null, `${u.unaffected.length} coefficient${u.unaffected.length === 1 ? '' : 's'} these tubes cannot tell anything about: not updated`), h('ul', null, u.unaffected.map((c) => h('li', null, `${coefficientName(c)}: ${c.reason}`))))
      : null,
    h('p', { class: 'hint' }, 'Applying writes a new revision of each item whose coefficients the outcomes informed, with provenance naming this plan and outcome set; coefficients they barely informed keep the shelf’s value and provenance, and are listed after the apply.'),
    u.consistency.consistent
      ? h('form', { id: 'apply-form', class: 'row' }, field('Applied by', applyAuthor), h('div', { class: 'actions' }, h('button', { type: 'submit', id: 'apply' }, 'Apply to the shelf')))
      : h('p', { class: 'msg error' }, 'This update cannot be applied: the outcomes contradict the model with the shelf as it is. Check the outcomes (a misread tube, the sheet options they were entered with) or the shelf first.'),
    h('div', { id: 'apply-result', 'aria-live': 'polite' }),
  );
  document.getElementById('apply-form')?.addEventListener('submit', (ev) => {
    ev.preventDefault();
    void applyUpdate();
  });
}

async function applyUpdate(): Promise<void> {
  if (!updateJob) return;
  const out = document.getElementById('apply-result')!;
  const button = document.getElementById('apply') as HTMLButtonElement;
  button.disabled = true;
  try {
    const a = await api<Applied>(`/api/plans/${planId}/update/apply`, { body: { job: updateJob.id, ...(applyAuthor.value.trim() ? { author: applyAuthor.value.trim() } : {}) } });
    const coeffs = updateJob.result?.update.coefficients ?? [];
    const changes = a.revisions.flatMap((r) =>
      r.changes.map((c) => {
        const k = coeffs.find((x) => x.owner === r.type && x.id === r.key && x.field === c.field && x.chemical === c.chemical);
        return [
          `${r.type} ${r.key}`,
          `${c.field}${c.chemical ? ` on ${c.chemical}` : ''}`,
          k ? withSd(k.value, k.sd, c.field) : withSd(c.from, 0, c.field),
          h('span', null, k ? withSd(k.posteriorMean, k.posteriorSd, c.field) : '', h('br'), h('span', { class: 'muted' }, `kept on the shelf as ${prettyUnits(String(c.to.value)).replace(/(\d(?:\.\d+)?)e([+-]?\d+)/g, (_m, m: string, e: string) => formatNumber(Number(`${m}e${e}`)))}${c.to.sd ? ` ± ${prettyUnits(String(c.to.sd)).replace(/(\d(?:\.\d+)?)e([+-]?\d+)/g, (_m, m: string, e: string) => formatNumber(Number(`${m}e${e}`)))}` : ''}`)),
          h('a', { href: `/shelf/${r.type === 'species' ? 'species' : 'chemicals'}/${encodeURIComponent(r.key)}` }, `revision id ${r.revisionId}`),
        ];
      }),
    );
    put(
      out,
      h('div', { class: 'msg ok', id: 'applied' }, h('p', null, `Applied: ${a.revisions.length} shelf item${a.revisions.length === 1 ? '' : 's'} got a new revision.`)),
      table(['item', 'coefficient', 'was (± sd)', 'now (± sd)', 'new revision'], changes, { id: 'applied-changes' }),
      a.kept.length ? h('details', null, h('summary', null, `${a.kept.length} coefficient${a.kept.length === 1 ? '' : 's'} kept as the shelf has them`), h('ul', null, a.kept.map((k) => h('li', null, `${coefficientName(k)}: ${k.reason}`)))) : null,
      h('p', null, 'Plans already stored keep the revisions they were computed with; the next series below is planned on the updated shelf.'),
    );
    button.remove();
  } catch (e) {
    if (e instanceof ApiError && e.status === 409) {
      put(
        out,
        h(
          'div',
          { class: 'msg error', role: 'alert', id: 'apply-refused' },
          h('p', null, h('strong', null, 'Not applied: the shelf moved since this plan was computed. '), e.message),
          h('p', null, 'The update is a correction of the coefficients exactly as the plan used them; writing it over a newer revision would undo that change unseen. ', h('a', { href: `/plans/${planId}` }, 'Rerun the plan on today’s shelf'), ', record the outcomes of its sheet, and update from those — or edit the shelf by hand.'),
        ),
      );
    } else if (e instanceof ApiError && e.status === 422) {
      put(out, h('div', { class: 'msg error', role: 'alert', id: 'apply-refused' }, h('p', null, h('strong', null, 'Not applied: '), e.message)));
    } else page.fail(e);
    button.disabled = false;
  }
}

// ------------------------------------------------------------------ the next series

const nextTubes = h('input', { type: 'number', name: 'next-tubes', min: 1, max: 24, step: 1, placeholder: 'as the default series' });

function renderNextIntro(): void {
  put(
    nextSec,
    h('h2', { id: 'next-title' }, 'The next series'),
    h('p', null, 'Designs the doses of the next round to narrow the threshold band the most (expected posterior variance of log₁₀ threshold), compares them with the default fixed series, and stores a new plan from the same request on the current shelf whose bench sheet prints them. Apply the update first for a plan on the updated coefficients.'),
    h('form', { id: 'next-form', class: 'row' }, field('Doses in the next round', nextTubes, 'the sheet adds dose 0 (no dopant)'), h('div', { class: 'actions' }, h('button', { type: 'submit', id: 'run-next', disabled: current === null }, 'Design the next series'))),
    h('div', { id: 'next-result' }),
  );
  document.getElementById('next-form')!.addEventListener('submit', (ev) => {
    ev.preventDefault();
    void runNext();
  });
}

async function runNext(): Promise<void> {
  if (!current) return;
  const out = document.getElementById('next-result')!;
  const jv = jobView('Next series');
  put(out, jv.el);
  const button = document.getElementById('run-next') as HTMLButtonElement;
  button.disabled = true;
  try {
    const body = { candidate: current.candidate, ...(nextTubes.value.trim() ? { tubes: Number(nextTubes.value) } : {}) };
    const job = await api<Job<NextJobResult>>(`/api/plans/${planId}/next`, { body });
    const ended = await followJob(job, jv.update);
    if (ended.state !== 'done' || !ended.result) {
      out.append(h('p', { class: ended.state === 'cancelled' ? 'muted' : 'msg error' }, ended.state === 'cancelled' ? 'Cancelled: no plan was made.' : `No next series: ${ended.error?.message ?? ended.state}`));
      return;
    }
    const r = ended.result;
    const d = r.design;
    const factor = (x: number | null) => (x === null ? 'not finite (the band reaches past the cap)' : `×${x.toFixed(2)}`);
    out.append(
      h('p', { id: 'next-doses' }, h('strong', null, `${d.designed.doses.length} doses designed: `), d.designed.doses.map((x) => dose(x)).join(', '), ' (and dose 0, the no-dopant control, on its sheet).'),
      h('p', null, `Expected 95 %/5 % width of the threshold band after that round: ${factor(d.designed.expectedBandFactor)} (now ${factor(d.current.bandFactor)}); with the default fixed series of ${d.fixed?.doses.length ?? '—'} doses: ${factor(d.fixed?.expectedBandFactor ?? null)}.`),
      h('p', { class: 'muted' }, r.shelf.note),
      h('p', { class: 'actions' }, h('a', { class: 'button', href: `/plans/${r.nextPlanId}`, id: 'next-plan' }, `Open plan ${r.nextPlanId}`), h('a', { class: 'button secondary', href: `/plans/${r.nextPlanId}/sheet` }, 'its bench sheet')),
    );
  } catch (e) {
    page.fail(e);
  } finally {
    button.disabled = false;
  }
}

// ------------------------------------------------------------------ loading

async function start(): Promise<void> {
  if (!planId) {
    page.say('This address names no plan: open a plan’s bench sheet and follow its “Enter outcomes” link.', 'error');
    return;
  }
  try {
    plan = await api<PlanRow>(`/api/plans/${planId}`);
  } catch (e) {
    page.fail(e);
    if (e instanceof ApiError && e.status === 404) put(entry, h('div', { class: 'empty' }, `There is no plan ${planId}. `, h('a', { href: '/planner' }, 'Make a plan in the planner'), ', print its bench sheet, then enter what the tubes did here.'));
    return;
  }
  document.title = `Outcomes — plan ${plan.id} — brink`;
  try {
    const list = await api<{ current: OutcomeSet | null }>(`/api/plans/${planId}/outcomes${fromUrl.candidate ? `?candidate=${encodeURIComponent(fromUrl.candidate)}` : ''}`);
    current = list.current;
    // the sheet the codes come from: the options in the address (the Sheet page's link), else those the outcomes were entered with
    const given = Object.keys(fromUrl).filter((k) => k !== 'candidate').length > 0;
    options = given || !current ? fromUrl : optionsFromRecord(current.sheetOptions);
    if (current && options.candidate === undefined) options.candidate = current.candidate;
    if (current && options.candidate !== current.candidate) current = null;
    const sh = await api<Sheet | NotFit>(`/api/plans/${planId}/sheet?format=json&notFitStatus=200`, { body: optionsBody(options) });
    put(sub, `Plan ${plan.id}: ${plan.name} (boundary: ${plan.request.boundary}) · `, h('a', { href: `/plans/${plan.id}` }, 'the plan'), ' · ', h('a', { href: `/plans/${plan.id}/sheet${qs(pageQuery(options))}` }, 'its bench sheet'));
    if (sh.fits === false) {
      put(entry, h('h2', { id: 'entry-title' }, 'What each tube did'), h('div', { class: 'empty' }, h('p', null, 'These sheet options make no sheet, so there are no tubes to enter: ', sh.reasons.join(' ')), h('a', { href: `/plans/${planId}/sheet${qs(pageQuery(options))}` }, 'Open the sheet and apply a fix')));
      return;
    }
    sheet = sh;
    await loadAmountContext(sh.candidate.id);
    renderEntry();
    if (current) put(saveResult);
    await loadResponse();
    renderUpdateIntro();
    renderNextIntro();
  } catch (e) {
    page.fail(e);
  }
}

/** The candidate's kind and molar mass (GET /api/species/:id), its radius and material density as the plan used them first (as the Plan page does). */
async function loadAmountContext(sid: string): Promise<void> {
  const used = plan?.inputs?.candidates.find((c) => c.id === sid);
  const base: AmountContext = { radius: used?.radius ?? null, materialDensity: used?.materialDensity ?? null };
  try {
    const r = await api<{ record: { kind?: string; molarMass?: { si: number } | null; radius?: { si: number }; materialDensity?: { si: number } } }>(`/api/species/${encodeURIComponent(sid)}`);
    const rec = r.record;
    amountCtx = { kind: rec.kind ?? null, molarMass: rec.molarMass?.si ?? null, radius: base.radius ?? rec.radius?.si ?? null, materialDensity: base.materialDensity ?? rec.materialDensity?.si ?? null };
  } catch {
    // a species no longer on the shelf: its doses in particles/mL (with µg/mL from the plan's own size, when known)
    amountCtx = base;
  }
}

/** A stored set's sheet options (as sent, units as typed) as the page's options. */
function optionsFromRecord(r: Record<string, unknown>): SheetOptions {
  const q = new URLSearchParams();
  for (const [k, v] of Object.entries(r)) {
    if (v === undefined || v === null) continue;
    if (k === 'doses' && Array.isArray(v)) q.set(k, v.join(','));
    else if (k === 'stocks') q.set(k, JSON.stringify(v));
    else if (typeof v !== 'object') q.set(k, String(v));
  }
  return optionsFromQuery(q);
}

void start();
