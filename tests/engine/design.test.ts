/**
 * The next-experiment design (engine/design.ts, docs/model.md §13). Checks: the constraints of the sheet (the
 * dose grid from the minimum dose ratio, the lowest dose and the cap; an explicit grid), the comparison with the
 * default fixed series (planner.ts DEFAULT_DOSE_FACTORS × the posterior median and its 5 % and 95 % doses, as
 * doseSeries builds them), and that the criterion's prediction holds on simulated truths: after a designed
 * round, the realised posterior variance of log10 threshold, averaged over truths drawn from the current
 * posterior, is close to the expected one the design reported (preposterior analysis: the expected posterior
 * variance is the average over such truths; Lindley 1956, Ann. Math. Stat. 27:986, from memory).
 */
import { describe, expect, it } from 'vitest';
import { designNext } from '../../server/engine/design.js';
import { DEFAULT_DOSE_FACTORS, type DoseOptions } from '../../server/engine/planner.js';
import { Random } from '../../server/engine/random.js';
import { updateModel, type Tube } from '../../server/engine/update.js';
import { calmBase, simulateTubes, tipper } from '../helpers/update-case.js';

const stat: DoseOptions = { boundary: 'stationary', dosing: 'add' };

describe('designNext', () => {
  const base = calmBase();
  const d = tipper();
  // a first round of the fixed series, seen at the truth of draw 0 of another seed
  const first = updateModel(base, [d], d.id, stat, [], { samples: 400, seed: 3 });
  const truthP = first.posterior.particles[17]!.pred;
  const med = first.bands[0]!.prior.median!;
  const tubes: Tube[] = simulateTubes(truthP, DEFAULT_DOSE_FACTORS.map((f) => f * med), 0.05, new Random(8));
  const post = updateModel(base, [d], d.id, stat, tubes, { samples: 400, seed: 3 });

  it('respects the dose grid, the lowest dose and the cap, and beats the fixed series on its own criterion', () => {
    const r = designNext(post.posterior, base, d, stat, { tubes: 6, minDoseRatio: 1.15, maxDose: 2 * med, seed: 1 });
    expect(r.criterion).toBe('expected posterior variance of log10 threshold');
    expect(r.designed.doses).toHaveLength(6);
    const sorted = [...r.designed.doses].sort((a, b) => a - b);
    for (let i = 1; i < sorted.length; i++) expect(sorted[i]! / sorted[i - 1]!).toBeGreaterThanOrEqual(1.15 * (1 - 1e-9));
    for (const x of sorted) expect(x).toBeLessThanOrEqual(2 * med * (1 + 1e-12));
    expect(r.grid.ratio).toBe(1.15);
    // the fixed series is the default one around the posterior median (capped)
    expect(r.fixed!.reference).toBeCloseTo(r.current.band.median!, 0);
    expect(r.designed.expectedVariance).toBeLessThanOrEqual(r.fixed!.expectedVariance);
    expect(r.designed.expectedVariance).toBeLessThan(r.current.variance);
    expect(r.designed.expectedBandFactor).not.toBeNull();
    // seeded: the same answer twice
    expect(designNext(post.posterior, base, d, stat, { tubes: 6, minDoseRatio: 1.15, maxDose: 2 * med, seed: 1 }).designed.doses).toEqual(r.designed.doses);
  });

  it('chooses only from an explicit grid', () => {
    const grid = [0.6, 0.9, 1.1, 1.3, 1.7, 2.5].map((f) => f * med);
    const r = designNext(post.posterior, base, d, stat, { tubes: 3, grid, seed: 2 });
    for (const x of r.designed.doses) expect(grid).toContain(x);
    expect(new Set(r.designed.doses).size).toBe(3);
  });

  it('predicts the posterior variance that designed rounds realise on truths drawn from the posterior', () => {
    const r = designNext(post.posterior, base, d, stat, { tubes: 5, seed: 4, simulations: 300 });
    // truths: posterior draws (resampled by weight), bench misreadings at ε, then a full update with the new tubes
    const rng = new Random(99);
    const w = post.posterior.weights;
    let realised = 0;
    const K = 40;
    for (let k = 0; k < K; k++) {
      let u = rng.uniform();
      let i = 0;
      while (u > w[i]! && i < w.length - 1) u -= w[i++]!;
      const truth = post.posterior.particles[i]!.pred;
      const more = simulateTubes(truth, r.designed.doses, 0.05, rng, 'N');
      const after = updateModel(base, [d], d.id, stat, [...tubes, ...more], { samples: 400, seed: 3 });
      const p = after.posterior;
      const logs = p.particles.map((q) => Math.log10(q.pred.threshold()));
      const mean = logs.reduce((a, v, j) => a + p.weights[j]! * v, 0);
      realised += logs.reduce((a, v, j) => a + p.weights[j]! * (v - mean) ** 2, 0) / K;
    }
    // the expected value is an average over truths; 40 truths and a different particle set: agreement within a factor 2
    expect(realised / r.designed.expectedVariance).toBeGreaterThan(0.5);
    expect(realised / r.designed.expectedVariance).toBeLessThan(2);
  }, 120_000);
});
