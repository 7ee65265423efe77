/**
 * Calibration fits (SI in, SI out): mean-squared displacement, Michaelis–Menten
 * kinetics, phoretic drift. Each returns parameters with standard errors, the
 * residuals and the goodness of fit.
 *
 * MSD models (t = lag time, τ = 1/D_r the rotation time, c an optional
 * localisation-error offset):
 *   passive-2d   MSD = 4 D t + c
 *   passive-3d   MSD = 6 D t + c
 *   active-2d    MSD = 4 D t + 2 v² τ² [t/τ + e^(−t/τ) − 1] + c          (ten Hagen, van Teeffelen & Löwen 2011)
 *   active-3d    MSD = 6 D t + (v² τ²/2) [2t/τ + e^(−2t/τ) − 1] + c      (same; Bechinger et al. 2016)
 *   active-focal MSD = 4 D t + (v² τ²/3) [2t/τ + e^(−2t/τ) − 1] + c      (a 3D swimmer seen in a focal plane:
 *                                                                         two thirds of the 3D active part)
 * The rotation time is free, or fixed from Stokes–Einstein–Debye for a radius.
 *
 * Kinetics: r = V c/(K + c) (Michaelis–Menten); with the particle (or enzyme)
 * number density of the assay ρ, the per-particle maximal turnover is V/ρ.
 *
 * Drift: v = −μ ∂c/∂x (model.md §1: μ > 0 moves down the gradient); a line
 * through the origin, slope −μ.
 */
import { stokesEinsteinDebye } from '../transport.js';
import { EngineInputError } from '../types.js';
import { leastSquares, type LsqResult } from './least-squares.js';

export type MsdModel = 'passive-2d' | 'passive-3d' | 'active-2d' | 'active-3d' | 'active-focal';
export const MSD_MODELS: MsdModel[] = ['passive-2d', 'passive-3d', 'active-2d', 'active-3d', 'active-focal'];

export interface FitParameter {
  value: number;
  sd: number;
  unit: string;
  /** true when held fixed (not fitted) */
  fixed?: boolean;
}

export interface FitResult {
  method: string;
  model: string;
  parameters: Record<string, FitParameter>;
  residualStandardError: number;
  dof: number;
  points: number;
  /** weighted residual sum of squares */
  rss: number;
  /** 1 − RSS/TSS (unweighted) */
  rSquared: number;
  /** the independent variable of each point (SI) */
  x: number[];
  residuals: number[];
  fitted: number[];
  converged: boolean;
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
    parameters[name] = { value: r.parameters[i]!, sd: r.standardErrors[i]!, unit, ...(r.free.includes(i) ? {} : { fixed: true }) };
  });
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
    converged: r.converged,
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
}

function activePart(model: MsdModel, t: number, v: number, tau: number): number {
  const u = t / tau;
  // series for small u avoids cancellation in e^(−u) − 1 + u
  const em1 = (k: number) => (k * u < 1e-4 ? (k * u) ** 2 / 2 - (k * u) ** 3 / 6 : Math.expm1(-k * u) + k * u);
  if (model === 'active-2d') return 2 * v * v * tau * tau * em1(1);
  if (model === 'active-3d') return ((v * v * tau * tau) / 2) * em1(2);
  return ((v * v * tau * tau) / 3) * em1(2);
}

/**
 * Fit an MSD curve. `lag` in s (strictly increasing, > 0), `msd` in m².
 * @returns diffusivity (m²/s), and for active models speed (m/s) and rotationTime (s); offset (m²) if asked
 */
export function fitMsd(lag: number[], msd: number[], o: MsdOptions): FitResult {
  if (!MSD_MODELS.includes(o.model)) throw new EngineInputError('model', `expected one of ${MSD_MODELS.join(', ')}, got "${o.model}"`);
  const active = o.model.startsWith('active');
  const dimension = o.model === 'passive-3d' || o.model === 'active-3d' ? 3 : 2;
  const nPar = (active ? (o.radius !== undefined ? 2 : 3) : 1) + (o.offset ? 1 : 0);
  need(lag.length, nPar + 1, o.model);
  // start: D from the first points' slope; v, τ from the curvature
  const n = lag.length;
  const k0 = Math.max(2, Math.ceil(n / 5));
  const slope0 = (msd[k0 - 1]! - msd[0]!) / (lag[k0 - 1]! - lag[0]!) || msd[n - 1]! / lag[n - 1]!;
  const slope1 = (msd[n - 1]! - msd[n - 1 - Math.max(1, Math.floor(n / 5))]!) / (lag[n - 1]! - lag[n - 1 - Math.max(1, Math.floor(n / 5))]!);
  const notes: string[] = [];
  let tauFixed: number | undefined;
  if (o.radius !== undefined) {
    tauFixed = 1 / stokesEinsteinDebye(o.radius, o.temperature ?? 298.15);
    notes.push(`rotation time fixed at ${tauFixed.toPrecision(4)} s from Stokes–Einstein–Debye for a = ${o.radius} m`);
  }
  let start: number[];
  if (!active) start = [Math.max(slope0, 1e-30) / (2 * dimension), 0];
  else {
    const tau0 = tauFixed ?? Math.sqrt(lag[0]! * lag[n - 1]!);
    const D0 = Math.max(Math.min(slope0, slope1) / (2 * dimension) / 2, 1e-30);
    const activeCoef = o.model === 'active-2d' ? 2 : o.model === 'active-3d' ? 1 : 2 / 3;
    const v2 = Math.max((slope1 - 2 * dimension * D0) / (activeCoef * tau0), (slope1 * 0.5) / tau0);
    start = [D0, Math.sqrt(Math.max(v2, 1e-30)), tau0, 0];
  }
  const model = (t: number, p: number[]) => (active ? 2 * dimension * p[0]! * t + activePart(o.model, t, p[1]!, p[2]!) + p[3]! : 2 * dimension * p[0]! * t + p[1]!);
  const offsetIndex = active ? 3 : 1;
  const fixed: number[] = [];
  if (!o.offset) fixed.push(offsetIndex);
  if (active && tauFixed !== undefined) fixed.push(2);
  if (!o.offset) start[offsetIndex] = 0;
  else start[offsetIndex] = Math.max(msd[0]! - slope0 * lag[0]!, Math.abs(msd[0]!) * 1e-3);
  const r = leastSquares({
    model,
    x: lag,
    y: msd,
    ...(o.sd ? { weights: o.sd.map((s) => 1 / (s * s)) } : {}),
    start,
    fixed,
    valid: (p) => p[0]! > 0 && (!active || p[2]! > 0),
  });
  if (active) r.parameters[1] = Math.abs(r.parameters[1]!);
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
  const res = summarise('msd', o.model, r, names, lag, msd, (i) => model(lag[i]!, r.parameters), notes);
  if (!o.offset) delete res.parameters.offset;
  if (active) {
    // Long-time (effective) diffusivity seen in the observed dimensions: D + v²τ/2 (2D), D + v²τ/3 (3D, and
    // a 3D swimmer seen in a plane); its sd by the delta method with the fit covariance.
    const [D, v, tau] = r.parameters as [number, number, number];
    const c = o.model === 'active-2d' ? 1 / 2 : 1 / 3;
    const grad = [1, 2 * c * v * tau, c * v * v]; // ∂/∂(D, v, τ)
    let varE = 0;
    r.free.forEach((i, a) => r.free.forEach((j, b) => (i <= 2 && j <= 2 ? (varE += grad[i]! * grad[j]! * r.covariance[a]![b]!) : 0)));
    res.parameters.effectiveDiffusivity = { value: D + c * v * v * tau, sd: Math.sqrt(Math.max(varE, 0)), unit: 'm^2/s' };
    res.notes.push('effectiveDiffusivity is the long-time diffusivity of the active particle, the one a continuum model of an active species uses.');
  }
  return res;
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
    res.parameters.maxRatePerParticle = { value: v.value / o.particleDensity, sd: v.sd / o.particleDensity, unit: 'mol/s' };
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
    converged: true,
    notes: ['v = −μ ∂c/∂x: μ > 0 means the particles move down the gradient (repelled), μ < 0 up it (attracted) — model.md §1.'],
  };
}
