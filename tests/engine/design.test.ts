/**
 * The next-experiment design (engine/design.ts, docs/model.md §13). Checks: the constraints of the sheet (the
 * dose grid from the minimum dose ratio, the lowest dose and the cap; an explicit grid), the comparison with the
 * default fixed series (planner.ts DEFAULT_DOSE_FACTORS × the posterior median and its 5 % and 95 % doses, as
 * doseSeries builds them), and that the criterion's prediction holds on simulated truths: after a designed
 * round, the realised posterior variance of log10 threshold, averaged over truths drawn from an independent
 * posterior sample (another seed's draws, none of them in the design's particle set), is close to the expected
 * one the design reported (preposterior analysis: the expected posterior variance is the average over such
 * truths; Lindley 1956, Ann. Math. Stat. 27:986, from memory). The reported scores are honest: both series are
 * scored on simulations independent of the ones the doses were chosen on, with the same misreadings (common
 * random numbers), and thresholds outside the deliverable range enter clamped to it.
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

  it('respects the dose grid, the lowest dose and the cap, and says where the lowest dose comes from', () => {
    const r = designNext(post.posterior, base, d, stat, { tubes: 6, minDoseRatio: 1.15, maxDose: 2 * med, seed: 1 });
    expect(r.criterion).toBe('expected posterior variance of log10 threshold');
    expect(r.designed.doses).toHaveLength(6);
    const sorted = [...r.designed.doses].sort((a, b) => a - b);
    for (let i = 1; i < sorted.length; i++) expect(sorted[i]! / sorted[i - 1]!).toBeGreaterThanOrEqual(1.15 * (1 - 1e-9));
    for (const x of sorted) expect(x).toBeLessThanOrEqual(2 * med * (1 + 1e-12));
    expect(r.grid.ratio).toBe(1.15);
    // the fixed series is the default one around the posterior median (capped)
    expect(r.fixed!.reference).toBeCloseTo(r.current.band.median!, 0);
    expect(r.designed.expectedVariance).toBeLessThan(r.current.variance);
    expect(r.truths).toBe('posterior particles, leave-one-out');
    // the sheet sets no lowest dose (it dilutes serially): the grid starts at the posterior 5 % dose / 3, and says so
    expect(r.grid.lowest).toBe('posterior');
    // the grid steps down from its top by the ratio: its lowest dose lies within one step above the lowest allowed
    expect(r.grid.from / (r.current.band.p05! / 3)).toBeGreaterThanOrEqual(1 - 1e-9);
    expect(r.grid.from / (r.current.band.p05! / 3)).toBeLessThan(1.15);
    const given = designNext(post.posterior, base, d, stat, { tubes: 2, minDose: 0.5 * med, maxDose: 2 * med, seed: 1 }).grid;
    expect(given.lowest).toBe('minDose');
    expect(given.from / (0.5 * med)).toBeGreaterThanOrEqual(1 - 1e-9);
    expect(given.from / (0.5 * med)).toBeLessThan(1.1);
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

  it('predicts the posterior variance that designed rounds realise on truths independent of its particles', () => {
    const r = designNext(post.posterior, base, d, stat, { tubes: 5, seed: 4, simulations: 300 });
    // truths independent of the design's particles: an independent posterior sample (the plan's draws of another
    // seed, weighted by the same tubes), resampled by weight; bench misreadings at ε; then the update of the
    // design's own particle set (seed 3) with the new tubes
    const other = updateModel(base, [d], d.id, stat, tubes, { samples: 400, seed: 11 }).posterior;
    const own = new Set(post.posterior.particles.map((p) => p.pred.threshold()));
    const rng = new Random(99);
    const w = other.weights;
    const realisedOf = (doses: number[], r0: Random) => {
      let realised = 0;
      const K = 160;
      for (let k = 0; k < K; k++) {
        let u = r0.uniform();
        let i = 0;
        while (u > w[i]! && i < w.length - 1) u -= w[i++]!;
        const truth = other.particles[i]!.pred;
        expect(own.has(truth.threshold())).toBe(false);
        const more = simulateTubes(truth, doses, 0.05, r0, 'N');
        const after = updateModel(base, [d], d.id, stat, [...tubes, ...more], { samples: 400, seed: 3 });
        const p = after.posterior;
        const { from, to } = r.grid.clamp;
        const logs = p.particles.map((q) => Math.log10(Math.min(to, Math.max(from, q.pred.threshold()))));
        const mean = logs.reduce((a, v, j) => a + p.weights[j]! * v, 0);
        realised += logs.reduce((a, v, j) => a + p.weights[j]! * (v - mean) ** 2, 0) / K;
      }
      return realised;
    };
    const realised = realisedOf(r.designed.doses, rng);
    // the expected value is an average over truths; 160 truths and a different particle set: agreement within a factor
    // 1.3 (measured 1.16; before the honest scoring and leave-one-out, the design scored in-sample on truths among its
    // own particles and the ratio was 1.50)
    expect(realised / r.designed.expectedVariance).toBeGreaterThan(1 / 1.3);
    expect(realised / r.designed.expectedVariance).toBeLessThan(1.3);
  }, 180_000);

  it('scores the designed and the fixed series on the same independent simulations (common random numbers)', () => {
    const r0 = designNext(post.posterior, base, d, stat, { seed: 5 });
    // the design is not worse than the fixed series on the scoring set, which it was not chosen on (10 % for the noise of 200 simulations)
    expect(r0.designed.expectedVariance).toBeLessThanOrEqual(1.1 * r0.fixed!.expectedVariance);
    // a design whose doses are the fixed series' (an explicit grid of just those, all taken) scores exactly as the fixed series:
    // the same truths and the same misreadings serve both
    const fixed = r0.fixed!.doses;
    const r1 = designNext(post.posterior, base, d, stat, { seed: 5, grid: fixed, tubes: fixed.length });
    expect(r1.designed.doses).toEqual(fixed);
    expect(r1.designed.expectedVariance).toBe(r1.fixed!.expectedVariance);
    expect(r1.designed.expectedBandFactor).toBe(r1.fixed!.expectedBandFactor);
    expect(r1.difference).toEqual({ variance: 0, se: 0 });
    // the paired difference's standard error (common random numbers) is below the unpaired one
    expect(r0.difference!.se).toBeGreaterThan(0);
    expect(r0.difference!.se).toBeLessThan(Math.hypot(r0.designed.expectedVarianceSe, r0.fixed!.expectedVarianceSe));
  }, 60_000);

  it('clamps thresholds to the dose range the sheet delivers, so draws past it do not dominate the criterion', () => {
    // a cap at the posterior median: about half the draws do not cross below it
    const cap = post.bands[0]!.posterior.median!;
    const r = designNext(post.posterior, base, d, stat, { tubes: 4, maxDose: cap, seed: 6 });
    expect(r.grid.clamp).toEqual({ from: r.grid.from, to: cap });
    const p = post.posterior;
    const logs = p.particles.map((q) => Math.log10(Math.min(cap, Math.max(r.grid.from, q.pred.threshold()))));
    const mean = logs.reduce((a, v, j) => a + p.weights[j]! * v, 0);
    const v = logs.reduce((a, x, j) => a + p.weights[j]! * (x - mean) ** 2, 0);
    expect(r.current.variance).toBeCloseTo(v, 12);
    // Popoviciu's inequality (T. Popoviciu 1935, from memory; docs/references.md): a variable within [a, b] has variance at most (b − a)²/4
    const bound = Math.log10(cap / r.grid.from) ** 2 / 4;
    expect(r.current.variance).toBeLessThanOrEqual(bound);
    expect(r.designed.expectedVariance).toBeLessThanOrEqual(bound);
    expect(r.designed.expectedVariance).toBeLessThan(r.current.variance);
  }, 60_000);
});
