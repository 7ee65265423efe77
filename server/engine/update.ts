/**
 * The model update (docs/model.md §13): the bench's outcomes as data for the
 * physics. All numbers SI; doses are number densities (m⁻³) of the dopant.
 *
 * Prior. The shelf's standard uncertainties, drawn as the planner draws them
 * (planner.ts `perturb`): every uncertain quantity q with value v and sd s is a
 * deterministic function of one standard normal deviate z,
 *
 *     signed (activity rate, mobility):            q = v + s z
 *     positive (diffusivity, density, radius, …):  q = exp(ln v − σ²/2 + σ z),  σ² = ln(1 + (s/v)²)
 *
 * so the prior is z ~ N(0, I) in the "perturbation space" of the base's and the
 * observed candidate's deviates. Draw i of a plan with seed S takes the base's
 * deviates from Random(streamSeed(S, i, '')) and the candidate's from
 * Random(streamSeed(S, i, id)), in the order `perturb` consumes them: the same
 * seed gives the same draws as the plan (tests/engine/update.test.ts checks it).
 *
 * Likelihood of one tube at dose x, given a draw θ (its predicted state s(x; θ)):
 *
 *     P(seen = s) = 1 − ε,  P(seen = each other state) = ε / 2,  `unclear`: 1 (no state information)
 *     onset time  t:  ln t ~ N(ln(n_e τ(x; θ)), σ_t²)   when θ predicts growth (τ = 1/λ_max, n_e e-folds)
 *     pattern length ℓ: ln ℓ ~ N(ln Λ(x; θ), σ_ℓ²)       when θ predicts growth at a finite wavelength Λ = 2π/k
 *
 * Posterior. Importance sampling over the plan's own draws (weights w_i = L(θ_i),
 * Kish effective sample size ESS = (Σw)²/Σw²) while ESS ≥ `minEss`; below it a
 * sequential Monte Carlo sampler (Del Moral, Doucet & Jasra 2006, J. R. Stat. Soc.
 * B 68:411): likelihood tempering π_φ(z) ∝ N(z; 0, I) L(z)^φ from φ = 0 (the
 * plan's draws) to 1, each step of φ chosen by bisection so that the ESS of the
 * incremental weights L^Δφ is half the particles, systematic resampling, then
 * random-walk Metropolis moves z' = z + c Lξ (L the Cholesky factor of the
 * particles' covariance, c adapted to the acceptance) that leave π_φ invariant.
 *
 * Consistency check. (1) The best draw: the fewest state mismatches m* of any
 * draw the sampler saw; P(Bin(n, ε) ≥ m*) is the chance of at least that many
 * misclassifications if the best draw were true: when it is below α, the
 * outcomes are improbable under every draw. (2) The posterior predictive
 * p-value of the discrepancy T(y, θ) = −ln L(y | θ): P(T(y_rep, θ) ≥ T(y, θ))
 * over posterior draws θ and outcomes y_rep simulated from them (Gelman, Meng &
 * Stern 1996, Statistica Sinica 6:733). Either below α: "the model or the shelf
 * is wrong".
 */
import { stateOf, type State } from './analyze.js';
import { stationaryDoseClosedForm } from './dose.js';
import { influence, tubesMixture } from './influence.js';
import { buildModel } from './model.js';
import { doseCap, findDose, streamSeed, withDose, type DoseOptions } from './planner.js';
import { Random } from './random.js';
import { scanModes } from './scan.js';
import { EngineInputError, type Mixture, type Species } from './types.js';

// ---------------------------------------------------------------- the perturbation space

export type ParameterField =
  | 'diffusivity'
  | 'lossRate'
  | 'concentration'
  | 'solubility'
  | 'radius'
  | 'density'
  | 'materialDensity'
  | 'mobility'
  | 'rate'
  | 'maxRate'
  | 'michaelis';

/** SI unit of each field (for reports). */
export const FIELD_UNIT: Record<ParameterField, string> = {
  diffusivity: 'm^2/s',
  lossRate: '1/s',
  concentration: 'mol/m^3',
  solubility: 'mol/m^3',
  radius: 'm',
  density: '1/m^3',
  materialDensity: 'kg/m^3',
  mobility: 'm^5/(mol s)',
  rate: 'mol/s',
  maxRate: 'mol/s',
  michaelis: 'mol/m^3',
};

/** One uncertain quantity of the prior: where it lives, its value and sd (SI), how it is drawn. */
export interface UncertainParameter {
  owner: 'chemical' | 'species';
  /** id of the chemical or species */
  id: string;
  field: ParameterField;
  /** the coupling's chemical, for mobility and activity fields; else null */
  chemical: string | null;
  kind: 'positive' | 'signed';
  value: number;
  sd: number;
  /** `base`: the base mixture's stream; `candidate`: the observed candidate's */
  stream: 'base' | 'candidate';
}

type Visit = (p: Omit<UncertainParameter, 'value' | 'sd' | 'kind'>, kind: 'positive' | 'signed', v: number, sd: number) => number;

function walkSpecies(s: Species, stream: 'base' | 'candidate', visit: Visit): Species {
  const at = (field: ParameterField, chemical: string | null = null) => ({ owner: 'species' as const, id: s.id, field, chemical, stream });
  // the same rules and order as planner.ts posSigned/perturbSpecies: positive only when sd and v > 0; signed when sd
  const pos = (field: ParameterField, v: number, sd: number | undefined, chemical: string | null = null) => (sd && v > 0 ? visit(at(field, chemical), 'positive', v, sd) : v);
  const signed = (field: ParameterField, v: number, sd: number | undefined, chemical: string) => (sd ? visit(at(field, chemical), 'signed', v, sd) : v);
  return {
    ...s,
    diffusivity: pos('diffusivity', s.diffusivity, s.sd?.diffusivity),
    radius: pos('radius', s.radius, s.sd?.radius),
    density: pos('density', s.density, s.sd?.density),
    materialDensity: s.materialDensity === null ? null : pos('materialDensity', s.materialDensity, s.sd?.materialDensity),
    couplings: s.couplings.map((c) => {
      const mobility = signed('mobility', c.mobility, c.sd?.mobility, c.chemical);
      const activity: typeof c.activity =
        c.activity === null
          ? null
          : c.activity.kind === 'constant'
            ? { kind: 'constant', rate: signed('rate', c.activity.rate, c.sd?.rate, c.chemical) }
            : { ...c.activity, maxRate: pos('maxRate', c.activity.maxRate, c.sd?.maxRate, c.chemical), michaelis: pos('michaelis', c.activity.michaelis, c.sd?.michaelis, c.chemical) };
      return { ...c, mobility, activity };
    }),
  };
}

function walk(base: Mixture, d: Species, visit: Visit): { base: Mixture; dopant: Species } {
  const pos = (id: string, field: ParameterField, v: number, sd: number | undefined) => (sd && v > 0 ? visit({ owner: 'chemical', id, field, chemical: null, stream: 'base' }, 'positive', v, sd) : v);
  const b: Mixture = {
    ...base,
    chemicals: base.chemicals.map((c) => ({
      ...c,
      diffusivity: pos(c.id, 'diffusivity', c.diffusivity, c.sd?.diffusivity),
      lossRate: pos(c.id, 'lossRate', c.lossRate, c.sd?.lossRate),
      concentration: pos(c.id, 'concentration', c.concentration, c.sd?.concentration),
      solubility: c.solubility === null ? null : pos(c.id, 'solubility', c.solubility, c.sd?.solubility),
    })),
    species: base.species.map((s) => walkSpecies(s, 'base', visit)),
  };
  return { base: b, dopant: walkSpecies(d, 'candidate', visit) };
}

/** The uncertain quantities of a base and a candidate, in the order the planner draws them (base first). */
export function uncertainParameters(base: Mixture, d: Species): UncertainParameter[] {
  const out: UncertainParameter[] = [];
  walk(base, d, (p, kind, value, sd) => {
    out.push({ ...p, kind, value, sd });
    return value;
  });
  return out;
}

/** q(z): the quantity of deviate z (docs/model.md §7, the same expressions as planner.ts). */
export function quantityOf(p: Pick<UncertainParameter, 'kind' | 'value' | 'sd'>, z: number): number {
  if (p.kind === 'signed') return p.value + p.sd * z;
  const s2 = Math.log(1 + (p.sd / p.value) ** 2);
  return Math.exp(Math.log(p.value) - s2 / 2 + Math.sqrt(s2) * z);
}

/**
 * The base and dopant of a point z of the perturbation space. With `used` (one flag per quantity of
 * `uncertainParameters`, in its order), z holds the deviates of the used quantities only and the others keep
 * their shelf values: the update's space leaves out what the tubes' model does not depend on (`tubeSpace`).
 */
export function applyDeviates(base: Mixture, d: Species, z: ArrayLike<number>, used?: readonly boolean[]): { base: Mixture; dopant: Species } {
  let j = 0;
  let k = 0;
  return walk(base, d, (_p, kind, value, sd) => (used && !used[k++] ? value : quantityOf({ kind, value, sd }, z[j++]!)));
}

/** The deviates of the used quantities (`used` as in applyDeviates) out of a point of the whole space. */
export function usedDeviates(z: Float64Array, used: readonly boolean[]): Float64Array {
  return Float64Array.from(used.flatMap((u, j) => (u ? [z[j]!] : [])));
}

/** An uncertain quantity the tubes' model does not depend on, and why (docs/model.md §13). */
export interface UnaffectedParameter extends UncertainParameter {
  reason: string;
}

/**
 * The update's perturbation space: of the uncertain quantities of the base and candidate `d` (`all`, the plan's
 * order), those the predicted state of the tubes (the base with `d` at a dose) can depend on (`params`, flagged in
 * `used`), and the others with the reason (influence.ts). The plan's draws are drawn over `all` (planDeviates) and
 * restricted to `used`, so the update's deviates of the quantities it keeps are the plan's, draw for draw.
 */
export function tubeSpace(base: Mixture, d: Species): { all: UncertainParameter[]; used: boolean[]; params: UncertainParameter[]; unaffected: UnaffectedParameter[] } {
  const all = uncertainParameters(base, d);
  const inf = influence(tubesMixture(base, d));
  const used: boolean[] = [];
  const params: UncertainParameter[] = [];
  const unaffected: UnaffectedParameter[] = [];
  for (const p of all) {
    const reason = inf.reason(p);
    used.push(reason === null);
    if (reason === null) params.push(p);
    else unaffected.push({ ...p, reason });
  }
  return { all, used, params, unaffected };
}

/** The deviates of the plan's draw i (seed, index): the base's stream then the candidate's, as `perturb` and `thresholdBand` draw them. */
export function planDeviates(params: UncertainParameter[], seed: number, i: number, candidateId: string): Float64Array {
  const z = new Float64Array(params.length);
  const rb = new Random(streamSeed(seed, i, ''));
  const rc = new Random(streamSeed(seed, i, candidateId));
  params.forEach((p, j) => (z[j] = p.stream === 'base' ? rb.normal() : rc.normal()));
  return z;
}

// ---------------------------------------------------------------- prediction

export interface Tube {
  /** the tube's code on the sheet (for messages) */
  tube: string;
  /** delivered dopant dose, m⁻³ */
  dose: number;
  state: State | 'unclear';
  /** s; null when not seen */
  onsetTime?: number | null;
  /** m; null when not seen */
  patternLength?: number | null;
}

/** What one draw of the coefficients predicts: the state at a dose, the growth there, its threshold. */
export class Predictor {
  private states: Map<number, State> | null = null;
  private growths: Map<number, { time: number; wavelength: number | null } | null> | null = null;
  /** x* and sign of α_d μ_d when the closed form decides every state (one chemical, one sign of αμ, add) */
  private readonly closed: { dose: number; p: number } | null;
  private thresholdValue: number | null = null;

  constructor(
    readonly base: Mixture,
    readonly dopant: Species,
    private readonly o: DoseOptions,
  ) {
    let closed: { dose: number; p: number } | null = null;
    if (o.dosing === 'add' && base.chamber.walls !== 'unbounded' && o.fast !== false) {
      const cf = simpleRankOne(base, dopant) ?? stationaryDoseClosedForm(base, dopant);
      // one sign of αμ throughout: every eigenvalue real and interlaced (docs/model.md §3), so the state is
      // stationary exactly where Σ_all α μ ρ / D < −(D_c k₁² + κ), linear in the dose (docs/model.md §6)
      if (cf.applicable && cf.firstCrossing) closed = { dose: cf.dose, p: cf.dopantActivityMobility };
    }
    this.closed = closed;
  }

  /** The predicted state at dose x (m⁻³): the closed form where exact, else `stateOf` (analyze.ts). */
  state(x: number): State {
    const c = this.closed;
    if (c) return (c.p < 0 ? x > c.dose : x < c.dose) ? 'stationary' : 'stable';
    this.states ??= new Map();
    let s = this.states.get(x);
    if (s === undefined) {
      s = stateOf(withDose(this.base, this.dopant, x, this.o.dosing), { fast: this.o.fast !== false });
      this.states.set(x, s);
    }
    return s;
  }

  /** The fastest mode at dose x: growth time 1/λ_max (s) and wavelength 2π/k (m; null at k → 0); null when nothing grows. */
  growth(x: number): { time: number; wavelength: number | null } | null {
    this.growths ??= new Map();
    if (this.growths.has(x)) return this.growths.get(x)!;
    const mix = withDose(this.base, this.dopant, x, this.o.dosing);
    const model = buildModel(mix);
    const o = scanModes(model, mix.chamber.walls).overall;
    const g = o.value > 0 ? { time: model.timeUnit / o.value, wavelength: o.k > 0 ? (2 * Math.PI * model.lengthUnit) / o.k : null } : null;
    this.growths.set(x, g);
    return g;
  }

  /**
   * The threshold dose of the plan's boundary for this draw (m⁻³): 0 when the base alone is past, +∞ when none
   * below the cap, as `thresholdBand` counts them; the closed form where exact, else `findDose` (relative 1e-4).
   */
  threshold(): number {
    if (this.thresholdValue !== null) return this.thresholdValue;
    let t: number;
    const c = this.closed;
    if (c && (this.o.boundary === 'stationary' || this.o.boundary === 'any')) {
      const cap = findCap(this.base, this.dopant, this.o);
      if (c.p < 0) t = c.dose <= 0 ? 0 : c.dose <= cap ? c.dose : Infinity;
      else t = c.dose > 0 ? 0 : Infinity;
    } else {
      const r = findDose(this.base, this.dopant, { ...this.o, relTol: Math.max(this.o.relTol ?? 1e-6, 1e-4), scanPoints: Math.min(this.o.scanPoints ?? 48, 28) });
      t = r.reason === 'base-already-past' ? 0 : r.feasible ? r.threshold!.density : Infinity;
    }
    this.thresholdValue = t;
    return t;
  }
}

/**
 * dose.ts's closed form by direct arithmetic for the simplest structure (one chemical, constant activities, no
 * crowding, at most one coupling per species): the same x* = −(D_c k₁² + κ + Σ_base α μ ρ / D) D_d / (α_d μ_d)
 * without building the model, for the many draws of a sampler. null when the structure is not this one.
 */
export function simpleRankOne(base: Mixture, d: Species): { applicable: true; dose: number; firstCrossing: boolean; dopantActivityMobility: number } | null {
  if (base.crowding || base.chemicals.length !== 1 || base.chamber.walls === 'unbounded') return null;
  const chem = base.chemicals[0]!;
  let sum = 0;
  let pos = false;
  let neg = false;
  const term = (s: Species): number | null => {
    if (s.couplings.length === 0) return 0;
    if (s.couplings.length > 1) return null;
    const c = s.couplings[0]!;
    if (c.chemical !== chem.id) return null;
    if (c.activity === null) return 0;
    if (c.activity.kind !== 'constant') return null;
    return c.activity.rate * c.mobility;
  };
  for (const s of base.species) {
    if (s.id === d.id) return null;
    const am = term(s);
    if (am === null) return null;
    const w = am * s.density;
    sum += w / s.diffusivity;
    if (w > 0) pos = true;
    if (w < 0) neg = true;
  }
  const p = term(d);
  if (p === null || p === 0) return null;
  if (p > 0) pos = true;
  else neg = true;
  const k1 = (base.chamber.walls === 'sealed' ? Math.PI : 2 * Math.PI) / base.chamber.length!;
  const gamma = chem.diffusivity * k1 * k1 + chem.lossRate;
  return { applicable: true, dose: (-(gamma + sum) * d.diffusivity) / p, firstCrossing: !(pos && neg), dopantActivityMobility: p };
}

function findCap(base: Mixture, d: Species, o: DoseOptions): number {
  return doseCap(base, d, o).density;
}

// ---------------------------------------------------------------- likelihood

export interface LikelihoodOptions {
  /** ε: the chance that the bench records another state than the one the mixture is in (default 0.05) */
  misclassification?: number;
  /** σ of ln(onset time) (default 0.5, a factor e^0.5 ≈ 1.65) */
  onsetSd?: number;
  /** σ of ln(pattern length) (default 0.25) */
  lengthSd?: number;
  /** onset time = n_e × growth time (default 1: the onset is read as one growth time) */
  onsetEFolds?: number;
  /**
   * η, the share of onset and length readings the model is not expected to explain (default 0.1): each reading's
   * density is (1 − η) × the log-normal about the prediction + η × a flat density over four decades, so a reading
   * far from every draw's prediction costs every draw the same bounded amount instead of deciding the posterior
   */
  unexplainedFraction?: number;
}

interface Lik {
  eps: number;
  onsetSd: number;
  lengthSd: number;
  eFolds: number;
  eta: number;
}

/** The flat part of a reading's density: uniform in ln(reading) over four decades, 1 / ln(10⁴). */
const FLAT_LN_DENSITY = 1 / Math.log(1e4);

function likOptions(o: LikelihoodOptions): Lik {
  const eps = o.misclassification ?? 0.05;
  if (!(eps > 0 && eps < 2 / 3)) throw new EngineInputError('misclassification', 'must be in (0, 2/3): above 2/3 a seen state would argue against itself');
  const onsetSd = o.onsetSd ?? 0.5;
  const lengthSd = o.lengthSd ?? 0.25;
  if (!(onsetSd > 0) || !(lengthSd > 0)) throw new EngineInputError('onsetSd', 'measurement errors must be positive');
  const eta = o.unexplainedFraction ?? 0.1;
  if (!(eta > 0 && eta < 1)) throw new EngineInputError('unexplainedFraction', 'must be in (0, 1)');
  return { eps, onsetSd, lengthSd, eFolds: o.onsetEFolds ?? 1, eta };
}

/**
 * ln of one reading's density in ln(reading) (docs/model.md §13): a contaminated normal (G. E. P. Box and G. C. Tiao,
 * "A Bayesian approach to some outlier problems", Biometrika 55, 119–129 (1968)), (1 − η) N(ln m; ln p, σ²) + η / ln(10⁴);
 * with no prediction (the draw predicts no growth there) only the flat part: the reading is unexplained.
 */
function readingLogDensity(reading: number, predicted: number | null, sd: number, eta: number): number {
  const flat = eta * FLAT_LN_DENSITY;
  if (predicted === null || !(predicted > 0)) return Math.log(flat);
  const r = (Math.log(reading) - Math.log(predicted)) / sd;
  return Math.log((1 - eta) * Math.exp(-0.5 * r * r) / (sd * Math.sqrt(2 * Math.PI)) + flat);
}

const STATES: State[] = ['stable', 'stationary', 'oscillatory'];

/** ln L(tubes | draw) up to a constant (docs/model.md §13), and the number of state mismatches. */
function logLikelihood(pred: Predictor, tubes: Tube[], l: Lik): { ll: number; mismatches: number } {
  let ll = 0;
  let mismatches = 0;
  const hit = Math.log(1 - l.eps);
  const miss = Math.log(l.eps / 2);
  for (const t of tubes) {
    const s = pred.state(t.dose);
    if (t.state !== 'unclear') {
      if (t.state === s) ll += hit;
      else {
        ll += miss;
        mismatches++;
      }
    }
    // an onset or a length was read: every draw pays for it, a draw that predicts no growth there (or no length) its
    // flat part, one that predicts growth the mixture; so a reading no draw explains moves nothing (found in review:
    // stable-predicting draws were spared the term and won)
    const onset = t.onsetTime != null && t.onsetTime > 0 ? t.onsetTime : null;
    const length = t.patternLength != null && t.patternLength > 0 ? t.patternLength : null;
    if (onset === null && length === null) continue;
    const g = s === 'stable' ? null : pred.growth(t.dose);
    if (onset !== null) ll += readingLogDensity(onset, g ? l.eFolds * g.time : null, l.onsetSd, l.eta);
    if (length !== null) ll += readingLogDensity(length, g ? g.wavelength : null, l.lengthSd, l.eta);
  }
  return { ll, mismatches };
}

// ---------------------------------------------------------------- weights, quantiles

/** Kish's effective sample size (Σw)² / Σw². */
export function kishEss(w: ArrayLike<number>): number {
  let s = 0;
  let s2 = 0;
  for (let i = 0; i < w.length; i++) {
    s += w[i]!;
    s2 += w[i]! * w[i]!;
  }
  return s2 > 0 ? (s * s) / s2 : 0;
}

/** Normalised weights exp(ℓ_i − max ℓ) / Σ. */
export function normalisedWeights(logw: ArrayLike<number>): Float64Array {
  let m = -Infinity;
  for (let i = 0; i < logw.length; i++) m = Math.max(m, logw[i]!);
  const w = new Float64Array(logw.length);
  let s = 0;
  for (let i = 0; i < logw.length; i++) s += w[i] = Math.exp(logw[i]! - m);
  for (let i = 0; i < w.length; i++) w[i]! /= s;
  return w;
}

/**
 * Weighted quantile, the planner's rule (type 7, docs/model.md §7) generalised to weights: the values sorted, the
 * k-th at p_k = (weight before it) / (total weight − the last one's), so the first sits at 0 and the last at 1, linear
 * interpolation between. With equal weights p_k = (k − 1)/(n − 1), R's type 7, the planner's `quantile`: the prior band
 * of an update is the plan's own. +∞ propagates.
 */
export function weightedQuantile(values: ArrayLike<number>, weights: ArrayLike<number>, q: number): number {
  const idx = Array.from({ length: values.length }, (_, i) => i).filter((i) => weights[i]! > 0);
  if (idx.length === 0) return NaN;
  idx.sort((a, b) => values[a]! - values[b]!);
  if (idx.length === 1) return values[idx[0]!]!;
  let total = 0;
  for (const i of idx) total += weights[i]!;
  const span = total - weights[idx[idx.length - 1]!]!;
  let before = 0;
  let prevP = -Infinity;
  let prevV = NaN;
  for (const i of idx) {
    const p = before / span;
    before += weights[i]!;
    const v = values[i]!;
    if (p >= q) {
      if (prevP === -Infinity || p === prevP) return v;
      if (!Number.isFinite(v)) return v;
      return prevV + ((v - prevV) * (q - prevP)) / (p - prevP);
    }
    prevP = p;
    prevV = v;
  }
  return prevV;
}

export interface Band {
  /** 5 %, 50 %, 95 % of the threshold dose (m⁻³) over the weighted draws; null above the cap (the draw does not cross below it) */
  p05: number | null;
  median: number | null;
  p95: number | null;
  /** weighted fraction of draws that cross at or below the cap (dose 0 included) */
  feasibleFraction: number;
  /** weighted fraction already past at dose 0 */
  alreadyPast: number;
}

export function bandOf(thresholds: ArrayLike<number>, weights: ArrayLike<number>): Band {
  const orNull = (v: number) => (Number.isFinite(v) ? v : null);
  let feas = 0;
  let past = 0;
  let tot = 0;
  for (let i = 0; i < thresholds.length; i++) {
    tot += weights[i]!;
    if (Number.isFinite(thresholds[i]!)) feas += weights[i]!;
    if (thresholds[i] === 0) past += weights[i]!;
  }
  return {
    p05: orNull(weightedQuantile(thresholds, weights, 0.05)),
    median: orNull(weightedQuantile(thresholds, weights, 0.5)),
    p95: orNull(weightedQuantile(thresholds, weights, 0.95)),
    feasibleFraction: tot > 0 ? feas / tot : 0,
    alreadyPast: tot > 0 ? past / tot : 0,
  };
}

// ---------------------------------------------------------------- the posterior

export interface UpdateOptions extends LikelihoodOptions {
  /** the plan's Monte Carlo draws and seed (the prior sample) */
  samples: number;
  seed: number;
  /** importance sampling while its ESS ≥ minEss (default max(50, samples / 5)); else SMC */
  minEss?: number;
  /** Metropolis sweeps per SMC stage (default 5; up to 4 × as many until 90 % of the particles have moved) */
  moves?: number;
  /** bound on likelihood evaluations by the SMC sampler (default 60 × samples) */
  maxEvaluations?: number;
  /** α of the consistency check (default 0.01) */
  alpha?: number;
  /** called as the work advances (may throw to cancel) */
  progress?: (fraction: number, stage: string) => void;
}

export interface Particle {
  z: Float64Array;
  /** plan draw index (importance sampling) or particle index (SMC): the stream of other candidates' prior draws */
  index: number;
  ll: number;
  mismatches: number;
  pred: Predictor;
}

export interface Posterior {
  method: 'importance' | 'smc';
  /** the quantities the sampler draws: those the tubes' model depends on (tubeSpace); a particle's z holds their deviates */
  params: UncertainParameter[];
  /** every uncertain quantity of the base and the candidate, in the plan's order, and which of them are `params` */
  all: UncertainParameter[];
  used: boolean[];
  /** the quantities the tubes' model does not depend on: left at the shelf's values, never updated */
  unaffected: UnaffectedParameter[];
  particles: Particle[];
  /** normalised weights of the particles */
  weights: Float64Array;
  /** Kish ESS of the importance weights over the plan's draws */
  importanceEss: number;
  /** ESS of the posterior sample: importance: = importanceEss; SMC: of the last reweighting (before its resampling) */
  ess: number;
  smc: { temperatures: number[]; acceptance: number[]; evaluations: number; budgetReached: boolean; finalTemperature: number; unique: number } | null;
  /** what each of the plan's draws predicts (the prior sample, in draw order) */
  prior: Predictor[];
  /** the fewest state mismatches of any draw seen, and that draw's ln L */
  best: { mismatches: number; ll: number };
  tubes: Tube[];
  lik: Lik;
}

function cholesky(a: Float64Array, n: number): Float64Array | null {
  const L = new Float64Array(n * n);
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = a[i * n + j]!;
      for (let k = 0; k < j; k++) s -= L[i * n + k]! * L[j * n + k]!;
      if (i === j) {
        if (!(s > 0)) return null;
        L[i * n + i] = Math.sqrt(s);
      } else L[i * n + j] = s / L[j * n + j]!;
    }
  }
  return L;
}

/** Systematic resampling: N indices with probabilities w (Kitagawa 1996). */
function systematic(w: ArrayLike<number>, rng: Random): number[] {
  const n = w.length;
  const out: number[] = [];
  const u0 = rng.uniform() / n;
  let c = w[0]!;
  let i = 0;
  for (let k = 0; k < n; k++) {
    const u = u0 + k / n;
    while (u > c && i < n - 1) c += w[++i]!;
    out.push(i);
  }
  return out;
}

/**
 * The posterior over the coefficients of `base` and candidate `d` given the tubes (docs/model.md §13):
 * importance sampling over the plan's draws, or SMC when their ESS is below `minEss`.
 */
export function posterior(base: Mixture, d: Species, o: DoseOptions, tubes: Tube[], u: UpdateOptions): Posterior {
  const l = likOptions(u);
  if (!(u.samples >= 10)) throw new EngineInputError('samples', 'the update needs the plan’s Monte Carlo draws (at least 10)');
  const { all, used, params, unaffected } = tubeSpace(base, d);
  const N = u.samples;
  const progress = u.progress ?? (() => {});
  const make = (z: Float64Array, index: number): Particle => {
    const m = applyDeviates(base, d, z, used);
    const pred = new Predictor(m.base, m.dopant, o);
    const { ll, mismatches } = logLikelihood(pred, tubes, l);
    return { z, index, ll, mismatches, pred };
  };
  let best = { mismatches: Infinity, ll: -Infinity };
  const seen = (p: Particle) => {
    if (p.mismatches < best.mismatches || (p.mismatches === best.mismatches && p.ll > best.ll)) best = { mismatches: p.mismatches, ll: p.ll };
  };
  let particles: Particle[] = [];
  const every = Math.max(1, Math.floor(N / 50));
  for (let i = 0; i < N; i++) {
    if (i % every === 0) progress((0.3 * i) / N, `likelihood of the plan's draw ${i + 1} of ${N}`);
    const p = make(usedDeviates(planDeviates(all, u.seed, i, d.id), used), i);
    seen(p);
    particles.push(p);
  }
  const prior = particles.map((p) => p.pred);
  const isWeights = normalisedWeights(particles.map((p) => p.ll));
  const importanceEss = kishEss(isWeights);
  const minEss = u.minEss ?? Math.max(50, N / 5);
  if (importanceEss >= minEss || params.length === 0) {
    progress(0.6, 'importance sampling');
    return { method: 'importance', params, all, used, unaffected, particles, weights: isWeights, importanceEss, ess: importanceEss, smc: null, prior, best, tubes, lik: l };
  }
  // ---- SMC: tempering from the plan's draws (φ = 0) to the posterior (φ = 1)
  const rng = new Random(streamSeed(u.seed, 0x5eed, 'smc'));
  const moves = u.moves ?? 5;
  const budget = u.maxEvaluations ?? 60 * N;
  const dim = params.length;
  let phi = 0;
  let evaluations = 0;
  let scale = 2.38 / Math.sqrt(dim);
  const temperatures: number[] = [];
  const acceptance: number[] = [];
  let lastEss = N;
  let budgetReached = false;
  let weights: Float64Array = new Float64Array(N).fill(1 / N);
  while (phi < 1) {
    // Δφ by bisection: the incremental weights' ESS = N/2
    const essAt = (dphi: number) => kishEss(normalisedWeights(particles.map((p) => dphi * p.ll)));
    let next: number;
    if (essAt(1 - phi) >= N / 2) next = 1;
    else {
      let lo = 0;
      let hi = 1 - phi;
      for (let it = 0; it < 40; it++) {
        const mid = (lo + hi) / 2;
        if (essAt(mid) >= N / 2) lo = mid;
        else hi = mid;
      }
      next = phi + Math.max(lo, 1e-6);
    }
    const dphi = next - phi;
    const w = normalisedWeights(particles.map((p) => dphi * p.ll));
    lastEss = kishEss(w);
    phi = next;
    temperatures.push(phi);
    progress(0.3 + 0.3 * phi, `sequential Monte Carlo, temperature ${phi.toPrecision(3)}`);
    if (evaluations + N > budget) {
      // no budget left to move: the reweighted particles are the answer (said in the result)
      budgetReached = true;
      if (phi < 1) {
        const wf = normalisedWeights(particles.map((p, i) => Math.log(w[i]!) + (1 - phi) * p.ll));
        lastEss = kishEss(wf);
        weights = wf;
        phi = 1;
        temperatures.push(1);
      } else weights = w;
      break;
    }
    // resample
    const picks = systematic(w, rng);
    particles = picks.map((i) => particles[i]!);
    // moves: random walk Metropolis with the particles' covariance
    let accepted = 0;
    let tried = 0;
    // at least `moves` sweeps, more (up to 4 × moves) until 90 % of the particles have moved since the resampling
    const moved = new Uint8Array(N);
    let movedCount = 0;
    for (let m = 0; (m < moves || (movedCount < 0.9 * N && m < 4 * moves)) && evaluations + N <= budget; m++) {
      const mean = new Float64Array(dim);
      for (const p of particles) for (let j = 0; j < dim; j++) mean[j]! += p.z[j]! / N;
      const cov = new Float64Array(dim * dim);
      for (const p of particles)
        for (let a = 0; a < dim; a++) for (let b = 0; b <= a; b++) cov[a * dim + b]! += ((p.z[a]! - mean[a]!) * (p.z[b]! - mean[b]!)) / N;
      for (let a = 0; a < dim; a++) {
        for (let b = 0; b < a; b++) cov[b * dim + a] = cov[a * dim + b]!;
        cov[a * dim + a]! += 1e-10;
      }
      const L = cholesky(cov, dim);
      let acc = 0;
      particles = particles.map((p, k) => {
        const xi = Array.from({ length: dim }, () => rng.normal());
        const z = new Float64Array(dim);
        for (let a = 0; a < dim; a++) {
          let s = 0;
          if (L) for (let b = 0; b <= a; b++) s += L[a * dim + b]! * xi[b]!;
          else s = Math.sqrt(cov[a * dim + a]!) * xi[a]!;
          z[a] = p.z[a]! + scale * s;
        }
        const q = make(z, k);
        evaluations++;
        seen(q);
        let prior = 0;
        for (let a = 0; a < dim; a++) prior += 0.5 * (p.z[a]! * p.z[a]! - z[a]! * z[a]!);
        const logA = prior + phi * (q.ll - p.ll);
        if (Math.log(rng.uniform()) < logA) {
          acc++;
          if (!moved[k]) {
            moved[k] = 1;
            movedCount++;
          }
          return q;
        }
        return { ...p, index: k };
      });
      accepted += acc;
      tried += N;
      progress(0.3 + 0.3 * phi, `sequential Monte Carlo, temperature ${phi.toPrecision(3)}, move ${m + 1}`);
    }
    const rate = tried > 0 ? accepted / tried : 0;
    acceptance.push(rate);
    if (rate < 0.15) scale *= 0.6;
    else if (rate > 0.4) scale *= 1.4;
    weights = new Float64Array(N).fill(1 / N);
  }
  const unique = new Set(particles.map((p) => p.z)).size;
  return {
    method: 'smc',
    params,
    all,
    used,
    unaffected,
    particles,
    weights,
    importanceEss,
    ess: lastEss,
    smc: { temperatures, acceptance, evaluations, budgetReached, finalTemperature: phi, unique },
    prior,
    best,
    tubes,
    lik: l,
  };
}

// ---------------------------------------------------------------- the consistency check

export interface Consistency {
  consistent: boolean;
  /** α the tests below are read at */
  alpha: number;
  /** the fewest state mismatches of any draw seen, among the tubes with a state */
  bestMismatches: number;
  /** P(Bin(n, ε) ≥ bestMismatches): the chance of that many misclassifications if the best draw were true */
  bestDrawProbability: number;
  /** posterior predictive p-value of T = −ln L (Gelman, Meng & Stern 1996) */
  predictiveP: number;
  /**
   * Prior predictive p-value (Box 1980, J. R. Stat. Soc. A 143:383): the share of outcome sets simulated from
   * fresh prior draws at the same doses whose evidence Ẑ(y) = mean over the plan's draws of L(y | θ_i) is at
   * most the observed one's, (1 + count)/(R + 1). Small when no coefficients the shelf's uncertainties allow
   * explain the tubes, even where the posterior, pushed into a far tail, fits them.
   */
  priorPredictiveP: number;
  message: string;
}

/** P(Bin(n, p) ≥ m). */
export function binomialTail(n: number, p: number, m: number): number {
  if (m <= 0) return 1;
  if (m > n) return 0;
  let term = Math.pow(1 - p, n); // P(0)
  let cdf = 0;
  for (let k = 0; k < m; k++) {
    cdf += term;
    term *= ((n - k) / (k + 1)) * (p / (1 - p));
  }
  return Math.max(0, 1 - cdf);
}

/** Outcomes the bench would record at the tubes' doses if `pred` were true: misread with ε, onset and length with their errors. */
function replicate(pred: Predictor, tubes: Tube[], l: Lik, rng: Random): Tube[] {
  return tubes.map((t) => {
    const s = pred.state(t.dose);
    let seen: Tube['state'] = t.state;
    if (t.state !== 'unclear') {
      const v = rng.uniform();
      seen = v < 1 - l.eps ? s : STATES.filter((x) => x !== s)[v < 1 - l.eps / 2 ? 0 : 1]!;
    }
    let onsetTime: number | null = null;
    let patternLength: number | null = null;
    if (s !== 'stable' && (t.onsetTime != null || t.patternLength != null)) {
      const g = pred.growth(t.dose);
      if (g && t.onsetTime != null) onsetTime = l.eFolds * g.time * Math.exp(l.onsetSd * rng.normal());
      if (g && g.wavelength !== null && t.patternLength != null) patternLength = g.wavelength * Math.exp(l.lengthSd * rng.normal());
    }
    return { tube: t.tube, dose: t.dose, state: seen, onsetTime, patternLength };
  });
}

function consistency(post: Posterior, seed: number, alpha: number, fresh: { base: Mixture; d: Species; o: DoseOptions }): Consistency {
  const l = post.lik;
  const stated = post.tubes.filter((t) => t.state !== 'unclear').length;
  const bestDrawProbability = binomialTail(stated, l.eps, post.best.mismatches);
  // posterior predictive: R draws from the posterior, one replicate each
  const rng = new Random(streamSeed(seed, 0x9e37, 'ppc'));
  const R = Math.min(400, Math.max(100, post.particles.length));
  const picks = systematic(post.weights, rng).slice(0, post.particles.length);
  let extreme = 0;
  let count = 0;
  for (let r = 0; r < R; r++) {
    const p = post.particles[picks[Math.floor(rng.uniform() * picks.length)]!]!;
    const rep = replicate(p.pred, post.tubes, l, rng);
    const tObs = -logLikelihood(p.pred, post.tubes, l).ll;
    const tRep = -logLikelihood(p.pred, rep, l).ll;
    if (tRep >= tObs - 1e-12) extreme++;
    count++;
  }
  const predictiveP = count > 0 ? extreme / count : 1;
  // prior predictive (states only): the evidence of the tubes over the plan's draws against outcome sets of fresh prior draws
  const withState = post.tubes.filter((t) => t.state !== 'unclear');
  const codes = post.prior.map((q) => Uint8Array.from(withState, (t) => STATES.indexOf(q.state(t.dose))));
  const hit = Math.log(1 - l.eps);
  const miss = Math.log(l.eps / 2);
  const logEvidence = (ys: Uint8Array) => {
    const ll = codes.map((c) => {
      let a = 0;
      for (let t = 0; t < ys.length; t++) a += c[t] === ys[t] ? hit : miss;
      return a;
    });
    const m = Math.max(...ll);
    return m + Math.log(ll.reduce((a, v) => a + Math.exp(v - m), 0) / ll.length);
  };
  const zObs = logEvidence(Uint8Array.from(withState, (t) => STATES.indexOf(t.state as State)));
  const RP = 200;
  const rngP = new Random(streamSeed(seed, 0xb0c5, 'prior-pc'));
  let below = 0;
  for (let r = 0; r < RP; r++) {
    const m = applyDeviates(fresh.base, fresh.d, usedDeviates(planDeviates(post.all, (seed ^ 0x5bd1e995) >>> 0, r, fresh.d.id), post.used), post.used);
    const truth = new Predictor(m.base, m.dopant, fresh.o);
    const rep = replicate(truth, withState, l, rngP);
    if (logEvidence(Uint8Array.from(rep, (t) => STATES.indexOf(t.state as State))) <= zObs + 1e-12) below++;
  }
  const priorPredictiveP = (1 + below) / (RP + 1);
  const worstBest = bestDrawProbability < alpha;
  const worstPpc = predictiveP < alpha;
  const worstPrior = priorPredictiveP < alpha;
  const consistent = !worstBest && !worstPpc && !worstPrior;
  const message = worstBest
    ? `the outcomes are improbable under every draw: the model or the shelf is wrong. Even the best draw seen disagrees with ${post.best.mismatches} of ${stated} tubes, a chance of ${bestDrawProbability.toPrecision(2)} at a misclassification rate of ${l.eps}.`
    : worstPpc
      ? `the outcomes are improbable under the updated model (posterior predictive p = ${predictiveP.toPrecision(2)} < ${alpha}): the model or the shelf is wrong, or the bench misreads more often than ε = ${l.eps}.`
      : worstPrior
        ? `the outcomes are improbable under every draw the shelf's uncertainties allow (prior predictive p = ${priorPredictiveP.toPrecision(2)} < ${alpha}; the update can only fit them far out in those uncertainties): the model or the shelf is wrong.`
        : `the outcomes are consistent with the model (best draw: ${post.best.mismatches} of ${stated} tubes disagree; posterior predictive p = ${predictiveP.toPrecision(2)}).`;
  return { consistent, alpha, bestMismatches: post.best.mismatches, bestDrawProbability, predictiveP, priorPredictiveP, message };
}

// ---------------------------------------------------------------- the update

export interface CoefficientUpdate extends UncertainParameter {
  /** posterior mean and sd of the quantity (SI) */
  posteriorMean: number;
  posteriorSd: number;
}

export interface UpdateResult {
  candidate: string;
  tubes: { used: number; unclear: number };
  method: 'importance' | 'smc';
  /** Kish ESS of the posterior sample (see Posterior.ess) and of importance sampling over the plan's draws */
  ess: number;
  importanceEss: number;
  samples: number;
  seed: number;
  smc: Posterior['smc'];
  options: { misclassification: number; onsetSd: number; lengthSd: number; onsetEFolds: number; unexplainedFraction: number; minEss: number };
  coefficients: CoefficientUpdate[];
  /**
   * the uncertain quantities the tubes' model does not depend on (docs/model.md §13: a chemical no species in the
   * tubes moves in, nor turns into one it moves in; one absent and never made; solubilities, material densities),
   * with the reason: never drawn by the update, never reported as updated, never written
   */
  unaffected: UnaffectedParameter[];
  /** the threshold band of every candidate before (the plan's draws, equal weights) and after */
  bands: { species: string; prior: Band; posterior: Band }[];
  consistency: Consistency;
}

/** Weighted mean and sd of q over the posterior. */
function moments(values: number[], w: ArrayLike<number>): { mean: number; sd: number } {
  let m = 0;
  for (let i = 0; i < values.length; i++) m += w[i]! * values[i]!;
  let v = 0;
  for (let i = 0; i < values.length; i++) v += w[i]! * (values[i]! - m) ** 2;
  return { mean: m, sd: Math.sqrt(v) };
}

/**
 * The model update of docs/model.md §13: the posterior over the coefficients of the base and the observed
 * candidate `observed` given its tubes, the updated coefficients (posterior mean and sd of each uncertain
 * quantity), the updated threshold band of every candidate (other candidates keep their own prior draws,
 * the base's come from the posterior) and the consistency check.
 */
export function updateModel(base: Mixture, candidates: Species[], observed: string, o: DoseOptions, tubes: Tube[], u: UpdateOptions): UpdateResult & { posterior: Posterior } {
  const d = candidates.find((c) => c.id === observed);
  if (!d) throw new EngineInputError('candidate', `"${observed}" is not a candidate of the plan`);
  for (const t of tubes) if (!(t.dose >= 0) || !Number.isFinite(t.dose)) throw new EngineInputError('tubes', `tube ${t.tube}: the dose must be a finite number ≥ 0`);
  const progress = u.progress ?? (() => {});
  const post = posterior(base, d, o, tubes, u);
  const w = post.weights;
  const coefficients: CoefficientUpdate[] = post.params.map((p, j) => {
    const vals = post.particles.map((q) => quantityOf(p, q.z[j]!));
    const { mean, sd } = moments(vals, w);
    return { ...p, posteriorMean: mean, posteriorSd: sd };
  });
  // the base's quantities come first in every candidate's space (uncertainParameters), in the same order: where
  // the posterior's deviate of each base quantity it drew sits in a particle's z
  const basePosition: [number, number][] = [];
  post.all.forEach((p, j) => {
    if (p.stream === 'base' && post.used[j]) basePosition.push([j, basePosition.length]);
  });
  const equal = new Float64Array(u.samples).fill(1 / u.samples);
  const bands = candidates.map((c, ci) => {
    progress(0.6 + (0.35 * ci) / candidates.length, `threshold band of ${c.id}`);
    const cParams = uncertainParameters(base, c);
    // prior: the plan's draws
    const priorT: number[] = [];
    const every = Math.max(1, Math.floor(u.samples / 20));
    for (let i = 0; i < u.samples; i++) {
      if (i % every === 0) progress(0.6 + (0.35 * (ci + (0.5 * i) / u.samples)) / candidates.length, `threshold band of ${c.id}: prior draw ${i + 1} of ${u.samples}`);
      if (c.id === d.id) priorT.push(post.prior[i]!.threshold());
      else {
        const m = applyDeviates(base, c, planDeviates(cParams, u.seed, i, c.id));
        priorT.push(new Predictor(m.base, m.dopant, o).threshold());
      }
    }
    const postT: number[] = [];
    if (c.id === d.id) for (const p of post.particles) postT.push(p.pred.threshold());
    else if (post.method === 'importance') postT.push(...priorT);
    else {
      for (const [k, p] of post.particles.entries()) {
        if (k % every === 0) progress(0.6 + (0.35 * (ci + 0.5 + (0.5 * k) / post.particles.length)) / candidates.length, `threshold band of ${c.id}: posterior draw ${k + 1}`);
        // the base's quantities the update left out keep their prior draw (their posterior is their prior)
        const zc = planDeviates(cParams, u.seed, p.index, c.id);
        for (const [j, k] of basePosition) zc[j] = p.z[k]!;
        const m = applyDeviates(base, c, zc);
        postT.push(new Predictor(m.base, m.dopant, o).threshold());
      }
    }
    return { species: c.id, prior: bandOf(priorT, equal), posterior: bandOf(postT, w) };
  });
  progress(0.95, 'consistency check');
  const cons = consistency(post, u.seed, u.alpha ?? 0.01, { base, d, o });
  progress(1, 'model updated');
  const l = post.lik;
  return {
    candidate: d.id,
    tubes: { used: tubes.length, unclear: tubes.filter((t) => t.state === 'unclear').length },
    method: post.method,
    ess: post.ess,
    importanceEss: post.importanceEss,
    samples: u.samples,
    seed: u.seed,
    smc: post.smc,
    options: { misclassification: l.eps, onsetSd: l.onsetSd, lengthSd: l.lengthSd, onsetEFolds: l.eFolds, unexplainedFraction: l.eta, minEss: u.minEss ?? Math.max(50, u.samples / 5) },
    coefficients,
    unaffected: post.unaffected,
    bands,
    consistency: cons,
    posterior: post,
  };
}
