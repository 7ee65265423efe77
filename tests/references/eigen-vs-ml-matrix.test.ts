/**
 * The engine's eigen routine against an independent library.
 *
 * Reference: ml-matrix's `EigenvalueDecomposition` (a port of JAMA's orthes +
 * hqr2; references.md, "reference library"). The engine uses balancing,
 * elimination to Hessenberg form and its own Francis QR, with eigenvectors by
 * inverse iteration — a different code path. Compared on seeded random real
 * non-symmetric matrices by value (each engine eigenvalue has a partner in the
 * reference spectrum) and by residual ‖Jv − λv‖.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { eigenResidual, eigenvalues, eigenvector } from '../../server/engine/linalg/eigen.js';
import { Random } from '../../server/engine/random.js';

function reference(a: Float64Array, n: number): { re: number; im: number }[] {
  const rows: number[][] = [];
  for (let i = 0; i < n; i++) rows.push(Array.from(a.subarray(i * n, i * n + n)));
  const e = new EigenvalueDecomposition(new Matrix(rows));
  return e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i]! }));
}

function frob(a: Float64Array): number {
  let s = 0;
  for (const x of a) s += x * x;
  return Math.sqrt(s);
}

/** Greedy matching of two spectra; returns the largest distance. */
function matchDistance(a: { re: number; im: number }[], b: { re: number; im: number }[]): number {
  const used = new Array(b.length).fill(false);
  let worst = 0;
  for (const x of a) {
    let best = Infinity;
    let j = -1;
    b.forEach((y, i) => {
      if (used[i]) return;
      const d = Math.hypot(x.re - y.re, x.im - y.im);
      if (d < best) {
        best = d;
        j = i;
      }
    });
    used[j] = true;
    worst = Math.max(worst, best);
  }
  return worst;
}

describe('eigenvalues and eigenvectors vs ml-matrix', () => {
  it('agree on 400 seeded random non-symmetric matrices (n = 1…12, entries over 6 decades)', () => {
    const rng = new Random(7);
    let complexPairs = 0;
    for (let t = 0; t < 400; t++) {
      const n = 1 + (t % 12);
      const a = new Float64Array(n * n);
      for (let i = 0; i < n * n; i++) a[i] = (rng.uniform() * 2 - 1) * 10 ** rng.between(-3, 3);
      const s = eigenvalues(a, n);
      expect(s.converged).toBe(true);
      const mine = Array.from(s.re, (re, i) => ({ re, im: s.im[i]! }));
      const ref = reference(a, n);
      const norm = frob(a);
      expect(matchDistance(mine, ref)).toBeLessThan(1e-9 * norm);
      expect(matchDistance(ref, mine)).toBeLessThan(1e-9 * norm);
      for (const e of mine) {
        if (e.im > 0) complexPairs++;
        const v = eigenvector(a, n, e.re, e.im);
        expect(eigenResidual(a, n, e.re, e.im, v)).toBeLessThan(1e-10);
      }
      // Sum of eigenvalues = trace (an identity, independent of both codes).
      let tr = 0;
      for (let i = 0; i < n; i++) tr += a[i * n + i]!;
      const sum = mine.reduce((acc, e) => acc + e.re, 0);
      expect(Math.abs(sum - tr)).toBeLessThan(1e-10 * norm * n);
    }
    expect(complexPairs).toBeGreaterThan(100);
  });

  it('agree on 200 seeded random Jacobian-shaped matrices (diagonal plus rank one or two, badly scaled)', () => {
    const rng = new Random(99);
    for (let t = 0; t < 200; t++) {
      const n = 2 + (t % 7);
      const r = 1 + (t % 2);
      const a = new Float64Array(n * n);
      for (let i = 0; i < n; i++) a[i * n + i] = -(10 ** rng.between(-2, 2));
      for (let q = 0; q < r; q++) {
        const u = Array.from({ length: n }, () => rng.normal() * 10 ** rng.between(-2, 2));
        const v = Array.from({ length: n }, () => rng.normal());
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) a[i * n + j]! -= u[i]! * v[j]!;
      }
      const s = eigenvalues(a, n);
      expect(s.converged).toBe(true);
      const mine = Array.from(s.re, (re, i) => ({ re, im: s.im[i]! }));
      expect(matchDistance(mine, reference(a, n))).toBeLessThan(1e-9 * frob(a));
      for (const e of mine) expect(eigenResidual(a, n, e.re, e.im, eigenvector(a, n, e.re, e.im))).toBeLessThan(1e-9);
    }
  });

  it('handles the awkward cases: zero matrix, rotation, Jordan block, companion matrix', () => {
    expect(Array.from(eigenvalues(new Float64Array(9), 3).re)).toEqual([0, 0, 0]);
    const rot = eigenvalues(Float64Array.of(0, -2, 2, 0), 2);
    expect(rot.re[0]).toBeCloseTo(0, 14);
    expect(Math.abs(rot.im[0]!)).toBeCloseTo(2, 14);
    expect(rot.im[0]! + rot.im[1]!).toBe(0);
    const jordan = eigenvalues(Float64Array.of(3, 1, 0, 0, 3, 1, 0, 0, 3), 3);
    for (const x of jordan.re) expect(x).toBeCloseTo(3, 4); // a defective eigenvalue is only ~ε^(1/3) accurate
    // Companion matrix of (x−1)(x−2)(x−3)(x−4) = x⁴ − 10x³ + 35x² − 50x + 24.
    const comp = Float64Array.of(10, -35, 50, -24, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0);
    const c = eigenvalues(comp, 4);
    expect(Array.from(c.re).sort((x, y) => x - y).map((x) => Number(x.toFixed(9)))).toEqual([1, 2, 3, 4]);
  });

  it('reports non-finite input as not converged instead of throwing', () => {
    const s = eigenvalues(Float64Array.of(1, Number.NaN, 0, 1), 2);
    expect(s.converged).toBe(false);
  });
});
