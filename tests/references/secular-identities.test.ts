/**
 * The engine's eigenvalues satisfy the low-rank identities of docs/model.md §3,
 * with every pole, coefficient and scale built here by hand from the mixture's
 * inputs (SI), not read from the code under test.
 *
 * Source: the matrix determinant lemma / Weinstein–Aronszajn identity,
 * det(A + U Vᵀ) = det(A) det(I + Vᵀ A⁻¹ U) (e.g. Horn & Johnson, *Matrix
 * Analysis*; docs/references.md). For one chemical with diffusivity D_c and loss
 * κ, and species with D_m, ρ_m, α_m, μ_m, the Jacobian of docs/model.md §3 is
 *
 *     J(k) = diag(p) − k² g(k) (ρ∘μ) αᵀ,   p_m = −k² D_m,   g(k) = 1/(D_c k² + κ),
 *
 * so every eigenvalue that is not a pole solves the secular equation
 * F(λ) = 1 + Σ_m c_m/(λ − p_m) = 0 with c_m = k² g s_m and s_m = α_m μ_m ρ_m.
 * For S chemicals (constant couplings, R = diag κ) an eigenvalue zeroes the S×S
 * determinant det(I_S + k² G αᵀ (λ + k² diag D)⁻¹ diag(ρ) μ), G = diag(1/(D_s k² + κ_s)).
 * Each eigenvalue is judged by its Newton correction |F/F'| (how far it is from
 * an exact root), against a scale computed here: max_m |p_m| + Σ_m |c_m| for the
 * secular equation, the ∞-norm of the hand-built J(k) for the S×S case.
 */
import { describe, expect, it } from 'vitest';
import { reducedCharacteristic } from '../../server/engine/characteristic.js';
import { eigenvalues } from '../../server/engine/linalg/eigen.js';
import { buildModel } from '../../server/engine/model.js';
import { eigenvaluesAt } from '../../server/engine/probe.js';
import { Random } from '../../server/engine/random.js';
import { largestSecularRoot, secularResidual } from '../../server/engine/secular.js';
import { modeSpectrum } from '../../server/engine/spectrum.js';
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

interface Secular {
  c: Float64Array;
  poles: Float64Array;
  /** max|p_m| + Σ|c_m|: the size of J(k), the rounding scale of its eigenvalues */
  scale: number;
  /** J(k) in SI (row-major), assembled here */
  J: Float64Array;
}

/** Poles, coefficients and J(k) for one chemical, by hand from the inputs (SI). */
function handSecular(mix: Mixture, k: number): Secular {
  const ch = mix.chemicals[0]!;
  const k2 = k * k;
  const g = 1 / (ch.diffusivity * k2 + ch.lossRate);
  const M = mix.species.length;
  const c = new Float64Array(M);
  const poles = new Float64Array(M);
  const J = new Float64Array(M * M);
  const alpha = mix.species.map((s) => (s.couplings[0]!.activity as { rate: number }).rate);
  const mu = mix.species.map((s) => s.couplings[0]!.mobility);
  mix.species.forEach((s, m) => {
    poles[m] = -k2 * s.diffusivity;
    c[m] = k2 * g * alpha[m]! * mu[m]! * s.density;
    for (let n = 0; n < M; n++) J[m * M + n] = (m === n ? -k2 * s.diffusivity : 0) - k2 * g * s.density * mu[m]! * alpha[n]!;
  });
  let scale = 0;
  for (let m = 0; m < M; m++) scale = Math.max(scale, Math.abs(poles[m]!));
  for (let m = 0; m < M; m++) scale += Math.abs(c[m]!);
  return { c, poles, scale, J };
}

/** |F(λ)/F'(λ)| for F = 1 + Σ c/(λ − p) at complex λ: how far λ is from an exact root. */
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
    // d/dλ c/(λ − p) = −c/(λ − p)², 1/x² = conj(x)²/|x|⁴
    dr -= (c[m]! * (xr * xr - xi * xi)) / (x2 * x2);
    di -= (c[m]! * (-2 * xr * xi)) / (x2 * x2);
  }
  return Math.hypot(fr, fi) / Math.hypot(dr, di);
}

describe('secular equation (rank one), poles and coefficients by hand', () => {
  it('every engine eigenvalue (probe.ts, SI) solves 1 + Σ c_m/(λ − p_m) = 0 on 300 seeded random cases', () => {
    const rng = new Random(12345);
    let complex = 0;
    let checked = 0;
    for (let t = 0; t < 300; t++) {
      const mix = randomMixture(rng, 1 + (t % 8), 1, 'mixed');
      const k = 10 ** rng.between(2.5, 5); // 1/m
      const h = handSecular(mix, k);
      for (const e of eigenvaluesAt(mix, k)) {
        if (e.im !== 0) complex++;
        // Skip eigenvalues that sit on a pole (a species decoupled at this k).
        if (Array.from(h.poles).some((p) => Math.hypot(e.re - p, e.im) < 1e-9 * Math.abs(p))) continue;
        expect(newtonStep(h.c, h.poles, e.re, e.im)).toBeLessThan(1e-11 * h.scale);
        checked++;
      }
    }
    expect(complex).toBeGreaterThan(20);
    expect(checked).toBeGreaterThan(1000);
  });

  it('the secular root finder, fed the hand-built c and p, gives the largest eigenvalue of the hand-built J (ml-matrix) when the couplings share a sign', () => {
    const rng = new Random(777);
    for (let t = 0; t < 300; t++) {
      const mix = randomMixture(rng, 1 + (t % 9), 1, t % 2 === 0 ? 'attract' : 'repel');
      const k = 10 ** rng.between(2.5, 5);
      const h = handSecular(mix, k);
      const M = mix.species.length;
      const ref = eigenvalues(h.J, M);
      // Same-sign couplings: all roots real (docs/model.md §3, interlacing).
      for (const im of ref.im) expect(Math.abs(im)).toBeLessThan(1e-7 * h.scale);
      const top = Math.max(...ref.re);
      expect(Math.abs(largestSecularRoot(h.c, h.poles) - top)).toBeLessThan(1e-11 * h.scale);
      // The engine's own secular path (scaled units, spectrum.ts) agrees after scaling back.
      const model = buildModel(mix);
      const s = modeSpectrum(model, k * model.lengthUnit);
      expect(Math.abs(s.maxRe / model.timeUnit - top)).toBeLessThan(1e-11 * h.scale);
      // secularResidual is small at the root (its own normalisation, checked only for size)
      expect(secularResidual(h.c, h.poles, top, 0)).toBeLessThan(1e-6);
    }
  });

  it('repelled couplings (α μ > 0, all c_m > 0) can never destabilise: the largest root is below the largest pole', () => {
    const rng = new Random(4242);
    for (let t = 0; t < 100; t++) {
      const mix = randomMixture(rng, 1 + (t % 6), 1, 'repel');
      const h = handSecular(mix, 1e3 * (1 + t));
      expect(largestSecularRoot(h.c, h.poles)).toBeLessThan(Math.max(...h.poles));
    }
  });

  it('one species: λ = −k²D − k² αμρ/(D_c k² + κ), exactly', () => {
    // Written out from docs/model.md §3 for M = 1; the numbers are inputs only.
    const [D, rho, a, mu, Dc, kappa, k] = [1e-12, 1e15, -1e-17, 1e-11, 1e-9, 0.01, 2e3];
    const exact = -k * k * D - (k * k * a * mu * rho) / (Dc * k * k + kappa);
    const mix = mixture([chemical('c', Dc, kappa)], [species('a', D, rho, [constant('c', a, mu)])], 'sealed', 1e-3);
    expect(Math.abs(largestSecularRoot(Float64Array.of((k * k * a * mu * rho) / (Dc * k * k + kappa)), Float64Array.of(-k * k * D)) - exact)).toBeLessThan(4 * Number.EPSILON * Math.abs(exact));
    const model = buildModel(mix);
    expect(Math.abs(modeSpectrum(model, k * model.lengthUnit).maxRe / model.timeUnit - exact)).toBeLessThan(1e-13 * Math.abs(exact));
    expect(Math.abs(eigenvaluesAt(mix, k)[0]!.re - exact)).toBeLessThan(1e-13 * Math.abs(exact));
  });
});

type C = readonly [number, number];
const mul = (a: C, b: C): C => [a[0] * b[0] - a[1] * b[1], a[0] * b[1] + a[1] * b[0]];
const sub = (a: C, b: C): C => [a[0] - b[0], a[1] - b[1]];
const add = (a: C, b: C): C => [a[0] + b[0], a[1] + b[1]];

/**
 * f(λ) = det(I_S + k² G αᵀ (λ + k² D)⁻¹ diag(ρ) μ) at complex λ for S = 2, by hand (SI),
 * with f'(λ) (each entry's terms num/(λ + k²D_m) have derivative −num/(λ + k²D_m)²),
 * and the ∞-norm of J(k) assembled by hand: the scale of an eigenvalue's rounding.
 */
function handReduced(mix: Mixture, k: number, lr: number, li: number): { f: C; df: C; normJ: number } {
  const k2 = k * k;
  const S = 2;
  const g = mix.chemicals.map((ch) => 1 / (ch.diffusivity * k2 + ch.lossRate));
  const x: C[][] = [
    [
      [1, 0],
      [0, 0],
    ],
    [
      [0, 0],
      [1, 0],
    ],
  ];
  const dx: C[][] = [
    [
      [0, 0],
      [0, 0],
    ],
    [
      [0, 0],
      [0, 0],
    ],
  ];
  for (let s = 0; s < S; s++) {
    for (let t = 0; t < S; t++) {
      for (const sp of mix.species) {
        const a = (sp.couplings[s]!.activity as { rate: number }).rate;
        const num = k2 * g[s]! * a * sp.density * sp.couplings[t]!.mobility;
        const d: C = [lr + k2 * sp.diffusivity, li];
        const d2 = d[0] * d[0] + d[1] * d[1];
        const inv: C = [d[0] / d2, -d[1] / d2];
        x[s]![t] = add(x[s]![t]!, [num * inv[0], num * inv[1]]);
        const inv2 = mul(inv, inv);
        dx[s]![t] = sub(dx[s]![t]!, [num * inv2[0], num * inv2[1]]);
      }
    }
  }
  const f = sub(mul(x[0]![0]!, x[1]![1]!), mul(x[0]![1]!, x[1]![0]!));
  const df = sub(add(mul(dx[0]![0]!, x[1]![1]!), mul(x[0]![0]!, dx[1]![1]!)), add(mul(dx[0]![1]!, x[1]![0]!), mul(x[0]![1]!, dx[1]![0]!)));
  // J_mn = −k² D_m δ_mn − k² Σ_s ρ_m μ_ms g_s α_ns (docs/model.md §3), row sums of |J_mn|
  let normJ = 0;
  mix.species.forEach((sm, m) => {
    let row = 0;
    mix.species.forEach((sn, n) => {
      let v = m === n ? -k2 * sm.diffusivity : 0;
      for (let s = 0; s < S; s++) v -= k2 * sm.density * sm.couplings[s]!.mobility * g[s]! * (sn.couplings[s]!.activity as { rate: number }).rate;
      row += Math.abs(v);
    });
    normJ = Math.max(normJ, row);
  });
  return { f, df, normJ };
}

describe('Weinstein–Aronszajn reduction (rank two), determinant by hand', () => {
  it('every engine eigenvalue zeroes the hand-built 2×2 determinant on 300 seeded random cases', () => {
    const rng = new Random(2718);
    let checked = 0;
    for (let t = 0; t < 300; t++) {
      const mix = randomMixture(rng, 2 + (t % 7), 2, 'mixed');
      const k = 10 ** rng.between(2.5, 5);
      for (const e of eigenvaluesAt(mix, k)) {
        if (mix.species.some((sp) => Math.hypot(e.re + k * k * sp.diffusivity, e.im) < 1e-7 * k * k * sp.diffusivity)) continue;
        const h = handReduced(mix, k, e.re, e.im);
        // The Newton correction |f/f'| says how far λ is from an exact root: within rounding of ‖J‖.
        expect(Math.hypot(...h.f) / Math.hypot(...h.df)).toBeLessThan(1e-11 * h.normJ);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(1000);
  });

  it('a point that is not an eigenvalue does not, and the engine’s characteristic.ts gives the same determinant (it is invariant under the engine’s scaling)', () => {
    const rng = new Random(31);
    for (let t = 0; t < 20; t++) {
      const mix = randomMixture(rng, 4, 2, 'mixed');
      const k = 10 ** rng.between(2.5, 5);
      const top = eigenvaluesAt(mix, k)[0]!;
      const probe = { re: top.re + Math.abs(top.re) + k * k * 1e-12, im: 0.5 * Math.abs(top.re) };
      const h = handReduced(mix, k, probe.re, probe.im);
      // far from rounding: five decades above the tolerance of the test before
      expect(Math.hypot(...h.f) / Math.hypot(...h.df)).toBeGreaterThan(1e-6 * h.normJ);
      const model = buildModel(mix);
      const g = reducedCharacteristic(model, k * model.lengthUnit, probe.re * model.timeUnit, probe.im * model.timeUnit);
      expect(Math.hypot(g.re - h.f[0], g.im - h.f[1])).toBeLessThan(1e-10 * Math.max(1, Math.hypot(...h.f)));
    }
  });
});
