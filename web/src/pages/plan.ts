/**
 * The Plan page (/plans/:id): a stored plan's results. What was asked, in words; the ranked
 * candidates with their smallest dose, band, dose path (a strip of states over dose), growth time
 * and wavelength; one candidate in detail (its growth rate against wavenumber with the allowed
 * modes, the mode's composition, the distribution of its threshold, the fuel sweep, the state map);
 * renaming and notes; a rerun against today's shelf with the differences from this plan.
 */
import { api, ApiError, describeError } from '../lib/api.js';
import { field, h, put, type Child } from '../lib/dom.js';
import { benchText, fmt, fmtAmountOf, fmtDuration, formatNumber, type AmountContext } from '../lib/format.js';
import { followJob, jobView, type Job } from '../lib/job.js';
import { mountPage, pathId } from '../lib/layout.js';
import { figure, INK, MUTED, ACCENT, Plot, STATES, stateFill, stateLegend } from '../lib/plot.js';
import { quantityField, typedText } from '../lib/fields.js';
import './plan.css';

// ------------------------------------------------------------------ the plan as GET /api/plans/:id gives it

type State = 'stable' | 'stationary' | 'oscillatory';
interface Warning {
  code: string;
  message: string;
  [k: string]: unknown;
}
interface Analysis {
  state: State;
  growthRate: number;
  growthTime: number | null;
  fastestMode: { wavenumber: number; index: number | null; wavelength: number | null; oscillationPeriod: number | null };
  composition: { species: string; weight: number; magnitude: number; phase: number }[];
  warnings: Warning[];
}
interface Band {
  samples: number;
  seed: number;
  alreadyPast: number;
  feasibleFraction: number;
  median: number | null;
  p05: number | null;
  p95: number | null;
  aboveCap: { median: boolean; p05: boolean; p95: boolean };
  probability: { density: number; probability: number }[];
  quantiles?: { p: number; dose: number | null }[];
}
interface Candidate {
  species: string;
  feasible: boolean;
  reason: string | null;
  message: string | null;
  threshold: { density: number; volumeFraction: number; anyDose: boolean } | null;
  anyDose: boolean;
  window: { upTo: number; stateAbove: State } | null;
  cap: { density: number; limitedBy: string };
  rank: number;
  atThreshold: Analysis | null;
  atMargin: Analysis | null;
  band: Band | null;
  firstOnset: { density: number; state: State } | null;
  dosePath: { from: number; to: number; state: State }[];
  warnings: Warning[];
}
interface StateMapData {
  candidate: string;
  doseSeries: number[];
  baseAxis: { factor: number[]; species: string | null };
  doseAxis: number[];
  states: State[][];
  boundaries: { from: string; to: string; points: [number, number][] }[];
}
type FuelSweep = { concentration: number; candidates: { species: string; feasible: boolean; reason: string | null; threshold: number | null; growthTime: number | null; fuelLifetime: number | null }[] }[];
interface ShelfRev {
  id: string;
  revision: number;
  revisionId: number;
}
interface Plan {
  id: number;
  name: string;
  notes: string;
  author: string;
  createdAt: string;
  updatedAt: string;
  rerunOf: number | null;
  revision: number;
  history: { revision: number; name: string; notes: string; author: string; note: string | null; createdAt: string }[];
  request: Record<string, unknown>;
  inputs: {
    base: { species: { id: string; density: number; radius: number | null; materialDensity?: number | null }[]; chemicals: { id: string; concentration: number; concentrationMissing?: boolean }[]; chamber: { walls: string; length: number | null; depth: number | null } };
    candidates: { id: string; radius: number | null; materialDensity?: number | null }[];
    shelfRevisions: { species: ShelfRev[]; chemicals: ShelfRev[]; candidates: ShelfRev[] };
  };
  result: { candidates: Candidate[]; warnings: Warning[]; stateMap: StateMapData | null; fuelSweep: FuelSweep | null; engineVersion: string; computedAt: string };
}
interface SpeciesInfo {
  name: string;
  ctx: AmountContext;
}
interface Spectrum {
  dose: number;
  doseIs: 'margin' | 'given';
  walls: string;
  length: number | null;
  curve: { wavenumber: number; growthRate: number; stationary: number | null; oscillatory: number | null; converged: boolean }[];
  modes: { index: number; wavenumber: number; growthRate: number; stationary: number | null; oscillatory: number | null }[];
  modesInRange: number;
  fastest: { wavenumber: number; index: number | null; growthRate: number; wavelength: number | null; oscillationPeriod: number | null };
  state: State;
}

// ------------------------------------------------------------------ words

const AVOGADRO = 6.02214076e23;
const BOUNDARY_WORDS: Record<string, string> = {
  stationary: 'the mixture starts to cluster or demix (a stationary pattern)',
  oscillatory: 'the mixture starts to oscillate (travelling patterns)',
  any: 'the mixture leaves the well-mixed state in any way (stationary or oscillatory)',
  restore: 'an unstable mixture comes back to staying mixed',
};
const stateWords = (s: string) => (s in STATES ? STATES[s as State].label : s);
const pct = (f: number) => `${formatNumber(100 * f, 3)} %`;

function stateChip(s: State): HTMLElement {
  return h('span', { class: `state state-${s}` }, s);
}

/** The dose axis of a candidate: enzymes in nM, everything else in particles/mL. */
function doseScale(ctx: AmountContext): { label: string; of: (si: number) => number } {
  return ctx.kind === 'enzyme' ? { label: 'dose (nM)', of: (si) => (si / AVOGADRO) * 1e6 } : { label: 'dose (particles/mL)', of: (si) => si * 1e-6 };
}

// ------------------------------------------------------------------ page

const page = mountPage('Plan', 'none');
const id = pathId(/^\/plans\/(\d+)\/?$/);
const species = new Map<string, SpeciesInfo>();
let plan: Plan;
const detail = h('section', { id: 'detail', class: 'detail', 'aria-live': 'polite' });

async function load(): Promise<void> {
  if (!id) {
    page.main.append(h('h1', null, 'Plan'), h('p', { class: 'empty' }, 'This address names no plan. Open one from the ', h('a', { href: '/planner' }, 'Planner'), ', which lists the stored plans.'));
    return;
  }
  page.main.append(h('h1', null, `Plan ${id}`), h('p', { class: 'muted' }, 'Loading the plan…'));
  try {
    plan = await api<Plan>(`/api/plans/${id}`);
  } catch (e) {
    put(page.main, h('h1', null, `Plan ${id}`), h('p', { class: 'empty' }, e instanceof ApiError && e.status === 404 ? `There is no plan ${id}. Start one in the Planner.` : 'The plan could not be read.', ' ', h('a', { href: '/planner' }, 'Go to the Planner')));
    page.fail(e);
    return;
  }
  await loadSpecies();
  render();
}

/** Name, kind, size and molar mass of every species the plan names (the shelf's current record; the plan's own radius and density first). */
async function loadSpecies(): Promise<void> {
  const stored = new Map<string, { radius: number | null; materialDensity?: number | null }>();
  for (const s of [...plan.inputs.base.species, ...plan.inputs.candidates]) stored.set(s.id, s);
  await Promise.all(
    [...stored.keys()].map(async (sid) => {
      const s = stored.get(sid)!;
      const base: AmountContext = { radius: s.radius ?? null, materialDensity: s.materialDensity ?? null };
      try {
        const r = await api<{ record: { name?: string; kind?: string; molarMass?: { si: number } | null; radius?: { si: number }; materialDensity?: { si: number } } }>(`/api/species/${encodeURIComponent(sid)}`);
        const rec = r.record;
        species.set(sid, { name: rec.name ?? sid, ctx: { ...base, kind: rec.kind ?? null, molarMass: rec.molarMass?.si ?? null, radius: base.radius ?? rec.radius?.si ?? null, materialDensity: base.materialDensity ?? rec.materialDensity?.si ?? null } });
      } catch {
        species.set(sid, { name: sid, ctx: base });
      }
    }),
  );
}
const info = (sid: string): SpeciesInfo => species.get(sid) ?? { name: sid, ctx: {} };
const amount = (sid: string, x: number | null | undefined) => fmtAmountOf(x, info(sid).ctx);
/** An engine message in bench units: its doses for this species (nM for an enzyme), its concentrations in mM (format.ts benchText). */
const say = (sid: string | null, text: string) => benchText(text, sid ? info(sid).ctx : null);
/**
 * A candidate's warnings in words, without the earlier-onset one the dose-path column already says, and
 * those of the sample at its margin dose (the fuel running out before a growth time, gas, settling: what
 * the bench sheet warns of too) that the plan's general warnings do not already say.
 */
const candidateWarnings = (c: Candidate) => {
  const general = new Set(plan.result.warnings.map((w) => w.message));
  const own = c.warnings.filter((w) => w.code !== 'earlier-instability').map((w) => say(c.species, w.message));
  const atMargin = (c.atMargin?.warnings ?? []).filter((w) => !general.has(w.message)).map((w) => `At the margin dose: ${say(c.species, w.message)}`);
  return [...new Set([...own, ...atMargin])];
};

function render(): void {
  page.main.replaceChildren();
  page.main.append(header(), asked(), ranked(), detail, rerunSection());
  const first = plan.result.candidates.find((c) => c.feasible) ?? plan.result.candidates[0];
  if (first) choose(first.species, false);
}

// ------------------------------------------------------------------ header: name, notes, when, what was asked

function header(): HTMLElement {
  const title = h('h1', null, plan.name);
  const when = new Date(plan.result.computedAt ?? plan.createdAt);
  const meta = h(
    'p',
    { class: 'muted' },
    `Plan ${plan.id} · computed ${when.toLocaleString(undefined, { dateStyle: 'medium', timeStyle: 'short' })} by ${plan.author} · engine ${plan.result.engineVersion}`,
    plan.rerunOf !== null ? [' · a rerun of ', h('a', { href: `/plans/${plan.rerunOf}` }, `plan ${plan.rerunOf}`), ' on the shelf of its day'] : null,
  );
  const notes = h('p', { class: 'notes' }, plan.notes ? plan.notes : h('span', { class: 'muted' }, 'No notes yet.'));
  const edit = h('button', { type: 'button', class: 'secondary', id: 'rename' }, 'Rename or edit notes');
  const box = h('div', null);
  edit.addEventListener('click', () => {
    edit.hidden = true;
    box.replaceChildren(editForm(() => {
      edit.hidden = false;
      box.replaceChildren();
    }));
    box.querySelector('input')?.focus();
  });
  const actions = h(
    'div',
    { class: 'actions' },
    edit,
    h('a', { class: 'button secondary', href: `/plans/${plan.id}/outcomes` }, 'Outcomes of this plan'),
    h('a', { class: 'button secondary', href: '#rerun-h' }, 'Rerun against today’s shelf'),
    h('a', { class: 'button secondary', href: '/planner' }, 'New plan'),
  );
  return h('section', { class: 'plan-head' }, title, meta, notes, actions, box);
}

function editForm(close: () => void): HTMLElement {
  let base = plan.revision;
  const name = h('input', { type: 'text', value: plan.name, maxlength: 200, required: true, size: 50 });
  const notes = h('textarea', { rows: 4, maxlength: 5000 }, plan.notes);
  notes.classList.add('prose');
  const note = h('input', { type: 'text', maxlength: 2000, size: 50, placeholder: 'optional' });
  const save = h('button', { type: 'submit' }, 'Save');
  const cancel = h('button', { type: 'button', class: 'secondary' }, 'Cancel');
  const status = h('div', { role: 'status', 'aria-live': 'polite' });
  cancel.addEventListener('click', close);
  const form = h(
    'form',
    { class: 'edit', 'aria-label': 'Rename the plan or edit its notes' },
    field('Name', name),
    h('div', { class: 'field wide' }, h('label', { for: (notes.id = 'plan-notes') }, 'Notes'), notes),
    field('What the change is about', note, 'kept with this revision of the name and notes'),
    h('div', { class: 'actions' }, save, cancel),
    status,
  );
  form.addEventListener('submit', async (ev) => {
    ev.preventDefault();
    if (!name.value.trim()) {
      put(status, h('p', { class: 'msg error' }, 'A plan needs a name.'));
      return;
    }
    save.disabled = true;
    try {
      const updated = await api<Plan>(`/api/plans/${plan.id}`, { method: 'PATCH', body: { baseRevision: base, name: name.value.trim(), notes: notes.value, ...(note.value.trim() ? { note: note.value.trim() } : {}) } });
      plan = { ...plan, name: updated.name, notes: updated.notes, revision: updated.revision, history: updated.history };
      page.say(`Saved: revision ${updated.revision} of the name and notes.`, 'ok');
      render();
    } catch (e) {
      if (e instanceof ApiError && e.status === 409) {
        const cur = (e.body.current ?? {}) as { revision?: number; name?: string; notes?: string; author?: string };
        put(
          status,
          h(
            'div',
            { class: 'msg error', role: 'alert' },
            h('p', null, `Someone else changed the name or notes first: they are now at revision ${cur.revision ?? '?'}${cur.author ? `, by ${cur.author}` : ''}. Nothing of yours was saved; your text is still in the form.`),
            h('p', null, `Their name: “${cur.name ?? ''}”. Their notes: “${cur.notes ?? ''}”.`),
            h('p', null, 'Merge what you want to keep into the form, then press Save again: it will be saved on top of their revision.'),
          ),
        );
        if (typeof cur.revision === 'number') base = cur.revision;
      } else put(status, h('div', { class: 'msg error', role: 'alert' }, describeError(e).map((l) => h('p', null, l))));
    } finally {
      save.disabled = false;
    }
  });
  return form;
}

/** A value as the request typed it: `200 mM`, or `0.22 um^2/s ± 0.02 um^2/s`. */
function typed(v: unknown): string {
  const t = typedText(v);
  return t.sd ? `${t.value} ± ${t.sd}` : t.value;
}

/** What to do about a candidate that does not cross, where the reason suggests it. */
function reasonHint(c: Candidate): Child {
  if (c.reason !== 'base-already-past') return null;
  const b = c.band;
  const share = b ? ` With the shelf's uncertainties the base is past the boundary in ${pct(b.alreadyPast)} of the draws${b.feasibleFraction - b.alreadyPast > 0 ? '' : ' and the rest never cross below the cap'}.` : '';
  return h('span', { class: 'hint' }, ` This is said of the shelf's values as they stand.${share} To find the dose that makes the base stay mixed instead, plan again with the boundary “restore”.`);
}

/** How a base amount was given, in words. */
const AMOUNT_WORDS: Record<string, string> = { volumeFraction: 'volume fraction', density: 'number density', massConcentration: 'mass concentration', molarConcentration: 'molar concentration' };

function asked(): HTMLElement {
  const r = plan.request;
  const b = plan.inputs.base;
  const rows: [string, Child][] = [];
  const baseList = ((r.base as { id: string; [k: string]: unknown }[]) ?? []).map((s) => {
    const stored = b.species.find((x) => x.id === s.id);
    const given = Object.entries(s)
      .filter(([k]) => k !== 'id')
      // a bare number is SI: a volume fraction 0.001 is 0.1 %, said so (never left to be misread as 0.001 %)
      .map(([k, v]) => `${AMOUNT_WORDS[k] ?? k} ${k === 'volumeFraction' && typeof v === 'number' ? fmt(v, 'fraction') : typed(v).replace(/ percent$/, ' %')}`)
      .join(', ');
    return h('li', null, h('a', { href: `/shelf/species/${encodeURIComponent(s.id)}` }, info(s.id).name), ` (${s.id}): ${given || 'as on the shelf'}`, stored ? ` = ${amount(s.id, stored.density)}` : null);
  });
  rows.push(['Base mixture', h('ul', { class: 'plain' }, baseList)]);
  const chems = b.chemicals.map((c) => {
    const given = (r.chemicals as Record<string, unknown> | undefined)?.[c.id];
    return h('li', null, h('a', { href: `/shelf/chemicals/${encodeURIComponent(c.id)}` }, c.id), ': ', c.concentrationMissing || given === undefined ? h('strong', null, 'no level given — taken as 0 (none at the start)') : typed(given) === fmt(c.concentration, 'concentration') ? typed(given) : `${typed(given)} (${fmt(c.concentration, 'concentration')})`);
  });
  rows.push(['Chemicals', chems.length ? h('ul', { class: 'plain' }, chems) : 'none']);
  const ch = b.chamber;
  rows.push(['Chamber', `${ch.walls === 'sealed' ? 'sealed walls (no flux through them)' : ch.walls === 'periodic' ? 'periodic (a ring or a long channel)' : 'unbounded (every wavelength allowed)'}${ch.length ? `, ${fmt(ch.length, 'length')} across` : ''}${ch.depth ? `, ${fmt(ch.depth, 'length')} deep` : ', depth not given'}`]);
  rows.push(['Asked for', `the smallest dose at which ${BOUNDARY_WORDS[String(r.boundary)] ?? String(r.boundary)}`]);
  rows.push(['Dosing', (r.dosing ?? 'add') === 'replace' ? 'the dopant replaces part of the base (same total volume fraction)' : 'the dopant is added on top of the base']);
  rows.push(['Candidates', r.candidates === 'all' || r.candidates === undefined ? `every active species on the shelf that is not in the base (${plan.result.candidates.length})` : `${plan.result.candidates.length} named: ${(r.candidates as string[]).join(', ')}`]);
  const cap = [r.maxVolumeFraction !== undefined ? `total volume fraction at most ${formatNumber(Number(r.maxVolumeFraction) * 100, 3)} %` : null, r.maxDensity !== undefined ? `dopant at most ${typed(r.maxDensity)}` : null].filter(Boolean);
  rows.push(['Dose cap', cap.length ? cap.join('; ') : 'the default volume-fraction ceiling']);
  rows.push(['Margin', `growth time and wavelength are reported at ${formatNumber(Number(r.margin ?? 1.25), 3)} × the threshold dose`]);
  const u = r.uncertainty as { samples: number; seed: number } | undefined;
  rows.push(['Uncertainty', u && u.samples > 0 ? `${u.samples} Monte Carlo draws of the shelf's standard uncertainties (seed ${u.seed})` : 'none asked: the doses are single values without a band']);
  if (r.stateMap) rows.push(['State map', plan.result.stateMap ? `asked for, drawn for ${plan.result.stateMap.candidate}` : 'asked for, but not drawn (see the warnings)']);
  if (r.fuelSweep) {
    const f = r.fuelSweep as { chemical: string; range: unknown[]; steps?: number };
    rows.push(['Fuel sweep', `${f.chemical} from ${typed(f.range[0])} to ${typed(f.range[1])} in ${f.steps ?? 12} levels`]);
  }
  const revs = plan.inputs.shelfRevisions;
  const revRows = [
    ...revs.species.map((x) => ['base species', x] as const),
    ...revs.candidates.map((x) => ['candidate', x] as const),
    ...revs.chemicals.map((x) => ['chemical', x] as const),
  ].map(([role, x]) => h('li', null, `${role} `, h('a', { href: `/shelf/${role === 'chemical' ? 'chemicals' : 'species'}/${encodeURIComponent(x.id)}` }, x.id), ` at revision ${x.revision}`));
  const warnings = plan.result.warnings;
  return h(
    'section',
    { class: 'asked', 'aria-labelledby': 'asked-h' },
    h('h2', { id: 'asked-h' }, 'What was asked'),
    h('dl', { class: 'facts' }, rows.map(([k, v]) => [h('dt', null, k), h('dd', null, v)])),
    h('details', null, h('summary', null, `Shelf records used (${revRows.length}): the plan keeps their numbers as they were`), h('ul', { class: 'plain cols' }, revRows)),
    warnings.length
      ? h('div', { class: 'plan-warnings' }, h('h3', null, `What the plan warns of (${warnings.length})`), h('ul', null, warnings.map((w) => h('li', { class: 'warn' }, say(null, w.message)))))
      : h('p', { class: 'muted' }, 'The plan gave no general warnings.'),
  );
}

// ------------------------------------------------------------------ the ranked table

function bandText(c: Candidate): Child {
  const b = c.band;
  if (!b) return h('span', { class: 'muted' }, 'no band (no uncertainty asked)');
  const end = (v: number | null, above: boolean) => (above || v === null ? 'above the cap' : amount(c.species, v));
  const parts: Child[] = [h('div', null, `${end(b.p05, b.aboveCap.p05)} – ${end(b.p95, b.aboveCap.p95)}`), h('div', { class: 'muted' }, `median ${end(b.median, b.aboveCap.median)}; 5–95 % of ${b.samples} draws`)];
  if (b.alreadyPast > 0) parts.push(h('div', { class: 'flag' }, `already past without any dopant in ${pct(b.alreadyPast)} of the draws`));
  if (b.feasibleFraction < 1) parts.push(h('div', { class: 'flag' }, `${pct(1 - b.feasibleFraction)} of the draws do not cross below the cap`));
  return parts;
}

function onsetText(c: Candidate): Child {
  const on = c.firstOnset;
  const boundary = String(plan.request.boundary);
  if (!on) return null;
  const t = c.threshold?.density;
  // 'any' asks for whichever state comes first, and 'restore' for the way back: neither has "something else first"
  const other = boundary !== 'restore' && boundary !== 'any';
  if (other && on.state !== boundary && (t === undefined || on.density < t * (1 + 1e-5)))
    return h('div', { class: 'flag' }, `Something else happens first: from ${amount(c.species, on.density)} the mixture turns ${on.state}${t !== undefined ? `, below the ${boundary} threshold` : ''}.`);
  if (other && t !== undefined && on.density < t * (1 - 1e-5)) return h('div', { class: 'flag' }, `It already turns ${on.state} from ${amount(c.species, on.density)}, below this threshold.`);
  return null;
}

function strip(c: Candidate): HTMLElement {
  const ctx = info(c.species).ctx;
  const sc = doseScale(ctx);
  const cap = c.cap.density;
  const inner = c.dosePath.map((p) => p.from).filter((x) => x > 0);
  const lo = Math.min(cap * 1e-3, ...inner.map((x) => x / 20));
  const data = c.dosePath.map((p) => ({ x1: sc.of(Math.max(p.from, lo)), x2: sc.of(Math.max(p.to, lo)), state: p.state }));
  const marks: Plot.Markish[] = [Plot.rect(data, { x1: 'x1', x2: 'x2', y1: 0, y2: 1, fill: (d: { state: string }) => stateFill(d.state), stroke: INK, strokeOpacity: 0.4 })];
  if (c.threshold && c.threshold.density > 0) marks.push(Plot.ruleX([sc.of(c.threshold.density)], { stroke: INK, strokeWidth: 2 }));
  const words = c.dosePath.map((p) => `${p.state} ${p.from > 0 ? `from ${amount(c.species, p.from)}` : 'from 0'} to ${amount(c.species, p.to)}`).join('; ');
  const f = figure({
    caption: `States of ${c.species} over dose up to its cap: ${words}.`,
    width: 300,
    height: 74,
    marginLeft: 10,
    marginRight: 14,
    marginTop: 4,
    marginBottom: 38,
    x: { type: 'log', label: sc.label, labelOffset: 34, domain: [sc.of(lo), sc.of(cap)], ticks: 3, tickFormat: (v: number) => formatNumber(v, 2) },
    y: { axis: null, domain: [0, 1], grid: false },
    marks,
  });
  f.classList.add('strip');
  return f;
}

function ranked(): HTMLElement {
  const all = plan.result.candidates;
  const feasible = all.filter((c) => c.feasible);
  const infeasible = all.filter((c) => !c.feasible);
  const boundary = String(plan.request.boundary);
  const rows = feasible.map((c) => {
    const m = c.atMargin;
    const btn = h('button', { type: 'button', class: 'link pick', 'aria-controls': 'detail', 'aria-pressed': 'false', 'data-species': c.species }, info(c.species).name);
    const row = h(
      'tr',
      { 'data-species': c.species },
      h('td', { class: 'num' }, String(c.rank)),
      h('td', null, btn, h('div', { class: 'muted mono' }, c.species)),
      h('td', null, c.anyDose ? h('strong', null, 'any dose above 0') : amount(c.species, c.threshold!.density), c.threshold && c.threshold.volumeFraction > 0 ? h('div', { class: 'muted' }, `${fmt(c.threshold.volumeFraction, 'fraction', 2)} by volume`) : null, c.window ? h('div', { class: 'flag' }, `only up to ${amount(c.species, c.window.upTo)}; above it the mixture is ${c.window.stateAbove}`) : null),
      h('td', null, bandText(c)),
      h('td', null, strip(c), onsetText(c)),
      h(
        'td',
        null,
        m
          ? [
              h('div', null, 'grows in ', h('strong', null, fmtDuration(m.growthTime))),
              h('div', null, 'wavelength ', m.fastestMode.wavelength !== null ? fmt(m.fastestMode.wavelength, 'length') : 'none (longest wave)'),
              m.fastestMode.oscillationPeriod !== null ? h('div', null, 'period ', fmtDuration(m.fastestMode.oscillationPeriod)) : null,
              h('div', null, stateChip(m.state)),
            ]
          : h('span', { class: 'muted' }, 'no margin dose'),
      ),
      h('td', null, candidateWarnings(c).length ? h('ul', { class: 'plain small' }, candidateWarnings(c).map((w) => h('li', null, w))) : h('span', { class: 'muted' }, 'none')),
      h('td', null, h('a', { href: `/plans/${plan.id}/sheet?candidate=${encodeURIComponent(c.species)}` }, 'bench sheet'), h('br'), h('a', { href: `/plans/${plan.id}/forms?candidate=${encodeURIComponent(c.species)}` }, 'What forms past onset'), h('br'), h('a', { href: `/plans/${plan.id}/outcomes` }, 'outcomes')),
    );
    row.addEventListener('click', (ev) => {
      if ((ev.target as HTMLElement).closest('a')) return;
      choose(c.species, true);
    });
    return row;
  });
  const table = h(
    'table',
    { class: 'ranked', 'aria-label': 'Candidates that cross, smallest dose first' },
    h('thead', null, h('tr', null, ['Rank', 'Candidate', `Smallest dose (${boundary})`, 'Band (5–95 %)', 'States over dose', `At the margin dose`, 'Warnings', 'Next'].map((t) => h('th', { scope: 'col' }, t)))),
    h('tbody', null, rows),
  );
  const legend = h('div', { class: 'row' }, stateLegend(), h('span', { class: 'muted' }, 'Strips: the state over dose on a log axis up to the cap; the dark line is the threshold.'));
  return h(
    'section',
    { 'aria-labelledby': 'ranked-h' },
    h('h2', { id: 'ranked-h' }, 'Candidates, smallest dose first'),
    feasible.length
      ? [h('p', { class: 'muted' }, 'Choose a candidate (its name, or the row) for its details below. Doses are per mL of the final sample, with the mass when the shelf knows the particle size and density or the molar mass.'), legend, h('div', { class: 'scroll' }, table)]
      : h('p', { class: 'empty' }, `No candidate crosses the ${boundary} boundary below its dose cap. The reasons are listed below; a different base, fuel level or candidate may help (start a new plan in the Planner).`),
    h('p', { class: 'caution' }, 'Before handling any chemical, read the cautions on the bench sheet. Local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence over anything brink says.'),
    infeasible.length
      ? [
          h('h3', null, `Candidates that do not cross (${infeasible.length})`),
          h(
            'ul',
            { class: 'infeasible' },
            infeasible.map((c) => h('li', { 'data-species': c.species }, h('button', { type: 'button', class: 'link pick', 'aria-controls': 'detail', 'aria-pressed': 'false', 'data-species': c.species, onclick: () => choose(c.species, true) }, h('strong', null, info(c.species).name)), ` (${c.species}): `, say(c.species, c.message ?? c.reason ?? 'no reason given'), reasonHint(c), c.warnings.length ? h('ul', { class: 'plain small' }, c.warnings.map((w) => h('li', null, say(c.species, w.message)))) : null)),
          ),
        ]
      : null,
  );
}

// ------------------------------------------------------------------ one candidate in detail

function choose(sid: string, focus: boolean): void {
  for (const tr of document.querySelectorAll<HTMLElement>('table.ranked tbody tr, ul.infeasible li')) {
    const on = tr.dataset.species === sid;
    tr.classList.toggle('selected', on);
    tr.querySelector('button.pick')?.setAttribute('aria-pressed', String(on));
  }
  const c = plan.result.candidates.find((x) => x.species === sid);
  if (!c) return;
  put(detail, ...detailOf(c));
  if (focus) detail.querySelector('h2')?.focus();
}

function detailOf(c: Candidate): Child[] {
  const name = info(c.species).name;
  const out: Child[] = [h('h2', { tabindex: -1, id: 'detail-h' }, `${name} in detail`)];
  out.push(dispersionPanel(c));
  out.push(compositionPanel(c));
  out.push(bandPanel(c));
  const sweep = fuelPanel(c);
  if (sweep) out.push(sweep);
  const map = mapPanel(c);
  if (map) out.push(map);
  return out;
}

function panel(title: string, ...children: Child[]): HTMLElement {
  return h('div', { class: 'panel' }, h('h3', null, title), ...children);
}

// (1) growth rate against wavenumber

function dispersionPanel(c: Candidate): HTMLElement {
  const holder = h('div', { class: 'plot-holder' }, h('p', { class: 'muted' }, 'Computing the growth rate against wavenumber…'));
  const dose = quantityField({ label: 'Dose to draw it at', quantity: 'numberDensity', sign: 'positive', placeholder: 'empty: the margin dose' });
  dose.input.size = 28;
  const redraw = h('button', { type: 'button', class: 'secondary' }, 'Draw');
  const draw = async () => {
    const d = dose.value();
    if (dose.invalid()) return;
    redraw.disabled = true;
    put(holder, h('p', { class: 'muted' }, 'Computing…'));
    try {
      const s = await api<Spectrum>(`/api/plans/${plan.id}/candidates/${encodeURIComponent(c.species)}/spectrum`, { body: d === undefined ? {} : { dose: d } });
      put(holder, dispersionFigure(c, s));
    } catch (e) {
      put(holder, h('p', { class: 'msg error', role: 'alert' }, describeError(e).join(' ')));
    } finally {
      redraw.disabled = false;
    }
  };
  redraw.addEventListener('click', draw);
  const can = c.feasible && !c.anyDose && c.threshold && c.threshold.density > 0;
  if (can) void draw();
  else put(holder, h('p', { class: 'empty' }, c.feasible ? 'Any dose crosses here, so there is no margin dose: type a dose to draw the growth rate at.' : 'This candidate does not cross below its cap: type a dose (below its cap) to see how far from growing each mode is.'));
  return panel('Growth rate against wavenumber', h('div', { class: 'row' }, dose.el, redraw), holder);
}

function dispersionFigure(c: Candidate, s: Spectrum): HTMLElement {
  const kOf = (k: number) => k * 1e-3; // 1/mm
  const vals = [...s.modes.map((m) => m.growthRate), s.fastest.growthRate].filter(Number.isFinite);
  const top = Math.max(...vals, ...s.curve.filter((p) => p.wavenumber <= s.fastest.wavenumber * 3 || s.fastest.wavenumber === 0).map((p) => p.growthRate).filter(Number.isFinite));
  const perHour = Math.abs(top) < 0.05 && Math.abs(s.modes[0]?.growthRate ?? top) < 0.05;
  const g = (v: number | null) => (v === null || !Number.isFinite(v) ? null : perHour ? v * 3600 : v);
  const unit = perHour ? '1/h' : '1/s';
  const span = Math.max(Math.abs(top), Math.abs(s.modes[0]?.growthRate ?? 0), 1e-30);
  const yMax = g(top > 0 ? top * 1.3 : span * 0.5)!;
  const yMin = g(top > 0 ? -top * 2 : -span * 3)!;
  const curve = s.curve.filter((p) => p.converged);
  const marks: Plot.Markish[] = [
    Plot.ruleY([0], { stroke: INK }),
    Plot.line(curve.filter((p) => p.stationary !== null), { x: (p) => kOf(p.wavenumber), y: (p) => g(p.stationary), stroke: ACCENT, strokeWidth: 1.6, clip: true }),
    Plot.line(curve.filter((p) => p.oscillatory !== null), { x: (p) => kOf(p.wavenumber), y: (p) => g(p.oscillatory), stroke: STATES.oscillatory.color, strokeWidth: 1.6, strokeDasharray: '5,3', clip: true }),
  ];
  if (s.modes.length) {
    marks.push(Plot.dot(s.modes, { x: (m) => kOf(m.wavenumber), y: (m) => g(m.growthRate), r: 3, fill: INK, clip: true }));
  }
  const fx = s.fastest.wavenumber > 0 ? kOf(s.fastest.wavenumber) : null;
  if (fx !== null) {
    marks.push(Plot.dot([{ x: fx, y: g(s.fastest.growthRate) }], { x: 'x', y: 'y', r: 7, stroke: ACCENT, strokeWidth: 2.5, fill: 'none' }));
    marks.push(Plot.text([{ x: fx, y: g(s.fastest.growthRate) }], { x: 'x', y: 'y', text: () => (s.fastest.index !== null ? `fastest: mode ${s.fastest.index}` : 'fastest'), dy: -14, fill: INK, fontWeight: 600 }));
  }
  const allowed = s.walls === 'sealed' ? 'allowed modes k = nπ/L (sealed walls)' : s.walls === 'periodic' ? 'allowed modes k = 2πn/L (periodic)' : 'every wavenumber is allowed (unbounded)';
  const grows = s.fastest.growthRate > 0;
  const caption = `Growth rate Re λ of each branch against wavenumber k at ${amount(c.species, s.dose)} (${s.doseIs === 'margin' ? 'the margin dose' : 'the dose typed'}): solid line the stationary branch (real eigenvalues), dashed the oscillatory one (complex pairs); dots the ${allowed}${s.modesInRange > s.modes.length ? ` (${s.modes.length} of the ${s.modesInRange} drawn)` : ''}; the ring marks the fastest mode. Above zero a mode grows.`;
  const f = figure({
    caption,
    width: 640,
    height: 300,
    x: { type: 'log', label: 'wavenumber k (1/mm)', ticks: 5, tickFormat: (v: number) => formatNumber(v, 2) },
    y: { label: `growth rate Re λ (${unit})`, domain: [yMin, yMax], tickFormat: (v: number) => formatNumber(v, 2) },
    marks,
  });
  const fm = s.fastest;
  const words = grows
    ? `The fastest mode ${fm.index !== null ? `(n = ${fm.index}) ` : ''}grows at ${formatNumber(fm.growthRate * 3600, 3)} per hour — a growth time of ${fmtDuration(1 / fm.growthRate)} — with wavelength ${fm.wavelength !== null ? fmt(fm.wavelength, 'length') : 'as long as the chamber allows'}${fm.oscillationPeriod !== null ? ` and period ${fmtDuration(fm.oscillationPeriod)}` : ''}: the mixture is ${stateWords(s.state)}.`
    : `No allowed mode grows at this dose: the mixture stays mixed (the least stable mode decays in ${fmtDuration(-1 / fm.growthRate)}).`;
  return h('div', null, f, h('p', null, words));
}

// (2) what the mode is made of

function compositionPanel(c: Candidate): HTMLElement {
  const a = c.atMargin ?? c.atThreshold;
  if (!a || a.composition.length === 0) return panel('What the growing mode is made of', h('p', { class: 'muted' }, 'No analysis at a dose above the threshold: nothing to show.'));
  const which = c.atMargin ? 'the margin dose' : 'the threshold dose';
  const data = a.composition.map((e) => ({ species: e.species, weight: e.weight, side: e.weight >= 0 ? 'gathers' : 'pushed out' }));
  const f = figure({
    caption: `Share of each species in the fastest mode at ${which} (the eigenvector, largest component +1): bars of one sign move together; the opposite sign is pushed out of where the others gather.`,
    width: 560,
    height: 40 + 34 * data.length,
    marginLeft: 140,
    x: { label: 'share in the mode (relative, largest = 1)', domain: [-1.05, 1.05] },
    y: { label: null, domain: data.map((d) => d.species) },
    marks: [Plot.barX(data, { x: 'weight', y: 'species', fill: (d: { weight: number }) => (d.weight >= 0 ? ACCENT : MUTED) }), Plot.ruleX([0], { stroke: INK })],
  });
  const together = data.filter((d) => d.weight > 0.05).map((d) => d.species);
  const out = data.filter((d) => d.weight < -0.05).map((d) => d.species);
  const still = data.filter((d) => Math.abs(d.weight) <= 0.05).map((d) => d.species);
  const words = [
    together.length ? `${together.join(' and ')} gather${together.length === 1 ? 's' : ''} together` : null,
    out.length ? `${out.join(' and ')} ${out.length === 1 ? 'is' : 'are'} pushed out of those clusters` : null,
    still.length ? `${still.join(' and ')} barely take${still.length === 1 ? 's' : ''} part` : null,
  ].filter(Boolean);
  const osc = a.state === 'oscillatory' ? ' The mode oscillates, so the species also differ in phase; the bars show the part in step with the leading one.' : '';
  return panel('What the growing mode is made of', f, h('p', null, `At ${which}: ${words.join('; ')}.${osc}`));
}

// (3) the threshold's distribution

function bandPanel(c: Candidate): HTMLElement {
  const b = c.band;
  if (!b) return panel('How sure the threshold is', h('p', { class: 'muted' }, 'The plan asked for no uncertainty, so the threshold is a single value. Ask for Monte Carlo draws in the Planner for a band.'));
  const sc = doseScale(info(c.species).ctx);
  const words: Child[] = [];
  if (b.alreadyPast > 0) words.push(h('p', { class: 'flag' }, `In ${pct(b.alreadyPast)} of the draws the base alone is already past the boundary (threshold 0): no dopant is needed there.`));
  if (b.feasibleFraction < 1) words.push(h('p', { class: 'flag' }, `In ${pct(1 - b.feasibleFraction)} of the draws the threshold lies above the dose cap (${amount(c.species, c.cap.density)}): those draws do not cross at any dose that can be made.`));
  const marks: Plot.Markish[] = [];
  const positive = (x: number | null) => x !== null && x > 0;
  const pts: { dose: number; p: number }[] = [];
  if (b.quantiles && b.quantiles.length) {
    for (const q of b.quantiles) if (positive(q.dose)) pts.push({ dose: sc.of(q.dose!), p: q.p });
    marks.push(Plot.line(pts, { x: 'dose', y: 'p', stroke: INK, curve: 'step-after' }), Plot.dot(pts, { x: 'dose', y: 'p', r: 2.5, fill: INK }));
  } else {
    for (const [p, v] of [
      [0.05, b.p05],
      [0.5, b.median],
      [0.95, b.p95],
    ] as const)
      if (positive(v)) pts.push({ dose: sc.of(v!), p });
    marks.push(Plot.dot(pts, { x: 'dose', y: 'p', r: 4, fill: INK }));
    words.push(h('p', { class: 'muted' }, 'This plan was stored before plans kept the whole distribution: only the 5 %, 50 % and 95 % points are known (rerun it for the full curve).'));
  }
  if (c.threshold && c.threshold.density > 0) marks.push(Plot.ruleX([sc.of(c.threshold.density)], { stroke: ACCENT, strokeWidth: 2 }));
  marks.push(Plot.ruleX([sc.of(c.cap.density)], { stroke: MUTED, strokeDasharray: '4,3' }));
  if (pts.length === 0) return panel('How sure the threshold is', ...words, h('p', { class: 'muted' }, 'No draw has a threshold between 0 and the cap to draw.'));
  const qmax = Math.max(...pts.map((p) => p.dose));
  const capNear = sc.of(c.cap.density) <= qmax * 10;
  const xs = [...pts.map((p) => p.dose), ...(capNear ? [sc.of(c.cap.density)] : []), c.threshold && c.threshold.density > 0 ? sc.of(c.threshold.density) : pts[0]!.dose].filter((x) => x > 0);
  if (!capNear) marks.pop();
  const f = figure({
    caption: `Share of the ${b.samples} Monte Carlo draws whose threshold lies at or below each dose (the cumulative distribution, ${b.quantiles?.length ? `${b.quantiles.length} quantiles` : 'three quantiles'}): the solid orange line is the plan's own threshold${capNear ? ', the dashed grey one the dose cap' : ` (the dose cap, ${amount(c.species, c.cap.density)}, lies far to the right)`}. Draws already past count at dose 0; those above the cap never reach 1.`,
    width: 560,
    height: 260,
    x: { type: 'log', label: sc.label, domain: [Math.min(...xs) / 1.5, Math.max(...xs) * 1.5], ticks: 4, tickFormat: (v: number) => formatNumber(v, 2) },
    y: { label: 'share of draws crossed (cumulative)', domain: [0, 1] },
    marks,
  });
  const end = (v: number | null, above: boolean) => (above || v === null ? 'above the cap' : amount(c.species, v));
  return panel(
    'How sure the threshold is',
    f,
    h('p', null, `Half the draws cross by ${end(b.median, b.aboveCap.median)}; 90 % of them between ${end(b.p05, b.aboveCap.p05)} and ${end(b.p95, b.aboveCap.p95)}.`),
    ...words,
  );
}

// (4) fuel sweep

function fuelPanel(c: Candidate): HTMLElement | null {
  const sw = plan.result.fuelSweep;
  if (!sw || sw.length === 0) return null;
  const f = plan.request.fuelSweep as { chemical: string; scale?: string } | undefined;
  const chem = f?.chemical ?? 'the fuel';
  const sc = doseScale(info(c.species).ctx);
  const rows = sw.map((lvl) => ({ c: lvl.concentration, r: lvl.candidates.find((x) => x.species === c.species) }));
  const ok = rows.filter((x) => x.r?.feasible && x.r.threshold !== null && x.r.threshold > 0).map((x) => ({ conc: x.c, dose: sc.of(x.r!.threshold!) }));
  const not = rows.filter((x) => x.r && !x.r.feasible);
  const log = (f?.scale ?? 'log') === 'log' && sw.every((x) => x.concentration > 0);
  const body: Child[] = [];
  if (ok.length) {
    const lo = Math.min(...ok.map((o) => o.dose));
    const hi = Math.max(...ok.map((o) => o.dose));
    body.push(
      figure({
        caption: `Threshold dose of ${c.species} against the level of ${chem} (the other chemicals as planned)${not.length ? `; at ${not.length} level(s) it does not cross below the cap (listed below)` : ''}.`,
        width: 560,
        height: 260,
        x: { type: log ? 'log' : 'linear', label: `${chem} (mM)`, tickFormat: (v: number) => formatNumber(v, 3) },
        marginLeft: 84,
        y: { type: 'log', label: `threshold ${sc.label}`, domain: [lo / 3, hi * 3], ticks: 3, tickFormat: (v: number) => formatNumber(v, 2) },
        marks: [Plot.line(ok, { x: 'conc', y: 'dose', stroke: ACCENT }), Plot.dot(ok, { x: 'conc', y: 'dose', fill: ACCENT, r: 3 })],
      }),
    );
    body.push(
      h('p', null, hi / lo < 1.01 ? `Over this range the threshold hardly depends on the level of ${chem} (${amount(c.species, ok[0]!.dose / sc.of(1))}): more ${chem} makes the pattern no easier to start; it mainly sets how long the fuel lasts.` : `From ${fmt(sw[0]!.concentration, 'concentration')} to ${fmt(sw[sw.length - 1]!.concentration, 'concentration')} the threshold moves by a factor of ${formatNumber(hi / lo, 3)}.`),
    );
  } else body.push(h('p', { class: 'muted' }, `At no level of ${chem} in the sweep does ${c.species} cross below its cap.`));
  if (not.length) body.push(h('ul', { class: 'plain small' }, not.map((x) => h('li', null, `${fmt(x.c, 'concentration')}: does not cross (${(x.r!.reason ?? 'no reason given').replace(/-/g, ' ')})`))));
  const times = rows.filter((x) => x.r?.growthTime !== null && x.r?.growthTime !== undefined && x.r.fuelLifetime !== null && x.r.fuelLifetime < 3 * x.r.growthTime!);
  if (times.length) body.push(h('p', { class: 'flag' }, `At ${times.map((x) => fmt(x.c, 'concentration')).join(', ')} the ${chem} runs out within three growth times at the margin dose: the pattern may not have time to form.`));
  return panel(`Threshold against the level of ${chem}`, ...body);
}

// (5) state map

function mapPanel(c: Candidate): HTMLElement | null {
  const m = plan.result.stateMap;
  if (!m || m.candidate !== c.species) {
    if (plan.request.stateMap && m) return panel('State map', h('p', { class: 'muted' }, `The plan's state map is of ${m.candidate}; choose it (in the table, or in the list of candidates that do not cross) to see it.`));
    return null;
  }
  const sc = doseScale(info(c.species).ctx);
  const edges = (a: number[]) => a.map((v, i) => [i === 0 ? v / Math.sqrt(a[1]! / a[0]!) : Math.sqrt(a[i - 1]! * v), i === a.length - 1 ? v * Math.sqrt(v / a[i - 1]!) : Math.sqrt(v * a[i + 1]!)] as const);
  const de = edges(m.doseAxis);
  const be = edges(m.baseAxis.factor);
  const cells: { x1: number; x2: number; y1: number; y2: number; state: State }[] = [];
  m.states.forEach((row, i) => row.forEach((s, j) => cells.push({ x1: sc.of(de[j]![0]), x2: sc.of(de[j]![1]), y1: be[i]![0], y2: be[i]![1], state: s })));
  const marks: Plot.Markish[] = [Plot.rect(cells, { x1: 'x1', x2: 'x2', y1: 'y1', y2: 'y2', fill: (d: { state: string }) => stateFill(d.state) })];
  for (const b of m.boundaries) marks.push(Plot.line(b.points.map(([f, x]) => ({ f, x: sc.of(x) })), { x: 'x', y: 'f', stroke: INK, strokeWidth: 2 }));
  marks.push(Plot.ruleY([1], { stroke: INK, strokeDasharray: '2,3' }));
  if (c.threshold && c.threshold.density > 0) marks.push(Plot.ruleX([sc.of(c.threshold.density)], { stroke: ACCENT, strokeWidth: 2 }));
  const planned = m.doseSeries.filter((x) => x > 0);
  const series = planned.filter((x) => x >= de[0]![0] && x <= de[de.length - 1]![1]);
  if (series.length) marks.push(Plot.dot(series.map((x) => ({ x: sc.of(x), f: 1 })), { x: 'x', y: 'f', r: 4.5, fill: '#ffffff', stroke: INK, strokeWidth: 1.5, symbol: 'diamond' }));
  const what = m.baseAxis.species ? `the density of ${m.baseAxis.species}` : 'every base species together';
  const f = figure({
    caption: `State of the mixture over the dose of ${c.species} and ${what} (× the planned level), both on log axes. Solid black lines: the boundaries between states; orange line: the threshold at the planned base; dotted line: the planned base (× 1); white diamonds: the bench sheet's planned doses${series.length === planned.length ? ` (${series.length})` : ` (${series.length} of its ${planned.length} doses lie within the map; the others are off its dose range)`}.`,
    width: 640,
    height: 360,
    x: { type: 'log', label: sc.label, domain: [sc.of(de[0]![0]), sc.of(de[de.length - 1]![1])], ticks: 5, tickFormat: (v: number) => formatNumber(v, 2) },
    y: { type: 'log', label: `base level (× planned, ${m.baseAxis.species ?? 'all base species'})`, domain: [be[0]![0], be[be.length - 1]![1]], grid: false, tickFormat: (v: number) => formatNumber(v, 2) },
    marks,
  });
  const present = [...new Set(m.states.flat())];
  return panel(
    'State map',
    stateLegend(present),
    h('ul', { class: 'legend' }, h('li', null, h('span', { class: 'key-line', 'aria-hidden': 'true' }), 'boundary between states'), h('li', null, h('span', { class: 'key-line accent', 'aria-hidden': 'true' }), 'threshold dose'), h('li', null, h('span', { class: 'key-diamond', 'aria-hidden': 'true' }, '◇'), 'planned dose series')),
    f,
    h('p', null, mapWords(m, c)),
  );
}

/** The states along the map's row nearest the planned base, in words. */
function mapWords(m: StateMapData, c: Candidate): string {
  const dist = m.baseAxis.factor.map((f) => Math.abs(Math.log(f)));
  const i0 = dist.indexOf(Math.min(...dist));
  const row = m.states[i0] ?? [];
  const f0 = m.baseAxis.factor[i0] ?? 1;
  const runs: string[] = [];
  row.forEach((s, j) => {
    if (j === 0) return runs.push(s);
    if (s === row[j - 1]) return;
    // the change as bisected on this row (the boundary line's point), else between the two grid doses
    const lo = m.doseAxis[j - 1]!;
    const hi = m.doseAxis[j]!;
    const at = m.boundaries
      .filter((b) => b.from === row[j - 1] && b.to === s)
      .flatMap((b) => b.points)
      .find(([f, x]) => Math.abs(f / f0 - 1) < 1e-9 && x >= lo * (1 - 1e-9) && x <= hi * (1 + 1e-9));
    runs.push(at ? `${s} from ${amount(c.species, at[1])}` : `${s} somewhere between ${amount(c.species, lo)} and ${amount(c.species, hi)}`);
  });
  return `Along the row nearest the planned base (× ${formatNumber(f0, 3)}) the mixture is ${runs.join(', then ')} as the dose rises over the map (each change bisected along the row, as the boundary lines are).`;
}

// ------------------------------------------------------------------ rerun against today's shelf

function rerunSection(): HTMLElement {
  const go = h('button', { type: 'button', id: 'rerun' }, 'Rerun against today’s shelf');
  const out = h('div', { id: 'rerun-out', 'aria-live': 'polite' });
  go.addEventListener('click', async () => {
    go.disabled = true;
    const view = jobView('Rerun');
    put(out, view.el);
    try {
      const job = await api<Job<{ planId: number }>>(`/api/plans/${plan.id}/rerun`, { method: 'POST', body: {} });
      view.onCancel(() => (go.disabled = false));
      const end = await followJob(job, (j) => view.update(j));
      if (end.state !== 'done' || !end.result) {
        go.disabled = false;
        return;
      }
      const next = await api<Plan>(`/api/plans/${end.result.planId}`);
      out.append(diff(plan, next));
    } catch (e) {
      out.append(h('div', { class: 'msg error', role: 'alert' }, describeError(e).map((l) => h('p', null, l))));
    } finally {
      go.disabled = false;
    }
  });
  return h(
    'section',
    { 'aria-labelledby': 'rerun-h' },
    h('h2', { id: 'rerun-h' }, 'Rerun against today’s shelf'),
    h('p', { class: 'muted' }, 'The same request, computed again with the shelf as it is now (measurements and calibrations made since this plan). The result is a new plan; this one stays as it is. The differences are listed here.'),
    go,
    out,
  );
}

function diff(a: Plan, b: Plan): HTMLElement {
  const revs = (p: Plan) => {
    const m = new Map<string, number>();
    const r = p.inputs.shelfRevisions;
    for (const [kind, list] of [
      ['species', r.species],
      ['species', r.candidates],
      ['chemical', r.chemicals],
    ] as const)
      for (const x of list) m.set(`${kind} ${x.id}`, x.revision);
    return m;
  };
  const ra = revs(a);
  const rb = revs(b);
  const changed: string[] = [];
  for (const k of new Set([...ra.keys(), ...rb.keys()])) {
    const x = ra.get(k);
    const y = rb.get(k);
    if (x !== y) changed.push(`${k}: ${x === undefined ? 'not used' : `revision ${x}`} → ${y === undefined ? 'not used' : `revision ${y}`}`);
  }
  const ids = [...new Set([...a.result.candidates.map((c) => c.species), ...b.result.candidates.map((c) => c.species)])];
  const dose = (c: Candidate | undefined) => (!c ? 'not in the plan' : !c.feasible ? `does not cross (${(c.reason ?? 'no reason given').replace(/-/g, ' ')})` : c.anyDose ? 'any dose' : amount(c.species, c.threshold!.density));
  const band = (c: Candidate | undefined) => (!c?.band ? '—' : c.band.feasibleFraction === 0 && c.band.alreadyPast === 0 ? 'no draw crosses below the cap' : `${c.band.p05 === null ? 'above the cap' : amount(c.species, c.band.p05)} – ${c.band.p95 === null ? 'above the cap' : amount(c.species, c.band.p95)}`);
  const state = (c: Candidate | undefined) => c?.atMargin?.state ?? '—';
  const ratio = (x: Candidate | undefined, y: Candidate | undefined) => {
    const p = x?.threshold?.density;
    const q = y?.threshold?.density;
    return p && q && x!.feasible && y!.feasible ? `× ${formatNumber(q / p, 3)}` : '';
  };
  const rows = ids.map((sid) => {
    const x = a.result.candidates.find((c) => c.species === sid);
    const y = b.result.candidates.find((c) => c.species === sid);
    const same = dose(x) === dose(y) && band(x) === band(y) && state(x) === state(y);
    return h(
      'tr',
      same ? null : { class: 'changed' },
      h('td', null, sid),
      h('td', null, `${x?.rank ?? '—'} → ${y?.rank ?? '—'}`),
      h('td', null, dose(x), ' → ', h('strong', null, dose(y)), ' ', h('span', { class: 'muted ratio' }, ratio(x, y))),
      h('td', null, band(x), ' → ', band(y)),
      h('td', null, `${state(x)} → ${state(y)}`),
      h('td', null, same ? 'unchanged' : 'changed'),
    );
  });
  return h(
    'div',
    { class: 'diff card' },
    h('h3', null, 'What changed: this plan → ', h('a', { href: `/plans/${b.id}` }, `plan ${b.id}`)),
    changed.length ? h('div', null, h('p', null, 'Shelf records that changed since this plan:'), h('ul', null, changed.map((t) => h('li', null, t)))) : h('p', null, 'No shelf record this plan used has changed: the numbers below should agree (the engine version may differ).'),
    h(
      'table',
      { class: 'diff-table', 'aria-label': 'Differences per candidate' },
      h('thead', null, h('tr', null, ['Candidate', 'Rank', 'Smallest dose (old → new)', 'Band 5–95 % (old → new)', 'State at the margin dose', ''].map((t) => h('th', { scope: 'col' }, t)))),
      h('tbody', null, rows),
    ),
    b.result.warnings.length !== a.result.warnings.length ? h('p', { class: 'flag' }, `The new plan has ${b.result.warnings.length} general warning(s), this one ${a.result.warnings.length}: read them on the new plan.`) : null,
    h('p', null, h('a', { class: 'button', href: `/plans/${b.id}` }, `Open the new plan (${b.id})`)),
  );
}

void load();
