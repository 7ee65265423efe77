/**
 * An independent maximum-likelihood fit of quantal data for the checks of server/engine/fit/quantal.ts:
 * ml-levenberg-marquardt (docs/references.md) minimising the sum of squared signed deviance residuals — whose sum
 * is the deviance, so its minimiser is the MLE — with the inverse links and their derivatives written out here,
 * sharing no code with brink's fit; and the expected information Σ n (dπ/dη)²/(π(1 − π)) x xᵀ at an estimate.
 */
import { levenbergMarquardt } from 'ml-levenberg-marquardt';
import type { QuantalLink } from '../../server/engine/fit/quantal.js';

/**
 * Φ(z) written out independently of brink's route (which goes through the incomplete gamma function): for |z| ≤ 2
 * the Maclaurin series of erf, erf(t) = 2/√π Σ (−1)ⁿ t²ⁿ⁺¹/(n!(2n+1)); in the tails Laplace's continued fraction
 * for Mills' ratio, Φ(−x) = φ(x)/(x + 1/(x + 2/(x + 3/(x + …)))), x > 2, evaluated from 300 terms upward.
 */
export function phi(z: number): number {
  if (Math.abs(z) <= 2) return phiSeries(z);
  const x = Math.abs(z);
  let cf = x;
  for (let k = 300; k >= 1; k--) cf = x + k / cf;
  const tail = Math.exp(-0.5 * x * x) / Math.sqrt(2 * Math.PI) / cf;
  return z < 0 ? tail : 1 - tail;
}

function phiSeries(z: number): number {
  const t = z / Math.SQRT2;
  let term = t;
  let sum = t;
  for (let n = 1; n < 400; n++) {
    term *= (-t * t) / n;
    const add = term / (2 * n + 1);
    sum += add;
    if (Math.abs(add) < 1e-18 * Math.abs(sum)) break;
  }
  return 0.5 * (1 + (2 / Math.sqrt(Math.PI)) * sum);
}

export const INVERSE: Record<QuantalLink, (eta: number) => [number, number]> = {
  logit: (e) => [1 / (1 + Math.exp(-e)), 1 / (1 + Math.exp(e))],
  probit: (e) => [phi(e), phi(-e)],
  cloglog: (e) => [1 - Math.exp(-Math.exp(e)), Math.exp(-Math.exp(e))],
};

/** The maximum-likelihood estimate by Levenberg–Marquardt on the signed deviance residuals, η = a + b (x − x̄). */
export function lmReference(link: QuantalLink, x: number[], n: number[], y: number[], start: [number, number]) {
  const xm = x.reduce((s, v) => s + v, 0) / x.length;
  const ylog = (a: number, m: number) => (a === 0 ? 0 : a * Math.log(a / m));
  const residual = ([a, b]: number[]) => (i: number) => {
    const [pi, piC] = INVERSE[link](a! + b! * (x[i]! - xm));
    const d = 2 * (ylog(y[i]!, n[i]! * pi) + ylog(n[i]! - y[i]!, n[i]! * piC));
    return Math.sign(y[i]! - n[i]! * pi) * Math.sqrt(Math.max(d, 0));
  };
  const r = levenbergMarquardt({ x: x.map((_, i) => i), y: x.map(() => 0) }, residual, {
    initialValues: start,
    maxIterations: 400,
    errorTolerance: 1e-14,
    improvementThreshold: 1e-12,
    gradientDifference: 1e-7,
    centralDifference: true,
    damping: 1e-3,
  });
  const [a, b] = r.parameterValues as [number, number];
  return { intercept: a - b * xm, slope: b, deviance: r.parameterError };
}


/** dπ/dη of each link, written out. */
export const DERIVATIVE: Record<QuantalLink, (eta: number) => number> = {
  logit: (e) => Math.exp(-Math.abs(e)) / (1 + Math.exp(-Math.abs(e))) ** 2,
  probit: (e) => Math.exp(-0.5 * e * e) / Math.sqrt(2 * Math.PI),
  cloglog: (e) => Math.exp(e - Math.exp(e)),
};

/** Standard errors of (intercept, slope) from the expected information at (b0, b1), by hand (2 × 2 inverse). */
export function expectedInformationSe(link: QuantalLink, x: number[], n: number[], b0: number, b1: number): [number, number] {
  let a = 0;
  let b = 0;
  let c = 0;
  x.forEach((xi, i) => {
    const eta = b0 + b1 * xi;
    const [pi, piC] = INVERSE[link](eta);
    const d = DERIVATIVE[link](eta);
    const w = (n[i]! * d * d) / (pi * piC);
    a += w;
    b += w * xi;
    c += w * xi * xi;
  });
  const det = a * c - b * b;
  return [Math.sqrt(c / det), Math.sqrt(a / det)];
}
