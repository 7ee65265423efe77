/**
 * Direct access to J(k) and its spectrum at one wavenumber, in SI — for checks,
 * plots and anyone who wants to see the matrix behind a verdict.
 */
import { eigenvalues } from './linalg/eigen.js';
import { buildModel, jacobian, type ScaledModel } from './model.js';
import type { Mixture } from './types.js';

/**
 * The particle Jacobian J(k) = −k²[𝔇 + diag(ρ⁰) μ G(k) αᵀ] of docs/model.md §3, SI (1/s), row-major M×M.
 * @param k wavenumber, 1/m, > 0
 */
export function jacobianAt(mix: Mixture, k: number, model: ScaledModel = buildModel(mix)): Float64Array {
  const J = jacobian(model, k * model.lengthUnit);
  for (let i = 0; i < J.length; i++) J[i] = J[i]! / model.timeUnit;
  return J;
}

/** Eigenvalues of J(k), SI (1/s), sorted by decreasing real part. */
export function eigenvaluesAt(mix: Mixture, k: number): { re: number; im: number }[] {
  const model = buildModel(mix);
  const J = jacobian(model, k * model.lengthUnit);
  const s = eigenvalues(J, model.M);
  const out: { re: number; im: number }[] = [];
  for (let i = 0; i < model.M; i++) out.push({ re: s.re[i]! / model.timeUnit, im: s.im[i]! / model.timeUnit });
  return out.sort((a, b) => b.re - a.re || b.im - a.im);
}
