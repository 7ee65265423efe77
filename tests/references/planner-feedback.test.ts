/**
 * Reasons the planner gives without a search, and the dose path's shape, against
 * independent computations (docs/model.md §2, §3, §6; docs/references.md,
 * "reference library"):
 *
 * - A saturating coupling whose fuel is at 0 turns over A(0) = V·0/(K + 0) = 0
 *   (Michaelis–Menten by hand), so its activity at the base levels is 0; its slope
 *   V K/(K + 0)² = V/K is not 0, but multiplies a fuel perturbation that nothing
 *   makes. The claim "no dose can move the boundary" is checked on J(k) built by
 *   hand (tests/references/hand-jacobian.ts, none of the engine's code) with
 *   ml-matrix's eigenvalues: at every dose they are the base's own plus −k²D_d.
 *   The converse cases (glucose present; glucose at 0 but made by a base species)
 *   change the hand spectrum with the dose, and the planner must not say
 *   substrate-absent there.
 * - Dilution by an inert tracer in `replace` mode: one self-attracting base species
 *   in a sealed chamber is stable when f ρ |α μ|/D < D_c k₁² (Keller & Segel 1970,
 *   one species, k₁ = π/L), with f = 1 − x V_t/φ: the restore dose by hand.
 *
 * Only the inputs are invented; the expected numbers are computed here.
 */
import { describe, expect, it } from 'vitest';
import { sphereVolume } from '../../server/engine/checks.js';
import { dosePath, findDose, screen, tidyPath, withDose, type DoseInterval, type DoseOptions } from '../../server/engine/planner.js';
import type { Coupling, Mixture, Species } from '../../server/engine/types.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';
import { handJacobian, libraryEigenvalues } from './hand-jacobian.js';

const L = 2e-3;
const k1 = Math.PI / L;
const Dc = 1.4e-9;
// Calm self-attracting Janus colloids on h2o2 (Σ αμρ/D = −1.8e-3 1/s against −D_c k₁² = −3.45e-3 1/s)
const calmSpecies = (): Species => species('calm', 0.22e-12, 1e12, [constant('h2o2', -2e-17, 2e-11)]);
const base = (glucose: number, extra: Species[] = []): Mixture =>
  mixture([chemical('glucose', 0.67e-9, 0, glucose), chemical('h2o2', Dc, 0, 200)], [calmSpecies(), ...extra], 'sealed', L);
const saturating = (fuel: string, maxRate: number, michaelis: number, product: string | null): Coupling => ({ chemical: fuel, activity: { kind: 'saturating', maxRate, michaelis, product }, mobility: 0 });
// A glucose-oxidase bead: turns glucose into h2o2 and climbs h2o2 gradients (self-attracting when it runs)
const gox = (): Species => species('gox', 0.11e-12, 0, [saturating('glucose', 4e-15, 30, 'h2o2'), { chemical: 'h2o2', activity: null, mobility: -4e-11 }], 2e-6);
const stat: DoseOptions = { boundary: 'stationary', dosing: 'add' };

/** ml-matrix eigenvalues of the hand J(k₁), real parts sorted. */
const handSpectrum = (mix: Mixture) => libraryEigenvalues(handJacobian(mix, k1)).map((e) => e.re).sort((a, b) => b - a);

describe('substrate absent: the dose changes nothing (hand J(k), ml-matrix)', () => {
  it('glucose at 0: every dose leaves the base eigenvalue and adds −k₁² D_d; the reason says the substrate is absent', () => {
    const b = base(0);
    const [lambdaBase] = handSpectrum(b); // the base alone: one species
    for (const x of [1e8, 1e12, 1e15]) {
      const spec = handSpectrum(withDose(b, gox(), x, 'add'));
      const own = -k1 * k1 * 0.11e-12;
      const expected = [lambdaBase!, own].sort((p, q) => q - p);
      expect(rel(spec[0]!, expected[0]!)).toBeLessThan(1e-9);
      expect(rel(spec[1]!, expected[1]!)).toBeLessThan(1e-9);
    }
    const r = findDose(b, gox(), stat);
    expect(r.feasible).toBe(false);
    expect(r.reason).toBe('substrate-absent');
    expect(r.message).toMatch(/its substrate glucose is absent from the mixture \(concentration 0\): it turns nothing over/);
    expect(r.evaluations).toBe(1); // the base's own check only: a proof, not a search
    for (const boundary of ['oscillatory', 'any'] as const) expect(findDose(b, gox(), { ...stat, boundary }).reason).toBe('substrate-absent');
    // its path is the base's state throughout
    expect(dosePath(b, gox(), stat).intervals).toEqual([{ from: 0, to: r.cap.density, state: 'stable' }]);
  });

  it('glucose present: the dose moves the hand spectrum, and the planner finds a threshold', () => {
    const b = base(5);
    const low = handSpectrum(withDose(b, gox(), 1e8, 'add'))[0]!;
    const high = handSpectrum(withDose(b, gox(), 1e13, 'add'))[0]!;
    expect(Math.abs(high - low)).toBeGreaterThan(1e-3 * Math.abs(low));
    const r = findDose(b, gox(), stat);
    expect(r.reason).not.toBe('substrate-absent');
    expect(r.feasible).toBe(true);
    // both sides of the threshold on the hand spectrum
    const x = r.threshold!.density;
    expect(handSpectrum(withDose(b, gox(), 0.999 * x, 'add'))[0]!).toBeLessThan(0);
    expect(handSpectrum(withDose(b, gox(), 1.001 * x, 'add'))[0]!).toBeGreaterThan(0);
  });

  it('glucose at 0 but made by a base species: the linear slope V/K turns its perturbations over, so it is not "absent"', () => {
    // the maker produces glucose (α > 0) and climbs h2o2: δc_glucose ≠ 0, the bead turns it into h2o2 at V/K per unit,
    // and the maker follows that h2o2: a loop through the dopant, so its dose enters the maker's own entry of J
    const maker = species('maker', 0.5e-12, 1e12, [constant('glucose', 1e-17, 0), { chemical: 'h2o2', activity: null, mobility: -3e-11 }]);
    const b = base(0, [maker]);
    const low = handSpectrum(withDose(b, gox(), 1e8, 'add'))[0]!;
    const high = handSpectrum(withDose(b, gox(), 1e14, 'add'))[0]!;
    expect(Math.abs(high - low)).toBeGreaterThan(1e-3 * Math.abs(low));
    const r = findDose(b, gox(), stat);
    expect(r.reason === 'substrate-absent' || r.reason === 'no-feedback').toBe(false);
  });

  it('a species that only follows h2o2 (mobility, no activity) is coupled, not "no-coupling", and feeds nothing back', () => {
    const follower = species('follower', 0.3e-12, 0, [{ chemical: 'h2o2', activity: null, mobility: -5e-11 }]);
    const b = mixture([chemical('h2o2', Dc, 0, 200)], [calmSpecies()], 'sealed', L);
    const [lambdaBase] = handSpectrum(b);
    const spec = handSpectrum(withDose(b, follower, 1e15, 'add'));
    expect(spec).toContainEqual(expect.closeTo(lambdaBase!, 12));
    const r = findDose(b, follower, stat);
    expect(r.reason).toBe('no-feedback');
    // the old answer read the zero α μ as "self-repelling": never that
    expect(r.reason).not.toBe('wrong-sign');
  });
});

describe('replace mode: an inert tracer dilutes the base (no-coupling is no proof there)', () => {
  // One self-attracting species alone, sealed 2 mm: past the stationary boundary while ρ|αμ|/D > D_c k₁² (Keller–Segel).
  const a = -2e-16;
  const m = 3e-11;
  const D = 0.22e-12;
  const rho = 2.39e14; // ≈ 0.1 % of 1 µm spheres
  const unstable = () => mixture([chemical('h2o2', Dc, 0, 200)], [species('janus', D, rho, [constant('h2o2', a, m)])], 'sealed', L);
  const tracer = () => species('tracer', 0.24e-12, 0, []);

  it('restores at x = (1 − f*) φ/V_t with f* = D_c k₁² D/(ρ|αμ|), by hand; every interval non-empty, states alternating', () => {
    const V = sphereVolume(1e-6);
    const phi = rho * V;
    const fStar = (Dc * k1 * k1 * D) / (rho * Math.abs(a * m));
    expect(fStar).toBeLessThan(1);
    const xStar = (1 - fStar) * (phi / V);
    const o: DoseOptions = { boundary: 'restore', dosing: 'replace' };
    const r = findDose(unstable(), tracer(), o);
    expect(r.feasible).toBe(true);
    expect(rel(r.threshold!.density, xStar)).toBeLessThan(1e-6);
    const [c] = screen(unstable(), [tracer()], o);
    expect(c!.warnings.map((w) => w.code)).toContain('no-feedback');
    const path = c!.dosePath;
    expect(path.map((iv) => iv.state)).toEqual(['stationary', 'stable']);
    expect(rel(path[1]!.from, xStar)).toBeLessThan(1e-6);
    checkPath(path, 0, r.cap.density);
  });

  it('unbounded, no loss: the diluted base stays unstable at every f > 0 (λ(k → 0⁺) = −αμ f ρ/D_c > 0), stable only at the cap itself: no empty interval', () => {
    const b = { ...unstable(), chamber: { walls: 'unbounded' as const, length: null, depth: null } };
    const p = dosePath(b, tracer(), { boundary: 'restore', dosing: 'replace' });
    expect(p.intervals.map((iv) => iv.state)).toEqual(['stationary']);
    // before the tidy-up this path ended with "stable (cap, cap]": the state of the single dose where nothing of the base is left
    checkPath(p.intervals, 0, rho); // cap = φ/V_t = ρ V/V_t = ρ (both radii 1 µm)
  });
});

/** The dose path's contract: starts at 0, ends at the cap, every interval non-empty, no gaps, states alternate. */
function checkPath(path: DoseInterval[], from: number, to: number) {
  expect(path[0]!.from).toBe(from);
  expect(rel(path[path.length - 1]!.to, to)).toBeLessThan(1e-12);
  for (const iv of path) expect(iv.from).toBeLessThan(iv.to);
  for (let i = 1; i < path.length; i++) {
    expect(path[i]!.from).toBe(path[i - 1]!.to);
    expect(path[i]!.state).not.toBe(path[i - 1]!.state);
  }
}

describe('tidyPath', () => {
  it('drops an empty interval and merges the equal neighbours it leaves', () => {
    const raw: DoseInterval[] = [
      { from: 0, to: 1, state: 'stable' },
      { from: 1, to: 1, state: 'stationary' },
      { from: 1, to: 3, state: 'stable' },
      { from: 3, to: 5, state: 'oscillatory' },
      { from: 5, to: 5, state: 'stable' },
    ];
    const out = tidyPath(raw);
    expect(out).toEqual([
      { from: 0, to: 3, state: 'stable' },
      { from: 3, to: 5, state: 'oscillatory' },
    ]);
    checkPath(out, 0, 5);
  });
});
