/**
 * The cases of the model-update tests and the design benchmark: a calm base of weakly self-attracting
 * colloids in a sealed 2 mm chamber and a self-attracting dopant (one chemical, rank one: the
 * closed-form stationary dose of docs/model.md §6 decides every draw), with invented standard
 * uncertainties on the shelf's coefficients; a simulated bench that records each tube's true state,
 * misread with probability ε.
 */
import type { State } from '../../server/engine/analyze.js';
import type { Random } from '../../server/engine/random.js';
import type { Mixture, Species } from '../../server/engine/types.js';
import type { Predictor, Tube } from '../../server/engine/update.js';
import { chemical, constant, mixture, species } from './mixtures.js';

/** The base: Σ αμρ/D = −1.8e-3 1/s against D_c k₁² = 3.45e-3 1/s, with 10 % uncertainties. */
export function calmBase(): Mixture {
  const base = mixture([chemical('h2o2', 1.4e-9, 0, 200)], [species('calm', 0.22e-12, 1e12, [constant('h2o2', -2e-17, 2e-11)])], 'sealed', 2e-3);
  base.chemicals[0]!.sd = { diffusivity: 0.1 * 1.4e-9 };
  base.species[0]!.sd = { density: 0.1e12 };
  base.species[0]!.couplings[0]!.sd = { rate: 0.1 * 2e-17, mobility: 0.1 * 2e-11 };
  return base;
}

/** The dopant: α = −2e-16 mol/s, μ = 5e-11 m⁵/(mol s), each with a relative sd `rel` (default 35 %), D with 10 %. */
export function tipper(rel = 0.35, id = 'tipper'): Species {
  const d = species(id, 0.22e-12, 0, [constant('h2o2', -2e-16, 5e-11)]);
  d.sd = { diffusivity: 0.1 * 0.22e-12 };
  d.couplings[0]!.sd = { rate: rel * 2e-16, mobility: rel * 5e-11 };
  return d;
}

/** What a bench with misreading rate ε records at each dose, for the true draw `truth`. */
export function simulateTubes(truth: Predictor, doses: number[], eps: number, rng: Random, prefix = 'T'): Tube[] {
  return doses.map((x, i) => {
    const s = truth.state(x);
    const v = rng.uniform();
    const others = (['stable', 'stationary', 'oscillatory'] as State[]).filter((k) => k !== s);
    return { tube: `${prefix}${i + 1}`, dose: x, state: v < 1 - eps ? s : others[v < 1 - eps / 2 ? 0 : 1]! };
  });
}
