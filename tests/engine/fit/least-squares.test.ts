/**
 * The least-squares engine: what it reports when it stops, bounds, and
 * generalised least squares.
 *
 * Expected values are computed here independently of the code under test:
 *  - GLS of a straight line y = a + b x with a full covariance C: the normal
 *    equations β = (Xᵀ C⁻¹ X)⁻¹ Xᵀ C⁻¹ y, cov β = (Xᵀ C⁻¹ X)⁻¹ (Aitken's
 *    generalised least squares; any regression text, e.g. Bates & Watts 1988,
 *    §1.3 — from memory), evaluated with ml-matrix (an independent library);
 *  - ordinary least squares through the origin, slope Σxy/Σx², by hand;
 *  - a bound: minimising Σ(y − b x)² over b ≥ 0 when Σxy < 0 gives b = 0 (the
 *    unconstrained minimum is negative and S is a parabola in b).
 */
import { Matrix, inverse } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { cholesky, leastSquares, LSQ_MAX_POINTS } from '../../../server/engine/fit/least-squares.js';

describe('stop reasons', () => {
  it('a fit that never accepts a step is not converged (no-progress)', () => {
    // every step away from the start is outside the domain: nothing can be accepted, and the
    // gradient does not vanish at the start (the data want b = 2)
    const r = leastSquares({ model: (x, p) => p[0]! * x, x: [1, 2, 3], y: [2, 4, 6], start: [1], valid: (p) => p[0] === 1 });
    expect(r.acceptedSteps).toBe(0);
    expect(r.stop).toBe('no-progress');
    expect(r.converged).toBe(false);
  });

  it('the iteration bound stops a fit and says so', () => {
    // exp(−k x) from far away: one iteration is not enough
    const x = [0, 1, 2, 3, 4, 5];
    const y = x.map((t) => Math.exp(-0.7 * t));
    const r = leastSquares({ model: (t, p) => Math.exp(-p[0]! * t), x, y, start: [5], maxIterations: 1 });
    expect(r.stop).toBe('max-iterations');
    expect(r.converged).toBe(false);
    const full = leastSquares({ model: (t, p) => Math.exp(-p[0]! * t), x, y, start: [5] });
    expect(full.stop).toBe('converged');
    expect(full.parameters[0]).toBeCloseTo(0.7, 8);
  });

  it('a step too small to matter ends the fit as small-step, not converged, when the gradient test fails', () => {
    // y ≈ −0.01 t fitted by t (p − 1)²: the model cannot go negative, so the best is p = 1, where the
    // derivative 2 t (p − 1) vanishes. Levenberg–Marquardt then creeps toward 1 by ever smaller steps,
    // and with one parameter the scale-free gradient test |Jᵀz|/(‖J‖‖z‖) is |cos| of J and z, which is 1
    // while J ≠ 0 and "a zero column proves nothing" once J = 0 (by hand): stationarity is never shown.
    const x = [1, 2, 3, 4];
    const y = [-0.009, -0.022, -0.0295, -0.039];
    const r = leastSquares({ model: (t, p) => t * (p[0]! - 1) ** 2, x, y, start: [3] });
    expect(r.acceptedSteps).toBeGreaterThan(0);
    expect(r.stop).toBe('small-step');
    expect(r.converged).toBe(false);
    expect(Math.abs(r.parameters[0]! - 1)).toBeLessThan(1e-6);
  });

  it('a fit reported converged passes the gradient test at its result, with derivatives taken by hand', () => {
    // y = b e^(−k t) with relative noise 10⁻⁶ from a start close to the optimum: the last accepted steps
    // change S by rounding only (the small-step route), and converged must then still mean stationarity:
    // the Gauss–Newton decrease still available, gᵀ(JᵀJ)⁻¹g with g = Jᵀr, is at rounding level
    // (≤ 10⁻¹⁰ S, the file's rule, here with a 10× margin for the central differences the fit uses).
    // Analytic derivatives (by hand): ∂f/∂k = −t b e^(−k t), ∂f/∂b = e^(−k t); the 2 × 2 solve by Cramer's rule.
    const x = [0, 0.5, 1, 1.5, 2, 3, 4, 5];
    let seed = 1;
    const rnd = () => (seed = (seed * 16807) % 2147483647) / 2147483647 - 0.5;
    let tiny = 0;
    for (let k = 0; k < 20; k++) {
      const y = x.map((t) => Math.exp(-0.7 * t) * (1 + 1e-6 * rnd()));
      const r = leastSquares({ model: (t, p) => p[1]! * Math.exp(-p[0]! * t), x, y, start: [0.7 * (1 + 3e-6 * rnd()), 1] });
      expect(r.stop).toBe('converged');
      const [kk, b] = r.parameters as [number, number];
      const res = x.map((t, i) => y[i]! - b * Math.exp(-kk * t));
      const [c1, c2] = [x.map((t) => -t * b * Math.exp(-kk * t)), x.map((t) => Math.exp(-kk * t))];
      const dot = (u: number[], v: number[]) => u.reduce((a, e, i) => a + e * v[i]!, 0);
      const [a11, a12, a22, g1, g2] = [dot(c1, c1), dot(c1, c2), dot(c2, c2), dot(c1, res), dot(c2, res)];
      const det = a11 * a22 - a12 * a12;
      const predicted = (a22 * g1 * g1 - 2 * a12 * g1 * g2 + a11 * g2 * g2) / det;
      expect(predicted).toBeLessThan(1e-9 * dot(res, res));
      if (r.acceptedSteps > 0) tiny++;
    }
    expect(tiny).toBeGreaterThan(10);
  });

  it('refuses more points than its bound, and an absurd iteration bound', () => {
    const n = LSQ_MAX_POINTS + 1;
    const x = Array.from({ length: n }, (_, i) => i);
    expect(() => leastSquares({ model: (t, p) => p[0]! * t, x, y: x, start: [1] })).toThrow(/at most 20000 points, got 20001/);
    expect(() => leastSquares({ model: (t, p) => p[0]! * t, x: [1, 2], y: [1, 2], start: [1], maxIterations: 0 })).toThrow(/maxIterations|between 1/);
  });

  it('ordinary least squares through the origin: Σxy/Σx² by hand, converged', () => {
    const x = [1, 2, 3, 4, 5];
    const y = [2.1, 3.9, 6.2, 7.8, 10.1];
    const b = x.reduce((a, v, i) => a + v * y[i]!, 0) / x.reduce((a, v) => a + v * v, 0);
    const r = leastSquares({ model: (t, p) => p[0]! * t, x, y, start: [1] });
    expect(r.stop).toBe('converged');
    expect(r.weighting).toBe('unweighted');
    expect(r.parameters[0]).toBeCloseTo(b, 10);
    // sd = √(s²/Σx²), s² = RSS/(n − 1)
    const rss = x.reduce((a, v, i) => a + (y[i]! - b * v) ** 2, 0);
    expect(r.standardErrors[0]).toBeCloseTo(Math.sqrt(rss / 4 / 55), 10);
  });
});

describe('bounds', () => {
  it('a parameter that ends on its bound is flagged, without a standard error', () => {
    const x = [1, 2, 3, 4];
    const y = [-1, -2.2, -2.9, -4.1]; // Σxy < 0: the best b ≥ 0 is 0
    const r = leastSquares({ model: (t, p) => p[0]! * t, x, y, start: [1], lower: [0] });
    expect(r.parameters[0]).toBe(0);
    expect(r.atBound[0]).toBe('lower');
    expect(r.standardErrors[0]).toBeNull();
    expect(r.estimated).toEqual([]);
    expect(r.converged).toBe(true);
    // just inside the bound (data with a small positive slope) it is an ordinary estimate
    const r2 = leastSquares({ model: (t, p) => p[0]! * t, x, y: y.map((v) => -v * 0.01), start: [1], lower: [0] });
    expect(r2.atBound[0]).toBeNull();
    expect(r2.standardErrors[0]).toBeGreaterThan(0);
  });

  it('the other parameters go on being fitted while one is held at its bound', () => {
    // y = a + b x with b ≥ 0 and data falling: b = 0 and a = mean(y) (the constrained minimum, by hand)
    const x = [0, 1, 2, 3, 4];
    const y = [5, 4.6, 4.1, 3.4, 3.1];
    const r = leastSquares({ model: (t, p) => p[0]! + p[1]! * t, x, y, start: [1, 1], lower: [undefined, 0] });
    expect(r.parameters[1]).toBe(0);
    expect(r.atBound[1]).toBe('lower');
    expect(r.parameters[0]).toBeCloseTo(y.reduce((a, b) => a + b) / 5, 10);
    // its sd is that of a mean: √(s²/n), s² = Σ(y − ȳ)²/(n − 1) (b held, one parameter estimated)
    const m = y.reduce((a, b) => a + b) / 5;
    expect(r.standardErrors[0]).toBeCloseTo(Math.sqrt(y.reduce((a, v) => a + (v - m) ** 2, 0) / 4 / 5), 10);
  });
});

describe('generalised least squares', () => {
  // a straight line with strongly correlated errors (AR(1), ρ = 0.9, and growing variance)
  const x = [1, 2, 3, 4, 5, 6, 7, 8];
  const y = [2.9, 5.2, 7.1, 8.8, 11.3, 13.0, 14.7, 17.2];
  const n = x.length;
  const C = x.map((_, i) => x.map((_, j) => 0.04 * Math.pow(0.9, Math.abs(i - j)) * Math.sqrt(x[i]! * x[j]!)));

  it('the estimate and covariance are Aitken’s (Xᵀ C⁻¹ X)⁻¹ Xᵀ C⁻¹ y, computed with ml-matrix', () => {
    const X = new Matrix(x.map((v) => [1, v]));
    const Ci = inverse(new Matrix(C));
    const XtCi = X.transpose().mmul(Ci);
    const covB = inverse(XtCi.mmul(X));
    const beta = covB.mmul(XtCi.mmul(Matrix.columnVector(y)));
    const r = leastSquares({ model: (t, p) => p[0]! + p[1]! * t, x, y, covariance: C, errorScale: 'known', start: [1, 1] });
    expect(r.weighting).toBe('gls-covariance');
    expect(r.stop).toBe('converged');
    expect(r.parameters[0]).toBeCloseTo(beta.get(0, 0), 8);
    expect(r.parameters[1]).toBeCloseTo(beta.get(1, 0), 8);
    expect(r.standardErrors[0]! / Math.sqrt(covB.get(0, 0))).toBeCloseTo(1, 6);
    expect(r.standardErrors[1]! / Math.sqrt(covB.get(1, 1))).toBeCloseTo(1, 6);
    expect(r.covariance[0]![1]! / covB.get(0, 1)).toBeCloseTo(1, 6);
    // S is the generalised residual sum of squares rᵀ C⁻¹ r
    const res = Matrix.columnVector(y.map((v, i) => v - beta.get(0, 0) - beta.get(1, 0) * x[i]!));
    expect(r.weightedRss).toBeCloseTo(res.transpose().mmul(Ci).mmul(res).get(0, 0), 8);
    expect(r.dof).toBe(n - 2);
    // with the residual scale, the covariance is s² times the known one
    const rel = leastSquares({ model: (t, p) => p[0]! + p[1]! * t, x, y, covariance: C, start: [1, 1] });
    expect(rel.standardErrors[1]! / (Math.sqrt(covB.get(1, 1)) * rel.residualStandardError)).toBeCloseTo(1, 6);
  });

  it('Cholesky: L Lᵀ = C, and a matrix that is not positive definite is refused', () => {
    const L = cholesky(C)!;
    const back = new Matrix(L).mmul(new Matrix(L).transpose());
    for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) expect(back.get(i, j)).toBeCloseTo(C[i]![j]!, 14);
    expect(cholesky([[1, 2], [2, 1]])).toBeNull();
    expect(() => leastSquares({ model: (t, p) => p[0]! * t, x: [1, 2], y: [1, 2], covariance: [[1, 2], [2, 1]], start: [1] })).toThrow(/not positive definite/);
  });
});
