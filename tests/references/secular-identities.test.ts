/**
 * Computed eigenvalues satisfy the low-rank identities of model.md §3.
 *
 * Source: the matrix determinant lemma / Weinstein–Aronszajn identity,
 * det(A + U Vᵀ) = det(A) det(I + Vᵀ A⁻¹ U) (e.g. Horn & Johnson, *Matrix
 * Analysis*). For one chemical it gives the secular equation
 * 1 + k² g Σ_m s_m/(λ + k² D_m) = 0; for S chemicals an S×S determinant.
 * Checked on seeded random mixtures against eigenvalues from the general
 * QR routine.
 */
import { describe, expect, it } from 'vitest';
import { reducedCharacteristic } from '../../server/engine/characteristic.js';
import { eigenvalues } from '../../server/engine/linalg/eigen.js';
import { buildModel, jacobian } from '../../server/engine/model.js';
import { Random } from '../../server/engine/random.js';
import { largestSecularRoot, sameSign, secularResidual } from '../../server/engine/secular.js';
import { secularTerms } from '../../server/engine/spectrum.js';
import type { Mixture } from '../../server/engine/types.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';

function randomMixture(rng: Random, M: number, S: number, signs: 'mixed' | 'attract' | 'repel'): Mixture {
  const chems = Array.from({ length: S }, (_, s) => chemical(`c${s}`, 10 ** rng.between(-9.5, -8.5), rng.uniform() < 0.3 ? 0 : 10 ** rng.between(-4, 0)));
  const sp = Array.from({ length: M }, (_, m) => {
    const couplings = chems.map((c) => {
      let a = -(10 ** rng.between(-18, -15));
      let mu = 10 ** rng.between(-12, -10);
      if (signs === 'mixed') {
        if (rng.uniform() < 0.5) a = -a;
        if (rng.uniform() < 0.5) mu = -mu;
      } else if (signs === 'repel') mu = -mu; // α μ > 0
      return constant(c.id, a, mu);
    });
    return species(`s${m}`, 10 ** rng.between(-13, -11), 10 ** rng.between(12, 16), couplings);
  });
  return mixture(chems, sp, 'sealed', 1e-3);
}

/** |F(λ)/F'(λ)| for F = 1 + Σ c/(λ − p), complex λ. */
function newtonStep(c: Float64Array, poles: Float64Array, lr: number, li: number): number {
  let fr = 1;
  let fi = 0;
  let dr = 0;
  let di = 0;
  for (let m = 0; m < c.length; m++) {
    const xr = lr - poles[m]!;
    const xi = li;
    const x2 = xr * xr + xi * xi;
    fr += (c[m]! * xr) / x2;
    fi += (-c[m]! * xi) / x2;
    // −c/(x²): 1/x² = conj(x)²/|x|⁴
    const qr = (xr * xr - xi * xi) / (x2 * x2);
    const qi = (-2 * xr * xi) / (x2 * x2);
    dr -= c[m]! * qr;
    di -= c[m]! * qi;
  }
  return Math.hypot(fr, fi) / Math.hypot(dr, di);
}

describe('secular equation (rank one)', () => {
  it('every computed eigenvalue solves 1 + Σ c_m/(λ − p_m) = 0 on 300 seeded random cases', () => {
    const rng = new Random(12345);
    let complex = 0;
    for (let t = 0; t < 300; t++) {
      const model = buildModel(randomMixture(rng, 1 + (t % 8), 1, 'mixed'));
      const k = 10 ** rng.between(-1, 2);
      const J = jacobian(model, k);
      const s = eigenvalues(J, model.M);
      const norm = Math.sqrt(J.reduce((acc, x) => acc + x * x, 0));
      const { c, poles } = secularTerms(model, k);
      for (let i = 0; i < model.M; i++) {
        if (s.im[i] !== 0) complex++;
        // Skip eigenvalues that sit on a pole (a species decoupled at this k).
        const nearPole = Array.from(poles).some((p) => Math.hypot(s.re[i]! - p, s.im[i]!) < 1e-9 * Math.abs(p));
        if (nearPole) continue;
        // The Newton correction |F/F'| says how far λ is from an exact root: within rounding of ‖J‖.
        expect(newtonStep(c, poles, s.re[i]!, s.im[i]!)).toBeLessThan(1e-11 * norm);
        expect(secularResidual(c, poles, s.re[i]!, s.im[i]!)).toBeLessThan(1e-6);
      }
    }
    expect(complex).toBeGreaterThan(20);
  });

  it('the secular path gives the same largest eigenvalue as QR when the couplings share a sign', () => {
    const rng = new Random(777);
    for (let t = 0; t < 300; t++) {
      const model = buildModel(randomMixture(rng, 1 + (t % 9), 1, t % 2 === 0 ? 'attract' : 'repel'));
      const k = 10 ** rng.between(-1, 2);
      const { c, poles } = secularTerms(model, k);
      expect(sameSign(c)).toBe(true);
      const s = eigenvalues(jacobian(model, k), model.M);
      // Same-sign couplings: all roots real (model.md §3).
      for (const im of s.im) expect(im).toBe(0);
      const qr = Math.max(...s.re);
      const sec = largestSecularRoot(c, poles);
      const scale = Math.max(...Array.from(poles, Math.abs), ...Array.from(c, Math.abs));
      expect(Math.abs(sec - qr)).toBeLessThan(1e-11 * scale);
    }
  });

  it('repelled couplings (α μ > 0) can never destabilise: the largest root is below the largest pole', () => {
    const rng = new Random(4242);
    for (let t = 0; t < 100; t++) {
      const model = buildModel(randomMixture(rng, 1 + (t % 6), 1, 'repel'));
      const { c, poles } = secularTerms(model, 1 + t);
      expect(largestSecularRoot(c, poles)).toBeLessThan(Math.max(...poles));
    }
  });
});

describe('Weinstein–Aronszajn reduction (rank two)', () => {
  it('every computed eigenvalue zeroes det(I₂ + k²G Qᵀ(λ + k²D)⁻¹ P) on 300 seeded random cases', () => {
    const rng = new Random(2718);
    for (let t = 0; t < 300; t++) {
      const model = buildModel(randomMixture(rng, 2 + (t % 7), 2, 'mixed'));
      const k = 10 ** rng.between(-1, 2);
      const s = eigenvalues(jacobian(model, k), model.M);
      for (let i = 0; i < model.M; i++) {
        const nearPole = Array.from(model.diffusivity).some((d) => Math.hypot(s.re[i]! + k * k * d, s.im[i]!) < 1e-7 * k * k * d);
        if (nearPole) continue;
        const f = reducedCharacteristic(model, k, s.re[i]!, s.im[i]!);
        expect(Math.hypot(f.re, f.im) / (f.scale * f.scale)).toBeLessThan(1e-8);
      }
    }
  });

  it('and a point that is not an eigenvalue does not', () => {
    const rng = new Random(31);
    const model = buildModel(randomMixture(rng, 4, 2, 'mixed'));
    const s = eigenvalues(jacobian(model, 3), model.M);
    const probe = Math.max(...s.re) + 1;
    const f = reducedCharacteristic(model, 3, probe, 0.5);
    expect(Math.hypot(f.re, f.im) / (f.scale * f.scale)).toBeGreaterThan(1e-6);
  });
});

describe('the rank-one path for a single species', () => {
  it('is the closed form λ = −k²D − k² g s', () => {
    const mix = mixture([chemical('c', 1e-9, 0.01)], [species('a', 1e-12, 1e15, [constant('c', -1e-17, 1e-11)])], 'sealed', 1e-3);
    const model = buildModel(mix);
    const k = 2;
    const { c, poles } = secularTerms(model, k);
    const exact = poles[0]! - c[0]!;
    expect(Math.abs(largestSecularRoot(c, poles) - exact)).toBeLessThan(16 * Number.EPSILON * Math.abs(exact));
  });
});
