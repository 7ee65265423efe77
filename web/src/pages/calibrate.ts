/**
 * The Calibrate page (/calibrate, ?species=<id> preselects a species): raw bench data in (pasted or a CSV
 * file), a fit by the service (POST /api/fits/:method), the data against the fitted curve and the
 * residuals, the parameters with their standard errors and the goodness of fit in words; then "store as a
 * measurement" (POST /api/species/:id/measurements) and "apply to the shelf" (POST
 * /api/measurements/:id/apply). Stokes–Einstein (size → diffusivity) and the quantal dose–response fit
 * are here too; neither is stored as a measurement.
 *
 * What is stored is exactly what was fitted: the page keeps the request it sent (method, data, options,
 * file name) with the answer, and the Store button sends that request, never what the form holds now.
 * A new fit clears the old result the moment it starts; a failed fit leaves no numbers behind.
 */
import { mountPage } from '../lib/layout.js';
import './calibrate.css';
import { api, ApiError } from '../lib/api.js';
import { field, h, put, table, type Child } from '../lib/dom.js';
import { quantityField, type QuantityField } from '../lib/fields.js';
import { figure, Plot, ACCENT, INK, MUTED } from '../lib/plot.js';
import { fmtSi, formatNumber, kindOfSiUnit, unitFor } from '../lib/format.js';
import { msdCurve, type MsdModel } from '../../../server/engine/fit/models.js';
import { chiSquareUpper, quantalProbability, type QuantalLink } from '../../../server/engine/fit/quantal.js';

// ------------------------------------------------------------------ types of the API's answers

interface Param {
  value: number;
  sd: number | null;
  unit: string;
  fixed?: boolean;
  atBound?: 'lower' | 'upper';
}
interface FitRun {
  method: 'msd' | 'kinetics' | 'drift';
  model: string;
  parameters: Record<string, Param>;
  residualStandardError: number;
  dof: number;
  points: number;
  rss: number;
  rSquared: number;
  x: number[];
  residuals: number[];
  fitted: number[];
  sd?: number[];
  weighting: 'gls-covariance' | 'weighted' | 'unweighted' | 'relative-variance-model';
  converged: boolean;
  stop: string;
  iterations: number;
  notes: string[];
  input: { columns: { header: string; unit: string | null }[]; rows: number };
  standardErrorsHonest?: boolean;
  covarianceSource?: string;
  tracks?: { tracks: number; positions: number; frameInterval: number; sd: number[] };
}
interface QParam {
  value: number | null;
  sd: number | null;
  unit: string;
}
interface QuantalRun {
  method: 'quantal';
  model: string;
  link: QuantalLink;
  scale: 'log10' | 'linear';
  parameters: {
    intercept: QParam;
    slope: QParam;
    ed50: QParam & { interval: { lower: number; upper: number } | null; fieller: { lower: number; upper: number } | null; bracket?: { from: number | null; to: number | null } };
  };
  deviance: number | null;
  nullDeviance: number | null;
  dof: number;
  points: number;
  tubes: number;
  responded: number;
  pearsonChiSquare: number | null;
  pearsonP: number | null;
  devianceP: number | null;
  converged: boolean;
  stop: string;
  separation: { kind: string; direction: string } | null;
  excluded: { dose: number; tubes: number; responded: number; reason: string }[];
  data: { dose: number; x: number; tubes: number; responded: number; fitted: number | null; pearsonResidual: number | null }[];
  notes: string[];
  input: { columns: { header: string; unit: string | null }[]; rows: number };
  ed50InFileUnit?: { value: number | null; sd: number | null; unit: string; interval: { lower: number; upper: number } | null };
}
interface StokesRun {
  parameters: Record<'diffusivity' | 'rotationalDiffusivity' | 'rotationTime' | 'viscosity', Param>;
  temperature: number;
  viscositySource: string;
}
interface Stored {
  si: number;
  sd: number;
  unit: string | null;
  input: string;
  sdInput?: string;
}
interface Coupling {
  chemical: string;
  activity?: Stored | { maxRate: Stored; michaelis: Stored; product?: string | null };
  mobility?: Stored;
}
interface SpeciesRev {
  id: string;
  name: string;
  kind: string | null;
  revision: number;
  record: { name: string; kind?: string; diffusivity?: Stored; radius?: Stored; couplings?: Coupling[] };
}
interface ShelfList<T> {
  items: T[];
}
interface Measurement {
  id: number;
  species: string;
  method: string;
  fit: FitRun;
}

type Method = 'msd' | 'kinetics' | 'drift' | 'quantal' | 'stokes-einstein';

/** What was fitted: the exact request and its answer (what Store sends is `request`, nothing else). */
interface Fitted {
  method: Method;
  request: Record<string, unknown>;
  fileName: string | null;
  at: Date;
  result: FitRun | QuantalRun | StokesRun;
  /** the species and chemical chosen when it was fitted: Store and Apply keep to them, whatever is chosen later */
  speciesId: string | null;
  chemical: string;
}

// ------------------------------------------------------------------ words

const METHODS: { id: Method; label: string; columns: Child; placeholder: string }[] = [
  {
    id: 'msd',
    label: 'Mean-squared displacement (diffusivity, swimming)',
    columns: [h('code', null, 'lag [s], msd [um^2]'), ', optional ', h('code', null, 'sd [um^2]'), '; or tracked positions ', h('code', null, 'track, t [s], x [um], y [um]'), ' (optional ', h('code', null, 'z [um]'), ').'],
    placeholder: 'lag [s],msd [um^2],sd [um^2]\n… one row per lag time (the sd column is optional)',
  },
  {
    id: 'kinetics',
    label: 'Initial rates against substrate (Michaelis–Menten)',
    columns: [h('code', null, 'substrate [mM], rate [uM/s]'), ', optional ', h('code', null, 'sd [uM/s]'), '.'],
    placeholder: 'substrate [mM],rate [uM/s],sd [uM/s]\n… one row per substrate concentration',
  },
  {
    id: 'drift',
    label: 'Drift velocity against a gradient (phoretic mobility)',
    columns: [h('code', null, 'gradient [mM/mm], velocity [um/s]'), ', optional ', h('code', null, 'sd [um/s]'), '.'],
    placeholder: 'gradient [mM/mm],velocity [um/s],sd [um/s]\n… one row per imposed gradient',
  },
  {
    id: 'quantal',
    label: 'Dose–response of tubes (quantal, ED50)',
    columns: [h('code', null, 'dose [1/mL], tubes, responded'), ': how many tubes at each dose, and how many of them responded.'],
    placeholder: 'dose [1/mL],tubes,responded\n… one row per dose',
  },
  { id: 'stokes-einstein', label: 'Size → diffusivity (Stokes–Einstein)', columns: null, placeholder: '' },
];

const MSD_MODELS: { id: MsdModel; label: string }[] = [
  { id: 'passive-2d', label: 'passive, tracked in 2D: MSD = 4 D t' },
  { id: 'passive-3d', label: 'passive, tracked in 3D: MSD = 6 D t' },
  { id: 'active-2d', label: 'active, moving in 2D: D, speed v, rotation time τ' },
  { id: 'active-3d', label: 'active, tracked in 3D: D, speed v, rotation time τ' },
  { id: 'active-focal', label: 'active 3D swimmer seen in a focal plane: D, v, τ' },
];

const PARAM_WORDS: Record<string, string> = {
  diffusivity: 'diffusivity D',
  speed: 'swimming speed v',
  rotationTime: 'rotation time τ',
  offset: 'offset c (localisation error)',
  effectiveDiffusivity: 'long-time diffusivity',
  maxRate: 'maximal rate V (per volume)',
  michaelis: 'Michaelis constant K_M',
  maxRatePerParticle: 'maximal turnover per particle (the shelf’s maxRate)',
  mobility: 'phoretic mobility μ',
  rotationalDiffusivity: 'rotational diffusivity D_r',
  viscosity: 'solvent viscosity η',
};

const STOP_WORDS: Record<string, string> = {
  converged: 'the fit converged (it reached a minimum)',
  'small-step': 'the fit stopped on a step too small to matter without showing a minimum',
  'no-progress': 'no step lowered the residuals, though no minimum was shown',
  'max-iterations': 'the fit ran out of iterations before it settled',
  'no-free-parameters': 'nothing was fitted',
};

// ------------------------------------------------------------------ units for display

interface Unit {
  label: string;
  /** 1 label = factor SI */
  factor: number;
  /** a column without a unit: its name (the numbers are as in the file) */
  asInFile?: string;
}

/** An axis label: the quantity and its unit, or the file's column when the file gave no unit. */
const withUnit = (name: string, u: Unit) => (u.asInFile !== undefined ? `${name} (${u.asInFile}; no unit given)` : `${name} (${u.label})`);

/** The display unit for values in the SI unit the API names, chosen by the largest magnitude. */
function displayUnit(siUnit: string, values: number[]): Unit {
  const big = Math.max(0, ...values.filter(Number.isFinite).map(Math.abs));
  const ladder = (list: [string, number][]): Unit => {
    let best = list[0]!;
    for (const x of list) if (big / x[1] >= 0.9999) best = x;
    return { label: best[0], factor: best[1] };
  };
  const s = siUnit.replace(/\s+/g, '');
  if (s === 'm^2') return ladder([['nm²', 1e-18], ['µm²', 1e-12]]);
  if (s === 'mol/(m^3*s)') return ladder([['nM/s', 1e-6], ['µM/s', 1e-3], ['mM/s', 1]]);
  if (s === 'mol/m^4') return { label: 'mM/mm', factor: 1e3 };
  if (s === 's') return ladder([['ms', 1e-3], ['s', 1]]);
  const kind = kindOfSiUnit(s);
  if (kind) {
    const u = unitFor(big, kind);
    return { label: u.label, factor: u.factor };
  }
  const asInFile = /^(.*) \(as in the file\)$/.exec(siUnit);
  if (asInFile) return { label: '', factor: 1, asInFile: asInFile[1]! };
  return { label: siUnit, factor: 1 };
}

/** A number rounded to the decimal place 10^e, plain (for a value beside its standard error). */
function atPlace(v: number, e: number): string {
  if (e <= 0 && e >= -12 && Math.abs(v) < 1e6) return v.toFixed(-e).replace('-', '−');
  return formatNumber(v, Math.max(1, Math.floor(Math.log10(Math.abs(v) || 1)) - e + 1));
}

/** `0.2358 ± 0.0019 µm²/s`: the sd to two significant digits, the value to the same decimal place. */
function valueText(value: number, sd: number | null, u: Unit): string {
  const v = value / u.factor;
  const unit = u.label ? ` ${u.label}` : '';
  if (sd === null || !(sd > 0)) return `${formatNumber(v, 4)}${unit}`;
  const s = Number((sd / u.factor).toPrecision(2));
  const e = Math.floor(Math.log10(s)) - 1;
  return `${atPlace(v, e)} ± ${atPlace(s, e)}${unit}`;
}

const paramText = (p: { value: number; sd: number | null; unit: string }, sd: number | null = p.sd) => valueText(p.value, sd, displayUnit(p.unit, [p.value]));
/** A value on the shelf as it was written there (its own digits), in the display unit u. */
function storedText(q: Stored, siUnit: string, u = displayUnit(siUnit, [q.si])): string {
  const unit = u.label ? ` ${u.label}` : '';
  return q.sd > 0 ? `${formatNumber(q.si / u.factor, 4)} ± ${formatNumber(q.sd / u.factor, 2)}${unit}` : `${formatNumber(q.si / u.factor, 4)}${unit}`;
}

const cap = (s: string) => s.charAt(0).toUpperCase() + s.slice(1);

/** True when positive values span at least a decade (a log axis shows them better). */
function spansDecades(values: number[]): boolean {
  const v = values.filter(Number.isFinite);
  return v.length > 1 && v.every((x) => x > 0) && Math.max(...v) / Math.min(...v) >= 10;
}

/** Ticks of a log axis from lo to hi: 1, 2, 5 × 10^k when lo to hi spans up to three decades, else powers of ten. */
function logTicks(lo: number, hi: number): number[] {
  const a = Math.floor(Math.log10(lo));
  const b = Math.ceil(Math.log10(hi));
  const mult = Math.log10(hi / lo) <= 3 ? [1, 2, 5] : [1];
  const out: number[] = [];
  for (let k = a; k <= b; k++) for (const m of mult) {
    const v = Number((m * 10 ** k).toPrecision(6));
    if (v >= lo * 0.999 && v <= hi * 1.001) out.push(v);
  }
  return out;
}

/** v, or its log10 on a log axis (drawn as a linear axis of log10 values: see `axis`). */
const lg = (log: boolean) => (v: number) => (log ? Math.log10(v) : v);

/**
 * An axis: its label, log or linear, ticks written as brink writes numbers (never "200m" for 0.2). A log
 * axis is a linear axis of log10 values with ticks at 1, 2, 5 × 10^k labelled with the values themselves:
 * Plot's own log axis passes a tick format through d3's, which blanks the labels of some ticks asked for.
 * The marks then take log10 of their values (`lg`).
 */
function axis(label: string, log: boolean, values: number[], extra: Record<string, unknown> = {}): Record<string, unknown> {
  const fmt = (d: number) => formatNumber(d, 3);
  if (!log) return { label, type: 'linear', tickFormat: fmt, ...extra };
  const v = values.filter((x) => Number.isFinite(x) && x > 0);
  const dom = (extra.domain as [number, number] | undefined) ?? [Math.min(...v), Math.max(...v)];
  return { label, type: 'linear', ...extra, ...(v.length || extra.domain ? { ticks: logTicks(dom[0], dom[1]).map(Math.log10) } : {}), tickFormat: (d: number) => fmt(10 ** d), ...(extra.domain ? { domain: dom.map(Math.log10) } : {}) };
}

/** n points from a to b, log-spaced or even. */
function grid(a: number, b: number, log: boolean, n = 200): number[] {
  return Array.from({ length: n }, (_, i) => (log ? a * Math.pow(b / a, i / (n - 1)) : a + ((b - a) * i) / (n - 1)));
}

// ------------------------------------------------------------------ the page

const page = mountPage('Calibrate', 'calibrate');
const params = new URLSearchParams(location.search);

const methodSelect = h('select', { id: 'method', name: 'method' }, METHODS.map((m) => h('option', { value: m.id }, m.label)));
const modelSelect = h('select', { id: 'model', name: 'model' }, MSD_MODELS.map((m) => h('option', { value: m.id }, m.label)));
const offsetBox = h('input', { type: 'checkbox', id: 'offset', name: 'offset' });
const weightingSelect = h(
  'select',
  { id: 'weighting', name: 'weighting' },
  h('option', { value: '' }, 'as the data allow (sd column, the tracks’ covariance, or the variance model)'),
  h('option', { value: 'unweighted' }, 'equal weights (for comparison only)'),
);
const msdRadius = quantityField({ label: 'Fix the rotation time from a radius (optional)', quantity: 'length', sign: 'positive', placeholder: 'e.g. 1 um' });
const msdTemperature = quantityField({ label: 'Temperature (default 25 °C)', quantity: 'temperature', sign: 'positive', placeholder: 'e.g. 25 degC' });
const useRadiusMsd = h('button', { type: 'button', class: 'secondary', id: 'msd-species-radius' }, 'Use the species’ radius');
const activeOnly = h('div', { class: 'row', id: 'active-options' }, msdRadius.el, useRadiusMsd, msdTemperature.el);
const maxLag = quantityField({ label: 'Largest lag (default a quarter of the median track)', quantity: 'time', sign: 'positive', placeholder: 'e.g. 5 s' });
const lagsInput = h('input', { type: 'number', id: 'lags', min: 2, max: 40, step: 1, placeholder: '16' });
const tracksOptions = h(
  'details',
  { id: 'tracks-options' },
  h('summary', null, 'Tracked positions: lags'),
  h('p', { class: 'hint' }, 'Used only when the data are positions (a first column named track): the MSD and its covariance between lags are computed from the tracks at log-spaced lags.'),
  h('div', { class: 'row' }, maxLag.el, field('Number of lags (2 to 40, default 16)', lagsInput)),
);
const msdOptions = h(
  'fieldset',
  { id: 'msd-options' },
  h('legend', null, 'Model'),
  h('div', { class: 'row' }, field('MSD model', modelSelect), field('Weighting', weightingSelect)),
  h('div', { class: 'check' }, offsetBox, h('label', { for: 'offset' }, 'also fit a constant offset (the localisation error of the tracking)')),
  activeOnly,
  tracksOptions,
);

const enzymeConc = quantityField({ label: 'Enzyme concentration in the assay', quantity: 'concentration', sign: 'positive', placeholder: 'e.g. 10 nM' });
const particleDensity = quantityField({ label: 'or: particle number density in the assay', quantity: 'numberDensity', sign: 'positive', placeholder: 'e.g. 1e9 1/mL' });
const kineticsOptions = h(
  'fieldset',
  { id: 'kinetics-options' },
  h('legend', null, 'The assay'),
  h('p', { class: 'hint' }, 'Give one of these to get the turnover per particle (or per enzyme molecule), the value the shelf keeps; without it the fit gives V and K_M only and cannot be applied.'),
  h('div', { class: 'row' }, enzymeConc.el, particleDensity.el),
);

const linkSelect = h('select', { id: 'link', name: 'link' }, h('option', { value: 'logit' }, 'logit'), h('option', { value: 'probit' }, 'probit'), h('option', { value: 'cloglog' }, 'complementary log-log'));
const scaleSelect = h('select', { id: 'scale', name: 'scale' }, h('option', { value: 'log10' }, 'log10 of the dose'), h('option', { value: 'linear' }, 'the dose itself'));
const quantalOptions = h('fieldset', { id: 'quantal-options' }, h('legend', null, 'Model'), h('div', { class: 'row' }, field('Link', linkSelect), field('Response against', scaleSelect)));

const seRadius = quantityField({ label: 'Hydrodynamic radius', quantity: 'length', sign: 'positive', placeholder: 'e.g. 1 um', required: true });
const seTemperature = quantityField({ label: 'Temperature (default 25 °C)', quantity: 'temperature', sign: 'positive', placeholder: 'e.g. 25 degC' });
const seViscosity = quantityField({ label: 'Viscosity (default water at the temperature)', quantity: 'viscosity', sign: 'positive', placeholder: 'e.g. 0.89 mPa*s' });
const useRadiusSe = h('button', { type: 'button', class: 'secondary', id: 'se-species-radius' }, 'Use the species’ radius');
const seOptions = h('fieldset', { id: 'se-options' }, h('legend', null, 'Sphere and solvent'), h('div', { class: 'row' }, seRadius.el, useRadiusSe, seTemperature.el, seViscosity.el));

const dataBox = h('textarea', { id: 'data', name: 'data', spellcheck: 'false', rows: 10, autocomplete: 'off' });
const fileInput = h('input', { type: 'file', id: 'file', accept: '.csv,.txt,text/csv,text/plain' });
const columnsHint = h('div', { class: 'hint', id: 'columns-hint' });
const dataSet = h(
  'fieldset',
  { id: 'data-set' },
  h('legend', null, 'Data'),
  field('Paste CSV (a header row with units in brackets; lines starting with # are comments)', dataBox, columnsHint),
  field('or load a CSV file', fileInput),
);

const speciesSelect = h('select', { id: 'species', name: 'species' }, h('option', { value: '' }, 'loading the shelf…'));
const chemicalSelect = h('select', { id: 'chemical', name: 'chemical' });
const chemicalField = field('Chemical (the coupling the fit sets)', chemicalSelect);
const speciesSet = h(
  'fieldset',
  { id: 'species-set' },
  h('legend', null, 'Species'),
  h('div', { class: 'row' }, field('Species the data are of', speciesSelect), chemicalField),
  h('p', { class: 'hint', id: 'species-hint' }),
);

const fitButton = h('button', { type: 'submit', id: 'run' }, 'Fit');
const form = h(
  'form',
  { id: 'fit-form', novalidate: true },
  h('fieldset', null, h('legend', null, 'What to fit'), field('Method', methodSelect)),
  msdOptions,
  kineticsOptions,
  quantalOptions,
  seOptions,
  dataSet,
  speciesSet,
  h('div', { class: 'actions' }, fitButton, h('span', { class: 'muted', id: 'fit-status', role: 'status' })),
);
const results = h('section', { id: 'results', 'aria-labelledby': 'results-title' });

page.main.append(
  h('h1', null, 'Calibrate'),
  h(
    'p',
    { class: 'lede' },
    'Fit raw bench data — an MSD curve or tracked positions, initial rates, drift in a gradient, or tubes that did or did not respond — and look at the fit against the data before keeping it. A fit you keep is stored as a measurement of a species with its raw data, and applying it writes a new revision of that species on the shelf.',
  ),
  form,
  results,
);

let species: SpeciesRev[] = [];
let chemicals: { id: string; name: string }[] = [];
let loadedFile: { name: string; text: string } | null = null;
let current: Fitted | null = null;
let seq = 0;

const method = () => methodSelect.value as Method;
const chosenSpecies = () => species.find((s) => s.id === speciesSelect.value) ?? null;

function emptyState(): void {
  put(
    results,
    h(
      'div',
      { class: 'empty', id: 'empty' },
      h('p', null, h('strong', null, 'No fit yet.'), ' Choose the method, paste the data (or load a CSV file) and press Fit.'),
      h('p', { class: 'hint' }, 'The plot of the data against the fitted curve, the residuals, the parameters with their standard errors and what the fit says about itself appear here. Nothing is stored until you press Store.'),
    ),
  );
}

function showFor(m: Method): void {
  const def = METHODS.find((x) => x.id === m)!;
  msdOptions.hidden = m !== 'msd';
  kineticsOptions.hidden = m !== 'kinetics';
  quantalOptions.hidden = m !== 'quantal';
  seOptions.hidden = m !== 'stokes-einstein';
  dataSet.hidden = m === 'stokes-einstein';
  activeOnly.hidden = !modelSelect.value.startsWith('active');
  fitButton.textContent = m === 'stokes-einstein' ? 'Compute' : 'Fit';
  put(columnsHint, def.columns ? ['Columns by position: ', def.columns] : null);
  dataBox.placeholder = def.placeholder;
  chemicalField.hidden = !(m === 'kinetics' || m === 'drift');
  // a quantal fit is not stored and uses nothing of a species
  speciesSet.hidden = m === 'quantal';
  const stores = m === 'msd' || m === 'kinetics' || m === 'drift';
  put(
    byHint(),
    stores
      ? 'A fit is stored as a measurement of this species; applying it sets ' + (m === 'msd' ? 'its diffusivity.' : m === 'kinetics' ? 'the activity of its coupling to the chemical.' : 'the mobility of its coupling to the chemical.')
      : m === 'quantal'
        ? 'A dose–response fit is shown, not stored: brink keeps tube outcomes with the plan they came from (a plan’s Outcomes page).'
        : 'A Stokes–Einstein estimate is shown, not stored: it is no measurement. The species is used only for its radius.',
  );
}
const byHint = () => document.getElementById('species-hint')!;

function fillChemicals(): void {
  const sp = chosenSpecies();
  const coupled = new Set((sp?.record.couplings ?? []).map((c) => c.chemical));
  const keep = chemicalSelect.value;
  put(
    chemicalSelect,
    chemicals.map((c) => h('option', { value: c.id }, `${c.name} (${c.id})${coupled.has(c.id) ? ' — coupled' : ''}`)),
  );
  const first = (sp?.record.couplings ?? [])[0]?.chemical;
  chemicalSelect.value = keep && chemicals.some((c) => c.id === keep) ? keep : (first ?? chemicals[0]?.id ?? '');
}

async function loadShelf(): Promise<void> {
  try {
    const [s, c] = await Promise.all([api<ShelfList<SpeciesRev>>('/api/species?limit=500'), api<ShelfList<{ id: string; name: string }>>('/api/chemicals?limit=500')]);
    species = s.items;
    chemicals = c.items;
  } catch (e) {
    page.fail(e);
    put(speciesSelect, h('option', { value: '' }, 'the shelf could not be read'));
    return;
  }
  if (species.length === 0) {
    put(speciesSelect, h('option', { value: '' }, 'the shelf has no species yet'));
    page.say(['The shelf has no species: a fit can be made, but to store it ', h('a', { href: '/shelf/new' }, 'add a species'), ' first.']);
  } else put(speciesSelect, species.map((s) => h('option', { value: s.id }, `${s.name} (${s.id})`)));
  const wanted = params.get('species');
  if (wanted) {
    if (species.some((s) => s.id === wanted)) speciesSelect.value = wanted;
    else page.say(`There is no species “${wanted}” on the shelf (the link asked for it); choose one below.`, 'error');
  }
  fillChemicals();
  refreshStoreLabel();
}

function speciesRadius(target: QuantityField): void {
  const sp = chosenSpecies();
  const r = sp?.record.radius;
  if (!sp || !r) {
    page.say(sp ? `${sp.name} has no radius on the shelf.` : 'Choose a species first.', 'error');
    return;
  }
  target.set(r.input);
}
useRadiusMsd.addEventListener('click', () => speciesRadius(msdRadius));
useRadiusSe.addEventListener('click', () => speciesRadius(seRadius));

fileInput.addEventListener('change', async () => {
  const f = fileInput.files?.[0];
  if (!f) return;
  if (f.size > 5_000_000) {
    page.say(`${f.name} is ${formatNumber(f.size / 1e6, 3)} MB: the service takes at most 5 000 000 characters of CSV in one fit. Split the file, or fit tracked positions over fewer frames.`, 'error');
    return;
  }
  const text = await f.text();
  loadedFile = { name: f.name, text };
  dataBox.value = text;
  markChanged();
  page.say(`Loaded ${f.name} (${text.split(/\r?\n/).filter((l) => l.trim() && !l.trim().startsWith('#')).length - 1} data rows). Press Fit.`);
});

methodSelect.addEventListener('change', () => {
  showFor(method());
  // a result (or a fit under way) of another method says nothing about this one
  if ((current && current.method !== method()) || fitButton.disabled) {
    current = null;
    seq++;
    fitButton.disabled = false;
    put(document.getElementById('fit-status')!, '');
    emptyState();
  }
});
modelSelect.addEventListener('change', () => showFor(method()));
speciesSelect.addEventListener('change', () => {
  fillChemicals();
  refreshStoreLabel();
});

/** The data or options changed since the fit: say that what is shown (and what Store keeps) is the data as fitted. */
function markChanged(): void {
  const note = document.getElementById('changed-since');
  if (!current || !note) return;
  note.hidden = false;
}
form.addEventListener('input', (ev) => {
  const t = ev.target as HTMLElement;
  // another species or chemical after the fit: Store and Apply still keep to those it was fitted for, and say so
  if ((t === speciesSelect || t === chemicalSelect) && current && current.speciesId === speciesSelect.value && current.chemical === chemicalSelect.value) return;
  markChanged();
});

/** The request for the chosen method, or a list of what is missing. */
function buildRequest(): { path: string; body: Record<string, unknown> } | { problems: string[] } {
  const m = method();
  const problems: string[] = [];
  const q = (f: QuantityField, what: string) => {
    if (f.invalid()) problems.push(`${what}: ${f.el.querySelector('output')?.textContent || 'cannot be read'}`);
    return f.value();
  };
  if (m === 'stokes-einstein') {
    const radius = q(seRadius, 'radius');
    if (radius === undefined) problems.push('radius: give the hydrodynamic radius, e.g. 1 um');
    const temperature = q(seTemperature, 'temperature');
    const viscosity = q(seViscosity, 'viscosity');
    return problems.length ? { problems } : { path: '/api/fits/stokes-einstein', body: { radius, ...(temperature !== undefined ? { temperature } : {}), ...(viscosity !== undefined ? { viscosity } : {}) } };
  }
  const data = dataBox.value;
  if (!data.trim()) problems.push('data: paste the CSV (a header row, then one row per point) or load a file');
  let options: Record<string, unknown> = {};
  if (m === 'msd') {
    options = { model: modelSelect.value };
    if (offsetBox.checked) options.offset = true;
    if (weightingSelect.value) options.weighting = weightingSelect.value;
    const ml = q(maxLag, 'largest lag');
    if (ml !== undefined) options.maxLag = ml;
    if (lagsInput.value.trim()) {
      const n = Number(lagsInput.value);
      if (!Number.isInteger(n) || n < 2 || n > 40) problems.push('number of lags: a whole number from 2 to 40');
      else options.lags = n;
    }
    if (modelSelect.value.startsWith('active')) {
      const radius = q(msdRadius, 'radius');
      const temperature = q(msdTemperature, 'temperature');
      if (radius !== undefined) options.radius = radius;
      if (temperature !== undefined) options.temperature = temperature;
    }
  } else if (m === 'kinetics') {
    const e = q(enzymeConc, 'enzyme concentration');
    const p = q(particleDensity, 'particle number density');
    if (e !== undefined && p !== undefined) problems.push('the assay: give the enzyme concentration or the particle number density, not both');
    if (e !== undefined) options.enzymeConcentration = e;
    if (p !== undefined) options.particleDensity = p;
  } else if (m === 'quantal') {
    options = { link: linkSelect.value, scale: scaleSelect.value };
  }
  return problems.length ? { problems } : { path: `/api/fits/${m}`, body: { data, options } };
}

form.addEventListener('submit', (ev) => {
  ev.preventDefault();
  void runFit();
});

async function runFit(): Promise<void> {
  const mine = ++seq;
  // the old result goes the moment a new fit starts
  current = null;
  page.clear();
  const m = method();
  const req = buildRequest();
  if ('problems' in req) {
    emptyState();
    page.say(h('span', null, 'The fit cannot start: ', req.problems.length === 1 ? req.problems[0] : h('ul', null, req.problems.map((p) => h('li', null, p)))), 'error');
    return;
  }
  const fileName = m === 'stokes-einstein' ? null : loadedFile && loadedFile.text === dataBox.value ? loadedFile.name : loadedFile ? `${loadedFile.name} (edited)` : null;
  put(results, h('p', { class: 'busy', id: 'busy', 'aria-busy': 'true' }, h('span', { class: 'spinner', 'aria-hidden': 'true' }), 'Fitting…'));
  fitButton.disabled = true;
  put(document.getElementById('fit-status')!, 'fitting…');
  try {
    const result = await api<FitRun | QuantalRun | StokesRun>(req.path, { body: req.body });
    if (mine !== seq) return;
    current = { method: m, request: m === 'stokes-einstein' ? req.body : { method: m, ...req.body, ...(fileName ? { fileName } : {}) }, fileName, at: new Date(), result, speciesId: speciesSelect.value || null, chemical: chemicalSelect.value };
    render(current);
    put(document.getElementById('fit-status')!, 'done: the result is below');
    document.getElementById('results-title')?.focus();
  } catch (e) {
    if (mine !== seq) return;
    page.fail(e);
    put(document.getElementById('fit-status')!, 'the fit failed');
    put(results, h('div', { class: 'empty failed', id: 'failed' }, h('p', null, h('strong', null, 'The fit failed'), ': nothing is shown and nothing was stored. The message above says why; correct the data or the options and fit again.')));
  } finally {
    if (mine === seq) fitButton.disabled = false;
  }
}

// ------------------------------------------------------------------ results

function header(f: Fitted, title: string): Child[] {
  const rows = (f.result as { input?: { rows: number } }).input?.rows;
  return [
    h('h2', { id: 'results-title', tabindex: -1 }, title),
    h(
      'p',
      { class: 'muted' },
      f.method === 'stokes-einstein' ? `Computed at ${f.at.toLocaleTimeString()}.` : `Fitted at ${f.at.toLocaleTimeString()}: ${rows ?? '?'} data rows from ${f.fileName ?? 'pasted data'}.`,
    ),
    h('p', { class: 'warn', id: 'changed-since', hidden: true }, 'The data, options, species or chemical have changed since this fit. What is shown — and what Store and Apply would keep — is the data as fitted, for the species and chemical it was fitted for; press Fit again to use the changes.'),
  ];
}

function render(f: Fitted): void {
  if (f.method === 'stokes-einstein') return renderStokes(f, f.result as StokesRun);
  if (f.method === 'quantal') return renderQuantal(f, f.result as QuantalRun);
  renderFit(f, f.result as FitRun);
}

/** x, y units and names of a least-squares fit. */
function axes(r: FitRun): { x: { name: string; si: string }; y: { name: string; si: string } } {
  if (r.method === 'msd') return { x: { name: 'lag time', si: 's' }, y: { name: 'mean-squared displacement', si: 'm^2' } };
  if (r.method === 'kinetics') {
    const cols = r.input.columns;
    return {
      x: { name: 'substrate concentration', si: r.parameters.michaelis?.unit ?? `${cols[0]?.header ?? 'x'} (as in the file)` },
      y: { name: 'initial rate', si: r.parameters.maxRate?.unit ?? `${cols[1]?.header ?? 'y'} (as in the file)` },
    };
  }
  return { x: { name: 'concentration gradient', si: 'mol/m^4' }, y: { name: 'drift velocity', si: 'm/s' } };
}

/** The fitted model at x (the API's SI units, or the file's own for a kinetics table without units). */
function curve(r: FitRun): ((x: number) => number) | null {
  const p = (k: string) => r.parameters[k]?.value ?? 0;
  if (r.method === 'msd') {
    const model = r.model as MsdModel;
    return (t) => msdCurve(model, t, p('diffusivity'), p('speed'), r.parameters.rotationTime ? p('rotationTime') : 1, p('offset'));
  }
  if (r.method === 'kinetics') return (c) => (p('maxRate') * c) / (p('michaelis') + c);
  return (g) => -p('mobility') * g;
}

function renderFit(f: Fitted, r: FitRun): void {
  const ax = axes(r);
  const y = r.fitted.map((v, i) => v + r.residuals[i]!);
  const sd = r.sd ?? r.tracks?.sd;
  const ux = displayUnit(ax.x.si, r.x);
  const xAll = (pts: { x: number }[]) => pts.map((d) => d.x);
  const uy = displayUnit(ax.y.si, y);
  const logX = r.method === 'msd' ? spansDecades(r.x) : spansDecades(r.x) && Math.max(...r.x) / Math.min(...r.x) >= 100;
  const fitted = curve(r);
  const lo = Math.min(...r.x);
  const hi = Math.max(...r.x);
  const xs = grid(logX ? lo : r.method === 'drift' ? Math.min(lo, 0) : Math.min(lo, 0), logX ? hi : r.method === 'drift' ? Math.max(hi, 0) : hi, logX);
  const line = fitted ? xs.map((x) => ({ x: x / ux.factor, y: fitted(x) / uy.factor })) : [];
  const logY = logX && spansDecades(y) && line.every((d) => d.y > 0);
  // an MSD spans decades: its residuals read best relative to the curve (in %), others in the data's unit
  const relative = r.method === 'msd' && r.fitted.every((f) => f > 0);
  const resScale = (i: number) => (relative ? 100 / r.fitted[i]! : 1 / uy.factor);
  const pts = r.x.map((x, i) => ({ x: x / ux.factor, y: y[i]! / uy.factor, sd: sd ? sd[i]! / uy.factor : null, res: r.residuals[i]! * resScale(i), resSd: sd ? sd[i]! * resScale(i) : null }));
  const yMin = logY ? Math.min(...pts.map((d) => d.y), ...line.map((d) => d.y)) / 2 : 0;
  const bars = sd ? pts.map((d) => ({ x: d.x, y1: logY ? Math.max(d.y - d.sd!, yMin) : d.y - d.sd!, y2: d.y + d.sd! })) : [];
  const xLabel = withUnit(ax.x.name, ux);
  const yLabel = withUnit(ax.y.name, uy);
  const fx = lg(logX);
  const fy = lg(logY);
  type XY = { x: number; y: number };
  type Bar = { x: number; y1: number; y2: number };
  type Pt = (typeof pts)[number];
  const main = figure({
    caption: `Data (dots${sd ? ', bars ± 1 sd' : ''}) and the fitted ${r.model} model (line)${logX ? '; logarithmic axes' : ''}.${bars.some((b, i) => logY && b.y1 === yMin && pts[i]!.y - pts[i]!.sd! <= yMin) ? ' A bar that reaches the bottom of the plot extends below it.' : ''}`,
    x: axis(xLabel, logX, [...xAll(pts), ...xAll(line)]),
    y: axis(yLabel, logY, [...pts.map((d) => d.y), ...line.map((d) => d.y)], logY ? { domain: [yMin, Math.max(...pts.map((d) => d.y + (d.sd ?? 0)), ...line.map((d) => d.y)) * 1.2] } : {}),
    marks: [
      ...(logY ? [] : [Plot.ruleY([0], { stroke: MUTED })]),
      Plot.line(line, { x: (d: XY) => fx(d.x), y: (d: XY) => fy(d.y), stroke: INK, strokeWidth: 1.6 }),
      ...(bars.length ? [Plot.ruleX(bars, { x: (d: Bar) => fx(d.x), y1: (d: Bar) => fy(d.y1), y2: (d: Bar) => fy(d.y2), stroke: ACCENT, strokeWidth: 1.2 })] : []),
      Plot.dot(pts, { x: (d: XY) => fx(d.x), y: (d: XY) => fy(d.y), fill: ACCENT, r: 3.5, title: (d: XY) => `${formatNumber(d.x)} ${ux.label}: ${formatNumber(d.y)} ${uy.label}` }),
    ],
  });
  const resid = figure({
    caption: `Residuals: data minus the fitted curve${relative ? ', as a percentage of the curve' : ''}${sd ? ' (bars ± 1 sd)' : ''}. ${
      r.method === 'msd'
        ? 'The lags of an MSD share the same displacements, so neighbouring residuals lean the same way even when the model is right; a trend far outside the bars says it misses something.'
        : 'A pattern here (a run of points on one side, a trend) says the model misses something the numbers below do not.'
    }`,
    height: 240,
    x: axis(xLabel, logX, [...xAll(pts), ...xAll(line)], { domain: [Math.min(...xAll(pts), ...xAll(line)), Math.max(...xAll(pts), ...xAll(line))] }),
    y: axis(relative ? 'residual (% of the fitted MSD)' : withUnit('residual', uy), false, []),
    marks: [
      Plot.ruleY([0], { stroke: MUTED }),
      ...(sd ? [Plot.ruleX(pts, { x: (d: Pt) => fx(d.x), y1: (d: Pt) => d.res - d.resSd!, y2: (d: Pt) => d.res + d.resSd!, stroke: ACCENT, strokeWidth: 1.2 })] : []),
      Plot.dot(pts, { x: (d: Pt) => fx(d.x), y: 'res', fill: ACCENT, r: 3.5 }),
    ],
  });
  put(
    results,
    header(f, `Fit: ${METHODS.find((m) => m.id === r.method)!.label.split(' (')[0]}, model ${r.model}`),
    h('div', { class: 'plots' }, main, resid),
    h('h3', null, 'Parameters'),
    paramTable(r),
    r.standardErrorsHonest === false
      ? h('p', { class: 'warn', id: 'understated' }, 'These standard errors understate the uncertainty: the lags of an MSD curve are strongly correlated and the curve does not say how. Fit the tracked positions (track, t, x, y) for honest ones. Applied to the shelf, the value says so in its provenance.')
      : null,
    h('h3', null, 'How well the model describes the data'),
    goodness(r),
    warnings(r),
    storeSection(f, r),
  );
}

function paramTable(r: FitRun): HTMLElement {
  const rows = Object.entries(r.parameters).map(([k, p]) => {
    const status = p.fixed ? 'held fixed, not fitted' : p.atBound ? `on its ${p.atBound} bound: the data do not determine it (no standard error)` : p.sd === null ? 'no standard error' : p.value !== 0 ? `relative standard error ${formatNumber((100 * p.sd) / Math.abs(p.value), 2)} %` : '';
    const words = k === 'effectiveDiffusivity' ? `long-time diffusivity D + v²τ/${r.model === 'active-2d' ? 2 : 6}` : (PARAM_WORDS[k] ?? k);
    return [h('span', null, words, h('span', { class: 'muted' }, ` (${k})`)), h('span', { class: 'num' }, paramText(p)), status];
  });
  return table(['parameter', 'value ± standard error', ''], rows, { id: 'parameters' });
}

/** The goodness of fit in words, by how the points were weighted. */
function goodness(r: FitRun): HTMLElement {
  const k = r.points - r.dof;
  const dofText = `${r.points} points, ${k} parameter${k === 1 ? '' : 's'} fitted: ${r.dof} degree${r.dof === 1 ? '' : 's'} of freedom`;
  const out: Child[] = [h('li', null, dofText, '.')];
  if (r.dof <= 0) out.push(h('li', null, 'No degrees of freedom are left: the curve passes through every point, and nothing can be said about how well the model describes the data.'));
  else if (r.weighting === 'weighted' || r.weighting === 'gls-covariance') {
    const chi2 = r.rss;
    const red = chi2 / r.dof;
    const p = chiSquareUpper(chi2, r.dof);
    const verdict =
      p < 0.01
        ? 'more scatter about the curve than the data’s own uncertainties allow (a chance below 1 %): the model misses something, or the uncertainties are too small.'
        : p > 0.99
          ? 'less scatter than the data’s own uncertainties say (a chance below 1 %): the uncertainties may be too large, or the points are correlated.'
          : 'the scatter about the curve is what the data’s own uncertainties lead one to expect.';
    out.push(
      h(
        'li',
        { id: 'chi-square' },
        `Reduced chi-square ${formatNumber(red, 3)} (chi-square ${formatNumber(chi2, 3)} on ${r.dof} degrees of freedom; a value near 1 is a good fit; the chance of a value at least this large if the model is right: ${formatNumber(p, 2)}): `,
        verdict,
      ),
    );
    out.push(h('li', null, r.weighting === 'gls-covariance' ? `Weighted by the covariance of the MSD between lags (${r.covarianceSource ?? 'from the tracks'}); the standard errors come from that covariance as it stands.` : 'Weighted by 1/sd² point by point; the standard errors are scaled by the observed scatter (√ of the reduced chi-square).'));
  } else if (r.weighting === 'unweighted') {
    const u = displayUnit(axes(r).y.si, [r.residualStandardError]);
    out.push(h('li', null, `Residual standard error ${valueText(r.residualStandardError, null, u)}: the typical distance of a point from the curve. The data carry no uncertainties, so no chi-square test is possible; the standard errors come from this scatter.`));
  } else {
    out.push(h('li', null, `Weighted by the model of the variance of an MSD (∝ MSD² · t), which fixes only relative weights: the residual scale ${formatNumber(r.residualStandardError, 3)} is relative, so no chi-square test is possible. Add an sd column, or fit the tracked positions, for one.`));
  }
  out.push(h('li', null, `R² ${formatNumber(r.rSquared, 4)} (the share of the variation of the data the curve follows, unweighted).`));
  out.push(h('li', { class: r.converged ? '' : 'bad' }, `${cap(STOP_WORDS[r.stop] ?? r.stop)}${r.iterations ? ` after ${r.iterations} iterations` : ''}${r.converged ? '.' : ': the values are the best point reached, not an optimum.'}`));
  return h('ul', { class: 'gof', id: 'goodness' }, out);
}

function warnings(r: FitRun): HTMLElement | null {
  const items: Child[] = [];
  for (const n of r.notes) items.push(h('li', null, n));
  if (items.length === 0) return null;
  return h('div', { class: 'notes', id: 'fit-notes' }, h('h3', null, 'What the fit says about itself'), h('ul', null, items));
}

// ------------------------------------------------------------------ store and apply

let storeButton: HTMLButtonElement | null = null;
/** The species a fit belongs to: the one chosen when it was fitted. */
const fittedSpecies = (f: Fitted | null) => (f ? (species.find((s) => s.id === f.speciesId) ?? null) : chosenSpecies());
function refreshStoreLabel(): void {
  const sp = fittedSpecies(current);
  if (storeButton && storeButton.dataset.stored !== 'yes') {
    storeButton.textContent = sp ? `Store as a measurement of ${sp.name}` : 'Store as a measurement (choose a species)';
    storeButton.disabled = !sp;
  }
}

function storeSection(f: Fitted, r: FitRun): HTMLElement {
  const box = h('section', { class: 'card', id: 'keep', 'aria-labelledby': 'keep-title' });
  const out = h('div', { id: 'store-outcome' });
  storeButton = h('button', { type: 'button', id: 'store' }, 'Store');
  const btn = storeButton;
  refreshStoreLabel();
  btn.addEventListener('click', async () => {
    const sp = fittedSpecies(f);
    if (!sp || current !== f) return;
    btn.disabled = true;
    put(out, h('p', { class: 'muted' }, 'storing…'));
    try {
      // exactly what was fitted: the kept request, not the form
      const m = await api<Measurement>(`/api/species/${encodeURIComponent(sp.id)}/measurements`, { body: f.request });
      if (current !== f) return;
      btn.dataset.stored = 'yes';
      btn.textContent = `Stored as measurement ${m.id}`;
      put(out, h('p', { class: 'msg ok', id: 'stored' }, `Stored as measurement ${m.id} of ${sp.name}: the raw data as fitted, with the fit.`), await applyPanel(m, sp));
    } catch (e) {
      btn.disabled = false;
      put(out);
      page.fail(e);
    }
  });
  put(
    box,
    h('h2', { id: 'keep-title' }, 'Keep this fit'),
    h('p', { class: 'hint' }, `Stores the data exactly as fitted (${r.input.rows} rows, ${f.fileName ?? 'pasted data'}, with the same options) and the fit, as a measurement of the species chosen above. The shelf itself changes only when you apply it.`),
    h('div', { class: 'actions' }, btn),
    out,
  );
  return box;
}

interface Change {
  what: string;
  old: string;
  next: string;
}

/** What applying measurement m to the species would change, and whether it can. */
function plannedChange(m: Measurement, sp: SpeciesRev, use: string, chemical: string): { changes: Change[]; blocked: string | null } {
  const p = m.fit.parameters;
  const coupling = (sp.record.couplings ?? []).find((c) => c.chemical === chemical);
  const bound = (k: string) => (p[k]?.atBound ? `The fitted ${k} ended on its ${p[k]!.atBound} bound: the data do not determine it, so it cannot go on the shelf.` : null);
  if (m.method === 'msd') {
    const nv = p[use]!;
    const u = displayUnit(nv.unit, [nv.value]);
    return {
      changes: [{ what: `diffusivity${use === 'effectiveDiffusivity' ? ' (the long-time diffusivity)' : ''}`, old: sp.record.diffusivity ? storedText(sp.record.diffusivity, 'm^2/s', u) : 'not set', next: valueText(nv.value, nv.sd, u) }],
      blocked: bound(use),
    };
  }
  if (!chemical) return { changes: [], blocked: 'Choose the chemical of the coupling to set (above).' };
  if (m.method === 'kinetics') {
    const v = p.maxRatePerParticle;
    const k = p.michaelis!;
    if (!v) return { changes: [], blocked: 'This fit has no turnover per particle: fit again with the enzyme concentration or the particle number density of the assay.' };
    if (/as in the file/.test(k.unit)) return { changes: [], blocked: 'The substrate column has no unit: fit again with units in the header (e.g. substrate [mM], rate [uM/s]).' };
    const a = coupling?.activity;
    const uv = displayUnit(v.unit, [v.value]);
    const uk = displayUnit(k.unit, [k.value]);
    const oldV = !a ? 'not set' : 'si' in a ? `a constant activity ${storedText(a, 'mol/s', uv)}` : storedText(a.maxRate, 'mol/s', uv);
    const oldK = !a ? 'not set' : 'si' in a ? 'none (constant activity)' : storedText(a.michaelis, 'mol/m^3', uk);
    return {
      changes: [
        { what: `${chemical}: maximal turnover per particle`, old: oldV, next: valueText(v.value, v.sd, uv) },
        { what: `${chemical}: Michaelis constant`, old: oldK, next: valueText(k.value, k.sd, uk) },
      ],
      blocked: bound('maxRate') ?? bound('michaelis'),
    };
  }
  const mu = p.mobility!;
  const u = displayUnit(mu.unit, [mu.value]);
  return { changes: [{ what: `${chemical}: phoretic mobility`, old: coupling?.mobility ? storedText(coupling.mobility, mu.unit, u) : 'not set', next: valueText(mu.value, mu.sd, u) }], blocked: bound('mobility') };
}

async function applyPanel(m: Measurement, stored: SpeciesRev): Promise<HTMLElement> {
  const box = h('div', { class: 'apply', id: 'apply' });
  let sp: SpeciesRev;
  try {
    sp = await api<SpeciesRev>(`/api/species/${encodeURIComponent(stored.id)}`);
  } catch (e) {
    page.fail(e);
    return box;
  }
  const chemical = m.method === 'msd' ? '' : (current?.chemical ?? chemicalSelect.value);
  const active = m.method === 'msd' && 'effectiveDiffusivity' in m.fit.parameters;
  const useSelect = h(
    'select',
    { id: 'use' },
    h('option', { value: 'diffusivity' }, 'the thermal diffusivity D'),
    h('option', { value: 'effectiveDiffusivity' }, 'the long-time diffusivity (what a continuum model of an active species uses)'),
  );
  const preview = h('div', { id: 'apply-preview' });
  const applyButton = h('button', { type: 'button', id: 'apply-button' }, 'Apply to the shelf');
  const outcome = h('div', { id: 'apply-outcome' });
  const author = h('input', { type: 'text', id: 'apply-author', name: 'apply-author', placeholder: 'who applies it (kept in the revision)', autocomplete: 'name' });
  // an uncertainty the fit itself calls too small goes on the shelf only when the user says so
  const understated = (m.fit as { standardErrorsHonest?: boolean }).standardErrorsHonest === false;
  const accept = h('input', { type: 'checkbox', id: 'accept-understated' });
  const draw = () => {
    const plan = plannedChange(m, sp, active ? useSelect.value : 'diffusivity', chemical);
    put(
      preview,
      plan.changes.length ? table(['coefficient', `now (revision ${sp.revision})`, 'after applying'], plan.changes.map((c) => [c.what, c.old, h('strong', null, c.next)]), { id: 'apply-table' }) : null,
      plan.blocked ? h('p', { class: 'warn', id: 'apply-blocked' }, plan.blocked) : null,
    );
    applyButton.disabled = plan.blocked !== null || (understated && !accept.checked);
  };
  useSelect.addEventListener('change', draw);
  accept.addEventListener('change', draw);
  draw();
  applyButton.addEventListener('click', async () => {
    applyButton.disabled = true;
    useSelect.disabled = true;
    put(outcome, h('p', { class: 'muted' }, 'applying…'));
    try {
      const rev = await api<SpeciesRev & { revisionId: number }>(`/api/measurements/${m.id}/apply`, {
        body: { baseRevision: sp.revision, ...(active ? { use: useSelect.value } : {}), ...(chemical ? { chemical } : {}), ...(author.value.trim() ? { author: author.value.trim() } : {}) },
      });
      const at = species.findIndex((s) => s.id === rev.id);
      if (at >= 0) species[at] = rev;
      applyButton.textContent = 'Applied';
      put(
        outcome,
        h(
          'div',
          { class: 'msg ok', id: 'applied' },
          h('p', null, `Applied: ${rev.name} is now at revision ${rev.revision} (was ${sp.revision}); the changed values point back to measurement ${m.id}.`),
          h('p', null, h('a', { href: `/shelf/species/${encodeURIComponent(rev.id)}`, id: 'species-link' }, `Open ${rev.name} on the shelf`)),
        ),
      );
    } catch (e) {
      useSelect.disabled = false;
      put(outcome);
      page.fail(e);
      if (e instanceof ApiError && e.status === 409) {
        // the species changed since the table was drawn: show its values now, then the user decides again
        try {
          sp = await api<SpeciesRev>(`/api/species/${encodeURIComponent(stored.id)}`);
          draw();
          page.say(`${sp.name} was changed by someone else (now revision ${sp.revision}): the table shows its current values. Apply again if the change still stands.`, 'error');
        } catch (e2) {
          page.fail(e2);
        }
      } else applyButton.disabled = false;
    }
  });
  put(
    box,
    h('h3', null, `Apply measurement ${m.id} to ${sp.name}`),
    active ? field('Which diffusivity goes on the shelf', useSelect) : null,
    preview,
    h('p', { class: 'hint' }, 'The value is written in the unit the shelf already uses for it, rounded to the precision its standard error supports. The planner then uses it, with its uncertainty, in every new plan.'),
    understated
      ? h('div', { class: 'warn', id: 'understated-apply' }, h('p', null, 'The ± this fit gives is too small (the lags of an MSD curve are correlated; see above), and every plan made after applying would take it at its word: its bands would be too narrow. Fit the tracked positions for an honest uncertainty, or apply knowing this.'), h('label', { for: 'accept-understated' }, accept, ' I know the uncertainty written is too small; apply anyway'))
      : null,
    field('Applied by', author),
    h('div', { class: 'actions' }, applyButton),
    outcome,
  );
  return box;
}

// ------------------------------------------------------------------ Stokes–Einstein

function renderStokes(f: Fitted, r: StokesRun): void {
  const p = r.parameters;
  const rows: Child[][] = [
    [PARAM_WORDS.diffusivity!, fmtSi(p.diffusivity.value, p.diffusivity.unit, 4)],
    [PARAM_WORDS.rotationalDiffusivity!, fmtSi(p.rotationalDiffusivity.value, p.rotationalDiffusivity.unit, 4)],
    ['rotation time τ = 1/D_r', fmtSi(p.rotationTime.value, p.rotationTime.unit, 4)],
    [PARAM_WORDS.viscosity!, `${fmtSi(p.viscosity.value, p.viscosity.unit, 4)} (${r.viscositySource})`],
    ['temperature', fmtSi(r.temperature, 'K', 4)],
  ];
  put(
    results,
    header(f, 'Stokes–Einstein: a sphere in a solvent'),
    table(['quantity', 'value'], rows, { id: 'parameters' }),
    h(
      'p',
      { class: 'hint' },
      'D = k_B T/(6π η a) and D_r = k_B T/(8π η a³) for a sphere of hydrodynamic radius a, far from walls. These are estimates from the size, with no uncertainty of their own: a particle near the chamber floor, a non-spherical one or a radius from a dry size diffuses differently. To put a diffusivity on the shelf, measure it (an MSD fit) or edit the species on its page.',
    ),
  );
}

// ------------------------------------------------------------------ quantal

function renderQuantal(f: Fitted, r: QuantalRun): void {
  const e = r.parameters.ed50;
  const ux = displayUnit(e.unit, r.data.map((d) => d.dose));
  const logX = r.scale === 'log10' && r.data.every((d) => d.dose > 0);
  const b0 = r.parameters.intercept.value;
  const b1 = r.parameters.slope.value;
  const doses = r.data.map((d) => d.dose);
  const lo = Math.min(...doses);
  const hi = Math.max(...doses);
  const line =
    b0 !== null && b1 !== null && doses.length > 1
      ? grid(logX ? lo / 1.5 : Math.max(0, lo - 0.1 * (hi - lo)), logX ? hi * 1.5 : hi + 0.1 * (hi - lo), logX).map((d) => ({ x: d / ux.factor, y: quantalProbability(r.link, b0 + b1 * (r.scale === 'log10' ? Math.log10(d) : d)) }))
      : [];
  const pts = r.data.map((d) => ({ x: d.dose / ux.factor, y: d.responded / d.tubes, n: d.tubes, k: d.responded }));
  const xLabel = withUnit('dose', ux);
  const qx = lg(logX);
  const plot = figure({
    caption: `Fraction of tubes that responded at each dose (dots) and the fitted ${r.link} curve (line)${logX ? '; logarithmic dose axis' : ''}.${line.length ? '' : ' No curve: the data give no estimate (see below).'}`,
    x: axis(xLabel, logX, [...pts.map((d) => d.x), ...line.map((d) => d.x)]),
    y: axis('fraction responded (of the tubes at the dose)', false, [], { domain: [0, 1] }),
    marks: [
      Plot.ruleY([0.5], { stroke: MUTED, strokeDasharray: '4,3' }),
      Plot.line(line, { x: (d: { x: number }) => qx(d.x), y: 'y', stroke: INK, strokeWidth: 1.6 }),
      Plot.dot(pts, { x: (d: { x: number }) => qx(d.x), y: 'y', fill: ACCENT, r: 4, title: (d: { k: number; n: number }) => `${d.k} of ${d.n} responded` }),
      ...(e.value !== null ? [Plot.ruleX([qx(e.value / ux.factor)], { stroke: ACCENT, strokeDasharray: '2,3' })] : []),
    ],
  });
  const dataTable = table(
    ['dose', 'tubes n', 'responded', 'fraction', 'fitted probability'],
    r.data.map((d) => [`${formatNumber(d.dose / ux.factor, 6)}${ux.label ? ` ${ux.label}` : ''}`, String(d.tubes), String(d.responded), formatNumber(d.responded / d.tubes, 3), d.fitted === null ? '—' : formatNumber(d.fitted, 3)]),
    { id: 'quantal-data' },
  );
  // on the dose itself the slope is per SI unit of dose: per the unit shown, it is times that unit's size
  const slopeScale = r.scale === 'log10' ? 1 : ux.factor;
  const ed50Text =
    e.value === null
      ? e.bracket
        ? `not estimable: the response switches between ${e.bracket.from === null ? 'the lowest dose' : valueText(e.bracket.from, null, ux)} and ${e.bracket.to === null ? 'the highest dose' : valueText(e.bracket.to, null, ux)}`
        : 'not estimable from these data'
      : valueText(e.value, e.sd, ux);
  const rows: Child[][] = [
    ['dose at which half the tubes respond (ED50)', h('span', { class: 'num' }, ed50Text)],
    ['95 % interval (delta method)', e.interval ? `${valueText(e.interval.lower, null, ux)} to ${valueText(e.interval.upper, null, ux)}` : '—'],
    ['95 % interval (Fieller)', e.fieller ? `${valueText(e.fieller.lower, null, ux)} to ${valueText(e.fieller.upper, null, ux)}` : 'unbounded: the slope is not clearly different from zero'],
    [
      `slope (per ${r.scale === 'log10' ? 'decade of dose' : ux.label || 'unit of dose'})`,
      r.parameters.slope.value === null ? '—' : valueText(r.parameters.slope.value * slopeScale, r.parameters.slope.sd === null ? null : r.parameters.slope.sd * slopeScale, { label: '', factor: 1 }),
    ],
  ];
  const gof: Child[] = [h('li', null, `${r.points} doses, ${r.tubes} tubes, ${r.responded} responded; ${r.dof} degrees of freedom.`)];
  if (r.pearsonChiSquare !== null && r.pearsonP !== null && r.dof > 0) {
    gof.push(
      h(
        'li',
        { id: 'chi-square' },
        `Pearson chi-square ${formatNumber(r.pearsonChiSquare, 3)} on ${r.dof} degrees of freedom (reduced ${formatNumber(r.pearsonChiSquare / r.dof, 3)}; chance of at least this much if the model is right: ${formatNumber(r.pearsonP, 2)}): `,
        r.pearsonP < 0.05 ? 'the tubes scatter more than chance allows about the curve: the link may be wrong, or the tubes at a dose are not alike (overdispersion), and the interval is then too narrow.' : 'the fractions scatter about the curve as chance alone would make them.',
      ),
    );
  }
  if (r.deviance !== null) gof.push(h('li', null, `Deviance ${formatNumber(r.deviance, 3)}${r.nullDeviance !== null ? ` (a single fraction for every dose: ${formatNumber(r.nullDeviance, 3)})` : ''}.`));
  gof.push(h('li', { class: r.converged ? '' : 'bad' }, r.converged ? 'The fit converged.' : `No estimate: ${r.stop}${r.separation ? ` (the responses split cleanly by dose: ${r.separation.kind} separation)` : ''}.`));
  put(
    results,
    header(f, `Dose–response: ${r.link} on ${r.scale === 'log10' ? 'log10 dose' : 'dose'}`),
    h('div', { class: 'plots' }, plot),
    h('h3', null, 'Estimates'),
    table(['quantity', 'value ± standard error'], rows, { id: 'parameters' }),
    h('h3', null, 'How well the model describes the data'),
    h('ul', { class: 'gof', id: 'goodness' }, gof),
    r.notes.length || r.excluded.length
      ? h(
          'div',
          { class: 'notes', id: 'fit-notes' },
          h('h3', null, 'What the fit says about itself'),
          h('ul', null, r.notes.map((n) => h('li', null, n)), r.excluded.map((x) => h('li', null, `left out: ${valueText(x.dose, null, ux)}, ${x.responded} of ${x.tubes} — ${x.reason}`))),
        )
      : null,
    h('h3', null, 'The data as fitted'),
    dataTable,
    h('p', { class: 'hint' }, 'A dose–response fit is not stored here: brink keeps tube outcomes with the plan they came from (a plan’s Outcomes page), where they update the coefficients.'),
  );
}

// ------------------------------------------------------------------ start

const preMethod = params.get('method');
if (preMethod && METHODS.some((m) => m.id === preMethod)) methodSelect.value = preMethod;
showFor(method());
emptyState();
void loadShelf();
