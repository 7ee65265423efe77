/**
 * Eigenvalues and orthonormal eigenvectors of a small real symmetric matrix by the
 * cyclic Jacobi method, written from its published description (C. G. J. Jacobi,
 * J. reine angew. Math. 30 (1846) 51–94; the cyclic sweep with the stable rotation
 * formulas as in G. H. Golub and C. F. Van Loan, Matrix Computations, 4th ed., §8.5):
 * plane rotations zero the off-diagonal entries one pair at a time, sweep after sweep,
 * until the off-diagonal part is negligible. Quadratically convergent; meant for the
 * few-by-few Gram matrices of the simulation's reports.
 */

export interface SymmetricEigen {
  /** eigenvalues, largest first */
  values: Float64Array;
  /** vectors[i] is the unit eigenvector of values[i] */
  vectors: Float64Array[];
}

/**
 * @param a row-major n×n symmetric matrix (only read; the upper triangle is used)
 * @example symmetricEigen(Float64Array.of(2, 1, 1, 2), 2).values // [3, 1]
 */
export function symmetricEigen(a: Float64Array, n: number): SymmetricEigen {
  const A = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) A[i * n + j] = a[Math.min(i, j) * n + Math.max(i, j)]!;
  const V = new Float64Array(n * n);
  for (let i = 0; i < n; i++) V[i * n + i] = 1;
  let scale = 0;
  for (let i = 0; i < n * n; i++) scale = Math.max(scale, Math.abs(A[i]!));
  for (let sweep = 0; sweep < 100 && scale > 0; sweep++) {
    let off = 0;
    for (let p = 0; p < n; p++) for (let q = p + 1; q < n; q++) off = Math.max(off, Math.abs(A[p * n + q]!));
    if (off <= 1e-15 * scale) break;
    for (let p = 0; p < n; p++) {
      for (let q = p + 1; q < n; q++) {
        const apq = A[p * n + q]!;
        if (apq === 0) continue;
        // the rotation (c, s) that zeroes A[p][q]: t = sign(θ)/(|θ| + √(1 + θ²)), θ = (a_qq − a_pp)/(2 a_pq)
        const theta = (A[q * n + q]! - A[p * n + p]!) / (2 * apq);
        const t = (theta >= 0 ? 1 : -1) / (Math.abs(theta) + Math.sqrt(1 + theta * theta));
        const c = 1 / Math.sqrt(1 + t * t);
        const s = t * c;
        for (let k = 0; k < n; k++) {
          // A ← Jᵀ A J, columns then rows
          const akp = A[k * n + p]!;
          const akq = A[k * n + q]!;
          A[k * n + p] = c * akp - s * akq;
          A[k * n + q] = s * akp + c * akq;
        }
        for (let k = 0; k < n; k++) {
          const apk = A[p * n + k]!;
          const aqk = A[q * n + k]!;
          A[p * n + k] = c * apk - s * aqk;
          A[q * n + k] = s * apk + c * aqk;
        }
        for (let k = 0; k < n; k++) {
          const vkp = V[k * n + p]!;
          const vkq = V[k * n + q]!;
          V[k * n + p] = c * vkp - s * vkq;
          V[k * n + q] = s * vkp + c * vkq;
        }
      }
    }
  }
  const order = Array.from({ length: n }, (_, i) => i).sort((i, j) => A[j * n + j]! - A[i * n + i]!);
  return {
    values: Float64Array.from(order, (i) => A[i * n + i]!),
    vectors: order.map((i) => Float64Array.from({ length: n }, (_, k) => V[k * n + i]!)),
  };
}
