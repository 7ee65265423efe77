/**
 * One species against the classic chemotactic aggregation threshold.
 *
 * Source: E. F. Keller and L. A. Segel, "Initiation of slime mold aggregation
 * viewed as an instability", J. Theor. Biol. 26, 399–415 (1970). With
 * n_t = D∇²n − χ∇·(n∇c), c_t = D_c∇²c + h n − k c the uniform state is unstable
 * at wavenumber q iff χ h n₀ > D (k + D_c q²). In brink's conventions α = h and
 * μ = −χ (docs/references.md), so the condition reads −α μ ρ⁰ > D (κ + D_c q²), and
 * the growth rate of mode q is λ(q) = −q² D + q² (−α μ ρ⁰)/(D_c q² + κ)
 * (quasi-static chemical, the same paper's linearisation). Every threshold is
 * checked on both sides: 0.999× the hand formula stable, 1.001× unstable.
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { eigenvaluesAt } from '../../server/engine/probe.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

// Parameters of a plausible Janus-colloid sample (magnitudes only; the check is the formula).
const D = 0.25e-12; // m²/s
const Dc = 1.4e-9; // m²/s
const alpha = -3e-17; // mol/s (consumes)
const mu = 2e-11; // m^5/(mol s) (repelled: self-attracting with α < 0)

const threshold = (q: number, kappa: number) => (D * (kappa + Dc * q * q)) / (-alpha * mu);

function single(rho: number, kappa: number, walls: 'sealed' | 'periodic' | 'unbounded', L: number | null) {
  return mixture([chemical('c', Dc, kappa)], [species('A', D, rho, [constant('c', alpha, mu)])], walls, L);
}

describe('Keller–Segel single-species threshold', () => {
  const qs = [500, 3e3, 2e4, 1.5e5]; // 1/m
  const kappas = [0, 1e-4, 1e-2, 1]; // 1/s
  for (const q of qs) {
    for (const kappa of kappas) {
      it(`flips at −αμρ = D(κ + D_c q²) for q = ${q} 1/m, κ = ${kappa} 1/s`, () => {
        // A sealed chamber of length π/q has q as its first (and, here, most unstable) mode.
        const L = Math.PI / q;
        const rhoStar = threshold(q, kappa);
        expect(analyze(single(0.999 * rhoStar, kappa, 'sealed', L)).state).toBe('stable');
        expect(analyze(single(1.001 * rhoStar, kappa, 'sealed', L)).state).toBe('stationary');
        // The periodic chamber of length 2π/q allows the same first mode.
        expect(analyze(single(0.999 * rhoStar, kappa, 'periodic', 2 * L)).state).toBe('stable');
        expect(analyze(single(1.001 * rhoStar, kappa, 'periodic', 2 * L)).state).toBe('stationary');
      });

      it(`growth rate of mode q matches λ(q) for q = ${q} 1/m, κ = ${kappa} 1/s`, () => {
        const rho = 3 * threshold(q, kappa);
        const lam = -q * q * D + (q * q * (-alpha * mu * rho)) / (Dc * q * q + kappa);
        const [top] = eigenvaluesAt(single(rho, kappa, 'sealed', 1e-3), q);
        expect(rel(top!.re, lam)).toBeLessThan(1e-10);
        expect(top!.im).toBe(0);
      });
    }
  }

  it('an unbounded chamber peaks where dλ/dq² = 0: q*² = (√(Aκ/D) − κ)/D_c, to 1e-6', () => {
    // dλ/d(q²) = −D + A κ/(D_c q² + κ)² = 0 with A = −αμρ (derived from the formula above).
    for (const kappa of [1e-5, 1e-3, 1e-1]) {
      for (const factor of [2, 10, 1000]) {
        const rho = factor * threshold(0, kappa);
        const A = -alpha * mu * rho;
        const q2 = (Math.sqrt((A * kappa) / D) - kappa) / Dc;
        const lamStar = -q2 * D + (q2 * A) / (Dc * q2 + kappa);
        const r = analyze(single(rho, kappa, 'unbounded', null));
        expect(r.state).toBe('stationary');
        expect(rel(r.fastestMode.wavenumber, Math.sqrt(q2))).toBeLessThan(1e-6);
        expect(rel(r.growthRate, lamStar)).toBeLessThan(1e-9);
        expect(rel(r.fastestMode.wavelength!, (2 * Math.PI) / Math.sqrt(q2))).toBeLessThan(1e-6);
        expect(r.growthTime).toBeCloseTo(1 / r.growthRate, 12);
      }
    }
  });

  it('an unbounded sample flips at −αμρ = Dκ (the q → 0 end of the band): stable, longest wave slowest at 0.999×; stationary at 1.001×', () => {
    for (const kappa of [1e-4, 1e-3, 1e-1]) {
      const below = analyze(single(0.999 * threshold(0, kappa), kappa, 'unbounded', null));
      expect(below.state).toBe('stable');
      expect(below.growthTime).toBeNull();
      expect(below.fastestMode.wavenumber).toBe(0);
      expect(below.warnings.map((w) => w.code)).toContain('long-wavelength-limit');
      const above = analyze(single(1.001 * threshold(0, kappa), kappa, 'unbounded', null));
      expect(above.state).toBe('stationary');
      // Just past onset the band is 0 < q² < (A/D − κ)/D_c with A = −αμρ (λ(q) > 0 there, by hand from λ(q) above).
      const A = -alpha * mu * 1.001 * threshold(0, kappa);
      const q2max = (A / D - kappa) / Dc;
      expect(above.fastestMode.wavenumber ** 2).toBeLessThan(q2max);
      expect(above.growthRate).toBeGreaterThan(0);
    }
  });

  it('the criterion reported in criteria.stationary is the same inequality, met at 1.001× and not at 0.999×', () => {
    const q = 3e3;
    const kappa = 1e-2;
    for (const [factor, met] of [
      [0.999, false],
      [1.001, true],
    ] as const) {
      const r = analyze(single(factor * threshold(q, kappa), kappa, 'sealed', Math.PI / q));
      const c = r.criteria.stationary!;
      expect(r.criteria.structure).toBe('rank-one');
      // Keller & Segel: unstable iff χ h n₀ > D(k + D_c q²), i.e. α μ ρ / D < −(D_c q² + κ) in brink's signs.
      expect(rel(c.threshold, -(Dc * q * q + kappa))).toBeLessThan(1e-12);
      expect(rel(c.value, (alpha * mu * factor * threshold(q, kappa)) / D)).toBeLessThan(1e-12);
      expect(c.met).toBe(met);
    }
  });
});
