/**
 * Gas from a saturating turnover, with its stoichiometric yield (docs/model.md
 * §3 and §8, docs/references.md).
 *
 * Sources:
 * - Catalase: 2 H₂O₂ → 2 H₂O + O₂, so one O₂ per two H₂O₂ turned over (yield 0.5)
 *   (reaction stoichiometry, textbook).
 * - Michaelis–Menten turnover V c/(K_m + c) and its slope V K_m/(K_m + c)² (textbook).
 * - O₂ solubility in water at 25 °C under 1 atm of O₂ ≈ 1.3 mmol/L (Henry's law
 *   tables, from memory). The starting 0.26 mM (about air-saturated) is an input.
 * - N_A = 6.02214076e23 mol⁻¹ exact (SI 2019, CODATA).
 * Every expected number below is worked out by hand beside its check.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { practicalChecks } from '../../server/engine/checks.js';
import { linearise } from '../../server/engine/model.js';
import type { Coupling, Mixture } from '../../server/engine/types.js';
import type { App } from '../../server/http/app.js';
import type { Sheet } from '../../server/protocol/sheet.js';
import { MixtureFileError, parseMixture } from '../../server/schema/mixture.js';
import { freshApp } from '../helpers/app.js';
import { chemical, mixture, rel, species } from '../helpers/mixtures.js';
import { postPlan } from '../helpers/plans.js';

const O2_SOLUBILITY = 1.3; // mol/m³ = mM, Henry's law, 25 °C, 1 atm O₂ (from memory)

function catalaseLike(productYield: number | undefined): Mixture {
  const coupling: Coupling = {
    chemical: 'h2o2',
    activity: { kind: 'saturating', maxRate: 3.3e-19, michaelis: 80, product: 'o2', ...(productYield !== undefined ? { productYield } : {}) },
    mobility: 0,
  };
  return mixture([chemical('h2o2', 1.4e-9, 0, 100), { ...chemical('o2', 2e-9, 0, 0.26), solubility: O2_SOLUBILITY }], [species('cat', 41e-12, 1e18, [coupling], 5.2e-9)], 'sealed');
}

describe('a catalase-like turnover (V = 3.3e-19 mol/s, K_m = 80 mM, 100 mM peroxide, ρ = 1e18 m⁻³)', () => {
  // Turnover per enzyme r = 3.3e-19·100/180 = 1.8333e-19 mol/s; peroxide used ρ r = 0.18333 mM/s.
  it('O₂ is made at half the peroxide turnover: 0.091667 mM/s, solubility passed after (1.3 − 0.26)/0.091667 = 11.345 s', () => {
    const { checks } = practicalChecks(catalaseLike(0.5), null, null);
    const gas = checks.gas.find((g) => g.chemical === 'o2')!;
    expect(gas.productionRate).toBeCloseTo(0.091667, 6);
    expect(gas.timeToSaturation).toBeCloseTo(11.345, 3);
    // the fuel side does not depend on the yield: 100/0.18333 = 545.45 s
    expect(checks.fuel[0]!.lifetime).toBeCloseTo(545.45, 2);
  });

  it('with yield 1 (the old assumption) the gas comes twice as fast: 5.6727 s', () => {
    const one = practicalChecks(catalaseLike(1), null, null).checks.gas[0]!;
    expect(one.timeToSaturation).toBeCloseTo(5.6727, 3);
    // and no yield given means 1
    expect(practicalChecks(catalaseLike(undefined), null, null).checks.gas[0]!.timeToSaturation).toBe(one.timeToSaturation);
  });

  it('the linearisation carries the yield too: R_pf = −y ρ V K/(K + c)² = −0.5 · 8.1481e-4 s⁻¹', () => {
    const { alpha, reaction } = linearise(catalaseLike(0.5));
    // S = 2 (h2o2, o2): R is row-major [ff, fp; pf, pp]
    expect(reaction[0]!).toBeCloseTo(8.1481e-4, 8);
    expect(reaction[2]!).toBeCloseTo(-4.0741e-4, 8);
    expect(reaction[1]!).toBe(0);
    // α per particle at c⁰: −r for the fuel, +y r for the product
    expect(rel(alpha[0]!, -1.8333e-19)).toBeLessThan(1e-4);
    expect(rel(alpha[1]!, 0.5 * 1.8333e-19)).toBeLessThan(1e-4);
  });
});

describe('the mixture file', () => {
  const doc = (activity: Record<string, unknown>) => ({
    chemicals: [
      { id: 'h2o2', diffusivity: '1.4e-9 m^2/s', concentration: '100 mM' },
      { id: 'o2', diffusivity: '2e-9 m^2/s', concentration: '0.26 mM', solubility: '1.3 mM' },
    ],
    species: [{ id: 'cat', diffusivity: '41 um^2/s', radius: '5.2 nm', density: 1e18, couplings: [{ chemical: 'h2o2', activity }] }],
    chamber: { walls: 'sealed', length: '1 mm' },
  });
  const sat = { maxRate: '3.3e-19 mol/s', michaelis: '80 mM', product: 'o2' };

  it('reads productYield and gives the hand-computed gas time', () => {
    const m = parseMixture(doc({ ...sat, productYield: 0.5 }));
    expect(m.species[0]!.couplings[0]!.activity).toMatchObject({ kind: 'saturating', product: 'o2', productYield: 0.5 });
    expect(practicalChecks(m, null, null).checks.gas[0]!.timeToSaturation).toBeCloseTo(11.345, 3);
  });

  it('refuses a yield without a product, and a yield that is not positive', () => {
    const problems = (a: Record<string, unknown>) => {
      try {
        parseMixture(doc(a));
        return [];
      } catch (e) {
        if (!(e instanceof MixtureFileError)) throw e;
        return e.problems;
      }
    };
    expect(problems({ maxRate: '3.3e-19 mol/s', michaelis: '80 mM', productYield: 0.5 })).toEqual(['species[0].couplings[0].activity.productYield: a yield needs a product (give activity.product)']);
    expect(problems({ ...sat, productYield: 0 })[0]).toMatch(/^species\[0\]\.couplings\[0\]\.activity\.productYield: /);
  });
});

describe('the demo shelf catalase (1 nM, 200 mM peroxide) through the service', () => {
  let app: App;
  beforeAll(async () => {
    app = await freshApp({ demo: true });
  });
  afterAll(async () => {
    await app.close();
  });

  it('makes O₂ at 0.5 × the turnover: ρ = 1e-6 mol/m³ · N_A, 0.5 ρ V c/(K + c) = 0.070975 mM/s, 14.653 s to 1.3 mM', async () => {
    const rec = (await app.inject({ method: 'GET', url: '/api/species/catalase-e3' })).json();
    expect(rec.typed.notes).not.toMatch(/not tracked/);
    const r = await app.inject({
      method: 'POST',
      url: '/api/analyze',
      payload: { species: [{ id: 'catalase-e3', molarConcentration: '1 nM' }], chemicals: { h2o2: '200 mM', o2: '0.26 mM' }, chamber: { walls: 'sealed', length: '2 mm' } },
    });
    expect(r.statusCode).toBe(200);
    const gas = r.json().checks.gas.find((g: { chemical: string }) => g.chemical === 'o2');
    expect(gas.productionRate).toBeCloseTo(0.070975, 5);
    expect(gas.timeToSaturation).toBeCloseTo(14.653, 2);
  });

  it('the bench sheet reports the gas with the yield: raising it to 1 adds exactly the other half, 0.070975 mM/s', async () => {
    const plan = {
      name: 'catalase in the base',
      base: [
        { id: 'ptj-1um-b09', volumeFraction: '0.1 percent' },
        { id: 'catalase-e3', molarConcentration: '1 nM' },
      ],
      chemicals: { h2o2: '200 mM', o2: '0.26 mM' },
      chamber: { walls: 'sealed', length: '2 mm', depth: '100 um' },
      boundary: 'stationary',
      candidates: ['ptj-1um-b07'],
    };
    const sheetOf = async () => {
      const p = await postPlan(app, plan);
      expect(p.statusCode).toBe(201);
      return (await app.inject({ method: 'GET', url: `/api/plans/${p.json().id}/sheet?format=json` })).json() as Sheet;
    };
    const half = await sheetOf();
    expect(half.imaging.gasSaturation).toMatchObject({ chemical: 'o2', solubility: { value: 1.3, unit: 'mM' } });
    const cur = (await app.inject({ method: 'GET', url: '/api/species/catalase-e3' })).json();
    const typed = structuredClone(cur.typed);
    typed.couplings[0].activity.productYield = 1;
    const put = await app.inject({ method: 'PUT', url: '/api/species/catalase-e3', payload: { baseRevision: cur.revision, record: typed } });
    expect(put.statusCode).toBe(200);
    const full = await sheetOf();
    const extra = full.imaging.gasSaturation!.productionRate.value - half.imaging.gasSaturation!.productionRate.value;
    expect(extra).toBeCloseTo(0.070975, 3);
    expect(full.imaging.gasSaturation!.time.value).toBeLessThan(half.imaging.gasSaturation!.time.value);
  });
});

describe('a constant activity whose fuel is absent (docs/model.md §8)', () => {
  // Two constant producers of O₂: "pt" consumes h2o2 (given at 0: absent) at 2e-18 mol/s and makes O₂ at
  // 1e-18 mol/s (one O₂ per two H₂O₂, reaction stoichiometry); "fed" consumes glucose (present, 50 mM)
  // and makes O₂ at 1e-19 mol/s. Densities 1e16 and 1e17 m⁻³.
  // By hand: pt's O₂ 1e-18·1e16 = 0.01 mol m⁻³ s⁻¹; fed's 1e-19·1e17 = 0.01; total 0.02.
  // Model time (1.3 − 0.26)/0.02 = 52 s; expected (pt starved) (1.3 − 0.26)/0.01 = 104 s.
  const pt = species('pt', 1e-12, 1e16, [
    { chemical: 'h2o2', activity: { kind: 'constant', rate: -2e-18 }, mobility: 0 },
    { chemical: 'o2', activity: { kind: 'constant', rate: 1e-18 }, mobility: 0 },
  ]);
  const fed = species('fed', 1e-12, 1e17, [
    { chemical: 'glucose', activity: { kind: 'constant', rate: -1e-19 }, mobility: 0 },
    { chemical: 'o2', activity: { kind: 'constant', rate: 1e-19 }, mobility: 0 },
  ]);
  const chems = (h2o2: number) => [chemical('h2o2', 1.4e-9, 0, h2o2), chemical('glucose', 6e-10, 0, 50), { ...chemical('o2', 2e-9, 0, 0.26), solubility: O2_SOLUBILITY }];

  it('alone, it makes no gas: fuelAbsent, no expected time, no bubbles warning', () => {
    const { checks, warnings } = practicalChecks(mixture(chems(0), [pt], 'sealed'), null, null);
    const g = checks.gas.find((x) => x.chemical === 'o2')!;
    // the model's constant activity still says 0.01 mol m⁻³ s⁻¹ and (1.3 − 0.26)/0.01 = 104 s
    expect(g.productionRate).toBeCloseTo(0.01, 12);
    expect(g.timeToSaturation).toBeCloseTo(104, 9);
    expect(g).toMatchObject({ fuelAbsent: true, absentFuels: ['h2o2'], expectedProductionRate: 0, expectedTimeToSaturation: null });
    const codes = warnings.map((w) => w.code);
    expect(codes).toContain('fuel-runs-out');
    expect(codes).toContain('gas-needs-absent-fuel');
    expect(codes).not.toContain('gas-exceeds-solubility');
    expect(warnings.find((w) => w.code === 'gas-needs-absent-fuel')!.message).toMatch(/only while its fuel lasts: h2o2 is absent, so no o2 is expected/);
  });

  it('with the fuel given, the same species passes the solubility after 104 s and is warned as before', () => {
    const { checks, warnings } = practicalChecks(mixture(chems(100), [pt], 'sealed'), null, null);
    const g = checks.gas.find((x) => x.chemical === 'o2')!;
    expect(g).toMatchObject({ fuelAbsent: false, absentFuels: [] });
    expect(g.expectedTimeToSaturation!).toBeCloseTo(104, 9);
    expect(warnings.map((w) => w.code)).toContain('gas-exceeds-solubility');
    expect(warnings.map((w) => w.code)).not.toContain('gas-needs-absent-fuel');
  });

  it('beside a fed producer, only the fed share is expected: 0.01 of 0.02 mol m⁻³ s⁻¹, 104 s instead of 52 s', () => {
    const { checks, warnings } = practicalChecks(mixture(chems(0), [pt, fed], 'sealed'), null, null);
    const g = checks.gas.find((x) => x.chemical === 'o2')!;
    expect(g.productionRate).toBeCloseTo(0.02, 12);
    expect(g.timeToSaturation).toBeCloseTo(52, 9);
    expect(g.fuelAbsent).toBe(true);
    expect(g.expectedProductionRate).toBeCloseTo(0.01, 12);
    expect(g.expectedTimeToSaturation!).toBeCloseTo(104, 9);
    // 104 s is within the 1 h horizon: the bubbles warning gives the expected time (104/60 = 1.73 min), not 52 s
    const w = warnings.find((x) => x.code === 'gas-exceeds-solubility')!;
    expect(w.timeToSaturation).toBeCloseTo(104, 9);
    expect(w.message).toMatch(/after about 1\.73 min/);
  });
});

describe('a saturating consumer of an absent fuel that makes its gas by a constant activity', () => {
  // "beads" turn h2o2 over with saturating kinetics (V = 2e-18 mol/s, K = 80 mM; h2o2 given at 0, so their
  // turnover V c/(K + c) is 0) and make O₂ by a constant 1e-18 mol/s at 1e16 m⁻³: the model's constant term
  // says 1e-18 · 1e16 = 0.01 mol m⁻³ s⁻¹ and (1.3 − 0.26)/0.01 = 104 s, but it cannot run without the fuel.
  const beads = species('beads', 1e-12, 1e16, [
    { chemical: 'h2o2', activity: { kind: 'saturating', maxRate: 2e-18, michaelis: 80, product: null, productYield: 1 }, mobility: 0 },
    { chemical: 'o2', activity: { kind: 'constant', rate: 1e-18 }, mobility: 0 },
  ] as Coupling[]);
  const chems = [chemical('h2o2', 1.4e-9, 0, 0), { ...chemical('o2', 2e-9, 0, 0.26), solubility: O2_SOLUBILITY }];
  it('no gas is expected, and no bubbles warning is given', () => {
    const { checks, warnings } = practicalChecks(mixture(chems, [beads], 'sealed'), null, null);
    const g = checks.gas.find((x) => x.chemical === 'o2')!;
    expect(g.productionRate).toBeCloseTo(0.01, 12);
    expect(g).toMatchObject({ fuelAbsent: true, absentFuels: ['h2o2'], expectedProductionRate: 0, expectedTimeToSaturation: null });
    expect(warnings.map((w) => w.code)).not.toContain('gas-exceeds-solubility');
    expect(warnings.map((w) => w.code)).toContain('gas-needs-absent-fuel');
  });
});
