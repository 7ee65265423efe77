/**
 * The model update (server/engine/update.ts, docs/model.md §13). Outside references: the posterior of a
 * one-parameter prior by quadrature (the likelihood written out here from the closed-form stationary dose of
 * docs/model.md §6, Keller & Segel 1970), Kish's effective sample size counted by hand from the two weight
 * values a single tube allows, the plan's own draws (planner.ts perturb, thresholdBand) for "same seed, same
 * draws", the general path (stateOf, findDose) for the closed-form shortcut, and contradictions that no draw
 * of the model can produce. The calibration over 200 simulated truths: update-calibration.test.ts.
 */
import { describe, expect, it } from 'vitest';
import { stateOf } from '../../server/engine/analyze.js';
import { stationaryDoseClosedForm } from '../../server/engine/dose.js';
import { findDose, perturb, streamSeed, thresholdBand, withDose, type DoseOptions } from '../../server/engine/planner.js';
import { Random } from '../../server/engine/random.js';
import {
  applyDeviates,
  binomialTail,
  kishEss,
  planDeviates,
  Predictor,
  simpleRankOne,
  uncertainParameters,
  updateModel,
  weightedQuantile,
  type Tube,
} from '../../server/engine/update.js';
import { calmBase, simulateTubes, tipper } from '../helpers/update-case.js';
import { rel } from '../helpers/mixtures.js';

const stat: DoseOptions = { boundary: 'stationary', dosing: 'add' };

describe('the perturbation space', () => {
  it("reproduces the plan's draws: same seed, same base and the same crossings at every dose", () => {
    const base = calmBase();
    const d = tipper();
    const params = uncertainParameters(base, d);
    // 4 base quantities (D_c, ρ, α, μ of calm) and 3 of the dopant (D, α, μ)
    expect(params.map((p) => `${p.stream}:${p.id}.${p.field}`)).toEqual([
      'base:h2o2.diffusivity',
      'base:calm.density',
      'base:calm.mobility',
      'base:calm.rate',
      'candidate:tipper.diffusivity',
      'candidate:tipper.mobility',
      'candidate:tipper.rate',
    ]);
    for (const i of [0, 5, 77]) {
      const m = applyDeviates(base, d, planDeviates(params, 11, i, d.id));
      expect(m.base).toEqual(perturb(base, new Random(streamSeed(11, i, ''))));
    }
    // the dopant's draws: the plan's P(crossed at x) counts the same draws as the update's predictions
    const N = 200;
    const doses = [2e10, 3.5e10, 5e10];
    const band = thresholdBand(base, d, stat, { samples: N, seed: 11, doses });
    const counts = doses.map(() => 0);
    for (let i = 0; i < N; i++) {
      const m = applyDeviates(base, d, planDeviates(params, 11, i, d.id));
      const p = new Predictor(m.base, m.dopant, stat);
      doses.forEach((x, j) => (counts[j]! += p.state(x) === 'stationary' ? 1 : 0));
    }
    expect(band.probability.map((q) => Math.round(q.probability * N))).toEqual(counts);
  });

  it('the closed-form shortcut agrees with dose.ts, the mode scan and the dose search on perturbed draws', () => {
    const base = calmBase();
    const d = tipper(0.5);
    const params = uncertainParameters(base, d);
    for (let i = 0; i < 12; i++) {
      const m = applyDeviates(base, d, planDeviates(params, 3, i, d.id));
      const a = simpleRankOne(m.base, m.dopant)!;
      const b = stationaryDoseClosedForm(m.base, m.dopant);
      expect(b.applicable).toBe(true);
      if (!b.applicable) continue;
      expect(rel(a.dose, b.dose)).toBeLessThan(1e-12);
      expect(a.firstCrossing).toBe(b.firstCrossing);
      const p = new Predictor(m.base, m.dopant, stat);
      const general = findDose(m.base, m.dopant, { ...stat, closedForm: false, fast: false });
      const t = p.threshold();
      if (general.feasible) expect(rel(t, general.threshold!.density)).toBeLessThan(1e-5);
      else expect(t).toBe(Infinity);
      for (const f of [0.5, 0.99, 1.01, 2]) {
        const x = f * (Number.isFinite(t) ? t : 1e10);
        expect(p.state(x)).toBe(stateOf(withDose(m.base, m.dopant, x, 'add'), { fast: false }));
      }
    }
  });
});

describe('weights, quantiles and tails', () => {
  it('Kish ESS, weighted quantiles and the binomial tail against hand values', () => {
    expect(kishEss([1, 1, 1, 1])).toBe(4);
    expect(kishEss([1, 0, 0, 0])).toBe(1);
    // (1 + 3)² / (1 + 9) = 1.6, by hand
    expect(kishEss([1, 3])).toBeCloseTo(1.6, 12);
    // equal weights: R's type 7, positions (k − 1)/(n − 1) (Hyndman & Fan 1996), as the planner's band: the median of
    // 1..5 is 3; the 5 % point of 1..5 is 1 + 0.05 × 4 = 1.2 and the 95 % point 4.8 (by hand)
    expect(weightedQuantile([5, 1, 4, 2, 3], [1, 1, 1, 1, 1], 0.5)).toBe(3);
    expect(weightedQuantile([5, 1, 4, 2, 3], [1, 1, 1, 1, 1], 0.05)).toBeCloseTo(1.2, 12);
    expect(weightedQuantile([5, 1, 4, 2, 3], [1, 1, 1, 1, 1], 0.95)).toBeCloseTo(4.8, 12);
    // a weight of 2 counts as the value twice: [1, 2, 2, 3] has its 1/3 point at 2 (positions 0, 1/3, 2/3, 1)
    expect(weightedQuantile([1, 2, 3], [1, 2, 1], 1 / 3)).toBeCloseTo(2, 12);
    // P(Bin(9, 0.05) ≥ 1) = 1 − 0.95⁹ (by hand)
    expect(binomialTail(9, 0.05, 1)).toBeCloseTo(1 - 0.95 ** 9, 12);
    expect(binomialTail(9, 0.05, 0)).toBe(1);
  });
});

describe('importance sampling against quadrature (one uncertain quantity)', () => {
  // Only the dopant's mobility is uncertain: μ = μ₀ + s z, z ~ N(0, 1). By the closed form (docs/model.md §6)
  // the mixture is stationary at dose x exactly when α μ x / D_d < −(D_c k₁² + Σ_base αμρ/D), i.e. μ > A / x with
  // A = −(D_c k₁² + Σ_base αμρ/D) D_d / α (α < 0). The posterior of μ given the tubes is φ(z) Π P(seen | state(z)),
  // integrated here on a fine grid of z (trapezoid rule), independently of the engine's code.
  const base = calmBase();
  base.chemicals[0]!.sd = undefined;
  base.species[0]!.sd = undefined;
  base.species[0]!.couplings[0]!.sd = undefined;
  const d = tipper(0);
  d.sd = undefined;
  d.couplings[0]!.sd = { mobility: 0.3 * 5e-11 };
  const gamma = 1.4e-9 * (Math.PI / 2e-3) ** 2; // D_c k₁², sealed, L = 2 mm
  const sumBase = (-2e-17 * 2e-11 * 1e12) / 0.22e-12;
  const A = (-(gamma + sumBase) * 0.22e-12) / -2e-16;
  const mu0 = 5e-11;
  const s = 0.3 * 5e-11;
  const eps = 0.05;
  const tubes: Tube[] = [
    { tube: 'A', dose: 2.5e10, state: 'stable' },
    { tube: 'B', dose: 3.2e10, state: 'stable' },
    { tube: 'C', dose: 4.0e10, state: 'stationary' },
    { tube: 'D', dose: 5.0e10, state: 'stationary' },
  ];
  const like = (z: number) => {
    const mu = mu0 + s * z;
    return tubes.reduce((acc, t) => acc * ((mu > 0 && mu > A / t.dose ? 'stationary' : 'stable') === t.state ? 1 - eps : eps / 2), 1);
  };

  it('the posterior mean and sd of μ agree with quadrature within their Monte Carlo error, and the ESS with a hand count', () => {
    let Z = 0;
    let m1 = 0;
    let m2 = 0;
    const h = 1e-3;
    for (let z = -8; z <= 8; z += h) {
      const w = Math.exp(-z * z / 2) * like(z) * h;
      const mu = mu0 + s * z;
      Z += w;
      m1 += w * mu;
      m2 += w * mu * mu;
    }
    const mean = m1 / Z;
    const sd = Math.sqrt(m2 / Z - mean * mean);
    const N = 4000;
    const r = updateModel(base, [d], d.id, stat, tubes, { samples: N, seed: 5, misclassification: eps, minEss: 1 });
    expect(r.method).toBe('importance');
    const c = r.coefficients.find((q) => q.field === 'mobility')!;
    expect(r.coefficients).toHaveLength(1);
    const se = sd / Math.sqrt(r.ess);
    expect(Math.abs(c.posteriorMean - mean)).toBeLessThan(4 * se);
    expect(Math.abs(c.posteriorSd - sd) / sd).toBeLessThan(0.1);
    // ESS by hand: each draw's weight is Π over tubes of (1 − ε) or ε/2, by whether μ_i > A/x
    const params = uncertainParameters(base, d);
    const w: number[] = [];
    for (let i = 0; i < N; i++) w.push(like(planDeviates(params, 5, i, d.id)[0]!));
    const S = w.reduce((a, b) => a + b, 0);
    const S2 = w.reduce((a, b) => a + b * b, 0);
    expect(r.importanceEss).toBeCloseTo((S * S) / S2, 6);
  });

  it('the sequential Monte Carlo sampler reaches the same posterior when forced', () => {
    let Z = 0;
    let m1 = 0;
    for (let z = -8; z <= 8; z += 1e-3) {
      const w = Math.exp(-z * z / 2) * like(z);
      Z += w;
      m1 += w * (mu0 + s * z);
    }
    const r = updateModel(base, [d], d.id, stat, tubes, { samples: 1000, seed: 5, misclassification: eps, minEss: 1e9 });
    expect(r.method).toBe('smc');
    expect(r.smc!.finalTemperature).toBe(1);
    const c = r.coefficients[0]!;
    expect(Math.abs(c.posteriorMean - m1 / Z) / c.posteriorSd).toBeLessThan(0.25);
  });
});

describe('simulated truth and contradictions', () => {
  const base = calmBase();
  const d = tipper();
  const other = tipper(0.2, 'other');
  const params = uncertainParameters(base, d);
  const truthOf = (i: number) => {
    const m = applyDeviates(base, d, planDeviates(params, 4242, i, d.id));
    return new Predictor(m.base, m.dopant, stat);
  };
  const series = (median: number) => [0, 0.5, 0.8, 1, 1.25, 1.6, 2].map((f) => f * median);

  it('narrows the band around the true threshold, reports every candidate and stays consistent', () => {
    const truth = truthOf(3);
    const prior = updateModel(base, [d, other], d.id, stat, [], { samples: 400, seed: 9 });
    const tubes = simulateTubes(truth, series(prior.bands[0]!.prior.median!), 0.05, new Random(1));
    const r = updateModel(base, [d, other], d.id, stat, tubes, { samples: 400, seed: 9 });
    expect(r.bands.map((b) => b.species)).toEqual(['tipper', 'other']);
    const b = r.bands[0]!.posterior;
    const t = truth.threshold();
    expect(b.p05!).toBeLessThanOrEqual(t);
    expect(b.p95!).toBeGreaterThanOrEqual(t);
    expect(b.p95! / b.p05!).toBeLessThan(r.bands[0]!.prior.p95! / r.bands[0]!.prior.p05!);
    expect(r.consistency.consistent).toBe(true);
    expect(r.ess).toBeGreaterThan(0);
    // the coefficient table names what it updates, in SI
    const mob = r.coefficients.find((c) => c.stream === 'candidate' && c.field === 'mobility')!;
    expect(mob).toMatchObject({ owner: 'species', id: 'tipper', chemical: 'h2o2', kind: 'signed', value: 5e-11 });
    expect(mob.posteriorSd).toBeGreaterThan(0);
  });

  it('flags outcomes of the opposite sign (stationary at low doses, stable at high) as improbable under every draw', () => {
    const prior = updateModel(base, [d], d.id, stat, [], { samples: 400, seed: 9 });
    const med = prior.bands[0]!.prior.median!;
    const tubes: Tube[] = series(med).map((x, i) => ({ tube: `T${i}`, dose: x, state: x < med ? 'stationary' : 'stable' }));
    const r = updateModel(base, [d], d.id, stat, tubes, { samples: 400, seed: 9 });
    expect(r.consistency.consistent).toBe(false);
    expect(r.consistency.message).toMatch(/the model or the shelf is wrong/);
    expect(r.consistency.bestMismatches).toBeGreaterThanOrEqual(2);
  });

  it('flags a threshold 100 times the shelf’s (outcomes of a different dopant) with tight uncertainties', () => {
    const tight = tipper(0.1);
    const prior = updateModel(base, [tight], tight.id, stat, [], { samples: 400, seed: 9 });
    const med = prior.bands[0]!.prior.median!;
    // the other model: the same mixture with a dopant whose α μ is 100 times weaker
    const weak = { ...tight, couplings: [{ ...tight.couplings[0]!, mobility: 5e-13 }] };
    const truth = new Predictor(base, weak, stat);
    expect(truth.threshold() / med).toBeGreaterThan(50);
    const tubes = simulateTubes(truth, [...series(med), 3 * med, 5 * med], 0.05, new Random(2));
    const r = updateModel(base, [tight], tight.id, stat, tubes, { samples: 400, seed: 9 });
    expect(r.consistency.consistent).toBe(false);
    expect(r.consistency.message).toMatch(/the model or the shelf is wrong/);
  });

  it('uses onset times and pattern lengths on the general path (replace dosing: no closed form)', () => {
    const o: DoseOptions = { boundary: 'stationary', dosing: 'replace' };
    const m = applyDeviates(base, d, planDeviates(params, 4242, 1, d.id));
    const truth = new Predictor(m.base, m.dopant, o);
    const t = truth.threshold();
    expect(Number.isFinite(t)).toBe(true);
    const rng = new Random(4);
    const doses = [0.5, 0.8, 1.25, 1.6, 2].map((f) => f * t);
    const tubes: Tube[] = doses.map((x, i) => {
      const g = truth.growth(x);
      const s = truth.state(x);
      return { tube: `G${i}`, dose: x, state: s, onsetTime: g ? g.time * Math.exp(0.2 * rng.normal()) : null, patternLength: g && g.wavelength ? g.wavelength * Math.exp(0.1 * rng.normal()) : null };
    });
    expect(tubes.some((q) => q.onsetTime !== null)).toBe(true);
    const r = updateModel(base, [d], d.id, o, tubes, { samples: 60, seed: 2, maxEvaluations: 400 });
    const b = r.bands[0]!.posterior;
    expect(b.p05!).toBeLessThanOrEqual(t * 1.0001);
    expect(b.p95!).toBeGreaterThanOrEqual(t * 0.9999);
    expect(r.consistency.consistent).toBe(true);
    if (r.smc) expect(r.smc.evaluations).toBeLessThanOrEqual(400);
  });

  it('onset times and lengths that no draw explains move the band no more than a little (found in review)', () => {
    // The states are the truth's; the bench reads lengths 16 times shorter and onsets 20 times sooner than the model
    // predicts (what a real chamber may do). A draw predicting no growth at such a tube must pay for the reading too:
    // before, it was spared the term and the band moved above tubes seen stationary.
    const truth = truthOf(3);
    const t = truth.threshold();
    const prior = updateModel(base, [d], d.id, stat, [], { samples: 400, seed: 9 });
    const states = simulateTubes(truth, series(prior.bands[0]!.prior.median!), 0.05, new Random(1));
    const read = states.map((q) => {
      const g = truth.state(q.dose) === 'stable' ? null : truth.growth(q.dose);
      return g ? { ...q, onsetTime: g.time / 20, patternLength: g.wavelength !== null ? g.wavelength / 16 : null } : q;
    });
    expect(read.some((q) => q.onsetTime != null)).toBe(true);
    const a = updateModel(base, [d], d.id, stat, states, { samples: 400, seed: 9 }).bands[0]!.posterior;
    const b = updateModel(base, [d], d.id, stat, read, { samples: 400, seed: 9 }).bands[0]!.posterior;
    expect(b.p05!).toBeLessThanOrEqual(t);
    expect(b.p95!).toBeGreaterThanOrEqual(t);
    expect(Math.abs(Math.log(b.median! / a.median!))).toBeLessThan(Math.log(1.25));
    // the lowest dose seen stationary stays inside or above the band's lower end
    const lowestSeen = Math.min(...read.filter((q) => q.state === 'stationary').map((q) => q.dose));
    expect(b.p05!).toBeLessThanOrEqual(lowestSeen);
  });

  it('reports progress that never falls, and stops when the progress call throws (a cancelled job)', () => {
    const prior = updateModel(base, [d], d.id, stat, [], { samples: 200, seed: 9 });
    const tubes = simulateTubes(truthOf(5), series(prior.bands[0]!.prior.median!), 0.05, new Random(3));
    const seen: number[] = [];
    updateModel(base, [d], d.id, stat, tubes, { samples: 200, seed: 9, progress: (f) => seen.push(f) });
    expect(seen.length).toBeGreaterThan(10);
    for (let i = 1; i < seen.length; i++) expect(seen[i]!).toBeGreaterThanOrEqual(seen[i - 1]!);
    expect(seen[seen.length - 1]).toBe(1);
    let calls = 0;
    const stop = () => {
      if (++calls > 5) throw new Error('cancelled');
    };
    expect(() => updateModel(base, [d], d.id, stat, tubes, { samples: 200, seed: 9, progress: stop })).toThrow('cancelled');
  });

  it('says how it sampled, and treats unclear tubes as no state information', () => {
    const tubes: Tube[] = [{ tube: 'U', dose: 3e10, state: 'unclear' }];
    const r = updateModel(base, [d], d.id, stat, tubes, { samples: 100, seed: 1 });
    expect(r.method).toBe('importance');
    expect(r.ess).toBeCloseTo(100, 6);
    expect(r.tubes).toEqual({ used: 1, unclear: 1 });
    expect(r.bands[0]!.posterior).toEqual(r.bands[0]!.prior);
  });
});
