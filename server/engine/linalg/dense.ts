/**
 * Small dense real linear algebra (row-major Float64Array): one Gaussian
 * elimination with partial pivoting serves the solve, the determinant and the
 * singularity test.
 */

/**
 * Eliminate A (n×n) to upper-triangular form in place, applying the same row
 * operations to B (n×r). Stops at a pivot of modulus ≤ `tiny`.
 * @returns the determinant of A (sign of the row swaps included), or null at a negligible pivot
 */
function eliminate(a: Float64Array, n: number, B: Float64Array | null, r: number, tiny: number): number | null {
  let det = 1;
  for (let k = 0; k < n; k++) {
    let piv = k;
    for (let i = k + 1; i < n; i++) if (Math.abs(a[i * n + k]!) > Math.abs(a[piv * n + k]!)) piv = i;
    const p = a[piv * n + k]!;
    if (Math.abs(p) <= tiny) return null;
    if (piv !== k) {
      det = -det;
      swapRows(a, n, k, piv);
      if (B) swapRows(B, r, k, piv);
    }
    det *= p;
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k]! / p;
      if (f === 0) continue;
      for (let j = k; j < n; j++) a[i * n + j]! -= f * a[k * n + j]!;
      if (B) for (let j = 0; j < r; j++) B[i * r + j]! -= f * B[k * r + j]!;
    }
  }
  return det;
}

/** Swap rows i and j of a row-major matrix with `cols` columns. */
export function swapRows(a: Float64Array, cols: number, i: number, j: number): void {
  for (let c = 0; c < cols; c++) {
    const t = a[i * cols + c]!;
    a[i * cols + c] = a[j * cols + c]!;
    a[j * cols + c] = t;
  }
}

/** Solve A X = B in place of B (A n×n, destroyed; B n×r). False when A is exactly singular. */
export function solveInPlace(A: Float64Array, n: number, B: Float64Array, r: number): boolean {
  if (eliminate(A, n, B, r, 0) === null) return false;
  for (let i = n - 1; i >= 0; i--) {
    const d = A[i * n + i]!;
    for (let j = 0; j < r; j++) {
      let s = B[i * r + j]!;
      for (let l = i + 1; l < n; l++) s -= A[i * n + l]! * B[l * r + j]!;
      B[i * r + j] = s / d;
    }
  }
  return true;
}

/** Determinant of A (not modified). */
export function determinant(A: Float64Array, n: number): number {
  return eliminate(Float64Array.from(A), n, null, 0, 0) ?? 0;
}

/** Whether A is singular to working precision: a pivot below 1e-12 of its largest entry. */
export function isSingular(A: Float64Array, n: number): boolean {
  let scale = 0;
  for (const x of A) scale = Math.max(scale, Math.abs(x));
  return scale === 0 || eliminate(Float64Array.from(A), n, null, 0, 1e-12 * scale) === null;
}
