/**
 * The planner's fast exact paths (server/engine/fast.ts, docs/model.md §6 "Fast exact paths", §7)
 * against their independent references:
 *
 * - the general path of the engine (`fast: false`: a mode scan with ml-matrix eigenvalues at every
 *   dose, bisection), on seeded random mixtures drawn like bench/run.ts (mixed signs; one, two and
 *   three chemicals; a saturating base; and the cases that must fall back: a saturating dopant,
 *   crowding, replace);
 * - for the affine determinant, the determinant of the hand-written SI Jacobian
 *   (tests/references/hand-jacobian.ts, docs/model.md §3) taken with ml-matrix: the matrix
 *   determinant lemma det(A + u vᵀ) = det A · (1 + vᵀ A⁻¹ u) (a standard identity, from memory)
 *   says det(−J(x)) / det(−J(0)) = 1 − x/x_k at each mode.
 */
import { determinant, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { fastInapplicable, RankOneDose, sturmPositiveRoots } from '../../server/engine/fast.js';
import { doseCap, dosePath, findDose, pastBoundary, screen, thresholdBand, withDose, type DoseOptions } from '../../server/engine/planner.js';
import { Random } from '../../server/engine/random.js';
import type { Coupling, Mixture, Species, Walls } from '../../server/engine/types.js';
import { handJacobian } from '../references/hand-jacobian.js';
import { chemical, mixture, rel } from '../helpers/mixtures.js';

const sign = (rng: Random) => (rng.uniform() < 0.5 ? -1 : 1);

interface Draw {
  S: number;
  M: number;
  walls?: Walls;
  baseSaturating?: boolean;
  dopantSaturating?: boolean;
  crowding?: boolean;
}

/** A random species in the style of bench/run.ts: D 1e-13–1e-11 m²/s, |α| 1e-17–1e-15 mol/s, |μ| 1e-12–1e-10, mixed signs. */
function randomSpecies(rng: Random, id: string, S: number, density: number, saturating = false): Species {
  const couplings: Coupling[] = Array.from({ length: S }, (_, s) => {
    const rate = sign(rng) * 10 ** rng.between(-17, -15);
    const mobility = sign(rng) * 10 ** rng.between(-12, -10);
    return { chemical: `c${s}`, activity: { kind: 'constant', rate }, mobility, sd: { rate: 0.2 * Math.abs(rate), mobility: 0.2 * Math.abs(mobility) } };
  });
  if (saturating) couplings[0] = { chemical: 'c0', activity: { kind: 'saturating', maxRate: 10 ** rng.between(-16, -15), michaelis: 5, product: S > 1 ? 'c1' : null }, mobility: sign(rng) * 10 ** rng.between(-12, -10) };
  return { id, diffusivity: 10 ** rng.between(-13, -11), radius: 10 ** rng.between(-6.3, -5.7), density, materialDensity: null, couplings, sd: { diffusivity: 0.1 * 10 ** -12 } };
}

function randomCase(rng: Random, c: Draw): { base: Mixture; dopant: Species } {
  const chemicals = Array.from({ length: c.S }, (_, s) => chemical(`c${s}`, 10 ** rng.between(-9.2, -8.8), rng.uniform() < 0.5 ? 0 : 1e-3, 50));
  const species = Array.from({ length: c.M }, (_, m) => randomSpecies(rng, `s${m}`, c.S, 10 ** rng.between(11, 12.5), c.baseSaturating && m === 0));
  const base = mixture(chemicals, species, c.walls ?? 'sealed', 2e-3, c.crowding ?? false);
  return { base, dopant: randomSpecies(rng, 'dopant', c.S, 0, c.dopantSaturating) };
}

/**
 * A fuel (with loss) and its product (without), base species each stable alone (α μ > 0 on both) and a
 * dopant of either sign, as bench/inputs.ts draws them: a growing complex pair often comes before the
 * determinant's crossing, which exercises the second tier (the search on exact predicates).
 */
function fuelCase(rng: Random): { base: Mixture; dopant: Species } {
  const one = (id: string, density: number, stableAlone: boolean): Species => ({
    id,
    diffusivity: 10 ** rng.between(-13, -11),
    radius: 10 ** rng.between(-6.3, -5.7),
    density,
    materialDensity: null,
    couplings: ['c0', 'c1'].map((c, s): Coupling => {
      const rate = (s === 0 ? -1 : 1) * 10 ** rng.between(-16.5, -15.5);
      const mobility = (stableAlone ? Math.sign(rate) : sign(rng)) * 10 ** rng.between(-11.2, -10.5);
      return { chemical: c, activity: { kind: 'constant', rate }, mobility, sd: { rate: 0.2 * Math.abs(rate), mobility: 0.2 * Math.abs(mobility) } };
    }),
  });
  const base = mixture([chemical('c0', 1.4e-9, 1e-3, 50), chemical('c1', 2e-9, 0, 1)], Array.from({ length: 3 }, (_, j) => one(`s${j}`, 10 ** rng.between(12, 13.5), true)), 'sealed', 2e-3);
  return { base, dopant: one('dopant', 0, false) };
}

const FAST_METHODS = new Set(['rank-one-determinant', 'hurwitz-search']);

describe("Sturm's theorem: distinct positive real roots", () => {
  it('counts the positive roots of polynomials built from chosen roots and complex pairs (Vieta expansion)', () => {
    const rng = new Random(17);
    const expand = (c: number[], q: number[]) => {
      const d = new Array<number>(c.length + q.length - 1).fill(0);
      c.forEach((v, i) => q.forEach((w, j) => (d[i + j]! += v * w)));
      return d;
    };
    for (let trial = 0; trial < 2000; trial++) {
      const roots = Array.from({ length: Math.floor(rng.uniform() * 4) }, () => rng.between(-3, 3));
      let c = [1];
      for (const r of roots) c = expand(c, [1, -r]);
      for (let i = Math.floor(rng.uniform() * 3); i > 0; i--) {
        const a = rng.between(-2, 2);
        const b = rng.between(0.01, 2);
        c = expand(c, [1, -2 * a, a * a + b * b]); // the pair a ± ib
      }
      if (c.length < 2) continue;
      const got = sturmPositiveRoots(Float64Array.from(c), new Float64Array(c.length ** 2), new Int32Array(c.length));
      expect(got).toBe(roots.filter((r) => r > 0).length);
    }
    // a double root is not trusted
    expect(sturmPositiveRoots(Float64Array.of(1, -2, 1), new Float64Array(9), new Int32Array(3))).toBeNull();
  });
});

describe('the affine determinant (hand Jacobian, ml-matrix determinant)', () => {
  it('det(−J(x)) / det(−J(0)) = 1 − x/x_k at the crossing modes, for one, two and three chemicals', () => {
    const rng = new Random(101);
    let checked = 0;
    for (let trial = 0; trial < 40 && checked < 12; trial++) {
      const { base, dopant } = randomCase(rng, { S: 1 + (trial % 3), M: 2 + (trial % 3), walls: trial % 2 ? 'periodic' : 'sealed' });
      const o: DoseOptions = { boundary: 'stationary', dosing: 'add' };
      const cap = doseCap(base, dopant, o).density;
      const f = new RankOneDose();
      if (f.prepare(base, dopant, cap, 'stationary').kind !== 'stable') continue;
      const L = base.chamber.length!;
      const k1 = base.chamber.walls === 'sealed' ? Math.PI / L : (2 * Math.PI) / L;
      for (const { mode, dose } of f.modeCrossings().filter((m) => Number.isFinite(m.dose)).slice(0, 2)) {
        const k = mode * k1;
        const det = (x: number) => determinant(Matrix.mul(new Matrix(handJacobian(withDose(base, dopant, x, 'add'), k)), -1));
        const d0 = det(0);
        for (const factor of [0.5, 2, 3]) expect(Math.abs(det(factor * dose) / d0 - (1 - factor))).toBeLessThan(1e-6);
        checked++;
      }
    }
    expect(checked).toBeGreaterThanOrEqual(12);
  });
});

describe('fast and general paths agree (seeded random mixtures)', () => {
  const cases: { name: string; draw: Draw; fast: boolean }[] = [
    { name: 'one chemical, mixed signs', draw: { S: 1, M: 4 }, fast: true },
    { name: 'two chemicals', draw: { S: 2, M: 4 }, fast: true },
    { name: 'three chemicals, periodic', draw: { S: 3, M: 3, walls: 'periodic' }, fast: true },
    { name: 'a saturating base species (two chemicals)', draw: { S: 2, M: 3, baseSaturating: true }, fast: true },
    { name: 'a saturating dopant (falls back)', draw: { S: 2, M: 3, dopantSaturating: true }, fast: false },
    { name: 'crowding (falls back)', draw: { S: 2, M: 3, crowding: true }, fast: false },
  ];
  for (const { name, draw, fast } of cases) {
    it(`${name}: same feasibility and reasons, thresholds within 1e-6`, () => {
      const rng = new Random(name.length * 7919);
      let viaFast = 0;
      for (let i = 0; i < 10; i++) {
        const { base, dopant } = randomCase(rng, draw);
        for (const boundary of ['stationary', 'any'] as const) {
          const o: DoseOptions = { boundary, dosing: 'add', relTol: 1e-8 };
          const a = findDose(base, dopant, o);
          const b = findDose(base, dopant, { ...o, fast: false });
          expect(b.method === 'rank-one-determinant' || b.method === 'hurwitz-search').toBe(false);
          if (FAST_METHODS.has(a.method ?? '')) viaFast++;
          expect(a.feasible).toBe(b.feasible);
          expect(a.reason).toBe(b.reason);
          expect(a.anyDose).toBe(b.anyDose);
          if (a.threshold && b.threshold && b.threshold.density > 0) expect(rel(a.threshold.density, b.threshold.density)).toBeLessThan(1e-6);
          expect(a.window === null).toBe(b.window === null);
          if (a.window && b.window) {
            expect(rel(a.window.upTo, b.window.upTo)).toBeLessThan(1e-6);
            expect(a.window.stateAbove).toBe(b.window.stateAbove);
          }
        }
      }
      if (fast) expect(viaFast).toBeGreaterThan(0);
      else expect(viaFast).toBe(0);
    }, 60_000);
  }

  it('a growing pair before the determinant crossing (fuel and product): the second tier agrees with the general search', () => {
    const rng = new Random(3);
    const methods = new Map<string, number>();
    for (let i = 0; i < 16; i++) {
      const { base, dopant } = fuelCase(rng);
      for (const boundary of ['stationary', 'any'] as const) {
        const o: DoseOptions = { boundary, dosing: 'add', relTol: 1e-8 };
        const a = findDose(base, dopant, o);
        const b = findDose(base, dopant, { ...o, fast: false });
        methods.set(String(a.method), (methods.get(String(a.method)) ?? 0) + 1);
        expect(a.feasible).toBe(b.feasible);
        expect(a.reason).toBe(b.reason);
        if (a.threshold && b.threshold && b.threshold.density > 0) expect(rel(a.threshold.density, b.threshold.density)).toBeLessThan(1e-6);
        expect(a.window === null).toBe(b.window === null);
        if (a.window && b.window) expect(rel(a.window.upTo, b.window.upTo)).toBeLessThan(1e-6);
      }
    }
    expect(methods.get('hurwitz-search') ?? 0).toBeGreaterThan(2);
    expect(methods.get('rank-one-determinant') ?? 0).toBeGreaterThan(2);
  }, 120_000);

  it('replace mode and the oscillatory and restore boundaries take the general path', () => {
    const rng = new Random(5);
    const { base, dopant } = randomCase(rng, { S: 2, M: 3 });
    expect(fastInapplicable(base, dopant, 'replace', 'stationary')).toMatch(/replace/);
    expect(fastInapplicable(base, dopant, 'add', 'oscillatory')).toMatch(/spectrum/);
    expect(fastInapplicable(base, dopant, 'add', 'restore')).toMatch(/spectrum/);
    expect(fastInapplicable({ ...base, chamber: { walls: 'unbounded', length: null, depth: null } }, dopant, 'add', 'stationary')).toMatch(/continuum/);
    expect(fastInapplicable(base, base.species[0]!, 'add', 'stationary')).toMatch(/already in the base/);
    for (const o of [{ boundary: 'stationary', dosing: 'replace' }, { boundary: 'oscillatory', dosing: 'add' }] as DoseOptions[]) {
      const a = findDose(base, dopant, o);
      const b = findDose(base, dopant, { ...o, fast: false });
      expect(FAST_METHODS.has(a.method ?? '')).toBe(false);
      expect(a).toEqual(b);
    }
  });

  it('a certified crossing is stable just below and past just above (general predicate)', () => {
    const rng = new Random(77);
    let seen = 0;
    for (let i = 0; i < 30 && seen < 4; i++) {
      const { base, dopant } = randomCase(rng, { S: 2, M: 3 });
      const r = findDose(base, dopant, { boundary: 'stationary', dosing: 'add' });
      if (r.method !== 'rank-one-determinant' || !r.feasible) continue;
      const x = r.threshold!.density;
      expect(pastBoundary(withDose(base, dopant, x * (1 - 1e-5), 'add'), 'stationary')).toBe(false);
      expect(pastBoundary(withDose(base, dopant, x * (1 + 1e-5), 'add'), 'stationary')).toBe(true);
      seen++;
    }
    expect(seen).toBeGreaterThan(0);
  }, 60_000);
});

describe('the stationary threshold from the structured polynomials (RankOneDose.stationary, docs/model.md §6)', () => {
  // Reference: the general path (fast: false: a mode scan with ml-matrix eigenvalues at every dose, bisected to 1e-8).
  const draws: { name: string; make: (rng: Random) => { base: Mixture; dopant: Species } }[] = [
    { name: 'one chemical, mixed signs', make: (rng) => randomCase(rng, { S: 1, M: 4 }) },
    { name: 'two chemicals', make: (rng) => randomCase(rng, { S: 2, M: 4 }) },
    { name: 'three chemicals, periodic', make: (rng) => randomCase(rng, { S: 3, M: 3, walls: 'periodic' }) },
    { name: 'fuel and product (growing pairs, roots that reach the positive axis before the determinant crossing)', make: fuelCase },
  ];
  for (const { name, make } of draws) {
    it(`${name}: base past, threshold and none-below-cap as the general search finds them`, () => {
      const rng = new Random(name.length * 104729);
      const kinds = new Map<string, number>();
      for (let i = 0; i < 14; i++) {
        const { base, dopant } = make(rng);
        const o: DoseOptions = { boundary: 'stationary', dosing: 'add', relTol: 1e-8 };
        const cap = doseCap(base, dopant, o).density;
        const f = new RankOneDose();
        const v = f.stationary(base, dopant, cap, 1e-8);
        const kind = v.kind === 'threshold' && v.interior ? 'interior' : v.kind;
        kinds.set(kind, (kinds.get(kind) ?? 0) + 1);
        if (v.kind === 'fallback') continue;
        const g = findDose(base, dopant, { ...o, fast: false });
        if (v.kind === 'base-past') expect(g.reason).toBe('base-already-past');
        else if (v.kind === 'none-below-cap') expect(g.feasible).toBe(false);
        else {
          expect(g.feasible).toBe(true);
          expect(rel(v.dose, g.threshold!.density)).toBeLessThan(1e-6);
          // certified: the general predicate is not past just below, past just above
          expect(pastBoundary(withDose(base, dopant, v.certifiedBelow * (1 - 1e-6), 'add'), 'stationary', true)).toBe(false);
          expect(pastBoundary(withDose(base, dopant, v.dose * (1 + 1e-5), 'add'), 'stationary', true)).toBe(true);
        }
      }
      expect((kinds.get('threshold') ?? 0) + (kinds.get('interior') ?? 0)).toBeGreaterThan(1);
      expect(kinds.get('fallback') ?? 0).toBeLessThan(3);
      if (name.startsWith('fuel')) expect(kinds.get('interior') ?? 0).toBeGreaterThan(0);
    }, 60_000);
  }

  it('a saturating base that couples two chemicals (R not diagonal) answers fallback', () => {
    const rng = new Random(77);
    const { base, dopant } = randomCase(rng, { S: 2, M: 3, baseSaturating: true });
    const v = new RankOneDose().stationary(base, dopant, doseCap(base, dopant, { boundary: 'stationary', dosing: 'add' }).density, 1e-6);
    expect(v).toEqual({ kind: 'fallback', why: 'R is not diagonal' });
  });
});

describe('Monte Carlo bands and dose paths', () => {
  it('bands: the same draws, alreadyPast, feasibleFraction and probabilities; quantiles within the per-draw tolerance', () => {
    const rng = new Random(2026);
    let fastDraws = 0;
    for (let i = 0; i < 6; i++) {
      const { base, dopant } = i % 2 ? fuelCase(rng) : randomCase(rng, { S: 2, M: 3 });
      const o: DoseOptions = { boundary: 'stationary', dosing: 'add' };
      const cap = doseCap(base, dopant, o).density;
      const u = { samples: 30, seed: 9 + i, doses: [cap * 1e-4, cap * 1e-2] };
      const a = thresholdBand(base, dopant, o, u);
      const b = thresholdBand(base, dopant, { ...o, fast: false }, u);
      expect(a.fastDraws + a.fallbackDraws).toBe(30);
      expect(b.fastDraws).toBe(0);
      fastDraws += a.fastDraws;
      expect(a.alreadyPast).toBe(b.alreadyPast);
      expect(a.feasibleFraction).toBe(b.feasibleFraction);
      expect(a.aboveCap).toEqual(b.aboveCap);
      expect(a.probability).toEqual(b.probability);
      for (const q of ['median', 'p05', 'p95'] as const) {
        const x = a[q];
        const y = b[q];
        expect(x === null).toBe(y === null);
        // each draw's general threshold is bisected to 1e-4 relative; the fast one is exact or bisected the same way
        if (x !== null && y !== null && y > 0) expect(rel(x, y)).toBeLessThan(2e-4);
      }
      // same seed, same numbers
      expect(thresholdBand(base, dopant, o, u)).toEqual(a);
    }
    expect(fastDraws).toBeGreaterThan(0);
  }, 120_000);

  it('dose paths: the same states, boundaries within the tolerance', () => {
    const rng = new Random(31);
    let viaFast = 0;
    for (let i = 0; i < 10; i++) {
      const { base, dopant } = i % 3 === 2 ? fuelCase(rng) : randomCase(rng, { S: 1 + (i % 2), M: 3 });
      const o: DoseOptions = { boundary: 'stationary', dosing: 'add', relTol: 1e-8 };
      const a = dosePath(base, dopant, o);
      const b = dosePath(base, dopant, { ...o, fast: false });
      if (a.search.method === 'rank-one-determinant') viaFast++;
      expect(b.search.method).toBe('general');
      expect(a.baseState).toBe(b.baseState);
      expect(a.intervals.map((iv) => iv.state)).toEqual(b.intervals.map((iv) => iv.state));
      a.intervals.forEach((iv, j) => {
        const jv = b.intervals[j]!;
        if (jv.from > 0) expect(rel(iv.from, jv.from)).toBeLessThan(1e-6);
      });
      expect(a.firstOnset?.state).toBe(b.firstOnset?.state);
    }
    expect(viaFast).toBeGreaterThan(0);
  }, 120_000);

  it("screen: fast and general give the same ranking and reasons, and progress advances within a candidate's draws", () => {
    const rng = new Random(404);
    const { base } = randomCase(rng, { S: 2, M: 3 });
    const cands = Array.from({ length: 3 }, (_, i) => randomSpecies(rng, `cand-${i}`, 2, 0));
    const calls: number[] = [];
    const o = { boundary: 'stationary' as const, dosing: 'add' as const, uncertainty: { samples: 20, seed: 3 } };
    const a = screen(base, cands, { ...o, progress: (f) => calls.push(f) });
    const b = screen(base, cands, { ...o, fast: false });
    expect(a.map((c) => [c.species, c.reason, c.feasible])).toEqual(b.map((c) => [c.species, c.reason, c.feasible]));
    // more calls than one per candidate, never going back
    expect(calls.length).toBeGreaterThan(3 * 3);
    for (let i = 1; i < calls.length; i++) expect(calls[i]!).toBeGreaterThanOrEqual(calls[i - 1]!);
    expect(calls[calls.length - 1]).toBe(1);
  }, 120_000);
});
