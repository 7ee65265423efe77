/**
 * The closed-form stationary dose of docs/model.md §6 against a hand computation
 * and an independent eigen library.
 *
 * Expected value, by hand: for one chemical (D_c, κ) and species with
 * s_m = α_m μ_m ρ_m, the determinant lemma gives
 * det J(k) = Π_m(−k² D_m) · (1 + g(k) Σ_m s_m/D_m), g = 1/(D_c k² + κ) — the
 * Keller–Segel condition (Keller & Segel, J. Theor. Biol. 26, 399 (1970),
 * generalised to M species; docs/references.md) — so a dopant d at density x
 * makes a real eigenvalue cross zero at the first allowed mode k₁ when
 *
 *     x* = −(D_c k₁² + κ + Σ_base s_m/D_m) · D_d/(α_d μ_d),
 *
 * written out below in the test (`handDose`), with k₁ = π/L (sealed), 2π/L
 * (periodic), k → 0 (unbounded). The spectrum on both sides of x* is taken with
 * ml-matrix on a J(k₁) built by hand from the field equations
 * (hand-jacobian.ts); the engine's closed form, its mode scan and its state are
 * each compared with that.
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { stationaryDoseClosedForm } from '../../server/engine/dose.js';
import { Random } from '../../server/engine/random.js';
import type { Mixture, Species, Walls } from '../../server/engine/types.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';
import { handJacobian, libraryEigenvalues } from './hand-jacobian.js';

function withDopant(base: Mixture, d: Species, x: number): Mixture {
  return { ...base, species: [...base.species, { ...d, density: x }] };
}

const rate = (sp: Species) => (sp.couplings[0]!.activity as { rate: number }).rate;

/** k₁ of the chamber (1/m); for an unbounded one a k with D_c k² = 10⁻⁶ κ, i.e. the k → 0 end to 1 ppm. */
function firstMode(base: Mixture): number {
  const { walls, length } = base.chamber;
  if (walls === 'sealed') return Math.PI / length!;
  if (walls === 'periodic') return (2 * Math.PI) / length!;
  const c = base.chemicals[0]!;
  return Math.sqrt((1e-6 * c.lossRate) / c.diffusivity);
}

/** x* by hand from the Keller–Segel condition above (the unbounded end at k → 0 exactly). */
function handDose(base: Mixture, d: Species): number {
  const c = base.chemicals[0]!;
  const k1 = base.chamber.walls === 'unbounded' ? 0 : firstMode(base);
  const sum = base.species.reduce((acc, sp) => acc + (rate(sp) * sp.couplings[0]!.mobility * sp.density) / sp.diffusivity, 0);
  return (-(c.diffusivity * k1 * k1 + c.lossRate + sum) * d.diffusivity) / (rate(d) * d.couplings[0]!.mobility);
}

/** sign of det J(k₁) × (−1)^M: +1 before the crossing, −1 after (ml-matrix eigenvalues of the hand J). */
function detSign(mix: Mixture): number {
  const ev = libraryEigenvalues(handJacobian(mix, firstMode(mix)));
  let re = 1;
  let im = 0;
  for (const e of ev) [re, im] = [re * e.re - im * e.im, re * e.im + im * e.re];
  return Math.sign(re) * (-1) ** ev.length;
}

describe('closed-form stationary dose vs a hand x* and ml-matrix', () => {
  it('a strongly self-attracting dopant tips a weakly self-attracting base exactly at the hand x* (sealed, periodic, unbounded)', () => {
    for (const walls of ['sealed', 'periodic', 'unbounded'] as Walls[]) {
      const base = mixture(
        [chemical('h2o2', 1.4e-9, walls === 'unbounded' ? 1e-3 : 0)],
        [species('calm', 0.2e-12, 2e11, [constant('h2o2', -2e-17, 2e-11)])],
        walls,
        walls === 'unbounded' ? null : 2e-3,
      );
      const dopant = species('tipper', 0.5e-12, 0, [constant('h2o2', -1e-16, 5e-11)]);
      const x = handDose(base, dopant);
      expect(x).toBeGreaterThan(0);
      const cf = stationaryDoseClosedForm(base, dopant);
      expect(cf.applicable).toBe(true);
      if (!cf.applicable) continue;
      expect(rel(cf.dose, x)).toBeLessThan(1e-12);
      expect(cf.firstCrossing).toBe(true);
      // ml-matrix on the hand J(k₁): every eigenvalue real and negative at 0.999 x*, one positive at 1.001 x*.
      const below = libraryEigenvalues(handJacobian(withDopant(base, dopant, 0.999 * x), firstMode(base)));
      const above = libraryEigenvalues(handJacobian(withDopant(base, dopant, 1.001 * x), firstMode(base)));
      expect(below[0]!.re).toBeLessThan(0);
      expect(above[0]!.re).toBeGreaterThan(0);
      expect(above[0]!.im).toBe(0);
      // The engine's scan, knowing nothing of x*, agrees.
      expect(analyze(withDopant(base, dopant, 0.999 * x)).state).toBe('stable');
      expect(analyze(withDopant(base, dopant, 1.001 * x)).state).toBe('stationary');
    }
  });

  it('on 150 seeded random bases and dopants the engine’s x* is the hand x*, det J(k₁) changes sign there, and a same-sign mixture flips stable → stationary', () => {
    const rng = new Random(60);
    let checked = 0;
    let firstCrossings = 0;
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
      const x = handDose(base, dopant);
      const cf = stationaryDoseClosedForm(base, dopant);
      expect(cf.applicable).toBe(true);
      if (!cf.applicable || !(x > 0)) continue;
      expect(rel(cf.dose, x)).toBeLessThan(1e-10);
      checked++;
      // det J(k₁) changes sign at x* whatever the signs (the determinant lemma), ml-matrix on the hand J.
      expect(detSign(withDopant(base, dopant, 0.999 * x))).toBe(1);
      expect(detSign(withDopant(base, dopant, 1.001 * x))).toBe(-1);
      const sameSign = base.species.every((s) => rate(s) * s.couplings[0]!.mobility < 0);
      if (sameSign) {
        // one sign: all eigenvalues real, mode k₁ goes first, so the whole mixture flips at x*
        expect(cf.firstCrossing).toBe(true);
        const below = analyze(withDopant(base, dopant, 0.999 * x));
        const above = analyze(withDopant(base, dopant, 1.001 * x));
        // "growing" is > 0; an unbounded chamber's supremum at k → 0 is exactly 0, not attained.
        expect(below.state).toBe('stable');
        expect(above.state).toBe('stationary');
        expect(above.branches.stationary!.growthRate).toBeGreaterThan(0);
        firstCrossings++;
      }
    }
    expect(checked).toBeGreaterThan(40);
    expect(firstCrossings).toBeGreaterThan(20);
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
