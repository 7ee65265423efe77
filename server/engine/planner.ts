/**
 * The dose planner (docs/model.md §6, §7): for a base mixture and a candidate
 * dopant, the smallest dose that crosses a chosen boundary, with a reason when
 * there is none, the analysis at the threshold and above it, the dose path
 * (the state over the whole dose range), Monte Carlo uncertainty, a state map
 * and a fuel sweep. All numbers SI; doses are number densities (m⁻³) of the
 * dopant.
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
 * otherwise a logarithmic scan of (0, cap] (48 doses over 9 decades), refined
 * between scan doses: wherever the sampled growth of the relevant branch has a
 * local maximum (or, past the boundary, a local minimum) that the samples do
 * not show crossing zero, a golden-section search in ln x over the two
 * neighbouring intervals looks for a crossing the samples missed (a narrow
 * window). Then bisection of the first crossing to a relative bracket of
 * `relTol` (1e-6), and the first return after it (a window) the same way.
 * A search that finds nothing says "not found below the cap by a search of N
 * doses", never "too weak": only the closed form proves that.
 */
import { analyze, stateOf, type AnalysisResult, type State } from './analyze.js';
import { missingConcentrationWarnings, sphereVolume, type Warning } from './checks.js';
import { stationaryDoseClosedForm } from './dose.js';
import { bisect, fastInapplicable, RankOneDose, type FastVerdict, type StationaryVerdict } from './fast.js';
import { buildModel, linearise, validateMixture } from './model.js';
import { Random } from './random.js';
import { scanModes } from './scan.js';
import { EngineInputError, type Mixture, type Species } from './types.js';

export type Boundary = 'stationary' | 'oscillatory' | 'any' | 'restore';
export type Dosing = 'add' | 'replace';

export type ReasonCode =
  | 'base-already-past'
  | 'no-room-under-cap'
  | 'no-coupling'
  | 'substrate-absent'
  | 'no-feedback'
  | 'wrong-sign'
  | 'no-oscillation-possible'
  | 'crowding-wins'
  | 'too-weak-before-cap'
  | 'not-found-below-cap'
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
  /** Use the closed form where it applies (default true; false forces the search, for checks: no closed form and no fast path). */
  closedForm?: boolean;
  /**
   * Use the fast exact paths of docs/model.md §6 (the rank-one determinant with Hurwitz
   * certification, `fast.ts`) where they apply and are certified (default true). false forces
   * the general path everywhere: the reference for the tests and the benchmark.
   */
  fast?: boolean;
}

export interface DoseSearch {
  species: string;
  feasible: boolean;
  reason: ReasonCode | null;
  message: string | null;
  /** Threshold dose, m⁻³, and the dopant's volume fraction there; null when infeasible (0 when any dose crosses) */
  threshold: { density: number; volumeFraction: number } | null;
  /**
   * True when every dose above zero crosses (threshold 0⁺): e.g. a self-attracting dopant in an
   * unbounded chamber without chemical loss, where λ(k → 0⁺) = −α μ x / D_c > 0 for every x > 0.
   */
  anyDose: boolean;
  /**
   * Dose at which the mixture comes back to its old side of the boundary, if below the cap, and the
   * state just above it (e.g. an oscillatory window that turns stationary, still unstable).
   */
  window: { upTo: number; stateAbove: State } | null;
  /**
   * How the threshold was found: the closed form, the general search, or the fast exact path
   * ('rank-one-determinant': the S×S determinant's crossing, certified by Hurwitz counts; 'hurwitz-search': the
   * search's scan doses and bisection on exact per-mode predicates, when something grows below that crossing; docs/model.md §6).
   * For an infeasible result: the fast path's no-crossing proof gives 'rank-one-determinant', else null.
   */
  method: 'closed-form' | 'search' | 'rank-one-determinant' | 'hurwitz-search' | null;
  /** The dose cap used, m⁻³, and why */
  cap: { density: number; limitedBy: 'volume-fraction' | 'max-density' | 'replaced-everything' };
  /** Doses at which the growth was evaluated by the search (scan, refinement, bisection); 0 for the closed form */
  evaluations: number;
}

const DEFAULT_MAX_PHI = 0.3;
/** The search's floor, as a fraction of the cap: crossing at every dose down to cap × 1e-30 is read as "any dose". */
const FLOOR = 1e-30;

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

/** Each branch's growth (1/s) and the state (docs/model.md §5), from one mode scan. */
interface Evaluation {
  any: number;
  real: number;
  complex: number;
  state: State;
}

/** One mode scan; `earlyExit: false` (from `fast: false`) is the general scan without the proven early exits of scan.ts. */
function evaluate(mix: Mixture, earlyExit = true): Evaluation {
  const model = buildModel(mix);
  const scan = scanModes(model, mix.chamber.walls, { earlyExit });
  const t = model.timeUnit;
  return {
    any: scan.overall.value / t,
    real: scan.real ? scan.real.value / t : -Infinity,
    complex: scan.complex ? scan.complex.value / t : -Infinity,
    state: scan.overall.value > 0 ? (scan.overall.im > 0 ? 'oscillatory' : 'stationary') : 'stable',
  };
}

/** Growth of each branch (1/s) without the extras of analyze(): the predicates' only input. */
export function growth(mix: Mixture): { any: number; real: number; complex: number } {
  const { any, real, complex } = evaluate(mix);
  return { any, real, complex };
}

function past(e: Evaluation, boundary: Boundary): boolean {
  switch (boundary) {
    case 'stationary':
      return e.real > 0;
    case 'oscillatory':
      return e.complex > 0;
    case 'any':
      return e.any > 0;
    case 'restore':
      return !(e.any > 0);
  }
}

/** The growth whose sign decides the boundary (restore: minus the overall growth). */
function measure(e: Evaluation, boundary: Boundary): number {
  return boundary === 'stationary' ? e.real : boundary === 'oscillatory' ? e.complex : boundary === 'any' ? e.any : -e.any;
}

/** Whether a mixture is past the boundary (`general`: the mode scan without its early exits). */
export function pastBoundary(mix: Mixture, boundary: Boundary, general = false): boolean {
  return past(evaluate(mix, !general), boundary);
}


/** The scan doses: n points log-spaced over 9 decades below the cap (m⁻³). */
export function scanDoses(cap: number, n = 48): number[] {
  const xs: number[] = [];
  for (let i = 0; i < n; i++) xs.push(cap * Math.pow(10, -9 + (9 * i) / (n - 1)));
  return xs;
}

interface Sample {
  x: number;
  e: Evaluation;
}

const GOLDEN = (Math.sqrt(5) - 1) / 2;

/**
 * Golden-section search in ln x over [a, b] for the extremum of h (maximum when
 * `sign` = 1, minimum when −1), stopping at the first dose whose evaluation
 * satisfies `hit`. Returns that sample, or null when the extremum (to a
 * relative bracket of `relTol`) does not satisfy it.
 */
function goldenHunt(at: (x: number) => Evaluation, h: (e: Evaluation) => number, sign: 1 | -1, a: number, b: number, hit: (e: Evaluation) => boolean, relTol: number): Sample | null {
  let lo = Math.log(a);
  let hi = Math.log(b);
  const f = (u: number): Sample => ({ x: Math.exp(u), e: at(Math.exp(u)) });
  let c = f(hi - GOLDEN * (hi - lo));
  let d = f(lo + GOLDEN * (hi - lo));
  for (let it = 0; it < 80; it++) {
    if (hit(c.e)) return c;
    if (hit(d.e)) return d;
    if (hi - lo < relTol) break;
    const hc = sign * h(c.e);
    const hd = sign * h(d.e);
    // −Infinity (the branch is absent) on both sides: no information, stop.
    if (hc === -Infinity && hd === -Infinity) break;
    if (hc >= hd) {
      hi = Math.log(d.x);
      d = c;
      c = f(hi - GOLDEN * (hi - lo));
    } else {
      lo = Math.log(c.x);
      c = d;
      d = f(lo + GOLDEN * (hi - lo));
    }
  }
  return null;
}

/**
 * Look between scan doses for crossings the samples missed (docs/model.md §6): for
 * each sampled local maximum of h among samples not past (h ≤ 0 there), and
 * each local minimum among samples past, a golden-section search over the two
 * neighbouring intervals. Returns the samples with any new ones, in dose order.
 * This finds a window that is one hump of h between two samples; it is not a
 * proof that no narrower feature exists.
 */
function refine(samples: Sample[], h: (e: Evaluation) => number, isPast: (e: Evaluation) => boolean, at: (x: number) => Evaluation, relTol: number): Sample[] {
  const found: Sample[] = [];
  const n = samples.length;
  for (let i = 0; i < n; i++) {
    const s = samples[i]!;
    const p = isPast(s.e);
    const left = samples[i - 1];
    const right = samples[i + 1];
    // interior samples only: at the cap the extremum is the cap itself; below the lowest scan dose nothing is searched
    if (!left || !right) continue;
    if (isPast(left.e) !== p || isPast(right.e) !== p) continue; // a crossing the samples already show
    const v = h(s.e);
    if (!Number.isFinite(v)) continue; // the branch is absent here
    const sign: 1 | -1 = p ? -1 : 1;
    const sv = sign * v;
    const sl = sign * h(left.e);
    const sr = sign * h(right.e);
    if (!(sv >= sl && sv >= sr)) continue;
    // a plateau (flat to rounding, e.g. a branch the dopant does not touch) is not a maximum
    const noise = 1e-9 * Math.abs(v);
    if (sv - sl <= noise && sv - sr <= noise) continue;
    const hit = (e: Evaluation) => isPast(e) !== p;
    const r = goldenHunt(at, h, sign, left.x, right.x, hit, relTol);
    if (r) found.push(r);
  }
  if (found.length === 0) return samples;
  return [...samples, ...found].sort((a, b) => a.x - b.x);
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

/** A dose as a bench reader reads it: particles per mL (m⁻³ × 10⁻⁶). The numbers of the API stay SI. */
export const perMl = (x: number) => `${(x * 1e-6).toPrecision(3)} per mL`;

/**
 * Whether the dopant can feed back on the mixture at all (docs/model.md §2–§3), and which of its
 * substrates are absent. Its column of J(k) is −k² [D_d e_d + diag(ρ) μ G α_dᵀ] and its density
 * enters G only through the slopes w_d = ρ_d V K/(K + c_f)² of its saturating couplings. So when
 * (1) what it makes or consumes at the base levels (α_d at c⁰, which is 0 for a saturating
 * coupling whose fuel is at 0: A(0) = V·0/(K + 0) = 0) reaches, through R, no chemical that any
 * species responds to, and (2) no fuel of its saturating couplings is reached by any source (so
 * δc_f = 0 and the slope w_d multiplies nothing), then, added without crowding, J is block
 * triangular: the base's eigenvalues at every dose plus the dopant's own −k² D_d < 0. No dose
 * can move any boundary. A dopant that only follows the others' gradients (mobility) is coupled
 * (it is in its own row of J) but feeds nothing back.
 */
export function feedback(d: Species, base: Mixture): { feedsBack: boolean; absent: string[]; allActivityAbsent: boolean } {
  const mix = { ...base, species: [...base.species, { ...d, density: 1 }] };
  const { alpha, mu, reaction } = linearise(mix);
  const S = base.chemicals.length;
  const M = mix.species.length;
  const dIdx = M - 1;
  const reach = (seeds: number[]): Set<number> => {
    const seen = new Set(seeds);
    const stack = [...seeds];
    while (stack.length > 0) {
      const t = stack.pop()!;
      for (let s = 0; s < S; s++) if (s !== t && reaction[s * S + t] !== 0 && !seen.has(s)) {
        seen.add(s);
        stack.push(s);
      }
    }
    return seen;
  };
  const sourcesOf = (ms: number[]) => {
    const out: number[] = [];
    for (let t = 0; t < S; t++) if (ms.some((m) => alpha[m * S + t] !== 0)) out.push(t);
    return out;
  };
  const responds = (s: number) => Array.from({ length: M }, (_, m) => mu[m * S + s] !== 0).some(Boolean);
  const fromDopant = reach(sourcesOf([dIdx]));
  const fromAll = reach(sourcesOf(Array.from({ length: M }, (_, m) => m)));
  const idx = new Map(base.chemicals.map((c, i) => [c.id, i] as const));
  const fuels = d.couplings.filter((c) => c.activity?.kind === 'saturating').map((c) => idx.get(c.chemical)!);
  const feedsBack = [...fromDopant].some(responds) || fuels.some((f) => fromAll.has(f));
  const withActivity = d.couplings.filter((c) => c.activity !== null);
  const isAbsent = (c: Species['couplings'][number]) => c.activity?.kind === 'saturating' && base.chemicals[idx.get(c.chemical)!]!.concentration === 0;
  const absent = [...new Set(withActivity.filter(isAbsent).map((c) => c.chemical))];
  return { feedsBack, absent, allActivityAbsent: withActivity.length > 0 && withActivity.every(isAbsent) };
}

const listed = (ids: string[]) => (ids.length === 1 ? ids[0]! : `${ids.slice(0, -1).join(', ')} and ${ids[ids.length - 1]}`);

function substrateAbsentMessage(absent: string[]): string {
  return (
    `its substrate ${listed(absent)} is absent from the mixture (concentration 0): it turns nothing over, so it makes and consumes nothing here. ` +
    'Added without crowding it can at most follow the others\' gradients, which leaves every growth rate of the base unchanged (docs/model.md §3): no dose can move the boundary. Add the substrate to the mixture to screen it.'
  );
}

const MESSAGES: Record<ReasonCode, (b: Boundary) => string> = {
  'base-already-past': (b) =>
    b === 'restore' ? 'the base mixture is already stable: there is nothing to restore.' : `the base mixture is already past the ${b} boundary without any dopant.`,
  'no-room-under-cap': () => 'the base alone already fills the volume-fraction cap: there is no room to add any dopant (raise maxVolumeFraction or dilute the base).',
  'no-coupling': () => 'this species neither makes, consumes nor responds to any chemical in the mixture: added without crowding, it cannot move the boundary.',
  'substrate-absent': () => substrateAbsentMessage([]),
  'no-feedback': () =>
    'nothing this species makes or consumes here reaches a chemical that any species responds to: it can at most follow the others\' gradients, and added without crowding it leaves every growth rate of the base unchanged (docs/model.md §3): no dose can move the boundary.',
  'wrong-sign': (b) =>
    b === 'restore'
      ? 'this species is self-attracting (activity × mobility < 0 on every chemical it couples to): adding it cannot calm the mixture.'
      : 'this species is self-repelling (activity × mobility > 0 on every chemical it couples to): adding it cannot start clustering.',
  'no-oscillation-possible': () => 'with one chemical and every species of one sign of activity × mobility all eigenvalues are real: no dose can make the mixture oscillate.',
  'crowding-wins': () => 'without crowding this dose would cross, but the crowding correction stabilises the mixture faster than the dopant destabilises it below the cap.',
  'too-weak-before-cap': () => 'the effect has the right sign but is too weak: the closed-form threshold lies above the dose cap.',
  'not-found-below-cap': () => 'the boundary was not found below the cap by the dose search.',
  'nothing-to-replace': () => 'replace mode needs a base with a non-zero volume fraction.',
};

function infeasible(d: Species, cap: DoseSearch['cap'], reason: ReasonCode, o: DoseOptions, evaluations: number, message?: string): DoseSearch {
  return { species: d.id, feasible: false, reason, message: message ?? MESSAGES[reason](o.boundary), threshold: null, anyDose: false, window: null, method: null, cap, evaluations };
}

/**
 * The smallest dose of `d` in (0, cap] that crosses the boundary.
 * @example findDose(base, dopant, { boundary: 'stationary', dosing: 'add' }).threshold?.density
 */
export function findDose(base: Mixture, d: Species, o: DoseOptions): DoseSearch {
  return searchDose(base, d, o, fastWanted(o));
}

/** findDose with the fast exact paths of fast.ts on or off (`o.fast: false` also turns off the scan's early exits). */
function searchDose(base: Mixture, d: Species, o: DoseOptions, useFast: boolean): DoseSearch {
  const relTol = o.relTol ?? 1e-6;
  const cap = doseCap(base, d, o);
  let evaluations = 0;
  const at = (x: number) => {
    evaluations++;
    return evaluate(withDose(base, d, x, o.dosing), o.fast !== false);
  };
  const pred = (x: number) => past(at(x), o.boundary);
  const V = sphereVolume(d.radius);
  const ok = (x: number, method: DoseSearch['method'], window: DoseSearch['window'], anyDose = false, message: string | null = null): DoseSearch => ({
    species: d.id,
    feasible: true,
    reason: null,
    message,
    threshold: { density: x, volumeFraction: x * V },
    anyDose,
    window,
    method,
    cap,
    evaluations,
  });

  if (o.dosing === 'replace' && baseVolumeFraction(base) === 0) return infeasible(d, cap, 'nothing-to-replace', o, evaluations);
  // The fast exact path (docs/model.md §6 "Fast exact paths"): the base's side from Hurwitz counts, the threshold in closed form per mode.
  let fast: RankOneDose | null = null;
  // false when the base grows below the boundary (stationary, a growing pair): only the second tier applies
  let certifiable = false;
  const fb = o.boundary as 'stationary' | 'any';
  if (useFast && cap.density > 0 && fastInapplicable(base, d, o.dosing, o.boundary) === null) {
    validateMixture(withDose(base, d, cap.density, o.dosing));
    const f = new RankOneDose();
    const b = f.prepare(base, d, cap.density, fb);
    evaluations++; // the base's own check at dose 0
    const pastAtZero = b.kind === 'base-past' ? true : b.kind === 'unsettled' ? f.pastExact(0, fb) : null;
    if (pastAtZero === true) return { ...infeasible(d, cap, 'base-already-past', o, evaluations), method: 'rank-one-determinant' };
    if (b.kind === 'stable' || pastAtZero === false) {
      fast = f;
      certifiable = b.kind === 'stable';
    }
  }
  if (fast === null && pred(0)) return infeasible(d, cap, 'base-already-past', o, evaluations);
  if (!(cap.density > 0)) {
    if (cap.limitedBy === 'volume-fraction') return infeasible(d, cap, 'no-room-under-cap', o, evaluations);
    return infeasible(d, cap, 'not-found-below-cap', o, evaluations, 'the dose cap is zero: no dose can be searched.');
  }
  const sg = signs(d, base);
  // Proofs that the dose changes nothing hold only when it is added without crowding: `replace` dilutes
  // the base and crowding couples every species through excluded volume, so the search decides there.
  if (o.dosing === 'add' && !base.crowding) {
    if (!sg.coupled) return infeasible(d, cap, 'no-coupling', o, evaluations);
    const fb = feedback(d, base);
    if (!fb.feedsBack) {
      if (fb.allActivityAbsent) return infeasible(d, cap, 'substrate-absent', o, evaluations, substrateAbsentMessage(fb.absent));
      return infeasible(d, cap, 'no-feedback', o, evaluations);
    }
  }

  if (o.boundary === 'stationary' && o.dosing === 'add' && o.closedForm !== false) {
    const cf = stationaryDoseClosedForm(base, d);
    if (cf.applicable && cf.firstCrossing) {
      if (cf.dose <= 0) {
        // x* ≤ 0 with the base not past: either the dopant pushes the other way (α_d μ_d > 0), or
        // the base sits exactly on the boundary (D_c k₁² + κ + Σ s_m/D_m = 0, e.g. an unbounded
        // chamber without chemical loss) and a self-attracting dopant crosses at every x > 0.
        if (cf.dopantActivityMobility < 0) return ok(0, 'closed-form', null, true, ANY_DOSE_CLOSED);
        return infeasible(d, cap, 'wrong-sign', o, evaluations);
      }
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

  const n = o.scanPoints ?? 48;
  if (fast) {
    const f = fast;
    // the same reasons the search gives when it finds nothing (the sign rule only for rank one)
    const fastInfeasible = (method: DoseSearch['method'], message: string): DoseSearch => {
      evaluations += f.checked - 1;
      if (f.S === 1 && !sg.neg && sg.pos) return { ...infeasible(d, cap, 'wrong-sign', o, evaluations), method };
      return { ...infeasible(d, cap, 'not-found-below-cap', o, evaluations, message), method };
    };
    const v: FastVerdict = certifiable ? f.verdict(n) : { kind: 'fallback', why: 'the base grows below the boundary' };
    if (v.kind === 'threshold') {
      evaluations += f.checked - 1;
      return ok(v.dose, 'rank-one-determinant', null);
    }
    if (v.kind === 'none-below-cap') return fastInfeasible('rank-one-determinant', notFoundFastMessage(o.boundary, f, n, cap.density));
    // second tier: something grows below the determinant's crossing; the search's doses and bisection on exact predicates
    const t = f.search(n, relTol, fb);
    if (t.kind === 'threshold') {
      evaluations += f.checked - 1;
      const window = t.windowUpTo === null ? null : { upTo: t.windowUpTo, stateAbove: at(t.windowUpTo).state };
      return ok(t.dose, 'hurwitz-search', window);
    }
    if (t.kind === 'any-dose') {
      evaluations += f.checked - 1;
      return ok(0, 'hurwitz-search', null, true, anyDoseSearched(t.floor));
    }
    if (t.kind === 'none-below-cap') return fastInfeasible('hurwitz-search', notFoundHurwitzMessage(o.boundary, n, cap.density));
  }

  // Scan (0, cap] on a log grid, look between the scan doses, then bisect the first crossing and the first return.
  const grid = scanDoses(cap.density, n).map((x) => ({ x, e: at(x) }));
  const samples = refine(grid, (e) => measure(e, o.boundary), (e) => past(e, o.boundary), at, relTol);
  const k = samples.findIndex((s) => past(s.e, o.boundary));
  if (k < 0) {
    // The sign argument is a proof only for rank one and `add` (one chemical, no crowding or saturation:
    // adding s_d = α_d μ_d x of one sign moves det J and trace J one way, docs/model.md §3; `replace` also
    // scales the base down); otherwise say what the search found.
    const rankOne = o.dosing === 'add' && buildModel(withDose(base, d, 1, 'add')).rankOne;
    if (rankOne && (o.boundary === 'stationary' || o.boundary === 'any') && !sg.neg && sg.pos) return infeasible(d, cap, 'wrong-sign', o, evaluations);
    if (rankOne && o.boundary === 'restore' && !sg.pos && sg.neg) return infeasible(d, cap, 'wrong-sign', o, evaluations);
    if (base.crowding) {
      const free = findDose({ ...base, crowding: false }, d, { ...o, scanPoints: Math.min(n, 24) });
      evaluations += free.evaluations;
      if (free.feasible) return infeasible(d, cap, 'crowding-wins', o, evaluations);
    }
    return infeasible(d, cap, 'not-found-below-cap', o, evaluations, notFoundMessage(o.boundary, n, samples.length - n, grid[0]!.x, cap.density));
  }
  let crossed: number;
  if (k === 0) {
    const floor = cap.density * FLOOR;
    if (pred(floor)) return ok(0, 'search', null, true, anyDoseSearched(floor));
    crossed = bisect(pred, floor, samples[0]!.x, relTol);
  } else crossed = bisect(pred, samples[k - 1]!.x, samples[k]!.x, relTol);
  let window: DoseSearch['window'] = null;
  for (let j = k + 1; j < samples.length; j++) {
    if (!past(samples[j]!.e, o.boundary)) {
      const upTo = bisect((x) => !pred(x), samples[j - 1]!.x, samples[j]!.x, relTol);
      // bisect returns the upper end of its bracket: a dose already back on the old side
      window = { upTo, stateAbove: at(upTo).state };
      break;
    }
  }
  return ok(crossed, 'search', window);
}

const ANY_DOSE_CLOSED =
  'any dose crosses (threshold 0⁺): the base sits exactly on the stationary boundary (D_c k₁² + κ + Σ α μ ρ/D = 0, as in an unbounded chamber without chemical loss) and this species is self-attracting, so λ(k → 0⁺) = −α μ x / D_c > 0 for every dose x > 0.';

function anyDoseSearched(floor: number): string {
  return `any dose crosses (threshold 0⁺): the boundary is past at every scan dose and still at ${perMl(floor)} (10⁻³⁰ of the cap).`;
}

/** Whether the options allow the fast exact paths (`fast` and `closedForm` not false). */
function fastWanted(o: DoseOptions): boolean {
  return o.fast !== false && o.closedForm !== false;
}

function notFoundFastMessage(b: Boundary, f: RankOneDose, n: number, cap: number): string {
  return (
    `the ${b} boundary was not found below the cap (${perMl(cap)}): no allowed mode's rank-one determinant changes sign at or below it ` +
    `(all ${f.modes} modes below the proven bound, ${f.modes - f.active} of them stable at every dose by Gershgorin), and every mode is stable by its Hurwitz count ` +
    `at the ${n} doses log-spaced from ${perMl(cap * 1e-9)}; a complex pair that grows and decays again between two of them is not excluded, ` +
    'so this does not prove that no narrower window exists.'
  );
}

function notFoundHurwitzMessage(b: Boundary, n: number, cap: number): string {
  return (
    `the ${b} boundary was not found below the cap (${perMl(cap)}) at any of ${n} doses log-spaced from ${perMl(cap * 1e-9)}, each decided exactly on every allowed mode ` +
    '(Hurwitz counts, and the eigenvalues of the modes that grow); the doses between them are not searched, so this does not prove that no narrower window exists.'
  );
}

function notFoundMessage(b: Boundary, n: number, extra: number, lowest: number, cap: number): string {
  const branch = b === 'stationary' ? 'real-eigenvalue' : b === 'oscillatory' ? 'complex-pair' : 'overall';
  return (
    `the ${b} boundary was not found below the cap (${perMl(cap)}) by a search of ${n} doses log-spaced from ${perMl(lowest)}` +
    `${extra > 0 ? ` and ${extra} more` : ''}, with each local extremum of the ${branch} growth between them refined where that branch exists at the scan dose; ` +
    'a branch absent at the scan doses around a gap (e.g. a complex pair that forms and vanishes again between two of them) is not searched there, ' +
    'so this does not prove that no narrower window exists.'
  );
}

// ---------------------------------------------------------------- dose path

/** One stretch of dose with one state: the state holds for doses in (from, to] (m⁻³). */
export interface DoseInterval {
  from: number;
  to: number;
  state: State;
}

export interface DosePath {
  /** The intervals of (0, cap] with the state in each, in dose order; empty when the cap is 0 */
  intervals: DoseInterval[];
  /** The base's own state (dose 0) */
  baseState: State;
  /** For a stable base: the smallest dose at which any mode grows, and the state there; null otherwise or if none below the cap */
  firstOnset: { density: number; state: State } | null;
  /**
   * How the path was searched: scan doses, extra doses from the refinement, the lowest scan dose and the floor (m⁻³),
   * the general evaluations, and the method: 'general' (a mode scan at every dose) or 'rank-one-determinant'
   * (docs/model.md §6: stable below the certified stationary crossing without a scan, mode scans only above it).
   */
  search: { doses: number; refined: number; lowest: number | null; floor: number | null; evaluations: number; method: 'general' | 'rank-one-determinant' };
}

/**
 * The state over the whole dose range (0, cap] (docs/model.md §5, §6): the log scan
 * of findDose, refined between scan doses on both branches (real and complex
 * growth), and every change of state bisected to `relTol`. When the state at
 * the lowest scan dose differs from the base's, the change is bisected down to
 * cap × 1e-30; if the state there is still the new one, the path starts at 0⁺
 * (any dose changes it). A change of which branch is fastest while both grow,
 * hidden between two scan doses, is not searched for.
 */
export function dosePath(base: Mixture, d: Species, o: DoseOptions): DosePath {
  const relTol = o.relTol ?? 1e-6;
  const cap = doseCap(base, d, o).density;
  let evaluations = 0;
  const at = (x: number) => {
    evaluations++;
    return evaluate(withDose(base, d, x, o.dosing), o.fast !== false);
  };
  const n = o.scanPoints ?? 48;
  // The fast facts (docs/model.md §6 "Fast exact paths"): a base proven stable, and a certified first stationary crossing x*.
  let fastStable = false;
  let fastVerdict: FastVerdict | null = null;
  let fastAny: RankOneDose | null = null;
  if (fastWanted(o) && cap > 0 && fastInapplicable(base, d, o.dosing, 'any') === null) {
    validateMixture(withDose(base, d, cap, o.dosing));
    const f = new RankOneDose();
    if (f.prepare(base, d, cap, 'any').kind === 'stable') {
      fastStable = true;
      fastAny = f;
      const v = f.verdict(n);
      if (v.kind !== 'fallback') fastVerdict = v;
    }
  }
  const baseState: State = fastStable ? 'stable' : at(0).state;
  const floor = cap * FLOOR;
  if (!(cap > 0)) return { intervals: [], baseState, firstOnset: null, search: { doses: 0, refined: 0, lowest: null, floor: null, evaluations, method: 'general' } };
  if (o.dosing === 'add' && !base.crowding && (!signs(d, base).coupled || !feedback(d, base).feedsBack)) {
    // An uncoupled dopant, or one that feeds nothing back (its substrate absent, say), added without
    // crowding only adds its own decoupled mode, −k² D_d < 0: the spectrum of the base is unchanged
    // at every dose (docs/model.md §3, `feedback`), so no scan is needed.
    return { intervals: [{ from: 0, to: cap, state: baseState }], baseState, firstOnset: null, search: { doses: 0, refined: 0, lowest: null, floor: null, evaluations, method: 'general' } };
  }
  const fastSearch = (refined: number): DosePath['search'] => ({ doses: n, refined, lowest: cap * 1e-9, floor, evaluations, method: 'rank-one-determinant' });
  if (fastVerdict?.kind === 'none-below-cap') {
    // every mode stable at every scan dose and no determinant changes sign below the cap: stable throughout, as far as the scan doses show
    return { intervals: [{ from: 0, to: cap, state: 'stable' }], baseState, firstOnset: null, search: fastSearch(0) };
  }
  let xStar: number | null = null;
  if (fastVerdict?.kind === 'threshold') {
    // Stable up to x*; just above it the crossing mode's one real eigenvalue is the only growth: stationary.
    // Mode scans only above x* (the state there needs eigenvalues); one just above x* confirms it.
    const x = fastVerdict.dose;
    if (x < cap && at(Math.min(cap, x * (1 + 10 * relTol))).state === 'stationary') xStar = x;
    else if (x === cap) xStar = x;
  }
  let samples = scanDoses(cap, n)
    .filter((x) => xStar === null || x > xStar)
    .map((x) => ({ x, e: at(x) }));
  const scanned = samples.length;
  samples = refine(samples, (e) => e.real, (e) => e.real > 0, at, relTol);
  samples = refine(samples, (e) => e.complex, (e) => e.complex > 0, at, relTol);
  const refined = samples.length - scanned;
  if (xStar !== null) {
    // the certified crossing as the first sample: stable below, stationary from it
    samples.unshift({ x: xStar, e: { any: 0, real: 0, complex: -Infinity, state: 'stationary' } });
  }
  const stateAt = (x: number) => at(x).state;
  const intervals: DoseInterval[] = [];
  const push = (from: number, state: State) => {
    const last = intervals[intervals.length - 1];
    if (last && last.state === state) return;
    if (last) last.to = from;
    intervals.push({ from, to: cap, state });
  };
  const s0 = samples[0]!.e.state;
  if (xStar !== null) {
    push(0, 'stable');
    push(xStar, 'stationary');
  } else if (s0 !== baseState) {
    const sf = stateAt(floor);
    if (sf === s0) push(0, s0);
    else {
      push(0, sf);
      resolve(floor, sf, samples[0]!.x, s0, 0);
    }
  } else push(0, s0);
  // leaving 'stable' means some mode grows: decided exactly by the Hurwitz counts of the fast path where it was prepared
  // (docs/model.md §6), a mode scan only where a Routh table is degenerate
  const leaves = (sa: State) => (y: number) => {
    if (sa === 'stable' && fastAny !== null && y <= cap) {
      const s = fastAny.stableAt(y);
      if (s !== null) return !s;
    }
    return stateAt(y) !== sa;
  };
  function resolve(a: number, sa: State, b: number, sb: State, depth: number): void {
    const c = bisect(leaves(sa), a, b, relTol);
    const sc = c === b ? sb : stateAt(c);
    push(c, sc);
    if (sc !== sb && depth < 8 && c < b) resolve(c, sc, b, sb, depth + 1);
    else if (sc !== sb) push(b, sb);
  }
  for (let i = 1; i < samples.length; i++) {
    const a = samples[i - 1]!;
    const b = samples[i]!;
    const cur = intervals[intervals.length - 1]!.state;
    if (b.e.state !== cur) resolve(a.x, cur, b.x, b.e.state, 0);
  }
  const path = tidyPath(intervals);
  const onset = baseState === 'stable' ? path.find((iv) => iv.state !== 'stable') : undefined;
  const search: DosePath['search'] = xStar !== null ? fastSearch(refined) : { doses: n, refined, lowest: samples[0]!.x, floor, evaluations, method: 'general' };
  return {
    intervals: path,
    baseState,
    firstOnset: onset ? { density: onset.from, state: onset.state } : null,
    search,
  };
}

/**
 * Every interval non-empty (from < to) and neighbours of different states: an empty interval
 * (a change bisected onto the end of its bracket, e.g. a state that holds only at the cap itself,
 * where `replace` has replaced the whole base) is dropped, and equal neighbours are merged.
 * The path still runs from 0 to the cap without gaps.
 */
export function tidyPath(raw: DoseInterval[]): DoseInterval[] {
  const out: DoseInterval[] = [];
  for (const iv of raw) {
    if (!(iv.to > iv.from)) continue;
    const last = out[out.length - 1];
    if (last && last.state === iv.state) last.to = iv.to;
    else if (last) out.push({ ...iv, from: last.to });
    else out.push({ ...iv });
  }
  if (out.length > 0 && raw.length > 0) {
    out[0]!.from = raw[0]!.from;
    out[out.length - 1]!.to = raw[raw.length - 1]!.to;
  }
  return out;
}

// ---------------------------------------------------------------- uncertainty

/**
 * One Monte Carlo draw of every uncertain coefficient (docs/model.md §7): normal for
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
  /** Fraction of draws in which the base alone is already past the boundary (their threshold is dose 0) */
  alreadyPast: number;
  /** Fraction of draws that cross at or below the cap, the already-past ones (dose 0) included */
  feasibleFraction: number;
  /**
   * Median, 5 % and 95 % quantiles of the threshold dose (m⁻³) over every draw: a draw already
   * past counts as 0, one that does not cross below the cap as +∞. A quantile above the cap is
   * null, and `aboveCap` says so.
   */
  median: number | null;
  p05: number | null;
  p95: number | null;
  aboveCap: { median: boolean; p05: boolean; p95: boolean };
  /** P(crossed at dose) for each requested dose */
  probability: { density: number; probability: number }[];
  /**
   * The empirical distribution of the threshold dose: the type-7 quantile at each of the
   * BAND_LEVELS probabilities p = 0, 0.05, …, 1 over every draw (m⁻³; 0 for a draw already past,
   * null above the cap), so a page can draw its cumulative distribution (docs/model.md §7).
   * Absent from plans stored before it was added.
   */
  quantiles: { p: number; dose: number | null }[];
  /**
   * How the draws were computed: `fastDraws` by the fast exact path (docs/model.md §7: the rank-one
   * determinant's threshold, certified by Hurwitz counts, exact rather than bisected), `fallbackDraws`
   * by the general per-draw search (a draw the fast path could not certify, or fast off or not applicable).
   */
  fastDraws: number;
  fallbackDraws: number;
}

/** Internal hooks of a band: the base's draws shared by every candidate of a screen, and a per-draw progress call. */
export interface BandHooks {
  /** baseDraws[i] = perturb(base, new Random(streamSeed(seed, i, ''))), computed once for all candidates */
  baseDraws?: Mixture[];
  /** called after each draw with the number done */
  progress?: (done: number) => void;
}

/** The base's Monte Carlo draws (docs/model.md §7), the same for every candidate (common random numbers). */
export function baseDraws(base: Mixture, u: UncertaintyOptions): Mixture[] {
  return Array.from({ length: u.samples }, (_, i) => perturb(base, new Random(streamSeed(u.seed, i, ''))));
}

/** The probabilities of a band's `quantiles`: 0, 0.05, …, 1 (21 levels). */
export const BAND_LEVELS: readonly number[] = Array.from({ length: 21 }, (_, i) => i / 20);

/** Linear interpolation between order statistics (the "type 7" sample quantile); +∞ propagates. */
function quantile(sorted: number[], q: number): number {
  if (sorted.length === 0) return Infinity;
  const pos = (sorted.length - 1) * q;
  const lo = Math.floor(pos);
  const hi = Math.ceil(pos);
  if (lo === hi) return sorted[lo]!;
  if (!Number.isFinite(sorted[hi]!)) return Infinity;
  return sorted[lo]! + (sorted[hi]! - sorted[lo]!) * (pos - lo);
}

/**
 * Monte Carlo band of the threshold dose (docs/model.md §7): each draw perturbs the
 * base (the same draw for every candidate, "common random numbers") and the
 * dopant, and finds its own threshold (bisection to 1e-4 relative, enough for a
 * band). A draw whose base is already past the boundary has threshold 0; one
 * that does not cross below the cap, +∞. Same seed, same numbers.
 */
export function thresholdBand(base: Mixture, d: Species, o: DoseOptions, u: UncertaintyOptions, hooks: BandHooks = {}): ThresholdBand {
  const thresholds: number[] = [];
  const doses = u.doses ?? [];
  const crossedAt = doses.map(() => 0);
  let already = 0;
  let fastDraws = 0;
  const drawOptions: DoseOptions = { ...o, relTol: Math.max(o.relTol ?? 1e-6, 1e-4), scanPoints: Math.min(o.scanPoints ?? 48, 28) };
  // The fast exact path applies by structure (the same for every draw); one work space serves all draws.
  const fast = fastWanted(o) && fastInapplicable(base, d, o.dosing, o.boundary) === null ? new RankOneDose() : null;
  // a candidate whose first draws all fall back (a Hopf crossing first, say) stops trying: the general search decides the rest
  let fastTries = 0;
  const GIVE_UP_AFTER = 16;
  if (hooks.baseDraws && hooks.baseDraws.length < u.samples) throw new EngineInputError('baseDraws', 'fewer base draws than samples');
  for (let i = 0; i < u.samples; i++) {
    const b = hooks.baseDraws?.[i] ?? perturb(base, new Random(streamSeed(u.seed, i, '')));
    const dd = perturbSpecies(d, ...posSigned(new Random(streamSeed(u.seed, i, d.id))));
    let threshold: number | null = null;
    let verdict: FastVerdict | null = null;
    let sv: StationaryVerdict | null = null;
    // sv from `stationary` (no per-mode matrices kept: a dose in its last bracket goes to the general path)
    let structured = false;
    let tier2 = false;
    if (fast && !(fastDraws === 0 && fastTries >= GIVE_UP_AFTER)) {
      fastTries++;
      const cap = doseCap(b, dd, o).density;
      if (cap > 0) {
        const fb = o.boundary as 'stationary' | 'any';
        // the stationary boundary straight from the structured polynomials (fast.ts `stationary`), else `prepare`
        const st = fb === 'stationary' ? fast.stationary(b, dd, cap, drawOptions.relTol!) : null;
        if (st?.kind === 'base-past') threshold = 0;
        else if (st && st.kind !== 'fallback') {
          sv = st;
          structured = true;
          threshold = st.kind === 'threshold' ? st.dose : Infinity;
        }
        const p = threshold !== null ? null : fast.prepare(b, dd, cap, fb);
        const pastAtZero = p === null ? null : p.kind === 'base-past' ? true : p.kind === 'unsettled' ? fast.pastExact(0, fb) : null;
        if (p === null) {
          // decided above
        } else if (pastAtZero === true) threshold = 0;
        else if (fb === 'stationary' && (p.kind === 'stable' || pastAtZero === false) && (sv = fast.stationaryThreshold(drawOptions.relTol!)).kind !== 'fallback') {
          // the stationary boundary is monotone in the dose: one exact test per mode (docs/model.md §6)
          threshold = sv.kind === 'threshold' ? sv.dose : Infinity;
        } else if (p.kind === 'stable' || pastAtZero === false) {
          sv = null;
          verdict = p.kind === 'stable' ? fast.verdict(drawOptions.scanPoints!) : null;
          if (verdict?.kind === 'threshold') threshold = verdict.dose;
          else if (verdict?.kind === 'none-below-cap') threshold = Infinity;
          else {
            // the second tier: exact predicates at the search's doses, bisected to the draw's tolerance
            verdict = null;
            const t = fast.search(drawOptions.scanPoints!, drawOptions.relTol!, fb);
            if (t.kind === 'threshold') threshold = t.dose;
            else if (t.kind === 'any-dose') threshold = 0;
            else if (t.kind === 'none-below-cap') threshold = Infinity;
            if (t.kind !== 'fallback') tier2 = true;
          }
        }
      }
    }
    if (threshold !== null) {
      fastDraws++;
      // a draw past at dose 0 counts as already past; a 0⁺ threshold (any dose crosses) does not
      if (threshold === 0 && !tier2) already++;
    } else {
      verdict = null;
      sv = null;
      // the general per-draw search (with the scan's proven early exits unless `fast: false`)
      const r = searchDose(b, dd, drawOptions, false);
      if (r.reason === 'base-already-past') {
        already++;
        threshold = 0;
      } else threshold = r.feasible ? r.threshold!.density : Infinity;
    }
    thresholds.push(threshold);
    doses.forEach((x, j) => {
      // the fast facts where they prove it, else the spectrum
      const known =
        fast && sv && sv.kind !== 'fallback' && x >= 0 && x <= fast.cap
          ? sv.kind === 'none-below-cap' || x < sv.certifiedBelow
            ? false
            : x > sv.dose
              ? true
              : structured
                ? null
                : fast.pastExact(x, 'stationary')
          : fast && threshold !== null && (verdict || tier2)
            ? verdict
              ? fast.pastAt(x, verdict)
              : x <= fast.cap
                ? fast.pastExact(x, o.boundary as 'stationary' | 'any')
                : null
            : null;
      if (known ?? pastBoundary(withDose(b, dd, x, o.dosing), o.boundary, o.fast === false)) crossedAt[j]!++;
    });
    hooks.progress?.(i + 1);
  }
  thresholds.sort((a, b) => a - b);
  const crossed = thresholds.filter(Number.isFinite).length;
  const q = (p: number) => quantile(thresholds, p);
  const [median, p05, p95] = [q(0.5), q(0.05), q(0.95)];
  const orNull = (v: number) => (Number.isFinite(v) ? v : null);
  return {
    samples: u.samples,
    seed: u.seed,
    alreadyPast: u.samples > 0 ? already / u.samples : 0,
    feasibleFraction: u.samples > 0 ? crossed / u.samples : 0,
    median: orNull(median),
    p05: orNull(p05),
    p95: orNull(p95),
    aboveCap: { median: !Number.isFinite(median), p05: !Number.isFinite(p05), p95: !Number.isFinite(p95) },
    probability: doses.map((x, j) => ({ density: x, probability: u.samples > 0 ? crossedAt[j]! / u.samples : 0 })),
    quantiles: u.samples > 0 ? BAND_LEVELS.map((p) => ({ p, dose: orNull(q(p)) })) : [],
    fastDraws,
    fallbackDraws: u.samples - fastDraws,
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
  /**
   * Called as the screen advances: the fraction of its work done (0–1) and what it is doing (e.g. "candidate 3 of 50: ptj-1um-b07").
   * It may throw to stop the screen (a cancelled job); the error propagates.
   */
  progress?: (fraction: number, stage: string) => void;
}

/** A candidate's threshold as screened: the dose search's, with whether any dose crosses and the band's numbers beside it. */
export type ScreenedThreshold = NonNullable<DoseSearch['threshold']> & {
  anyDose: boolean;
} & Partial<Pick<ThresholdBand, 'median' | 'p05' | 'p95' | 'aboveCap' | 'feasibleFraction' | 'alreadyPast'>>;

export interface CandidateResult extends Omit<DoseSearch, 'threshold'> {
  /** As DoseSearch, plus `anyDose` and, with uncertainty, the band's median, p05, p95, aboveCap, feasibleFraction, alreadyPast */
  threshold: ScreenedThreshold | null;
  rank: number;
  /** Analysis at the threshold dose (the critical mode: wavelength, composition) */
  atThreshold: AnalysisResult | null;
  /** Analysis at margin × threshold (growth time, period, warnings of the sample to make); null when any dose crosses */
  atMargin: AnalysisResult | null;
  band: ThresholdBand | null;
  /** Smallest dose in (0, cap] at which any mode grows, and the state there (stable base only; else null) */
  firstOnset: { density: number; state: State } | null;
  /** The states over (0, cap]: [{ from, to, state }], boundaries bisected to relTol */
  dosePath: DoseInterval[];
  /** How the dose path was searched */
  pathSearch: DosePath['search'];
  /** What the reader must know about this candidate's answer (kebab-case codes) */
  warnings: Warning[];
}

/**
 * Screen candidates: the dose search for each, the analyses at the threshold and
 * at the margin, the dose path and first onset, the Monte Carlo band, ranked by
 * the smallest (median) dose; infeasible candidates after, with their reasons,
 * never dropped.
 */
export function screen(base: Mixture, candidates: Species[], o: ScreenOptions): CandidateResult[] {
  const margin = o.margin ?? 1.25;
  if (!(margin >= 1)) throw new EngineInputError('margin', 'must be at least 1');
  const seen = new Set<string>();
  for (const c of candidates) {
    if (seen.has(c.id)) throw new EngineInputError('candidates', `candidate "${c.id}" is listed twice`);
    seen.add(c.id);
  }
  const u = o.uncertainty && o.uncertainty.samples > 0 ? o.uncertainty : null;
  // the base's draws are the same for every candidate (common random numbers): perturb them once
  const draws = u ? baseDraws(base, u) : undefined;
  const results = candidates.map((d, index): CandidateResult => {
    const stage = `candidate ${index + 1} of ${candidates.length}: ${d.id}`;
    o.progress?.(index / candidates.length, stage);
    const r = findDose(base, d, o);
    const path = dosePath(base, d, o);
    const warnings: Warning[] = [];
    let atThreshold: AnalysisResult | null = null;
    let atMargin: AnalysisResult | null = null;
    if (r.feasible) {
      const x = r.threshold!.density;
      atThreshold = analyze(withDose(base, d, x, o.dosing));
      if (r.anyDose) {
        warnings.push({ code: 'any-dose', message: 'any dose above zero crosses the boundary (threshold 0⁺): there is no margin dose; choose the doses to make from the dose path and give them to the bench sheet (its doses option, brink sheet --doses).' });
      } else {
        const xm = Math.min(x * margin, r.window ? Math.sqrt(x * r.window.upTo) : Infinity, r.cap.density);
        atMargin = analyze(withDose(base, d, xm, o.dosing));
      }
    }
    const on = path.firstOnset;
    const tol = 1 + 10 * (o.relTol ?? 1e-6);
    if (on && o.boundary !== 'restore') {
      if (r.feasible && r.threshold!.density > on.density * tol) {
        warnings.push({
          code: 'earlier-instability',
          message: `the mixture already turns ${on.state} from ${perMl(on.density)}, below this ${o.boundary} threshold of ${perMl(r.threshold!.density)}.`,
          onset: on.density,
          state: on.state,
        });
      } else if (!r.feasible && r.reason !== 'base-already-past') {
        warnings.push({
          code: 'earlier-instability',
          message: `no ${o.boundary} crossing below the cap, but the mixture turns ${on.state} from ${perMl(on.density)}.`,
          onset: on.density,
          state: on.state,
        });
      }
    }
    const fb = feedback(d, base);
    if (fb.absent.length > 0 && r.reason !== 'substrate-absent')
      warnings.push({
        code: 'substrate-absent',
        message: `its substrate ${listed(fb.absent)} is absent from the mixture (concentration 0): ${fb.allActivityAbsent ? 'it turns nothing over' : 'those couplings turn nothing over'}.`,
        chemicals: fb.absent,
      });
    if (!fb.feedsBack && (o.dosing === 'replace' || base.crowding)) {
      const how = [o.dosing === 'replace' ? 'diluting the base it replaces' : null, base.crowding ? 'crowding (excluded volume)' : null].filter(Boolean).join(' and ');
      warnings.push({ code: 'no-feedback', message: `this species feeds nothing back on the chemicals: whatever this answer shows comes only from ${how}.` });
    }
    // progress within the candidate's draws, about every 1 % of its share
    const every = u ? Math.max(1, Math.floor(u.samples / 100)) : 1;
    const onDraw = (done: number) => {
      if (done % every === 0 || done === u!.samples) o.progress?.((index + done / (u!.samples + 1)) / candidates.length, `${stage}, draw ${done} of ${u!.samples}`);
    };
    const band = u ? thresholdBand(base, d, o, u, { baseDraws: draws, progress: o.progress ? onDraw : undefined }) : null;
    if (band && band.alreadyPast > 0)
      warnings.push({ code: 'already-past-in-draws', message: `in ${(100 * band.alreadyPast).toFixed(1)} % of the Monte Carlo draws the base alone is already past the boundary (threshold 0).` });
    if (band && r.feasible && (band.aboveCap.median || band.aboveCap.p95))
      warnings.push({ code: 'band-above-cap', message: `the ${band.aboveCap.median ? 'median' : '95 % point'} of the threshold lies above the dose cap: only ${(100 * band.feasibleFraction).toFixed(1)} % of the draws cross at or below it.` });
    const threshold: ScreenedThreshold | null = r.threshold
      ? {
          ...r.threshold,
          anyDose: r.anyDose,
          ...(band ? { median: band.median, p05: band.p05, p95: band.p95, aboveCap: band.aboveCap, feasibleFraction: band.feasibleFraction, alreadyPast: band.alreadyPast } : {}),
        }
      : null;
    return { ...r, threshold, rank: 0, atThreshold, atMargin, band, firstOnset: path.firstOnset, dosePath: path.intervals, pathSearch: path.search, warnings };
  });
  o.progress?.(1, 'ranking the candidates');
  // by the median dose (zeros included) when there is a band, else the threshold; a median above the cap ranks last of the feasible
  const key = (r: CandidateResult) => (!r.feasible ? Infinity : r.band ? (r.band.median ?? Infinity) : r.threshold!.density);
  const order = [...results].sort((a, b) => key(a) - key(b) || (a.feasible === b.feasible ? a.species.localeCompare(b.species) : a.feasible ? -1 : 1));
  order.forEach((r, i) => (r.rank = i + 1));
  return order;
}

/** The default dose factors of a bench series (× the median or threshold dose). */
export const DEFAULT_DOSE_FACTORS = [0, 0.5, 0.8, 1, 1.25, 1.6, 2];

/**
 * The dose series that brackets a candidate's threshold and its uncertainty band:
 * factors × the reference dose (the Monte Carlo median when it is above zero,
 * else the threshold), plus the 5 % and 95 % doses when there is a band (and the
 * factors are the default). Sorted, duplicates removed (m⁻³). Throws when any
 * dose crosses (threshold 0⁺): there is nothing to scale.
 */
export function doseSeries(c: Pick<CandidateResult, 'threshold' | 'band'>, factors?: number[]): { reference: number; doses: number[] } {
  if (!c.threshold) throw new EngineInputError('candidate', 'an infeasible candidate has no dose series');
  const median = c.band?.median ?? null;
  const reference = median !== null && median > 0 ? median : c.threshold.density;
  if (!(reference > 0)) throw new EngineInputError('candidate', 'any dose crosses (threshold 0⁺): there is no reference dose to scale a series by; give the doses explicitly');
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
  /** Grid size (each 3 to 200; default 24 × 24) */
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

/** Scale the base (one species, or all) by a factor. */
export function scaleBase(base: Mixture, factor: number, which: string | null): Mixture {
  if (which !== null && !base.species.some((s) => s.id === which)) throw new EngineInputError('baseSpecies', `"${which}" is not a base species`);
  return { ...base, species: base.species.map((s) => (which === null || s.id === which ? { ...s, density: s.density * factor } : s)) };
}

/**
 * States on a grid of base level × dose, and the boundaries between them: along
 * each row the dose of every change of state is bisected (relative 1e-6) and
 * the points of the same transition are joined across rows into polylines.
 * Each state comes from `stateOf` (analyze.ts), equal to analyze().state with
 * fewer eigenvalues; `fast: false` takes the general mode scan at every point
 * (the reference).
 */
export function stateMap(base: Mixture, d: Species, o: StateMapOptions): StateMap {
  const nb = Math.min(200, Math.max(3, o.baseSteps ?? 24));
  const nd = Math.min(200, Math.max(3, o.doseSteps ?? 24));
  // the state alone, equal to analyze().state (analyze.ts stateOf; fast: false is the general scan)
  const fast = o.fast !== false;
  const mapState = (mix: Mixture) => stateOf(mix, { fast });
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
    return doseAxis.map((x) => mapState(withDose(b, d, x, o.dosing)));
  });
  const lines = new Map<string, [number, number][][]>();
  factor.forEach((f, i) => {
    const b = scaleBase(base, f, which);
    const row = states[i]!;
    for (let j = 0; j + 1 < nd; j++) {
      const from = row[j]!;
      const to = row[j + 1]!;
      if (from === to) continue;
      const x = bisect((y) => mapState(withDose(b, d, y, o.dosing)) !== from, doseAxis[j]!, doseAxis[j + 1]!, o.relTol ?? 1e-6);
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

// ---------------------------------------------------------------- warnings of a screen or plan

/**
 * What a screen or plan must say before any dopant: a `no-concentration` for every
 * chemical taken as 0 (naming whose substrate it is), then the base mixture's own
 * analysis warnings (an absent fuel, settling, a missing datum).
 */
export function screenWarnings(base: Mixture, candidates: Species[]): Warning[] {
  // the base analysis's own no-concentration says the same as the one that also names the candidates: keep one
  return [...missingConcentrationWarnings(base, candidates), ...analyze(base).warnings.filter((w) => w.code !== 'no-concentration')];
}
