/**
 * The MSD forms and effective diffusivities the fit uses, checked noise-free
 * against an independent computation done here.
 *
 * Independent computation (a textbook identity, the Green–Kubo-type relation
 * between a displacement's variance and its velocity autocorrelation):
 *   MSD(t) = 2 d D t + 2 v² ∫₀ᵗ (t − s) C(s) ds,
 * with C(s) = ⟨u(0)·u(s)⟩ over the observed components of the orientation u of
 * an active Brownian particle of rotation time τ = 1/D_r:
 *   2D           C(s) = e^(−s/τ)
 *   3D           C(s) = e^(−2s/τ)
 *   focal plane  C(s) = (2/3) e^(−2s/τ)  (x and y of a 3D swimmer: two of the three
 *                equal components of e^(−2s/τ))
 * (ten Hagen, van Teeffelen & Löwen, J. Phys.: Condens. Matter 23, 194119 (2011),
 * for the orientation correlation of active Brownian motion; docs/references.md).
 * The integral is evaluated by composite Simpson quadrature (20 000 intervals,
 * error far below 10⁻¹⁰ of the value for these smooth integrands), and the
 * effective diffusivity from the long-time slope, d MSD/dt → 2 d D + 2 v² ∫₀^∞ C,
 * by the same quadrature up to 40 τ (the tail e^(−40) is negligible).
 * d is the number of observed dimensions (2 for a focal plane).
 */
import { describe, expect, it } from 'vitest';
import { effectiveDiffusivity, fitMsd, msdCurve, type MsdModel } from '../../../server/engine/fit/models.js';

function simpson(f: (s: number) => number, a: number, b: number, n = 20_000): number {
  const h = (b - a) / n;
  let sum = f(a) + f(b);
  for (let i = 1; i < n; i++) sum += (i % 2 === 1 ? 4 : 2) * f(a + i * h);
  return (sum * h) / 3;
}

const correlation: Record<MsdModel, ((s: number, tau: number) => number) | null> = {
  'passive-2d': null,
  'passive-3d': null,
  'active-2d': (s, tau) => Math.exp(-s / tau),
  'active-3d': (s, tau) => Math.exp((-2 * s) / tau),
  'active-focal': (s, tau) => (2 / 3) * Math.exp((-2 * s) / tau),
};
const observedDims: Record<MsdModel, number> = { 'passive-2d': 2, 'passive-3d': 3, 'active-2d': 2, 'active-3d': 3, 'active-focal': 2 };

function referenceMsd(model: MsdModel, t: number, D: number, v: number, tau: number, c = 0): number {
  const C = correlation[model];
  const active = C ? 2 * v * v * simpson((s) => (t - s) * C(s, tau), 0, t) : 0;
  return 2 * observedDims[model] * D * t + active + c;
}

function referenceEffective(model: MsdModel, D: number, v: number, tau: number): number {
  const C = correlation[model];
  if (!C) return D;
  const slope = 2 * observedDims[model] * D + 2 * v * v * simpson((s) => C(s, tau), 0, 40 * tau);
  return slope / (2 * observedDims[model]);
}

const MODELS: MsdModel[] = ['passive-2d', 'passive-3d', 'active-2d', 'active-3d', 'active-focal'];
const tau = 2;
// lags from 10⁻⁶ τ to 50 τ, with both sides of the small-lag series switch (kt/τ = 10⁻⁴, k = 1 or 2)
const lags = [1e-6, 1e-5, 0.999e-4 / 2, 1.001e-4 / 2, 0.999e-4, 1.001e-4, 1e-3, 0.01, 0.1, 0.3, 1, 2, 5, 10, 50].map((u) => u * tau);

describe('MSD forms against the velocity-autocorrelation integral (noise-free)', () => {
  for (const model of MODELS) {
    it(`${model}: MSD(t) to 10⁻¹⁰ relative from 10⁻⁶ τ to 50 τ`, () => {
      for (const [D, v, c] of [
        [0, 2e-6, 0],
        [0.2e-12, 2e-6, 0],
        [0.2e-12, 0, 1e-14],
      ] as const) {
        for (const t of lags) {
          const ref = referenceMsd(model, t, D, v, tau, c);
          if (ref === 0) continue;
          const got = msdCurve(model, t, D, v, tau, c);
          expect(Math.abs(got / ref - 1), `${model} D=${D} v=${v} t=${t}: ${got} vs ${ref}`).toBeLessThan(1e-10);
        }
      }
    });

    it(`${model}: effective diffusivity from the long-time slope to 10⁻¹⁰`, () => {
      for (const [D, v] of [
        [0.2e-12, 2e-6],
        [0, 1e-6],
        [1e-12, 0],
      ] as const) {
        const ref = referenceEffective(model, D, v, tau);
        if (ref === 0) continue;
        expect(Math.abs(effectiveDiffusivity(model, D, v, tau) / ref - 1), `${model} D=${D} v=${v}`).toBeLessThan(1e-10);
      }
    });
  }

  for (const model of ['active-2d', 'active-3d', 'active-focal'] as MsdModel[]) {
    it(`${model}: a fit of the noise-free reference curve returns D, v, τ and D_eff of the reference`, () => {
      const D = 0.2e-12;
      const v = 2e-6;
      const t = Array.from({ length: 30 }, (_, i) => 0.01 * Math.pow(2000, i / 29));
      const y = t.map((ti) => referenceMsd(model, ti, D, v, tau));
      // relative weights: every point counts by its relative error
      const f = fitMsd(t, y, { model, sd: y.map((m) => 1e-3 * m) });
      expect(f.converged).toBe(true);
      const rel = (a: number, b: number) => Math.abs(a / b - 1);
      expect(rel(f.parameters.diffusivity!.value, D)).toBeLessThan(1e-6);
      expect(rel(f.parameters.speed!.value, v)).toBeLessThan(1e-6);
      expect(rel(f.parameters.rotationTime!.value, tau)).toBeLessThan(1e-6);
      expect(rel(f.parameters.effectiveDiffusivity!.value, referenceEffective(model, D, v, tau))).toBeLessThan(1e-6);
      // the variance-model weighting (1/(MSD² t), reweighted from the fitted curve) reaches the same point
      const g = fitMsd(t, y, { model, varianceModel: true });
      expect(g.weighting).toBe('relative-variance-model');
      expect(g.converged).toBe(true);
      expect(rel(g.parameters.speed!.value, v)).toBeLessThan(1e-6);
      expect(rel(g.parameters.rotationTime!.value, tau)).toBeLessThan(1e-6);
      // an sd column wins over the variance model
      expect(fitMsd(t, y, { model, varianceModel: true, sd: y.map((m) => 1e-3 * m) }).weighting).toBe('weighted');
    });
  }
});
