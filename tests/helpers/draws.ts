/**
 * The seeded generator of random one-chemical mixtures the simulation tests draw from (in the style of the holdout
 * tests, tests/engine/fast.test.ts): random diffusivities, activities, mobilities and losses over the ranges of
 * bench/run.ts, kept only when analyze() puts them in the wanted state with a fastest mode the grid resolves
 * (index 2–20) and separated from the next-fastest allowed mode by more than 1 % in growth rate.
 */
import { analyze } from '../../server/engine/analyze.js';
import { eigenvaluesAt } from '../../server/engine/probe.js';
import { Random } from '../../server/engine/random.js';
import type { Mixture, Walls } from '../../server/engine/types.js';
import { chemical, constant, mixture, species } from './mixtures.js';

const sign = (rng: Random) => (rng.uniform() < 0.5 ? -1 : 1);

export function draw(rng: Random, M: number, walls: Walls, opposite: boolean, crowding = false): Mixture {
  const L = 10 ** rng.between(-3.7, -3);
  const chem = chemical('c0', 10 ** rng.between(-9.5, -9), 10 ** rng.between(-3, -0.5));
  const s0 = sign(rng);
  const sp = Array.from({ length: M }, (_, m) => {
    const rate = (m === 0 || !opposite ? s0 : -s0) * 10 ** rng.between(-17, -15);
    const mobility = -Math.sign(rate) * (m === 0 || !opposite ? 1 : -1) * 10 ** rng.between(-12, -10);
    return species(`s${m}`, 10 ** rng.between(-13, -11.5), 10 ** rng.between(13.5, 15.5), [constant('c0', rate, mobility)], 0.5e-6);
  });
  return mixture([chem], sp, walls, L, crowding);
}

function separated(mix: Mixture, index: number): boolean {
  const kOf = (n: number) => (mix.chamber.walls === 'sealed' ? (n * Math.PI) / mix.chamber.length! : (2 * n * Math.PI) / mix.chamber.length!);
  const best = eigenvaluesAt(mix, kOf(index))[0]!.re;
  for (const n of [index - 1, index + 1, index + 2]) {
    if (n < 1) continue;
    if (eigenvaluesAt(mix, kOf(n))[0]!.re > best * 0.99) return false;
  }
  return true;
}

/** The first `count` mixtures of the seeded stream in the wanted state (see the header). */
export function find(seed: number, want: 'stationary' | 'oscillatory', M: number, walls: Walls, nearOnset: boolean, count: number, crowding = false): Mixture[] {
  const rng = new Random(seed);
  const out: Mixture[] = [];
  for (let i = 0; i < 200000 && out.length < count; i++) {
    const mix = draw(rng, M, walls, want === 'oscillatory', crowding);
    const a = analyze(mix);
    if (a.state !== want) continue;
    const n = a.fastestMode.index ?? 0;
    if (n < 2 || n > 20) continue;
    if (want === 'oscillatory' && nearOnset && !(a.growthRate * a.fastestMode.oscillationPeriod! < 0.5 * 2 * Math.PI)) continue;
    if (!separated(mix, n)) continue;
    out.push(mix);
  }
  if (out.length < count) throw new Error(`only ${out.length} of ${count} draws found`);
  return out;
}

