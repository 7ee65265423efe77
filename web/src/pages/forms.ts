/**
 * What forms past onset (/plans/:id/forms?candidate=…): the nonlinear simulation (docs/model.md §14–§16)
 * of the plan's base with one candidate at each dose of its bench-sheet series, run as a job
 * (POST /api/plans/:id/candidates/:species/simulate). Per dose: the kymograph (1D) or the frames with a
 * slider and Play (2D); the measured early growth beside the linear prediction; the dominant length over
 * time with the fuel's run-out marked; the clusters and their make-up beside the linear composition;
 * bands; the run's warnings in words.
 */
import { api } from '../lib/api.js';
import { field, h, put, type Child } from '../lib/dom.js';
import { fmt, fmtAmountOf, fmtDuration, formatNumber, type AmountContext } from '../lib/format.js';
import { followJob, jobView, type Job } from '../lib/job.js';
import { mountPage, pathId } from '../lib/layout.js';
import { ACCENT, figure, INK, Plot, STATES } from '../lib/plot.js';
import { GENERIC_WARNING, WARNING_WORDS } from './forms-words.js';
import { splitList } from './sheet-options.js';
import './forms.css';

type State = 'stable' | 'stationary' | 'oscillatory';
interface Summary {
  linear: { growthRate: number; wavelength: number | null; state: State; oscillationPeriod: number | null };
  measured: { growthRate: number | null; wavelength: number | null; oscillationPeriod: number | null };
  dominantLength: [number, number | null][];
  clusters: { count: number; sizes: number[]; composition: { species: string; fraction: number }[] };
  bands: { speed: number; period: number | null } | null;
  conservation: { maxRelativeError: number };
  fuelRunOut: { chemical: string; time: number } | null;
  grid: { dims: 1 | 2; points: number; length: number; cellSize: number; walls: string };
  time: number;
  duration: number;
  run: { steps: number; completed: boolean; maxVolumeFraction: number; clusterCoveredFraction: number };
  warnings: { code: string; message: string }[];
}
interface Dose {
  dose: number;
  factor: number | null;
  linear: { state: State; growthRate: number; growthTime: number | null; wavelength: number | null; oscillationPeriod: number | null; composition: { species: string; weight: number; magnitude: number }[] };
  summary: Summary;
  species: { id: string; mean: number; particleVolume: number }[];
  kymograph: ({ times: number[]; positions: number[] } & Stored) | null;
  frames: ({ times: number[]; points: number; cellSize: number } & Stored) | null;
}
/** What the job stores of a picture: departures as integers × a scale per species and frame, cells averaged in blocks. */
interface Stored {
  deviation: { scale: number[][]; values: number[][][] };
  block: number;
  simulated: { points: number; times: number };
  downsampled: string;
}
/** The departures of a dose's picture, decoded once: [species][frame][cell] = density ÷ mean − 1 = values × scale. */
const decoded = new WeakMap<Dose, number[][][]>();
function devOf(d: Dose): number[][][] {
  let dev = decoded.get(d);
  if (!dev) {
    const s = d.kymograph ?? d.frames;
    dev = s ? s.deviation.values.map((frames, m) => frames.map((row, j) => row.map((q) => q * s.deviation.scale[m]![j]!))) : [];
    decoded.set(d, dev);
  }
  return dev;
}

/** The note in the picture's caption, after its words. */
function withNote(fig: HTMLElement, note: HTMLElement): HTMLElement {
  (fig.querySelector('figcaption') ?? fig).append(note);
  return fig;
}

/** Under a picture, in words: what it shows of the simulated grid (a display grid is not the simulation's). */
function shownNote(d: Dose): HTMLElement {
  const s = (d.kymograph ?? d.frames)!;
  const n = s.simulated.points;
  const when = d.kymograph
    ? d.kymograph.times.length === s.simulated.times
      ? `all ${s.simulated.times} stored times`
      : `${d.kymograph.times.length} of the ${s.simulated.times} stored times`
    : d.frames!.times.length === s.simulated.times
      ? `${s.simulated.times} frames`
      : `${d.frames!.times.length} of the ${s.simulated.times} stored frames`;
  const where = d.kymograph
    ? s.block === 1
      ? `at all ${n} simulated cells`
      : `at ${d.kymograph.positions.length} positions, each the mean of ${s.block} of the ${n} simulated cells`
    : s.block === 1
      ? `at all ${n} × ${n} simulated cells`
      : `at ${d.frames!.points} × ${d.frames!.points} of the ${n} × ${n} simulated cells (each the mean of ${s.block} × ${s.block})`;
  return h(
    'p',
    { class: 'muted shown' },
    `Shown ${where}, ${when}.`,
    s.block > 1 ? ' Averaging keeps each species\' amount but widens and lowers clusters narrower than a shown cell.' : '',
    ' The clusters, lengths and growth on this page are measured on the full simulated grid.',
  );
}
interface Result {
  plan: number;
  candidate: string;
  dims: 1 | 2;
  chemicals: 'quasi-static' | 'dynamic';
  points: number;
  seed: number;
  durationFrom: string;
  series: { from: string; note: string } | null;
  doses: Dose[];
}
interface PlanLite {
  id: number;
  name: string;
  result: { candidates: { species: string; feasible: boolean; rank: number }[] };
  inputs?: { candidates?: { id: string; radius?: number | null; materialDensity?: number | null }[] };
}

/** At most this many doses per run (the route's bound, SIMULATE_BOUNDS.doses in server/http/routes/forms.ts). */
const MAX_DOSES = 12;

const page = mountPage('What forms past onset', 'plans');
const planId = pathId(/^\/plans\/(\d+)\/forms/);

// ------------------------------------------------------------------ units of the axes

/** A length axis in µm or mm, whichever reads best for the chamber. */
function lengthUnit(L: number): { label: string; f: number } {
  return L < 1e-3 ? { label: 'µm', f: 1e6 } : { label: 'mm', f: 1e3 };
}
/** A time axis in s, min or h. */
function timeUnit(T: number): { label: string; f: number } {
  if (T >= 3 * 3600) return { label: 'h', f: 1 / 3600 };
  if (T >= 180) return { label: 'min', f: 1 / 60 };
  return { label: 's', f: 1 };
}
/** The candidate's size and material (for µg/mL beside particles/mL, as the plan page writes a dose); set in main. */
let amountCtx: AmountContext = {};
const doseText = (x: number) => (x === 0 ? '0 particles/mL' : fmtAmountOf(x, amountCtx));

/** An engine message as a sentence: its first letter capitalised, unless it starts with a species' or chemical's id. */
function sentence(message: string, ids: string[]): string {
  const first = /^[a-z]+(?![\w.:-])/.exec(message)?.[0];
  return first && !ids.includes(first) ? message[0]!.toUpperCase() + message.slice(1) : message;
}

/**
 * A warning as the page shows it: the page's words (GENERIC_WARNING for a code it has no words for), then the
 * engine's message(s) in a closed details — one per dose when the warning stands for every dose.
 */
function warningItem(code: string, messages: { dose?: string; message: string }[], ids: string[], extra: Child = null): HTMLElement {
  return h(
    'li',
    { 'data-code': code },
    h('span', { class: 'words' }, WARNING_WORDS[code] ?? GENERIC_WARNING),
    extra,
    h(
      'details',
      null,
      h('summary', null, 'details (as the engine reports it, SI units)'),
      messages.map((m) => h('p', { class: 'muted engine' }, m.dose ? h('strong', null, `${m.dose}: `) : null, sentence(m.message, ids))),
    ),
  );
}

// ------------------------------------------------------------------ the colour of a field

type Show = { kind: 'total' } | { kind: 'species'; index: number };
function fieldOf(d: Dose, show: Show, frame: (m: number) => number[]): number[] {
  if (show.kind === 'species') return frame(show.index).map((v) => 1 + v);
  // total volume fraction in %: Σ_m (ρ_m/ρ̄_m) ρ̄_m v_m
  let out: number[] | null = null;
  d.species.forEach((s, m) => {
    const r = frame(m);
    const w = s.mean * s.particleVolume * 100;
    out = out ? out.map((v, i) => v + w * (1 + r[i]!)) : r.map((v) => w * (1 + v));
  });
  return out ?? [];
}
const showLabel = (d: Dose, show: Show) =>
  show.kind === 'total' ? 'total volume fraction (%)' : d.species[show.index]!.mean > 0 ? `${d.species[show.index]!.id}: density ÷ its mean (×)` : `${d.species[show.index]!.id} is absent at this dose`;

/** Below this largest departure from the mean (any species present, any stored frame) the page calls it no pattern. */
const NO_PATTERN = 0.01;
/** The largest |density ÷ mean − 1| of any species present at the dose over all stored frames. */
function largestDeparture(d: Dose): number {
  let big = 0;
  devOf(d).forEach((frames, m) => {
    if (d.species[m]!.mean > 0) for (const row of frames) for (const v of row) big = Math.max(big, Math.abs(v));
  });
  return big;
}
/** The shown field's value in a uniform sample. */
function uniformOf(d: Dose, show: Show): number {
  return show.kind === 'species' ? 1 : d.species.reduce((a, s) => a + s.mean * s.particleVolume * 100, 0);
}
/**
 * With no pattern (or an absent species), the colour range is held at ±1 % of the uniform value: stretched
 * to the starting unevenness (±1e-5), noise would look like a vivid pattern.
 */
function heldDomain(d: Dose, show: Show): [number, number] | null {
  const absent = show.kind === 'species' && !(d.species[show.index]!.mean > 0);
  if (!absent && largestDeparture(d) >= NO_PATTERN) return null;
  const c = uniformOf(d, show);
  return c > 0 ? [c * (1 - NO_PATTERN), c * (1 + NO_PATTERN)] : null;
}
/** The legend's ticks for a held range: inside it (a tick at an end of the ramp has its label cut off). */
const heldTicks = (held: [number, number]) => {
  const c = (held[0] + held[1]) / 2;
  return { ticks: [c - (c - held[0]) / 2, c, c + (held[1] - c) / 2], tickFormat: (v: number) => formatNumber(v, 4) };
};
/** The caption's words for a held colour range. */
function heldNote(d: Dose, show: Show): string {
  if (show.kind === 'species' && !(d.species[show.index]!.mean > 0)) return ' This species is absent at this dose: one colour.';
  const big = largestDeparture(d);
  return ` No pattern: every species stays within ${formatNumber(100 * big, 2)} % of its mean over the whole run (${d.linear.state === 'stable' ? 'only the starting unevenness, dying away' : 'the growing unevenness is still too small to see'}); the colour range is held at ±1 % of the mean, so this shows as one colour.`;
}

function kymograph(d: Dose, show: Show): HTMLElement {
  const k = d.kymograph!;
  const Lu = lengthUnit(d.summary.grid.length);
  const Tu = timeUnit(d.summary.time);
  const values = k.times.flatMap((_, j) => fieldOf(d, show, (m) => devOf(d)[m]![j]!));
  const fuel = d.summary.fuelRunOut && d.summary.fuelRunOut.time <= d.summary.time ? d.summary.fuelRunOut : null;
  const held = heldDomain(d, show);
  return figure({
    caption: `Kymograph at ${doseText(d.dose)}: ${showLabel(d, show)} across the chamber (horizontal) over time (down).${fuel ? ` Dashed line: ${fuel.chemical} would run out (${fmtDuration(fuel.time)}).` : ''}${held ? heldNote(d, show) : ''}`,
    height: 300,
    x: { label: `position across the chamber (${Lu.label})`, domain: [0, d.summary.grid.length * Lu.f] },
    y: { label: `time (${Tu.label})`, domain: [0, d.summary.time * Tu.f], reverse: true, grid: false },
    color: { type: 'linear', scheme: 'viridis', legend: true, label: showLabel(d, show), ...(held ? { domain: held, ...heldTicks(held) } : {}) },
    marks: [
      Plot.raster(values, { width: k.positions.length, height: k.times.length, x1: 0, x2: d.summary.grid.length * Lu.f, y1: 0, y2: d.summary.time * Tu.f, imageRendering: 'pixelated' }),
      fuel ? Plot.ruleY([fuel.time * Tu.f], { stroke: '#ffffff', strokeDasharray: '6,4', strokeWidth: 1.5 }) : null,
    ],
  });
}

/** 2D: the frames on a canvas with a slider and Play/Pause. */
function framesView(d: Dose, show: Show): HTMLElement {
  const f = d.frames!;
  const n = f.points;
  const data = f.times.map((_, j) => fieldOf(d, show, (m) => devOf(d)[m]![j]!));
  let lo = Infinity;
  let hi = -Infinity;
  for (const fr of data) for (const v of fr) {
    if (v < lo) lo = v;
    if (v > hi) hi = v;
  }
  const held = heldDomain(d, show);
  if (held) [lo, hi] = held;
  if (!(hi > lo)) hi = lo + 1e-9;
  const scale = Plot.scale({ color: { type: 'linear', scheme: 'viridis', domain: [lo, hi] } });
  const size = 320;
  const canvas = h('canvas', { width: size, height: size, class: 'frame', role: 'img', 'aria-label': `${showLabel(d, show)} over the square chamber` });
  const Lu = lengthUnit(d.summary.grid.length);
  const Tu = timeUnit(d.summary.time);
  const slider = h('input', { type: 'range', min: 0, max: f.times.length - 1, step: 1, value: f.times.length - 1, 'aria-label': 'frame' });
  const when = h('output', null);
  const draw = (j: number) => {
    const ctx = canvas.getContext('2d');
    if (!ctx) return;
    const c = size / n;
    const fr = data[j]!;
    for (let y = 0; y < n; y++)
      for (let x = 0; x < n; x++) {
        ctx.fillStyle = String(scale.apply(fr[y * n + x]!));
        ctx.fillRect(Math.floor(x * c), Math.floor((n - 1 - y) * c), Math.ceil(c), Math.ceil(c));
      }
    when.textContent = `t = ${formatNumber(f.times[j]! * Tu.f, 3)} ${Tu.label} (frame ${j + 1} of ${f.times.length})`;
  };
  slider.addEventListener('input', () => draw(Number(slider.value)));
  const play = h('button', { type: 'button', class: 'secondary' }, 'Play');
  let timer: number | null = null;
  play.addEventListener('click', () => {
    if (timer !== null) {
      clearInterval(timer);
      timer = null;
      play.textContent = 'Play';
      return;
    }
    if (Number(slider.value) >= f.times.length - 1) slider.value = '0';
    play.textContent = 'Pause';
    timer = window.setInterval(() => {
      const j = Number(slider.value) + 1;
      if (j >= f.times.length) {
        clearInterval(timer!);
        timer = null;
        play.textContent = 'Play';
        return;
      }
      slider.value = String(j);
      draw(j);
    }, 400);
  });
  const legend = Plot.legend({ color: { type: 'linear', scheme: 'viridis', domain: [lo, hi], label: showLabel(d, show), ...(held ? heldTicks(held) : {}) }, marginLeft: 24, marginRight: 24, width: 320 });
  for (const s of legend.querySelectorAll('style')) s.remove();
  queueMicrotask(() => draw(f.times.length - 1));
  return h(
    'figure',
    { class: 'plot-figure frames' },
    legend,
    canvas,
    h('div', { class: 'row' }, play, h('label', null, 'Frame ', slider), when),
    h('figcaption', null, `Colour: ${showLabel(d, show)} over the square chamber: x across (left to right) and y across (bottom to top), each 0–${formatNumber(d.summary.grid.length * Lu.f, 3)} ${Lu.label}; one colour scale for all frames.${held ? heldNote(d, show) : ''}`),
  );
}

function dominantPlot(d: Dose): HTMLElement {
  const flat = largestDeparture(d) < NO_PATTERN;
  if (flat && d.linear.state === 'stable')
    return h('p', { class: 'muted no-length' }, 'No dominant length: no pattern forms, and the length read from the dying starting unevenness would mean nothing, so it is not plotted.');
  const Lu = lengthUnit(d.summary.grid.length);
  const Tu = timeUnit(d.summary.time);
  const pts = d.summary.dominantLength.filter((p): p is [number, number] => p[1] !== null).map(([t, l]) => ({ t: t * Tu.f, l: l * Lu.f }));
  const fuel = d.summary.fuelRunOut && d.summary.fuelRunOut.time <= d.summary.time ? d.summary.fuelRunOut : null;
  return figure({
    caption: `Dominant length over time (the structure factor's mean wavelength)${d.linear.wavelength !== null ? '; dotted: the linear wavelength' : ''}${fuel ? `; dashed: ${fuel.chemical} would run out` : ''}.${flat ? ' No pattern yet (every species within 1 % of its mean): this is the length of the growing unevenness, not of clusters.' : ''}`,
    height: 200,
    x: { label: `time (${Tu.label})`, domain: [0, d.summary.time * Tu.f] },
    y: { label: `dominant length (${Lu.label})`, zero: true },
    marks: [
      Plot.line(pts, { x: 't', y: 'l', stroke: INK, strokeWidth: 1.8 }),
      d.linear.wavelength !== null ? Plot.ruleY([d.linear.wavelength * Lu.f], { stroke: INK, strokeDasharray: '2,3' }) : null,
      fuel ? Plot.ruleX([fuel.time * Tu.f], { stroke: ACCENT, strokeDasharray: '6,4', strokeWidth: 1.5 }) : null,
    ],
  });
}

/** The largest |density ÷ mean − 1| of any species in the first and the last stored frame. */
function departures(d: Dose): { first: number; last: number } {
  const rows = devOf(d);
  const at = (j: (n: number) => number) => Math.max(0, ...rows.flatMap((r) => (r[j(r.length)] ?? []).map(Math.abs)));
  return { first: at(() => 0), last: at((n) => n - 1) };
}

function growthTable(d: Dose): HTMLElement {
  const s = d.summary;
  // a growth the run itself does not bear out (the pattern grew by less than a tenth of the e-foldings the fit
  // claims over the run — a stable sample whose tiny decaying unevenness the fit read as growth): rounding, not growth
  const dep = departures(d);
  const claimed = s.measured.growthRate !== null && s.measured.growthRate > 0 ? s.measured.growthRate * s.time : 0;
  const unfounded = claimed > 0 && dep.first > 0 && Math.log(Math.max(dep.last, 1e-300) / dep.first) < 0.1 * claimed;
  const gt = (r: number | null) => (r === null ? '—' : r > 0 ? `grows ×e every ${fmtDuration(1 / r)}` : `decays (×1/e every ${fmtDuration(-1 / r)})`);
  const wl = (x: number | null) => (x === null ? 'none (uniform)' : fmt(x, 'length'));
  const rows: Child[][] = [
    ['growth', gt(d.linear.growthRate), unfounded ? h('span', null, 'not measurable: ', h('span', { class: 'muted' }, `the pattern did not grow (largest departure from the mean ${formatNumber(100 * dep.first, 2)} % at the start, ${formatNumber(100 * dep.last, 2)} % at the end), so the early-window fit (${gt(s.measured.growthRate)}) saw rounding, not growth`)) : gt(s.measured.growthRate)],
    ['wavelength', wl(d.linear.wavelength), unfounded ? '—' : wl(s.measured.wavelength)],
  ];
  if (d.linear.oscillationPeriod !== null || (!unfounded && s.measured.oscillationPeriod !== null)) rows.push(['period', d.linear.oscillationPeriod === null ? '—' : fmtDuration(d.linear.oscillationPeriod), s.measured.oscillationPeriod === null || unfounded ? '—' : fmtDuration(s.measured.oscillationPeriod)]);
  return h(
    'table',
    { class: 'compare', 'aria-label': 'Early growth: linear prediction and the run' },
    h('thead', null, h('tr', null, h('th', { scope: 'col' }, 'Early growth'), h('th', { scope: 'col' }, 'linear prediction'), h('th', { scope: 'col' }, 'measured in the run'))),
    h('tbody', null, rows.map((r) => h('tr', null, h('th', { scope: 'row' }, r[0]), h('td', null, r[1]), h('td', null, r[2])))),
  );
}

function clustersView(d: Dose): HTMLElement {
  const c = d.summary.clusters;
  const covered = d.summary.run.clusterCoveredFraction;
  const lin = new Map(d.linear.composition.map((x) => [x.species, x]));
  const linWord = (id: string) => {
    const e = lin.get(id);
    if (!e || d.linear.state === 'stable') return 'no growing mode';
    if (Math.abs(e.weight) < 0.05 * Math.max(...d.linear.composition.map((x) => Math.abs(x.weight)), 1e-30)) return 'hardly takes part';
    const lead = d.linear.composition.reduce((a, b) => (Math.abs(b.weight) > Math.abs(a.weight) ? b : a));
    return Math.sign(e.weight) === Math.sign(lead.weight) ? `gathers (weight ${formatNumber(e.weight, 2)})` : `pushed out (weight ${formatNumber(e.weight, 2)})`;
  };
  const runWord = (f: number) => (c.count === 0 ? '—' : f > covered * 1.1 ? 'gathered' : f < covered * 0.9 ? 'pushed out' : 'as elsewhere');
  return h(
    'div',
    { class: 'clusters' },
    h('p', null, c.count === 0 ? (d.summary.warnings.some((w) => w.code === 'nothing-formed-yet') ? 'No clusters yet: the run ended while the sample was still nearly uniform (see the warnings), not because none form.' : d.linear.state === 'stable' ? 'No clusters: the sample is stable.' : 'No clusters at the end of the run (nowhere is the volume fraction 1.2 × the mean).') : `${c.count} cluster${c.count === 1 ? '' : 's'} at the end, ${d.summary.grid.dims === 1 ? 'length' : 'diameter'}${c.count === 1 ? '' : 's'} ${c.sizes.map((x) => fmt(x, 'length')).join(', ')}; together they cover ${formatNumber(100 * covered, 3)} % of the chamber.`),
    h(
      'table',
      { class: 'compare', 'aria-label': 'Cluster make-up beside the linear prediction' },
      h('thead', null, h('tr', null, ['Species', 'share of its particles in clusters', 'in the run', 'linear prediction (mode composition)'].map((t) => h('th', { scope: 'col' }, t)))),
      h(
        'tbody',
        null,
        d.species.map((sp) => {
          const f = c.composition.find((x) => x.species === sp.id)?.fraction ?? 0;
          if (!(sp.mean > 0)) return h('tr', { class: 'absent' }, h('th', { scope: 'row', class: 'mono' }, sp.id), h('td', null, '—'), h('td', { colspan: 2 }, 'absent at this dose (no particles)'));
          return h('tr', null, h('th', { scope: 'row', class: 'mono' }, sp.id), h('td', null, c.count === 0 ? '—' : `${formatNumber(100 * f, 3)} %`), h('td', null, runWord(f)), h('td', null, linWord(sp.id)));
        }),
      ),
    ),
    h('p', { class: 'muted' }, 'A species the clusters gather holds a larger share of its particles in them than the share of the chamber they cover; one they push out, a smaller share. The linear prediction: species whose weight in the fastest mode has the sign of the leading one gather with it.'),
  );
}

/** The extra words of a warning that the page can put in bench units (how much longer to run). */
function warningExtra(d: Dose, w: { code: string; message: string }): Child {
  if (w.code !== 'nothing-formed-yet') return null;
  const more = /need about ([\d.e+-]+) s more/.exec(w.message);
  return more && Number(more[1]) > 0 ? ` At the linear growth rate, a clear pattern needs about ${fmtDuration(Number(more[1]))} more.` : null;
}

/** The ids an engine message may start with (kept as written). */
const idsOf = (d: Dose): string[] => [...d.species.map((x) => x.id), ...(d.summary.fuelRunOut ? [d.summary.fuelRunOut.chemical] : [])];

/** The warnings every dose has (the same words for each): listed once above the doses, with each dose's details. */
function commonWarnings(r: Result): Set<string> {
  if (r.doses.length < 2) return new Set();
  const sets = r.doses.map((d) => new Set(d.summary.warnings.map((w) => w.code)));
  return new Set([...sets[0]!].filter((c) => c !== 'nothing-formed-yet' && sets.every((x) => x.has(c))));
}

function doseSection(d: Dose, show: Show, index: number, common: Set<string>): HTMLElement {
  const s = d.summary;
  const title = `${doseText(d.dose)}${d.factor !== null ? ` (${formatNumber(d.factor, 3)} × the sheet's 1 × dose)` : ''}${d.dose === 0 ? ' — the no-dopant control' : ''}`;
  // the largest departure from the mean at the end of the run: a decaying or barely grown pattern has no bands to speak of
  const lastRel = devOf(d).map((rows) => rows[rows.length - 1] ?? []);
  const departure = Math.max(0, ...lastRel.flat().map((v) => Math.abs(v)));
  const bands = s.bands && departure < 0.01
    ? h('p', { class: 'muted' }, `No pattern to speak of at the end (densities within ${formatNumber(100 * departure, 2)} % of their means): no bands.`)
    : s.bands
    ? h(
        'p',
        null,
        s.bands.speed === 0 ? 'The pattern changes in time but does not travel' : `Bands travel at ${fmt(Math.abs(s.bands.speed), 'speed')}`,
        s.bands.period !== null ? `, period ${fmtDuration(s.bands.period)}` : '',
        '.',
        s.warnings.some((w) => w.code === 'positivity-repaired' || w.code === 'above-close-packing' || w.code === 'clusters-under-resolved') ? h('span', { class: 'flag' }, ' The grid is too coarse for the cluster edges (see the warnings): this motion may come from the grid, not the sample; run with more points before trusting it.') : null,
      )
    : s.grid.dims === 1
      ? h('p', { class: 'muted' }, departure < 0.01 ? 'No bands to read: no pattern has formed.' : 'No travelling bands: the pattern is static over the second half of the run.')
      : null;
  const warnings = s.warnings.filter((w) => (w.code !== 'linear-modes-1d' || s.grid.dims === 2) && !common.has(w.code));
  return h(
    'section',
    { class: 'dose', 'aria-labelledby': `dose-${index}` },
    h('h3', { id: `dose-${index}` }, title, ' ', h('span', { class: `state state-${d.linear.state}` }, STATES[d.linear.state]?.label ?? d.linear.state)),
    h('p', { class: 'muted' }, `Simulated ${fmtDuration(s.time)}${s.run.completed ? '' : ` of ${fmtDuration(s.duration)} asked for`} in ${s.run.steps} steps; particle numbers kept to within ${s.conservation.maxRelativeError > 0 ? `${formatNumber(100 * s.conservation.maxRelativeError, 2)} %` : 'rounding'}; largest local volume fraction ${formatNumber(100 * s.run.maxVolumeFraction, 3)} %.`),
    h('div', { class: 'dose-grid' }, h('div', null, withNote(s.grid.dims === 1 ? kymograph(d, show) : framesView(d, show), shownNote(d))), h('div', null, growthTable(d), dominantPlot(d))),
    h('h4', null, 'Clusters and their make-up'),
    clustersView(d),
    bands,
    warnings.length
      ? h('div', { class: 'warnings' }, h('h4', null, common.size ? 'Warnings (besides those for every dose above)' : 'Warnings'), h('ul', null, warnings.map((w) => warningItem(w.code, [{ message: w.message }], idsOf(d), warningExtra(d, w)))))
      : null,
  );
}

// ------------------------------------------------------------------ the page

async function main(): Promise<void> {
  if (!planId) {
    page.say('This address names no plan: open a plan from the planner, then "What forms past onset".', 'error');
    return;
  }
  let plan: PlanLite;
  try {
    plan = await api<PlanLite>(`/api/plans/${planId}`);
  } catch (e) {
    page.fail(e);
    put(page.main, h('div', { class: 'empty' }, `There is no plan ${planId} to show. `, h('a', { href: '/planner' }, 'Make a plan in the planner'), ', then come back here from its page.'));
    return;
  }
  const feasible = plan.result.candidates.filter((c) => c.feasible).sort((a, b) => a.rank - b.rank);
  const query = new URLSearchParams(location.search);
  const asked = query.get('candidate');
  const candidate = asked ?? feasible[0]?.species ?? null;
  // the doses the bench sheet was opened with (?doses=…, as the sheet's address carries them): blank, the default series
  const sheetDoses = splitList(query.get('doses') ?? '');
  const stored = plan.inputs?.candidates?.find((c) => c.id === candidate);
  if (candidate) {
    amountCtx = { radius: stored?.radius ?? null, materialDensity: stored?.materialDensity ?? null };
    try {
      const r = await api<{ record: { kind?: string; molarMass?: { si: number } | null; radius?: { si: number }; materialDensity?: { si: number } } }>(`/api/species/${encodeURIComponent(candidate)}`);
      const rec = r.record;
      amountCtx = { kind: rec.kind ?? null, molarMass: rec.molarMass?.si ?? null, radius: amountCtx.radius ?? rec.radius?.si ?? null, materialDensity: amountCtx.materialDensity ?? rec.materialDensity?.si ?? null };
    } catch {
      // not on the shelf any more: particles/mL alone (with µg/mL only if the plan stored the size and material)
    }
  }
  const sheetHref = candidate ? `/plans/${plan.id}/sheet?candidate=${encodeURIComponent(candidate)}${sheetDoses.length ? `&doses=${encodeURIComponent(sheetDoses.join(','))}` : ''}` : '';

  const head = h(
    'div',
    null,
    h('h1', null, 'What forms past onset'),
    h('p', null, 'Plan ', h('a', { href: `/plans/${plan.id}` }, plan.name), candidate ? [' · ', h('a', { href: sheetHref }, 'its bench sheet')] : null),
    h(
      'p',
      { class: 'muted' },
      'The linear prediction says when the sample tips, how fast, at what length and which species gather. This page simulates what forms afterwards — clusters, their size and make-up, travelling bands — at each dose of the bench-sheet series (or the doses you type below), with the same shelf data. The model holds the fuel at its starting level (its run-out time is marked) and starts from a tiny random unevenness (the seed).',
    ),
  );
  if (!candidate) {
    put(page.main, head, h('div', { class: 'empty' }, 'No candidate of this plan crosses the boundary, so there is no dose series to simulate. Start a plan with other candidates in the ', h('a', { href: '/planner' }, 'planner'), '.'));
    return;
  }
  const pick = h('select', { id: 'candidate' }, plan.result.candidates.map((c) => h('option', { value: c.species, ...(c.species === candidate ? { selected: true } : {}) }, `${c.species}${c.feasible ? '' : ' (does not cross: type the doses to simulate below)'}`)));
  pick.addEventListener('change', () => {
    location.search = `?candidate=${encodeURIComponent(pick.value)}`;
  });
  const dims = h('select', { id: 'dims' }, h('option', { value: '1' }, '1D: a line across the chamber'), h('option', { value: '2' }, '2D: a square of the chamber'));
  const dimsHint = h('span', null, '1D takes seconds; 2D a minute or more');
  dims.addEventListener('change', () => {
    dimsHint.textContent = dims.value === '2' ? '2D takes a minute or more, and a dose that clusters may reach its step limit (its warnings say so)' : '1D takes seconds; 2D a minute or more';
  });
  const isFeasible = plan.result.candidates.find((c) => c.species === candidate)?.feasible ?? false;
  const dosesIn = h('input', { id: 'doses', type: 'text', class: 'wide', value: sheetDoses.join(', '), placeholder: isFeasible ? "the bench sheet's default series" : 'e.g. 0, 1e8 1/mL, 2e8 1/mL', autocomplete: 'off', spellcheck: 'false' });
  const dosesField = field(
    'Doses (comma-separated)',
    dosesIn,
    sheetDoses.length
      ? `the doses the bench sheet was built with (from its link); at most ${MAX_DOSES}; blank: the sheet's default series`
      : isFeasible
        ? `blank: the bench sheet's default series, dose 0 included; or type up to ${MAX_DOSES} doses, e.g. 0, 1e8 1/mL`
        : `this candidate does not cross, so it has no bench-sheet series: type up to ${MAX_DOSES} doses, e.g. 0, 1e8 1/mL`,
  );
  const points = h('select', { id: 'points' });
  const fillPoints = () => {
    const two = dims.value === '2';
    // 2D starts at 32 × 32: on a 16 × 16 grid single bright cells read as clusters (the route refuses it too)
    const opts = two ? [32, 64] : [32, 64, 128, 256, 512];
    const def = two ? 32 : 128;
    put(points, opts.map((n) => h('option', { value: n, ...(n === def ? { selected: true } : {}) }, two ? `${n} × ${n}` : String(n))));
  };
  fillPoints();
  dims.addEventListener('change', fillPoints);
  const mode = h('select', { id: 'duration-mode' }, h('option', { value: 'growth' }, 'growth times of each dose'), h('option', { value: 'time' }, 'a time for every dose'));
  const growth = h('input', { id: 'growth-times', type: 'number', min: 1, max: 40, step: 1, value: 12 });
  const time = h('input', { id: 'duration', type: 'text', value: '2 h', placeholder: 'e.g. 45 min' });
  const seed = h('input', { id: 'seed', type: 'number', min: 0, step: 1, value: 1 });
  const growthField = field('Growth times', growth, 'e-foldings of the fastest mode; a tiny unevenness becomes a clear pattern after about 12');
  const timeField = field('Simulated time', time, 'with its unit, e.g. 45 min, 3 h');
  timeField.hidden = true;
  mode.addEventListener('change', () => {
    growthField.hidden = mode.value !== 'growth';
    timeField.hidden = mode.value !== 'time';
  });
  const chemicals = h('select', { id: 'chemicals' }, h('option', { value: 'quasi-static' }, 'follow the particles at once (as the linear prediction)'), h('option', { value: 'dynamic' }, 'evolve in time (slower)'));
  const showSel = h('select', { id: 'show' });
  const run = h('button', { type: 'submit' }, 'Run');
  const form = h(
    'form',
    { class: 'options', 'aria-label': 'Simulation options' },
    field('Candidate', pick),
    dosesField,
    field('Chamber', dims, dimsHint),
    field('Points per side', points, 'more points resolve sharper clusters and take longer'),
    field('Duration in', mode),
    growthField,
    timeField,
    field('Chemicals', chemicals, 'when the chemicals spread and decay slowly next to the pattern\'s growth, compare the two'),
    field('Seed', seed, 'the same seed gives the same run'),
    h('div', { class: 'actions' }, run),
  );
  const jobSlot = h('div', null);
  const empty = h('div', { class: 'empty' }, `Choose the options and Run: each dose ${sheetDoses.length ? 'of the series the bench sheet was built with' : isFeasible ? "of the bench sheet's series" : 'you type'} is simulated in turn (the defaults take seconds to a minute). The results appear here.`);
  const results = h('div', { id: 'results' }, empty);
  put(page.main, head, form, jobSlot, results);

  let last: Result | null = null;
  /** Where the doses of the last run came from, in words (the result's series says so only for the sheet's default). */
  let dosesFrom = '';
  const render = () => {
    if (!last) return;
    const r = last;
    const showOf = (): Show => (showSel.value === 'total' || showSel.value === '' ? { kind: 'total' } : { kind: 'species', index: Number(showSel.value) });
    const sp = r.doses[0]?.species ?? [];
    if (showSel.options.length !== sp.length + 1) put(showSel, h('option', { value: 'total' }, 'total volume fraction'), sp.map((s, i) => h('option', { value: i }, `${s.id} (÷ its mean)`)));
    const show = showOf();
    const fuel = r.doses.find((d) => d.summary.fuelRunOut)?.summary.fuelRunOut;
    const common = commonWarnings(r);
    const ids = r.doses[0] ? idsOf(r.doses[0]) : [];
    put(
      results,
      h('h2', null, `${r.candidate}: ${r.doses.length} dose${r.doses.length === 1 ? '' : 's'}, ${r.dims}D, ${r.dims === 1 ? r.points : `${r.points} × ${r.points}`} cells, ${r.durationFrom}, seed ${r.seed}${r.chemicals === 'dynamic' ? ', chemicals evolving in time' : ''}`),
      h('p', { class: 'muted', id: 'doses-from' }, r.series ? `Doses: the bench sheet's default series — ${r.series.note.replace(/\s*Give doses or doseFactors to print another series\.?$/, '')}` : dosesFrom),
      fuel && !common.has('fuel-runs-out-first') ? h('p', { class: 'flag' }, `The fuel ${fuel.chemical} would run out after about ${fmtDuration(fuel.time)} at the lowest dose that consumes it (sooner at larger doses): the model does not deplete it, so anything later on the time axes would not happen in the sample unless the fuel is replenished.`) : null,
      common.size
        ? h(
            'div',
            { class: 'warnings every-dose' },
            h('h3', null, 'Warnings for every dose'),
            h('ul', null, [...common].map((code) => warningItem(code, r.doses.map((d) => ({ dose: doseText(d.dose), message: d.summary.warnings.find((w) => w.code === code)!.message })), ids, code === 'fuel-runs-out-first' && fuel ? ` The fuel ${fuel.chemical} runs out after about ${fmtDuration(fuel.time)} at the lowest dose that consumes it (sooner at larger doses), unless it is replenished.` : null))),
          )
        : null,
      field('Colour shows', showSel),
      r.doses.map((d, i) => doseSection(d, show, i, common)),
    );
  };
  showSel.addEventListener('change', render);

  form.addEventListener('submit', async (ev) => {
    ev.preventDefault();
    page.clear();
    const body: Record<string, unknown> = { dims: Number(dims.value), points: Number(points.value), seed: Number(seed.value), chemicals: chemicals.value };
    if (mode.value === 'growth') body.growthTimes = Number(growth.value);
    else body.duration = time.value.trim();
    const typed = splitList(dosesIn.value);
    if (typed.length > MAX_DOSES) {
      page.say(`${typed.length} doses: this page simulates at most ${MAX_DOSES} at a time. Leave some out, or run the series in two parts.`, 'error');
      dosesIn.focus();
      return;
    }
    if (typed.length === 0 && !isFeasible) {
      page.say(`${candidate} does not cross the boundary, so it has no bench-sheet series: type the doses to simulate.`, 'error');
      dosesIn.focus();
      return;
    }
    if (typed.length) body.doses = typed;
    const fromSheet = typed.length > 0 && typed.join(',') === sheetDoses.join(',');
    const sentFrom = typed.length === 0 ? '' : fromSheet ? `Doses: the series the bench sheet was built with (${typed.join(', ')}), carried here by its link.` : `Doses: as typed on this page (${typed.join(', ')}), not the bench sheet's series.`;
    run.disabled = true;
    const view = jobView('Simulating');
    put(jobSlot, view.el);
    // while a job runs, the "choose the options and Run" note would mislead
    empty.hidden = true;
    let stopped = false;
    view.onCancel(() => {
      stopped = true;
    });
    try {
      const job = await api<Job<Result>>(`/api/plans/${plan.id}/candidates/${encodeURIComponent(candidate)}/simulate`, { method: 'POST', body });
      const end = await followJob(job, (j) => view.update(j));
      if (end.state === 'done' && end.result) {
        last = end.result;
        dosesFrom = sentFrom;
        render();
        page.say(`Simulated ${end.result.doses.length} doses.`, 'ok');
      } else if (end.state === 'cancelled' || stopped) page.say('The run was cancelled; the results shown (if any) are from the run before.', 'info');
      else page.say(`The run ${end.state === 'timed-out' ? 'stopped at its time limit' : 'failed'}: ${end.error?.message ?? 'no reason given'}. Fewer points or a shorter duration take less work.`, 'error');
    } catch (e) {
      page.fail(e);
      put(jobSlot);
    } finally {
      run.disabled = false;
      empty.hidden = false;
    }
  });
}

void main();
