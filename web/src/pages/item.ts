/**
 * A shelf item's page (/shelf/species/:id, /shelf/chemicals/:id, /shelf/new?kind=species|chemical):
 * the create/edit form (values with units and uncertainties, provenance, couplings), saved with the
 * revision it was based on (a 409 shows the shelf's values beside the form's); the revision history
 * with what each revision changed; retire and restore; a species' stored measurements (apply one);
 * a chemical's hazard bands.
 */
import { mountPage } from '../lib/layout.js';
import { api, ApiError, type Problem } from '../lib/api.js';
import { field, h, put, uid, type Child } from '../lib/dom.js';
import { quantityField, type Quantity, type QuantityField } from '../lib/fields.js';
import { fmtSi, formatNumber } from '../lib/format.js';
import { fieldForProblem, problemWords, provenanceText, recordDiff, revisionChanges, sideBySide, type FieldChange, type RevisionLike } from './shelf-logic.js';
import './shelf.css';

type Obj = Record<string, unknown>;
type ShelfType = 'species' | 'chemical';

interface Revision extends RevisionLike {
  id: string;
  name: string;
  kind: string | null;
  typed: Obj;
}

const page = mountPage('Shelf item', 'shelf');
const routeMatch = /^\/shelf\/(species|chemicals)\/([^/]+)\/?$/.exec(location.pathname);
const type: ShelfType = routeMatch ? (routeMatch[1] === 'species' ? 'species' : 'chemical') : new URLSearchParams(location.search).get('kind') === 'chemical' ? 'chemical' : 'species';
const itemId: string | null = routeMatch?.[2] ? decodeURIComponent(routeMatch[2]) : null;
const apiBase = type === 'species' ? '/api/species' : '/api/chemicals';
const pageBase = type === 'species' ? '/shelf/species' : '/shelf/chemicals';
const noun = type === 'species' ? 'species' : 'chemical';

/** the revision the form was filled from (sent as baseRevision), and its stored record */
let base = 0;
let baseRecord: unknown = null;
let chemicals: { id: string; name: string; retired: boolean }[] = [];

const head = h('div', { class: 'item-head' });
const conflictBox = h('div', { id: 'conflict' });
const formBox = h('div', { id: 'form-box' });
const statusBox = h('section', { id: 'status-box', 'aria-labelledby': 'status-h' });
const measurementsBox = h('section', { id: 'measurements', 'aria-labelledby': 'measurements-h' });
const hazardsBox = h('section', { id: 'hazards', 'aria-labelledby': 'hazards-h' });
const historyBox = h('section', { id: 'history', 'aria-labelledby': 'history-h' });
const usedByBox = h('section', { id: 'used-by', 'aria-labelledby': 'used-by-h' });
page.main.append(h('p', null, h('a', { href: '/' }, '← Shelf')), head, conflictBox, formBox, statusBox, usedByBox, measurementsBox, hazardsBox, historyBox);

// ---------------------------------------------------------------- the form

/** A time as the lab reads it: `2026-12-05 03:38` (local time). */
/** A revision's action in words (the API's create, update, retire, restore, import). */
const actionWords = (a: string) => ({ create: 'created', update: 'edited', retire: 'retired', restore: 'restored', import: 'imported' })[a] ?? a;

function when(iso: string, withTime = true): string {
  const d = new Date(iso);
  if (Number.isNaN(d.getTime())) return iso;
  const p = (n: number) => String(n).padStart(2, '0');
  const day = `${d.getFullYear()}-${p(d.getMonth() + 1)}-${p(d.getDate())}`;
  return withTime ? `${day} ${p(d.getHours())}:${p(d.getMinutes())}` : day;
}

const isObj = (x: unknown): x is Obj => x !== null && typeof x === 'object' && !Array.isArray(x);
const str = (x: unknown): string => (x === undefined || x === null ? '' : String(x));

/** Where a problem of a save is shown: a field's box, by the key the API's path maps to. */
type Targets = Map<string, HTMLElement>;

interface ProvEditor {
  el: HTMLElement;
  /** the provenance, undefined when none; a string names what is missing */
  value(): Obj | undefined | string;
}

const SOURCES = ['measured', 'literature', 'estimated', 'demo'] as const;

function provEditor(p: unknown, label: string, open = false): ProvEditor {
  const o = isObj(p) ? p : {};
  const source = h('select', null, h('option', { value: '' }, '(not stated)'), SOURCES.map((s) => h('option', { value: s }, s)));
  source.value = str(o.source);
  const reference = h('input', { type: 'text', value: str(o.reference), placeholder: 'paper, data sheet, notebook page', autocomplete: 'off' });
  const date = h('input', { type: 'date', value: str(o.date) });
  const by = h('input', { type: 'text', value: str(o.by), autocomplete: 'off' });
  const measurement = typeof o.measurement === 'number' ? o.measurement : undefined;
  const summary = h('summary', null, `${label}: ${provenanceText(o) || 'not stated'}`);
  const el = h(
    'details',
    { class: 'prov', ...(open ? { open: true } : {}) },
    summary,
    field('Source', source),
    field('Reference', reference),
    field('Date', date),
    field('By', by),
    measurement !== undefined ? h('p', { class: 'muted' }, `From stored measurement ${measurement}.`) : null,
  );
  return {
    el,
    value() {
      const any = reference.value.trim() || date.value || by.value.trim();
      if (!source.value) return any ? `${label}: choose a source (measured, literature, estimated or demo)` : undefined;
      const out: Obj = { source: source.value };
      if (reference.value.trim()) out.reference = reference.value.trim();
      if (date.value) out.date = date.value;
      if (by.value.trim()) out.by = by.value.trim();
      if (measurement !== undefined) out.measurement = measurement;
      return out;
    },
  };
}

interface Coef {
  el: HTMLElement;
  qf: QuantityField;
  /** the typed value for the record, undefined when empty; a string is a problem to show */
  value(): unknown;
}

/** A coefficient: a value with units, its standard uncertainty, and its provenance. */
function coef(key: string, label: string, quantity: Quantity, sign: 'positive' | 'nonnegative' | 'any', value: unknown, hint: string, required = false): Coef {
  const qf = quantityField({ label, quantity, sign, value, withSd: true, required, name: key, placeholder: hint });
  const prov = provEditor(isObj(value) ? value.provenance : undefined, 'Provenance');
  const el = h('div', { class: 'coef', 'data-key': key }, qf.el, prov.el);
  return {
    el,
    qf,
    value() {
      const v = qf.value();
      const p = prov.value();
      if (typeof p === 'string') return { problem: p };
      if (v === undefined) return p ? { problem: `${label}: a provenance without a value; give the value or clear the provenance` } : undefined;
      if (!p && typeof v === 'string') return v;
      return { ...(typeof v === 'string' ? { value: v } : v), ...(p ? { provenance: p } : {}) };
    },
  };
}

interface Section {
  el: HTMLElement;
  /** fill `rec`; push problems found on the page itself */
  collect(rec: Obj, problems: Problem[]): void;
  targets(t: Targets): void;
}

/** Put a coefficient's typed value into `into[k]`, or its problem into `problems`. */
function putCoef(into: Obj, k: string, c: Coef, path: string, problems: Problem[]): void {
  const v = c.value();
  if (isObj(v) && typeof v.problem === 'string') problems.push({ path, message: v.problem });
  else if (v !== undefined) into[k] = v;
}

function coefSection(rec: Obj, defs: [string, string, Quantity, 'positive' | 'nonnegative' | 'any', string, boolean?][], prefix = ''): { els: HTMLElement[]; collect(into: Obj, problems: Problem[]): void; targets(t: Targets): void } {
  const made = defs.map(([k, label, q, sign, hint, req]) => ({ k, c: coef(prefix + k, label, q, sign, rec[k], hint, req ?? false) }));
  return {
    els: made.map((m) => m.c.el),
    collect(into, problems) {
      for (const m of made) putCoef(into, m.k, m.c, `record.${prefix}${m.k}`, problems);
    },
    targets(t) {
      for (const m of made) t.set(prefix + m.k, m.c.el);
    },
  };
}

function chemicalSelect(value: string, withNone: string | null): HTMLSelectElement {
  const s = h('select', null, withNone !== null ? h('option', { value: '' }, withNone) : null, chemicals.map((c) => h('option', { value: c.id }, `${c.name} (${c.id})${c.retired ? ' — retired' : ''}`)));
  if (value && !chemicals.some((c) => c.id === value)) s.append(h('option', { value }, `${value} (not on the shelf)`));
  s.value = value;
  return s;
}

interface CouplingRow {
  el: HTMLElement;
  collect(problems: Problem[], i: number): Obj;
  targets(t: Targets, i: number): void;
}

function couplingRow(c: Obj, remove: (r: CouplingRow) => void): CouplingRow {
  const chem = chemicalSelect(str(c.chemical), 'choose a chemical');
  const chemField = field('Chemical', chem);
  const a = c.activity;
  const saturating = isObj(a) && 'maxRate' in a;
  const mode = h('select', null, h('option', { value: 'none' }, 'no activity'), h('option', { value: 'constant' }, 'constant rate'), h('option', { value: 'saturating' }, 'saturating (Michaelis–Menten)'));
  mode.value = a === undefined ? 'none' : saturating ? 'saturating' : 'constant';
  const k = uid('coupling');
  const constant = coef(`${k}.activity`, 'Activity per particle', 'amountRate', 'any', saturating ? undefined : a, 'e.g. -2e-16 mol/s (< 0 consumes)');
  const sat = isObj(a) && saturating ? a : {};
  const maxRate = coef(`${k}.maxRate`, 'Maximal rate per particle', 'amountRate', 'nonnegative', sat.maxRate, 'e.g. 5e-17 mol/s');
  const michaelis = coef(`${k}.michaelis`, 'Michaelis constant', 'concentration', 'positive', sat.michaelis, 'e.g. 25 mM');
  const product = chemicalSelect(str(sat.product), 'no product');
  const productYield = h('input', { type: 'number', min: 0, max: 1000, step: 'any', value: sat.productYield === undefined ? '' : String(sat.productYield), placeholder: '1' });
  const productBox = h('div', { class: 'row' }, field('Product made', product), field('Product per fuel turned over', productYield, 'default 1; 0.5 for catalase'));
  const satBox = h('div', null, h('div', { class: 'row' }, maxRate.el, michaelis.el), productBox);
  const mobility = coef(`${k}.mobility`, 'Mobility', 'mobility', 'any', c.mobility, 'e.g. 50 um^2/(s*mM) (> 0 moves down the gradient)');
  const show = () => {
    constant.el.hidden = mode.value !== 'constant';
    satBox.hidden = mode.value !== 'saturating';
  };
  mode.addEventListener('change', show);
  show();
  const legend = h('legend', null, c.chemical ? `Coupling to ${str(c.chemical)}` : 'New coupling');
  chem.addEventListener('change', () => (legend.textContent = chem.value ? `Coupling to ${chem.value}` : 'New coupling'));
  const row: CouplingRow = {
    el: h(
      'fieldset',
      { class: 'coupling' },
      legend,
      h('div', { class: 'row' }, chemField, field('Activity', mode), h('button', { type: 'button', class: 'danger remove-coupling', onclick: () => remove(row) }, 'Remove this coupling')),
      constant.el,
      satBox,
      mobility.el,
    ),
    collect(problems, i) {
      const out: Obj = { chemical: chem.value };
      const p = `record.couplings[${i}]`;
      if (!chem.value) problems.push({ path: `${p}.chemical`, message: 'choose the chemical this coupling is to' });
      if (mode.value === 'constant') {
        putCoef(out, 'activity', constant, `${p}.activity`, problems);
        if (out.activity === undefined) problems.push({ path: `${p}.activity`, message: 'give the activity (or choose “no activity”)' });
      } else if (mode.value === 'saturating') {
        const act: Obj = {};
        putCoef(act, 'maxRate', maxRate, `${p}.activity.maxRate`, problems);
        putCoef(act, 'michaelis', michaelis, `${p}.activity.michaelis`, problems);
        if (act.maxRate === undefined) problems.push({ path: `${p}.activity.maxRate`, message: 'a saturating activity needs its maximal rate' });
        if (act.michaelis === undefined) problems.push({ path: `${p}.activity.michaelis`, message: 'a saturating activity needs its Michaelis constant' });
        act.product = product.value || null;
        if (productYield.value.trim() !== '') {
          const y = Number(productYield.value);
          if (!product.value) problems.push({ path: `${p}.activity.productYield`, message: 'a product yield needs a product: choose it' });
          else act.productYield = y;
        }
        out.activity = act;
      }
      putCoef(out, 'mobility', mobility, `${p}.mobility`, problems);
      if (out.activity === undefined && out.mobility === undefined && mode.value === 'none') problems.push({ path: p, message: 'a coupling needs an activity, a mobility or both (or remove it)' });
      return out;
    },
    targets(t, i) {
      const p = `couplings.${i}`;
      t.set(p, row.el);
      t.set(`${p}.chemical`, chemField);
      t.set(`${p}.activity`, constant.el.hidden ? satBox : constant.el);
      t.set(`${p}.activity.maxRate`, maxRate.el);
      t.set(`${p}.activity.michaelis`, michaelis.el);
      t.set(`${p}.activity.product`, productBox);
      t.set(`${p}.activity.productYield`, productBox);
      t.set(`${p}.mobility`, mobility.el);
    },
  };
  return row;
}

interface Form {
  el: HTMLFormElement;
  collect(): { record: Obj; meta: Obj; problems: Problem[] };
  targets(): Targets;
  submit: HTMLButtonElement;
}

function textInput(value: unknown, attrs: Record<string, string | boolean> = {}): HTMLInputElement {
  return h('input', { type: 'text', value: str(value), autocomplete: 'off', ...attrs });
}

function buildForm(t: Obj, onSave: () => void): Form {
  const editing = itemId !== null;
  const id = textInput(t.id, { name: 'id', required: true, ...(editing ? { readonly: true } : {}), pattern: '[A-Za-z0-9][A-Za-z0-9_.:\\-]*' });
  const name = textInput(t.name, { name: 'name', required: true });
  const idField = field('Id', id, editing ? 'an id never changes (plans refer to it)' : 'letters, digits and _ . : - ; used in plans and files; cannot change later');
  const nameField = field('Name', name, 'as on the label, with the batch');
  const sections: Section[] = [];
  const top: Obj = t;

  const identity = h('fieldset', null, h('legend', null, 'What it is'), idField, nameField);
  let kindSel: HTMLSelectElement | null = null;
  let kindField: HTMLElement | null = null;
  if (type === 'species') {
    kindSel = h('select', { name: 'kind' }, h('option', { value: 'colloid' }, 'colloid (particle)'), h('option', { value: 'enzyme' }, 'enzyme'), h('option', { value: 'other' }, 'other'));
    kindSel.value = str(t.kind) || 'colloid';
    kindField = field('Kind', kindSel);
    identity.append(kindField);
  }

  const physDefs: [string, string, Quantity, 'positive' | 'nonnegative' | 'any', string, boolean?][] =
    type === 'species'
      ? [
          ['diffusivity', 'Diffusivity', 'diffusivity', 'positive', 'e.g. 0.22 um^2/s', true],
          ['radius', 'Radius (hydrodynamic)', 'length', 'positive', 'e.g. 1 um or 5 nm', true],
          ['materialDensity', 'Material density', 'massDensity', 'positive', 'e.g. 2.0 g/mL'],
          ['molarMass', 'Molar mass', 'molarMass', 'positive', 'e.g. 250 kg/mol (enzymes)'],
        ]
      : [
          ['diffusivity', 'Diffusivity in water', 'diffusivity', 'positive', 'e.g. 1.4e-9 m^2/s', true],
          ['lossRate', 'Loss rate (first order)', 'rate', 'nonnegative', 'e.g. 0 1/s'],
          ['molarMass', 'Molar mass', 'molarMass', 'positive', 'e.g. 34.01 g/mol'],
          ['solubility', 'Solubility (a gas)', 'concentration', 'positive', 'e.g. 1.26 mM'],
        ];
  const phys = coefSection(top, physDefs);
  sections.push({ el: h('fieldset', null, h('legend', null, 'Coefficients'), h('p', { class: 'hint' }, 'Type a value with its unit and its standard uncertainty (±, same kind of unit); the SI value appears under the field as you type.'), phys.els), collect: phys.collect, targets: phys.targets });

  const stock = isObj(t.stock) ? t.stock : {};
  const stockDesc = textInput(stock.description, { name: 'stock.description', placeholder: 'e.g. 1 % w/v in water, 2 mL vial' });
  const stockDescField = field('Stock: description', stockDesc);
  const stockDefs: [string, string, Quantity, 'positive' | 'nonnegative' | 'any', string, boolean?][] =
    type === 'species'
      ? [
          ['massConcentration', 'Mass concentration', 'massDensity', 'nonnegative', 'e.g. 10 mg/mL'],
          ['density', 'Number density', 'numberDensity', 'nonnegative', 'e.g. 1e9 1/mL'],
          ['volumeFraction', 'Volume fraction', 'dimensionless', 'nonnegative', 'e.g. 0.01'],
          ['molarConcentration', 'Molar concentration', 'concentration', 'nonnegative', 'e.g. 5 uM'],
        ]
      : [
          ['concentration', 'Concentration', 'concentration', 'positive', 'e.g. 9.8 M'],
          ['massFraction', 'Mass fraction (w/w)', 'dimensionless', 'nonnegative', 'e.g. 0.30'],
          ['density', 'Density of the solution', 'massDensity', 'positive', 'e.g. 1.11 g/mL'],
        ];
  const stockSec = coefSection(stock, stockDefs, 'stock.');
  sections.push({
    el: h('fieldset', null, h('legend', null, 'Stock as kept'), h('p', { class: 'hint' }, 'What is on the shelf: give the amount the label states (one is enough).'), stockDescField, h('div', null, stockSec.els)),
    collect(rec, problems) {
      const s: Obj = {};
      stockSec.collect(s, problems);
      if (stockDesc.value.trim() || Object.keys(s).length) rec.stock = { description: stockDesc.value.trim(), ...s };
    },
    targets(tg) {
      tg.set('stock', stockDescField);
      tg.set('stock.description', stockDescField);
      stockSec.targets(tg);
    },
  });

  const rows: CouplingRow[] = [];
  const rowsBox = h('div', { id: 'couplings' });
  if (type === 'species') {
    const remove = (r: CouplingRow) => {
      rows.splice(rows.indexOf(r), 1);
      r.el.remove();
      emptyNote.hidden = rows.length > 0;
    };
    const emptyNote = h('p', { class: 'muted' }, 'No couplings: the species neither acts on nor moves in any chemical (inert). Add one per chemical it turns over or responds to.');
    const add = (c: Obj) => {
      const r = couplingRow(c, remove);
      rows.push(r);
      rowsBox.append(r.el);
      emptyNote.hidden = true;
      return r;
    };
    for (const c of Array.isArray(t.couplings) ? t.couplings : []) if (isObj(c)) add(c);
    emptyNote.hidden = rows.length > 0;
    const addButton = h('button', { type: 'button', class: 'secondary', id: 'add-coupling' }, 'Add a coupling');
    addButton.addEventListener('click', () => {
      const r = add({});
      r.el.querySelector('select')?.focus();
    });
    sections.push({
      el: h(
        'fieldset',
        null,
        h('legend', null, 'Couplings to chemicals'),
        h('p', { class: 'hint' }, 'One per chemical: the activity (turnover per particle; below zero it consumes, above zero it produces; or saturating with a Michaelis constant) and the mobility (drift per concentration gradient; above zero away from high concentration, below zero towards it).'),
        chemicals.length === 0 ? h('p', { class: 'warn' }, 'There are no chemicals on the shelf yet: ', h('a', { href: '/shelf/new?kind=chemical' }, 'add a chemical'), ' before coupling a species to it.') : null,
        emptyNote,
        rowsBox,
        addButton,
      ),
      collect(rec, problems) {
        rec.couplings = rows.map((r, i) => r.collect(problems, i));
      },
      targets(tg) {
        tg.set('couplings', rowsBox);
        rows.forEach((r, i) => r.targets(tg, i));
      },
    });
  }

  const prov = provEditor(t.provenance, 'Provenance of the item', true);
  const notes = h('textarea', { name: 'notes', rows: 3 }, str(t.notes));
  notes.classList.add('notes');
  const notesField = field('Notes', notes);
  notesField.classList.add('wide');
  const author = textInput('', { name: 'author', placeholder: 'optional' });
  const note = textInput('', { name: 'note', placeholder: editing ? 'what changed and why' : 'optional' });
  const submit = h('button', { type: 'submit', id: 'save' }, editing ? 'Save a new revision' : `Add the ${noun} to the shelf`);
  const el = h(
    'form',
    { id: 'item-form', novalidate: true, 'aria-label': `${noun} form` },
    identity,
    sections.map((s) => s.el),
    h('fieldset', null, h('legend', null, 'Where the item comes from'), prov.el, notesField),
    h('fieldset', null, h('legend', null, 'This change'), field('Your name', author, 'recorded with the revision (a token holder’s name is used when the service asks for tokens)'), field('Note', note)),
    h('div', { class: 'actions' }, submit, editing ? h('span', { class: 'muted', id: 'base-note' }, `based on revision ${base}`) : null),
  );
  el.addEventListener('submit', (e) => {
    e.preventDefault();
    onSave();
  });
  return {
    el,
    submit,
    collect() {
      const problems: Problem[] = [];
      const rec: Obj = { id: id.value.trim(), name: name.value.trim() };
      if (!rec.id) problems.push({ path: 'record.id', message: 'give an id' });
      if (!rec.name) problems.push({ path: 'record.name', message: 'give a name' });
      if (kindSel) rec.kind = kindSel.value;
      for (const s of sections) s.collect(rec, problems);
      const p = prov.value();
      if (typeof p === 'string') problems.push({ path: 'record.provenance', message: p });
      else if (p) rec.provenance = p;
      if (notes.value.trim()) rec.notes = notes.value.trim();
      const meta: Obj = {};
      if (author.value.trim()) meta.author = author.value.trim();
      if (note.value.trim()) meta.note = note.value.trim();
      return { record: rec, meta, problems };
    },
    targets() {
      const tg: Targets = new Map([
        ['id', idField],
        ['name', nameField],
        ['provenance', prov.el],
        ['notes', notesField],
      ]);
      if (kindField) tg.set('kind', kindField);
      for (const s of sections) s.targets(tg);
      return tg;
    },
  };
}

let form: Form | null = null;

/** Show each problem next to the field it names (or in the message region when none matches). */
function showProblems(problems: Problem[], intro: string): void {
  for (const old of formBox.querySelectorAll('.problem')) old.remove();
  for (const old of formBox.querySelectorAll('.has-problem')) old.classList.remove('has-problem');
  if (!form) return;
  const tg = form.targets();
  const keys = [...tg.keys()];
  const loose: Problem[] = [];
  let first: HTMLElement | null = null;
  for (const p of problems) {
    const k = fieldForProblem(p.path, keys);
    const el = k ? tg.get(k) : undefined;
    if (!el) {
      loose.push(p);
      continue;
    }
    el.classList.add('has-problem');
    // what is left of the path below the field: nothing or `value` (the value itself), `sd`, or a part of a row
    const rest = p.path.replace(/^record\./, '').replace(/\[(\d+)\]/g, '.$1').slice((k ?? '').length).replace(/^\./, '');
    const prefix = rest === '' || rest === 'value' ? '' : rest === 'sd' ? 'its uncertainty: ' : `${rest}: `;
    el.append(h('p', { class: 'problem', role: 'alert' }, `${prefix}${problemWords(p.message)}`));
    first ??= el;
  }
  page.say(
    h('span', null, `${intro}: ${problems.length} problem${problems.length === 1 ? '' : 's'}${loose.length < problems.length ? ', shown next to the fields' : ''}.`, loose.length ? h('ul', null, loose.map((p) => h('li', null, p.path ? `${p.path.replace(/^record\./, '')}: ${problemWords(p.message)}` : problemWords(p.message)))) : null),
    'error',
  );
  first?.querySelector<HTMLElement>('input, select, textarea')?.focus();
}

async function save(): Promise<void> {
  if (!form) return;
  const { record, meta, problems } = form.collect();
  put(conflictBox);
  if (problems.length) {
    showProblems(problems, 'Not saved');
    return;
  }
  showProblems([], '');
  page.clear();
  if (itemId !== null && meta.note === undefined && recordDiff(baseRecord, record, type).length === 0) {
    page.say(`Nothing to save: the form has the values of revision ${base}. (To record a note alone, write it under “This change”.)`, 'info');
    return;
  }
  form.submit.disabled = true;
  try {
    if (itemId === null) {
      const rev = await api<Revision>(apiBase, { body: { record, ...meta } });
      location.assign(`${pageBase}/${encodeURIComponent(rev.id)}?saved=${rev.revision}`);
      return;
    }
    const rev = await api<Revision>(`${apiBase}/${encodeURIComponent(itemId)}`, { method: 'PUT', body: { baseRevision: base, record, ...meta } });
    await show(rev);
    page.say(`Saved as revision ${rev.revision}.`, 'ok');
  } catch (e) {
    if (e instanceof ApiError && e.code === 'stale-revision' && isObj(e.body.current)) showConflict(e.body.current as unknown as Revision, record);
    else if (e instanceof ApiError && e.code === 'duplicate') {
      const ex = e.body.existing as Revision | undefined;
      page.say(h('span', null, `Not saved: the shelf already has a ${noun} with the id “${str(record.id)}”${ex ? ` (${ex.name})` : ''}. Choose another id, or `, h('a', { href: `${pageBase}/${encodeURIComponent(str(record.id))}` }, 'open that one'), '.'), 'error');
    } else if (e instanceof ApiError && e.problems.length) showProblems(e.problems, 'Not saved: the shelf refused some values');
    else page.fail(e);
  } finally {
    if (form) form.submit.disabled = false;
  }
}

/** 409: someone saved first. Their values beside the form's, and the two ways on. */
function showConflict(theirs: Revision, mine: Obj): void {
  const rows = sideBySide(baseRecord, theirs.record, mine, type);
  const differ = rows.filter((r) => !r.same);
  page.say('Not saved: someone changed this item after you opened it. Compare below.', 'error');
  put(
    conflictBox,
    h(
      'section',
      { class: 'card conflict', 'aria-labelledby': 'conflict-h' },
      h('h2', { id: 'conflict-h' }, `Changed since you opened it: revision ${theirs.revision} by ${theirs.author}`),
      h('p', null, `Your form was based on revision ${base}. Revision ${theirs.revision} was saved ${when(theirs.createdAt)}${theirs.note ? ` (“${theirs.note}”)` : ''}${theirs.retired ? '; the item is now retired' : ''}. ${differ.length} field${differ.length === 1 ? '' : 's'} differ${differ.length === 1 ? 's' : ''} between it and your form; ${rows.length - differ.length} are the same.`),
      h(
        'table',
        { class: 'side', id: 'side-by-side' },
        h('caption', { class: 'visually-hidden' }, 'The shelf’s current values beside yours'),
        h(
          'thead',
          null,
          h('tr', null, h('th', { scope: 'col' }, 'Field'), h('th', { scope: 'col' }, `On the shelf now (revision ${theirs.revision})`), h('th', { scope: 'col' }, 'Yours (this form)'), h('th', { scope: 'col' }, `When you opened it (revision ${base})`), h('th', { scope: 'col' }, 'Changed by')),
        ),
        h(
          'tbody',
          null,
          differ.map((r) =>
            h(
              'tr',
              { class: `differs by-${r.changedBy}` },
              h('td', null, r.label),
              h('td', null, r.theirs ?? '(absent)'),
              h('td', null, r.mine ?? '(absent)'),
              h('td', { class: 'muted' }, r.base ?? '(absent)'),
              h('td', null, { them: `${theirs.author} (since you opened it)`, me: 'you', both: 'both of you, differently', neither: '—' }[r.changedBy]),
            ),
          ),
        ),
      ),
      h(
        'div',
        { class: 'actions' },
        h('button', { type: 'button', class: 'secondary', id: 'conflict-reload', onclick: () => void reloadItem('Reloaded: the form shows the shelf’s current values; your changes were discarded.') }, `Reload revision ${theirs.revision} (discard mine)`),
        h(
          'button',
          {
            type: 'button',
            id: 'conflict-reapply',
            onclick: () => {
              base = theirs.revision;
              baseRecord = theirs.record;
              put(conflictBox);
              void save();
            },
          },
          `Save mine over revision ${theirs.revision}`,
        ),
      ),
      h('p', { class: 'hint' }, 'Saving yours makes a new revision with your values; revision ' + String(theirs.revision) + ' stays readable in the history. To merge by hand, copy the values you want to keep, reload, and type them in again.'),
    ),
  );
  conflictBox.scrollIntoView({ block: 'start' });
}

// ---------------------------------------------------------------- the rest of the page

function renderHead(rev: Revision | null): void {
  const title = rev ? rev.name : `New ${noun}`;
  document.title = `${title} — brink`;
  const parts: [string, string][] = rev
    ? [['form-box', 'Values'], ['status-box', 'Status'], type === 'species' ? ['measurements', 'Measurements'] : ['used-by', 'Species coupled to it'], ['hazards', 'Hazards'], ['history', 'Revisions']]
    : [];
  put(
    head,
    h('h1', null, title),
    parts.length ? h('nav', { class: 'item-nav', 'aria-label': 'Parts of this page' }, parts.map(([id, label]) => h('a', { href: `#${id}` }, label))) : null,
    rev
      ? h('span', { class: 'meta' }, `${type === 'species' ? `${rev.kind ?? ''} species` : 'chemical'} “${rev.id}” — revision ${rev.revision}, ${actionWords(rev.action)} by ${rev.author}, ${when(rev.createdAt)}`, rev.retired ? h('span', { class: 'tag retired' }, ' retired') : null)
      : h('span', { class: 'meta' }, type === 'species' ? 'a particle or an enzyme, with how it couples to chemicals' : 'a fuel, product or other solute species act on'),
    rev && type === 'species' ? h('a', { class: 'button secondary', href: `/calibrate?species=${encodeURIComponent(rev.id)}`, id: 'calibrate-link' }, 'Calibrate this species') : null,
  );
}

function renderStatus(rev: Revision): void {
  const note = textInput('', { placeholder: rev.retired ? 'why it is back' : 'why (used up, batch replaced…)' });
  const button = h('button', { type: 'button', class: rev.retired ? 'secondary' : 'danger', id: rev.retired ? 'restore' : 'retire' }, rev.retired ? 'Restore' : 'Retire');
  button.addEventListener('click', async () => {
    button.disabled = true;
    try {
      const r = await api<Revision>(`${apiBase}/${encodeURIComponent(rev.id)}/${rev.retired ? 'restore' : 'retire'}`, { body: { baseRevision: base, ...(note.value.trim() ? { note: note.value.trim() } : {}) } });
      await show(r);
      page.say(r.retired ? `Retired (revision ${r.revision}): hidden from the shelf list and the planner's choices, still readable here.` : `Restored (revision ${r.revision}).`, 'ok');
    } catch (e) {
      if (e instanceof ApiError && e.code === 'stale-revision') page.say(h('span', null, 'Not done: the item changed after you opened it. ', h('button', { type: 'button', class: 'secondary', onclick: () => void reloadItem('Reloaded.') }, 'Reload it'), ' and try again.'), 'error');
      else page.fail(e);
      button.disabled = false;
    }
  });
  put(
    statusBox,
    h('h2', { id: 'status-h' }, 'Status'),
    h('p', null, rev.retired ? 'Retired: not listed on the shelf nor offered to new plans. Plans made with it still read it. Restore it to use it again.' : 'In use. Retiring hides it from the shelf list and new plans; nothing is deleted and it can be restored.'),
    h('div', { class: 'row' }, field(rev.retired ? 'Note on restoring' : 'Note on retiring', note), button),
  );
}

async function renderHistory(rev: Revision): Promise<void> {
  const { revisions } = await api<{ revisions: Revision[] }>(`${apiBase}/${encodeURIComponent(rev.id)}/revisions`);
  const items = revisions.map((r, i) => ({ r, first: i === 0, changes: revisionChanges(i > 0 ? (revisions[i - 1] ?? null) : null, r, type) })).reverse();
  const diffTable = (changes: FieldChange[]): Child =>
    h(
      'table',
      { class: 'diff' },
      h('thead', null, h('tr', null, h('th', { scope: 'col' }, 'Field'), h('th', { scope: 'col' }, 'Before'), h('th', { scope: 'col' }, 'After'))),
      h('tbody', null, changes.map((c) => h('tr', null, h('td', null, c.label), h('td', { class: 'old' }, c.before ?? '(absent)'), h('td', { class: 'new' }, c.after ?? '(removed)')))),
    );
  put(
    historyBox,
    h('h2', { id: 'history-h' }, 'Revisions'),
    h('p', { class: 'muted' }, `${revisions.length} revision${revisions.length === 1 ? '' : 's'}, newest first; each shows what it changed from the one before.`),
    h(
      'ul',
      { class: 'history' },
      items.map(({ r, first, changes }) =>
        h(
          'li',
          { 'data-revision': r.revision },
          h('strong', null, `Revision ${r.revision}`),
          ` — ${actionWords(r.action)} by ${r.author}, ${when(r.createdAt)}`,
          r.note ? h('div', { class: 'muted' }, `Note: ${r.note}`) : null,
          first
            ? h('div', { class: 'muted' }, `The first revision: ${changes.length} field${changes.length === 1 ? '' : 's'} given.`)
            : changes.length === 0
              ? h('div', { class: 'muted' }, 'No field changed.')
              : diffTable(changes),
        ),
      ),
    ),
  );
}

interface Param {
  value: number;
  sd: number | null;
  unit: string;
  atBound?: string;
}
interface Measurement {
  id: number;
  method: string;
  fileName: string | null;
  fit: { model?: string; parameters?: Record<string, Param> } | null;
  author: string;
  note: string | null;
  createdAt: string;
  applications: { revisionId: number; fields: string[]; createdAt: string }[];
}

const PARAM_WORDS: Record<string, string> = {
  diffusivity: 'diffusivity',
  effectiveDiffusivity: 'effective diffusivity',
  maxRatePerParticle: 'maximal rate per particle',
  maxRate: 'maximal rate (whole sample)',
  michaelis: 'Michaelis constant',
  mobility: 'mobility',
};

async function renderMeasurements(rev: Revision): Promise<void> {
  if (type !== 'species') {
    put(measurementsBox);
    return;
  }
  const { measurements } = await api<{ measurements: Measurement[] }>(`/api/species/${encodeURIComponent(rev.id)}/measurements`);
  const calibrate = h('a', { href: `/calibrate?species=${encodeURIComponent(rev.id)}` }, 'Calibrate');
  const couplingChems = (Array.isArray(rev.typed.couplings) ? rev.typed.couplings : []).filter(isObj).map((c) => str(c.chemical));
  put(
    measurementsBox,
    h('h2', { id: 'measurements-h' }, 'Stored measurements'),
    measurements.length === 0
      ? h('p', { class: 'empty' }, 'No measurements are stored for this species. Fit tracking or kinetics data on ', calibrate, ' and store them with it; they appear here to apply to the shelf.')
      : h(
          'div',
          null,
          h('p', { class: 'muted' }, 'Applying a measurement writes a new revision with its fitted value, whose provenance names the measurement.'),
          measurements.map((m) => {
            const params = Object.entries(m.fit?.parameters ?? {});
            const controls: HTMLElement[] = [];
            let use: HTMLSelectElement | null = null;
            let chem: HTMLSelectElement | null = null;
            if (m.method === 'msd') {
              use = h('select', null, params.filter(([k]) => k === 'diffusivity' || k === 'effectiveDiffusivity').map(([k]) => h('option', { value: k }, PARAM_WORDS[k] ?? k)));
              if (use.options.length) controls.push(field('Value to apply', use));
            } else {
              chem = chemicalSelect(couplingChems[0] ?? '', null);
              controls.push(field('Coupling to', chem));
            }
            const apply = h('button', { type: 'button', class: 'secondary apply-measurement' }, `Apply measurement ${m.id}`);
            apply.addEventListener('click', async () => {
              apply.disabled = true;
              try {
                const r = await api<Revision>(`/api/measurements/${m.id}/apply`, { body: { baseRevision: base, ...(use && use.value ? { use: use.value } : {}), ...(chem && chem.value ? { chemical: chem.value } : {}) } });
                await show(r);
                page.say(`Applied measurement ${m.id}: revision ${r.revision}.`, 'ok');
              } catch (e) {
                page.fail(e);
                apply.disabled = false;
              }
            });
            return h(
              'div',
              { class: 'measurement', 'data-measurement': m.id },
              h('strong', null, `Measurement ${m.id}: ${m.method} fit${m.fit?.model ? ` (${m.fit.model})` : ''}`),
              ` of ${m.fileName ?? 'pasted data'}, by ${m.author}, ${when(m.createdAt, false)}`,
              m.note ? h('div', { class: 'muted' }, m.note) : null,
              h(
                'ul',
                null,
                params.map(([k, p]) =>
                  h('li', null, `${PARAM_WORDS[k] ?? k}: ${fmtSi(p.value, p.unit)}${p.sd !== null && p.sd > 0 ? ` ± ${fmtSi(p.sd, p.unit, 2)}` : p.sd === null ? ' (uncertainty unknown)' : ''}${p.atBound ? ` — on its ${p.atBound} bound: the data do not determine it` : ''}`),
                ),
              ),
              m.applications.length ? h('div', { class: 'muted' }, `Applied ${m.applications.length} time${m.applications.length === 1 ? '' : 's'}: ${m.applications.map((a) => `${a.fields.join(', ')} on ${when(a.createdAt, false)}`).join('; ')}.`) : null,
              h('div', { class: 'row' }, controls, apply),
            );
          }),
        ),
  );
}

/** A chemical's page: the species coupled to it (acting on it, moving in it, or making it). */
async function renderUsedBy(rev: Revision): Promise<void> {
  if (type !== 'chemical') return;
  const { items } = await api<{ items: { id: string; name: string; retired: boolean; typed: Obj }[] }>('/api/species?limit=500&includeRetired=true');
  const uses = items
    .map((sp) => {
      const how: string[] = [];
      for (const c of Array.isArray(sp.typed.couplings) ? sp.typed.couplings.filter(isObj) : []) {
        if (c.chemical === rev.id) {
          if (c.activity !== undefined) how.push(isObj(c.activity) && 'maxRate' in c.activity ? 'turns it over (saturating)' : 'acts on it');
          if (c.mobility !== undefined) how.push('moves in its gradient');
        }
        if (isObj(c.activity) && c.activity.product === rev.id) how.push(`makes it from ${str(c.chemical)}`);
      }
      return { sp, how };
    })
    .filter((u) => u.how.length > 0);
  put(
    usedByBox,
    h('h2', { id: 'used-by-h' }, 'Species coupled to it'),
    uses.length === 0
      ? h('p', { class: 'muted' }, 'No species on the shelf couples to this chemical yet.')
      : h('ul', null, uses.map(({ sp, how }) => h('li', null, h('a', { href: `/shelf/species/${encodeURIComponent(sp.id)}` }, sp.name), ` (${sp.id})${sp.retired ? ', retired' : ''}: ${how.join('; ')}`))),
  );
}

// hazards ------------------------------------------------------------------

interface Band {
  min: number;
  max: number | null;
  statement: string;
  text: string;
  hazardClass: string;
  pictograms: string[];
  signal: 'Danger' | 'Warning' | null;
  precautionary: string[];
  forms?: string[];
}
interface HazardSet {
  bands: Band[];
  source: string;
  forms?: string[];
  incompatibilities?: string;
  storage?: string;
  disposal?: string;
  handling?: string;
}
interface HazardAnswer {
  current: { version: number; body: HazardSet; author: string; createdAt: string } | null;
  noData?: string;
  history: { version: number; author: string; note: string | null; createdAt: string }[];
}

const pct = (w: number) => `${formatNumber(w * 100, 4)} %`;
const CAUTION = 'Hazard data on this page are a guide for planning. Local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence.';

async function renderHazards(rev: Revision): Promise<void> {
  const hz = await api<HazardAnswer>(`${apiBase}/${encodeURIComponent(rev.id)}/hazards`);
  const cur = hz.current;
  const bandsTable = (bands: Band[]) =>
    h(
      'table',
      { class: 'bands' },
      h('thead', null, h('tr', null, ['Mass fraction (w/w)', 'Statement', 'Class', 'Pictograms', 'Signal word', 'Precautions', ...(type === 'species' ? ['Forms'] : [])].map((x) => h('th', { scope: 'col' }, x)))),
      h(
        'tbody',
        null,
        bands.map((b) =>
          h(
            'tr',
            null,
            h('td', null, b.max === null ? `from ${pct(b.min)}` : `${pct(b.min)} to below ${pct(b.max)}`),
            h('td', null, h('strong', null, b.statement), ' ', b.text),
            h('td', null, b.hazardClass),
            h('td', null, b.pictograms.join(', ') || '—'),
            h('td', null, b.signal ?? '—'),
            h('td', null, b.precautionary.join(' ')),
            type === 'species' ? h('td', null, (b.forms ?? ['every form']).join(', ')) : null,
          ),
        ),
      ),
    );
  const editBox = h('div');
  const editButton = h('button', { type: 'button', class: 'secondary', id: 'edit-hazards' }, cur ? 'Edit the hazard data' : 'Add hazard data');
  editButton.addEventListener('click', () => {
    editButton.hidden = true;
    put(editBox, hazardEditor(rev, cur?.body ?? null, cur?.version ?? 0, () => void renderHazards(rev).catch(page.fail)));
  });
  put(
    hazardsBox,
    h('h2', { id: 'hazards-h' }, 'Hazards'),
    h('p', { class: 'caution' }, CAUTION),
    cur === null
      ? h('p', { class: 'warn', id: 'no-hazard-data' }, hz.noData ?? 'No hazard data on the shelf: not classified here, which does not mean it is harmless.')
      : h(
          'div',
          null,
          h('p', null, `Version ${cur.version}, by ${cur.author}, ${when(cur.createdAt, false)}. Source: ${cur.body.source}`),
          cur.body.forms ? h('p', null, `These data cover: ${cur.body.forms.join(', ')}; any other form has no data here.`) : null,
          cur.body.bands.length ? bandsTable(cur.body.bands) : h('p', { class: 'warn' }, 'No bands: at no concentration is a classification recorded here. Check the supplier’s safety data sheet.'),
          (['incompatibilities', 'storage', 'disposal', 'handling'] as const).map((k) => (cur.body[k] ? h('p', null, h('strong', null, `${k[0]!.toUpperCase()}${k.slice(1)}: `), cur.body[k]) : null)),
        ),
    editButton,
    editBox,
  );
}

const FORMS = ['powder', 'solution', 'suspension'] as const;

/** A field on a line of its own, its control as wide as the form allows. */
const wide = (el: HTMLElement): HTMLElement => (el.classList.add('wide'), el);

/** Checkboxes for the forms a material is handled in (a fieldset with a legend: one label per box). */
function formsPicker(legend: string, chosen: readonly string[] | undefined, hint: string): { el: HTMLElement; value(): string[] } {
  const boxes = FORMS.map((f) => ({ f, box: h('input', { type: 'checkbox', value: f, ...(chosen?.includes(f) ? { checked: true } : {}) }) }));
  return {
    el: h('fieldset', { class: 'forms' }, h('legend', null, legend), boxes.map(({ f, box }) => h('label', { class: 'check' }, box, ` ${f}`)), h('span', { class: 'hint' }, ` ${hint}`)),
    value: () => boxes.filter((b) => b.box.checked).map((b) => b.f),
  };
}

function hazardEditor(rev: Revision, set: HazardSet | null, version: number, done: () => void): HTMLElement {
  const source = h('textarea', { rows: 2 }, set?.source ?? '');
  const sourceField = field('Source of these data', source, 'the regulation, safety data sheet or handbook they come from');
  sourceField.classList.add('wide');
  // a species' data state the forms they cover (an enzyme powder is not its solution); a chemical's may
  const setForms = formsPicker('Forms these data cover', set?.forms ?? (type === 'species' ? [] : undefined), type === 'species' ? '(at least one; a form not ticked has no data here)' : '(none ticked: every form)');
  const rows: { el: HTMLElement; value(): Band; problemBox: HTMLElement }[] = [];
  const box = h('div');
  const addBand = (b: Partial<Band>) => {
    const min = h('input', { type: 'number', min: 0, max: 100, step: 'any', value: b.min === undefined ? '' : String(+(b.min * 100).toPrecision(8)), class: 'pct' });
    const max = h('input', { type: 'number', min: 0, max: 100, step: 'any', value: b.max === undefined || b.max === null ? '' : String(+(b.max * 100).toPrecision(8)), class: 'pct', placeholder: 'no upper bound' });
    const statement = textInput(b.statement ?? '', { placeholder: 'H318' });
    const text = textInput(b.text ?? '', { placeholder: 'Causes serious eye damage.', class: 'statement-text' });
    const cls = textInput(b.hazardClass ?? '', { placeholder: 'Eye Dam. 1' });
    const pics = textInput((b.pictograms ?? []).join(', '), { placeholder: 'GHS05' });
    const signal = h('select', null, h('option', { value: '' }, 'none'), h('option', { value: 'Warning' }, 'Warning'), h('option', { value: 'Danger' }, 'Danger'));
    signal.value = b.signal ?? '';
    const prec = h('textarea', { rows: 2 }, (b.precautionary ?? []).join('\n'));
    const bandForms = formsPicker('Applies to', b.forms, '(none ticked: every form the data cover)');
    const problemBox = h('div');
    const row = {
      problemBox,
      el: h(
        'fieldset',
        { class: 'hazard-band' },
        h('legend', null, 'Band'),
        h('div', { class: 'row' }, field('From (% w/w, inclusive)', min), field('Below (% w/w)', max, 'empty: no upper bound'), field('Hazard statement', statement), field('Statement text', text), field('Class and category', cls), field('Pictograms', pics, 'GHS01–GHS09, comma-separated'), field('Signal word', signal)),
        wide(field('Precautionary statements (one per line)', prec)),
        bandForms.el,
        h('button', { type: 'button', class: 'danger', onclick: () => (rows.splice(rows.indexOf(row), 1), row.el.remove()) }, 'Remove this band'),
        problemBox,
      ),
      value: (): Band => ({
        min: min.value === '' ? Number.NaN : Number(min.value) / 100,
        max: max.value === '' ? null : Number(max.value) / 100,
        statement: statement.value.trim(),
        text: text.value.trim(),
        hazardClass: cls.value.trim(),
        pictograms: pics.value.split(/[,\s]+/).filter(Boolean),
        signal: signal.value === '' ? null : (signal.value as 'Danger' | 'Warning'),
        precautionary: prec.value.split('\n').map((x) => x.trim()).filter(Boolean),
        ...(bandForms.value().length ? { forms: bandForms.value() } : {}),
      }),
    };
    rows.push(row);
    box.append(row.el);
  };
  for (const b of set?.bands ?? []) addBand(b);
  const extra = (['incompatibilities', 'storage', 'disposal', 'handling'] as const).map((k) => ({ k, el: h('textarea', { rows: 2 }, set?.[k] ?? '') }));
  const note = textInput('', { placeholder: 'what changed' });
  const problems = h('div', { role: 'alert' });
  const save = h('button', { type: 'submit' }, 'Save the hazard data');
  const f = h(
    'form',
    { class: 'hazard-form', 'aria-label': 'hazard data' },
    h('p', { class: 'hint' }, 'Each band is a range of mass fraction in which one GHS hazard statement applies. Enter them from the supplier’s safety data sheet or the regulation.'),
    sourceField,
    setForms.el,
    box,
    h('button', { type: 'button', class: 'secondary', onclick: () => addBand({}) }, 'Add a band'),
    extra.map((x) => wide(field(`${x.k[0]!.toUpperCase()}${x.k.slice(1)}`, x.el))),
    field('Note on this version', note),
    problems,
    h('div', { class: 'actions' }, save, h('button', { type: 'button', class: 'secondary', onclick: done }, 'Cancel')),
  );
  f.addEventListener('submit', async (e) => {
    e.preventDefault();
    const hazards: Obj = { source: source.value.trim(), bands: rows.map((r) => r.value()) };
    if (setForms.value().length) hazards.forms = setForms.value();
    for (const x of extra) if (x.el.value.trim()) hazards[x.k] = x.el.value.trim();
    put(problems);
    for (const r of rows) put(r.problemBox);
    try {
      await api(`${apiBase}/${encodeURIComponent(rev.id)}/hazards`, { method: 'PUT', body: { baseVersion: version, hazards, ...(note.value.trim() ? { note: note.value.trim() } : {}) } });
      page.say('Hazard data saved as a new version.', 'ok');
      done();
    } catch (err) {
      if (err instanceof ApiError && err.code === 'stale-version') {
        put(problems, h('p', { class: 'msg error' }, 'Not saved: someone changed these hazard data after you opened them. Cancel to see theirs, then edit again.'));
      } else if (err instanceof ApiError && err.problems.length) {
        const loose: Problem[] = [];
        for (const p of err.problems) {
          const m = /^hazards\.bands\[(\d+)\]\.?(.*)$/.exec(p.path);
          const r = m ? rows[Number(m[1])] : undefined;
          if (r) r.problemBox.append(h('p', { class: 'problem' }, `${m?.[2] || 'band'}: ${p.message.replace(/^expected number, received NaN$/, 'give a number')}`));
          else loose.push(p);
        }
        put(problems, h('p', { class: 'msg error' }, `Not saved: ${err.problems.length} problem${err.problems.length === 1 ? '' : 's'}${loose.length < err.problems.length ? ' (shown at the bands)' : ''}.`), loose.length ? h('ul', null, loose.map((p) => h('li', null, `${p.path.replace(/^hazards\./, '')}: ${p.message}`))) : null);
      } else page.fail(err);
    }
  });
  return f;
}

// ---------------------------------------------------------------- loading

async function show(rev: Revision): Promise<void> {
  base = rev.revision;
  baseRecord = rev.record;
  renderHead(rev);
  put(conflictBox);
  form = buildForm(rev.typed, () => void save());
  put(formBox, h('h2', null, 'Values'), form.el);
  renderStatus(rev);
  await Promise.all([renderHistory(rev), renderMeasurements(rev), renderHazards(rev), renderUsedBy(rev)]);
}

async function reloadItem(message: string): Promise<void> {
  if (!itemId) return;
  try {
    const rev = await api<Revision>(`${apiBase}/${encodeURIComponent(itemId)}`);
    await show(rev);
    page.say(message, 'ok');
  } catch (e) {
    page.fail(e);
  }
}

void (async () => {
  try {
    const list = await api<{ items: { id: string; name: string; retired: boolean }[] }>('/api/chemicals?limit=500&includeRetired=true');
    chemicals = list.items.map((c) => ({ id: c.id, name: c.name, retired: c.retired }));
    if (itemId === null) {
      renderHead(null);
      form = buildForm(type === 'species' ? { kind: 'colloid', couplings: [] } : {}, () => void save());
      put(formBox, type === 'species' && chemicals.length === 0 ? h('p', { class: 'warn' }, 'Add the chemicals first: a species couples to chemicals on the shelf. ', h('a', { href: '/shelf/new?kind=chemical' }, 'New chemical')) : null, form.el);
      formBox.append(h('p', { class: 'muted' }, `Once the ${noun} is saved, its page takes its hazard data (GHS statements by concentration band) and keeps its revisions.`));
      form.el.querySelector<HTMLInputElement>('input[name="id"]')?.focus();
      return;
    }
    const rev = await api<Revision>(`${apiBase}/${encodeURIComponent(itemId)}`);
    await show(rev);
    const saved = new URLSearchParams(location.search).get('saved');
    if (saved) {
      page.say(`Added to the shelf as revision ${saved}.`, 'ok');
      history.replaceState(null, '', location.pathname);
    }
  } catch (e) {
    if (e instanceof ApiError && e.status === 404) {
      renderHead(null);
      put(head, h('h1', null, `No ${noun} “${itemId ?? ''}”`));
      put(formBox, h('p', { class: 'empty' }, `The shelf has no ${noun} with this id. `, h('a', { href: '/' }, 'Back to the shelf'), ' or ', h('a', { href: `/shelf/new?kind=${type}` }, `add a new ${noun}`), '.'));
      return;
    }
    page.fail(e);
  }
})();
