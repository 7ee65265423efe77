/**
 * Missing data is never "no problem" (docs/model.md §8, §9): a chemical with no
 * concentration, a consumed chemical at 0 (an absent fuel), a species with no
 * material density, a chamber with no depth. Each is said in the analysis
 * itself, by the engine, so every path (CLI, HTTP, plans, sheets) carries it.
 *
 * Expected numbers are hand computations: the net consumption of a constant
 * activity is |α| ρ (docs/model.md §8), e.g. 2e-16 mol/s × 1e14 m⁻³ =
 * 2e-2 mol m⁻³ s⁻¹, and a lifetime is c⁰ over it (200 mol/m³ / 2e-2 = 1e4 s).
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { practicalChecks } from '../../server/engine/checks.js';
import type { Mixture } from '../../server/engine/types.js';
import { parseMixture } from '../../server/schema/mixture.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';

const doc = (concentration?: string, extra: { chamber?: object; species?: object } = {}) => ({
  chemicals: [{ id: 'h2o2', diffusivity: '1.4e-9 m^2/s', ...(concentration !== undefined ? { concentration } : {}) }],
  species: [
    {
      id: 'pt',
      diffusivity: '0.22 um^2/s',
      radius: '1 um',
      density: '1e14 1/m^3',
      materialDensity: '2 g/mL',
      couplings: [{ chemical: 'h2o2', activity: '-2e-16 mol/s', mobility: '50 um^2/(s*mM)' }],
      ...extra.species,
    },
  ],
  chamber: { walls: 'sealed', length: '2 mm', depth: '100 um', ...extra.chamber },
});
const codes = (w: { code: string }[]) => w.map((x) => x.code);

describe('a consumed chemical with no concentration in a mixture file', () => {
  const r = analyze(parseMixture(doc()));

  it('warns no-concentration in the analysis, naming the consumer, in the wording of the shelf path', () => {
    const w = r.warnings.filter((x) => x.code === 'no-concentration');
    expect(w).toHaveLength(1);
    expect(w[0]).toMatchObject({ chemical: 'h2o2' });
    expect(w[0]!.message).toMatch(/^no concentration given for "h2o2": taken as 0\. pt consumes it, so the fuel is absent/);
  });

  it('gives a fuel check entry: absent, lifetime 0, consumption |α|ρ = 2e-2 mol/m³/s (by hand), and fuel-runs-out', () => {
    expect(r.checks.fuel).toEqual([{ chemical: 'h2o2', consumptionRate: expect.any(Number), lifetime: 0, absent: true }]);
    expect(r.checks.fuel[0]!.consumptionRate).toBeCloseTo(2e-2, 15);
    const w = r.warnings.find((x) => x.code === 'fuel-runs-out')!;
    expect(w).toMatchObject({ chemical: 'h2o2', lifetime: 0 });
    expect(w.message).toMatch(/absent \(concentration 0\).*used up at once/);
  });

  it('an explicit 0 is an absent fuel too, but not a missing datum; 200 mM is neither', () => {
    const zero = analyze(parseMixture(doc('0 mM')));
    expect(codes(zero.warnings)).not.toContain('no-concentration');
    expect(zero.checks.fuel[0]).toMatchObject({ lifetime: 0, absent: true });
    expect(codes(zero.warnings)).toContain('fuel-runs-out');
    const given = analyze(parseMixture(doc('200 mM')));
    expect(codes(given.warnings)).not.toContain('no-concentration');
    expect(given.checks.fuel[0]!.absent).toBe(false);
    expect(given.checks.fuel[0]!.lifetime).toBeCloseTo(1e4, 6); // 200 / 2e-2 s, by hand
  });

  it('the engine marks the chemical, so a hand-built engine mixture gets the same warning', () => {
    const m = parseMixture(doc());
    expect(m.chemicals[0]!.concentrationMissing).toBe(true);
    expect(parseMixture(doc('1 mM')).chemicals[0]!.concentrationMissing).toBeUndefined();
  });
});

describe('chemicals that are not consumed, and saturating fuels', () => {
  it('a product with no concentration: no-concentration without the absent-fuel clause, no fuel entry', () => {
    const m: Mixture = mixture(
      [chemical('h2o2', 1.4e-9, 0, 200), { ...chemical('o2', 2e-9, 0, 0), solubility: 1.3, concentrationMissing: true }],
      [species('pt', 0.22e-12, 1e14, [constant('h2o2', -2e-16, 5e-11), constant('o2', 1e-16, 0)])],
      'sealed',
    );
    const { checks, warnings } = practicalChecks(m, null, null);
    const w = warnings.filter((x) => x.code === 'no-concentration');
    expect(w.map((x) => x.message)).toEqual(['no concentration given for "o2": taken as 0.']);
    expect(checks.fuel.map((f) => f.chemical)).toEqual(['h2o2']);
  });

  it('a saturating fuel at 0 turns over nothing (V c/(K + c) = 0) but is still an absent fuel', () => {
    const m: Mixture = mixture(
      [chemical('glc', 0.67e-9, 0, 0)],
      [{ ...species('gox', 0.11e-12, 1e13, []), couplings: [{ chemical: 'glc', activity: { kind: 'saturating', maxRate: 4e-15, michaelis: 30, product: null }, mobility: 0 }] }],
      'sealed',
    );
    const { checks, warnings } = practicalChecks(m, null, null);
    expect(checks.fuel).toEqual([{ chemical: 'glc', consumptionRate: 0, lifetime: 0, absent: true }]);
    expect(codes(warnings)).toContain('fuel-runs-out');
  });

  it('a consumer at density 0 (a candidate not yet dosed) does not make the fuel absent', () => {
    const m = mixture([chemical('h2o2', 1.4e-9, 0, 0)], [species('pt', 0.22e-12, 0, [constant('h2o2', -2e-16, 5e-11)])], 'sealed');
    expect(practicalChecks(m, null, null).checks.fuel).toEqual([]);
  });
});

describe('settling with data missing', () => {
  it('no materialDensity: sedimentation-not-checked names the species and the missing datum', () => {
    const m = mixture([], [species('enz', 41e-12, 1e15, [], 5e-9), { ...species('si', 0.24e-12, 1e14, []), materialDensity: 2000 }], 'sealed');
    m.chamber.depth = 1e-4;
    const { checks, warnings } = practicalChecks(m, null, null);
    expect(checks.sedimentation.map((s) => s.species)).toEqual(['si']);
    const w = warnings.filter((x) => x.code === 'sedimentation-not-checked');
    expect(w).toHaveLength(1);
    expect(w[0]).toMatchObject({ species: ['enz'], missing: 'materialDensity' });
    expect(w[0]!.message).toMatch(/enz was not checked: no materialDensity/);
    // with it given, the species is checked and the warning goes
    const all = mixture([], [{ ...species('enz', 41e-12, 1e15, [], 5e-9), materialDensity: 1350 }], 'sealed');
    expect(codes(practicalChecks(all, null, null).warnings)).not.toContain('sedimentation-not-checked');
  });

  it('no chamber depth: the entry says what was not judged and a no-chamber-depth warning names the species', () => {
    const m = analyze(parseMixture(doc('200 mM', { chamber: { depth: undefined } })));
    const s = m.checks.sedimentation[0]!;
    expect(s.timeToCrossDepth).toBeNull();
    expect(s.note).toMatch(/no chamber depth given/);
    expect(m.warnings.find((x) => x.code === 'no-chamber-depth')).toMatchObject({ species: ['pt'] });
    // with a depth: a crossing time, no note, no such warning
    const d = analyze(parseMixture(doc('200 mM')));
    expect(d.checks.sedimentation[0]!.note).toBeNull();
    expect(d.checks.sedimentation[0]!.timeToCrossDepth).not.toBeNull();
    expect(codes(d.warnings)).not.toContain('no-chamber-depth');
  });
});
