/**
 * Convergence of the simulation past onset (issue 15): halving the grid spacing and
 * the error tolerance together must leave the cluster count unchanged and change the
 * final dominant length by less than 1 %, the largest cluster's size by less than
 * 5 % and each species' fraction inside clusters by less than 0.02 (the amounts
 * stated in docs/model.md §16). The coarser run must itself resolve the clusters
 * (no `above-close-packing`: at 512 cells the same case overshoots close packing,
 * 0.66, and would compare an under-resolved run with a barely resolved one). The case: attracted
 * producers with a screened chemical (a peaked growth spectrum, fastest mode n = 4 of
 * a 1 mm periodic chamber) run for 20 growth times, through clustering into close-packed
 * bands held by the volume-filling factor. The starting perturbation is the same smooth
 * random function on both grids (smoothNoise), so both runs start from one state.
 * The reference is the finer run itself (a self-convergence check, as in any
 * grid-refinement study); there is no closed form past onset.
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { simulate } from '../../server/engine/simulate/index.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';

describe('grid and tolerance refinement past onset', () => {
  // two runs of 1,024 and 2,048 cells over 20 growth times: about 15 s on 2 cores
  it('1,024 → 2,048 cells and 2.5e-5 → 1.25e-5 tolerance: same cluster count, dominant length within 1 %', () => {
    const rho = 0.05 / ((4 / 3) * Math.PI * 1e-18); // φ = 0.05 of 1 µm spheres
    const mix = mixture([chemical('c', 1e-9, 0.05)], [species('b', 2e-13, rho, [constant('c', 1e-16, -1e-12)], 1e-6)], 'periodic', 1e-3);
    const a = analyze(mix);
    expect(a.state).toBe('stationary');
    const duration = 20 / a.growthRate;
    const coarse = simulate(mix, { dims: 1, points: 1024, tolerance: 2.5e-5, duration }).summary;
    const fine = simulate(mix, { dims: 1, points: 2048, tolerance: 1.25e-5, duration }).summary;
    expect(coarse.warnings.map((w) => w.code)).not.toContain('above-close-packing');
    const last = (s: typeof coarse) => s.dominantLength[s.dominantLength.length - 1]![1]!;
    console.log({ coarse: [coarse.clusters.count, last(coarse), coarse.clusters.sizes[0], coarse.clusters.composition[0]!.fraction], fine: [fine.clusters.count, last(fine), fine.clusters.sizes[0], fine.clusters.composition[0]!.fraction] });
    expect(fine.clusters.count).toBeGreaterThan(0);
    expect(coarse.clusters.count).toBe(fine.clusters.count);
    expect(Math.abs(last(coarse) - last(fine)) / last(fine)).toBeLessThan(0.01);
    expect(Math.abs(coarse.clusters.sizes[0]! - fine.clusters.sizes[0]!) / fine.clusters.sizes[0]!).toBeLessThan(0.05);
    expect(Math.abs(coarse.clusters.composition[0]!.fraction - fine.clusters.composition[0]!.fraction)).toBeLessThan(0.02);
    expect(fine.conservation.maxRelativeError).toBeLessThan(1e-10);
  }, 120_000);
});
