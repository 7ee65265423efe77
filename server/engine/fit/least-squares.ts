/**
 * Weighted nonlinear least squares by Levenberg–Marquardt.
 *
 * Minimises S(p) = Σ_i w_i (y_i − f(x_i; p))² over the free parameters, with
 * Marquardt's diagonal scaling (A + λ diag A) δ = Jᵀ r, a step accepted only if
 * it lowers S and keeps the parameters valid. Parameters are scaled by their
 * starting values internally; the Jacobian is by central differences.
 *
 * Standard errors are those of the linearised model at the optimum, as in
 * nonlinear regression texts (Bates & Watts 1988): cov = s² (Jᵀ W J)⁻¹ with
 * s² = S/(n − p) — the weights are relative, the scale comes from the residuals.
 * Non-convergence is reported (`converged: false`), not thrown.
 */
import { solveInPlace } from '../linalg/dense.js';

export interface LsqProblem {
  /** model value at x for parameters p (all parameters, free and fixed) */
  model: (x: number, p: number[]) => number;
  x: number[];
  y: number[];
  /** relative weights (default 1); 1/sd² when standard deviations of y are known */
  weights?: number[];
  start: number[];
  /** indices of parameters held fixed at their start value */
  fixed?: number[];
  /** parameter vectors outside the model's domain (e.g. a negative diffusivity) */
  valid?: (p: number[]) => boolean;
  maxIterations?: number;
}

export interface LsqResult {
  parameters: number[];
  /** standard errors (0 for fixed parameters) */
  standardErrors: number[];
  /** covariance of the free parameters in the order of `free` */
  covariance: number[][];
  free: number[];
  residuals: number[];
  /** Σ w r² */
  weightedRss: number;
  /** √(S/(n − p)) */
  residualStandardError: number;
  dof: number;
  iterations: number;
  converged: boolean;
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

/** JᵀJ of a Jacobian given as rows. */
function normalMatrix(J: number[][], m: number): number[][] {
  return Array.from({ length: m }, (_, a) => Array.from({ length: m }, (_, b) => J.reduce((acc, row) => acc + row[a]! * row[b]!, 0)));
}

/** Fit; see the file header for the method and what the standard errors mean. */
export function leastSquares(pr: LsqProblem): LsqResult {
  const n = pr.x.length;
  const w = pr.weights ?? pr.x.map(() => 1);
  const fixed = new Set(pr.fixed ?? []);
  const free = pr.start.map((_, i) => i).filter((i) => !fixed.has(i));
  const scale = pr.start.map((s) => (s !== 0 ? Math.abs(s) : 1));
  const valid = pr.valid ?? (() => true);
  const full = (q: number[]) => {
    const p = [...pr.start];
    free.forEach((i, k) => (p[i] = q[k]! * scale[i]!));
    return p;
  };
  const cost = (p: number[]) => {
    let s = 0;
    for (let i = 0; i < n; i++) {
      const r = pr.y[i]! - pr.model(pr.x[i]!, p);
      s += w[i]! * r * r;
    }
    return s;
  };
  const jacobian = (q: number[]) => {
    // J_ik = √w_i ∂f_i/∂q_k, central differences
    const J = pr.x.map(() => new Array<number>(free.length).fill(0));
    free.forEach((_, k) => {
      const h = 1e-6 * Math.max(Math.abs(q[k]!), 1e-3);
      const qp = [...q];
      const qm = [...q];
      qp[k]! += h;
      qm[k]! -= h;
      const pp = full(qp);
      const pm = full(qm);
      for (let i = 0; i < n; i++) J[i]![k] = (Math.sqrt(w[i]!) * (pr.model(pr.x[i]!, pp) - pr.model(pr.x[i]!, pm))) / (2 * h);
    });
    return J;
  };
  let q = free.map((i) => pr.start[i]! / scale[i]!);
  let p = full(q);
  let S = cost(p);
  let lambda = 1e-3;
  let converged = free.length === 0;
  let it = 0;
  const maxIt = pr.maxIterations ?? 500;
  for (; it < maxIt && !converged; it++) {
    const J = jacobian(q);
    const r = pr.x.map((x, i) => Math.sqrt(w[i]!) * (pr.y[i]! - pr.model(x, p)));
    const m = free.length;
    const A = normalMatrix(J, m);
    const g = Array.from({ length: m }, (_, a) => J.reduce((acc, row, i) => acc + row[a]! * r[i]!, 0));
    let accepted = false;
    for (let tries = 0; tries < 60 && !accepted; tries++) {
      const Al = A.map((row, a) => row.map((v, b) => (a === b ? v * (1 + lambda) + 1e-300 : v)));
      const d = solve(Al, g.map((v) => [v]))?.map((row) => row[0]!);
      if (!d) {
        lambda *= 4;
        continue;
      }
      const qn = q.map((v, k) => v + d[k]!);
      const pn = full(qn);
      const Sn = valid(pn) ? cost(pn) : Infinity;
      if (Sn <= S) {
        const small = d.every((dk, k) => Math.abs(dk) <= 1e-10 * (Math.abs(qn[k]!) + 1e-10));
        const flat = S - Sn <= 1e-15 * S;
        q = qn;
        p = pn;
        S = Sn;
        lambda = Math.max(lambda / 3, 1e-12);
        accepted = true;
        if (small || flat) converged = true;
      } else lambda *= 4;
    }
    if (!accepted) {
      // no step lowers S any further: at a minimum to working precision
      converged = true;
    }
  }
  const dof = n - free.length;
  const residuals = pr.x.map((x, i) => pr.y[i]! - pr.model(x, p));
  const s2 = dof > 0 ? S / dof : Number.NaN;
  // covariance in natural units: J in scaled q, so cov_p = diag(scale) cov_q diag(scale)
  const J = jacobian(q);
  const m = free.length;
  const identity = Array.from({ length: m }, (_, a) => Array.from({ length: m }, (_, b) => (a === b ? 1 : 0)));
  const inv = m > 0 ? solve(normalMatrix(J, m), identity) : [];
  const covariance = Array.from({ length: m }, (_, a) => Array.from({ length: m }, (_, b) => (inv ? inv[a]![b]! * s2 * scale[free[a]!]! * scale[free[b]!]! : Number.NaN)));
  const standardErrors = pr.start.map(() => 0);
  free.forEach((i, k) => (standardErrors[i] = Math.sqrt(Math.max(0, covariance[k]![k]!))));
  return {
    parameters: p,
    standardErrors,
    covariance,
    free,
    residuals,
    weightedRss: S,
    residualStandardError: Math.sqrt(s2),
    dof,
    iterations: it,
    converged,
  };
}
