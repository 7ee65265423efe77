/**
 * Quantal dose–response by maximum likelihood (docs/model.md §12): tubes at a dose either responded
 * (crossed the boundary) or not; the number that responded out of n at dose d is binomial,
 *
 *   y_i ~ Binomial(n_i, π_i),   g(π_i) = η_i = β₀ + β₁ x_i,   x_i = log10 d_i (default) or d_i,
 *
 * with the link g one of
 *   logit    g(π) = ln(π/(1 − π))           π = 1/(1 + e^(−η))
 *   probit   g(π) = Φ⁻¹(π)                  π = Φ(η), the standard normal distribution function
 *   cloglog  g(π) = ln(−ln(1 − π))          π = 1 − exp(−e^η)
 *
 * Fitting is Fisher scoring written as iteratively reweighted least squares, as published for generalised
 * linear models (P. McCullagh and J. A. Nelder, Generalized Linear Models, 2nd ed. 1989, §2.5; docs/references.md):
 * at the current η, with μ_i = n_i π_i,
 *   working weight    w_i = n_i (dπ/dη)² / (π_i (1 − π_i))
 *   working response  z_i = η_i + (y_i/n_i − π_i) / (dπ/dη)
 *   update            β ← (Xᵀ W X)⁻¹ Xᵀ W z
 * (Newton–Raphson for the canonical logit link, where observed and expected information agree). A step that
 * raises the deviance is halved (up to 30 times). Rows with the same dose are pooled first; x is centred and
 * scaled inside the iteration (a dose column in m⁻³ spans 10¹⁴ on the linear scale) and the coefficients are
 * turned back at the end. Converged: the relative change of the scaled coefficients is below 10⁻¹⁰ and the
 * deviance no longer falls by more than 10⁻¹² of itself; otherwise `stop: 'max-iterations'` (a result, not a throw).
 *
 * Outputs:
 *   - standard errors from the inverse Fisher information (Xᵀ W X)⁻¹ at the estimate (dispersion 1, binomial);
 *   - deviance D = 2 Σ [y ln(y/μ̂) + (n − y) ln((n − y)/(n − μ̂))] on (groups − 2) degrees of freedom, the
 *     null deviance (a common π), Pearson X² = Σ (y − μ̂)²/(n π̂ (1 − π̂)) and the upper χ² tail of both;
 *   - ED50, the dose where π = ½: x₅₀ = (g(½) − β₀)/β₁ (g(½) = 0 for logit and probit, ln ln 2 for cloglog), its
 *     standard error by the delta method, var x₅₀ = (V₀₀ + 2 x₅₀ V₀₁ + x₅₀² V₁₁)/β₁², and the 95 % interval
 *     x₅₀ ± 1.96 sd (`interval`, method 'delta'); on the log10 scale the dose is 10^x₅₀, its sd ln 10 · 10^x₅₀ · sd(x₅₀)
 *     and the interval is the delta interval on log10 dose back-transformed (asymmetric in dose). The Fieller
 *     interval is given beside it (`fieller`): the x where (β₀ + β₁x − g(½))² = z² var(β₀ + β₁x), bounded only
 *     when the slope is significant (β₁² > z² V₁₁), else null.
 *
 * Not an estimate:
 *   - separation: when the responses split cleanly by dose (no response at every dose below some point, all
 *     tubes responding above it, at most one mixed dose between) the likelihood has no maximum — the slope runs
 *     to infinity. This is found from the data before any iteration and reported (`separation`), with the
 *     doses that bracket the switch; the coefficients are then null, never a huge slope;
 *   - one dose, or no tube / every tube responding: the same, with its own `stop`.
 *   - a dose of 0 has no log10: on the log10 scale such rows are left out of the fit and listed in `excluded`.
 *
 * Units: the dose is in whatever unit the caller gives (SI for brink's own doses, m⁻³); the intercept depends on
 * it on the log10 scale (β₀ shifts by β₁ log10 of the unit's factor), the ED50 does not.
 *
 * @example
 *   fitQuantal([49, 53, 57], [20, 20, 20], [2, 10, 18], { link: 'logit' }).parameters.ed50.value // ≈ 53
 */
import { EngineInputError } from '../types.js';

export type QuantalLink = 'logit' | 'probit' | 'cloglog';
export type QuantalScale = 'log10' | 'linear';
export const QUANTAL_LINKS: QuantalLink[] = ['logit', 'probit', 'cloglog'];
export const QUANTAL_SCALES: QuantalScale[] = ['log10', 'linear'];
/** Most rows one quantal fit takes. */
export const QUANTAL_MAX_ROWS = 100_000;

export interface QuantalOptions {
  link?: QuantalLink;
  scale?: QuantalScale;
  /** the dose's unit as a string (reported with the ED50); default '' */
  doseUnit?: string;
  maxIterations?: number;
}

export interface QuantalParameter {
  /** null: no estimate (separation, one dose …: see `stop`) */
  value: number | null;
  sd: number | null;
  unit: string;
}

export interface Ed50 extends QuantalParameter {
  /** 95 % interval: the delta method on x (log10 dose back-transformed on the log10 scale) */
  interval: { lower: number; upper: number; level: 0.95; method: 'delta' | 'delta-log10' } | null;
  /** Fieller's 95 % interval, null when the slope is not significant at that level (the set is unbounded) */
  fieller: { lower: number; upper: number; level: 0.95 } | null;
  /** on the log10 scale: log10 ED50 and its delta-method sd (the numbers the interval is built from) */
  log10?: { value: number; sd: number } | null;
  /** separation: the doses between which the response switches (null at an open end) */
  bracket?: { from: number | null; to: number | null };
}

export type QuantalStop = 'converged' | 'max-iterations' | 'separation' | 'one-dose' | 'no-response' | 'all-responded' | 'no-data';

export interface QuantalPoint {
  dose: number;
  x: number;
  tubes: number;
  responded: number;
  /** fitted probability of a response; null without a fit */
  fitted: number | null;
  pearsonResidual: number | null;
  devianceResidual: number | null;
}

export interface QuantalFit {
  method: 'quantal';
  model: string;
  link: QuantalLink;
  scale: QuantalScale;
  parameters: { intercept: QuantalParameter; slope: QuantalParameter; ed50: Ed50 };
  /** covariance of (intercept, slope), inverse Fisher information; null without a fit */
  covariance: [[number, number], [number, number]] | null;
  deviance: number | null;
  nullDeviance: number | null;
  dof: number;
  /** dose groups used in the fit */
  points: number;
  tubes: number;
  responded: number;
  pearsonChiSquare: number | null;
  /** upper χ² tail of Pearson's X² on dof (null when dof = 0 or no fit) */
  pearsonP: number | null;
  devianceP: number | null;
  goodnessOfFit: { statistic: 'pearson-chi-square'; value: number; dof: number; p: number } | null;
  converged: boolean;
  stop: QuantalStop;
  iterations: number;
  separation: { kind: 'complete' | 'quasi-complete'; direction: 'increasing' | 'decreasing' } | null;
  /** rows left out of the fit (a zero dose on the log10 scale) */
  excluded: { dose: number; tubes: number; responded: number; reason: string }[];
  data: QuantalPoint[];
  notes: string[];
}

// ---------------------------------------------------------------- special functions

const LN_SQRT_2PI = 0.5 * Math.log(2 * Math.PI);

/** ln Γ(x), x > 0: Stirling's series with five terms for x ≥ 15, the recurrence Γ(x + 1) = x Γ(x) below (error ~1e-15). */
export function lnGamma(x: number): number {
  if (!(x > 0)) throw new EngineInputError('x', `lnGamma needs x > 0, got ${x}`);
  let shift = 0;
  while (x < 15) {
    shift += Math.log(x);
    x += 1;
  }
  const x2 = x * x;
  const series = 1 / (12 * x) - 1 / (360 * x * x2) + 1 / (1260 * x * x2 * x2) - 1 / (1680 * x * x2 * x2 * x2) + 1 / (1188 * x * x2 * x2 * x2 * x2);
  return (x - 0.5) * Math.log(x) - x + LN_SQRT_2PI + series - shift;
}

/**
 * The regularised incomplete gamma functions P(a, x) and Q(a, x) = 1 − P: the power series
 * P = x^a e^(−x)/Γ(a+1) Σ x^k/((a+1)…(a+k)) for x < a + 1, else Legendre's continued fraction for Q evaluated by
 * the modified Lentz method (both in Abramowitz & Stegun 6.5.29 and 6.5.31).
 */
export function gammaPQ(a: number, x: number): { p: number; q: number } {
  if (!(a > 0) || !(x >= 0)) throw new EngineInputError('x', `incomplete gamma needs a > 0 and x ≥ 0, got a = ${a}, x = ${x}`);
  if (x === 0) return { p: 0, q: 1 };
  if (x === Infinity) return { p: 1, q: 0 };
  const front = Math.exp(a * Math.log(x) - x - lnGamma(a));
  if (x < a + 1) {
    let term = 1 / a;
    let sum = term;
    for (let k = 1; k < 10_000; k++) {
      term *= x / (a + k);
      sum += term;
      if (Math.abs(term) < Math.abs(sum) * 1e-17) break;
    }
    const p = Math.min(1, front * sum);
    return { p, q: 1 - p };
  }
  // Q = front · 1/(x + 1 − a − 1·(1 − a)/(x + 3 − a − 2·(2 − a)/(x + 5 − a − …)))
  const tiny = 1e-300;
  let b = x + 1 - a;
  let c = 1 / tiny;
  let d = 1 / b;
  let h = d;
  for (let i = 1; i < 10_000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < 1e-16) break;
  }
  const q = Math.min(1, front * h);
  return { p: 1 - q, q };
}

/** Upper tail of the χ² distribution with k degrees of freedom: Q(k/2, X²/2). */
export function chiSquareUpper(x2: number, k: number): number {
  if (!(k > 0)) throw new EngineInputError('dof', `a χ² tail needs dof > 0, got ${k}`);
  return gammaPQ(k / 2, Math.max(0, x2) / 2).q;
}

/** The standard normal distribution function Φ(z) = ½ erfc(−z/√2), erfc(t) = Q(½, t²) for t ≥ 0 (A&S 7.1.2, 6.5.17). */
export function normalCdf(z: number): number {
  if (Number.isNaN(z)) return NaN;
  const t = z / Math.SQRT2;
  const erfcAbs = gammaPQ(0.5, t * t).q; // erfc(|t|)
  return z < 0 ? 0.5 * erfcAbs : 1 - 0.5 * erfcAbs;
}

export function normalPdf(z: number): number {
  return Math.exp(-0.5 * z * z - LN_SQRT_2PI);
}

/** Φ⁻¹(p) by Newton's method on Φ from a logistic guess (used for starting values). */
export function normalQuantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new EngineInputError('p', `a normal quantile needs 0 < p < 1, got ${p}`);
  let z = Math.log(p / (1 - p)) / 1.702;
  for (let i = 0; i < 60; i++) {
    const step = (normalCdf(z) - p) / Math.max(normalPdf(z), 1e-300);
    z -= Math.max(-1, Math.min(1, step));
    if (Math.abs(step) < 1e-15 * Math.max(1, Math.abs(z))) break;
  }
  return z;
}

// ---------------------------------------------------------------- links

interface LinkFns {
  /** π and 1 − π (each computed directly, for precision in the tails) and dπ/dη */
  inverse(eta: number): { pi: number; piC: number; dpi: number };
  g(pi: number): number;
}

const LINKS: Record<QuantalLink, LinkFns> = {
  logit: {
    inverse(eta) {
      const pi = 1 / (1 + Math.exp(-eta));
      const piC = 1 / (1 + Math.exp(eta));
      return { pi, piC, dpi: pi * piC };
    },
    g: (p) => Math.log(p / (1 - p)),
  },
  probit: {
    inverse(eta) {
      return { pi: normalCdf(eta), piC: normalCdf(-eta), dpi: normalPdf(eta) };
    },
    g: (p) => normalQuantile(p),
  },
  cloglog: {
    inverse(eta) {
      const e = Math.exp(eta);
      return { pi: -Math.expm1(-e), piC: Math.exp(-e), dpi: e * Math.exp(-e) };
    },
    g: (p) => Math.log(-Math.log1p(-p)),
  },
};

/** g(½) of each link: the linear predictor at the ED50. */
export const LINK_AT_HALF: Record<QuantalLink, number> = { logit: 0, probit: 0, cloglog: Math.log(Math.LN2) };

/** The fitted probability of a link at a linear predictor η (for the tests and the callers' curves). */
export function quantalProbability(link: QuantalLink, eta: number): number {
  return LINKS[link].inverse(eta).pi;
}

const EPS = 2.220446049250313e-16;

/** y ln(y/m), 0 at y = 0. */
const ylog = (y: number, m: number) => (y === 0 ? 0 : y * Math.log(y / m));

/** Deviance contribution of one group with fitted π (and 1 − π). */
function devianceTerm(y: number, n: number, pi: number, piC: number): number {
  return 2 * (ylog(y, n * Math.max(pi, EPS)) + ylog(n - y, n * Math.max(piC, EPS)));
}

// ---------------------------------------------------------------- the fit

interface Group {
  dose: number;
  x: number;
  n: number;
  y: number;
}

/** Separation of grouped binary data sorted by x (McCullagh & Nelder: the MLE does not exist when the responses split cleanly). */
function separationOf(gs: Group[]): { kind: 'complete' | 'quasi-complete'; direction: 'increasing' | 'decreasing'; from: number | null; to: number | null } | null {
  const k = gs.length;
  const test = (zero: (g: Group) => boolean, full: (g: Group) => boolean, direction: 'increasing' | 'decreasing') => {
    let last = -1; // last index of the leading run of "zero" groups
    while (last + 1 < k && zero(gs[last + 1]!)) last++;
    let first = k; // first index of the trailing run of "full" groups
    while (first - 1 >= 0 && full(gs[first - 1]!)) first--;
    if (first <= last + 1) return { kind: 'complete' as const, direction, from: last >= 0 ? gs[last]!.dose : null, to: first < k ? gs[first]!.dose : null };
    if (first === last + 2) return { kind: 'quasi-complete' as const, direction, from: last >= 0 ? gs[last]!.dose : null, to: first < k ? gs[first]!.dose : null };
    return null;
  };
  return test((g) => g.y === 0, (g) => g.y === g.n, 'increasing') ?? test((g) => g.y === g.n, (g) => g.y === 0, 'decreasing');
}

/**
 * Fit a quantal dose–response curve (see the header). `dose`, `tubes`, `responded` are rows (equal doses are
 * pooled); tubes are positive integers, 0 ≤ responded ≤ tubes, doses ≥ 0 (> 0 to enter a log10 fit).
 * @throws EngineInputError for malformed rows (index in the path)
 */
export function fitQuantal(dose: number[], tubes: number[], responded: number[], options: QuantalOptions = {}): QuantalFit {
  const link = options.link ?? 'logit';
  const scale = options.scale ?? 'log10';
  const unit = options.doseUnit ?? '';
  const maxIterations = options.maxIterations ?? 100;
  if (!LINKS[link]) throw new EngineInputError('link', `expected one of ${QUANTAL_LINKS.join(', ')}, got ${String(link)}`);
  if (scale !== 'log10' && scale !== 'linear') throw new EngineInputError('scale', `expected log10 or linear, got ${String(scale)}`);
  if (dose.length !== tubes.length || dose.length !== responded.length) throw new EngineInputError('data', `dose, tubes and responded need the same length (${dose.length}, ${tubes.length}, ${responded.length})`);
  if (dose.length > QUANTAL_MAX_ROWS) throw new EngineInputError('data', `at most ${QUANTAL_MAX_ROWS} rows, got ${dose.length}`);
  dose.forEach((d, i) => {
    if (!Number.isFinite(d) || d < 0) throw new EngineInputError(`dose[${i}]`, `a dose must be finite and ≥ 0, got ${d}`);
    const n = tubes[i]!;
    const y = responded[i]!;
    if (!Number.isInteger(n) || n < 1) throw new EngineInputError(`tubes[${i}]`, `the number of tubes must be a whole number ≥ 1, got ${n}`);
    if (!Number.isInteger(y) || y < 0 || y > n) throw new EngineInputError(`responded[${i}]`, `the number that responded must be a whole number from 0 to the tubes (${n}), got ${y}`);
  });

  // Pool equal doses; leave zero doses out of a log10 fit.
  const pooled = new Map<number, { n: number; y: number }>();
  dose.forEach((d, i) => {
    const p = pooled.get(d) ?? { n: 0, y: 0 };
    p.n += tubes[i]!;
    p.y += responded[i]!;
    pooled.set(d, p);
  });
  const excluded: QuantalFit['excluded'] = [];
  const groups: Group[] = [];
  for (const [d, p] of [...pooled].sort((a, b) => a[0] - b[0])) {
    if (scale === 'log10' && d === 0) {
      excluded.push({ dose: 0, tubes: p.n, responded: p.y, reason: 'dose 0 has no log10: left out of the fit (fit on --scale linear to include it)' });
      continue;
    }
    groups.push({ dose: d, x: scale === 'log10' ? Math.log10(d) : d, n: p.n, y: p.y });
  }
  const notes: string[] = [];
  if (excluded.length > 0) notes.push(`left out of the log10 fit: dose 0 (${excluded[0]!.tubes} tubes, ${excluded[0]!.responded} responded); a response there is a background the model does not carry.`);
  const nTubes = groups.reduce((a, g) => a + g.n, 0);
  const nResp = groups.reduce((a, g) => a + g.y, 0);
  const doseUnitLabel = unit === '' ? '(dose unit)' : unit;
  // four figures, in powers of ten beyond 10⁵ or below 10⁻³ (a dose in m⁻³ is 10¹⁴, not fifteen digits)
  const four = (d: number) => (d !== 0 && (Math.abs(d) >= 1e5 || Math.abs(d) < 1e-3) ? d.toExponential(3) : `${Number(d.toPrecision(4))}`);
  const at = (d: number) => (unit === '' ? four(d) : `${four(d)} ${unit}`);
  const slopeUnit = scale === 'log10' ? 'per decade of dose' : doseUnitLabel.startsWith('1/') && !/[ *]/.test(doseUnitLabel.slice(2)) ? doseUnitLabel.slice(2) : /[ /*]/.test(doseUnitLabel) ? `1/(${doseUnitLabel})` : `1/${doseUnitLabel}`;

  const noFit = (stop: QuantalStop, message: string, separation: QuantalFit['separation'] = null, bracket?: { from: number | null; to: number | null }): QuantalFit => ({
    method: 'quantal',
    model: `${link} on ${scale} dose`,
    link,
    scale,
    parameters: {
      intercept: { value: null, sd: null, unit: '1' },
      slope: { value: null, sd: null, unit: slopeUnit },
      ed50: { value: null, sd: null, unit, interval: null, fieller: null, ...(bracket ? { bracket } : {}) },
    },
    covariance: null,
    deviance: null,
    nullDeviance: null,
    dof: Math.max(0, groups.length - 2),
    points: groups.length,
    tubes: nTubes,
    responded: nResp,
    pearsonChiSquare: null,
    pearsonP: null,
    devianceP: null,
    goodnessOfFit: null,
    converged: false,
    stop,
    iterations: 0,
    separation,
    excluded,
    data: groups.map((g) => ({ dose: g.dose, x: g.x, tubes: g.n, responded: g.y, fitted: null, pearsonResidual: null, devianceResidual: null })),
    notes: [message, ...notes],
  });

  if (groups.length === 0) return noFit('no-data', 'no dose to fit');
  if (nResp === 0) return noFit('no-response', `no tube responded (${nTubes} tubes): the data say the ED50 lies above the highest dose (${at(groups[groups.length - 1]!.dose)}), not where`, null, { from: groups[groups.length - 1]!.dose, to: null });
  if (nResp === nTubes) return noFit('all-responded', `every tube responded (${nTubes} tubes): the data say the ED50 lies below the lowest dose (${at(groups[0]!.dose)}), not where`, null, { from: null, to: groups[0]!.dose });
  if (groups.length === 1) return noFit('one-dose', `one dose only (${at(groups[0]!.dose)}): a slope needs at least two`);
  const sep = separationOf(groups);
  if (sep) {
    const word = sep.direction === 'increasing' ? 'none responded below and all above' : 'all responded below and none above';
    return noFit(
      'separation',
      `${sep.kind} separation: ${word}${sep.kind === 'quasi-complete' ? ' (one dose between is mixed)' : ''}, so the likelihood has no maximum (the slope would run to infinity); the switch lies between ${sep.from === null ? 'below the lowest dose' : at(sep.from)} and ${sep.to === null ? 'above the highest dose' : at(sep.to)}. Add doses between them.`,
      { kind: sep.kind, direction: sep.direction },
      { from: sep.from, to: sep.to },
    );
  }

  // Centre and scale x for the iteration.
  const k = groups.length;
  const mean = groups.reduce((a, g) => a + g.x, 0) / k;
  const sdx = Math.sqrt(groups.reduce((a, g) => a + (g.x - mean) ** 2, 0) / k) || 1;
  const u = groups.map((g) => (g.x - mean) / sdx);
  const L = LINKS[link];
  const devianceAt = (b0: number, b1: number) => {
    let D = 0;
    for (let i = 0; i < k; i++) {
      const { pi, piC } = L.inverse(b0 + b1 * u[i]!);
      D += devianceTerm(groups[i]!.y, groups[i]!.n, pi, piC);
    }
    return D;
  };
  /** One scoring step from η (weights and working response at η): the weighted least-squares solution. */
  const scoring = (eta: number[]) => {
    let s00 = 0;
    let s01 = 0;
    let s11 = 0;
    let r0 = 0;
    let r1 = 0;
    for (let i = 0; i < k; i++) {
      const g = groups[i]!;
      const { pi, piC, dpi } = L.inverse(eta[i]!);
      const p = Math.min(Math.max(pi, EPS), 1 - EPS);
      const pc = Math.max(piC, EPS);
      const d = Math.max(dpi, EPS);
      const w = (g.n * d * d) / (p * pc);
      const z = eta[i]! + (g.y / g.n - pi) / d;
      s00 += w;
      s01 += w * u[i]!;
      s11 += w * u[i]! * u[i]!;
      r0 += w * z;
      r1 += w * z * u[i]!;
    }
    const det = s00 * s11 - s01 * s01;
    return { b0: (s11 * r0 - s01 * r1) / det, b1: (s00 * r1 - s01 * r0) / det, info: [s00, s01, s11] as const };
  };
  // Start (McCullagh & Nelder §4.3: μ₀ = (y + ½)/(n + 1), η₀ = g(μ₀)), then iterate.
  let { b0, b1 } = scoring(groups.map((g) => L.g((g.y + 0.5) / (g.n + 1))));
  let D = devianceAt(b0, b1);
  let iterations = 1;
  let converged = false;
  for (; iterations < maxIterations; iterations++) {
    const next = scoring(u.map((x) => b0 + b1 * x));
    let [c0, c1] = [next.b0, next.b1];
    let Dn = devianceAt(c0, c1);
    for (let h = 0; h < 30 && !(Dn <= D * (1 + 1e-12) + 1e-300); h++) {
      c0 = (c0 + b0) / 2;
      c1 = (c1 + b1) / 2;
      Dn = devianceAt(c0, c1);
    }
    const change = Math.max(Math.abs(c0 - b0), Math.abs(c1 - b1)) / Math.max(1, Math.abs(c0), Math.abs(c1));
    const fall = D - Dn;
    [b0, b1, D] = [c0, c1, Math.min(D, Dn)];
    if (change < 1e-10 && fall <= 1e-12 * Math.max(D, 1e-300) + 1e-14) {
      converged = true;
      break;
    }
  }
  // Information at the estimate (expected, which for the logit link is also the observed).
  const [s00, s01, s11] = scoring(u.map((x) => b0 + b1 * x)).info;
  const det = s00 * s11 - s01 * s01;
  const vu = [s11 / det, -s01 / det, s00 / det]; // cov of (b0, b1) in scaled x
  // Back to x: β₁ = b1/s, β₀ = b0 − b1 m/s; J = [[1, −m/s], [0, 1/s]].
  const beta1 = b1 / sdx;
  const beta0 = b0 - (b1 * mean) / sdx;
  const a = -mean / sdx;
  const c = 1 / sdx;
  const V00 = vu[0]! + 2 * a * vu[1]! + a * a * vu[2]!;
  const V01 = c * vu[1]! + a * c * vu[2]!;
  const V11 = c * c * vu[2]!;

  // Goodness of fit and points.
  let pearson = 0;
  const data: QuantalPoint[] = groups.map((g, i) => {
    const { pi, piC } = L.inverse(b0 + b1 * u[i]!);
    const mu = g.n * pi;
    const pr = (g.y - mu) / Math.sqrt(g.n * Math.max(pi, EPS) * Math.max(piC, EPS));
    pearson += pr * pr;
    const dr = Math.sign(g.y - mu) * Math.sqrt(Math.max(0, devianceTerm(g.y, g.n, pi, piC)));
    return { dose: g.dose, x: g.x, tubes: g.n, responded: g.y, fitted: pi, pearsonResidual: pr, devianceResidual: dr };
  });
  const pHat = nResp / nTubes;
  const nullDeviance = groups.reduce((s, g) => s + devianceTerm(g.y, g.n, pHat, 1 - pHat), 0);
  const dof = k - 2;
  const pearsonP = dof > 0 ? chiSquareUpper(pearson, dof) : null;
  const devianceP = dof > 0 ? chiSquareUpper(D, dof) : null;

  // ED50 by the delta method, and Fieller's interval.
  const Z = 1.959963984540054;
  const g50 = LINK_AT_HALF[link];
  const x50 = (g50 - beta0) / beta1;
  const varX50 = (V00 + 2 * x50 * V01 + x50 * x50 * V11) / (beta1 * beta1);
  const sdX50 = Math.sqrt(Math.max(0, varX50));
  let fieller: Ed50['fieller'] = null;
  {
    const cc = beta0 - g50;
    const qa = beta1 * beta1 - Z * Z * V11;
    const qb = 2 * (beta1 * cc - Z * Z * V01);
    const qc = cc * cc - Z * Z * V00;
    const disc = qb * qb - 4 * qa * qc;
    if (qa > 0 && disc >= 0) {
      const r1 = (-qb - Math.sqrt(disc)) / (2 * qa);
      const r2 = (-qb + Math.sqrt(disc)) / (2 * qa);
      const [lo, hi] = [Math.min(r1, r2), Math.max(r1, r2)];
      fieller = scale === 'log10' ? { lower: 10 ** lo, upper: 10 ** hi, level: 0.95 } : { lower: lo, upper: hi, level: 0.95 };
    }
  }
  const ed50: Ed50 =
    scale === 'log10'
      ? {
          value: 10 ** x50,
          sd: Math.LN10 * 10 ** x50 * sdX50,
          unit,
          interval: { lower: 10 ** (x50 - Z * sdX50), upper: 10 ** (x50 + Z * sdX50), level: 0.95, method: 'delta-log10' },
          fieller,
          log10: { value: x50, sd: sdX50 },
        }
      : { value: x50, sd: sdX50, unit, interval: { lower: x50 - Z * sdX50, upper: x50 + Z * sdX50, level: 0.95, method: 'delta' }, fieller };
  if (!converged) notes.push(`not converged after ${iterations} iterations: the estimates are the last iterate, not a maximum`);
  if (fieller === null) notes.push('the slope is not significant at the 95 % level (β₁² ≤ 1.96² var β₁): Fieller’s interval for the ED50 is unbounded');
  const lo = groups[0]!.dose;
  const hi = groups[k - 1]!.dose;
  if (ed50.value !== null && (ed50.value < lo || ed50.value > hi)) notes.push(`the ED50 lies outside the doses tested (${at(lo)} to ${at(hi)}): an extrapolation`);
  if (pearsonP !== null && pearsonP < 0.05) {
    const h = pearson / dof;
    notes.push(`Pearson X² = ${pearson.toPrecision(4)} on ${dof} dof (p = ${pearsonP.toPrecision(2)}): the tubes scatter more than a binomial allows (heterogeneity factor ${h.toPrecision(3)}); the standard errors assume no such excess and would be ×${Math.sqrt(h).toPrecision(3)} if it is taken as overdispersion (not applied)`);
  }
  if (dof === 0) notes.push('two doses only: the curve passes through both, no degrees of freedom are left to judge the fit');
  return {
    method: 'quantal',
    model: `${link} on ${scale} dose`,
    link,
    scale,
    parameters: {
      intercept: { value: beta0, sd: Math.sqrt(V00), unit: '1' },
      slope: { value: beta1, sd: Math.sqrt(V11), unit: slopeUnit },
      ed50,
    },
    covariance: [
      [V00, V01],
      [V01, V11],
    ],
    deviance: Math.max(0, D), // a perfect fit can round to −1e-16
    nullDeviance,
    dof,
    points: k,
    tubes: nTubes,
    responded: nResp,
    pearsonChiSquare: pearson,
    pearsonP,
    devianceP,
    goodnessOfFit: pearsonP !== null ? { statistic: 'pearson-chi-square', value: pearson, dof, p: pearsonP } : null,
    converged,
    stop: converged ? 'converged' : 'max-iterations',
    iterations,
    separation: null,
    excluded,
    data,
    notes,
  };
}
