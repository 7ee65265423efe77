/**
 * The cyclic Jacobi eigensolver for small symmetric matrices (server/engine/linalg/symmetric.ts), used by the
 * simulation's early-growth fit, against ml-matrix's symmetric eigendecomposition (an independent, well-kept
 * library) on seeded random matrices, and the defining relations A v = λ v with orthonormal v.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { symmetricEigen } from '../../server/engine/linalg/symmetric.js';
import { Random } from '../../server/engine/random.js';

describe('symmetricEigen', () => {
  it('matches ml-matrix on random symmetric matrices (n = 1 … 6) and satisfies A v = λ v, vᵀv = 1', () => {
    const rng = new Random(11);
    for (let trial = 0; trial < 60; trial++) {
      const n = 1 + (trial % 6);
      const a = new Float64Array(n * n);
      for (let i = 0; i < n; i++) for (let j = i; j < n; j++) a[i * n + j] = a[j * n + i] = rng.normal() * 10 ** rng.between(-3, 3);
      const mine = symmetricEigen(a, n);
      const ref = new EigenvalueDecomposition(new Matrix(Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, i * n + n)))), { assumeSymmetric: true });
      const refValues = [...ref.realEigenvalues].sort((x, y) => y - x);
      const scale = Math.max(...refValues.map(Math.abs));
      refValues.forEach((v, i) => expect(Math.abs(mine.values[i]! - v)).toBeLessThan(1e-12 * scale));
      mine.vectors.forEach((v, i) => {
        let norm = 0;
        for (let k = 0; k < n; k++) {
          norm += v[k]! * v[k]!;
          let av = 0;
          for (let c = 0; c < n; c++) av += a[k * n + c]! * v[c]!;
          expect(Math.abs(av - mine.values[i]! * v[k]!)).toBeLessThan(1e-11 * scale);
        }
        expect(Math.abs(norm - 1)).toBeLessThan(1e-12);
      });
    }
  });

  it('gives [3, 1] for [[2, 1], [1, 2]] (worked by hand)', () => {
    const r = symmetricEigen(Float64Array.of(2, 1, 1, 2), 2);
    expect(r.values[0]).toBeCloseTo(3, 14);
    expect(r.values[1]).toBeCloseTo(1, 14);
    expect(Math.abs(r.vectors[0]![0]!)).toBeCloseTo(Math.SQRT1_2, 14);
  });
});
