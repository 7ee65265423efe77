/**
 * The closed-form stationary dose of docs/model.md §6 against the full spectrum.
 *
 * x* = −(D_c k₁² + κ + Σ_base s_m/D_m) · D_d/(α_d μ_d) follows from the
 * rank-one stationary criterion (Keller & Segel 1970, generalised to M species
 * by the matrix determinant lemma, docs/references.md). The engine's mode scan
 * knows nothing of it: when every species has α μ of one sign, at 0.999 x* no
 * allowed mode may have a growing real eigenvalue and at 1.001 x* one must;
 * with mixed signs x* is still where det J(k₁) changes sign.
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { stationaryDoseClosedForm } from '../../server/engine/dose.js';
import { Random } from '../../server/engine/random.js';
import type { Mixture, Species, Walls } from '../../server/engine/types.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';

function withDopant(base: Mixture, d: Species, x: number): Mixture {
  return { ...base, species: [...base.species, { ...d, density: x }] };
}


describe('closed-form stationary dose vs the spectrum', () => {
  it('a strongly self-attracting dopant tips a weakly self-attracting base exactly at x* (sealed, periodic, unbounded)', () => {
    for (const walls of ['sealed', 'periodic', 'unbounded'] as Walls[]) {
      const base = mixture(
        [chemical('h2o2', 1.4e-9, walls === 'unbounded' ? 1e-3 : 0)],
        [species('calm', 0.2e-12, 2e11, [constant('h2o2', -2e-17, 2e-11)])],
        walls,
        walls === 'unbounded' ? null : 2e-3,
      );
      const dopant = species('tipper', 0.5e-12, 0, [constant('h2o2', -1e-16, 5e-11)]);
      const cf = stationaryDoseClosedForm(base, dopant);
      expect(cf.applicable).toBe(true);
      if (!cf.applicable) continue;
      expect(cf.dose).toBeGreaterThan(0);
      expect(cf.firstCrossing).toBe(true);
      expect(analyze(withDopant(base, dopant, 0.999 * cf.dose)).state).toBe('stable');
      expect(analyze(withDopant(base, dopant, 1.001 * cf.dose)).state).toBe('stationary');
    }
  });

  it('on 150 seeded random bases and dopants the real branch flips between 0.999 x* and 1.001 x*', () => {
    const rng = new Random(60);
    let checked = 0;
    for (let t = 0; t < 150; t++) {
      const walls: Walls = (['sealed', 'periodic', 'unbounded'] as const)[t % 3]!;
      const kappa = walls === 'unbounded' ? 10 ** rng.between(-4, -1) : rng.uniform() < 0.5 ? 0 : 10 ** rng.between(-4, -1);
      const M = 1 + (t % 4);
      const sp = Array.from({ length: M }, (_, m) =>
        species(`b${m}`, 10 ** rng.between(-13, -11.5), 10 ** rng.between(12, 14), [
          // two bases in three attract (α < 0, μ > 0: one sign), the rest are random
          constant('c', (t % 3 !== 0 || rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-17, -15), (t % 3 !== 0 || rng.uniform() < 0.5 ? 1 : -1) * 10 ** rng.between(-12, -10)),
        ]),
      );
      const base = mixture([chemical('c', 10 ** rng.between(-9.3, -8.8), kappa)], sp, walls, walls === 'unbounded' ? null : 10 ** rng.between(-3.5, -2.5));
      const a = -(10 ** rng.between(-17, -15));
      const dopant = species('d', 10 ** rng.between(-13, -11.5), 0, [constant('c', a, 10 ** rng.between(-11.5, -10))]);
      const cf = stationaryDoseClosedForm(base, dopant);
      if (!cf.applicable || cf.dose <= 0) continue;
      const below = analyze(withDopant(base, dopant, 0.999 * cf.dose));
      const above = analyze(withDopant(base, dopant, 1.001 * cf.dose));
      // det J(k₁) changes sign at x* whatever the signs (the determinant lemma).
      expect(below.criteria.stationary!.met).toBe(false);
      expect(above.criteria.stationary!.met).toBe(true);
      expect(Math.sign(below.criteria.determinant!.value)).toBe(1);
      expect(Math.sign(above.criteria.determinant!.value)).toBe(-1);
      if (cf.firstCrossing) {
        // "growing" is > 0; an unbounded chamber's supremum at k → 0 is exactly 0, not attained.
        expect(below.branches.stationary?.growthRate ?? -Infinity).toBeLessThanOrEqual(0);
        expect(above.branches.stationary!.growthRate).toBeGreaterThan(0);
        checked++;
      }
    }
    expect(checked).toBeGreaterThan(20);
  });

  it('says why it does not apply', () => {
    const two = [constant('a', -1e-17, 1e-11), constant('b', 1e-17, 1e-11)];
    const base = mixture([chemical('a', 1e-9), chemical('b', 1e-9)], [species('x', 1e-12, 1e14, two)], 'sealed');
    expect(stationaryDoseClosedForm(base, species('d', 1e-12, 0, [constant('a', -1e-17, 1e-11)]))).toEqual({ applicable: false, reason: 'needs exactly one chemical that moves the particles' });
    // A chemical nothing responds to does not count: the closed form still applies.
    const inert = mixture([chemical('a', 1e-9), chemical('b', 1e-9)], [species('x', 1e-12, 1e14, [constant('a', -1e-17, 1e-11), constant('b', 1e-17, 0)])], 'sealed');
    expect(stationaryDoseClosedForm(inert, species('d', 1e-12, 0, [constant('a', -1e-17, 1e-11)])).applicable).toBe(true);
    const one = mixture([chemical('a', 1e-9)], [species('x', 1e-12, 1e14, [constant('a', -1e-17, 1e-11)])], 'sealed');
    expect(stationaryDoseClosedForm(one, species('d', 1e-12, 0, [constant('a', 0, 1e-11)])).applicable).toBe(false);
  });
});
