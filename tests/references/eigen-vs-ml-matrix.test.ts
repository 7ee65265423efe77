/**
 * The general eigen path (linalg/eigen.ts, a wrapper over ml-matrix's
 * `EigenvalueDecomposition`) and the closed-form 2×2 path (spectrum.ts), checked
 * by identities that hold for any correct answer and are computed here by hand,
 * not by either code (docs/references.md, "Stability of the mixture"):
 *
 *  - eigenpair residual ‖Av − λv‖ ≤ c ε ‖A‖ ‖v‖ (a backward-stable solver's answer
 *    is an exact eigenpair of a nearby matrix; Golub & Van Loan, *Matrix
 *    Computations*, §7.1–7.5, from memory);
 *  - the power sums Σλ^j = tr(A^j) (the trace is the sum of the eigenvalues and
 *    A^j has eigenvalues λ^j; with j = 1…n these fix the whole spectrum through
 *    Newton's identities; textbook linear algebra);
 *  - det A = Πλ, with det A by a cofactor (Laplace) expansion written below for
 *    n ≤ 5 (textbook linear algebra);
 *  - for 2×2: the Routh–Hurwitz conditions (stable iff tr < 0 and det > 0,
 *    complex iff tr² < 4 det; Strogatz, *Nonlinear Dynamics and Chaos*, §5.2) and
 *    Vieta (λ₁ + λ₂ = tr, λ₁λ₂ = det).
 *
 * The file keeps its name: ml-matrix was the outside reference when the engine had
 * its own QR; now it is the engine's general path, and the identities are the check.
 */
import { describe, expect, it } from 'vitest';
import { eigenDecomposition, eigenvalues, type ComplexVector } from '../../server/engine/linalg/eigen.js';
import { Random } from '../../server/engine/random.js';
import { eigenvalues2x2 } from '../../server/engine/spectrum.js';

/** ‖Av − λv‖ / (‖A‖_F ‖v‖), computed here. */
function residual(a: Float64Array, n: number, lr: number, li: number, v: ComplexVector): number {
  let num = 0;
  let vn = 0;
  let an = 0;
  for (const x of a) an += x * x;
  for (let i = 0; i < n; i++) {
    let sr = -(lr * v.re[i]! - li * v.im[i]!);
    let si = -(lr * v.im[i]! + li * v.re[i]!);
    for (let j = 0; j < n; j++) {
      sr += a[i * n + j]! * v.re[j]!;
      si += a[i * n + j]! * v.im[j]!;
    }
    num += sr * sr + si * si;
    vn += v.re[i]! ** 2 + v.im[i]! ** 2;
  }
  return Math.sqrt(num) / (Math.sqrt(an) * Math.sqrt(vn));
}

/** Determinant by cofactor expansion along the first row (n ≤ 5 here: at most 120 products). */
function cofactorDet(a: number[][]): number {
  const n = a.length;
  if (n === 1) return a[0]![0]!;
  let det = 0;
  for (let j = 0; j < n; j++) {
    const minor = a.slice(1).map((row) => row.filter((_, c) => c !== j));
    det += (j % 2 === 0 ? 1 : -1) * a[0]![j]! * cofactorDet(minor);
  }
  return det;
}

function rows(a: Float64Array, n: number): number[][] {
  return Array.from({ length: n }, (_, i) => Array.from(a.subarray(i * n, i * n + n)));
}

function matmul(x: Float64Array, y: Float64Array, n: number): Float64Array {
  const z = new Float64Array(n * n);
  for (let i = 0; i < n; i++) for (let k = 0; k < n; k++) for (let j = 0; j < n; j++) z[i * n + j]! += x[i * n + k]! * y[k * n + j]!;
  return z;
}

function frob(a: Float64Array): number {
  return Math.sqrt(a.reduce((s, x) => s + x * x, 0));
}

/** Every identity above for one matrix; returns the number of complex pairs. */
function checkIdentities(a: Float64Array, n: number): number {
  const e = eigenDecomposition(a, n);
  expect(e.converged).toBe(true);
  const norm = frob(a);
  let pairs = 0;
  for (let i = 0; i < n; i++) {
    expect(residual(a, n, e.re[i]!, e.im[i]!, e.vectors[i]!)).toBeLessThan(1e-11);
    if (e.im[i]! > 0) {
      pairs++;
      // a pair is adjacent, +Im first, conjugate values and conjugate vectors
      expect(e.re[i + 1]).toBe(e.re[i]);
      expect(e.im[i + 1]).toBe(-e.im[i]!);
      for (let r = 0; r < n; r++) {
        expect(e.vectors[i + 1]!.re[r]).toBeCloseTo(e.vectors[i]!.re[r]!, 12);
        expect(e.vectors[i + 1]!.im[r]).toBeCloseTo(-e.vectors[i]!.im[r]!, 12);
      }
    }
  }
  // Σλ^j = tr(A^j), j = 1 … min(n, 4): complex powers by hand.
  let power = a;
  for (let j = 1; j <= Math.min(n, 4); j++) {
    if (j > 1) power = matmul(power, a, n);
    let tr = 0;
    for (let i = 0; i < n; i++) tr += power[i * n + i]!;
    let sr = 0;
    let si = 0;
    for (let i = 0; i < n; i++) {
      const mod = Math.hypot(e.re[i]!, e.im[i]!) ** j;
      const arg = j * Math.atan2(e.im[i]!, e.re[i]!);
      sr += mod * Math.cos(arg);
      si += mod * Math.sin(arg);
    }
    expect(Math.abs(sr - tr)).toBeLessThan(1e-11 * n * norm ** j);
    expect(Math.abs(si)).toBeLessThan(1e-11 * n * norm ** j);
  }
  // det A = Πλ, det by cofactors. Rounding scale: the product of the row norms (Hadamard's bound).
  if (n <= 5) {
    let pr = 1;
    let pi = 0;
    for (let i = 0; i < n; i++) [pr, pi] = [pr * e.re[i]! - pi * e.im[i]!, pr * e.im[i]! + pi * e.re[i]!];
    let hadamard = 1;
    for (let i = 0; i < n; i++) hadamard *= Math.hypot(...a.subarray(i * n, i * n + n));
    expect(Math.abs(pr - cofactorDet(rows(a, n)))).toBeLessThan(1e-11 * n * Math.max(hadamard, norm ** n));
    expect(Math.abs(pi)).toBeLessThan(1e-11 * n * Math.max(hadamard, norm ** n));
  }
  // eigenvalues() reports the same values as the decomposition.
  const v = eigenvalues(a, n);
  expect(Array.from(v.re)).toEqual(Array.from(e.re));
  expect(Array.from(v.im)).toEqual(Array.from(e.im));
  return pairs;
}

describe('general eigen path (ml-matrix) by identities', () => {
  it('400 seeded random non-symmetric matrices (n = 1…12, entries over 6 decades)', () => {
    const rng = new Random(7);
    let pairs = 0;
    for (let t = 0; t < 400; t++) {
      const n = 1 + (t % 12);
      const a = new Float64Array(n * n);
      for (let i = 0; i < n * n; i++) a[i] = (rng.uniform() * 2 - 1) * 10 ** rng.between(-3, 3);
      pairs += checkIdentities(a, n);
    }
    expect(pairs).toBeGreaterThan(100);
  });

  it('200 seeded random Jacobian-shaped matrices (diagonal minus rank one or two, badly scaled)', () => {
    const rng = new Random(99);
    for (let t = 0; t < 200; t++) {
      const n = 2 + (t % 7);
      const r = 1 + (t % 2);
      const a = new Float64Array(n * n);
      for (let i = 0; i < n; i++) a[i * n + i] = -(10 ** rng.between(-2, 2));
      for (let q = 0; q < r; q++) {
        const u = Array.from({ length: n }, () => rng.normal() * 10 ** rng.between(-2, 2));
        const w = Array.from({ length: n }, () => rng.normal());
        for (let i = 0; i < n; i++) for (let j = 0; j < n; j++) a[i * n + j]! -= u[i]! * w[j]!;
      }
      checkIdentities(a, n);
    }
  });

  it('a symmetric matrix (the library takes its symmetric path): real eigenvalues, real vectors', () => {
    const rng = new Random(5);
    for (let n = 2; n <= 8; n++) {
      const a = new Float64Array(n * n);
      for (let i = 0; i < n; i++) for (let j = 0; j <= i; j++) a[i * n + j] = a[j * n + i] = rng.normal();
      checkIdentities(a, n);
      const e = eigenDecomposition(a, n);
      for (let i = 0; i < n; i++) {
        expect(e.im[i]).toBe(0);
        expect(e.vectors[i]!.im.every((x) => x === 0)).toBe(true);
      }
    }
  });

  it('awkward cases with answers known by hand', () => {
    expect(Array.from(eigenvalues(new Float64Array(9), 3).re)).toEqual([0, 0, 0]);
    // [[0, −2], [2, 0]] is a rotation by 90° scaled by 2: λ = ±2i.
    const rot = eigenvalues(Float64Array.of(0, -2, 2, 0), 2);
    expect(Math.abs(rot.re[0]!)).toBeLessThan(1e-15);
    expect(rot.im[0]).toBeCloseTo(2, 14);
    expect(rot.im[1]).toBe(-rot.im[0]!);
    // A 3×3 Jordan block: a defective eigenvalue is only ~ε^(1/3) accurate (from memory, perturbation theory).
    const jordan = eigenvalues(Float64Array.of(3, 1, 0, 0, 3, 1, 0, 0, 3), 3);
    for (const x of jordan.re) expect(x).toBeCloseTo(3, 4);
    // Companion matrix of (x−1)(x−2)(x−3)(x−4) = x⁴ − 10x³ + 35x² − 50x + 24 (expanded by hand).
    const comp = Float64Array.of(10, -35, 50, -24, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, 0);
    const c = eigenvalues(comp, 4);
    expect(Array.from(c.re).sort((x, y) => x - y).map((x) => Number(x.toFixed(9)))).toEqual([1, 2, 3, 4]);
    // Upper triangular: the eigenvalues are the diagonal.
    const tri = eigenvalues(Float64Array.of(1, 5, 7, 0, -2, 3, 0, 0, 4), 3);
    expect(Array.from(tri.re).sort((x, y) => x - y).map((x) => Number(x.toFixed(12)))).toEqual([-2, 1, 4]);
  });

  it('entries near the ends of the double range neither overflow nor underflow (power-of-two scaling)', () => {
    for (const s of [1e300, 2 ** -1000]) {
      const rot = eigenvalues(Float64Array.of(0, -s, 0, s, 0, 0, 0, 0, -s), 3);
      expect(rot.converged).toBe(true);
      const im = Array.from(rot.im).sort((x, y) => x - y);
      expect(im[0]! / -s).toBeCloseTo(1, 13);
      expect(im[2]! / s).toBeCloseTo(1, 13);
      expect(Math.min(...rot.re) / -s).toBeCloseTo(1, 13);
    }
  });

  it('a non-finite entry is "not converged" (NaN values), answered without calling the library (whose QR loop never ends on NaN)', () => {
    for (const bad of [Number.NaN, Infinity, -Infinity]) {
      for (const n of [1, 2, 3, 5]) {
        const a = new Float64Array(n * n).fill(1);
        a[n * n - 1] = bad;
        const s = eigenvalues(a, n);
        expect(s.converged).toBe(false);
        expect(Number.isNaN(s.re[0]!)).toBe(true);
        const d = eigenDecomposition(a, n);
        expect(d.converged).toBe(false);
        expect(d.vectors).toHaveLength(n);
      }
    }
    expect(eigenvalues(new Float64Array(0), 0)).toEqual({ re: new Float64Array(0), im: new Float64Array(0), converged: true });
  });
});

describe('closed-form 2×2 path vs Routh–Hurwitz and Vieta', () => {
  it('[[1, 2], [3, 4]]: λ = (5 ± √33)/2 (the quadratic formula by hand)', () => {
    const e = eigenvalues2x2(Float64Array.of(1, 2, 3, 4));
    expect(e.re[0]).toBeCloseTo((5 + Math.sqrt(33)) / 2, 14);
    expect(e.re[1]).toBeCloseTo((5 - Math.sqrt(33)) / 2, 14);
  });

  it('on 5000 seeded random 2×2 matrices: stability and complexity follow tr and det, the values sum to tr and multiply to det', () => {
    const rng = new Random(2222);
    let complex = 0;
    let stable = 0;
    for (let t = 0; t < 5000; t++) {
      const J = Float64Array.from({ length: 4 }, () => (rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-3, 3));
      const [a, b, c, d] = J as unknown as [number, number, number, number];
      const tr = a + d;
      const det = a * d - b * c;
      const scale = Math.abs(a) + Math.abs(d) + Math.sqrt(Math.abs(b * c));
      const e = eigenvalues2x2(J);
      expect(e.converged).toBe(true);
      const sum = e.re[0]! + e.re[1]!;
      const prodRe = e.re[0]! * e.re[1]! - e.im[0]! * e.im[1]!;
      const prodIm = e.re[0]! * e.im[1]! + e.im[0]! * e.re[1]!;
      expect(Math.abs(sum - tr)).toBeLessThan(1e-13 * scale);
      expect(Math.abs(prodRe - det)).toBeLessThan(1e-13 * scale * scale);
      expect(Math.abs(prodIm)).toBeLessThan(1e-13 * scale * scale);
      // Skip samples within rounding of a boundary, where either answer is right.
      if (Math.abs(tr) < 1e-9 * scale || Math.abs(det) < 1e-9 * scale * scale || Math.abs(tr * tr - 4 * det) < 1e-9 * scale * scale) continue;
      const isStable = Math.max(e.re[0]!, e.re[1]!) < 0;
      const isComplex = e.im[0] !== 0;
      expect(isStable).toBe(tr < 0 && det > 0);
      expect(isComplex).toBe(tr * tr < 4 * det);
      if (isComplex) {
        complex++;
        expect(e.im[0]!).toBeGreaterThan(0);
        expect(e.re[0]).toBe(tr / 2);
      } else expect(e.re[0]!).toBeGreaterThanOrEqual(e.re[1]!);
      if (isStable) stable++;
    }
    expect(complex).toBeGreaterThan(500);
    expect(stable).toBeGreaterThan(500);
  });

  it('a non-finite entry is "not converged"', () => {
    expect(eigenvalues2x2(Float64Array.of(1, Number.NaN, 0, 1)).converged).toBe(false);
  });
});
