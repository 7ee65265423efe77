/**
 * The next experiment (docs/model.md §13): the doses of the next n tubes that
 * most reduce the uncertainty of the threshold.
 *
 * Criterion: the expected posterior variance of log₁₀ of the threshold dose,
 *
 *     U(D) = E_{θ ~ p(θ | y), y' ~ p(y' | θ, D)} [ Var(log₁₀ x*(θ) | y, y') ],
 *
 * computed by preposterior simulation over the current posterior draws: M
 * draws are resampled from the posterior; R simulated "truths" θ_r are taken
 * among them, each with the states the bench would record at every grid dose
 * (the true state with probability 1 − ε, else one of the other two); for a
 * design D the posterior over the M draws is their likelihood of y'_r at D,
 * and U(D) is the mean over r of the weighted variance of log₁₀ x*. The same
 * simulated truths and misreadings serve every design (common random numbers).
 *
 * Search: greedy over a dose grid (each step adds the grid dose that lowers U
 * most; each grid dose at most once), the grid log-spaced by the minimum dose
 * ratio the bench can pipette (or given), between a lowest dose and the dose
 * cap. The default fixed series (planner.ts DEFAULT_DOSE_FACTORS × the
 * posterior median, with the 5 % and 95 % doses, as `doseSeries` builds it) is
 * scored by the same simulation, and both expected band widths (p95/p05) are
 * reported. A threshold of 0 (already past) or above the cap enters the
 * variance clamped to the grid's lowest dose / 10 and twice the cap.
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
  /** lowest dose of the grid (m⁻³), e.g. the smallest pipetting volume × the stock; default the posterior 5 % dose / 3 */
  minDose?: number;
  /** dose cap (m⁻³); default the candidate's cap (planner.ts doseCap) */
  maxDose?: number;
  /** simulated outcomes R (default 200) and posterior draws M (default 200) */
  simulations?: number;
  particles?: number;
  seed?: number;
  /** called as the work advances (may throw to cancel) */
  progress?: (fraction: number, stage: string) => void;
}

export interface DesignScore {
  doses: number[];
  /** U: expected posterior variance of log₁₀ x*, and its square root */
  expectedVariance: number;
  expectedSdLog10: number;
  /** expected p95/p05 of the threshold after the round (geometric mean over the simulations; null when above the cap) */
  expectedBandFactor: number | null;
}

export interface DesignResult {
  candidate: string;
  criterion: 'expected posterior variance of log10 threshold';
  method: 'greedy over a dose grid, preposterior simulation';
  designed: DesignScore;
  /** the default fixed series scored the same way; null when the posterior median is 0 or above the cap (nothing to scale) */
  fixed: (DesignScore & { reference: number }) | null;
  /** now, before the round */
  current: { variance: number; sdLog10: number; bandFactor: number | null; band: ReturnType<typeof bandOf> };
  grid: { from: number; to: number; ratio: number | null; points: number; cap: number };
  simulations: number;
  particles: number;
  misclassification: number;
}

const STATES: State[] = ['stable', 'stationary', 'oscillatory'];

/**
 * Design the next round of tubes for the posterior's candidate (the observed one).
 * @throws EngineInputError when the grid is empty or the posterior has no crossing to centre on
 */
export function designNext(post: Posterior, base: Mixture, d: Species, o: DoseOptions, opts: DesignOptions = {}): DesignResult {
  const progress = opts.progress ?? (() => {});
  const eps = post.lik.eps;
  const rng = new Random(streamSeed(opts.seed ?? 1, 0xd5, 'design'));
  const M = Math.max(20, opts.particles ?? 200);
  const R = Math.max(20, opts.simulations ?? 200);
  // M equally weighted draws from the posterior (systematic resampling)
  const picks: number[] = [];
  {
    const w = post.weights;
    const u0 = rng.uniform() / M;
    let c = w[0]!;
    let i = 0;
    for (let k = 0; k < M; k++) {
      const u = u0 + k / M;
      while (u > c && i < w.length - 1) c += w[++i]!;
      picks.push(i);
    }
  }
  const preds = picks.map((i) => post.particles[i]!.pred);
  const thresholds = preds.map((p) => p.threshold());
  const ones = new Float64Array(M).fill(1 / M);
  const band = bandOf(thresholds, ones);
  const cap = opts.maxDose ?? doseCap(base, d, o).density;
  if (!(cap > 0)) throw new EngineInputError('maxDose', 'the dose cap is 0: there is no dose to design');
  // the grid
  let grid: number[];
  let ratio: number | null = null;
  if (opts.grid && opts.grid.length > 0) {
    grid = [...new Set(opts.grid.filter((x) => x >= 0 && x <= cap))].sort((a, b) => a - b);
  } else {
    ratio = opts.minDoseRatio ?? 1.1;
    if (!(ratio > 1)) throw new EngineInputError('minDoseRatio', 'must be above 1');
    const centre = band.median ?? cap;
    const lo = Math.min(cap, opts.minDose ?? Math.max(cap * 1e-9, (band.p05 !== null && band.p05 > 0 ? band.p05 : centre / 10) / 3));
    const hi = Math.min(cap, (band.p95 ?? cap) * 3);
    grid = [];
    for (let x = hi; x >= lo * (1 - 1e-12) && grid.length < 400; x /= ratio) grid.push(x);
    grid.reverse();
  }
  if (grid.length === 0) throw new EngineInputError('grid', 'no dose of the grid lies in [0, cap]');
  const lowest = grid.find((x) => x > 0) ?? cap * 1e-9;
  const logT = thresholds.map((t) => Math.log10(t === 0 ? lowest / 10 : Number.isFinite(t) ? t : 2 * cap));
  // the simulated truths: r → draw j_r, and one uniform per (r, dose) for the misreading
  const truth = Array.from({ length: R }, () => Math.floor(rng.uniform() * M));
  const stateCode = (s: State) => STATES.indexOf(s);
  const statesAt = (doses: number[], stage: string): Uint8Array[] =>
    doses.map((x, g) => {
      if (g % 5 === 0) progress(0.1 + (0.6 * g) / doses.length, stage);
      return Uint8Array.from(preds.map((p) => stateCode(p.state(x))));
    });
  const seenAt = (col: Uint8Array, r: Random): Uint8Array =>
    Uint8Array.from(truth, (j) => {
      const s = col[j]!;
      const v = r.uniform();
      if (v < 1 - eps) return s;
      const others = [0, 1, 2].filter((k) => k !== s);
      return others[v < 1 - eps / 2 ? 0 : 1]!;
    });
  const hit = Math.log(1 - eps);
  const miss = Math.log(eps / 2);
  /** U and expected band factor of a set of dose columns (states per draw, seen per simulation) */
  const score = (cols: { states: Uint8Array; seen: Uint8Array }[]): { variance: number; bandFactor: number | null } => {
    let v = 0;
    let logFactor = 0;
    let above = false;
    for (let r = 0; r < R; r++) {
      const ll = new Float64Array(M);
      for (const c of cols) for (let k = 0; k < M; k++) ll[k]! += c.states[k] === c.seen[r] ? hit : miss;
      const w = weightsOf(ll);
      v += wvar(logT, w);
      const p05 = weightedQuantile(thresholds, w, 0.05);
      const p95 = weightedQuantile(thresholds, w, 0.95);
      if (!Number.isFinite(p95) || !(p05 > 0)) above = true;
      else logFactor += Math.log10(p95 / p05);
    }
    return { variance: v / R, bandFactor: above ? null : Math.pow(10, logFactor / R) };
  };
  // the fixed series, scored by the same simulation
  const fixedSeries = band.median !== null && band.median > 0 ? doseSeries({ threshold: { density: band.median, volumeFraction: 0, anyDose: false }, band: { ...band, median: band.median } as never }) : null;
  if (!fixedSeries && !(opts.tubes !== undefined && opts.grid && opts.grid.length > 0))
    throw new EngineInputError('candidate', 'the posterior median threshold is 0 or above the cap: there is no default series to scale; give the number of tubes and the grid of doses');
  const fixedDoses = fixedSeries ? fixedSeries.doses.filter((x) => x <= cap) : [];
  // default: the fixed series' doses above 0 (a sheet adds dose 0, the no-dopant control, to a designed series as the fixed one has it)
  const n = opts.tubes ?? Math.max(1, fixedDoses.filter((x) => x > 0).length);
  if (!(n >= 1)) throw new EngineInputError('tubes', 'at least one tube');
  const fixedRng = new Random(streamSeed(opts.seed ?? 1, 0xf1, 'fixed'));
  const fixedCols = statesAt(fixedDoses, 'states of the draws at the fixed series').map((states) => ({ states, seen: seenAt(states, fixedRng) }));
  const gridRng = new Random(streamSeed(opts.seed ?? 1, 0x61, 'grid'));
  const gridCols = statesAt(grid, 'states of the draws over the dose grid').map((states) => ({ states, seen: seenAt(states, gridRng) }));
  // greedy: the running log-likelihood of each (simulation, draw) for the chosen doses
  const centreLog = Math.log10(band.median !== null && band.median > 0 ? band.median : Math.sqrt(grid[0]! * grid[grid.length - 1]!) || cap);
  const nearness = (x: number) => (x > 0 ? Math.abs(Math.log10(x) - centreLog) : Infinity);
  const chosen: number[] = [];
  const cum = Array.from({ length: R }, () => new Float64Array(M));
  const used = new Set<number>();
  for (let step = 0; step < Math.min(n, grid.length); step++) {
    progress(0.7 + (0.25 * step) / n, `choosing tube ${step + 1} of ${n}`);
    let bestG = -1;
    let bestU = Infinity;
    for (let g = 0; g < grid.length; g++) {
      if (used.has(g)) continue;
      const c = gridCols[g]!;
      let u = 0;
      const ll = new Float64Array(M);
      for (let r = 0; r < R; r++) {
        const base = cum[r]!;
        const sr = c.seen[r];
        for (let k = 0; k < M; k++) ll[k] = base[k]! + (c.states[k] === sr ? hit : miss);
        u += wvar(logT, weightsOf(ll));
      }
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
    const c = gridCols[bestG]!;
    for (let r = 0; r < R; r++) for (let k = 0; k < M; k++) cum[r]![k]! += c.states[k] === c.seen[r] ? hit : miss;
  }
  progress(0.97, 'scoring the designs');
  const designedScore = score(chosen.map((g) => gridCols[g]!));
  const fixedScore = fixedSeries ? score(fixedCols) : null;
  const cur = wvar(logT, ones);
  const p05 = band.p05;
  const p95 = band.p95;
  progress(1, 'designed');
  return {
    candidate: d.id,
    criterion: 'expected posterior variance of log10 threshold',
    method: 'greedy over a dose grid, preposterior simulation',
    designed: { doses: chosen.map((g) => grid[g]!).sort((a, b) => a - b), expectedVariance: designedScore.variance, expectedSdLog10: Math.sqrt(designedScore.variance), expectedBandFactor: designedScore.bandFactor },
    fixed: fixedSeries && fixedScore ? { doses: fixedDoses, reference: fixedSeries.reference, expectedVariance: fixedScore.variance, expectedSdLog10: Math.sqrt(fixedScore.variance), expectedBandFactor: fixedScore.bandFactor } : null,
    current: { variance: cur, sdLog10: Math.sqrt(cur), bandFactor: p05 !== null && p05 > 0 && p95 !== null ? p95 / p05 : null, band },
    grid: { from: grid[0]!, to: grid[grid.length - 1]!, ratio, points: grid.length, cap },
    simulations: R,
    particles: M,
    misclassification: eps,
  };
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
