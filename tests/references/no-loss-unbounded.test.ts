/**
 * An unbounded chamber whose chemical has no loss (κ = 0): the long-wave limit,
 * derived by hand.
 *
 * From docs/model.md §3 for one species and one chemical, g(k) = 1/(D_c k² + κ)
 * and J(k) = −k² D − k² ρ α μ g(k). With κ = 0 the k² cancels in the coupling:
 *
 *     J(k) = −k² D − α μ ρ / D_c,   so   λ(k → 0⁺) = −α μ ρ / D_c,
 *
 * the supremum over k > 0 (λ falls with k², so it is approached, not attained,
 * at the longest wave). A self-attracting species (α μ < 0) is unstable at any
 * density — there is no threshold — and a self-repelling one (α μ > 0) is
 * stable at any density, with the same formula for the (negative) limit. This
 * is Keller & Segel's condition χ h n₀ > D(k + D_c q²) (J. Theor. Biol. 26, 399
 * (1970); docs/references.md) at k = 0, q → 0, read in brink's signs α = h,
 * μ = −χ.
 *
 * For two species with κ = 0 the same cancellation gives
 * J(0⁺) = −(ρ∘μ) αᵀ / D_c, a rank-one matrix whose one non-zero eigenvalue is
 * −Σ_m α_m μ_m ρ_m / D_c (the trace of a rank-one matrix); the other eigenvalue
 * tends to 0⁻. A self-attracting dopant on a self-repelling base therefore tips it
 * at x* = −α_b μ_b ρ_b/(α_d μ_d), checked on both sides.
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { dosePath, findDose, growth, screen, withDose } from '../../server/engine/planner.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

const Dc = 1.4e-9; // m²/s
const D = 0.4e-12; // m²/s

function one(alpha: number, mu: number, rho: number) {
  return mixture([chemical('c', Dc, 0)], [species('A', D, rho, [constant('c', alpha, mu)])], 'unbounded', null);
}

describe('no-loss unbounded chamber, one species: λ(0⁺) = −α μ ρ / D_c', () => {
  for (const [alpha, mu] of [
    [-3e-17, 2e-11], // consumes, repelled: α μ < 0, self-attracting
    [3e-17, -2e-11], // produces, attracted: α μ < 0, self-attracting
    [-3e-17, -2e-11], // consumes, attracted: α μ > 0, self-repelling
    [3e-17, 2e-11], // produces, repelled: α μ > 0, self-repelling
  ] as const) {
    it(`α = ${alpha}, μ = ${mu}: sign and value of the long-wave limit at densities over twelve decades`, () => {
      for (const rho of [1e6, 1e12, 1e18]) {
        const expected = (-alpha * mu * rho) / Dc;
        const r = analyze(one(alpha, mu, rho));
        expect(r.state).toBe(alpha * mu < 0 ? 'stationary' : 'stable');
        expect(Math.sign(r.growthRate)).toBe(Math.sign(expected));
        expect(rel(r.growthRate, expected)).toBeLessThan(1e-9);
        expect(r.fastestMode.wavenumber).toBe(0);
        expect(r.fastestMode.wavelength).toBeNull();
        expect(r.warnings.map((w) => w.code)).toContain('long-wavelength-limit');
      }
    });
  }
});

describe('no-loss unbounded chamber, a self-attracting dopant on a self-repelling base', () => {
  // Base repelled by what it makes (α μ > 0); dopant self-attracting and faster (D_d > D_b, so λ falls with k
  // near k = 0 and the supremum stays at the long-wave end: the k² term of the leading eigenvalue is
  // −k² Σ s_m D_m / Σ s_m, which is negative here).
  const base = { alpha: 2e-17, mu: 1e-11, rho: 1e14, D: 0.2e-12 };
  const dop = { alpha: -5e-17, mu: 3e-11, D: 2e-12 };
  const xStar = (-base.alpha * base.mu * base.rho) / (dop.alpha * dop.mu);
  const mix = (x: number) =>
    mixture(
      [chemical('c', Dc, 0)],
      [species('base', base.D, base.rho, [constant('c', base.alpha, base.mu)]), species('dopant', dop.D, x, [constant('c', dop.alpha, dop.mu)])],
      'unbounded',
      null,
    );

  it('is stable at 0.999 x* and stationary at 1.001 x*, with λ(0⁺) = −Σ α μ ρ / D_c', () => {
    expect(xStar).toBeGreaterThan(0);
    const below = analyze(mix(0.999 * xStar));
    expect(below.state).toBe('stable');
    for (const f of [1.001, 1.1, 10]) {
      const above = analyze(mix(f * xStar));
      const expected = -(base.alpha * base.mu * base.rho + dop.alpha * dop.mu * f * xStar) / Dc;
      expect(expected).toBeGreaterThan(0);
      expect(above.state).toBe('stationary');
      expect(rel(above.growthRate, expected)).toBeLessThan(1e-6);
      expect(above.fastestMode.wavenumber).toBe(0);
    }
  });

  // The planner on the same case: the stationary and `any` boundaries, the first onset and the analysis at
  // the threshold must all agree with the hand x* (the search, not the closed form: two signs of α μ).
  // Before the long-wave limit applied its rounding rule to every branch, the stationary search stopped
  // 0.1 % low on a real branch of 1e-16 s⁻¹ (rounding) while the overall growth was 0.
  it('the planner finds x* for the stationary and any boundaries, and the first onset there', () => {
    const b = mixture([chemical('c', Dc, 0)], [species('base', base.D, base.rho, [constant('c', base.alpha, base.mu)])], 'unbounded', null);
    const d = species('dopant', dop.D, 0, [constant('c', dop.alpha, dop.mu)]);
    for (const boundary of ['stationary', 'any'] as const) {
      const r = findDose(b, d, { boundary, dosing: 'add', closedForm: false });
      expect(r.feasible).toBe(true);
      expect(rel(r.threshold!.density, xStar)).toBeLessThan(2e-6);
    }
    const [c] = screen(b, [d], { boundary: 'stationary', dosing: 'add' });
    expect(rel(c!.firstOnset!.density, xStar)).toBeLessThan(2e-6);
    expect(c!.firstOnset!.state).toBe('stationary');
    expect(c!.warnings.map((w) => w.code)).not.toContain('earlier-instability');
    expect(c!.atThreshold!.state).not.toBe('stable');
  });
});

describe('no-loss unbounded chamber with a second chemical: the long-wave limit is resolved on its own scale', () => {
  // With S chemicals, J(0⁺) = −diag(ρ) μ N αᵀ (N = diag(1/D_c) on the chemicals without loss, 0 on the
  // damped ones): its non-zero eigenvalues are those of the S×S matrix −N αᵀ diag(ρ) μ (docs/model.md §4).
  // Here only chemical c has no loss and only A makes it, so the one non-zero eigenvalue is
  // λ(0⁺) = −α_A μ_A ρ_A / D_c whatever the bystander B does: B responds to c strongly (a large cross term
  // ρ_B μ_B α_A in J) but makes nothing. An earlier rule judged "within rounding of 0" against the largest
  // entry of J and called these growths 0 (stable).
  const Dc = 1.4e-9;
  const D = 0.4e-12;
  const alphaA = 3e-17;
  const muA = -2e-11;
  for (const [rhoA, rhoB, muB] of [
    [1e12, 1e18, -2e-11],
    [1e10, 1e18, -2e-11],
    [1e9, 1e19, -2e-9],
    [1e8, 1e19, -2e-9],
  ] as const) {
    it(`ρ_A = ${rhoA}, ρ_B = ${rhoB}, μ_B = ${muB}: growth −α_A μ_A ρ_A / D_c`, () => {
      const mix = mixture(
        [chemical('c', Dc, 0), chemical('d', Dc, 1)],
        [species('A', D, rhoA, [constant('c', alphaA, muA)]), species('B', D, rhoB, [constant('c', 0, muB), constant('d', 0, 1e-11)])],
        'unbounded',
        null,
      );
      const r = analyze(mix);
      const hand = -(alphaA * muA * rhoA) / Dc;
      expect(hand).toBeGreaterThan(0);
      expect(r.state).toBe('stationary');
      expect(rel(r.growthRate, hand)).toBeLessThan(1e-9);
    });
  }

  it('a self-attracting dopant on a responding tracer, with a second chemical: any dose, and the path agrees', () => {
    // tracer: responds to c, makes nothing; dopant: makes c (α > 0) and climbs it (μ < 0), also makes o2.
    // λ(0⁺) = −α_d μ_d x / D_c > 0 for every x > 0 (the tracer adds nothing to the S×S matrix).
    const chems = [chemical('c', Dc, 0), chemical('o2', 2e-9, 0)];
    const base = mixture(chems, [species('tracer', 0.2e-12, 1e14, [constant('c', 0, -2e-11), constant('o2', 0, 1e-11)])], 'unbounded', null);
    const dop = species('A', 0.4e-12, 0, [constant('c', 3e-17, -2e-11), constant('o2', 1e-17, 0)]);
    const o = { boundary: 'stationary' as const, dosing: 'add' as const };
    const r = findDose(base, dop, o);
    expect(r.anyDose).toBe(true);
    const p = dosePath(base, dop, o);
    expect(p.firstOnset).toEqual({ density: 0, state: 'stationary' });
    expect(p.intervals.map((i) => i.state)).toEqual(['stationary']);
    for (const x of [1, 1e3, 1e9]) {
      const g = growth(withDose(base, dop, x, 'add'));
      expect(rel(g.real, (-3e-17 * -2e-11 * x) / Dc)).toBeLessThan(1e-9);
      // one answer: the overall growth is never below a branch's
      expect(g.any).toBeGreaterThanOrEqual(g.real);
    }
  });
});
