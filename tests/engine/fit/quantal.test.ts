/**
 * The quantal dose–response fit (server/engine/fit/quantal.ts, docs/model.md §12):
 * - against a general-purpose optimiser on seeded random data: ml-levenberg-marquardt (an independent library,
 *   docs/references.md) minimising the sum of squared deviance residuals — whose sum is the deviance, so its
 *   minimiser is the maximum-likelihood estimate — with the inverse links written out here (the normal
 *   distribution function by its Maclaurin series, not brink's incomplete-gamma route);
 * - the special functions against handbook values (Abramowitz & Stegun, tables 26.1 and 26.8; from memory);
 * - separation, a single dose, zero doses on the log10 scale, and the ED50 intervals.
 */
import { describe, expect, it } from 'vitest';
import { chiSquareUpper, fitQuantal, lnGamma, normalCdf, normalQuantile, type QuantalLink } from '../../../server/engine/fit/quantal.js';
import { Random } from '../../../server/engine/random.js';
import { INVERSE, lmReference, phi } from '../../helpers/quantal-reference.js';

/** A binomial deviate by counting uniforms. */
function binomial(rng: Random, n: number, p: number): number {
  let y = 0;
  for (let i = 0; i < n; i++) if (rng.uniform() < p) y++;
  return y;
}

/** Seeded data: six to eight log-spaced doses around an ED50 near 10¹³ m⁻³ (invented magnitudes: inputs only). */
function dataset(rng: Random, link: QuantalLink) {
  const k = 6 + Math.floor(rng.uniform() * 3);
  const slope = rng.between(1.5, 5); // per decade
  const x50 = rng.between(12.6, 13.4);
  const g50 = link === 'cloglog' ? Math.log(Math.LN2) : 0;
  const x = Array.from({ length: k }, (_, i) => 12 + (2 * i) / (k - 1));
  const n = x.map(() => 8 + Math.floor(rng.uniform() * 30));
  const y = x.map((xi, i) => binomial(rng, n[i]!, INVERSE[link](g50 + slope * (xi - x50))[0]));
  return { dose: x.map((v) => 10 ** v), x, n, y };
}

describe('against ml-levenberg-marquardt on seeded data (50 sets per link)', () => {
  for (const link of ['logit', 'probit', 'cloglog'] as const) {
    it(`${link}: the same coefficients (1e-5 relative) and deviance`, () => {
      const rng = new Random(link === 'logit' ? 1301 : link === 'probit' ? 1302 : 1303);
      let compared = 0;
      let separated = 0;
      let worst = 0;
      while (compared < 50) {
        const d = dataset(rng, link);
        const f = fitQuantal(d.dose, d.n, d.y, { link });
        if (f.stop === 'separation' || f.stop === 'no-response' || f.stop === 'all-responded') {
          separated++;
          continue;
        }
        expect(f.converged).toBe(true);
        // start the reference away from the answer: from a straight line through the empirical logits' ends
        const ref = lmReference(link, d.x, d.n, d.y, [0, 1]);
        const rel = (a: number, b: number) => Math.abs(a - b) / Math.max(Math.abs(b), 1e-3);
        // the intercept is at x = 0 (twelve decades from the data): compare it at the data's centre, a + b x̄
        const xm = d.x.reduce((s, v) => s + v, 0) / d.x.length;
        const eOurs = f.parameters.intercept.value! + f.parameters.slope.value! * xm;
        const eRef = ref.intercept + ref.slope * xm;
        const r = Math.max(rel(f.parameters.slope.value!, ref.slope), Math.abs(eOurs - eRef) / Math.max(1, Math.abs(eRef)), rel(f.deviance!, ref.deviance));
        worst = Math.max(worst, r);
        expect(r).toBeLessThan(1e-5);
        // and never a worse deviance than the reference's (it is the minimum)
        expect(f.deviance!).toBeLessThanOrEqual(ref.deviance * (1 + 1e-9) + 1e-12);
        compared++;
      }
      expect(separated).toBeLessThan(50);
      expect(worst).toBeLessThan(1e-5);
    });
  }
});

describe('special functions (handbook values, from memory)', () => {
  it('Φ, its inverse, χ² tails and ln Γ', () => {
    // Abramowitz & Stegun table 26.1: Φ(1.96) = 0.9750021048517795, Φ(−8) = 6.22096057427178e-16
    expect(normalCdf(1.96)).toBeCloseTo(0.9750021048517795, 14);
    expect(normalCdf(-8) / 6.22096057427178e-16).toBeCloseTo(1, 10);
    expect(normalCdf(0)).toBe(0.5);
    expect(normalCdf(1.3) - phi(1.3)).toBeCloseTo(0, 14);
    // Φ(−5) = 2.866515718791939e-7 (A&S table 26.1): both routes
    expect(normalCdf(-5) / 2.866515718791939e-7).toBeCloseTo(1, 12);
    expect(phi(-5) / 2.866515718791939e-7).toBeCloseTo(1, 12);
    expect(normalQuantile(0.975)).toBeCloseTo(1.959963984540054, 12);
    // A&S table 26.8: the 5 % points of χ² with 1 and 5 degrees of freedom, 3.841459 and 11.0705
    expect(chiSquareUpper(3.841458820694124, 1)).toBeCloseTo(0.05, 12);
    expect(chiSquareUpper(11.0704976935, 5)).toBeCloseTo(0.05, 9);
    expect(chiSquareUpper(0, 3)).toBe(1);
    // Γ(½) = √π, Γ(10) = 9! = 362880
    expect(lnGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 14);
    expect(lnGamma(10)).toBeCloseTo(Math.log(362880), 13);
  });
});

describe('what is not an estimate', () => {
  it('complete separation is found from the data, with the bracketing doses, not a huge slope', () => {
    const f = fitQuantal([1e12, 2e12, 4e12, 8e12], [3, 3, 3, 3], [0, 0, 3, 3]);
    expect(f.stop).toBe('separation');
    expect(f.converged).toBe(false);
    expect(f.separation).toEqual({ kind: 'complete', direction: 'increasing' });
    expect(f.parameters.slope.value).toBeNull();
    expect(f.parameters.ed50.value).toBeNull();
    expect(f.parameters.ed50.bracket).toEqual({ from: 2e12, to: 4e12 });
    expect(f.notes[0]).toMatch(/complete separation/);
  });
  it('quasi-complete separation (one mixed dose between), and the decreasing direction', () => {
    const q = fitQuantal([1, 2, 3, 4], [3, 3, 3, 3], [0, 1, 3, 3], { scale: 'linear' });
    expect(q.separation).toEqual({ kind: 'quasi-complete', direction: 'increasing' });
    expect(q.parameters.ed50.bracket).toEqual({ from: 1, to: 3 });
    const d = fitQuantal([1, 2, 3, 4], [3, 3, 3, 3], [3, 3, 0, 0], { scale: 'linear' });
    expect(d.separation).toEqual({ kind: 'complete', direction: 'decreasing' });
    // two mixed doses: not separated, a finite fit
    const ok = fitQuantal([1, 2, 3, 4], [3, 3, 3, 3], [0, 1, 2, 3], { scale: 'linear' });
    expect(ok.stop).toBe('converged');
    expect(ok.separation).toBeNull();
  });
  it('no response, every tube responding, one dose: said, no coefficients', () => {
    expect(fitQuantal([1, 2], [3, 3], [0, 0]).stop).toBe('no-response');
    expect(fitQuantal([1, 2], [3, 3], [3, 3]).stop).toBe('all-responded');
    expect(fitQuantal([1, 1], [3, 3], [1, 2]).stop).toBe('one-dose');
  });
  it('dose 0 is left out of a log10 fit with a note, kept on the linear scale', () => {
    const dose = [0, 1e12, 2e12, 4e12, 8e12];
    const n = [4, 4, 4, 4, 4];
    const y = [1, 0, 1, 3, 4];
    const f = fitQuantal(dose, n, y);
    expect(f.excluded).toEqual([{ dose: 0, tubes: 4, responded: 1, reason: expect.stringMatching(/no log10/) }]);
    expect(f.points).toBe(4);
    expect(f.notes.join(' ')).toMatch(/dose 0 \(4 tubes, 1 responded\)/);
    const g = fitQuantal(dose, n, y, { scale: 'linear' });
    expect(g.excluded).toEqual([]);
    expect(g.points).toBe(5);
  });
  it('malformed rows are refused with their index', () => {
    expect(() => fitQuantal([1, -1], [3, 3], [1, 1])).toThrow(/dose\[1\]/);
    expect(() => fitQuantal([1, 2], [3, 2.5], [1, 1])).toThrow(/tubes\[1\]/);
    expect(() => fitQuantal([1, 2], [3, 3], [1, 4])).toThrow(/responded\[1\]/);
  });
});

describe('the ED50 and its intervals', () => {
  it('Fieller’s limits solve (β₀ + β₁x − g(½))² = z² var(β₀ + β₁x); the delta interval is symmetric in log10 dose', () => {
    const f = fitQuantal([1e12, 2e12, 4e12, 8e12, 1.6e13], [10, 10, 10, 10, 10], [1, 3, 5, 8, 9]);
    const [[v00, v01], [, v11]] = f.covariance!;
    const b0 = f.parameters.intercept.value!;
    const b1 = f.parameters.slope.value!;
    const z = 1.959963984540054;
    for (const d of [f.parameters.ed50.fieller!.lower, f.parameters.ed50.fieller!.upper]) {
      const x = Math.log10(d);
      const lhs = (b0 + b1 * x) ** 2;
      const rhs = z * z * (v00! + 2 * x * v01! + x * x * v11!);
      expect(lhs / rhs).toBeCloseTo(1, 8);
    }
    const e = f.parameters.ed50;
    expect(Math.log10(e.value!) - Math.log10(e.interval!.lower)).toBeCloseTo(Math.log10(e.interval!.upper) - Math.log10(e.value!), 12);
    expect(e.interval!.lower).toBeLessThan(e.value!);
    // the fitted probability at the ED50 is one half
    const p = f.data.map((q) => q.fitted!);
    expect(p[2]).toBeGreaterThan(0.3);
    expect(f.parameters.intercept.value! + f.parameters.slope.value! * Math.log10(e.value!)).toBeCloseTo(0, 10);
  });
  it('a flat response has no bounded Fieller interval, and says so', () => {
    const f = fitQuantal([1, 2, 3, 4], [10, 10, 10, 10], [4, 6, 4, 6], { scale: 'linear' });
    expect(f.parameters.ed50.fieller).toBeNull();
    expect(f.notes.join(' ')).toMatch(/not significant/);
  });
});
