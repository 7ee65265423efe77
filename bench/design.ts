/**
 * The `design` workload of `npm run bench`: the next-experiment design (engine/design.ts) against the
 * default fixed series (planner.ts DEFAULT_DOSE_FACTORS × the current median, with the 5 % and 95 % doses)
 * on the same simulated truths. Each truth is a draw of the prior (an invented rank-one case: a calm base of
 * self-attracting colloids and a dopant whose activity and mobility are known to ±35 %); a simulated bench
 * records each tube's true state, misread with probability ε = 0.05. Round after round of n tubes (n = the
 * fixed series' length), the model is updated (engine/update.ts) and the next round is either designed from
 * the posterior or the fixed series around its median, until the 5–95 % band lies within a factor of 1.2 of
 * the true threshold (p05 ≥ threshold / 1.2 and p95 ≤ 1.2 × threshold). The figure: the tubes needed, designed vs fixed.
 */
import { designNext } from '../server/engine/design.js';
import { doseSeries, type DoseOptions } from '../server/engine/planner.js';
import { Random } from '../server/engine/random.js';
import type { State } from '../server/engine/analyze.js';
import type { Mixture, Species } from '../server/engine/types.js';
import { applyDeviates, planDeviates, Predictor, uncertainParameters, updateModel, type Band, type Tube } from '../server/engine/update.js';

function calmCase(): { base: Mixture; d: Species } {
  const base: Mixture = {
    chemicals: [{ id: 'h2o2', diffusivity: 1.4e-9, lossRate: 0, concentration: 200, solubility: null, sd: { diffusivity: 0.14e-9 } }],
    species: [
      { id: 'calm', diffusivity: 0.22e-12, radius: 1e-6, density: 1e12, materialDensity: null, sd: { density: 0.1e12 }, couplings: [{ chemical: 'h2o2', activity: { kind: 'constant', rate: -2e-17 }, mobility: 2e-11, sd: { rate: 0.2e-17, mobility: 0.2e-11 } }] },
    ],
    chamber: { walls: 'sealed', length: 2e-3, depth: null },
    crowding: false,
    conditions: { temperature: 298.15, solventDensity: 997.05, duration: null, fieldOfView: null },
  };
  const d: Species = { id: 'tipper', diffusivity: 0.22e-12, radius: 1e-6, density: 0, materialDensity: null, sd: { diffusivity: 0.022e-12 }, couplings: [{ chemical: 'h2o2', activity: { kind: 'constant', rate: -2e-16 }, mobility: 5e-11, sd: { rate: 0.7e-16, mobility: 1.75e-11 } }] };
  return { base, d };
}

export interface DesignBench {
  truths: number;
  rounds: number;
  tubesPerRound: number;
  designed: { meanTubes: number | null; reached: number; seconds: number; bandFactorByRound: number[] };
  fixed: { meanTubes: number | null; reached: number; seconds: number; bandFactorByRound: number[] };
  /** truths that both strategies brought within the factor: mean tubes over those alone */
  both: { truths: number; designed: number | null; fixed: number | null; designedFewer: number; fixedFewer: number };
}

export function benchDesign(truths: number, log: (s: string) => void, maxRounds = 6, samples = 400, simulations = 200): DesignBench {
  const { base, d } = calmCase();
  const params = uncertainParameters(base, d);
  const o: DoseOptions = { boundary: 'stationary', dosing: 'add' };
  const eps = 0.05;
  const seriesOf = (b: Band) => doseSeries({ threshold: { density: b.median!, volumeFraction: 0, anyDose: false }, band: { ...b } as never }).doses;
  const prior = updateModel(base, [d], d.id, o, [], { samples, seed: 7 }).bands[0]!.prior;
  const n = seriesOf(prior).length;
  const run = (trial: number, mode: 'designed' | 'fixed') => {
    const m = applyDeviates(base, d, planDeviates(params, 4242, trial, d.id));
    const truth = new Predictor(m.base, m.dopant, o);
    const t = truth.threshold();
    const rng = new Random(1000 + trial);
    const tubes: Tube[] = [];
    const factors: number[] = [];
    let r = updateModel(base, [d], d.id, o, tubes, { samples, seed: 7, misclassification: eps });
    for (let round = 1; round <= maxRounds; round++) {
      const b = r.bands[0]!.posterior;
      let doses: number[];
      if (mode === 'fixed') {
        if (b.median === null || !(b.median > 0)) return { tubes: null, factors };
        doses = seriesOf(b);
      } else doses = designNext(r.posterior, base, d, o, { tubes: n, seed: round, simulations }).designed.doses;
      for (const x of doses) {
        const s = truth.state(x);
        const v = rng.uniform();
        const others = (['stable', 'stationary', 'oscillatory'] as State[]).filter((k) => k !== s);
        tubes.push({ tube: `${round}-${tubes.length + 1}`, dose: x, state: v < 1 - eps ? s : others[v < 1 - eps / 2 ? 0 : 1]! });
      }
      r = updateModel(base, [d], d.id, o, tubes, { samples, seed: 7, misclassification: eps });
      const nb = r.bands[0]!.posterior;
      factors.push(nb.p05 !== null && nb.p05 > 0 && nb.p95 !== null ? nb.p95 / nb.p05 : Infinity);
      if (Number.isFinite(t) && nb.p05 !== null && nb.p95 !== null && nb.p05 >= t / 1.2 && nb.p95 <= 1.2 * t) return { tubes: tubes.length, factors };
    }
    return { tubes: null, factors };
  };
  const res = { designed: [] as (number | null)[], fixed: [] as (number | null)[] };
  const fac = { designed: [] as number[][], fixed: [] as number[][] };
  const secs = { designed: 0, fixed: 0 };
  for (let trial = 0; trial < truths; trial++) {
    for (const mode of ['fixed', 'designed'] as const) {
      const t0 = performance.now();
      const out = run(trial, mode);
      secs[mode] += (performance.now() - t0) / 1000;
      res[mode].push(out.tubes);
      fac[mode].push(out.factors);
    }
    log(`design: truth ${trial + 1} of ${truths}: fixed ${res.fixed[trial] ?? '—'} tubes, designed ${res.designed[trial] ?? '—'} tubes`);
  }
  const mean = (xs: number[]) => (xs.length ? xs.reduce((a, b) => a + b, 0) / xs.length : null);
  const summary = (mode: 'designed' | 'fixed') => {
    const reached = res[mode].filter((x): x is number => x !== null);
    // geometric mean of p95/p05 after each round, over the truths still running or finished at that round (last value carried)
    const byRound = Array.from({ length: maxRounds }, (_, k) => {
      const v = fac[mode].map((f) => f[Math.min(k, f.length - 1)]).filter((x): x is number => x !== undefined && Number.isFinite(x));
      return v.length ? Number(Math.pow(10, mean(v.map(Math.log10))!).toPrecision(4)) : NaN;
    });
    return { meanTubes: mean(reached), reached: reached.length, seconds: secs[mode], bandFactorByRound: byRound };
  };
  const bothIdx = res.designed.map((x, i) => (x !== null && res.fixed[i] !== null ? i : -1)).filter((i) => i >= 0);
  return {
    truths,
    rounds: maxRounds,
    tubesPerRound: n,
    designed: summary('designed'),
    fixed: summary('fixed'),
    both: {
      truths: bothIdx.length,
      designed: mean(bothIdx.map((i) => res.designed[i]!)),
      fixed: mean(bothIdx.map((i) => res.fixed[i]!)),
      // paired: the truths (reached by both) on which one strategy needed fewer tubes than the other
      designedFewer: bothIdx.filter((i) => res.designed[i]! < res.fixed[i]!).length,
      fixedFewer: bothIdx.filter((i) => res.fixed[i]! < res.designed[i]!).length,
    },
  };
}
