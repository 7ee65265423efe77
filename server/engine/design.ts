/**
 * The next experiment (docs/model.md §13): the doses of the next n tubes that
 * most reduce the uncertainty of the threshold.
 *
 * Criterion: the expected posterior variance of log₁₀ of the threshold dose,
 *
 *     U(D) = E_{θ ~ p(θ | y), y' ~ p(y' | θ, D)} [ Var(log₁₀ x*(θ) | y, y') ],
 *
 * computed by preposterior simulation: M draws are resampled from the posterior
 * (the inference set); R simulated "truths" θ_r are drawn from the posterior's
 * particles by their weights, each with the states the bench would record (the
 * true state with probability 1 − ε, else one of the other two); for a design D
 * the posterior over the M draws is their likelihood of y'_r at D, *leaving the
 * truth out* (every resampled copy of the truth's own particle gets weight 0,
 * so a simulated round cannot identify the truth exactly), and U(D) is the mean
 * over r of the weighted variance of log₁₀ x*, with x* clamped to the dose
 * range the sheet can deliver, [lowest grid dose above 0, cap]: a draw already
 * past at dose 0 counts as the lowest dose, one that does not cross below the
 * cap as the cap, so draws decades outside the range do not dominate U.
 *
 * Search: greedy over a dose grid (each step adds the grid dose that lowers U
 * most on the *selection* simulations; each grid dose at most once). Honest
 * scores: the designed doses and the default fixed series (planner.ts
 * DEFAULT_DOSE_FACTORS × the posterior median, with the 5 % and 95 % doses, as
 * `doseSeries` builds it) are both scored on an independent *scoring* set
 * (other truths, other misreadings, their own random streams), where tube k of
 * either series (doses in ascending order) is misread by the same uniform of
 * simulation r (common random numbers).
 */
import type { State } from './analyze.js';
import { doseCap, doseSeries, streamSeed, type DoseOptions } from './planner.js';
import { Random } from './random.js';
import { bandOf, weightedQuantile, type Posterior } from './update.js';
import { EngineInputError, type Mixture, type Species } from './types.js';

export interface DesignOptions {
  /** n, the number of tubes of the next round (default: as many as the fixed series has doses above 0) */
  tubes?: number;
  /** the doses the bench can make (m⁻³); default a log grid by `minDoseRatio` */
  grid?: number[];
  /** smallest ratio between two doses the bench tells apart / can pipette (default 1.1) */
  minDoseRatio?: number;
  /**
   * lowest dose of the grid (m⁻³), when the bench has one (e.g. the smallest pipetting volume × the stock / the
   * sample volume when it does not dilute further). The sheet itself dilutes serially (protocol/pipetting.ts), so it
   * sets no lowest dose above 0: by default the grid starts at the posterior 5 % dose / 3, a range choice, not a limit
   */
  minDose?: number;
  /** dose cap (m⁻³); default the candidate's cap (planner.ts doseCap) */
  maxDose?: number;
  /** simulated outcome sets R of each of the two sets, selection and scoring (default 200), and posterior draws M (default 200) */
  simulations?: number;
  particles?: number;
  seed?: number;
  /** called as the work advances (may throw to cancel) */
  progress?: (fraction: number, stage: string) => void;
}

export interface DesignScore {
  doses: number[];
  /** U on the scoring simulations (independent of the ones the doses were chosen on), and its square root */
  expectedVariance: number;
  /** Monte Carlo standard error of expectedVariance (sd over the scoring simulations / √R) */
  expectedVarianceSe: number;
  expectedSdLog10: number;
  /** expected p95/p05 of the threshold after the round (geometric mean over the scoring simulations; null when above the cap) */
  expectedBandFactor: number | null;
}

export interface DesignResult {
  candidate: string;
  criterion: 'expected posterior variance of log10 threshold';
  method: 'greedy over a dose grid, preposterior simulation';
  /** how the simulated truths relate to the draws the preposterior is computed over */
  truths: 'posterior particles, leave-one-out';
  designed: DesignScore & {
    /** U of the designed doses on the selection simulations the greedy search minimised (optimistic: in-sample) */
    selectionVariance: number;
  };
  /** the default fixed series scored the same way; null when the posterior median is 0 or above the cap (nothing to scale) */
  fixed: (DesignScore & { reference: number }) | null;
  /** designed − fixed expected variance on the same scoring simulations, with its paired standard error; null without a fixed series */
  difference: { variance: number; se: number } | null;
  /** now, before the round: the whole posterior (its particles and weights); the variance on the clamped scale */
  current: { variance: number; sdLog10: number; bandFactor: number | null; band: ReturnType<typeof bandOf> };
  /**
   * the dose grid; `lowest`: where its lowest dose comes from ('grid': the explicit list; 'minDose': given;
   * 'posterior': the posterior 5 % dose / 3, the sheet setting no lowest dose); `clamp`: the range thresholds are
   * clamped to in the criterion (lowest grid dose above 0, cap)
   */
  grid: { from: number; to: number; ratio: number | null; points: number; cap: number; lowest: 'grid' | 'minDose' | 'posterior'; clamp: { from: number; to: number } };
  simulations: number;
  particles: number;
  misclassification: number;
  /** simulations whose truth was every inference draw (leave-one-out would leave none): scored without leaving it out */
  leaveOneOutSkipped: number;
}

const STATES: State[] = ['stable', 'stationary', 'oscillatory'];

/**
 * Design the next round of tubes for the posterior's candidate (the observed one).
 * @throws EngineInputError when the grid is empty or the posterior has no crossing to centre on
 */
export function designNext(post: Posterior, base: Mixture, d: Species, o: DoseOptions, opts: DesignOptions = {}): DesignResult {
  const progress = opts.progress ?? (() => {});
  const eps = post.lik.eps;
  const seed = opts.seed ?? 1;
  const rng = new Random(streamSeed(seed, 0xd5, 'design'));
  const M = Math.max(20, opts.particles ?? 200);
  const R = Math.max(20, opts.simulations ?? 200);
  const w = post.weights;
  const P = post.particles.length;
  // a particle's identity: SMC's resampled copies share their deviates (the same z array)
  const ids = new Map<Float64Array, number>();
  const idOf = post.particles.map((p) => {
    let v = ids.get(p.z);
    if (v === undefined) ids.set(p.z, (v = ids.size));
    return v;
  });
  // M equally weighted draws from the posterior (systematic resampling): the inference set
  const picks: number[] = [];
  {
    const u0 = rng.uniform() / M;
    let c = w[0]!;
    let i = 0;
    for (let k = 0; k < M; k++) {
      const u = u0 + k / M;
      while (u > c && i < P - 1) c += w[++i]!;
      picks.push(i);
    }
  }
  const preds = picks.map((i) => post.particles[i]!.pred);
  const thresholds = preds.map((p) => p.threshold());
  // now: the whole posterior
  const allT = post.particles.map((p) => p.pred.threshold());
  const band = bandOf(allT, w);
  const cap = opts.maxDose ?? doseCap(base, d, o).density;
  if (!(cap > 0)) throw new EngineInputError('maxDose', 'the dose cap is 0: there is no dose to design');
  // the grid
  let grid: number[];
  let ratio: number | null = null;
  let lowestFrom: DesignResult['grid']['lowest'];
  if (opts.grid && opts.grid.length > 0) {
    grid = [...new Set(opts.grid.filter((x) => x >= 0 && x <= cap))].sort((a, b) => a - b);
    lowestFrom = 'grid';
  } else {
    ratio = opts.minDoseRatio ?? 1.1;
    if (!(ratio > 1)) throw new EngineInputError('minDoseRatio', 'must be above 1');
    const centre = band.median ?? cap;
    lowestFrom = opts.minDose !== undefined ? 'minDose' : 'posterior';
    const lo = Math.min(cap, opts.minDose ?? Math.max(cap * 1e-9, (band.p05 !== null && band.p05 > 0 ? band.p05 : centre / 10) / 3));
    const hi = Math.min(cap, Math.max(lo, (band.p95 ?? cap) * 3));
    grid = [];
    for (let x = hi; x >= lo * (1 - 1e-12) && grid.length < 400; x /= ratio) grid.push(x);
    grid.reverse();
  }
  if (grid.length === 0) throw new EngineInputError('grid', 'no dose of the grid lies in [0, cap]');
  // the criterion's scale: log10 x* clamped to the doses the sheet delivers, [lowest grid dose above 0, cap]
  const lowest = Math.min(cap, grid.find((x) => x > 0) ?? cap * 1e-9);
  const clampLog = (t: number) => Math.log10(Math.min(cap, Math.max(lowest, t)));
  const logT = thresholds.map(clampLog);
  const cur = wvar(allT.map(clampLog), w);
  // the truths: particles drawn by weight, two independent sets (selection, scoring), each its own stream
  const cumW = new Float64Array(P);
  {
    let c = 0;
    for (let i = 0; i < P; i++) cumW[i] = c += w[i]!;
  }
  const drawTruth = (r: Random) => {
    const u = r.uniform() * cumW[P - 1]!;
    let lo = 0;
    let hi = P - 1;
    while (lo < hi) {
      const mid = (lo + hi) >> 1;
      if (cumW[mid]! < u) lo = mid + 1;
      else hi = mid;
    }
    return lo;
  };
  const selRng = new Random(streamSeed(seed, 0x5e1, 'design-selection'));
  const scoreRng = new Random(streamSeed(seed, 0x5c0, 'design-scoring'));
  const selTruths = Array.from({ length: R }, () => drawTruth(selRng));
  const scoreTruths = Array.from({ length: R }, () => drawTruth(scoreRng));
  // leave-one-out: the starting log-likelihood of each (simulation, draw): −∞ for the truth's own particle's copies
  let skipped = 0;
  const leaveOut = (truths: number[]): Float64Array[] =>
    truths.map((t) => {
      const a = new Float64Array(M);
      let left = 0;
      for (let k = 0; k < M; k++) {
        if (idOf[picks[k]!] === idOf[t]) a[k] = -Infinity;
        else left++;
      }
      if (left === 0) {
        skipped++;
        a.fill(0);
      }
      return a;
    });
  const stateCode = (s: State) => STATES.indexOf(s);
  const misread = (s: number, v: number) => (v < 1 - eps ? s : [0, 1, 2].filter((k) => k !== s)[v < 1 - eps / 2 ? 0 : 1]!);
  const statesAt = (doses: number[], stage: string): Uint8Array[] =>
    doses.map((x, g) => {
      if (g % 5 === 0) progress(0.1 + (0.5 * g) / doses.length, stage);
      return Uint8Array.from(preds.map((p) => stateCode(p.state(x))));
    });
  const truthState = (t: number, x: number) => stateCode(post.particles[t]!.pred.state(x));
  const hit = Math.log(1 - eps);
  const miss = Math.log(eps / 2);
  // ---- selection: the grid's columns, one misreading uniform per (grid dose, simulation), shared by every candidate design
  const gridRng = new Random(streamSeed(seed, 0x61, 'grid'));
  const gridStates = statesAt(grid, 'states of the draws over the dose grid');
  const gridSeen = grid.map((x) => Uint8Array.from(selTruths, (t) => misread(truthState(t, x), gridRng.uniform())));
  // ---- the fixed series
  const fixedSeries = band.median !== null && band.median > 0 ? doseSeries({ threshold: { density: band.median, volumeFraction: 0, anyDose: false }, band: { ...band, median: band.median } as never }) : null;
  if (!fixedSeries && !(opts.tubes !== undefined && opts.grid && opts.grid.length > 0))
    throw new EngineInputError('candidate', 'the posterior median threshold is 0 or above the cap: there is no default series to scale; give the number of tubes and the grid of doses');
  const fixedDoses = fixedSeries ? fixedSeries.doses.filter((x) => x <= cap) : [];
  // default: the fixed series' doses above 0 (a sheet adds dose 0, the no-dopant control, to a designed series as the fixed one has it)
  const n = opts.tubes ?? Math.max(1, fixedDoses.filter((x) => x > 0).length);
  if (!(n >= 1)) throw new EngineInputError('tubes', 'at least one tube');
  // greedy on the selection set: the running log-likelihood of each (simulation, draw) for the chosen doses
  const centreLog = Math.log10(band.median !== null && band.median > 0 ? band.median : Math.sqrt(grid[0]! * grid[grid.length - 1]!) || cap);
  const nearness = (x: number) => (x > 0 ? Math.abs(Math.log10(x) - centreLog) : Infinity);
  const chosen: number[] = [];
  const cum = leaveOut(selTruths);
  const used = new Set<number>();
  let selectionU = R > 0 ? cum.reduce((a, c) => a + wvar(logT, weightsOf(c)), 0) / R : 0;
  for (let step = 0; step < Math.min(n, grid.length); step++) {
    progress(0.6 + (0.3 * step) / n, `choosing tube ${step + 1} of ${n}`);
    let bestG = -1;
    let bestU = Infinity;
    for (let g = 0; g < grid.length; g++) {
      if (used.has(g)) continue;
      const states = gridStates[g]!;
      const seen = gridSeen[g]!;
      let u = 0;
      const ll = new Float64Array(M);
      for (let r = 0; r < R; r++) {
        const b = cum[r]!;
        const sr = seen[r];
        for (let k = 0; k < M; k++) ll[k] = b[k]! + (states[k] === sr ? hit : miss);
        u += wvar(logT, weightsOf(ll));
      }
      u /= R;
      // a dose no draw tells apart from the others leaves U as it was: among equal scores (to rounding), the dose
      // nearest the posterior median (in log), where a misread tube or a model error shows first, not the grid's lowest
      const tie = bestG >= 0 && Math.abs(u - bestU) <= 1e-9 * Math.abs(bestU);
      if (tie) {
        if (nearness(grid[g]!) < nearness(grid[bestG]!)) {
          bestU = Math.min(u, bestU);
          bestG = g;
        }
      } else if (u < bestU) {
        bestU = u;
        bestG = g;
      }
    }
    used.add(bestG);
    chosen.push(bestG);
    selectionU = bestU;
    const states = gridStates[bestG]!;
    const seen = gridSeen[bestG]!;
    for (let r = 0; r < R; r++) for (let k = 0; k < M; k++) cum[r]![k]! += states[k] === seen[r] ? hit : miss;
  }
  // ---- scoring: other truths, other misreadings; tube k (ascending doses) of every series is misread by the same uniform
  progress(0.92, 'scoring the designed and the fixed series on independent simulations');
  const designedDoses = chosen.map((g) => grid[g]!).sort((a, b) => a - b);
  const slots = Math.max(designedDoses.length, fixedDoses.length);
  const slotU = Array.from({ length: R }, () => Float64Array.from({ length: slots }, () => scoreRng.uniform()));
  const scoreStart = leaveOut(scoreTruths);
  const stateOfDose = new Map<number, Uint8Array>(grid.map((x, g) => [x, gridStates[g]!]));
  const score = (doses: number[]): { variance: number; se: number; each: Float64Array; bandFactor: number | null } => {
    const cols = doses.map((x) => {
      let c = stateOfDose.get(x);
      if (!c) stateOfDose.set(x, (c = Uint8Array.from(preds.map((p) => stateCode(p.state(x))))));
      return c;
    });
    const each = new Float64Array(R);
    let logFactor = 0;
    let above = false;
    for (let r = 0; r < R; r++) {
      const ll = Float64Array.from(scoreStart[r]!);
      const t = scoreTruths[r]!;
      doses.forEach((x, j) => {
        const s = misread(truthState(t, x), slotU[r]![j]!);
        const c = cols[j]!;
        for (let k = 0; k < M; k++) ll[k]! += c[k] === s ? hit : miss;
      });
      const wr = weightsOf(ll);
      each[r] = wvar(logT, wr);
      const p05 = weightedQuantile(thresholds, wr, 0.05);
      const p95 = weightedQuantile(thresholds, wr, 0.95);
      if (!Number.isFinite(p95) || !(p05 > 0)) above = true;
      else logFactor += Math.log10(p95 / p05);
    }
    const { mean, se } = meanSe(each);
    return { variance: mean, se, each, bandFactor: above ? null : Math.pow(10, logFactor / R) };
  };
  const designedScore = score(designedDoses);
  const fixedScore = fixedSeries ? score(fixedDoses) : null;
  const difference = fixedScore ? meanSe(designedScore.each.map((v, r) => v - fixedScore.each[r]!)) : null;
  const p05 = band.p05;
  const p95 = band.p95;
  progress(1, 'designed');
  return {
    candidate: d.id,
    criterion: 'expected posterior variance of log10 threshold',
    method: 'greedy over a dose grid, preposterior simulation',
    truths: 'posterior particles, leave-one-out',
    designed: { doses: designedDoses, expectedVariance: designedScore.variance, expectedVarianceSe: designedScore.se, expectedSdLog10: Math.sqrt(designedScore.variance), expectedBandFactor: designedScore.bandFactor, selectionVariance: selectionU },
    fixed: fixedSeries && fixedScore ? { doses: fixedDoses, reference: fixedSeries.reference, expectedVariance: fixedScore.variance, expectedVarianceSe: fixedScore.se, expectedSdLog10: Math.sqrt(fixedScore.variance), expectedBandFactor: fixedScore.bandFactor } : null,
    difference: difference ? { variance: difference.mean, se: difference.se } : null,
    current: { variance: cur, sdLog10: Math.sqrt(cur), bandFactor: p05 !== null && p05 > 0 && p95 !== null ? p95 / p05 : null, band },
    grid: { from: grid[0]!, to: grid[grid.length - 1]!, ratio, points: grid.length, cap, lowest: lowestFrom, clamp: { from: lowest, to: cap } },
    simulations: R,
    particles: M,
    misclassification: eps,
    leaveOneOutSkipped: skipped,
  };
}

/** Mean and its standard error sd/√n. */
function meanSe(x: ArrayLike<number>): { mean: number; se: number } {
  const n = x.length;
  let m = 0;
  for (let i = 0; i < n; i++) m += x[i]! / n;
  let s = 0;
  for (let i = 0; i < n; i++) s += (x[i]! - m) ** 2;
  return { mean: m, se: n > 1 ? Math.sqrt(s / (n - 1) / n) : 0 };
}

/** exp(ℓ − max ℓ), normalised. */
function weightsOf(ll: Float64Array): Float64Array {
  let m = -Infinity;
  for (let k = 0; k < ll.length; k++) if (ll[k]! > m) m = ll[k]!;
  const w = new Float64Array(ll.length);
  let s = 0;
  for (let k = 0; k < ll.length; k++) s += w[k] = Math.exp(ll[k]! - m);
  for (let k = 0; k < ll.length; k++) w[k]! /= s;
  return w;
}

/** Weighted variance (weights sum to 1). */
function wvar(v: number[], w: ArrayLike<number>): number {
  let m = 0;
  for (let k = 0; k < v.length; k++) m += w[k]! * v[k]!;
  let s = 0;
  for (let k = 0; k < v.length; k++) s += w[k]! * (v[k]! - m) ** 2;
  return s;
}
