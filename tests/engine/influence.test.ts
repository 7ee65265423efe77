/**
 * The structural rule of server/engine/influence.ts (docs/model.md §13): which coefficients the tubes' predicted
 * state can depend on. Each verdict is checked against the linear model itself (model.ts: the Jacobian J'(k') of
 * docs/model.md §3, whose eigenvalues decide the state): changing a coefficient the rule calls irrelevant leaves J'
 * unchanged at every wavenumber tried, to round-off; changing one it calls relevant changes it. The mixtures are
 * small hand-built chains (invented numbers: structure, not values, is under test).
 */
import { describe, expect, it } from 'vitest';
import { influence } from '../../server/engine/influence.js';
import { buildModel, jacobian } from '../../server/engine/model.js';
import type { Coupling, Mixture } from '../../server/engine/types.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';

function saturating(fuel: string, maxRate: number, michaelis: number, product: string | null, mobility = 0, productYield?: number): Coupling {
  return { chemical: fuel, activity: { kind: 'saturating', maxRate, michaelis, product, ...(productYield !== undefined ? { productYield } : {}) }, mobility };
}

/**
 * glucose → h2o2 (glucose oxidase beads, glucose present), h2o2 → o2 (catalase, yield ½), lactate → pyruvate
 * (a second enzyme, lactate present); the particles move in h2o2 only and make o2. h2o2 and o2 start absent.
 */
function chain(glucose = 50, h2o2 = 0): Mixture {
  return mixture(
    [chemical('glucose', 0.67e-9, 0, glucose), chemical('h2o2', 1.4e-9, 0, h2o2), chemical('o2', 2e-9, 0, 0), chemical('lactate', 1e-9, 0, 10), chemical('pyruvate', 1e-9, 0, 0), chemical('urea', 1.4e-9, 0, 0)],
    [
      species('gox-beads', 0.2e-12, 1e12, [saturating('glucose', 4e-15, 30, 'h2o2')]),
      species('catalase', 60e-12, 1e15, [saturating('h2o2', 3.3e-19, 80, 'o2', 0, 0.5)]),
      species('ldh', 60e-12, 1e15, [saturating('lactate', 1e-19, 5, 'pyruvate')]),
      species('janus', 0.22e-12, 1e13, [{ chemical: 'h2o2', activity: null, mobility: -4e-11 }, constant('o2', 1e-16, 0)]),
    ],
    'sealed',
    2e-3,
  );
}

const KS = [0.3, 1, 3, 10];

/** J'(k') at a few wavenumbers (sealed chamber: ℓ and τ do not depend on the chemicals, so J' is comparable). */
function jacobians(mix: Mixture): Float64Array[] {
  const model = buildModel(mix);
  return KS.map((k) => jacobian(model, k));
}

/** Largest relative change of any entry of J' between two mixtures (entries relative to the largest of each J'). */
function change(a: Mixture, b: Mixture): number {
  const ja = jacobians(a);
  const jb = jacobians(b);
  let worst = 0;
  ja.forEach((x, i) => {
    const y = jb[i]!;
    const scale = Math.max(...Array.from(x, Math.abs), ...Array.from(y, Math.abs));
    for (let j = 0; j < x.length; j++) worst = Math.max(worst, Math.abs(x[j]! - y[j]!) / scale);
  });
  return worst;
}

const edit = (mix: Mixture, f: (m: Mixture) => void): Mixture => {
  const m = structuredClone(mix);
  f(m);
  return m;
};

describe('which chemicals the predicted state depends on', () => {
  it('a chain glucose → h2o2 with a species moving in h2o2: glucose matters; o2, made but moved in by nobody, does not', () => {
    const mix = chain();
    const inf = influence(mix);
    expect([...inf.matters].sort()).toEqual(['glucose', 'h2o2']);
    expect(inf.reason({ owner: 'chemical', id: 'glucose', field: 'diffusivity', chemical: null })).toBeNull();
    expect(inf.reason({ owner: 'species', id: 'gox-beads', field: 'maxRate', chemical: 'glucose' })).toBeNull();
    expect(inf.reason({ owner: 'species', id: 'janus', field: 'mobility', chemical: 'h2o2' })).toBeNull();
    expect(inf.reason({ owner: 'chemical', id: 'o2', field: 'diffusivity', chemical: null })).toMatch(/no species in the tubes moves in o2: the particles feel chemicals only through their mobilities/);
    expect(inf.reason({ owner: 'species', id: 'janus', field: 'rate', chemical: 'o2' })).toMatch(/moves in o2/);
    // lactate is a fuel (the model keeps its field), but its product moves nobody
    expect(inf.reason({ owner: 'chemical', id: 'lactate', field: 'diffusivity', chemical: null })).toMatch(/no species in the tubes moves in lactate, nor in a chemical it is turned into/);
    expect(inf.reason({ owner: 'species', id: 'ldh', field: 'maxRate', chemical: 'lactate' })).not.toBeNull();
    expect(inf.reason({ owner: 'chemical', id: 'urea', field: 'diffusivity', chemical: null })).toMatch(/no species in the tubes couples to urea.*not in the tubes' mixture/);
    // never in the state: solubility, material density
    expect(inf.reason({ owner: 'chemical', id: 'h2o2', field: 'solubility', chemical: null })).toMatch(/practical checks/);
    expect(inf.reason({ owner: 'species', id: 'janus', field: 'materialDensity', chemical: null })).toMatch(/settling check/);
    // species' own diffusivity, density, radius stay in
    expect(inf.reason({ owner: 'species', id: 'janus', field: 'diffusivity', chemical: null })).toBeNull();
  });

  it('the verdicts agree with the model: J′ moves with what matters and not with the rest', () => {
    const mix = chain();
    const chem = (id: string) => (m: Mixture) => m.chemicals.find((c) => c.id === id)!;
    const sp = (id: string) => (m: Mixture) => m.species.find((s) => s.id === id)!;
    // relevant: each changes J' visibly
    expect(change(mix, edit(mix, (m) => (chem('glucose')(m).diffusivity *= 2)))).toBeGreaterThan(1e-6);
    expect(change(mix, edit(mix, (m) => (chem('h2o2')(m).diffusivity *= 2)))).toBeGreaterThan(1e-6);
    expect(change(mix, edit(mix, (m) => ((sp('gox-beads')(m).couplings[0]!.activity as { maxRate: number }).maxRate *= 2)))).toBeGreaterThan(1e-6);
    expect(change(mix, edit(mix, (m) => ((sp('catalase')(m).couplings[0]!.activity as { michaelis: number }).michaelis *= 2)))).toBeGreaterThan(1e-6);
    // irrelevant: J' is unchanged to round-off
    expect(change(mix, edit(mix, (m) => (chem('o2')(m).diffusivity *= 2)))).toBeLessThan(1e-12);
    expect(change(mix, edit(mix, (m) => (chem('o2')(m).lossRate = 0.5)))).toBeLessThan(1e-12);
    expect(change(mix, edit(mix, (m) => ((sp('janus')(m).couplings[1]!.activity as { rate: number }).rate *= 3)))).toBeLessThan(1e-12);
    expect(change(mix, edit(mix, (m) => (chem('lactate')(m).diffusivity *= 2)))).toBeLessThan(1e-12);
    expect(change(mix, edit(mix, (m) => ((sp('ldh')(m).couplings[0]!.activity as { maxRate: number }).maxRate *= 2)))).toBeLessThan(1e-12);
    expect(change(mix, edit(mix, (m) => (chem('urea')(m).diffusivity *= 2)))).toBeLessThan(1e-12);
  });

  it('a mobility to a chemical absent and made by nothing is out, with the chemical and its fuel', () => {
    // no glucose: the oxidase makes no h2o2; h2o2 absent, nobody else makes it; catalase and janus do not act on it
    const mix = edit(chain(0, 0), (m) => (m.species.find((s) => s.id === 'janus')!.couplings = [{ chemical: 'h2o2', activity: null, mobility: -4e-11 }]));
    const inf = influence(mix);
    expect(inf.matters.size).toBe(0);
    expect(inf.reason({ owner: 'species', id: 'janus', field: 'mobility', chemical: 'h2o2' })).toMatch(/h2o2 is absent from the tubes and nothing in them makes it/);
    expect(inf.reason({ owner: 'chemical', id: 'glucose', field: 'diffusivity', chemical: null })).toMatch(/glucose is absent/);
    const janus = (m: Mixture) => m.species.find((s) => s.id === 'janus')!.couplings[0]!;
    expect(change(mix, edit(mix, (m) => (janus(m).mobility *= 3)))).toBeLessThan(1e-12);
    expect(change(mix, edit(mix, (m) => (m.chemicals[0]!.diffusivity *= 2)))).toBeLessThan(1e-12);
    // with glucose given, the same mobility matters (the chain makes h2o2) and moves J'
    const fed = chain(50, 0);
    fed.species.find((s) => s.id === 'janus')!.couplings = [{ chemical: 'h2o2', activity: null, mobility: -4e-11 }];
    expect(influence(fed).reason({ owner: 'species', id: 'janus', field: 'mobility', chemical: 'h2o2' })).toBeNull();
    expect(change(fed, edit(fed, (m) => (janus(m).mobility *= 3)))).toBeGreaterThan(1e-6);
  });
});
