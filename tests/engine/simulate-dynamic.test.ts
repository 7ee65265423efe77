/**
 * Dynamic chemical fields (docs/model.md §14, `chemicals: 'dynamic'`): the chemicals evolve,
 * ∂c/∂t = D_c ∇²c − κ c + α ρ + σ, instead of following the particles at once. Linearised about
 * the uniform state, one species and one chemical with a constant activity α and mobility μ give,
 * per Fourier mode k, the 2×2 system
 *
 *     d/dt [δρ, δc] = [[−D k², −k² ρ⁰ μ], [α, −(D_c k² + κ)]] [δρ, δc]
 *
 * (the particle equation ∂ρ/∂t = ∇·(D∇ρ + ρ μ ∇c) and the chemical's, both linearised; the
 * quasi-static limit sets the second row to 0 and gives analyze()'s J(k)). Its largest eigenvalue,
 * computed here with ml-matrix (an independent library; the matrix is rescaled by a similarity
 * transform so its entries are of one size), is the growth the dynamic run must show. The case is
 * chosen with a slow chemical (D_c = 3e-11 m²/s, κ = 1e-3 1/s), where the dynamic growth differs
 * from the quasi-static one by several per cent, so the check tells the two apart.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { simulate } from '../../server/engine/simulate/index.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

const D = 2e-13;
const rho = 0.05 / ((4 / 3) * Math.PI * 1e-18); // φ = 0.05 of 1 µm spheres
const alpha = 1e-16;
const mu = -1e-12;
const L = 1e-3;
const make = (Dc: number, kappa: number) => mixture([chemical('c', Dc, kappa)], [species('b', D, rho, [constant('c', alpha, mu)], 1e-6)], 'periodic', L);

/** the growth rate of periodic mode n of the 2×2 dynamic system, by ml-matrix */
function dynamicRate(Dc: number, kappa: number, n: number): number {
  const k2 = ((2 * Math.PI * n) / L) ** 2;
  const s = Math.sqrt(Math.abs((k2 * rho * mu) / alpha)); // δc → s δc: the same eigenvalues, entries of one size
  const J = new Matrix([
    [-D * k2, (-k2 * rho * mu) / s],
    [alpha * s, -(Dc * k2 + kappa)],
  ]);
  return Math.max(...new EigenvalueDecomposition(J).realEigenvalues);
}
/** the quasi-static growth rate of the same mode (the closed form of the 1×1 J(k)) */
const quasiStaticRate = (Dc: number, kappa: number, n: number) => {
  const k2 = ((2 * Math.PI * n) / L) ** 2;
  return -D * k2 - (k2 * rho * mu * alpha) / (Dc * k2 + kappa);
};

describe("dynamic chemicals (chemicals: 'dynamic')", () => {
  const [Dc, kappa] = [3e-11, 1e-3];

  it('a single seeded mode grows at the dynamic rate, not the quasi-static one', () => {
    const mix = make(Dc, kappa);
    for (const n of [8, 19]) {
      const dyn = dynamicRate(Dc, kappa, n);
      const qs = quasiStaticRate(Dc, kappa, n);
      expect(rel(qs, dyn)).toBeGreaterThan(0.05); // the case separates the two models
      const initial = (_m: number, x: number) => rho * (1 + 1e-5 * Math.cos((2 * Math.PI * n * x) / L));
      const opts = { dims: 1 as const, points: 256, duration: 6 / dyn, frames: 5, initial };
      const r = simulate(mix, { ...opts, chemicals: 'dynamic' });
      expect(r.summary.run.measuredMode).toEqual([n]);
      expect(rel(r.summary.measured.growthRate!, dyn)).toBeLessThan(0.005);
      // the same start with quasi-static chemicals follows analyze()'s J(k) instead
      const q = simulate(mix, { ...opts, chemicals: 'quasi-static' });
      expect(rel(q.summary.measured.growthRate!, qs)).toBeLessThan(0.005);
      expect(r.summary.conservation.maxRelativeError).toBeLessThan(1e-12);
    }
  });

  it('from random noise the fastest mode is the dynamic system’s, and the summary says the prediction is quasi-static', () => {
    const mix = make(Dc, kappa);
    let best = { n: 0, rate: -Infinity };
    for (let n = 1; n < 128; n++) {
      const g = dynamicRate(Dc, kappa, n);
      if (g > best.rate) best = { n, rate: g };
    }
    const a = analyze(mix);
    expect(a.fastestMode.index).not.toBe(best.n); // quasi-static and dynamic disagree on the fastest mode here
    const r = simulate(mix, { dims: 1, points: 256, duration: 6 / best.rate, frames: 5, chemicals: 'dynamic' });
    expect(rel(r.summary.measured.growthRate!, best.rate)).toBeLessThan(0.02);
    expect(rel(dynamicRate(Dc, kappa, r.summary.run.measuredMode![0]!), best.rate)).toBeLessThan(0.01);
    const w = r.summary.warnings.find((x) => x.code === 'dynamic-chemicals');
    expect(w?.message).toMatch(/quasi-static/);
  });

  it('with a fast chemical the dynamic run approaches analyze() (the quasi-static limit)', () => {
    // D_c k² + κ ≈ 0.68 1/s against a growth of 1e-3 1/s: the two models differ by about λ/(D_c k² + κ) ≈ 0.15 %
    const mix = make(1e-9, 0.05);
    const a = analyze(mix);
    const r = simulate(mix, { dims: 1, points: 256, duration: 6 / a.growthRate, frames: 5, chemicals: 'dynamic' });
    expect(rel(r.summary.measured.growthRate!, a.growthRate)).toBeLessThan(0.005);
    expect(r.summary.measured.wavelength).toBeCloseTo(a.fastestMode.wavelength!, 12);
  });
});
