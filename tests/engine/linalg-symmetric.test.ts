/**
 * The symmetric eigensolver (`symmetricEigen` in server/engine/linalg/eigen.ts, ml-matrix's symmetric
 * decomposition) used by the simulation's early-growth fit: the closed form for a tridiagonal Toeplitz matrix
 * (diagonal a, off-diagonals b: λ_k = a + 2b cos(kπ/(n+1)), k = 1 … n — a standard result, e.g. G. D. Smith,
 * Numerical Solution of Partial Differential Equations, from memory), and on seeded random symmetric matrices
 * the defining relations A v = λ v, vᵀv = 1, vᵢᵀvⱼ = 0 and Σλ = tr A, with the values sorted largest first.
 */
import { describe, expect, it } from 'vitest';
import { symmetricEigen } from '../../server/engine/linalg/eigen.js';
import { Random } from '../../server/engine/random.js';

describe('symmetricEigen', () => {
  it('gives the tridiagonal Toeplitz eigenvalues a + 2b cos(kπ/(n+1)), and [3, 1] for [[2, 1], [1, 2]]', () => {
    for (const n of [2, 3, 5, 8]) {
      const [a, b] = [1.5, -0.7];
      const m = new Float64Array(n * n);
      for (let i = 0; i < n; i++) {
        m[i * n + i] = a;
        if (i + 1 < n) m[i * n + i + 1] = m[(i + 1) * n + i] = b;
      }
      const exact = Array.from({ length: n }, (_, k) => a + 2 * b * Math.cos(((k + 1) * Math.PI) / (n + 1))).sort((x, y) => y - x);
      const r = symmetricEigen(m, n);
      exact.forEach((v, i) => expect(Math.abs(r.values[i]! - v)).toBeLessThan(1e-13));
    }
    const r = symmetricEigen(Float64Array.of(2, 1, 1, 2), 2);
    expect(r.values[0]).toBeCloseTo(3, 14);
    expect(r.values[1]).toBeCloseTo(1, 14);
    expect(Math.abs(r.vectors[0]![0]!)).toBeCloseTo(Math.SQRT1_2, 14);
  });

  it('on random symmetric matrices (n = 1 … 6, entries over six decades): A v = λ v, orthonormal vectors, Σλ = tr A', () => {
    const rng = new Random(11);
    for (let trial = 0; trial < 60; trial++) {
      const n = 1 + (trial % 6);
      const a = new Float64Array(n * n);
      for (let i = 0; i < n; i++) for (let j = i; j < n; j++) a[i * n + j] = a[j * n + i] = rng.normal() * 10 ** rng.between(-3, 3);
      const r = symmetricEigen(a, n);
      const scale = Math.max(...Array.from(r.values, Math.abs));
      let trace = 0;
      for (let i = 0; i < n; i++) trace += a[i * n + i]!;
      expect(Math.abs(r.values.reduce((x, y) => x + y, 0) - trace)).toBeLessThan(1e-12 * scale * n);
      for (let i = 1; i < n; i++) expect(r.values[i]!).toBeLessThanOrEqual(r.values[i - 1]!);
      r.vectors.forEach((v, i) => {
        for (let k = 0; k < n; k++) {
          let av = 0;
          for (let c = 0; c < n; c++) av += a[k * n + c]! * v[c]!;
          expect(Math.abs(av - r.values[i]! * v[k]!)).toBeLessThan(1e-11 * scale);
        }
        r.vectors.forEach((w, j) => {
          let d = 0;
          for (let k = 0; k < n; k++) d += v[k]! * w[k]!;
          expect(Math.abs(d - (i === j ? 1 : 0))).toBeLessThan(1e-12);
        });
      });
    }
  });
});
