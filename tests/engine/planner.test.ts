/**
 * The dose planner. The outside references: the threshold against x* written
 * out by hand from the Keller–Segel stationary condition (Keller & Segel 1970,
 * extended to several species by the matrix determinant lemma; docs/model.md §6,
 * docs/references.md), and the spectrum on both sides of it from an independent
 * eigen library (ml-matrix's EigenvalueDecomposition) on the Jacobian J(k) of
 * docs/model.md §3 built here. The rest are identities of the definitions:
 * predicates on both sides of a threshold, conserved volume fraction, seeded
 * reproducibility, agreement between the state map, the fuel sweep and direct
 * searches. More references: tests/references/planner-reference.test.ts.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { sphereVolume } from '../../server/engine/checks.js';
import { findDose, fuelSweep, pastBoundary, scaleBase, screen, stateMap, thresholdBand, withDose, type DoseOptions } from '../../server/engine/planner.js';
import type { Mixture, Species } from '../../server/engine/types.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

// A calm base: weakly self-attracting Janus colloids below threshold in a sealed 2 mm chamber
// (Σ αμρ/D = −1.8e-3 1/s against −D_c k₁² = −3.45e-3 1/s).
const calm = (kappa = 0): Mixture =>
  mixture([chemical('h2o2', 1.4e-9, kappa, 200)], [species('calm', 0.22e-12, 1e12, [constant('h2o2', -2e-17, 2e-11)])], 'sealed', 2e-3);
const tipper = (sd = 0): Species => {
  const s = species('tipper', 0.22e-12, 0, [constant('h2o2', -2e-16, 5e-11)]);
  if (sd > 0) {
    s.sd = { diffusivity: sd * 0.22e-12 };
    s.couplings[0]!.sd = { rate: sd * 2e-16, mobility: sd * 5e-11 };
  }
  return s;
};
const repeller = (): Species => species('repeller', 0.22e-12, 0, [constant('h2o2', -2e-16, -3e-11)]);
const inert = (): Species => species('inert', 0.24e-12, 0, []);
const stat: DoseOptions = { boundary: 'stationary', dosing: 'add' };

/**
 * Largest real part over allowed modes of J(k)_mn = −k² D_m δ_mn − k² ρ_m μ_m α_n /(D_c k² + κ)
 * (one chemical, constant activities; docs/model.md §3), eigenvalues from ml-matrix.
 * Sealed: k = nπ/L; periodic: k = 2πn/L (n = 1..60); unbounded: a log grid of k.
 */
function maxGrowthMlMatrix(mix: Mixture): number {
  const c = mix.chemicals[0]!;
  const sp = mix.species;
  const { walls, length } = mix.chamber;
  const ks =
    walls === 'unbounded'
      ? Array.from({ length: 400 }, (_, i) => Math.sqrt(c.lossRate / c.diffusivity) * Math.pow(10, -6 + (9 * i) / 399))
      : Array.from({ length: 60 }, (_, i) => ((walls === 'sealed' ? 1 : 2) * Math.PI * (i + 1)) / length!);
  let best = -Infinity;
  for (const k of ks) {
    const g = 1 / (c.diffusivity * k * k + c.lossRate);
    const J = new Matrix(sp.length, sp.length);
    sp.forEach((a, m) =>
      sp.forEach((b, n) => {
        const alpha = b.couplings[0]!.activity!.kind === 'constant' ? b.couplings[0]!.activity!.rate : NaN;
        J.set(m, n, -k * k * (m === n ? a.diffusivity : 0) - k * k * g * a.density * a.couplings[0]!.mobility * alpha);
      }),
    );
    for (const re of new EigenvalueDecomposition(J).realEigenvalues) best = Math.max(best, re);
  }
  return best;
}

describe('dose search', () => {
  it('closed form and search find the hand-computed Keller–Segel x*; ml-matrix: stable at 0.999 x*, growing at 1.001 x*', () => {
    // x* solves D_c k₁² + κ + α_b μ_b ρ_b / D_b + x α_d μ_d / D_d = 0 (Keller–Segel with the dopant added, rank one).
    const Dc = 1.4e-9;
    const L = 2e-3;
    const sumBase = (-2e-17 * 2e-11 * 1e12) / 0.22e-12; // α μ ρ / D of the calm base = −1.818e-3 1/s
    for (const [walls, kappa, k1] of [['sealed', 0, Math.PI / L], ['periodic', 1e-2, (2 * Math.PI) / L], ['unbounded', 1e-2, 0]] as const) {
      const base = { ...calm(kappa), chamber: { walls, length: walls === 'unbounded' ? null : L, depth: null } };
      const xStar = ((Dc * k1 * k1 + kappa + sumBase) * 0.22e-12) / (2e-16 * 5e-11);
      expect(xStar).toBeGreaterThan(0);
      const closed = findDose(base, tipper(), stat);
      const searched = findDose(base, tipper(), { ...stat, closedForm: false });
      expect(closed.method).toBe('closed-form');
      expect(searched.method).toBe('search');
      expect(rel(closed.threshold!.density, xStar)).toBeLessThan(1e-12);
      expect(rel(searched.threshold!.density, xStar)).toBeLessThan(1e-6);
      expect(rel(closed.threshold!.volumeFraction, xStar * sphereVolume(1e-6))).toBeLessThan(1e-12);
      // two-sided, with an independent spectrum
      expect(maxGrowthMlMatrix(withDose(base, tipper(), 0.999 * xStar, 'add'))).toBeLessThan(0);
      expect(maxGrowthMlMatrix(withDose(base, tipper(), 1.001 * xStar, 'add'))).toBeGreaterThan(0);
      // and the planner's own predicate agrees on both sides
      expect(pastBoundary(withDose(base, tipper(), 0.999 * xStar, 'add'), 'stationary')).toBe(false);
      expect(pastBoundary(withDose(base, tipper(), 1.001 * xStar, 'add'), 'stationary')).toBe(true);
    }
  });

  it('the threshold separates the two sides of the boundary', () => {
    const r = findDose(calm(), tipper(), { ...stat, closedForm: false });
    const x = r.threshold!.density;
    expect(pastBoundary(withDose(calm(), tipper(), x * (1 - 1e-5), 'add'), 'stationary')).toBe(false);
    expect(pastBoundary(withDose(calm(), tipper(), x * (1 + 1e-5), 'add'), 'stationary')).toBe(true);
  });

  it('reports a window when the predicate is not monotone (an oscillatory band that turns stationary)', () => {
    // Slow self-repelling beads; a fast self-attracting swimmer first makes a complex pair grow,
    // then, at a higher dose, the pair splits into real eigenvalues (docs/model.md §5).
    const base = mixture([chemical('h2o2', 1.4e-9, 0, 1000)], [species('beads', 1e-12, 1e13, [constant('h2o2', -5e-15, -1e-10)], 0.22e-6)], 'sealed', 4e-4);
    const swimmer = species('swimmer', 20e-12, 0, [constant('h2o2', -3e-16, 2e-10)], 0.5e-6);
    const r = findDose(base, swimmer, { boundary: 'oscillatory', dosing: 'add' });
    expect(r.feasible).toBe(true);
    expect(r.window).not.toBeNull();
    const { density } = r.threshold!;
    const upTo = r.window!.upTo;
    expect(upTo).toBeGreaterThan(density);
    const mid = Math.sqrt(density * upTo);
    expect(analyze(withDose(base, swimmer, mid, 'add')).branches.oscillatory!.growthRate).toBeGreaterThan(0);
    expect(pastBoundary(withDose(base, swimmer, upTo * 1.01, 'add'), 'oscillatory')).toBe(false);
    expect(pastBoundary(withDose(base, swimmer, upTo * 0.99, 'add'), 'oscillatory')).toBe(true);
  });

  it('restore: the smallest dose that makes an unstable base stable', () => {
    const unstable = withDose(calm(), tipper(), 3 * findDose(calm(), tipper(), stat).threshold!.density, 'add');
    expect(analyze(unstable).state).toBe('stationary');
    const r = findDose(unstable, repeller(), { boundary: 'restore', dosing: 'add' });
    expect(r.feasible).toBe(true);
    const x = r.threshold!.density;
    expect(analyze(withDose(unstable, repeller(), x * 0.999, 'add')).state).not.toBe('stable');
    expect(analyze(withDose(unstable, repeller(), x * 1.001, 'add')).state).toBe('stable');
  });

  it('replace keeps the total volume fraction, and finds its own threshold', () => {
    const base = calm();
    const phi = (m: Mixture) => m.species.reduce((a, s) => a + s.density * sphereVolume(s.radius), 0);
    const big = { ...tipper(), radius: 2e-6 };
    // φ_base = 4.2e-6 and V = 3.4e-17 m³: up to 1.25e11 m⁻³ can replace the base
    for (const x of [1e9, 1e10, 1.2e11]) expect(rel(phi(withDose(base, big, x, 'replace')), phi(base))).toBeLessThan(1e-12);
    const r = findDose(base, big, { boundary: 'stationary', dosing: 'replace' });
    expect(r.feasible).toBe(true);
    expect(r.cap.limitedBy).toBe('replaced-everything');
    const at = withDose(base, big, r.threshold!.density, 'replace');
    expect(rel(phi(at), phi(base))).toBeLessThan(1e-12);
    expect(pastBoundary(withDose(base, big, r.threshold!.density * 1.0001, 'replace'), 'stationary')).toBe(true);
    expect(pastBoundary(withDose(base, big, r.threshold!.density * 0.9999, 'replace'), 'stationary')).toBe(false);
  });
});

describe('infeasibility: every reason', () => {
  const reason = (base: Mixture, d: Species, o: DoseOptions) => {
    const r = findDose(base, d, o);
    expect(r.feasible).toBe(false);
    expect(r.threshold).toBeNull();
    expect(r.message).toMatch(/\w/);
    return r.reason;
  };
  it('base-already-past', () => {
    const past = withDose(calm(), tipper(), 1e15, 'add');
    expect(reason(past, tipper(), stat)).toBe('base-already-past');
    expect(reason(calm(), repeller(), { boundary: 'restore', dosing: 'add' })).toBe('base-already-past');
  });
  it('no-room-under-cap: a base that already fills the volume-fraction cap says so', () => {
    // φ_base = ρ (4/3)π a³ = 1e12 · 4.19e-18 = 4.2e-6: a cap of 4e-6 leaves no room
    expect(reason(calm(), tipper(), { ...stat, maxVolumeFraction: 4e-6 })).toBe('no-room-under-cap');
    expect(findDose(calm(), tipper(), { ...stat, maxVolumeFraction: 4e-6 }).cap.density).toBe(0);
    // just above it there is room, and the usual answer
    expect(findDose(calm(), tipper(), { ...stat, maxVolumeFraction: 0.3 }).feasible).toBe(true);
  });
  it('no-coupling', () => expect(reason(calm(), inert(), stat)).toBe('no-coupling'));
  it('wrong-sign (closed form and search)', () => {
    expect(reason(calm(), repeller(), stat)).toBe('wrong-sign');
    expect(reason(calm(), repeller(), { ...stat, closedForm: false })).toBe('wrong-sign');
    const unstable = withDose(calm(), tipper(), 1e15, 'add');
    expect(reason(unstable, tipper(), { boundary: 'restore', dosing: 'add' })).toBe('wrong-sign');
  });
  it('wrong-sign only where the sign argument is a proof (rank one, add); cross-coupled dopants get what the search found', () => {
    // Two chemicals: the dopant makes o2 (which the base flees) and climbs or flees h2o2 (which the base eats).
    // Its α μ on each chemical is zero, so no sign rule applies; the mirror image with μ < 0 does cross.
    const base = mixture([chemical('h2o2', 1.4e-9, 0, 200), chemical('o2', 2e-9, 0, 0.2)], [species('calm', 0.22e-12, 1e12, [constant('h2o2', -2e-17, 2e-11), constant('o2', 0, 1e-11)])], 'sealed', 2e-3);
    const flees = species('flees', 0.22e-12, 0, [constant('h2o2', 0, 5e-11), constant('o2', 1e-17, 0)]);
    const climbs = species('climbs', 0.22e-12, 0, [constant('h2o2', 0, -5e-11), constant('o2', 1e-17, 0)]);
    expect(reason(base, flees, stat)).toBe('not-found-below-cap');
    const r = findDose(base, climbs, stat);
    expect(r.feasible).toBe(true);
    expect(pastBoundary(withDose(base, climbs, 0.999 * r.threshold!.density, 'add'), 'stationary')).toBe(false);
    expect(pastBoundary(withDose(base, climbs, 1.001 * r.threshold!.density, 'add'), 'stationary')).toBe(true);
  });
  it('no-oscillation-possible', () => expect(reason(calm(), tipper(), { boundary: 'oscillatory', dosing: 'add' })).toBe('no-oscillation-possible'));
  it('too-weak-before-cap only where the closed form proves it; the search says not-found-below-cap', () => {
    const weak = species('weak', 0.22e-12, 0, [constant('h2o2', -1e-22, 1e-13)]);
    const r = findDose(calm(), weak, stat);
    expect(r.reason).toBe('too-weak-before-cap');
    expect(findDose(calm(), tipper(), { ...stat, maxDensity: 1e6 }).reason).toBe('too-weak-before-cap');
    const searched = findDose(calm(), weak, { ...stat, closedForm: false });
    expect(searched.reason).toBe('not-found-below-cap');
    expect(searched.message).toMatch(/by a search of 48 doses/);
  });
  it('crowding-wins', () => {
    // Large, dense, weakly attracting dopant: crossing needs φ ≈ 0.1, where crowding (B₂ of 2 µm spheres) stabilises.
    const base = mixture([chemical('h2o2', 1.4e-9, 0, 200)], [species('calm', 0.22e-12, 1e12, [constant('h2o2', -2e-17, 2e-11)])], 'sealed', 2e-3);
    // Without crowding x* = γD/|αμ| (φ ≈ 0.08 once the dopant's own mobility sign is included); with it the one-species criterion
    // −αμρ/(D(1 + 2ρB)) tends to −αμ/(2DB) ≈ 2.7e-3 1/s < γ = 3.45e-3 1/s: never crosses.
    const big = species('big', 0.11e-12, 0, [constant('h2o2', -2e-21, 4e-11)], 2e-6);
    const free = findDose(base, big, stat);
    expect(free.feasible).toBe(true);
    expect(free.threshold!.volumeFraction).toBeGreaterThan(0.05);
    expect(reason({ ...base, crowding: true }, big, stat)).toBe('crowding-wins');
  });
  it('nothing-to-replace', () => {
    const empty = { ...calm(), species: [{ ...calm().species[0]!, density: 0 }] };
    expect(reason(empty, tipper(), { boundary: 'stationary', dosing: 'replace' })).toBe('nothing-to-replace');
  });
});

describe('uncertainty', () => {
  it('the same seed gives the same numbers; another seed others', () => {
    const u = { samples: 40, seed: 7 };
    const a = thresholdBand(calm(), tipper(0.1), stat, u);
    const b = thresholdBand(calm(), tipper(0.1), stat, u);
    const c = thresholdBand(calm(), tipper(0.1), stat, { ...u, seed: 8 });
    expect(b).toEqual(a);
    expect(c.median).not.toBe(a.median);
  });
  it('median near the deterministic threshold when uncertainties are small; the band widens as they grow', () => {
    const x = findDose(calm(), tipper(), stat).threshold!.density;
    const widths: number[] = [];
    for (const sd of [0.001, 0.05, 0.2]) {
      const b = thresholdBand(calm(), tipper(sd), stat, { samples: 200, seed: 11 });
      expect(b.feasibleFraction).toBe(1);
      if (sd === 0.001) expect(rel(b.median!, x)).toBeLessThan(3e-3);
      widths.push((b.p95! - b.p05!) / b.median!);
    }
    expect(widths[0]!).toBeLessThan(widths[1]!);
    expect(widths[1]!).toBeLessThan(widths[2]!);
    expect(widths[0]!).toBeLessThan(0.02);
  });
  it('the probability of crossing rises through the band', () => {
    const x = findDose(calm(), tipper(), stat).threshold!.density;
    const b = thresholdBand(calm(), tipper(0.1), stat, { samples: 100, seed: 3, doses: [x / 3, x, x * 3] });
    const p = b.probability.map((q) => q.probability);
    expect(p[0]!).toBeLessThan(0.1);
    expect(p[1]!).toBeGreaterThan(0.2);
    expect(p[1]!).toBeLessThan(0.8);
    expect(p[2]!).toBeGreaterThan(0.9);
  });
});

describe('screening and ranking', () => {
  it('ranks feasible candidates by dose and keeps the infeasible ones with reasons', () => {
    const strong = { ...tipper(), id: 'strong', couplings: [constant('h2o2', -4e-16, 5e-11)] };
    const r = screen(calm(), [inert(), tipper(), repeller(), strong], { ...stat, margin: 1.5 });
    expect(r.map((c) => c.species)).toEqual(['strong', 'tipper', 'inert', 'repeller']);
    expect(r.map((c) => c.rank)).toEqual([1, 2, 3, 4]);
    expect(r[0]!.threshold!.density).toBeLessThan(r[1]!.threshold!.density);
    expect(r[0]!.atThreshold!.growthRate).toBeLessThan(1e-9 * Math.abs(r[0]!.atMargin!.growthRate) + 1e-12);
    expect(r[0]!.atMargin!.state).toBe('stationary');
    expect(r.slice(2).map((c) => c.reason)).toEqual(['no-coupling', 'wrong-sign']);
  });
});

describe('state map and fuel sweep', () => {
  it('the map boundary agrees with thresholds computed directly at sampled base levels', () => {
    // thresholds run from ≈ 7e10 m⁻³ (base × 0.2) to ≈ 1.5e10 (base × 1.5)
    const m = stateMap(calm(), tipper(), { ...stat, baseRange: [0.2, 1.5], baseSteps: 6, doseSteps: 12, doseRange: [1e9, 1e13] });
    expect(m.states.length).toBe(6);
    expect(m.states[0]!.length).toBe(12);
    const line = m.boundaries.find((b) => b.from === 'stable' && b.to === 'stationary')!;
    expect(line.points.length).toBeGreaterThanOrEqual(4);
    for (const [f, x] of line.points) {
      const direct = findDose(scaleBase(calm(), f, null), tipper(), stat).threshold!.density;
      expect(rel(x, direct)).toBeLessThan(3e-6);
    }
  });
  it('a fuel sweep agrees with single thresholds at its grid points', () => {
    // Saturating consumption: the activity depends on the fuel level.
    const sat = species('enz', 40e-12, 0, [{ chemical: 'h2o2', activity: { kind: 'saturating', maxRate: 3e-19, michaelis: 80, product: null }, mobility: 5e-9 }], 5e-9);
    const base = calm();
    const sweep = fuelSweep(base, [sat, tipper()], { ...stat, chemical: 'h2o2', range: [10, 1000], steps: 5 });
    expect(sweep.length).toBe(5);
    const t = sweep.map((p) => p.candidates[0]!.threshold);
    for (const p of sweep) {
      const b = { ...base, chemicals: [{ ...base.chemicals[0]!, concentration: p.concentration }] };
      for (const [i, d] of [sat, tipper()].entries()) {
        const direct = findDose(b, d, stat);
        expect(p.candidates[i]!.threshold).toBe(direct.threshold?.density ?? null);
      }
    }
    // the saturating candidate's threshold changes with the fuel; the constant one does not
    expect(new Set(t).size).toBeGreaterThan(1);
    expect(new Set(sweep.map((p) => p.candidates[1]!.threshold)).size).toBe(1);
  });
});
