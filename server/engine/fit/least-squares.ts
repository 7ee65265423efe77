/**
 * Nonlinear least squares by Levenberg–Marquardt: ordinary, weighted, or
 * generalised (a full covariance of the data).
 *
 * Minimises S(p) = ‖L⁻¹ (y − f(x; p))‖² over the free parameters, where L is
 * the Cholesky factor of the data covariance C = L Lᵀ (generalised least
 * squares), or L = diag(1/√w) for weights, or the identity. The whitened
 * residuals z = L⁻¹ r are independent with unit variance when C is right, so
 * the ordinary machinery applies to them (Bates & Watts 1988, ch. 1 — see
 * docs/references.md).
 *
 * Method: Marquardt's diagonal scaling (A + λ diag A) δ = Jᵀz with A = JᵀJ on
 * the whitened Jacobian, parameters scaled by their starting values, the
 * Jacobian by central differences (one-sided next to a bound). Box bounds are
 * kept by projection: a parameter sitting on a bound whose gradient points out
 * of the box is held for that step, the step of the others is clipped into
 * the box. A step is accepted only if it lowers S.
 *
 * Stopping (the result says which, `stop`):
 *   converged       stationarity was shown: the scale-free gradient test
 *                   max_k |J_kᵀ z| / (‖J_k‖ ‖z‖) ≤ 1e-8 over the parameters
 *                   not held at a bound (the MINPACK "gtol" criterion), or
 *                   no step lowers S (or the last step was too small to
 *                   matter) and the Gauss–Newton step predicts a
 *                   decrease of at most 10⁻¹⁰ S (rounding in a badly
 *                   conditioned covariance keeps the gradient test from
 *                   reaching 10⁻⁸), or a fit exact to rounding
 *   small-step      an accepted step changed p by ≤ 10⁻¹² (relative) or S by
 *                   ≤ 10⁻¹⁵ S, and at the new point neither the gradient test
 *                   nor the rounding-level predicted decrease holds (a step
 *                   that small ends the fit but proves no optimum: never
 *                   reported as converged; when either test holds there, the
 *                   stop is converged)
 *   no-progress     no step lowers S although the gradient test fails, or
 *                   no derivative could be taken (never reported as converged:
 *                   a fit that accepted no step and showed no vanishing
 *                   gradient is not an optimum)
 *   max-iterations  the iteration bound was reached first
 *   no-free-parameters  nothing to fit
 *
 * Standard errors are those of the linearised model at the optimum: with
 * `errorScale: 'residual'` (default) cov = s² (JᵀJ)⁻¹, s² = S/(n − p) — the
 * weights or covariance are relative and the scale comes from the residuals;
 * with `'known'` cov = (JᵀJ)⁻¹ — the covariance is absolute (as when it was
 * estimated from the data). A parameter that ends on a bound has no standard
 * error (`null`, `atBound` says which bound); the covariance of the others is
 * then conditional on it.
 */
import { EngineInputError } from '../types.js';
import { solveInPlace } from '../linalg/dense.js';

/** Most data points one fit accepts (each iteration is O(n p²), a covariance O(n²)). */
export const LSQ_MAX_POINTS = 20_000;
/** Most points a fit with a full covariance accepts (the covariance is n × n). */
export const LSQ_MAX_COVARIANCE_POINTS = 500;
/** Default and largest iteration bound. */
export const LSQ_DEFAULT_ITERATIONS = 200;
export const LSQ_MAX_ITERATIONS = 5000;

export type LsqStop = 'converged' | 'small-step' | 'no-progress' | 'max-iterations' | 'no-free-parameters';
export type LsqWeighting = 'gls-covariance' | 'weighted' | 'unweighted';

export interface LsqProblem {
  /** model value at x for parameters p (all parameters, free and fixed) */
  model: (x: number, p: number[]) => number;
  x: number[];
  y: number[];
  /** relative weights (default 1); 1/sd² when standard deviations of y are known */
  weights?: number[];
  /** covariance matrix of y (n × n, symmetric positive definite): generalised least squares */
  covariance?: number[][];
  /** 'residual' (default): weights/covariance relative, scaled by s²; 'known': absolute */
  errorScale?: 'residual' | 'known';
  start: number[];
  /** indices of parameters held fixed at their start value */
  fixed?: number[];
  /** box bounds per parameter (undefined or ±Infinity: none) */
  lower?: (number | undefined)[];
  upper?: (number | undefined)[];
  /** parameter vectors outside the model's domain (e.g. a zero rotation time) */
  valid?: (p: number[]) => boolean;
  maxIterations?: number;
}

export interface LsqResult {
  parameters: number[];
  /** standard errors: 0 for fixed parameters, null for a parameter on a bound */
  standardErrors: (number | null)[];
  /** per parameter: the bound it ended on, or null */
  atBound: ('lower' | 'upper' | null)[];
  /** covariance of the estimated parameters in the order of `estimated` */
  covariance: number[][];
  /** indices of the fitted parameters (not fixed) */
  free: number[];
  /** indices of the free parameters not on a bound: those with a covariance */
  estimated: number[];
  /** y − f, in the data's units */
  residuals: number[];
  /** S = Σ z², the whitened residual sum of squares */
  weightedRss: number;
  /** √(S/(n − p)) */
  residualStandardError: number;
  dof: number;
  iterations: number;
  /** number of accepted steps */
  acceptedSteps: number;
  converged: boolean;
  stop: LsqStop;
  weighting: LsqWeighting;
}

/** Solve A X = B for m×m A and m×r B given as rows (A and B untouched); null when A is singular. */
function solve(A: number[][], B: number[][]): number[][] | null {
  const m = A.length;
  const r = B[0]?.length ?? 0;
  const a = Float64Array.from(A.flat());
  const x = Float64Array.from(B.flat());
  if (!solveInPlace(a, m, x, r)) return null;
  return Array.from({ length: m }, (_, i) => Array.from(x.subarray(i * r, i * r + r)));
}

/** JᵀJ of a Jacobian given as rows, over the columns `cols`. */
function normalMatrix(J: number[][], cols: number[]): number[][] {
  return cols.map((a) => cols.map((b) => J.reduce((acc, row) => acc + row[a]! * row[b]!, 0)));
}

/**
 * Cholesky factor L (lower, rows) of a symmetric positive definite matrix, C = L Lᵀ
 * (the textbook column-by-column recurrence); null when C is not positive definite.
 */
export function cholesky(C: number[][]): number[][] | null {
  const n = C.length;
  const L = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  for (let j = 0; j < n; j++) {
    let d = C[j]![j]!;
    for (let k = 0; k < j; k++) d -= L[j]![k]! ** 2;
    if (!(d > 0) || !Number.isFinite(d)) return null;
    const ljj = Math.sqrt(d);
    L[j]![j] = ljj;
    for (let i = j + 1; i < n; i++) {
      let s = C[i]![j]!;
      for (let k = 0; k < j; k++) s -= L[i]![k]! * L[j]![k]!;
      L[i]![j] = s / ljj;
    }
  }
  return L;
}

/** z = L⁻¹ v by forward substitution. */
function forward(L: number[][], v: number[]): number[] {
  const z = new Array<number>(v.length);
  for (let i = 0; i < v.length; i++) {
    let s = v[i]!;
    const row = L[i]!;
    for (let k = 0; k < i; k++) s -= row[k]! * z[k]!;
    z[i] = s / row[i]!;
  }
  return z;
}

/**
 * The whitening map v ↦ L⁻¹ v of a data covariance (Cholesky), of weights (√w v) or the identity.
 * @throws EngineInputError when the covariance is not n × n positive definite or too large
 */
export function whitener(n: number, weights?: number[], covariance?: number[][]): { whiten: (v: number[]) => number[]; weighting: LsqWeighting } {
  if (covariance) {
    if (n > LSQ_MAX_COVARIANCE_POINTS) throw new EngineInputError('data', `a fit with a full covariance takes at most ${LSQ_MAX_COVARIANCE_POINTS} points, got ${n}`);
    if (covariance.length !== n || covariance.some((row) => row.length !== n)) throw new EngineInputError('covariance', `expected a ${n} × ${n} matrix`);
    const L = cholesky(covariance);
    if (!L) throw new EngineInputError('covariance', 'the covariance of the data is not positive definite');
    return { whiten: (v) => forward(L, v), weighting: 'gls-covariance' };
  }
  if (weights) {
    const sw = weights.map((w) => Math.sqrt(w));
    return { whiten: (v) => v.map((e, i) => e * sw[i]!), weighting: 'weighted' };
  }
  return { whiten: (v) => v, weighting: 'unweighted' };
}

/** Fit; see the file header for the method, the stopping rules and what the standard errors mean. */
export function leastSquares(pr: LsqProblem): LsqResult {
  const n = pr.x.length;
  if (n > LSQ_MAX_POINTS) throw new EngineInputError('data', `a fit takes at most ${LSQ_MAX_POINTS} points, got ${n}`);
  if (pr.y.length !== n) throw new EngineInputError('data', `x has ${n} values, y ${pr.y.length}`);
  const maxIt = pr.maxIterations ?? LSQ_DEFAULT_ITERATIONS;
  if (!(maxIt >= 1 && maxIt <= LSQ_MAX_ITERATIONS)) throw new EngineInputError('maxIterations', `between 1 and ${LSQ_MAX_ITERATIONS}, got ${maxIt}`);
  const { whiten, weighting } = whitener(n, pr.weights, pr.covariance);
  const fixed = new Set(pr.fixed ?? []);
  const free = pr.start.map((_, i) => i).filter((i) => !fixed.has(i));
  const m = free.length;
  const scale = pr.start.map((s) => (s !== 0 ? Math.abs(s) : 1));
  const valid = pr.valid ?? (() => true);
  const lo = free.map((i) => (pr.lower?.[i] ?? -Infinity) / scale[i]!);
  const hi = free.map((i) => (pr.upper?.[i] ?? Infinity) / scale[i]!);
  const full = (q: number[]) => {
    const p = [...pr.start];
    free.forEach((i, k) => (p[i] = q[k]! * scale[i]!));
    return p;
  };
  const clip = (q: number[]) => q.map((v, k) => Math.min(hi[k]!, Math.max(lo[k]!, v)));
  const raw = (p: number[]) => pr.x.map((x, i) => pr.y[i]! - pr.model(x, p));
  const cost = (p: number[]) => whiten(raw(p)).reduce((a, z) => a + z * z, 0);
  const inBox = (q: number[]) => q.every((v, k) => v >= lo[k]! && v <= hi[k]!);
  // J_ik = ∂(L⁻¹f)_i/∂q_k, central differences, one-sided where a neighbour leaves the box or the domain
  const jacobian = (q: number[]) => {
    const cols: number[][] = [];
    const p0 = full(q);
    const f0 = pr.x.map((x) => pr.model(x, p0));
    for (let k = 0; k < m; k++) {
      const h = 1e-6 * Math.max(Math.abs(q[k]!), 1e-3);
      const qp = [...q];
      const qm = [...q];
      qp[k]! += h;
      qm[k]! -= h;
      const pp = full(qp);
      const pm = full(qm);
      const okP = inBox(qp) && valid(pp);
      const okM = inBox(qm) && valid(pm);
      const fp = okP ? pr.x.map((x) => pr.model(x, pp)) : f0;
      const fm = okM ? pr.x.map((x) => pr.model(x, pm)) : f0;
      const span = (okP ? h : 0) + (okM ? h : 0);
      const d = span > 0 ? fp.map((v, i) => (v - fm[i]!) / span) : f0.map(() => 0);
      cols.push(whiten(d));
    }
    return pr.x.map((_, i) => cols.map((c) => c[i]!));
  };
  let q = clip(free.map((i) => pr.start[i]! / scale[i]!));
  let p = full(q);
  if (!valid(p)) throw new EngineInputError('start', 'the starting parameters lie outside the model domain');
  let S = cost(p);
  const yScale = whiten(pr.y).reduce((a, z) => a + z * z, 0);
  let lambda = 1e-3;
  let stop: LsqStop = m === 0 ? 'no-free-parameters' : 'max-iterations';
  let it = 0;
  let accepted = 0;
  // the last accepted step moved p or S by no more than rounding: stop at the next gradient test either way
  let tinyStep = false;
  for (; it < maxIt && m > 0; it++) {
    const J = jacobian(q);
    const z = whiten(raw(p));
    const g = Array.from({ length: m }, (_, k) => J.reduce((acc, row, i) => acc + row[k]! * z[i]!, 0));
    // parameters held on a bound this step: the descent direction (+g) points out of the box
    const held = q.map((v, k) => (v <= lo[k]! && g[k]! <= 0) || (v >= hi[k]! && g[k]! >= 0));
    const act = q.map((_, k) => k).filter((k) => !held[k]);
    const zNorm = Math.sqrt(S);
    const gradientTest = act.every((k) => {
      const cn = Math.sqrt(J.reduce((a, row) => a + row[k]! ** 2, 0));
      // a zero column (no derivative could be taken, or the parameter does nothing) proves nothing
      return cn > 0 && Math.abs(g[k]!) <= 1e-8 * cn * zNorm;
    });
    if (S <= 1e-28 * yScale || gradientTest || act.length === 0) {
      stop = 'converged';
      break;
    }
    const A = normalMatrix(J, act);
    const ga = act.map((k) => g[k]!);
    // Gauss–Newton predicted decrease of S, gᵀδ with (A + 10⁻¹² diag A) δ = g: rounding level means done
    const dGn = solve(A.map((row, a) => row.map((v, b) => (a === b ? v * (1 + 1e-12) + 1e-300 : v))), ga.map((v) => [v]));
    const predicted = dGn ? dGn.reduce((acc, row, a) => acc + row[0]! * ga[a]!, 0) : Infinity;
    const differentiable = act.every((k) => J.some((row) => row[k] !== 0));
    const roundingLevel = differentiable && predicted <= 1e-10 * S + 1e-28 * yScale;
    if (tinyStep) {
      // the last step was too small to matter: an optimum only if the gradient test (above) or the
      // rounding-level predicted decrease shows it; otherwise stop and say so
      stop = roundingLevel ? 'converged' : 'small-step';
      break;
    }
    let stepped = false;
    while (lambda < 1e20) {
      const Al = A.map((row, a) => row.map((v, b) => (a === b ? v * (1 + lambda) + 1e-300 : v)));
      const d = solve(Al, ga.map((v) => [v]))?.map((row) => row[0]!);
      if (!d) {
        lambda *= 4;
        continue;
      }
      const qn = [...q];
      act.forEach((k, a) => (qn[k] = q[k]! + d[a]!));
      const qc = clip(qn);
      const pn = full(qc);
      const Sn = valid(pn) ? cost(pn) : Infinity;
      // a step that does not move the parameters is no step
      if (Sn <= S && qc.some((v, k) => v !== q[k])) {
        const small = qc.every((v, k) => Math.abs(v - q[k]!) <= 1e-12 * (Math.abs(v) + 1e-12));
        const flat = S - Sn <= 1e-15 * S;
        q = qc;
        p = pn;
        S = Sn;
        lambda = Math.max(lambda / 3, 1e-12);
        accepted++;
        stepped = true;
        tinyStep = small || flat;
        break;
      }
      lambda *= 4;
    }
    if (!stepped) {
      // no step lowers S: converged only if none could by more than rounding
      stop = roundingLevel ? 'converged' : 'no-progress';
      break;
    }
  }
  const atBound = pr.start.map((): 'lower' | 'upper' | null => null);
  free.forEach((i, k) => {
    const tol = 1e-12 * Math.max(1, Math.abs(q[k]!));
    if (Number.isFinite(lo[k]!) && q[k]! - lo[k]! <= tol) atBound[i] = 'lower';
    else if (Number.isFinite(hi[k]!) && hi[k]! - q[k]! <= tol) atBound[i] = 'upper';
    // a parameter on its bound is reported as the bound itself, not a rounding residue beside it
    if (atBound[i] === 'lower') q[k] = lo[k]!;
    else if (atBound[i] === 'upper') q[k] = hi[k]!;
  });
  p = full(q);
  S = cost(p);
  const estimatedK = free.map((_, k) => k).filter((k) => atBound[free[k]!] === null);
  const estimated = estimatedK.map((k) => free[k]!);
  const dof = n - estimated.length;
  const residuals = raw(p);
  const s2 = dof > 0 ? S / dof : Number.NaN;
  const factor = pr.errorScale === 'known' ? 1 : s2;
  // covariance in natural units: J in scaled q, so cov_p = diag(scale) cov_q diag(scale)
  const J = m > 0 ? jacobian(q) : [];
  const e = estimatedK.length;
  const identity = Array.from({ length: e }, (_, a) => Array.from({ length: e }, (_, b) => (a === b ? 1 : 0)));
  const inv = e > 0 ? solve(normalMatrix(J, estimatedK), identity) : [];
  const covariance = Array.from({ length: e }, (_, a) =>
    Array.from({ length: e }, (_, b) => (inv ? inv[a]![b]! * factor * scale[estimated[a]!]! * scale[estimated[b]!]! : Number.NaN)),
  );
  const standardErrors: (number | null)[] = pr.start.map(() => 0);
  free.forEach((i) => (standardErrors[i] = null));
  estimated.forEach((i, a) => {
    const v = covariance[a]![a]!;
    standardErrors[i] = Number.isFinite(v) ? Math.sqrt(Math.max(0, v)) : null;
  });
  return {
    parameters: p,
    standardErrors,
    atBound,
    covariance,
    free,
    estimated,
    residuals,
    weightedRss: S,
    residualStandardError: Math.sqrt(s2),
    dof,
    iterations: it,
    acceptedSteps: accepted,
    converged: stop === 'converged' || stop === 'no-free-parameters',
    stop,
    weighting,
  };
}
