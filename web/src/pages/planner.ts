/**
 * The Planner page (/planner): compose a screening request from the shelf — a base of several species
 * at their amounts, chemical levels, the chamber, the boundary asked about, how the dopant is dosed, the
 * pool of candidates, the Monte Carlo band and the optional state map and fuel sweep — and run it as a
 * job (POST /api/plans, progress bar, Cancel). When the job is done the page goes to the stored plan
 * (/plans/<id>), which shows the results. Stored plans are listed (GET /api/plans, newest first), and
 * any one of them can be loaded back into the form (`/planner?from=<id>`: its request as it was sent).
 */
import { mountPage } from '../lib/layout.js';
import './planner.css';
import { api, ApiError, type Problem } from '../lib/api.js';
import { debounce, field, h, put, uid, type Child } from '../lib/dom.js';
import { quantityField, typedText, type Quantity, type QuantityField, type ReadAnswer } from '../lib/fields.js';
import { followJob, jobOutcome, jobView, type Job } from '../lib/job.js';

const page = mountPage('Planner', 'planner');

// ---------------------------------------------------------------- the shelf

interface ShelfItem {
  id: string;
  name: string;
  kind?: 'colloid' | 'enzyme' | 'other' | null;
  retired?: boolean;
}
interface ListAnswer<T> {
  items: T[];
  total: number;
}
let SPECIES: ShelfItem[] = [];
let CHEMICALS: ShelfItem[] = [];
const speciesById = (id: string) => SPECIES.find((s) => s.id === id);

/** Every active item of one kind, page by page (never a silent cut). */
async function loadAll(path: string): Promise<ShelfItem[]> {
  const out: ShelfItem[] = [];
  for (let offset = 0; ; offset += 500) {
    const p = await api<ListAnswer<ShelfItem>>(`${path}?limit=500&offset=${offset}`);
    out.push(...p.items.map((x) => ({ id: x.id, name: x.name, kind: x.kind ?? null, retired: x.retired ?? false })));
    if (p.items.length < 500 || out.length >= p.total) break;
  }
  return out;
}

// ---------------------------------------------------------------- small controls

function select(options: { value: string; label: string }[], value?: string, attrs: Record<string, string> = {}): HTMLSelectElement {
  const s = h('select', attrs, options.map((o) => h('option', { value: o.value }, o.label)));
  if (value !== undefined) setSelect(s, value);
  return s;
}

/** Select a value, adding it as an option marked "not on the shelf" when the list lacks it (a loaded plan's id). */
function setSelect(s: HTMLSelectElement, value: string, missingLabel = `${value} (not on the shelf, or retired)`): void {
  if (![...s.options].some((o) => o.value === value)) s.append(h('option', { value }, missingLabel));
  s.value = value;
}

const speciesOptions = () => SPECIES.map((s) => ({ value: s.id, label: `${s.id} — ${s.name}${s.kind ? ` (${s.kind})` : ''}` }));
const chemicalOptions = () => CHEMICALS.map((c) => ({ value: c.id, label: `${c.id} — ${c.name}` }));

interface Radios {
  el: HTMLFieldSetElement;
  get(): string;
  set(v: string): void;
  onChange(f: () => void): void;
}
/** A group of radio buttons, each with its meaning in words. */
function radios(legend: string, opts: { value: string; label: string; hint: string }[], value: string): Radios {
  const name = uid('r');
  const inputs = opts.map((o) => h('input', { type: 'radio', name, value: o.value, id: uid('r'), ...(o.value === value ? { checked: true } : {}) }));
  const el = h(
    'fieldset',
    { class: 'choices' },
    h('legend', null, legend),
    opts.map((o, i) => h('div', { class: 'choice' }, inputs[i], h('label', { for: inputs[i]!.id }, h('strong', null, o.label), ' — ', o.hint))),
  );
  return {
    el,
    get: () => inputs.find((i) => i.checked)?.value ?? value,
    set(v) {
      for (const i of inputs) i.checked = i.value === v;
    },
    onChange(f) {
      for (const i of inputs) i.addEventListener('change', f);
    },
  };
}

function numberInput(value: number | string, min: number, max: number, step = 1): HTMLInputElement {
  return h('input', { type: 'number', value: String(value), min, max, step, class: 'num' });
}

function checkbox(label: string, checked = false): { el: HTMLElement; input: HTMLInputElement } {
  const input = h('input', { type: 'checkbox', id: uid('c'), ...(checked ? { checked: true } : {}) });
  return { input, el: h('div', { class: 'check' }, input, h('label', { for: input.id }, label)) };
}

/** The uncertainty box of a row: a short placeholder (its label for screen readers says the rest). */
function shortSd(f: QuantityField): QuantityField {
  if (f.sdInput) {
    f.sdInput.placeholder = 'optional';
    f.sdInput.title = 'standard uncertainty (optional): drawn with the shelf values in the band';
  }
  return f;
}

// ---------------------------------------------------------------- base species rows

type AmountForm = 'volumeFraction' | 'density' | 'massConcentration' | 'molarConcentration';
const FORMS: Record<AmountForm, { label: string; quantity: Quantity; example: string }> = {
  volumeFraction: { label: 'volume fraction', quantity: 'dimensionless', example: '0.1 %' },
  density: { label: 'number density', quantity: 'numberDensity', example: '1e8 /mL' },
  massConcentration: { label: 'mass concentration', quantity: 'massDensity', example: '10 ug/mL' },
  molarConcentration: { label: 'molar concentration', quantity: 'concentration', example: '10 nM' },
};
const FORM_KEYS = Object.keys(FORMS) as AmountForm[];
const defaultForm = (id: string): AmountForm => (speciesById(id)?.kind === 'enzyme' ? 'molarConcentration' : 'volumeFraction');

interface BaseRow {
  el: HTMLElement;
  species: HTMLSelectElement;
  form: HTMLSelectElement;
  amount: QuantityField;
  /** the amount as the request carries it: { id, <form>: value } */
  value(): Record<string, unknown>;
}
const baseRows: BaseRow[] = [];
const baseList = h('div', { class: 'rows' });

function addBaseRow(init: { id?: string; form?: AmountForm; amount?: unknown } = {}): BaseRow {
  const id = init.id ?? SPECIES.find((s) => !baseRows.some((r) => r.species.value === s.id))?.id ?? SPECIES[0]?.id ?? '';
  const species = select(speciesOptions(), id);
  let form: AmountForm = init.form ?? defaultForm(id);
  const formSel = select(
    FORM_KEYS.map((k) => ({ value: k, label: FORMS[k].label })),
    form,
  );
  const holder = h('div', { class: 'amount' });
  const make = (value: unknown) => shortSd(quantityField({ label: `amount (${FORMS[form].label})`, quantity: FORMS[form].quantity, sign: 'nonnegative', value, withSd: true, placeholder: `e.g. ${FORMS[form].example}`, required: true }));
  const row: BaseRow = {
    el: h('div', { class: 'row base-row', role: 'group' }),
    species,
    form: formSel,
    amount: make(init.amount ?? FORMS[form].example),
    value() {
      const v = row.amount.value();
      return { id: species.value, [form]: v ?? '' };
    },
  };
  holder.append(row.amount.el);
  const swap = (next: AmountForm, value: unknown) => {
    form = next;
    formSel.value = next;
    row.amount = make(value);
    holder.replaceChildren(row.amount.el);
  };
  formSel.addEventListener('change', () => swap(formSel.value as AmountForm, FORMS[formSel.value as AmountForm].example));
  species.addEventListener('change', () => {
    // an untouched example amount follows the species' kind (an enzyme in nM, a colloid as a volume fraction)
    const typed = row.amount.input.value.trim();
    const next = defaultForm(species.value);
    if (next !== form && (typed === '' || typed === FORMS[form].example)) swap(next, FORMS[next].example);
    renumber();
    refreshCandidates();
  });
  const remove = h('button', { type: 'button', class: 'secondary small' }, 'Remove');
  remove.addEventListener('click', () => {
    const i = baseRows.indexOf(row);
    if (i >= 0) baseRows.splice(i, 1);
    row.el.remove();
    renumber();
    refreshCandidates();
  });
  row.el.append(field('species', species), field('amount given as', formSel), holder, h('div', { class: 'field end' }, remove));
  baseRows.push(row);
  baseList.append(row.el);
  renumber();
  return row;
}

function renumber(): void {
  baseRows.forEach((r, i) => {
    r.el.setAttribute('aria-label', `base species ${i + 1}: ${r.species.value}`);
    const rm = r.el.querySelector<HTMLButtonElement>('button');
    if (rm) {
      rm.disabled = baseRows.length === 1;
      rm.title = baseRows.length === 1 ? 'a base needs at least one species' : `remove ${r.species.value} from the base`;
      rm.setAttribute('aria-label', `Remove ${r.species.value} from the base`);
    }
  });
  chemicalRows.forEach((r) => r.el.setAttribute('aria-label', `chemical level: ${r.chemical.value}`));
}

// ---------------------------------------------------------------- chemical rows

interface ChemicalRow {
  el: HTMLElement;
  chemical: HTMLSelectElement;
  level: QuantityField;
}
const chemicalRows: ChemicalRow[] = [];
const chemicalList = h('div', { class: 'rows' });

function addChemicalRow(init: { id?: string; level?: unknown } = {}): ChemicalRow {
  const id = init.id ?? CHEMICALS.find((c) => !chemicalRows.some((r) => r.chemical.value === c.id))?.id ?? CHEMICALS[0]?.id ?? '';
  const chemical = select(chemicalOptions(), id);
  const level = shortSd(quantityField({ label: 'concentration', quantity: 'concentration', sign: 'nonnegative', value: init.level ?? '', withSd: true, placeholder: 'e.g. 200 mM', required: true }));
  const remove = h('button', { type: 'button', class: 'secondary small' }, 'Remove');
  const row: ChemicalRow = { el: h('div', { class: 'row chem-row', role: 'group' }), chemical, level };
  remove.addEventListener('click', () => {
    const i = chemicalRows.indexOf(row);
    if (i >= 0) chemicalRows.splice(i, 1);
    row.el.remove();
  });
  chemical.addEventListener('change', () => {
    renumber();
    remove.setAttribute('aria-label', `Remove ${chemical.value}`);
  });
  remove.setAttribute('aria-label', `Remove ${chemical.value}`);
  row.el.append(field('chemical', chemical), level.el, h('div', { class: 'field end' }, remove));
  chemicalRows.push(row);
  chemicalList.append(row.el);
  renumber();
  return row;
}

// ---------------------------------------------------------------- chamber, question

const walls = select(
  [
    { value: 'sealed', label: 'sealed' },
    { value: 'periodic', label: 'periodic' },
    { value: 'unbounded', label: 'unbounded' },
  ],
  'sealed',
);
const WALLS: Record<string, string> = {
  sealed: 'closed walls that nothing passes: the patterns that fit have half-wavelengths L, L/2, L/3 …',
  periodic: 'the chamber repeats after its length, like a ring channel: the patterns that fit have wavelengths L, L/2 …',
  unbounded: 'far larger than any pattern: every wavelength is allowed, the length is not used',
};
const wallsHint = h('p', { class: 'hint walls-hint', 'aria-live': 'polite' });
const length = quantityField({ label: 'length L', quantity: 'length', sign: 'positive', value: '2 mm', placeholder: 'e.g. 2 mm' });
const depth = quantityField({ label: 'depth H', quantity: 'length', sign: 'positive', value: '100 um', placeholder: 'e.g. 100 um' });
const onWalls = () => {
  wallsHint.textContent = WALLS[walls.value] ?? '';
  length.input.disabled = walls.value === 'unbounded';
};
walls.addEventListener('change', onWalls);

const boundary = radios(
  'Boundary: what should the dopant bring about?',
  [
    { value: 'stationary', label: 'stationary', hint: 'the smallest dose at which the mixture starts to cluster or demix (a pattern grows in place)' },
    { value: 'oscillatory', label: 'oscillatory', hint: 'the smallest dose at which travelling or pulsating patterns start' },
    { value: 'any', label: 'any', hint: 'the smallest dose at which anything grows, in place or travelling' },
    { value: 'restore', label: 'restore', hint: 'for a base that is already unstable: the smallest dose that makes it stay mixed again' },
  ],
  'stationary',
);
const dosing = radios(
  'Dosing: how the dopant goes in',
  [
    { value: 'add', label: 'add', hint: 'on top of the base, which stays as it is' },
    { value: 'replace', label: 'replace', hint: 'in place of part of the base, at the same total particle volume fraction' },
  ],
  'add',
);

const margin = numberInput(1.25, 1, 100, 0.05);
const maxVolumeFraction = quantityField({ label: 'cap: largest total volume fraction', quantity: 'dimensionless', sign: 'positive', placeholder: 'default 30 %' });
const maxDensity = quantityField({ label: 'cap: largest dopant dose', quantity: 'numberDensity', sign: 'positive', placeholder: 'none (e.g. 1e10 /mL)' });

// ---------------------------------------------------------------- candidates

const poolAll = radios(
  'Candidate dopants',
  [
    { value: 'all', label: 'all', hint: 'every active species on the shelf that is not in the base' },
    { value: 'chosen', label: 'chosen', hint: 'only the species ticked below' },
  ],
  'all',
);
const chosen = new Set<string>();
const filter = h('input', { type: 'search', placeholder: 'id, name or kind', autocomplete: 'off' });
const candidateBox = h('div', { class: 'candidates', role: 'group', 'aria-label': 'candidate species' });
const chosenCount = h('span', { class: 'muted', 'aria-live': 'polite' });
const pickShown = h('button', { type: 'button', class: 'secondary small' }, 'Tick all shown');
const clearPicks = h('button', { type: 'button', class: 'secondary small' }, 'Untick all');
const chooser = h('div', { class: 'chooser' }, h('div', { class: 'row' }, field('filter the list', filter), h('div', { class: 'field end' }, h('div', { class: 'actions' }, pickShown, clearPicks, chosenCount))), candidateBox);

function inBase(): Set<string> {
  return new Set(baseRows.map((r) => r.species.value));
}
function refreshCandidates(): void {
  const base = inBase();
  const q = filter.value.trim().toLowerCase();
  const pool = SPECIES.filter((s) => !base.has(s.id));
  const shown = pool.filter((s) => !q || `${s.id} ${s.name} ${s.kind ?? ''}`.toLowerCase().includes(q));
  put(
    candidateBox,
    shown.length === 0
      ? h('p', { class: 'muted' }, pool.length === 0 ? 'Every species on the shelf is in the base: there is nothing left to dope with.' : 'No species matches the filter.')
      : shown.map((s) => {
          const box = h('input', { type: 'checkbox', id: uid('cand'), value: s.id, ...(chosen.has(s.id) ? { checked: true } : {}) });
          box.addEventListener('change', () => {
            if (box.checked) chosen.add(s.id);
            else chosen.delete(s.id);
            if (box.checked) poolAll.set('chosen');
            countChosen();
          });
          return h('div', { class: 'check' }, box, h('label', { for: box.id }, h('code', null, s.id), ` ${s.name}`, s.kind ? h('span', { class: 'muted' }, ` · ${s.kind}`) : null));
        }),
  );
  countChosen();
}
function chosenIds(): string[] {
  const base = inBase();
  return [...chosen].filter((id) => !base.has(id));
}
function countChosen(): void {
  chooser.classList.toggle('dim', poolAll.get() === 'all');
  const base = inBase();
  const n = chosenIds().length;
  const pool = SPECIES.filter((s) => !base.has(s.id)).length;
  chosenCount.textContent = poolAll.get() === 'all' ? `all ${pool} species not in the base will be screened` : `${n} chosen of ${pool}`;
  refreshMapChoices();
}
filter.addEventListener('input', debounce(refreshCandidates, 120));
pickShown.addEventListener('click', () => {
  for (const b of candidateBox.querySelectorAll<HTMLInputElement>('input[type=checkbox]')) chosen.add(b.value);
  poolAll.set('chosen');
  refreshCandidates();
});
clearPicks.addEventListener('click', () => {
  chosen.clear();
  refreshCandidates();
});
poolAll.onChange(countChosen);

// ---------------------------------------------------------------- uncertainty, extras

const withBand = checkbox('Give each threshold a band from the shelf values’ uncertainties (Monte Carlo draws)', true);
const draws = numberInput(50, 0, 2000);
const seed = numberInput(1, 0, 4294967295);

const withMap = checkbox('Draw a state map (states over base level × dose, with the boundaries)');
const mapCandidate = select([{ value: '', label: 'the top-ranked candidate' }]);
const mapBase = select([{ value: '', label: 'the whole base, scaled' }]);
const mapBaseSteps = numberInput(14, 3, 80);
const mapDoseSteps = numberInput(18, 3, 80);
function refreshMapChoices(): void {
  const keepC = mapCandidate.value;
  const keepB = mapBase.value;
  const cands = poolAll.get() === 'all' ? SPECIES.filter((s) => !inBase().has(s.id)).map((s) => s.id) : chosenIds();
  put(mapCandidate, h('option', { value: '' }, 'the top-ranked candidate'), cands.map((id) => h('option', { value: id }, id)));
  put(mapBase, h('option', { value: '' }, 'the whole base, scaled'), baseRows.map((r) => h('option', { value: r.species.value }, `${r.species.value} alone`)));
  if (keepC) setSelect(mapCandidate, keepC, `${keepC} (not a candidate now)`);
  if (keepB) setSelect(mapBase, keepB, `${keepB} (not in the base now)`);
}
mapCandidate.addEventListener('focus', refreshMapChoices);
mapBase.addEventListener('focus', refreshMapChoices);

const withSweep = checkbox('Sweep a chemical’s level (every candidate’s threshold across a range of concentrations)');
const sweepChemical = select([]);
const sweepLow = quantityField({ label: 'lowest level', quantity: 'concentration', sign: 'nonnegative', value: '10 mM', placeholder: 'e.g. 10 mM' });
const sweepHigh = quantityField({ label: 'highest level', quantity: 'concentration', sign: 'positive', value: '1 M', placeholder: 'e.g. 1 M' });
const sweepSteps = numberInput(12, 2, 60);
const sweepScale = select(
  [
    { value: 'log', label: 'logarithmic' },
    { value: 'linear', label: 'linear' },
  ],
  'log',
);

const crowding = checkbox('Crowding: the particles’ excluded volume (a hard-sphere, dilute-limit correction to their diffusion)');
const temperature = quantityField({ label: 'temperature', quantity: 'temperature', sign: 'positive', placeholder: 'default 25 degC' });
const duration = quantityField({ label: 'planned observation time', quantity: 'time', sign: 'positive', placeholder: 'e.g. 30 min' });
const fieldOfView = quantityField({ label: 'width of the imaging field', quantity: 'length', sign: 'positive', placeholder: 'e.g. 500 um' });
const timeLimit = quantityField({ label: 'time limit of the job', quantity: 'time', sign: 'positive', placeholder: 'the service’s own (10 min)' });
const planName = h('input', { type: 'text', maxlength: 200, placeholder: 'default: “<boundary> screen of <base>”', class: 'wide' });
const planNotes = h('textarea', { maxlength: 5000, rows: 2, class: 'notes' });
const planAuthor = h('input', { type: 'text', maxlength: 200, placeholder: 'anonymous', autocomplete: 'name' });

/** Request fields this form does not show, kept from a loaded plan and sent as they were. */
let kept: Record<string, unknown> = {};
const keptNote = h('div', { class: 'kept', hidden: true });

// ---------------------------------------------------------------- the form

const runButton = h('button', { type: 'submit' }, 'Run the plan');
const jobBox = h('div', { class: 'job-box', 'aria-live': 'polite' });
const form = h('form', { class: 'planner', novalidate: true });

function section(title: string, intro: Child, ...body: Child[]): HTMLElement {
  return h('fieldset', { class: 'section' }, h('legend', null, title), intro ? h('p', { class: 'hint intro' }, intro) : null, body);
}
/** Fields that count only when a box is ticked: shown faded (still editable) while it is not. */
const followers: (() => void)[] = [];
function following(box: HTMLInputElement, el: HTMLElement): HTMLElement {
  const sync = () => el.classList.toggle('off', !box.checked);
  box.addEventListener('change', sync);
  followers.push(sync);
  sync();
  return el;
}
function details(summary: string, ...body: Child[]): HTMLDetailsElement {
  return h('details', { class: 'more' }, h('summary', null, summary), h('div', { class: 'more-body' }, body));
}

const addSpecies = h('button', { type: 'button', class: 'secondary' }, '+ Add a species to the base');
addSpecies.addEventListener('click', () => {
  const r = addBaseRow();
  refreshCandidates();
  r.species.focus();
});
const addChemical = h('button', { type: 'button', class: 'secondary' }, '+ Add a chemical level');
addChemical.addEventListener('click', () => addChemicalRow().chemical.focus());

const loadSelect = select([{ value: '', label: 'choose a stored plan…' }]);
const loadButton = h('button', { type: 'button', class: 'secondary' }, 'Load its request');
loadButton.addEventListener('click', () => {
  if (loadSelect.value) void loadPlan(Number(loadSelect.value));
});
const startFrom = h('div', { class: 'card start-from' }, h('div', { class: 'row' }, field('Start from a stored plan', loadSelect, 'its request, as it was sent, fills the form; change it and run a new plan'), h('div', { class: 'field end' }, loadButton)));

function buildForm(): void {
  form.append(
    section('Base mixture', 'The species already in the sample and their amounts: a volume fraction (0.1 %), a number density (1e8 /mL), a mass concentration (10 ug/mL) or, for enzymes, a molar concentration (10 nM). The ± field takes a standard uncertainty, drawn with the rest in the band.', baseList, h('div', { class: 'actions' }, addSpecies)),
    section('Chemical levels', 'One row per chemical at the start (e.g. 200 mM of peroxide). A chemical the species use but not listed here is taken as absent (0), and the plan warns of it.', chemicalList, h('div', { class: 'actions' }, addChemical)),
    section('Chamber', null, h('div', { class: 'row' }, field('walls', walls), length.el, depth.el), wallsHint, h('p', { class: 'hint' }, 'The depth H is used for the settling check; without it the plan says settling was not checked.')),
    section('Question', null, boundary.el, dosing.el, h('div', { class: 'row' }, field('margin (× the threshold)', margin, 'the plan also reports the mixture at this multiple of each threshold dose'), maxVolumeFraction.el, maxDensity.el)),
    section('Candidates', 'Each candidate is screened on its own: the smallest dose of it that crosses the boundary.', poolAll.el, chooser),
    section(
      'Uncertainty',
      null,
      withBand.el,
      following(withBand.input, h('div', { class: 'row' }, field('draws', draws, '0 – 2000; more draws take longer'), field('seed', seed, 'same seed, same numbers'))),
    ),
    details(
      'State map, fuel sweep (optional)',
      withMap.el,
      following(withMap.input, h('div', { class: 'row' }, field('candidate', mapCandidate), field('base varied', mapBase), field('base steps', mapBaseSteps, '3 – 80'), field('dose steps', mapDoseSteps, '3 – 80'))),
      withSweep.el,
      following(withSweep.input, h('div', { class: 'row' }, field('chemical', sweepChemical), sweepLow.el, sweepHigh.el, field('levels', sweepSteps, '2 – 60'), field('spacing', sweepScale))),
    ),
    details('Conditions, time limit, name (optional)', crowding.el, h('div', { class: 'row' }, temperature.el, duration.el, fieldOfView.el, timeLimit.el), h('div', { class: 'row' }, field('plan name', planName), field('author', planAuthor, 'with an access token, its holder is the author'), field('notes', planNotes))),
    keptNote,
    h('div', { class: 'actions run' }, runButton, h('span', { class: 'muted' }, 'The plan runs as a job on the service; when it is done this page opens the stored plan with its results.')),
    jobBox,
  );
  onWalls();
}

// ---------------------------------------------------------------- reading the form

/** A quantity field's value, or undefined when empty. */
const q = (f: QuantityField) => f.value();

/** Read a dimensionless typed value ("30 %") as the number the request needs. */
async function readNumber(f: QuantityField): Promise<number | undefined> {
  const v = f.value();
  if (v === undefined) return undefined;
  const r = await api<ReadAnswer>('/api/units/read', { body: { value: typeof v === 'string' ? v : v.value, quantity: 'dimensionless', sign: 'positive' } });
  if (!r.ok) throw new ApiError(400, r.error, r.message, r);
  return r.si;
}

const intOf = (el: HTMLInputElement) => (el.value.trim() === '' ? NaN : Number(el.value));

async function requestFromForm(): Promise<Record<string, unknown>> {
  const chemicals: Record<string, unknown> = {};
  for (const r of chemicalRows) {
    const v = q(r.level);
    if (v !== undefined) chemicals[r.chemical.value] = v;
  }
  const chamber: Record<string, unknown> = { walls: walls.value };
  if (walls.value !== 'unbounded' && q(length) !== undefined) chamber.length = q(length);
  if (q(depth) !== undefined) chamber.depth = q(depth);
  const conditions: Record<string, unknown> = { ...((kept.conditions as Record<string, unknown> | undefined) ?? {}) };
  if (q(temperature) !== undefined) conditions.temperature = q(temperature);
  if (q(duration) !== undefined) conditions.duration = q(duration);
  if (q(fieldOfView) !== undefined) conditions.fieldOfView = q(fieldOfView);
  const { conditions: _c, stateMap: keptMap, ...rest } = kept;
  const body: Record<string, unknown> = {
    ...rest,
    base: baseRows.map((r) => r.value()),
    chemicals,
    chamber,
    boundary: boundary.get(),
    dosing: dosing.get(),
    candidates: poolAll.get() === 'all' ? 'all' : chosenIds(),
    margin: Number(margin.value),
  };
  if (crowding.input.checked) body.crowding = true;
  if (Object.keys(conditions).length > 0) body.conditions = conditions;
  const mvf = await readNumber(maxVolumeFraction);
  if (mvf !== undefined) body.maxVolumeFraction = mvf;
  if (q(maxDensity) !== undefined) body.maxDensity = q(maxDensity);
  // an empty or odd number goes as it is (null) and the service's answer is shown beside the field: never a silent drop
  if (withBand.input.checked) body.uncertainty = { samples: intOf(draws), seed: intOf(seed) };
  if (withMap.input.checked) {
    body.stateMap = {
      ...((keptMap as Record<string, unknown> | undefined) ?? {}),
      ...(mapCandidate.value ? { candidate: mapCandidate.value } : {}),
      ...(mapBase.value ? { baseSpecies: mapBase.value } : {}),
      baseSteps: intOf(mapBaseSteps),
      doseSteps: intOf(mapDoseSteps),
    };
  }
  if (withSweep.input.checked) body.fuelSweep = { chemical: sweepChemical.value, range: [q(sweepLow) ?? '', q(sweepHigh) ?? ''], steps: intOf(sweepSteps), scale: sweepScale.value };
  if (q(timeLimit) !== undefined) body.timeLimit = q(timeLimit);
  if (planName.value.trim()) body.name = planName.value.trim();
  if (planNotes.value.trim()) body.notes = planNotes.value.trim();
  if (planAuthor.value.trim()) body.author = planAuthor.value.trim();
  return body;
}

// ---------------------------------------------------------------- problems next to their fields

/** The field a problem's path (`base[1].volumeFraction`, `species[0].id`, `chemicals.h2o2`, …) belongs to. */
function fieldFor(path: string): HTMLElement | null {
  const wrap = (el: HTMLElement | null | undefined) => (el ? (el.closest<HTMLElement>('.field') ?? el) : null);
  let m = /^(?:base|species)\[(\d+)\](?:\.(\w+))?/.exec(path);
  if (m) {
    const r = baseRows[Number(m[1])];
    if (!r) return null;
    return m[2] === 'id' ? wrap(r.species) : r.amount.el;
  }
  m = /^chemicals\.([^.[]+)/.exec(path);
  if (m) return chemicalRows.find((r) => r.chemical.value === m![1])?.level.el ?? null;
  if (path === 'chemicals') return chemicalList;
  if (path.startsWith('chamber.length')) return length.el;
  if (path.startsWith('chamber.depth')) return depth.el;
  if (path.startsWith('chamber')) return wrap(walls);
  if (path.startsWith('candidates')) return chooser;
  if (path.startsWith('uncertainty.samples')) return wrap(draws);
  if (path.startsWith('uncertainty.seed')) return wrap(seed);
  if (path.startsWith('margin')) return wrap(margin);
  if (path.startsWith('maxVolumeFraction')) return maxVolumeFraction.el;
  if (path.startsWith('maxDensity')) return maxDensity.el;
  if (path.startsWith('stateMap.candidate')) return wrap(mapCandidate);
  if (path.startsWith('stateMap.baseSpecies')) return wrap(mapBase);
  if (path.startsWith('stateMap.baseSteps')) return wrap(mapBaseSteps);
  if (path.startsWith('stateMap.doseSteps')) return wrap(mapDoseSteps);
  if (path.startsWith('fuelSweep.range[0]')) return sweepLow.el;
  if (path.startsWith('fuelSweep.range[1]')) return sweepHigh.el;
  if (path.startsWith('fuelSweep.steps')) return wrap(sweepSteps);
  if (path.startsWith('fuelSweep.chemical')) return wrap(sweepChemical);
  if (path.startsWith('timeLimit')) return timeLimit.el;
  if (path.startsWith('conditions.temperature')) return temperature.el;
  if (path.startsWith('conditions.duration')) return duration.el;
  if (path.startsWith('conditions.fieldOfView')) return fieldOfView.el;
  if (path.startsWith('name')) return wrap(planName);
  if (path.startsWith('notes')) return wrap(planNotes);
  if (path.startsWith('author')) return wrap(planAuthor);
  return null;
}

// a field's problem goes when its value is changed
const settled = (e: Event) => {
  const el = (e.target as Element | null)?.closest('.has-problem');
  if (!el) return;
  el.classList.remove('has-problem');
  for (const p of el.querySelectorAll(':scope > .problem')) p.remove();
};
form.addEventListener('input', settled);
form.addEventListener('change', settled);

function clearProblems(): void {
  for (const p of form.querySelectorAll('.problem')) p.remove();
  for (const p of form.querySelectorAll('.has-problem')) p.classList.remove('has-problem');
}

/** Show each problem beside its field (opening a folded section); answer the ones without a field. */
function showProblems(problems: Problem[]): Problem[] {
  const rest: Problem[] = [];
  let first: HTMLElement | null = null;
  for (const p of problems) {
    const el = fieldFor(p.path);
    if (!el) {
      rest.push(p);
      continue;
    }
    el.classList.add('has-problem');
    el.append(h('p', { class: 'problem', role: 'alert' }, p.message));
    const d = el.closest('details');
    if (d) d.open = true;
    first ??= el;
  }
  first?.scrollIntoView({ block: 'center' });
  first?.querySelector<HTMLElement>('input, select')?.focus();
  return rest;
}

/** A refused request or a failed job: the service's words at the top, each problem beside its field. */
function refused(e: unknown, head?: string): void {
  if (e instanceof ApiError && e.problems.length > 0) {
    showProblems(e.problems);
    page.say(
      h(
        'span',
        null,
        head ?? 'The service refused the plan: ',
        e.problems.length === 1 ? e.problems[0]!.message : `${e.problems.length} problems, each shown beside its field.`,
        ' ',
        h('span', { class: 'muted' }, `(${e.problems.map((p) => (p.path ? `${p.path}: ${p.message}` : p.message)).join('; ')})`),
      ),
      'error',
    );
    return;
  }
  if (head) page.say(`${head}${e instanceof Error ? e.message : String(e)}`, 'error');
  else page.fail(e);
}

// ---------------------------------------------------------------- running

let running = false;
form.addEventListener('submit', (ev) => {
  ev.preventDefault();
  void run();
});

async function run(): Promise<void> {
  if (running) return;
  page.clear();
  clearProblems();
  // what the fields already said could not be read is said again here, and nothing is sent
  const unreadable: Problem[] = [];
  baseRows.forEach((r, i) => {
    if (r.amount.invalid() || r.amount.value() === undefined) unreadable.push({ path: `base[${i}].amount`, message: r.amount.value() === undefined ? 'give an amount' : 'this amount cannot be read: see the message under it' });
  });
  for (const r of chemicalRows) if (r.level.invalid()) unreadable.push({ path: `chemicals.${r.chemical.value}`, message: 'this level cannot be read' });
  const others: [QuantityField, string][] = [
    [length, 'chamber.length'],
    [depth, 'chamber.depth'],
    [maxVolumeFraction, 'maxVolumeFraction'],
    [maxDensity, 'maxDensity'],
    [timeLimit, 'timeLimit'],
    [temperature, 'conditions.temperature'],
    [duration, 'conditions.duration'],
    [fieldOfView, 'conditions.fieldOfView'],
  ];
  for (const [f, path] of others) if (f.invalid()) unreadable.push({ path, message: 'this value cannot be read' });
  if (poolAll.get() === 'chosen' && chosenIds().length === 0) unreadable.push({ path: 'candidates', message: 'tick at least one candidate, or choose “all”' });
  const ids = baseRows.map((r) => r.species.value);
  ids.forEach((id, i) => {
    if (ids.indexOf(id) !== i) unreadable.push({ path: `base[${i}].id`, message: `${id} is in the base twice: give it once` });
  });
  if (unreadable.length > 0) {
    showProblems(unreadable);
    page.say(`Nothing was sent: ${unreadable.length === 1 ? unreadable[0]!.message : `${unreadable.length} fields need attention (each is marked)`}.`, 'error');
    return;
  }
  running = true;
  runButton.disabled = true;
  put(jobBox);
  try {
    const body = await requestFromForm();
    const job = await api<Job<{ planId: number }>>('/api/plans', { body });
    const view = jobView('Computing the plan');
    jobBox.append(view.el);
    view.onCancel(() => page.say('Cancelling…'));
    const ended = await followJob(job, (j) => view.update(j));
    if (ended.state === 'done' && ended.result) {
      const id = ended.result.planId;
      const href = `/plans/${id}`;
      page.say(h('span', null, `Plan ${id} is stored. Opening it… `, h('a', { href }, `open plan ${id}`)), 'ok');
      void refreshPlans();
      setTimeout(() => location.assign(href), 300);
      return;
    }
    if (ended.state === 'cancelled') page.say('The plan was cancelled: nothing was stored. Change the request and run it again when you like.');
    else if (ended.state === 'timed-out') page.say(`The plan hit its time limit and was stopped: nothing was stored. Ask for fewer candidates or draws, or a longer time limit. (${jobOutcome(ended)})`, 'error');
    else {
      const err = (ended.error ?? {}) as Record<string, unknown>;
      const asError = new ApiError(Number(err.statusCode ?? 500), String(err.error ?? 'failed'), String(err.message ?? 'no reason given'), err);
      refused(asError, 'The plan failed and nothing was stored: ');
    }
  } catch (e) {
    refused(e);
  } finally {
    running = false;
    runButton.disabled = false;
  }
}

// ---------------------------------------------------------------- stored plans

interface PlanItem {
  id: number;
  name: string;
  author: string;
  createdAt: string;
  rerunOf: number | null;
  request: Record<string, unknown>;
}
const PAGE_SIZE = 10;
let plansOffset = 0;
const plansBox = h('div', { class: 'plans', 'aria-live': 'polite' });

function when(iso: string): string {
  const d = new Date(iso);
  return Number.isNaN(d.getTime()) ? iso : d.toLocaleString(undefined, { year: 'numeric', month: 'short', day: 'numeric', hour: '2-digit', minute: '2-digit' });
}
/** A base entry of a stored request as typed: `ptj-1um-b09 at 0.1 %`. */
function baseText(b: unknown): string {
  const o = (b ?? {}) as Record<string, unknown>;
  const k = FORM_KEYS.find((f) => o[f] !== undefined);
  if (!k) return String(o.id ?? '?');
  const t = typedText(o[k]);
  return `${String(o.id)} at ${t.value}${t.sd ? ` ± ${t.sd}` : ''}`;
}
function candidatesText(c: unknown): Child {
  if (c === undefined || c === 'all') return h('span', { title: 'every active species on the shelf that was not in the base' }, 'all not in the base');
  if (Array.isArray(c)) return h('span', { title: c.join(', ') }, `${c.length}`);
  return '—';
}

async function refreshPlans(): Promise<void> {
  let p: ListAnswer<PlanItem>;
  try {
    p = await api<ListAnswer<PlanItem>>(`/api/plans?limit=${PAGE_SIZE}&offset=${plansOffset}`);
  } catch (e) {
    put(plansBox, h('p', { class: 'msg error' }, `The stored plans could not be listed: ${e instanceof Error ? e.message : String(e)}`));
    return;
  }
  if (p.total > 0 && p.items.length === 0 && plansOffset > 0) {
    plansOffset = Math.max(0, Math.floor((p.total - 1) / PAGE_SIZE) * PAGE_SIZE);
    return refreshPlans();
  }
  if (p.total === 0) {
    put(plansBox, h('div', { class: 'empty' }, h('p', null, h('strong', null, 'No plans stored yet.')), h('p', null, 'Compose a base above (the demo values are ready) and press “Run the plan”: when it is done, the plan is stored and listed here.')));
    return;
  }
  const rows = p.items.map((x) =>
    h(
      'tr',
      null,
      h('td', null, h('a', { href: `/plans/${x.id}` }, x.name), h('div', { class: 'muted' }, `plan ${x.id}${x.rerunOf !== null ? ` · rerun of plan ${x.rerunOf}` : ''} · ${x.author}`)),
      h('td', null, h('time', { datetime: x.createdAt }, when(x.createdAt))),
      h('td', null, String(x.request.boundary ?? '—'), x.request.dosing === 'replace' ? h('div', { class: 'muted' }, 'replace') : null),
      h('td', null, Array.isArray(x.request.base) ? h('ul', { class: 'plain' }, x.request.base.map((b) => h('li', null, baseText(b)))) : '—'),
      h('td', { class: 'num' }, candidatesText(x.request.candidates)),
      h(
        'td',
        null,
        h('div', { class: 'actions tight' }, h('a', { href: `/plans/${x.id}`, class: 'button secondary small', 'aria-label': `Open plan ${x.id}` }, 'Open'), h('button', { type: 'button', class: 'secondary small', 'aria-label': `Load plan ${x.id}'s request into the form`, onclick: () => void loadPlan(x.id) }, 'Load into form')),
      ),
    ),
  );
  const prev = h('button', { type: 'button', class: 'secondary small', disabled: plansOffset === 0 }, '← Newer');
  const next = h('button', { type: 'button', class: 'secondary small', disabled: plansOffset + PAGE_SIZE >= p.total }, 'Older →');
  prev.addEventListener('click', () => {
    plansOffset = Math.max(0, plansOffset - PAGE_SIZE);
    void refreshPlans();
  });
  next.addEventListener('click', () => {
    plansOffset += PAGE_SIZE;
    void refreshPlans();
  });
  put(
    plansBox,
    h(
      'table',
      { class: 'plans-table' },
      h('caption', { class: 'visually-hidden' }, 'Stored plans, newest first'),
      h('thead', null, h('tr', null, ['Plan', 'Created', 'Boundary', 'Base', 'Candidates', ''].map((t, i) => h('th', { scope: 'col', ...(i === 4 ? { class: 'num' } : {}) }, t)))),
      h('tbody', null, rows),
    ),
    h('div', { class: 'actions pager' }, prev, h('span', { class: 'muted' }, `plans ${plansOffset + 1}–${plansOffset + p.items.length} of ${p.total}, newest first`), next),
  );
}

/** The newest stored plans in the "start from" list. */
async function refreshLoadList(): Promise<void> {
  const p = await api<ListAnswer<PlanItem>>('/api/plans?limit=50');
  put(loadSelect, h('option', { value: '' }, p.total === 0 ? 'no plans stored yet' : 'choose a stored plan…'), p.items.map((x) => h('option', { value: String(x.id) }, `plan ${x.id}: ${x.name}`)));
  loadSelect.disabled = p.total === 0;
  loadButton.disabled = p.total === 0;
}

// ---------------------------------------------------------------- loading a stored request

const SHOWN = new Set(['base', 'chemicals', 'chamber', 'boundary', 'dosing', 'candidates', 'margin', 'maxVolumeFraction', 'maxDensity', 'uncertainty', 'stateMap', 'fuelSweep', 'timeLimit', 'conditions', 'crowding', 'name', 'notes', 'author']);

function clearForm(): void {
  baseRows.splice(0).forEach((r) => r.el.remove());
  chemicalRows.splice(0).forEach((r) => r.el.remove());
}

/** Fill the form with a request as it was sent. */
function fillForm(req: Record<string, unknown>, from: number | null): void {
  clearForm();
  for (const b of (req.base as Record<string, unknown>[] | undefined) ?? []) {
    const k = FORM_KEYS.find((f) => b[f] !== undefined) ?? 'volumeFraction';
    addBaseRow({ id: String(b.id), form: k, amount: b[k] });
  }
  if (baseRows.length === 0) addBaseRow();
  for (const [id, level] of Object.entries((req.chemicals as Record<string, unknown> | undefined) ?? {})) {
    const r = addChemicalRow({ id, level });
    setSelect(r.chemical, id);
  }
  const ch = (req.chamber ?? {}) as Record<string, unknown>;
  walls.value = String(ch.walls ?? 'sealed');
  length.set(ch.length ?? '');
  depth.set(ch.depth ?? '');
  onWalls();
  boundary.set(String(req.boundary ?? 'stationary'));
  dosing.set(String(req.dosing ?? 'add'));
  margin.value = String(req.margin ?? 1.25);
  maxVolumeFraction.set(req.maxVolumeFraction ?? '');
  maxDensity.set(req.maxDensity ?? '');
  chosen.clear();
  if (Array.isArray(req.candidates)) {
    for (const c of req.candidates) chosen.add(String(c));
    poolAll.set('chosen');
  } else poolAll.set('all');
  const u = req.uncertainty as { samples?: number; seed?: number } | undefined;
  withBand.input.checked = Boolean(u && (u.samples ?? 0) > 0);
  draws.value = String(u?.samples ?? 50);
  seed.value = String(u?.seed ?? 1);
  const sm = req.stateMap as Record<string, unknown> | undefined;
  withMap.input.checked = Boolean(sm);
  refreshMapChoices();
  mapCandidate.value = '';
  mapBase.value = '';
  if (sm?.candidate) setSelect(mapCandidate, String(sm.candidate));
  if (sm?.baseSpecies) setSelect(mapBase, String(sm.baseSpecies));
  mapBaseSteps.value = String(sm?.baseSteps ?? 14);
  mapDoseSteps.value = String(sm?.doseSteps ?? 18);
  const fs = req.fuelSweep as { chemical?: string; range?: unknown[]; steps?: number; scale?: string } | undefined;
  withSweep.input.checked = Boolean(fs);
  if (fs?.chemical) setSelect(sweepChemical, fs.chemical);
  sweepLow.set(fs?.range?.[0] ?? '10 mM');
  sweepHigh.set(fs?.range?.[1] ?? '1 M');
  sweepSteps.value = String(fs?.steps ?? 12);
  sweepScale.value = fs?.scale ?? 'log';
  const cond = (req.conditions ?? {}) as Record<string, unknown>;
  crowding.input.checked = req.crowding === true;
  temperature.set(cond.temperature ?? '');
  duration.set(cond.duration ?? '');
  fieldOfView.set(cond.fieldOfView ?? '');
  timeLimit.set(req.timeLimit ?? '');
  planName.value = '';
  planNotes.value = typeof req.notes === 'string' ? req.notes : '';
  // what the form does not show is kept and sent as it was, and the page says so
  kept = Object.fromEntries(Object.entries(req).filter(([k]) => !SHOWN.has(k)));
  const keptCond = Object.fromEntries(Object.entries(cond).filter(([k]) => !['temperature', 'duration', 'fieldOfView'].includes(k)));
  if (Object.keys(keptCond).length > 0) kept.conditions = keptCond;
  const keptMap = sm ? Object.fromEntries(Object.entries(sm).filter(([k]) => ['baseRange', 'doseRange'].includes(k))) : {};
  if (Object.keys(keptMap).length > 0) kept.stateMap = keptMap;
  for (const f of followers) f();
  showKept(from);
  for (const d of form.querySelectorAll('details')) d.open = Boolean(sm || fs || req.timeLimit || req.conditions || req.crowding);
  refreshCandidates();
}

function showKept(from: number | null): void {
  const names = Object.entries(kept).flatMap(([k, v]) => (k === 'conditions' || k === 'stateMap' ? Object.keys(v as object).map((x) => `${k}.${x}`) : [k]));
  if (names.length === 0) {
    keptNote.hidden = true;
    return;
  }
  const drop = h('button', { type: 'button', class: 'secondary small' }, 'Leave them out');
  drop.addEventListener('click', () => {
    kept = {};
    keptNote.hidden = true;
  });
  put(keptNote, h('p', null, `Kept from plan ${from ?? '?'} as they were (this form does not show them), and sent with the new request: `, names.map((n, i) => [i > 0 ? ', ' : '', h('code', null, n)]), '. ', drop));
  keptNote.hidden = false;
}

async function loadPlan(id: number): Promise<void> {
  page.clear();
  clearProblems();
  try {
    const plan = await api<{ id: number; name: string; request: Record<string, unknown> }>(`/api/plans/${id}`);
    fillForm(plan.request, plan.id);
    history.replaceState(null, '', `/planner?from=${plan.id}`);
    loadSelect.value = String(plan.id);
    page.say(h('span', null, `The form holds the request of plan ${plan.id} (“${plan.name}”) as it was sent. Change it and run: a new plan is stored, and `, h('a', { href: `/plans/${plan.id}` }, `plan ${plan.id}`), ' stays as it is.'), 'ok');
    window.scrollTo({ top: 0 });
  } catch (e) {
    page.fail(e);
  }
}

// ---------------------------------------------------------------- start

async function start(): Promise<void> {
  page.main.append(
    h('h1', null, 'Planner'),
    h(
      'p',
      { class: 'lede' },
      'Which dopant, and how little of it, tips a mixture over a boundary? Compose the base from the shelf, choose the candidates and the boundary, and run: for every candidate the plan finds the smallest dose that crosses, with a band from the shelf values’ uncertainties. The stored plan’s page shows the results and leads to each bench sheet, which carries the safety cautions; local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence over anything brink prints.',
    ),
    startFrom,
    form,
    h('h2', { id: 'stored' }, 'Stored plans'),
    plansBox,
  );
  try {
    [SPECIES, CHEMICALS] = await Promise.all([loadAll('/api/species'), loadAll('/api/chemicals')]);
  } catch (e) {
    page.fail(e);
    return;
  }
  buildForm();
  put(sweepChemical, chemicalOptions().map((o) => h('option', { value: o.value }, o.label)));
  if (SPECIES.length === 0) {
    form.prepend(h('div', { class: 'empty' }, h('p', null, h('strong', null, 'The shelf has no species yet.')), h('p', null, 'A plan is composed from the shelf: ', h('a', { href: '/shelf/new' }, 'add a species'), ' (or import a shelf on the ', h('a', { href: '/' }, 'Shelf'), ' page) first.')));
    runButton.disabled = true;
  }
  const from = Number(new URLSearchParams(location.search).get('from'));
  if (Number.isInteger(from) && from > 0) await loadPlan(from);
  else {
    // the demo shelf's defaults, so that a new user can press Run at once
    addBaseRow({ id: SPECIES.some((s) => s.id === 'ptj-1um-b09') ? 'ptj-1um-b09' : SPECIES[0]?.id, form: 'volumeFraction', amount: '0.1 %' });
    if (CHEMICALS.length > 0) addChemicalRow({ id: CHEMICALS.some((c) => c.id === 'h2o2') ? 'h2o2' : CHEMICALS[0]!.id, level: '200 mM' });
    if (CHEMICALS.some((c) => c.id === 'h2o2')) sweepChemical.value = 'h2o2';
    refreshCandidates();
  }
  await Promise.all([refreshPlans(), refreshLoadList()]);
}

void start().catch((e) => page.fail(e));
