/**
 * Eigenvalues and eigenvectors of small dense real non-symmetric matrices: a
 * thin adapter over ml-matrix's `EigenvalueDecomposition` (a port of the public
 * domain JAMA library: orthogonal reduction to Hessenberg form, then the real
 * Schur form by shifted QR, then back substitution for the vectors).
 *
 * Matrices are row-major `Float64Array`s of length n·n (`a[i * n + j]` is row i,
 * column j). What this file adds to the library:
 *
 *  - **No hang, no throw on bad input.** The library's QR loop has no iteration
 *    limit and stops only when a sub-diagonal entry deflates, which a NaN never
 *    does (tried with ml-matrix 6.15: a 3×3 matrix with one NaN runs until
 *    killed). So a matrix with a non-finite entry is answered
 *    `converged: false` with NaN values without calling it. Non-convergence is
 *    a flag, never a throw. (What this cannot catch: a finite matrix on which
 *    the library's shifted QR cycles without deflating would hang as well. None
 *    is known for the engine's scaled Jacobians; the identity tests run over a
 *    thousand seeded random and Jacobian-shaped matrices.)
 *  - **No overflow.** The matrix is divided by a power of two near its largest
 *    entry before the call and the eigenvalues multiplied back (exact in
 *    floating point), so entries near the ends of the double range are safe.
 *  - **A sanity check on the answer**: the eigenvalues must be finite and sum to
 *    the trace (Σλ = tr A, an identity) within 1e-8·n·max|a_ij|; otherwise
 *    `converged: false`.
 *  - **Eigenvectors as complex vectors.** The library returns a complex pair
 *    λ = d ± i e (e > 0 first) as two adjacent real columns u, v of V with
 *    A(u + i v) = (d + i e)(u + i v); `eigenDecomposition` turns each into one
 *    complex vector per eigenvalue (the conjugate for the second of the pair),
 *    scaled so that its largest-modulus component is exactly 1.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';

export interface Spectrum {
  /** Real parts, length n. Complex pairs are adjacent, positive imaginary part first. */
  re: Float64Array;
  /** Imaginary parts, length n. */
  im: Float64Array;
  /** False for a non-finite input or an answer that fails the trace check (values NaN then). */
  converged: boolean;
}

/** Complex vector as separate real and imaginary parts. */
export interface ComplexVector {
  re: Float64Array;
  im: Float64Array;
}

/** Eigenvalues with one eigenvector each (`vectors[i]` belongs to re[i] + i·im[i]). */
export interface EigenDecomposition extends Spectrum {
  vectors: ComplexVector[];
}

function failed(n: number): EigenDecomposition {
  const re = new Float64Array(n).fill(Number.NaN);
  const im = new Float64Array(n).fill(Number.NaN);
  const vectors = Array.from({ length: n }, () => ({ re: new Float64Array(n).fill(Number.NaN), im: new Float64Array(n).fill(Number.NaN) }));
  return { re, im, converged: false, vectors };
}

/** Largest |a_ij|, or NaN if any entry is not finite. */
function maxAbs(a: Float64Array): number {
  let m = 0;
  for (const x of a) {
    if (!Number.isFinite(x)) return Number.NaN;
    const y = Math.abs(x);
    if (y > m) m = y;
  }
  return m;
}

/** Scale v so that its largest-modulus component is 1 + 0i (left alone if v is 0). */
function unitLeading(v: ComplexVector): ComplexVector {
  let k = 0;
  let big = -1;
  for (let i = 0; i < v.re.length; i++) {
    const m = Math.hypot(v.re[i]!, v.im[i]!);
    if (m > big) {
      big = m;
      k = i;
    }
  }
  if (!(big > 0)) return v;
  // multiply by conj(v_k)/|v_k|²
  const cr = v.re[k]! / (big * big);
  const ci = -v.im[k]! / (big * big);
  const re = new Float64Array(v.re.length);
  const im = new Float64Array(v.re.length);
  for (let i = 0; i < v.re.length; i++) {
    re[i] = v.re[i]! * cr - v.im[i]! * ci;
    im[i] = v.re[i]! * ci + v.im[i]! * cr;
  }
  re[k] = 1;
  im[k] = 0;
  return { re, im };
}

/** The library call with the guards above; vectors only when asked (they cost an allocation per eigenvalue). */
function decompose(a: Float64Array, n: number, withVectors: boolean): EigenDecomposition {
  if (n === 0) return { re: new Float64Array(0), im: new Float64Array(0), converged: true, vectors: [] };
  const big = maxAbs(a);
  if (Number.isNaN(big)) return failed(n);
  if (big === 0) {
    // The zero matrix: every vector is an eigenvector; report the unit basis.
    const vectors = !withVectors
      ? []
      : Array.from({ length: n }, (_, i) => {
          const re = new Float64Array(n);
          re[i] = 1;
          return { re, im: new Float64Array(n) };
        });
    return { re: new Float64Array(n), im: new Float64Array(n), converged: true, vectors };
  }
  // Power-of-two scale: exact, and keeps the library's arithmetic far from overflow.
  const scale = 2 ** Math.round(Math.log2(big));
  const m = new Matrix(n, n);
  let trace = 0;
  for (let i = 0; i < n; i++) {
    trace += a[i * n + i]!;
    for (let j = 0; j < n; j++) m.set(i, j, a[i * n + j]! / scale);
  }
  const e = new EigenvalueDecomposition(m);
  const d = e.realEigenvalues;
  const w = e.imaginaryEigenvalues;
  const re = new Float64Array(n);
  const im = new Float64Array(n);
  let sum = 0;
  for (let i = 0; i < n; i++) {
    re[i] = d[i]! * scale;
    im[i] = w[i]! * scale;
    if (!Number.isFinite(re[i]!) || !Number.isFinite(im[i]!)) return failed(n);
    sum += re[i]!;
  }
  if (!(Math.abs(sum - trace) <= 1e-8 * n * big)) return failed(n);
  const vectors: ComplexVector[] = [];
  if (withVectors) {
    const V = e.eigenvectorMatrix;
    for (let i = 0; i < n; i++) {
      const vr = new Float64Array(n);
      const vi = new Float64Array(n);
      if (im[i]! === 0) {
        for (let r = 0; r < n; r++) vr[r] = V.get(r, i);
      } else {
        // Columns (u, v) of the pair whose first member has Im > 0: u + i v, and u − i v for the second.
        const first = im[i]! > 0 ? i : i - 1;
        const sign = im[i]! > 0 ? 1 : -1;
        for (let r = 0; r < n; r++) {
          vr[r] = V.get(r, first);
          vi[r] = sign * V.get(r, first + 1);
        }
      }
      vectors.push(unitLeading({ re: vr, im: vi }));
    }
  }
  return { re, im, converged: true, vectors };
}

/**
 * Eigenvalues and eigenvectors of a real n×n matrix (row-major, not modified).
 *
 * @param a row-major n×n matrix
 * @param n order (≥ 0)
 * @returns values with complex pairs adjacent (+Im first) and one vector per
 *          value, largest component 1; `converged: false` (all NaN) for a
 *          non-finite input or an answer that fails Σλ = tr A.
 * @example eigenDecomposition(Float64Array.of(2, 0, 0, 3), 2).re // [2, 3]
 */
export function eigenDecomposition(a: Float64Array, n: number): EigenDecomposition {
  return decompose(a, n, true);
}

/**
 * All eigenvalues of a real n×n matrix (row-major, not modified).
 *
 * @returns real and imaginary parts, complex pairs adjacent with +Im first;
 *          `converged: false` (NaN) for a non-finite input or a failed check.
 * @example eigenvalues(Float64Array.of(0, 1, -1, 0), 2) // ±i
 */
export function eigenvalues(a: Float64Array, n: number): Spectrum {
  if (n === 1) {
    const x = a[0]!;
    return Number.isFinite(x) ? { re: Float64Array.of(x), im: new Float64Array(1), converged: true } : { re: Float64Array.of(Number.NaN), im: Float64Array.of(Number.NaN), converged: false };
  }
  const { re, im, converged } = decompose(a, n, false);
  return { re, im, converged };
}

/** Eigenvalues (largest first) and unit eigenvectors of a real symmetric matrix. */
export interface SymmetricEigen {
  values: Float64Array;
  /** vectors[i] is the unit eigenvector of values[i] */
  vectors: Float64Array[];
}

/**
 * Eigenvalues and orthonormal eigenvectors of a real symmetric n×n matrix (row-major, not modified; the upper
 * triangle is read), by ml-matrix's symmetric decomposition (tridiagonalisation and QL). For the small Gram
 * matrices of the simulation's early-growth fit.
 *
 * @example symmetricEigen(Float64Array.of(2, 1, 1, 2), 2).values // [3, 1]
 */
export function symmetricEigen(a: Float64Array, n: number): SymmetricEigen {
  const rows = Array.from({ length: n }, (_, i) => Array.from({ length: n }, (_, j) => a[Math.min(i, j) * n + Math.max(i, j)]!));
  const e = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true });
  const values = e.realEigenvalues;
  const V = e.eigenvectorMatrix;
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => values[j]! - values[i]!);
  return {
    values: Float64Array.from(order, (i) => values[i]!),
    vectors: order.map((i) => {
      const v = Float64Array.from({ length: n }, (_, k) => V.get(k, i));
      const norm = Math.hypot(...v);
      return norm > 0 ? v.map((x) => x / norm) : v;
    }),
  };
}
