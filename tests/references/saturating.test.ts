/**
 * Saturating (Michaelis–Menten) couplings against a linearisation written out by
 * hand.
 *
 * Source: the field equations of docs/model.md §2 with A(c) = V c/(K + c), whose
 * slope dA/dc = V K/(K + c)² is differentiated by hand; the linear stability of
 * docs/model.md §3 (R gains ρ V K/(K + c_f)² on the fuel's diagonal and loses
 * y × that on the product's row; the product is made at y A per particle). J(k)
 * is assembled in tests/references/hand-jacobian.ts without the engine's code,
 * and its spectrum is taken with ml-matrix directly (docs/references.md,
 * "reference library"). One worked threshold is derived below in closed form and
 * checked on both sides (0.999×, 1.001×).
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { jacobianAt } from '../../server/engine/probe.js';
import { Random } from '../../server/engine/random.js';
import type { Coupling, Mixture, Species } from '../../server/engine/types.js';
import { chemical, mixture, rel, species } from '../helpers/mixtures.js';
import { handJacobian, libraryEigenvalues, rowNorm } from './hand-jacobian.js';

function saturating(fuel: string, maxRate: number, michaelis: number, mobility: number, product: string | null, productYield?: number): Coupling {
  return { chemical: fuel, activity: { kind: 'saturating', maxRate, michaelis, product, ...(productYield === undefined ? {} : { productYield }) }, mobility };
}

function responds(chem: string, mobility: number): Coupling {
  return { chemical: chem, activity: null, mobility };
}

function randomSaturating(rng: Random): Mixture {
  const fuel = chemical('fuel', 10 ** rng.between(-9.2, -8.8), rng.uniform() < 0.5 ? 0 : 10 ** rng.between(-4, -2), 10 ** rng.between(-1, 2));
  const product = chemical('prod', 10 ** rng.between(-9.2, -8.8), 10 ** rng.between(-3, 0), 0);
  const M = 1 + Math.floor(rng.uniform() * 4);
  const sign = () => (rng.uniform() < 0.5 ? -1 : 1);
  const sp: Species[] = Array.from({ length: M }, (_, m) => {
    const couplings: Coupling[] = [];
    const y = rng.uniform() < 0.3 ? 0.5 : undefined;
    const makes = rng.uniform() < 0.7;
    couplings.push(saturating('fuel', 10 ** rng.between(-17, -15), 10 ** rng.between(0, 1.7), sign() * 10 ** rng.between(-11.5, -10), makes ? 'prod' : null, makes ? y : undefined));
    if (rng.uniform() < 0.7) couplings.push(responds('prod', sign() * 10 ** rng.between(-11.5, -10)));
    return species(`e${m}`, 10 ** rng.between(-13, -11.5), 10 ** rng.between(12, 14.5), couplings);
  });
  return mixture([fuel, product], sp, 'sealed', 10 ** rng.between(-3.3, -2.5));
}

describe('saturating couplings vs a hand-built J(k)', () => {
  it('J(k) assembled by the engine (probe.ts) equals the hand linearisation on 100 seeded random mixtures', () => {
    const rng = new Random(8080);
    for (let t = 0; t < 100; t++) {
      const mix = randomSaturating(rng);
      for (const k of [1e3, 1e4, 1e5]) {
        const H = handJacobian(mix, k);
        const J = jacobianAt(mix, k);
        const M = H.length;
        const scale = rowNorm(H);
        for (let m = 0; m < M; m++) for (let n = 0; n < M; n++) expect(Math.abs(J[m * M + n]! - H[m]![n]!)).toBeLessThan(1e-12 * scale);
      }
    }
  });

  it('the growth rate, state and mode composition of analyze match ml-matrix on the hand J over every mode (brute force) on 60 seeded random mixtures', () => {
    const rng = new Random(8081);
    const seen = { stable: 0, stationary: 0, oscillatory: 0 };
    for (let t = 0; t < 60; t++) {
      const mix = randomSaturating(rng);
      const k1 = Math.PI / mix.chamber.length!;
      let best = { re: -Infinity, im: 0, scale: 0 };
      // every mode to 300, then sampled to 10⁴ (far past any growth: k²D_min dominates there)
      const ns: number[] = [];
      for (let n = 1; n <= 300; n++) ns.push(n);
      for (let n = 300; n < 1e4; n = Math.ceil(n * 1.1)) ns.push(n);
      for (const n of ns) {
        const J = handJacobian(mix, n * k1);
        const top = libraryEigenvalues(J)[0]!;
        if (top.re > best.re) best = { re: top.re, im: Math.abs(top.im), scale: rowNorm(J) };
      }
      const r = analyze(mix);
      expect(Math.abs(r.growthRate - best.re)).toBeLessThan(1e-9 * best.scale);
      if (Math.abs(best.re) < 1e-9 * best.scale) continue; // at a boundary either answer is right
      const state = best.re < 0 ? 'stable' : best.im > 1e-7 * best.scale ? 'oscillatory' : 'stationary';
      expect(r.state).toBe(state);
      seen[state]++;
      // The composition is an eigenvector of the hand J at the fastest mode, for λ = growth + iω
      // (ω = 2π/period, the member of the pair with Im λ > 0), its largest component 1.
      const J = handJacobian(mix, r.fastestMode.wavenumber);
      const w = r.fastestMode.oscillationPeriod === null ? 0 : (2 * Math.PI) / r.fastestMode.oscillationPeriod;
      const v = r.composition.map((c) => [c.magnitude * Math.cos(c.phase), c.magnitude * Math.sin(c.phase)] as const);
      expect(Math.max(...r.composition.map((c) => c.magnitude))).toBeCloseTo(1, 12);
      let res = 0;
      J.forEach((row, m) => {
        let re = -(r.growthRate * v[m]![0] - w * v[m]![1]);
        let im = -(r.growthRate * v[m]![1] + w * v[m]![0]);
        row.forEach((x, n) => {
          re += x * v[n]![0];
          im += x * v[n]![1];
        });
        res = Math.max(res, Math.hypot(re, im));
      });
      expect(res).toBeLessThan(1e-9 * rowNorm(J));
    }
    expect(seen.stable).toBeGreaterThan(5);
    expect(seen.stationary + seen.oscillatory).toBeGreaterThan(5);
  });

  // One enzyme-coated species eating its fuel (no product tracked), repelled by the fuel (μ > 0):
  // with A = V c/(K + c), α = −A and w = ρ V K/(K + c)², one chemical gives
  //   λ(k) = −k² D + k² ρ μ A / (D_c k² + κ + w)
  // (docs/model.md §3 for M = S = 1). λ(k₁) = 0 where ρ μ A = D (D_c k₁² + κ + w); w is linear in ρ, so
  //   ρ* = D (D_c k₁² + κ) / (μ A − D V K/(K + c)²),
  // which exists only when μ A > D V K/(K + c)², i.e. μ c > D K/(K + c): saturation can forbid the instability.
  const [D, Dc, kappa, V, K, L] = [0.3e-12, 1.4e-9, 1e-3, 2e-16, 5, 1.5e-3];
  const enzyme = (rho: number, mu: number, c: number) =>
    mixture([chemical('fuel', Dc, kappa, c)], [species('bead', D, rho, [saturating('fuel', V, K, mu, null)])], 'sealed', L);
  const threshold = (mu: number, c: number) => {
    const k1 = Math.PI / L;
    const A = (V * c) / (K + c);
    return (D * (Dc * k1 * k1 + kappa)) / (mu * A - (D * V * K) / (K + c) ** 2);
  };

  it('a saturating consumer repelled by its fuel flips at the hand ρ* = D(D_c k₁² + κ)/(μA − D V K/(K + c)²), both sides', () => {
    for (const [mu, c] of [
      [2e-11, 10],
      [5e-11, 1],
      [1e-10, 50],
    ] as const) {
      const rho = threshold(mu, c);
      expect(rho).toBeGreaterThan(0);
      expect(analyze(enzyme(0.999 * rho, mu, c)).state).toBe('stable');
      const above = analyze(enzyme(1.001 * rho, mu, c));
      expect(above.state).toBe('stationary');
      expect(above.fastestMode.index).toBe(1);
      // and the growth of mode 1 at 3ρ* is the formula above
      const k1 = Math.PI / L;
      const r3 = 3 * rho;
      const A = (V * c) / (K + c);
      const w = (r3 * V * K) / (K + c) ** 2;
      const lam = -k1 * k1 * D + (k1 * k1 * r3 * mu * A) / (Dc * k1 * k1 + kappa + w);
      expect(rel(analyze(enzyme(r3, mu, c)).growthRate, lam)).toBeLessThan(1e-9);
    }
  });

  it('when μ c ≤ D K/(K + c) no density destabilises it (the hand condition above), even 10⁶× the unsaturated threshold', () => {
    const c = 0.01; // far below K: μ c = 2e-13 < D K/(K + c) ≈ 3e-13
    const mu = 2e-11;
    expect(mu * c).toBeLessThan((D * K) / (K + c));
    expect(threshold(mu, c)).toBeLessThan(0);
    const unsaturated = (D * (Dc * (Math.PI / L) ** 2 + kappa)) / (mu * V * (c / (K + c)));
    for (const f of [1, 1e3, 1e6]) expect(analyze(enzyme(f * unsaturated, mu, c)).state).toBe('stable');
  });
});
