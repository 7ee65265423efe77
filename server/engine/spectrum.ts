/**
 * The spectrum of J'(k') at one wavenumber, summarised for the mode scan.
 *
 * For each k' the scan needs the largest real part over all eigenvalues, and
 * separately over real eigenvalues (the stationary branch) and complex pairs
 * (the oscillatory branch). Rank-one mixtures whose couplings share a sign have
 * only real eigenvalues and take the secular path; two species use the
 * closed-form 2×2 eigenvalues; all others use the general eigen routine
 * (linalg/eigen.ts, ml-matrix).
 */
import { eigenDecomposition, eigenvalues, type ComplexVector } from './linalg/eigen.js';
import { jacobian, type ScaledModel } from './model.js';
import { largestSecularRoot, sameSign } from './secular.js';

/** Summary of the spectrum at one wavenumber (scaled units). */
export interface ModeSpectrum {
  k: number;
  /** max Re λ over all eigenvalues */
  maxRe: number;
  /** |Im λ| of the eigenvalue attaining maxRe (0 when real) */
  imAtMax: number;
  /** max over real eigenvalues (−∞ if none) */
  maxReal: number;
  /** max Re over complex pairs (−∞ if none) */
  maxComplex: number;
  /** Imaginary part of that complex pair (≥ 0) */
  imComplex: number;
  converged: boolean;
  /** Largest |entry| of J'(k') (or of the secular poles and weights): the rounding scale of the values above */
  scale: number;
}

/** Relative size of Im λ below which an eigenvalue counts as real (collisions split by ~√ε). */
export const REAL_TOLERANCE = 1e-7;

/** Rank-one weights c_m and poles p_m at k' (scaled), for the secular path. */
export function secularTerms(model: ScaledModel, k: number): { c: Float64Array; poles: Float64Array } {
  const { M } = model;
  const k2 = k * k;
  // k² g = 1/(D'_c + R'/k²): finite at large k, exact for the scalar chemical.
  const k2g = 1 / (model.chemDiffusivity[0]! + model.reaction[0]! / k2);
  const c = new Float64Array(M);
  const poles = new Float64Array(M);
  for (let m = 0; m < M; m++) {
    c[m] = k2g * model.P[m]! * model.Q[m]!;
    poles[m] = -k2 * model.diffusivity[m]!;
  }
  return { c, poles };
}

function matrixScale(J: Float64Array): number {
  let s = 0;
  for (const x of J) s = Math.max(s, Math.abs(x));
  return s;
}

/**
 * Evaluate the spectrum summary at scaled wavenumber k' > 0.
 * Never throws on non-convergence: `converged` says so.
 */
export function modeSpectrum(model: ScaledModel, k: number): ModeSpectrum {
  if (model.M === 0) return { k, maxRe: -Infinity, imAtMax: 0, maxReal: -Infinity, maxComplex: -Infinity, imComplex: 0, converged: true, scale: 0 };
  if (model.rankOne) {
    const { c, poles } = secularTerms(model, k);
    if (sameSign(c)) {
      const top = largestSecularRoot(c, poles);
      let scale = 0;
      for (let m = 0; m < model.M; m++) scale = Math.max(scale, Math.abs(c[m]!), Math.abs(poles[m]!));
      return { k, maxRe: top, imAtMax: 0, maxReal: top, maxComplex: -Infinity, imComplex: 0, converged: Number.isFinite(top), scale };
    }
  }
  const J = jacobian(model, k);
  return summarise(k, J, model.M);
}

/**
 * Eigenvalues of a real 2×2 matrix (row-major) in closed form: λ = tr/2 ± √((a−d)²/4 + bc),
 * the larger-magnitude real root without cancellation and the other as det/λ₁.
 * Real roots come largest first; a complex pair +Im first. A non-finite entry is `converged: false`.
 * @example eigenvalues2x2(Float64Array.of(0, -2, 2, 0)) // ±2i
 */
export function eigenvalues2x2(J: Float64Array): { re: Float64Array; im: Float64Array; converged: boolean } {
  const a = J[0]!;
  const b = J[1]!;
  const c = J[2]!;
  const d = J[3]!;
  if (!Number.isFinite(a + b + c + d)) return { re: Float64Array.of(Number.NaN, Number.NaN), im: Float64Array.of(Number.NaN, Number.NaN), converged: false };
  const half = 0.5 * (a - d);
  const disc = half * half + b * c;
  const mean = 0.5 * (a + d);
  if (disc >= 0) {
    const r = Math.sqrt(disc);
    // λ₁ = mean + sign·r without cancellation, λ₂ = det/λ₁ when λ₁ ≠ 0
    const l1 = mean >= 0 ? mean + r : mean - r;
    const det = a * d - b * c;
    const l2 = l1 !== 0 ? det / l1 : mean - (l1 - mean);
    return { re: Float64Array.of(Math.max(l1, l2), Math.min(l1, l2)), im: new Float64Array(2), converged: true };
  }
  const w = Math.sqrt(-disc);
  return { re: Float64Array.of(mean, mean), im: Float64Array.of(w, -w), converged: true };
}

function summarise(k: number, J: Float64Array, M: number): ModeSpectrum {
  const spec = M === 2 ? eigenvalues2x2(J) : eigenvalues(J, M);
  return summariseValues(k, spec.re, spec.im, spec.converged, matrixScale(J));
}

/**
 * The branch summary of a list of eigenvalues at k' with rounding scale `scale`:
 * |Im λ| within REAL_TOLERANCE · scale counts as real; NaN values are skipped.
 */
export function summariseValues(k: number, re: ArrayLike<number>, imag: ArrayLike<number>, converged: boolean, scale: number): ModeSpectrum {
  const tol = REAL_TOLERANCE * Math.max(scale, Number.MIN_VALUE);
  let maxRe = -Infinity;
  let imAtMax = 0;
  let maxReal = -Infinity;
  let maxComplex = -Infinity;
  let imComplex = 0;
  for (let i = 0; i < re.length; i++) {
    const r = re[i]!;
    const im = Math.abs(imag[i]!);
    if (Number.isNaN(r)) continue;
    if (r > maxRe) {
      maxRe = r;
      imAtMax = im > tol ? im : 0;
    }
    if (im > tol) {
      if (r > maxComplex) {
        maxComplex = r;
        imComplex = im;
      }
    } else if (r > maxReal) {
      maxReal = r;
    }
  }
  return { k, maxRe, imAtMax, maxReal, maxComplex, imComplex, converged, scale };
}

/**
 * The eigenpair with the largest real part at k' (general routine), for the mode
 * composition. Of a complex pair the member with Im λ > 0 is taken; a pair whose
 * |Im λ| is within REAL_TOLERANCE of the matrix scale counts as real, and its
 * vector's imaginary parts (rounding of a collision) are dropped.
 *
 * @returns λ = re + i·im (im ≥ 0) and its eigenvector, largest component 1
 */
export function leadingEigenpair(model: ScaledModel, k: number): { re: number; im: number; vector: ComplexVector; converged: boolean } {
  const J = jacobian(model, k);
  const dec = eigenDecomposition(J, model.M);
  let best = 0;
  for (let i = 1; i < model.M; i++) {
    if (dec.re[i]! > dec.re[best]! || (dec.re[i] === dec.re[best] && dec.im[i]! > dec.im[best]!)) best = i;
  }
  const tol = REAL_TOLERANCE * Math.max(matrixScale(J), Number.MIN_VALUE);
  const re = dec.re[best]!;
  const real = !(Math.abs(dec.im[best]!) > tol);
  const im = real ? 0 : Math.abs(dec.im[best]!);
  const v = dec.vectors[best]!;
  const vector = real ? { re: v.re, im: new Float64Array(model.M) } : dec.im[best]! > 0 ? v : { re: v.re, im: v.im.map((x) => -x) };
  return { re, im, vector, converged: dec.converged };
}
