/**
 * Calibration fits (SI in, SI out): mean-squared displacement, Michaelis–Menten
 * kinetics, phoretic drift. Each returns parameters with standard errors, the
 * residuals and the goodness of fit.
 *
 * MSD models (t = lag time, τ = 1/D_r the rotation time, c an optional
 * localisation-error offset):
 *   passive-2d   MSD = 4 D t + c
 *   passive-3d   MSD = 6 D t + c
 *   active-2d    MSD = 4 D t + 2 v² τ² [t/τ + e^(−t/τ) − 1] + c          (ten Hagen, van Teeffelen & Löwen 2011,
 *                                                                         docs/references.md)
 *   active-3d    MSD = 6 D t + (v² τ²/2) [2t/τ + e^(−2t/τ) − 1] + c      (same; Bechinger et al. 2016)
 *   active-focal MSD = 4 D t + (v² τ²/3) [2t/τ + e^(−2t/τ) − 1] + c      (a 3D swimmer seen in a focal plane:
 *                                                                         two thirds of the 3D active part)
 * The rotation time is free, or fixed from Stokes–Einstein–Debye for a radius.
 *
 * Kinetics: r = V c/(K + c) (Michaelis–Menten); with the particle (or enzyme)
 * number density of the assay ρ, the per-particle maximal turnover is V/ρ.
 *
 * Drift: v = −μ ∂c/∂x (docs/model.md §1: μ > 0 moves down the gradient); a line
 * through the origin, slope −μ.
 */
import { stokesEinsteinDebye } from '../transport.js';
import { EngineInputError } from '../types.js';
import { solveInPlace } from '../linalg/dense.js';
import { leastSquares, whitener, type LsqResult, type LsqStop, type LsqWeighting } from './least-squares.js';

export type MsdModel = 'passive-2d' | 'passive-3d' | 'active-2d' | 'active-3d' | 'active-focal';
export const MSD_MODELS: MsdModel[] = ['passive-2d', 'passive-3d', 'active-2d', 'active-3d', 'active-focal'];

export interface FitParameter {
  value: number;
  /** standard error; null when the parameter ended on a bound (no honest linearised error there) */
  sd: number | null;
  unit: string;
  /** true when held fixed (not fitted) */
  fixed?: boolean;
  /** the bound the fit ended on (e.g. a diffusivity of 0): the value is a limit, not an estimate */
  atBound?: 'lower' | 'upper';
}

export interface FitResult {
  method: string;
  model: string;
  parameters: Record<string, FitParameter>;
  residualStandardError: number;
  dof: number;
  points: number;
  /** weighted residual sum of squares (whitened, for a covariance) */
  rss: number;
  /** 1 − RSS/TSS (unweighted) */
  rSquared: number;
  /** the independent variable of each point (SI) */
  x: number[];
  residuals: number[];
  fitted: number[];
  /**
   * how the points were weighted: a full covariance (generalised least squares), 1/sd², equally, or
   * (an MSD curve without sd) by the model of its variance, ∝ MSD(t)² t (see fitMsd)
   */
  weighting: LsqWeighting | 'relative-variance-model';
  /** true only when the optimiser showed stationarity (see `stop`) */
  converged: boolean;
  /** what ended the fit: converged, small-step (a step too small to matter, stationarity not shown), no-progress (no step lowered the residuals), max-iterations */
  stop: LsqStop;
  iterations: number;
  notes: string[];
}

function need(n: number, min: number, what: string): void {
  if (n < min) throw new EngineInputError('data', `the ${what} model needs at least ${min} points, got ${n}`);
}

function rSquared(y: number[], fitted: number[]): number {
  const mean = y.reduce((a, b) => a + b, 0) / y.length;
  const tss = y.reduce((a, b) => a + (b - mean) ** 2, 0);
  const rss = y.reduce((a, b, i) => a + (b - fitted[i]!) ** 2, 0);
  return tss > 0 ? 1 - rss / tss : 1;
}

function summarise(method: string, model: string, r: LsqResult, names: [string, string][], x: number[], y: number[], fittedFn: (i: number) => number, notes: string[]): FitResult {
  const parameters: Record<string, FitParameter> = {};
  names.forEach(([name, unit], i) => {
    const bound = r.atBound[i];
    parameters[name] = { value: r.parameters[i]!, sd: r.standardErrors[i]!, unit, ...(r.free.includes(i) ? {} : { fixed: true }), ...(bound ? { atBound: bound } : {}) };
    if (bound) notes.push(`${name} ended on its ${bound} bound (${r.parameters[i]} ${unit}): the data do not resolve it; it has no standard error and the others' are conditional on it.`);
  });
  if (!r.converged) notes.push(`the fit did not converge (${r.stop} after ${r.iterations} iterations): the values are the best point reached, not an optimum.`);
  const fitted = y.map((_, i) => fittedFn(i));
  return {
    method,
    model,
    parameters,
    residualStandardError: r.residualStandardError,
    dof: r.dof,
    points: y.length,
    rss: r.weightedRss,
    rSquared: rSquared(y, fitted),
    x,
    residuals: r.residuals,
    fitted,
    weighting: r.weighting,
    converged: r.converged,
    stop: r.stop,
    iterations: r.iterations,
    notes,
  };
}

export interface MsdOptions {
  model: MsdModel;
  /** fit a constant localisation-error offset (default false) */
  offset?: boolean;
  /** fix τ = 8πηa³/(k_B T) from this radius (m) */
  radius?: number;
  /** K, for the fixed rotation time (default 298.15) */
  temperature?: number;
  /** standard deviations of the MSD values (m²); weights 1/sd² */
  sd?: number[];
  /** covariance of the MSD values between lags (m⁴): generalised least squares, taken as absolute */
  covariance?: number[][];
  /**
   * number of independent samples (tracks, blocks) the covariance was estimated from: the parameters'
   * covariance then carries the Dodelson–Schneider factor for a noisy covariance (see fitMsd)
   */
  covarianceSamples?: number;
  /**
   * a curve without sd or covariance: weight each lag by the model of the variance of a time-averaged
   * MSD, var ∝ MSD(t)² · t (over a track of fixed length; Qian, Sheetz & Elson 1991 for diffusion),
   * iteratively reweighted from the fitted curve (see fitMsd). Default false (equal weights).
   */
  varianceModel?: boolean;
}

/** Reweighting rounds of the variance model (the parameters settle in two or three). */
const VARIANCE_MODEL_ROUNDS = 6;

/** Active part of the MSD for speed v and rotation time τ (file header). */
function activePart(model: MsdModel, t: number, v: number, tau: number): number {
  const u = t / tau;
  // series for small u avoids cancellation in e^(−u) − 1 + u; through the fourth power the
  // truncation is (ku)³/60 of the value, below 2·10⁻¹⁴ at the switch ku = 10⁻⁴
  const em1 = (k: number) => {
    const w = k * u;
    return w < 1e-4 ? w * w * (0.5 - w / 6 + (w * w) / 24) : Math.expm1(-w) + w;
  };
  if (model === 'active-2d') return 2 * v * v * tau * tau * em1(1);
  if (model === 'active-3d') return ((v * v * tau * tau) / 2) * em1(2);
  return ((v * v * tau * tau) / 3) * em1(2);
}

/**
 * Long-time limit of the active part, slope per unit of v²τ: 2 (2D: 2v²τ²·t/τ),
 * 1 (3D: (v²τ²/2)·2t/τ), 2/3 (focal plane: (v²τ²/3)·2t/τ). The long-time
 * diffusivity in the observed d dimensions is D + (this/2d) v²τ: D + v²τ/2 in
 * 2D, D + v²τ/6 in 3D and in a focal plane (the 3D value: a projection keeps
 * the diffusivity per coordinate).
 */
function longSlopeCoefficient(model: MsdModel): number {
  return model === 'active-2d' ? 2 : model === 'active-3d' ? 1 : 2 / 3;
}

/** Number of observed dimensions of an MSD model: 3 for passive-3d and active-3d, else 2 (a focal plane is 2). */
export function msdDimension(model: MsdModel): 2 | 3 {
  return model === 'passive-3d' || model === 'active-3d' ? 3 : 2;
}

/** Number of fitted parameters of an MSD model: D (+ v, τ when active; τ not when fixed by a radius) (+ the offset). */
export function msdParameterCount(model: MsdModel, rotationFixed: boolean, offset: boolean): number {
  return (model.startsWith('active') ? (rotationFixed ? 2 : 3) : 1) + (offset ? 1 : 0);
}

/**
 * The MSD of a model at lag t (s) for diffusivity D (m²/s), speed v (m/s), rotation time τ (s) and
 * offset c (m²): the forms of the file header, as the fit evaluates them.
 */
export function msdCurve(model: MsdModel, t: number, D: number, v = 0, tau = 1, c = 0): number {
  return 2 * msdDimension(model) * D * t + (model.startsWith('active') ? activePart(model, t, v, tau) : 0) + c;
}

/**
 * Long-time (effective) diffusivity in the observed dimensions: D + v²τ/2 in 2D, D + v²τ/6 in 3D
 * and in a focal plane (longSlopeCoefficient); D for a passive model.
 */
export function effectiveDiffusivity(model: MsdModel, D: number, v = 0, tau = 1): number {
  if (!model.startsWith('active')) return D;
  return D + (longSlopeCoefficient(model) / (2 * msdDimension(model))) * v * v * tau;
}

/**
 * Non-negative linear least squares over a handful of columns by trying every
 * subset of the constrained ones at zero (at most 2³ small systems).
 * @returns coefficients and the whitened residual sum of squares, or null
 */
function smallNnls(cols: number[][], y: number[], nonneg: boolean[]): { coef: number[]; cost: number } | null {
  const k = cols.length;
  let best: { coef: number[]; cost: number } | null = null;
  for (let mask = 0; mask < 1 << k; mask++) {
    // mask bit set: coefficient forced to zero (only for constrained ones)
    if ([...Array(k).keys()].some((j) => mask & (1 << j) && !nonneg[j])) continue;
    const act = [...Array(k).keys()].filter((j) => !(mask & (1 << j)));
    const coef = new Array<number>(k).fill(0);
    if (act.length > 0) {
      const A = act.map((a) => act.map((b) => cols[a]!.reduce((s, v, i) => s + v * cols[b]![i]!, 0)));
      const g = act.map((a) => cols[a]!.reduce((s, v, i) => s + v * y[i]!, 0));
      const m = act.length;
      const flat = Float64Array.from(A.flat());
      const rhs = Float64Array.from(g);
      if (!solveInPlace(flat, m, rhs, 1)) continue;
      act.forEach((j, a) => (coef[j] = rhs[a]!));
    }
    if (act.some((j) => nonneg[j] && coef[j]! < 0)) continue;
    const cost = y.reduce((s, v, i) => s + (v - cols.reduce((acc, c, j) => acc + coef[j]! * c[i]!, 0)) ** 2, 0);
    if (!best || cost < best.cost) best = { coef, cost };
  }
  return best;
}

/**
 * Fit an MSD curve. `lag` in s (strictly increasing, > 0), `msd` in m².
 *
 * Starting points the data support (an active model has several minima and a
 * boundary at D = 0, so one start is not enough):
 *   - slopes: MSD ≈ a t + b t² over the first fifth of the lags gives
 *     D ≈ a/2d and v² from b (the short-time active part is v²t², or (2/3)v²t²
 *     in a focal plane); the last fifth's slope s₁ = 2dD + κ v²τ gives τ;
 *   - a profile in τ: for fixed τ the model is linear in D, v² (and the
 *     offset), solved with D, v² ≥ 0 on a log grid of τ spanning the lags;
 *     the two best grid points start the full fit.
 * Every start runs the bounded Levenberg–Marquardt (D ≥ 0, v ≥ 0); the lowest
 * residual sum of squares wins, and the notes say how many starts agreed.
 * @returns diffusivity (m²/s), and for active models speed (m/s) and rotationTime (s); offset (m²) if asked
 */
export function fitMsd(lag: number[], msd: number[], o: MsdOptions): FitResult {
  if (!MSD_MODELS.includes(o.model)) throw new EngineInputError('model', `expected one of ${MSD_MODELS.join(', ')}, got "${o.model}"`);
  if (o.varianceModel && !o.sd && !o.covariance) return fitMsdVarianceModel(lag, msd, o);
  const active = o.model.startsWith('active');
  const dimension = msdDimension(o.model);
  const nPar = msdParameterCount(o.model, o.radius !== undefined, o.offset === true);
  need(lag.length, nPar + 1, o.model);
  const n = lag.length;
  const notes: string[] = [];
  let tauFixed: number | undefined;
  if (o.radius !== undefined) {
    tauFixed = 1 / stokesEinsteinDebye(o.radius, o.temperature ?? 298.15);
    notes.push(`rotation time fixed at ${tauFixed.toPrecision(4)} s from Stokes–Einstein–Debye for a = ${o.radius} m`);
  }
  const weights = o.sd ? o.sd.map((s) => 1 / (s * s)) : undefined;
  const { whiten } = whitener(n, o.covariance ? undefined : weights, o.covariance);
  const wy = whiten(msd);
  const model = (t: number, p: number[]) => (active ? msdCurve(o.model, t, p[0]!, p[1]!, p[2]!, p[3]!) : msdCurve(o.model, t, p[0]!, 0, 1, p[1]!));
  const offsetIndex = active ? 3 : 1;
  const fixed: number[] = [];
  if (!o.offset) fixed.push(offsetIndex);
  if (active && tauFixed !== undefined) fixed.push(2);
  const withOffset = (p: number[], c: number) => {
    const q = [...p];
    q[offsetIndex] = o.offset ? c : 0;
    return q;
  };
  // slope estimates: quadratic a t + b t² (+ c) over the first fifth, a line over the last fifth
  const k0 = Math.min(n, Math.max(o.offset ? 4 : 3, Math.ceil(n / 5)));
  const head = smallNnls(
    [lag.slice(0, k0), lag.slice(0, k0).map((t) => t * t), ...(o.offset ? [lag.slice(0, k0).map(() => 1)] : [])],
    msd.slice(0, k0),
    [true, true, false],
  );
  const k1 = Math.max(2, Math.ceil(n / 5));
  const tail = smallNnls([lag.slice(n - k1), lag.slice(n - k1).map(() => 1)], msd.slice(n - k1), [true, false]);
  const a0 = head?.coef[0] ?? msd[n - 1]! / lag[n - 1]!;
  const b0 = head?.coef[1] ?? 0;
  const c0 = o.offset ? (head?.coef[2] ?? 0) : 0;
  const s1 = tail?.coef[0] ?? msd[n - 1]! / lag[n - 1]!;
  const starts: number[][] = [];
  // floors on the starting D and v² at 10⁻³ of the data's own scale (a start of zero has no scale to step in)
  const msdScale = Math.max(...msd.map((y) => Math.abs(y)), 1e-300);
  const dFloor = (1e-3 * msdScale) / (2 * dimension * lag[n - 1]!);
  const v2Floor = (1e-3 * msdScale) / lag[n - 1]! ** 2;
  const tiny = (x: number) => Math.max(x, dFloor);
  if (!active) starts.push(withOffset([tiny(Math.max(a0, s1) / (2 * dimension)), 0], c0));
  else {
    const kappa = longSlopeCoefficient(o.model);
    const shortCoef = o.model === 'active-focal' ? 2 / 3 : 1;
    const D0 = a0 / (2 * dimension);
    const v20 = b0 / shortCoef;
    const span = [lag[0]! / 4, 4 * lag[n - 1]!];
    const tauSlope = v20 > 0 && s1 > a0 ? (s1 - a0) / (kappa * v20) : Math.sqrt(lag[0]! * lag[n - 1]!);
    const tau0 = tauFixed ?? Math.min(span[1]!, Math.max(span[0]!, tauSlope));
    starts.push(withOffset([tiny(D0), Math.sqrt(Math.max(v20, v2Floor)), tau0, 0], c0));
    // profile in τ (or just the fixed τ): D, v² (, c) by non-negative linear least squares on whitened columns
    const grid = tauFixed !== undefined ? [tauFixed] : Array.from({ length: 25 }, (_, i) => span[0]! * Math.pow(span[1]! / span[0]!, i / 24));
    const prof = grid
      .map((tau) => {
        const cols = [whiten(lag.map((t) => 2 * dimension * t)), whiten(lag.map((t) => activePart(o.model, t, 1, tau))), ...(o.offset ? [whiten(lag.map(() => 1))] : [])];
        const r = smallNnls(cols, wy, [true, true, false]);
        return r ? { tau, ...r } : null;
      })
      .filter((r): r is NonNullable<typeof r> => r !== null);
    // local minima of the profile, best first
    const minima = prof.filter((r, i) => (i === 0 || r.cost <= prof[i - 1]!.cost) && (i === prof.length - 1 || r.cost <= prof[i + 1]!.cost)).sort((a, b) => a.cost - b.cost);
    for (const r of minima.slice(0, 2)) starts.push(withOffset([tiny(r.coef[0]!), Math.sqrt(Math.max(r.coef[1]!, v2Floor)), r.tau, 0], r.coef[2] ?? 0));
  }
  const runs = starts.map((start) =>
    leastSquares({
      model,
      x: lag,
      y: msd,
      ...(o.covariance ? { covariance: o.covariance, errorScale: 'known' as const } : weights ? { weights } : {}),
      start,
      fixed,
      lower: active ? [0, 0] : [0],
      valid: (p) => !active || p[2]! > 0,
    }),
  );
  const lowest = runs.reduce((a, b) => (b.weightedRss < a.weightedRss ? b : a));
  // the lowest residuals win; at the same residuals (to 10⁻⁹), a run that showed convergence
  const best = lowest.converged ? lowest : (runs.find((x) => x.converged && x.weightedRss <= lowest.weightedRss * (1 + 1e-9)) ?? lowest);
  const r = best;
  if (o.covariance && o.covarianceSamples !== undefined) {
    // A covariance estimated from U samples is noisy, and the estimate that uses its inverse scatters
    // more than (Jᵀ C⁻¹ J)⁻¹ says: by the factor 1 + B (M − p), B = (U − M − 2)/((U − M − 1)(U − M − 4)),
    // for M data points and p parameters (Dodelson & Schneider 2013, from memory; docs/references.md).
    const U = o.covarianceSamples;
    const p = r.estimated.length;
    if (U - n - 4 > 0) {
      const B = (U - n - 2) / ((U - n - 1) * (U - n - 4));
      const factor = 1 + B * (n - p);
      r.covariance = r.covariance.map((row) => row.map((c) => c * factor));
      r.estimated.forEach((i) => (r.standardErrors[i] = r.standardErrors[i] === null ? null : r.standardErrors[i]! * Math.sqrt(factor)));
      notes.push(`standard errors include the factor √${factor.toPrecision(4)} for a covariance estimated from ${U} samples (Dodelson & Schneider 2013).`);
    } else notes.push(`the covariance comes from only ${U} samples for ${n} points: the standard errors are too small by an unknown factor.`);
  }
  if (runs.length > 1) {
    const agree = runs.filter((x) => Math.abs(x.weightedRss - best.weightedRss) <= 1e-6 * Math.max(best.weightedRss, 1e-300)).length;
    notes.push(`best of ${runs.length} starts (slope estimates and a profile in the rotation time); ${agree} reached the same minimum.`);
  }
  const names: [string, string][] = active
    ? [
        ['diffusivity', 'm^2/s'],
        ['speed', 'm/s'],
        ['rotationTime', 's'],
        ['offset', 'm^2'],
      ]
    : [
        ['diffusivity', 'm^2/s'],
        ['offset', 'm^2'],
      ];
  if (o.covariance) notes.push('generalised least squares with the covariance of the MSD between lags; standard errors from (Jᵀ C⁻¹ J)⁻¹ with C as given (not rescaled by the residuals).');
  const res = summarise('msd', o.model, r, names, lag, msd, (i) => model(lag[i]!, r.parameters), notes);
  if (!o.offset) delete res.parameters.offset;
  if (active) {
    const tau = r.parameters[2]!;
    if (tauFixed === undefined && (tau < lag[0]! || tau > lag[n - 1]!)) {
      notes.push(`the rotation time (${tau.toPrecision(3)} s) lies outside the lags measured (${lag[0]} to ${lag[n - 1]} s): it and the speed are weakly determined.`);
    }
    // Long-time (effective) diffusivity seen in the observed dimensions (longSlopeCoefficient);
    // its sd by the delta method with the covariance of the estimated parameters.
    const [D, v] = r.parameters as [number, number, number];
    const c = longSlopeCoefficient(o.model) / (2 * dimension);
    const grad = [1, 2 * c * v * tau, c * v * v]; // ∂/∂(D, v, τ)
    let varE = 0;
    r.estimated.forEach((i, a) => r.estimated.forEach((j, b) => (i <= 2 && j <= 2 ? (varE += grad[i]! * grad[j]! * r.covariance[a]![b]!) : 0)));
    res.parameters.effectiveDiffusivity = { value: effectiveDiffusivity(o.model, D, v, tau), sd: Number.isFinite(varE) ? Math.sqrt(Math.max(varE, 0)) : null, unit: 'm^2/s' };
    res.notes.push(`effectiveDiffusivity = D + v²τ/${1 / c} is the long-time diffusivity of the active particle, the one a continuum model of an active species uses.`);
  }
  return res;
}

/**
 * An MSD curve without sd, weighted by the model of its variance: the time-averaged MSD of a track of
 * duration T at lag t has a variance ≈ MSD(t)² · (a t/T) with a of order one (Qian, Sheetz & Elson 1991
 * for diffusion; used for active tracks too — common practice, no source), so with equal weights the
 * few noisy long lags dominate and the short lags, which fix D and v, are not fitted. Relative weights
 * 1/(MSD(t)² t) (T and a cancel: the scale comes from the residuals): first from the data (floored at
 * 10⁻³ of the largest value), then from the fitted curve, until the parameters settle to 10⁻⁶ (at most
 * VARIANCE_MODEL_ROUNDS rounds).
 */
function fitMsdVarianceModel(lag: number[], msd: number[], o: MsdOptions): FitResult {
  const { varianceModel: _vm, ...plain } = o;
  const top = Math.max(...msd.map((y) => Math.abs(y)));
  const sdOf = (curve: number[]) => curve.map((m, i) => Math.max(Math.abs(m), 1e-3 * top, 1e-300) * Math.sqrt(lag[i]! / lag[lag.length - 1]!));
  let f = fitMsd(lag, msd, { ...plain, sd: sdOf(msd) });
  let rounds = 1;
  for (; rounds < VARIANCE_MODEL_ROUNDS; rounds++) {
    const next = fitMsd(lag, msd, { ...plain, sd: sdOf(f.fitted) });
    const moved = Object.keys(next.parameters).some((k) => {
      const a = next.parameters[k]!.value;
      const b = f.parameters[k]?.value ?? Number.NaN;
      return !(Math.abs(a - b) <= 1e-6 * Math.max(Math.abs(a), Math.abs(b), 1e-300));
    });
    f = next;
    if (!moved) break;
  }
  f.weighting = 'relative-variance-model';
  f.notes.push(
    `weighted by the model of the variance of a time-averaged MSD, ∝ MSD(t)² · t (Qian, Sheetz & Elson 1991), from the fitted curve after ${rounds} round${rounds === 1 ? '' : 's'} of reweighting: equal weights would let the few noisy long lags set the fit.`,
  );
  if (rounds === VARIANCE_MODEL_ROUNDS) f.notes.push(`the reweighting had not settled after ${rounds} rounds: the weights come from the last fitted curve.`);
  return f;
}

export interface KineticsOptions {
  /** number density of particles or enzymes in the assay, m⁻³: gives the per-particle maxRate */
  particleDensity?: number;
  sd?: number[];
  /** unit text of concentration and rate when they are not SI (kept for the output) */
  concentrationUnit?: string;
  rateUnit?: string;
}

/**
 * Michaelis–Menten fit of initial rates r (rate units) against substrate c.
 * @returns maxRate and michaelis in the data's units (SI when the data were SI);
 *          with `particleDensity`, maxRate per particle (mol/s) as `maxRatePerParticle`
 */
export function fitKinetics(c: number[], rate: number[], o: KineticsOptions = {}): FitResult {
  need(c.length, 3, 'Michaelis–Menten');
  const vmax0 = Math.max(...rate) * 1.1;
  const half = vmax0 / 2;
  let k0 = c[0]!;
  let best = Infinity;
  c.forEach((ci, i) => {
    const d = Math.abs(rate[i]! - half);
    if (d < best) {
      best = d;
      k0 = ci;
    }
  });
  const model = (x: number, p: number[]) => (p[0]! * x) / (p[1]! + x);
  const r = leastSquares({ model, x: c, y: rate, ...(o.sd ? { weights: o.sd.map((s) => 1 / (s * s)) } : {}), start: [vmax0, Math.max(k0, 1e-30)], valid: (p) => p[1]! > 0 });
  const cu = o.concentrationUnit ?? 'mol/m^3';
  const ru = o.rateUnit ?? 'mol/(m^3*s)';
  const res = summarise('kinetics', 'michaelis-menten', r, [
    ['maxRate', ru],
    ['michaelis', cu],
  ], c, rate, (i) => model(c[i]!, r.parameters), []);
  if (o.particleDensity !== undefined) {
    if (!(o.particleDensity > 0)) throw new EngineInputError('particleDensity', 'must be positive');
    const v = res.parameters.maxRate!;
    res.parameters.maxRatePerParticle = { value: v.value / o.particleDensity, sd: v.sd === null ? null : v.sd / o.particleDensity, unit: 'mol/s' };
    res.notes.push('maxRatePerParticle = maxRate / particle density of the assay (the value to put on the shelf as a coupling maxRate)');
  }
  return res;
}

/**
 * Mobility from drift velocity v (m/s) against imposed gradient g (mol/m⁴):
 * weighted least squares of v = −μ g through the origin,
 * μ = −Σ w g v / Σ w g², sd(μ) = √(s² / Σ w g²), s² = Σ w (v + μ g)²/(n − 1).
 */
export function fitDrift(gradient: number[], velocity: number[], sd?: number[]): FitResult {
  need(gradient.length, 2, 'drift');
  const w = sd ? sd.map((s) => 1 / (s * s)) : gradient.map(() => 1);
  let sgg = 0;
  let sgv = 0;
  gradient.forEach((g, i) => {
    sgg += w[i]! * g * g;
    sgv += w[i]! * g * velocity[i]!;
  });
  if (!(sgg > 0)) throw new EngineInputError('data', 'every gradient is zero: no mobility can be read from these points');
  const mu = -sgv / sgg;
  const residuals = gradient.map((g, i) => velocity[i]! - -mu * g);
  const rss = residuals.reduce((a, r, i) => a + w[i]! * r * r, 0);
  const dof = gradient.length - 1;
  const s2 = rss / dof;
  const fitted = gradient.map((g) => -mu * g);
  return {
    method: 'drift',
    model: 'linear-through-origin',
    parameters: { mobility: { value: mu, sd: Math.sqrt(s2 / sgg), unit: 'm^5/(mol*s)' } },
    residualStandardError: Math.sqrt(s2),
    dof,
    points: gradient.length,
    rss,
    rSquared: rSquared(velocity, fitted),
    x: gradient,
    residuals,
    fitted,
    weighting: sd ? 'weighted' : 'unweighted',
    converged: true,
    stop: 'converged',
    iterations: 0,
    notes: ['v = −μ ∂c/∂x: μ > 0 means the particles move down the gradient (repelled), μ < 0 up it (attracted) — docs/model.md §1.'],
  };
}
