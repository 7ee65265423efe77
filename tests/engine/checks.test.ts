/**
 * Practical checks (docs/model.md §8) and crowding (§3).
 *
 * Sources (docs/references.md): gravitational height h = k_B T/(Δρ V g) is the
 * barometric length of a sedimenting Brownian particle (textbook); Stokes drag
 * v = (2/9) Δρ g a²/η (Stokes 1851, textbook); k_B exact
 * (SI 2019); standard gravity 9.80665 m s⁻² by definition (3rd CGPM, 1901).
 * Hard-sphere second virial coefficient B₂ = 2πσ³/3 with σ the contact
 * distance (Hansen & McDonald, *Theory of Simple Liquids*).
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { practicalChecks } from '../../server/engine/checks.js';
import { buildModel, secondVirial } from '../../server/engine/model.js';
import type { Mixture } from '../../server/engine/types.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

describe('sedimentation', () => {
  it('a 1 µm-radius silica-like sphere (Δρ = 1000 kg/m³, 25 °C): Stokes speed, crossing time, lengths', () => {
    const m = mixture([], [{ ...species('si', 0.245e-12, 1e14, []), materialDensity: 1997.05 }], 'sealed');
    m.chamber.depth = 1e-4;
    const { checks, warnings } = practicalChecks(m, null, null);
    const sed = checks.sedimentation[0]!;
    const V = (4 / 3) * Math.PI * 1e-18;
    // h = k_B T/(Δρ V g), derived by hand from the constants above: ≈ 1.0021e-7 m
    const h = (1.380649e-23 * 298.15) / (1000 * V * 9.80665);
    expect(rel(sed.gravitationalHeight, h)).toBeLessThan(1e-12);
    expect(h).toBeCloseTo(1.0021e-7, 10);
    // Stokes (1851): v = (2/9) Δρ g a²/η with η = 0.8900 mPa·s at 25 °C (IAPWS 2008 via the CRC
    // Handbook, from memory): (2/9)·1000·9.80665·1e-12/0.89e-3 = 2.4486e-6 m/s by hand
    expect(sed.viscosity).toBeCloseTo(0.89e-3, 12);
    expect(sed.viscositySource).toBe('water-at-temperature');
    expect(sed.speed).toBeCloseTo(2.4486e-6, 9);
    // 100 µm / 2.4486 µm/s = 40.84 s
    expect(sed.timeToCrossDepth!).toBeCloseTo(40.84, 1);
    // ℓ = D/v = 0.245e-12/2.4486e-6 = 1.0006e-7 m (D here is 0.2 % below Stokes–Einstein's 0.2454 µm²/s)
    expect(sed.sedimentationLength).toBeCloseTo(1.0006e-7, 10);
    expect(warnings.map((w) => w.code)).toEqual(['sedimentation']);
    expect(warnings[0]!.message).toMatch(/2\.45 µm\/s/);
  });

  it('a particle lighter than the solvent rises; one matched to it is not reported', () => {
    const m = mixture([], [{ ...species('oil', 1e-12, 1e14, []), materialDensity: 900 }, { ...species('match', 1e-12, 1e14, []), materialDensity: 997.05 }], 'sealed');
    const { checks } = practicalChecks(m, null, null);
    expect(checks.sedimentation.map((s) => [s.species, s.direction])).toEqual([['oil', 'rises']]);
  });

  it('a given solvent viscosity is used; outside the water table without one, the check says it was not done', () => {
    const m = mixture([], [{ ...species('si', 0.245e-12, 1e14, []), materialDensity: 1997.05 }], 'sealed');
    m.conditions.solventViscosity = 2 * 0.89e-3;
    const sed = practicalChecks(m, null, null).checks.sedimentation[0]!;
    // v ∝ 1/η: half the 2.4486e-6 m/s of water at 25 °C
    expect(sed.speed).toBeCloseTo(1.2243e-6, 9);
    expect(sed.viscositySource).toBe('given');
    const hot = mixture([], [{ ...species('si', 0.245e-12, 1e14, []), materialDensity: 1997.05 }], 'sealed');
    hot.conditions.temperature = 400;
    const r = practicalChecks(hot, null, null);
    expect(r.checks.sedimentation).toEqual([]);
    expect(r.warnings.find((w) => w.code === 'sedimentation-not-checked')).toMatchObject({ species: ['si'] });
    const bad = mixture([], [species('si', 0.245e-12, 1e14, [])], 'sealed');
    bad.conditions.solventViscosity = -1e-3;
    expect(() => analyze(bad)).toThrow(/conditions\.solventViscosity: must be a finite positive number/);
  });
});

describe('fuel life and gas', () => {
  const withGas = (rho: number): Mixture => {
    const m = mixture(
      [chemical('h2o2', 1.4e-9, 0, 100), { ...chemical('o2', 2e-9, 0, 0.26), solubility: 1.3 }],
      [species('pt', 0.2e-12, rho, [constant('h2o2', -2e-16, 5e-11), constant('o2', 1e-16, 0)])],
      'sealed',
    );
    return m;
  };

  it('fuel life is c⁰/|Σ α ρ| and warns within three growth times', () => {
    const rho = 1e15;
    const { checks, warnings } = practicalChecks(withGas(rho), 1000, null);
    expect(rel(checks.fuel[0]!.lifetime, 100 / (2e-16 * rho))).toBeLessThan(1e-12);
    expect(checks.fuel[0]!.lifetime).toBeCloseTo(500, 9);
    expect(warnings.find((w) => w.code === 'fuel-runs-out')).toMatchObject({ chemical: 'h2o2', lifetime: checks.fuel[0]!.lifetime });
    expect(practicalChecks(withGas(rho), 100, null).warnings.some((w) => w.code === 'fuel-runs-out')).toBe(false);
  });

  it('a produced gas passes its solubility after (c_sat − c⁰)/production', () => {
    const rho = 1e14;
    const { checks, warnings } = practicalChecks(withGas(rho), null, null);
    const t = (1.3 - 0.26) / (1e-16 * rho);
    expect(rel(checks.gas[0]!.timeToSaturation, t)).toBeLessThan(1e-12);
    expect(t).toBeLessThan(3600);
    const w = warnings.find((x) => x.code === 'gas-exceeds-solubility')!;
    expect(w.message).toMatch(/sealed chamber the gas also builds pressure/);
    expect(practicalChecks(withGas(1e10), null, null).warnings.some((x) => x.code === 'gas-exceeds-solubility')).toBe(false);
  });
});

describe('crowding', () => {
  it('B_mn = (2π/3)(a_m + a_n)³ is the hard-sphere B₂ = 2πσ³/3 with σ = a_m + a_n', () => {
    expect(secondVirial(1e-6, 1e-6)).toBeCloseTo((2 * Math.PI * 8e-18) / 3, 30);
    expect(rel(secondVirial(1e-6, 3e-6), (2 * Math.PI * 64e-18) / 3)).toBeLessThan(1e-15);
  });

  it('builds D_mn = D_m(δ_mn + 2ρ_m B_mn) and, being repulsive, raises the threshold', () => {
    const sp = [species('a', 0.2e-12, 1e16, [constant('c', -1e-17, 2e-11)], 1e-6), species('b', 0.5e-12, 5e15, [], 0.5e-6)];
    const off = mixture([chemical('c', 1.4e-9)], sp, 'sealed', 2e-3, false);
    const on: Mixture = { ...off, crowding: true };
    const model = buildModel(on);
    const scale = model.timeUnit / model.lengthUnit ** 2;
    const expected = 0.2e-12 * 2 * 1e16 * secondVirial(1e-6, 0.5e-6) * scale;
    expect(rel(model.diffusion[1]!, expected)).toBeLessThan(1e-12);
    expect(rel(model.diffusion[0]!, 0.2e-12 * (1 + 2 * 1e16 * secondVirial(1e-6, 1e-6)) * scale)).toBeLessThan(1e-12);
    expect(analyze(on).growthRate).toBeLessThan(analyze(off).growthRate);
  });

  it('warns when a dense suspension is analysed without crowding', () => {
    const dense = mixture([chemical('c', 1.4e-9)], [species('a', 0.2e-12, 0.15 / ((4 / 3) * Math.PI * 1e-18), [constant('c', -1e-19, 1e-12)])], 'sealed');
    expect(analyze(dense).warnings.map((w) => w.code)).toContain('dense-suspension');
  });
});

describe('model reduction', () => {
  it('a chemical no species responds to changes nothing in the spectrum, but still counts in the checks', () => {
    const base = mixture([chemical('h2o2', 1.4e-9, 0, 200)], [species('pt', 0.22e-12, 1e15, [constant('h2o2', -2e-16, 5e-11)])], 'sealed');
    const withGas: Mixture = {
      ...base,
      chemicals: [...base.chemicals, { ...chemical('o2', 2e-9, 0, 0.26), solubility: 1.3 }],
      species: [{ ...base.species[0]!, couplings: [...base.species[0]!.couplings, constant('o2', 1e-16, 0)] }],
    };
    const a = analyze(base);
    const b = analyze(withGas);
    expect(b.growthRate).toBe(a.growthRate);
    expect(b.criteria.structure).toBe('rank-one');
    expect(b.criteria.stationary).toEqual(a.criteria.stationary);
    expect(b.checks.gas.map((g) => g.chemical)).toEqual(['o2']);
    expect(a.checks.gas).toEqual([]);
  });
});
