/**
 * Calibration of the model update (docs/model.md §13) by simulated truth: each trial draws a "true" mixture
 * from the prior (the shelf's uncertainties), lets a simulated bench record the states of the plan's default
 * dose series (planner.ts DEFAULT_DOSE_FACTORS × the current median, with the 5 % and 95 % doses, as
 * doseSeries builds it) with misreadings at rate ε, and updates. Round after round (the next series centred
 * on the updated band), the 90 % posterior band must contain the true threshold in 85–95 % of 200 trials
 * (Bayesian calibration: averaged over truths drawn from the prior, a posterior's 90 % band covers the truth
 * 90 % of the time; e.g. Cook, Gelman & Rubin 2006, J. Comput. Graph. Stat. 15:675), and its median width
 * must shrink with each round. The case is rank one (closed-form thresholds), so 200 × 3 updates run in
 * seconds; the general path is exercised in update.test.ts.
 */
import { describe, expect, it } from 'vitest';
import { doseSeries, type DoseOptions } from '../../server/engine/planner.js';
import { Random } from '../../server/engine/random.js';
import { applyDeviates, planDeviates, Predictor, uncertainParameters, updateModel, type Band, type Tube } from '../../server/engine/update.js';
import { calmBase, simulateTubes, tipper } from '../helpers/update-case.js';

const stat: DoseOptions = { boundary: 'stationary', dosing: 'add' };
/** the default series around the band's median; a median above the cap (a dopant too weak to cross): twice the highest dose so far */
const series = (b: Band, highest: number) => {
  const median = b.median ?? 2 * highest;
  return doseSeries({ threshold: { density: median, volumeFraction: 0, anyDose: false }, band: { ...b, median } as never }).doses;
};

describe('simulated truth: calibration and narrowing over rounds', () => {
  it('covers the true threshold in 85–95 % of 200 trials at each of 3 rounds, narrowing each round', () => {
    const base = calmBase();
    const d = tipper();
    const params = uncertainParameters(base, d);
    const eps = 0.05;
    const N = 300;
    const T = 200;
    const rounds = 3;
    const covered = Array.from({ length: rounds }, () => 0);
    const widths: number[][] = Array.from({ length: rounds }, () => []);
    let flagged = 0;
    let smc = 0;
    for (let trial = 0; trial < T; trial++) {
      const m = applyDeviates(base, d, planDeviates(params, 4242, trial, d.id));
      const truth = new Predictor(m.base, m.dopant, stat);
      const t = truth.threshold();
      const rng = new Random(1000 + trial);
      const tubes: Tube[] = [];
      // the plan's own draws (seed per trial) are the prior sample; round 1 is the plan's series
      let band = updateModel(base, [d], d.id, stat, [], { samples: N, seed: 7 + trial }).bands[0]!.prior;
      for (let r = 0; r < rounds; r++) {
        tubes.push(...simulateTubes(truth, series(band, Math.max(0, ...tubes.map((q) => q.dose))), eps, rng, `R${r + 1}-`));
        const u = updateModel(base, [d], d.id, stat, tubes, { samples: N, seed: 7 + trial, misclassification: eps, moves: 2 });
        band = u.bands[0]!.posterior;
        // a 95 % point above the cap is +∞ (null)
        if (band.p05! <= t && t <= (band.p95 ?? Infinity)) covered[r]!++;
        widths[r]!.push((band.p95 ?? Infinity) / band.p05!);
        if (!u.consistency.consistent) flagged++;
        if (u.method === 'smc') smc++;
      }
    }
    const coverage = covered.map((c) => c / T);
    const median = (w: number[]) => [...w].sort((a, b) => a - b)[Math.floor(w.length / 2)]!;
    const medianWidth = widths.map(median);
    console.log(JSON.stringify({ coverage, medianWidth, flagged: flagged / (T * rounds), smc: smc / (T * rounds) }));
    for (const c of coverage) {
      expect(c).toBeGreaterThanOrEqual(0.85);
      expect(c).toBeLessThanOrEqual(0.95);
    }
    for (let r = 1; r < rounds; r++) expect(medianWidth[r]!).toBeLessThan(medianWidth[r - 1]!);
    // outcomes of the model itself are rarely called inconsistent (three checks at α = 0.01 each)
    expect(flagged / (T * rounds)).toBeLessThan(0.06);
  }, 300_000);

  it('on the general path (replace dosing: no closed form), 6 truths: the 90 % band covers most and is mostly narrower than the prior', () => {
    const base = calmBase();
    const d = tipper();
    const o: DoseOptions = { boundary: 'stationary', dosing: 'replace' };
    const params = uncertainParameters(base, d);
    let covered = 0;
    let narrower = 0;
    const T = 6;
    for (let trial = 0; trial < T; trial++) {
      const m = applyDeviates(base, d, planDeviates(params, 777, trial, d.id));
      const truth = new Predictor(m.base, m.dopant, o);
      const t = truth.threshold();
      const prior = updateModel(base, [d], d.id, o, [], { samples: 60, seed: 20 + trial }).bands[0]!.prior;
      const tubes = simulateTubes(truth, series(prior, 0), 0.05, new Random(50 + trial));
      const u = updateModel(base, [d], d.id, o, tubes, { samples: 60, seed: 20 + trial, maxEvaluations: 600 });
      const b = u.bands[0]!.posterior;
      if (b.p05! <= t && t <= (b.p95 ?? Infinity)) covered++;
      if ((b.p95 ?? Infinity) / b.p05! < (prior.p95 ?? Infinity) / prior.p05!) narrower++;
    }
    console.log(JSON.stringify({ general: { covered, narrower, of: T } }));
    // with 6 trials a 90 % band misses 0–2 times (binomial: P(≥ 3 misses) ≈ 1.6 %)
    expect(covered).toBeGreaterThanOrEqual(4);
    // a band can widen when the truth lies in the prior's tail (the series around the prior median misses it): most narrow
    expect(narrower).toBeGreaterThanOrEqual(4);
  }, 120_000);
});
