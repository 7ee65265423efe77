/**
 * The dose planner (model.md §6, §7): for a base mixture and a candidate
 * dopant, the smallest dose that crosses a chosen boundary, with a reason when
 * there is none, the analysis at the threshold and above it, Monte Carlo
 * uncertainty, a state map and a fuel sweep. All numbers SI; doses are number
 * densities (m⁻³) of the dopant.
 *
 * Boundaries (a predicate P(x) on the mixture with dose x):
 *   stationary  — some allowed mode has a growing real eigenvalue;
 *   oscillatory — some allowed mode has a growing complex pair;
 *   any         — some allowed mode grows;
 *   restore     — no allowed mode grows (for an unstable base).
 * Dosing: `add` puts ρ_d = x on top of the base; `replace` puts ρ_d = x and scales
 * every base species by f = 1 − x V_d / φ_base so that the total particle volume
 * fraction stays φ_base (V_d = (4/3)π a_d³).
 *
 * Search: the closed form of dose.ts where it provably gives the first crossing
 * (stationary, add, one chemical, one sign of α μ, no saturation or crowding);
 * otherwise a logarithmic scan of (0, cap] then bisection of the first crossing
 * to a relative bracket of `relTol` (1e-6), and the first return after it (a
 * window) the same way.
 */
import { analyze, type AnalysisResult } from './analyze.js';
import { sphereVolume } from './checks.js';
import { stationaryDoseClosedForm } from './dose.js';
import { buildModel, linearise } from './model.js';
import { Random } from './random.js';
import { scanModes } from './scan.js';
import { EngineInputError, type Mixture, type Species } from './types.js';

export type Boundary = 'stationary' | 'oscillatory' | 'any' | 'restore';
export type Dosing = 'add' | 'replace';

export type ReasonCode =
  | 'base-already-past'
  | 'no-coupling'
  | 'wrong-sign'
  | 'no-oscillation-possible'
  | 'crowding-wins'
  | 'too-weak-before-cap'
  | 'nothing-to-replace';

export interface DoseOptions {
  boundary: Boundary;
  dosing: Dosing;
  /** Ceiling on the total particle volume fraction of the sample (default 0.3). */
  maxVolumeFraction?: number;
  /** Ceiling on the dopant's number density, m⁻³ (optional; the lower cap wins). */
  maxDensity?: number;
  /** Relative bracket of the bisection (default 1e-6). */
  relTol?: number;
  /** Scan points over (0, cap] (default 48, log-spaced over 9 decades). */
  scanPoints?: number;
  /** Use the closed form where it applies (default true; false forces the search, for checks). */
  closedForm?: boolean;
}

export interface DoseSearch {
  species: string;
  feasible: boolean;
  reason: ReasonCode | null;
  message: string | null;
  /** Threshold dose, m⁻³, and the dopant's volume fraction there; null when infeasible */
  threshold: { density: number; volumeFraction: number } | null;
  /** Dose at which the mixture comes back to its old side of the boundary, if below the cap */
  window: { upTo: number } | null;
  method: 'closed-form' | 'search' | null;
  /** The dose cap used, m⁻³, and why */
  cap: { density: number; limitedBy: 'volume-fraction' | 'max-density' | 'replaced-everything' };
  evaluations: number;
}

const DEFAULT_MAX_PHI = 0.3;

function baseVolumeFraction(base: Mixture): number {
  return base.species.reduce((acc, s) => acc + s.density * sphereVolume(s.radius), 0);
}

/**
 * The mixture with dopant `d` at density x.
 * `add`: ρ_d = x on top (added to its density if d is already in the base);
 * `replace`: base species scaled by 1 − x V_d/φ_base.
 */
export function withDose(base: Mixture, d: Species, x: number, dosing: Dosing): Mixture {
  const species = base.species.map((s) => ({ ...s }));
  if (dosing === 'replace') {
    const phi = baseVolumeFraction(base);
    const f = phi > 0 ? Math.max(0, 1 - (x * sphereVolume(d.radius)) / phi) : 1;
    for (const s of species) s.density *= f;
  }
  const i = species.findIndex((s) => s.id === d.id);
  if (i >= 0) species[i] = { ...species[i]!, density: species[i]!.density + x };
  else species.push({ ...d, density: x });
  return { ...base, species };
}

/** The dose cap: total volume fraction ceiling (add), full replacement (replace), or maxDensity. */
export function doseCap(base: Mixture, d: Species, o: DoseOptions): DoseSearch['cap'] {
  const V = sphereVolume(d.radius);
  const phiBase = baseVolumeFraction(base);
  let density: number;
  let limitedBy: DoseSearch['cap']['limitedBy'];
  if (o.dosing === 'replace') {
    density = phiBase / V;
    limitedBy = 'replaced-everything';
  } else {
    density = Math.max(0, (o.maxVolumeFraction ?? DEFAULT_MAX_PHI) - phiBase) / V;
    limitedBy = 'volume-fraction';
  }
  if (o.maxDensity !== undefined && o.maxDensity < density) {
    density = o.maxDensity;
    limitedBy = 'max-density';
  }
  return { density, limitedBy };
}

/** Growth of each branch (1/s) without the extras of analyze(): the predicates' only input. */
export function growth(mix: Mixture): { any: number; real: number; complex: number } {
  const model = buildModel(mix);
  const scan = scanModes(model, mix.chamber.walls);
  return {
    any: scan.overall.value / model.timeUnit,
    real: scan.real ? scan.real.value / model.timeUnit : -Infinity,
    complex: scan.complex ? scan.complex.value / model.timeUnit : -Infinity,
  };
}

/** Whether a mixture is past the boundary. */
export function pastBoundary(mix: Mixture, boundary: Boundary): boolean {
  const g = growth(mix);
  switch (boundary) {
    case 'stationary':
      return g.real > 0;
    case 'oscillatory':
      return g.complex > 0;
    case 'any':
      return g.any > 0;
    case 'restore':
      return !(g.any > 0);
  }
}

/** First x in (lo, hi] with pred true, given pred(lo) false and pred(hi) true; log bisection when lo > 0. */
function bisect(pred: (x: number) => boolean, lo: number, hi: number, relTol: number): number {
  for (let it = 0; it < 200 && hi - lo > relTol * hi; it++) {
    const mid = lo > 0 && hi / lo > 4 ? Math.sqrt(lo * hi) : 0.5 * (lo + hi);
    if (pred(mid)) hi = mid;
    else lo = mid;
  }
  return hi;
}

function signs(d: Species, base: Mixture): { pos: boolean; neg: boolean; coupled: boolean } {
  const mix = { ...base, species: [{ ...d, density: 1 }] };
  const { alpha, mu } = linearise(mix);
  const S = base.chemicals.length;
  let pos = false;
  let neg = false;
  let coupled = false;
  for (let s = 0; s < S; s++) {
    const a = alpha[s]!;
    const m = mu[s]!;
    if (a !== 0 || m !== 0) coupled = true;
    if (a * m > 0) pos = true;
    if (a * m < 0) neg = true;
  }
  const saturating = d.couplings.some((c) => c.activity?.kind === 'saturating');
  return { pos: pos || saturating, neg: neg || saturating, coupled };
}

const MESSAGES: Record<ReasonCode, (b: Boundary) => string> = {
  'base-already-past': (b) =>
    b === 'restore' ? 'the base mixture is already stable: there is nothing to restore.' : `the base mixture is already past the ${b} boundary without any dopant.`,
  'no-coupling': () => 'this species neither makes, consumes nor responds to any chemical in the mixture: it cannot move the boundary.',
  'wrong-sign': (b) =>
    b === 'restore'
      ? 'this species is self-attracting (activity × mobility < 0 on every chemical it couples to): adding it cannot calm the mixture.'
      : 'this species is self-repelling (activity × mobility > 0 on every chemical it couples to): adding it cannot start clustering.',
  'no-oscillation-possible': () => 'with one chemical and every species of one sign of activity × mobility all eigenvalues are real: no dose can make the mixture oscillate.',
  'crowding-wins': () => 'without crowding this dose would cross, but the crowding correction stabilises the mixture faster than the dopant destabilises it below the cap.',
  'too-weak-before-cap': () => 'the effect has the right sign but is too weak: the boundary is not crossed below the dose cap.',
  'nothing-to-replace': () => 'replace mode needs a base with a non-zero volume fraction.',
};

function infeasible(d: Species, cap: DoseSearch['cap'], reason: ReasonCode, o: DoseOptions, evaluations: number): DoseSearch {
  return { species: d.id, feasible: false, reason, message: MESSAGES[reason](o.boundary), threshold: null, window: null, method: null, cap, evaluations };
}

/**
 * The smallest dose of `d` in (0, cap] that crosses the boundary.
 * @example findDose(base, dopant, { boundary: 'stationary', dosing: 'add' }).threshold?.density
 */
export function findDose(base: Mixture, d: Species, o: DoseOptions): DoseSearch {
  const relTol = o.relTol ?? 1e-6;
  const cap = doseCap(base, d, o);
  let evaluations = 0;
  const pred = (x: number) => {
    evaluations++;
    return pastBoundary(withDose(base, d, x, o.dosing), o.boundary);
  };
  const V = sphereVolume(d.radius);
  const ok = (x: number, method: DoseSearch['method'], window: DoseSearch['window']): DoseSearch => ({
    species: d.id,
    feasible: true,
    reason: null,
    message: null,
    threshold: { density: x, volumeFraction: x * V },
    window,
    method,
    cap,
    evaluations,
  });

  if (o.dosing === 'replace' && baseVolumeFraction(base) === 0) return infeasible(d, cap, 'nothing-to-replace', o, evaluations);
  if (pred(0)) return infeasible(d, cap, 'base-already-past', o, evaluations);
  const sg = signs(d, base);
  if (!sg.coupled) return infeasible(d, cap, 'no-coupling', o, evaluations);

  if (o.boundary === 'stationary' && o.dosing === 'add' && o.closedForm !== false) {
    const cf = stationaryDoseClosedForm(base, d);
    if (cf.applicable && cf.firstCrossing) {
      // x* ≤ 0 with the base below the boundary means α_d μ_d > 0: the dopant pushes the other way.
      if (cf.dose <= 0) return infeasible(d, cap, 'wrong-sign', o, evaluations);
      if (cf.dose > cap.density) return infeasible(d, cap, 'too-weak-before-cap', o, evaluations);
      return ok(cf.dose, 'closed-form', null);
    }
  }
  if (o.boundary === 'oscillatory') {
    // One chemical, no crowding, every species (base and dopant) of one sign: real spectrum for all x.
    const all = withDose(base, d, 1, 'add');
    const model = buildModel(all);
    if (model.rankOne) {
      let pos = false;
      let neg = false;
      for (let m = 0; m < model.M; m++) {
        const w = model.P[m]! * model.Q[m]!;
        if (w > 0) pos = true;
        if (w < 0) neg = true;
      }
      if (!(pos && neg)) return infeasible(d, cap, 'no-oscillation-possible', o, evaluations);
    }
  }

  // Scan (0, cap] on a log grid, then bisect the first crossing and the first return.
  const n = o.scanPoints ?? 48;
  const xs: number[] = [];
  for (let i = 0; i < n; i++) xs.push(cap.density * Math.pow(10, -9 + (9 * i) / (n - 1)));
  let prevX = 0;
  let crossed: number | null = null;
  let k = 0;
  for (; k < xs.length; k++) {
    if (pred(xs[k]!)) {
      crossed = bisect(pred, prevX, xs[k]!, relTol);
      break;
    }
    prevX = xs[k]!;
  }
  if (crossed === null) {
    if ((o.boundary === 'stationary' || o.boundary === 'any') && !sg.neg) return infeasible(d, cap, 'wrong-sign', o, evaluations);
    if (o.boundary === 'restore' && !sg.pos) return infeasible(d, cap, 'wrong-sign', o, evaluations);
    if (base.crowding) {
      const free = findDose({ ...base, crowding: false }, d, { ...o, scanPoints: Math.min(n, 24) });
      evaluations += free.evaluations;
      if (free.feasible) return infeasible(d, cap, 'crowding-wins', o, evaluations);
    }
    return infeasible(d, cap, 'too-weak-before-cap', o, evaluations);
  }
  let window: DoseSearch['window'] = null;
  let last = xs[k]!;
  for (let j = k + 1; j < xs.length; j++) {
    if (!pred(xs[j]!)) {
      const back = bisect((x) => !pred(x), last, xs[j]!, relTol);
      window = { upTo: back };
      break;
    }
    last = xs[j]!;
  }
  return ok(crossed, 'search', window);
}

// ---------------------------------------------------------------- uncertainty

/**
 * One Monte Carlo draw of every uncertain coefficient (model.md §7): normal for
 * signed quantities (activity, mobility), log-normal with the same mean and
 * standard deviation for positive ones (σ_ln² = ln(1 + (sd/value)²),
 * μ_ln = ln value − σ_ln²/2).
 */
export function perturb(mix: Mixture, rng: Random): Mixture {
  const [pos, signed] = posSigned(rng);
  return {
    ...mix,
    chemicals: mix.chemicals.map((c) => ({
      ...c,
      diffusivity: pos(c.diffusivity, c.sd?.diffusivity),
      lossRate: pos(c.lossRate, c.sd?.lossRate),
      concentration: pos(c.concentration, c.sd?.concentration),
      solubility: c.solubility === null ? null : pos(c.solubility, c.sd?.solubility),
    })),
    species: mix.species.map((s) => perturbSpecies(s, pos, signed)),
  };
}

function perturbSpecies(s: Species, pos: (v: number, sd?: number) => number, signed: (v: number, sd?: number) => number): Species {
  return {
    ...s,
    diffusivity: pos(s.diffusivity, s.sd?.diffusivity),
    radius: pos(s.radius, s.sd?.radius),
    density: pos(s.density, s.sd?.density),
    materialDensity: s.materialDensity === null ? null : pos(s.materialDensity, s.sd?.materialDensity),
    couplings: s.couplings.map((c) => ({
      ...c,
      mobility: signed(c.mobility, c.sd?.mobility),
      activity:
        c.activity === null
          ? null
          : c.activity.kind === 'constant'
            ? { kind: 'constant', rate: signed(c.activity.rate, c.sd?.rate) }
            : { ...c.activity, maxRate: pos(c.activity.maxRate, c.sd?.maxRate), michaelis: pos(c.activity.michaelis, c.sd?.michaelis) },
    })),
  };
}

/** A stable 32-bit hash of a seed, a sample index and a name (FNV-1a), for per-draw generators. */
export function streamSeed(seed: number, index: number, name: string): number {
  let h = 0x811c9dc5;
  const mix = (x: number) => {
    h ^= x & 0xff;
    h = Math.imul(h, 0x01000193) >>> 0;
  };
  for (let i = 0; i < 4; i++) mix(seed >>> (8 * i));
  for (let i = 0; i < 4; i++) mix(index >>> (8 * i));
  for (const ch of name) mix(ch.charCodeAt(0));
  return h >>> 0;
}

export interface UncertaintyOptions {
  samples: number;
  seed: number;
  /** Doses (m⁻³) at which to report the probability that the boundary is crossed */
  doses?: number[];
}

export interface ThresholdBand {
  samples: number;
  seed: number;
  /** Fraction of draws that cross below the cap */
  feasibleFraction: number;
  /** Median, 5 % and 95 % quantiles of the threshold dose (m⁻³); null when that quantile lies above the cap */
  median: number | null;
  p05: number | null;
  p95: number | null;
  /** P(crossed at dose) for each requested dose */
  probability: { density: number; probability: number }[];
}

function quantile(sorted: number[], q: number): number | null {
  if (sorted.length === 0) return null;
  const pos = (sorted.length - 1) * q;
  const lo = Math.floor(pos);
  const hi = Math.ceil(pos);
  const v = sorted[lo]! + (sorted[hi]! - sorted[lo]!) * (pos - lo);
  return Number.isFinite(v) ? v : null;
}

/**
 * Monte Carlo band of the threshold dose: each draw perturbs the base (the same
 * draw for every candidate, "common random numbers") and the dopant, and finds
 * its own threshold (bisection to 1e-4 relative, enough for a band).
 * Same seed, same numbers.
 */
export function thresholdBand(base: Mixture, d: Species, o: DoseOptions, u: UncertaintyOptions): ThresholdBand {
  const thresholds: number[] = [];
  const crossedAt = (u.doses ?? []).map(() => 0);
  for (let i = 0; i < u.samples; i++) {
    const b = perturb(base, new Random(streamSeed(u.seed, i, '')));
    const dd = perturbSpecies(d, ...posSigned(new Random(streamSeed(u.seed, i, d.id))));
    const r = findDose(b, dd, { ...o, relTol: Math.max(o.relTol ?? 1e-6, 1e-4), scanPoints: Math.min(o.scanPoints ?? 48, 28) });
    thresholds.push(r.feasible ? r.threshold!.density : Infinity);
    (u.doses ?? []).forEach((x, j) => {
      if (pastBoundary(withDose(b, dd, x, o.dosing), o.boundary)) crossedAt[j]!++;
    });
  }
  thresholds.sort((a, b) => a - b);
  const feasible = thresholds.filter(Number.isFinite).length;
  return {
    samples: u.samples,
    seed: u.seed,
    feasibleFraction: u.samples > 0 ? feasible / u.samples : 0,
    median: quantile(thresholds, 0.5),
    p05: quantile(thresholds, 0.05),
    p95: quantile(thresholds, 0.95),
    probability: (u.doses ?? []).map((x, j) => ({ density: x, probability: u.samples > 0 ? crossedAt[j]! / u.samples : 0 })),
  };
}

function posSigned(rng: Random): [(v: number, sd?: number) => number, (v: number, sd?: number) => number] {
  const pos = (v: number, sd?: number) => {
    if (!sd || !(v > 0)) return v;
    const s2 = Math.log(1 + (sd / v) ** 2);
    return Math.exp(Math.log(v) - s2 / 2 + Math.sqrt(s2) * rng.normal());
  };
  const signed = (v: number, sd?: number) => (sd ? v + sd * rng.normal() : v);
  return [pos, signed];
}

// ---------------------------------------------------------------- screening

export interface ScreenOptions extends DoseOptions {
  /** Dose factor above the threshold for the second analysis (default 1.25) */
  margin?: number;
  uncertainty?: UncertaintyOptions;
}

export interface CandidateResult extends DoseSearch {
  rank: number;
  /** Analysis at the threshold dose (the critical mode: wavelength, composition) */
  atThreshold: AnalysisResult | null;
  /** Analysis at margin × threshold (growth time, period, warnings of the sample to make) */
  atMargin: AnalysisResult | null;
  band: ThresholdBand | null;
}

/**
 * Screen candidates: the dose search for each, the analyses at the threshold and
 * at the margin, the Monte Carlo band, ranked by the smallest (median) dose;
 * infeasible candidates after, with their reasons, never dropped.
 */
export function screen(base: Mixture, candidates: Species[], o: ScreenOptions): CandidateResult[] {
  const margin = o.margin ?? 1.25;
  if (!(margin >= 1)) throw new EngineInputError('margin', 'must be at least 1');
  const seen = new Set<string>();
  for (const c of candidates) {
    if (seen.has(c.id)) throw new EngineInputError('candidates', `candidate "${c.id}" is listed twice`);
    seen.add(c.id);
  }
  const results = candidates.map((d): CandidateResult => {
    const r = findDose(base, d, o);
    let atThreshold: AnalysisResult | null = null;
    let atMargin: AnalysisResult | null = null;
    if (r.feasible) {
      const x = r.threshold!.density;
      atThreshold = analyze(withDose(base, d, x, o.dosing));
      const xm = Math.min(x * margin, r.window ? Math.sqrt(x * r.window.upTo) : Infinity, r.cap.density);
      atMargin = analyze(withDose(base, d, xm, o.dosing));
    }
    const band = o.uncertainty && o.uncertainty.samples > 0 ? thresholdBand(base, d, o, o.uncertainty) : null;
    return { ...r, rank: 0, atThreshold, atMargin, band };
  });
  const key = (r: CandidateResult) => (r.feasible ? (r.band?.median ?? r.threshold!.density) : Infinity);
  const order = [...results].sort((a, b) => key(a) - key(b) || (a.feasible === b.feasible ? a.species.localeCompare(b.species) : a.feasible ? -1 : 1));
  order.forEach((r, i) => (r.rank = i + 1));
  return order;
}

/** The default dose factors of a bench series (× the median or threshold dose). */
export const DEFAULT_DOSE_FACTORS = [0, 0.5, 0.8, 1, 1.25, 1.6, 2];

/**
 * The dose series that brackets a candidate's threshold and its uncertainty band:
 * factors × the reference dose (the Monte Carlo median, else the threshold), plus
 * the 5 % and 95 % doses when there is a band (and the factors are the default).
 * Sorted, duplicates removed (m⁻³).
 */
export function doseSeries(c: Pick<CandidateResult, 'threshold' | 'band'>, factors?: number[]): { reference: number; doses: number[] } {
  if (!c.threshold) throw new EngineInputError('candidate', 'an infeasible candidate has no dose series');
  const reference = c.band?.median ?? c.threshold.density;
  const doses = (factors ?? DEFAULT_DOSE_FACTORS).map((f) => f * reference);
  if (!factors && c.band) {
    if (c.band.p05 !== null) doses.push(c.band.p05);
    if (c.band.p95 !== null) doses.push(c.band.p95);
  }
  return { reference, doses: [...new Set(doses.map((d) => Number(d.toPrecision(6))))].sort((a, b) => a - b) };
}

// ---------------------------------------------------------------- state map

export interface StateMapOptions extends DoseOptions {
  /** Which base level is varied: one base species' density, or every base species scaled together */
  baseSpecies?: string;
  /** Range of the base factor (multiplies the base densities), default [0.1, 10] */
  baseRange?: [number, number];
  /** Dose range, m⁻³; default (0, cap] */
  doseRange?: [number, number];
  /** Grid size (each 3 to 80; default 24 × 24) */
  baseSteps?: number;
  doseSteps?: number;
}

export interface StateMap {
  baseAxis: { factor: number[]; species: string | null };
  doseAxis: number[];
  /** states[i][j]: state at baseAxis[i], doseAxis[j] */
  states: ('stable' | 'stationary' | 'oscillatory')[][];
  /** Boundary lines as polylines of [base factor, dose] points, one per transition type */
  boundaries: { from: string; to: string; points: [number, number][] }[];
}

function stateOf(mix: Mixture): 'stable' | 'stationary' | 'oscillatory' {
  const model = buildModel(mix);
  const s = scanModes(model, mix.chamber.walls).overall;
  return s.value > 0 ? (s.im > 0 ? 'oscillatory' : 'stationary') : 'stable';
}

/** Scale the base (one species, or all) by a factor. */
export function scaleBase(base: Mixture, factor: number, which: string | null): Mixture {
  if (which !== null && !base.species.some((s) => s.id === which)) throw new EngineInputError('baseSpecies', `"${which}" is not a base species`);
  return { ...base, species: base.species.map((s) => (which === null || s.id === which ? { ...s, density: s.density * factor } : s)) };
}

/**
 * States on a grid of base level × dose, and the boundaries between them: along
 * each row the dose of every change of state is bisected (relative 1e-6) and
 * the points of the same transition are joined across rows into polylines.
 */
export function stateMap(base: Mixture, d: Species, o: StateMapOptions): StateMap {
  const nb = Math.min(80, Math.max(3, o.baseSteps ?? 24));
  const nd = Math.min(80, Math.max(3, o.doseSteps ?? 24));
  const [b0, b1] = o.baseRange ?? [0.1, 10];
  if (!(b0 > 0 && b1 > b0)) throw new EngineInputError('baseRange', 'must be two increasing positive factors');
  const cap = doseCap(base, d, o).density;
  const [x0, x1] = o.doseRange ?? [cap * 1e-3, cap];
  if (!(x0 > 0 && x1 > x0)) throw new EngineInputError('doseRange', 'must be two increasing positive doses');
  const which = o.baseSpecies ?? null;
  const factor = Array.from({ length: nb }, (_, i) => b0 * Math.pow(b1 / b0, i / (nb - 1)));
  const doseAxis = Array.from({ length: nd }, (_, j) => x0 * Math.pow(x1 / x0, j / (nd - 1)));
  const states = factor.map((f) => {
    const b = scaleBase(base, f, which);
    return doseAxis.map((x) => stateOf(withDose(b, d, x, o.dosing)));
  });
  const lines = new Map<string, [number, number][][]>();
  factor.forEach((f, i) => {
    const b = scaleBase(base, f, which);
    const row = states[i]!;
    for (let j = 0; j + 1 < nd; j++) {
      const from = row[j]!;
      const to = row[j + 1]!;
      if (from === to) continue;
      const x = bisect((y) => stateOf(withDose(b, d, y, o.dosing)) !== from, doseAxis[j]!, doseAxis[j + 1]!, o.relTol ?? 1e-6);
      const key = `${from}→${to}`;
      const segs = lines.get(key) ?? [];
      // continue the polyline whose last point is on the previous row, else start a new one
      const prevF = factor[i - 1];
      const seg = segs.find((s) => s[s.length - 1]![0] === prevF);
      if (seg) seg.push([f, x]);
      else segs.push([[f, x]]);
      lines.set(key, segs);
    }
  });
  const boundaries: StateMap['boundaries'] = [];
  for (const [key, segs] of lines) {
    const [from, to] = key.split('→') as [string, string];
    for (const points of segs) boundaries.push({ from, to, points });
  }
  return { baseAxis: { factor, species: which }, doseAxis, states, boundaries };
}

// ---------------------------------------------------------------- fuel sweep

export interface FuelSweepOptions extends DoseOptions {
  chemical: string;
  /** Concentration range, mol m⁻³ */
  range: [number, number];
  steps?: number;
  scale?: 'log' | 'linear';
  /** Dose factor above the threshold at which growth time and fuel life are reported (default 1.25) */
  margin?: number;
}

/** Thresholds of each candidate as a function of one chemical's concentration. */
export function fuelSweep(base: Mixture, candidates: Species[], o: FuelSweepOptions) {
  const idx = base.chemicals.findIndex((c) => c.id === o.chemical);
  if (idx < 0) throw new EngineInputError('chemical', `"${o.chemical}" is not a chemical of the mixture`);
  const n = Math.min(60, Math.max(2, o.steps ?? 12));
  const [c0, c1] = o.range;
  const logScale = (o.scale ?? 'log') === 'log';
  if (!(c1 > c0 && c0 >= 0) || (logScale && !(c0 > 0))) throw new EngineInputError('range', 'must be two increasing concentrations (positive for a log sweep)');
  const levels = Array.from({ length: n }, (_, i) => (logScale ? c0 * Math.pow(c1 / c0, i / (n - 1)) : c0 + ((c1 - c0) * i) / (n - 1)));
  return levels.map((c) => {
    const b = { ...base, chemicals: base.chemicals.map((ch, i) => (i === idx ? { ...ch, concentration: c } : ch)) };
    const growthTimes = (x: number, d: Species) => {
      const r = analyze(withDose(b, d, x, o.dosing));
      const fuel = r.checks.fuel.find((f) => f.chemical === o.chemical);
      return { growthTime: r.growthTime, fuelLifetime: fuel?.lifetime ?? null };
    };
    return {
      concentration: c,
      candidates: candidates.map((d) => {
        const r = findDose(b, d, o);
        return {
          species: d.id,
          feasible: r.feasible,
          reason: r.reason,
          threshold: r.threshold?.density ?? null,
          ...(r.feasible ? growthTimes(r.threshold!.density * (o.margin ?? 1.25), d) : { growthTime: null, fuelLifetime: null }),
        };
      }),
    };
  });
}
