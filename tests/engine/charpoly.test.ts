/**
 * linalg/charpoly.ts: the characteristic polynomial (Householder reduction to
 * Hessenberg form, then the Hessenberg recurrence) and the Routh–Hurwitz count
 * (docs/model.md §4; sources in docs/references.md, "Characteristic polynomial
 * and Routh–Hurwitz"):
 *
 *  - Vieta's formulas: the coefficients of Π(λ − λ_i) are the signed elementary
 *    symmetric functions of the roots (textbook algebra), on matrices built
 *    here with known eigenvalues (A = S Λ S⁻¹, S inverted by ml-matrix);
 *  - against ml-matrix's eigenvalues (an independent library, called here
 *    directly) on seeded random matrices, n = 2…10;
 *  - the Routh count against the number of ml-matrix eigenvalues with Re λ > 0;
 *  - textbook Routh examples: the Routh–Hurwitz criterion as stated in
 *    control-engineering texts (e.g. Ogata, *Modern Control Engineering*, the
 *    section on Routh's stability criterion; the examples and their answers are
 *    from memory and each answer is also checked against the roots here);
 *  - degenerate tables (a zero in the first column) → null.
 */
import { EigenvalueDecomposition, inverse, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { charPoly, charPolyScratch, hurwitzUnstable } from '../../server/engine/linalg/charpoly.js';
import { Random } from '../../server/engine/random.js';

/** Descending coefficients of Π(λ − λ_i) for complex roots (re, im), by repeated multiplication (Vieta). */
function fromRoots(re: ArrayLike<number>, im: ArrayLike<number>): { re: number[]; im: number[] } {
  let cr = [1];
  let ci = [0];
  for (let i = 0; i < re.length; i++) {
    const nr = new Array<number>(cr.length + 1).fill(0);
    const ni = new Array<number>(cr.length + 1).fill(0);
    for (let t = 0; t < cr.length; t++) {
      nr[t]! += cr[t]!;
      ni[t]! += ci[t]!;
      // − λ_i · c_t goes one degree lower
      nr[t + 1]! -= re[i]! * cr[t]! - im[i]! * ci[t]!;
      ni[t + 1]! -= re[i]! * ci[t]! + im[i]! * cr[t]!;
    }
    cr = nr;
    ci = ni;
  }
  return { re: cr, im: ci };
}

function mlEigen(a: Float64Array, n: number): { re: number[]; im: number[] } {
  const m = new Matrix(n, n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) m.set(i, j, a[i * n + j]!);
  const e = new EigenvalueDecomposition(m);
  return { re: e.realEigenvalues, im: e.imaginaryEigenvalues };
}

/** |c_k − e_k| ≤ tol · C(n,k) · ρ^k, the size of the k-th symmetric function of n roots of modulus ≤ ρ. */
function expectCoefficients(c: Float64Array, expected: number[], rho: number, tol: number): void {
  const n = c.length - 1;
  let binom = 1;
  for (let k = 0; k <= n; k++) {
    const bound = tol * binom * Math.max(rho, 1e-300) ** k;
    expect(Math.abs(c[k]! - expected[k]!)).toBeLessThanOrEqual(bound);
    binom = (binom * (n - k)) / (k + 1);
  }
}

/** A = S Λ S⁻¹ with Λ block diagonal (2×2 blocks [[a, b], [−b, a]] for a ± ib), S = I + 0.3·N(0,1). */
function withEigenvalues(rng: Random, re: number[], im: number[]): Float64Array {
  const n = re.length;
  const L = Matrix.zeros(n, n);
  for (let i = 0; i < n; i++) {
    if (im[i] !== 0 && i + 1 < n && im[i + 1] === -im[i]!) {
      L.set(i, i, re[i]!);
      L.set(i + 1, i + 1, re[i]!);
      L.set(i, i + 1, im[i]!);
      L.set(i + 1, i, -im[i]!);
      i++;
    } else {
      L.set(i, i, re[i]!);
    }
  }
  const S = Matrix.eye(n, n);
  for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) S.set(i, j, S.get(i, j) + 0.3 * rng.normal());
  const A = S.mmul(L).mmul(inverse(S));
  return Float64Array.from(A.to1DArray());
}

describe('charPoly', () => {
  it('matches Vieta on matrices with known eigenvalues', () => {
    const rng = new Random(11);
    const cases: Array<[number[], number[]]> = [
      [[2, 3], [0, 0]],
      [[-1, -2, -3], [0, 0, 0]],
      [[0.5, 0.5, -4, 7], [2, -2, 0, 0]],
      [[-1, -1, -1, -1, 2, 2], [3, -3, 0.5, -0.5, 0, 0]],
      [[-10, -0.1, 0.01, 4, 4, -2, 1, 1], [0, 0, 0, 1, -1, 0, 5, -5]],
    ];
    for (const [re, im] of cases) {
      const n = re.length;
      const a = withEigenvalues(rng, re, im);
      const c = charPoly(a, n);
      const e = fromRoots(re, im);
      for (const x of e.im) expect(Math.abs(x)).toBeLessThan(1e-9);
      const rho = Math.max(...re.map((r, i) => Math.hypot(r, im[i]!)));
      expectCoefficients(c, e.re, rho, 1e-9);
    }
  });

  it('agrees with the ml-matrix eigenvalues on seeded random matrices, n = 2…10', () => {
    const rng = new Random(2026);
    for (let n = 2; n <= 10; n++) {
      const scratch = charPolyScratch(n);
      for (let trial = 0; trial < 40; trial++) {
        const scale = 10 ** rng.between(-3, 3);
        const a = Float64Array.from({ length: n * n }, () => scale * rng.normal());
        const ev = mlEigen(a, n);
        const e = fromRoots(ev.re, ev.im);
        const rho = Math.max(...ev.re.map((r, i) => Math.hypot(r, ev.im[i]!)));
        const c = charPoly(a, n, scratch);
        expect(c).toBe(scratch.out);
        expectCoefficients(c, e.re, rho, 1e-10 * n);
        // the general call gives the same numbers
        expect(Array.from(charPoly(a, n))).toEqual(Array.from(c));
      }
    }
  });

  it('is exact on triangular and diagonal input and handles the trivial sizes', () => {
    // upper triangular: det(λI − A) = Π(λ − a_ii) (textbook)
    const c = charPoly(Float64Array.of(2, 7, -1, 0, 3, 5, 0, 0, -4), 3);
    expect(Array.from(c)).toEqual(fromRoots([2, 3, -4], [0, 0, 0]).re);
    expect(Array.from(charPoly(new Float64Array(0), 0))).toEqual([1]);
    expect(Array.from(charPoly(Float64Array.of(-3), 1))).toEqual([1, 3]);
    expect(Array.from(charPoly(new Float64Array(4), 2))).toEqual([1, 0, 0]);
    const bad = charPoly(Float64Array.of(1, Number.NaN, 0, 1), 2);
    expect(bad[0]).toBe(1);
    expect(Number.isNaN(bad[1]!) && Number.isNaN(bad[2]!)).toBe(true);
  });

  it('survives entries near the ends of the double range (power-of-two scaling)', () => {
    const big = Float64Array.of(3e150, 1e150, 2e150, 4e150);
    const c = charPoly(big, 2);
    // λ² − tr λ + det, with tr = 7e150, det = 10e300 (2×2 Vieta)
    expect(Math.abs(c[1]! + 7e150) / 7e150).toBeLessThan(1e-14);
    expect(Math.abs(c[2]! - 10e300) / 10e300).toBeLessThan(1e-13);
  });
});

describe('hurwitzUnstable', () => {
  it('counts right-half-plane roots like the ml-matrix eigenvalues on seeded random matrices', () => {
    const rng = new Random(7);
    let checked = 0;
    for (let n = 1; n <= 10; n++) {
      const work = new Float64Array(3 * (Math.floor(n / 2) + 2));
      for (let trial = 0; trial < 60; trial++) {
        // a shift spreads the count over 0…n
        const shift = rng.between(-2, 2) * Math.sqrt(n);
        const a = Float64Array.from({ length: n * n }, () => rng.normal());
        for (let i = 0; i < n; i++) a[i * n + i]! += shift;
        const ev = mlEigen(a, n);
        if (ev.re.some((r) => Math.abs(r) < 1e-6)) continue; // too near the axis to count by eigenvalues
        const expected = ev.re.filter((r) => r > 0).length;
        expect(hurwitzUnstable(charPoly(a, n), work)).toBe(expected);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(500);
  });

  it('gives the textbook answers (Routh–Hurwitz criterion; examples from memory, roots checked here)', () => {
    // s³ + s² + 2s + 8: first column 1, 1, −6, 8 → two sign changes, two roots with Re > 0
    expect(hurwitzUnstable([1, 1, 2, 8])).toBe(2);
    // s⁴ + 2s³ + 3s² + 4s + 5: first column 1, 2, 1, −6, 5 → two roots with Re > 0 (Ogata, from memory)
    expect(hurwitzUnstable([1, 2, 3, 4, 5])).toBe(2);
    // a cubic a0 s³ + a1 s² + a2 s + a3 with positive coefficients is stable iff a1 a2 > a0 a3:
    // s³ + 2s² + 3s + K is stable for 0 < K < 6, has two roots with Re > 0 for K > 6
    expect(hurwitzUnstable([1, 2, 3, 5.9])).toBe(0);
    expect(hurwitzUnstable([1, 2, 3, 6.1])).toBe(2);
    // K < 0: one positive real root (the last entry of the first column is K)
    expect(hurwitzUnstable([1, 2, 3, -1])).toBe(1);
    // a negative leading coefficient is the same polynomial
    expect(hurwitzUnstable([-1, -2, -3, -5.9])).toBe(0);
    // the same answers from the roots (ml-matrix on the companion matrix)
    for (const [p, want] of [
      [[1, 1, 2, 8], 2],
      [[1, 2, 3, 4, 5], 2],
      [[1, 2, 3, 5.9], 0],
      [[1, 2, 3, 6.1], 2],
      [[1, 2, 3, -1], 1],
    ] as Array<[number[], number]>) {
      const n = p.length - 1;
      const comp = new Float64Array(n * n);
      for (let j = 0; j < n; j++) comp[j] = -p[j + 1]!;
      for (let i = 1; i < n; i++) comp[i * n + i - 1] = 1;
      expect(mlEigen(comp, n).re.filter((r) => r > 0).length).toBe(want);
    }
  });

  it('answers null for a degenerate table', () => {
    // s³ + 2s² + 3s + 6 = (s + 2)(s² + 3): a row of zeros (roots ±i√3 on the axis)
    expect(hurwitzUnstable([1, 2, 3, 6])).toBeNull();
    // s³ + 2s² + s + 2 = (s + 2)(s² + 1)
    expect(hurwitzUnstable([1, 2, 1, 2])).toBeNull();
    // s⁴ + s³ + 2s² + 2s + 3: a zero first entry in the third row (the textbook's ε case)
    expect(hurwitzUnstable([1, 1, 2, 2, 3])).toBeNull();
    // a root at 0
    expect(hurwitzUnstable(charPoly(Float64Array.of(0, 0, 0, 0, -1, 0, 0, 0, -2), 3))).toBeNull();
    // a rotation: λ² + 1
    expect(hurwitzUnstable(charPoly(Float64Array.of(0, -1, 1, 0), 2))).toBeNull();
    // non-finite or zero leading coefficient
    expect(hurwitzUnstable([0, 1, 1])).toBeNull();
    expect(hurwitzUnstable([1, Number.NaN, 1])).toBeNull();
    expect(hurwitzUnstable([])).toBeNull();
    expect(hurwitzUnstable([5])).toBe(0);
  });
});
