/**
 * Pipetting arithmetic: C₁V₁ = C₂V₂ for every component of every tube (common
 * practice, no source); intermediate dilutions exactly when a volume would fall
 * below the minimum, never leaving one below it; impossible plans fail with what
 * would fix them. And the molarity of 30 % w/w hydrogen peroxide from its
 * density and molar mass (docs/references.md: 1.11 g/mL at 20 °C from memory,
 * M = 34.0147 g/mol from standard atomic weights → ≈ 9.79 mol/L).
 */
import { describe, expect, it } from 'vitest';
import { planPipetting, type Component, type PipettingPlan, type SampleSpec } from '../../server/protocol/pipetting.js';
import { chemicalStock } from '../../server/protocol/sheet.js';
import { chemicalRecordSchema } from '../../server/schema/shelf.js';
import { DomainError } from '../../server/shelf/errors.js';

const UL = 1e-9;
const o = { sampleVolume: 100 * UL, replicates: 3, minVolume: 1 * UL, overage: 0.1, buffer: 'buffer' };

function setup(dopantStock: number, doses: number[], fuelStock = 9790): { comps: Component[]; samples: SampleSpec[] } {
  const comps: Component[] = [
    { id: 'base', label: 'base beads', stock: 1e15, stockText: '1e9/mL', per: 'particles' },
    { id: 'dop', label: 'dopant', stock: dopantStock, stockText: 'x', per: 'particles' },
    { id: 'fuel', label: 'peroxide', stock: fuelStock, stockText: '30 %', per: 'mol' },
  ];
  const samples: SampleSpec[] = doses.map((x, i) => ({ name: `s${i}`, role: 'series', dose: x, conc: new Map([['base', 2e14], ['dop', x], ['fuel', 200]]), usesMasterMix: true }));
  samples.push({ name: 'alone', role: 'control', dose: doses[1]!, conc: new Map([['dop', doses[1]!], ['fuel', 200]]), usesMasterMix: false });
  return { comps, samples };
}

/** Concentration of each component in each tube, traced back through master mix and dilutions. */
function traced(plan: PipettingPlan, comps: Component[]): Record<string, Record<string, number>> {
  const conc = new Map<string, Record<string, number>>();
  for (const c of comps) conc.set(`${c.label} stock`, { [c.id]: c.stock });
  conc.set('buffer', {});
  const mixOf = (steps: { from: string; volume: number }[]) => {
    const total = steps.reduce((a, s) => a + s.volume, 0);
    const out: Record<string, number> = {};
    for (const s of steps) for (const [k, v] of Object.entries(conc.get(s.from) ?? {})) out[k] = (out[k] ?? 0) + (v * s.volume) / total;
    return { out, total };
  };
  for (const d of plan.dilutions) conc.set(d.name, mixOf(d.steps).out);
  if (plan.masterMix) conc.set('master mix', mixOf(plan.masterMix.steps).out);
  return Object.fromEntries(plan.samples.map((s) => {
    const { out, total } = mixOf(s.steps);
    expect(total).toBeCloseTo(o.sampleVolume, 15);
    return [s.name, out];
  }));
}

describe('pipetting', () => {
  it('every tube gets its target concentrations (C1V1 = C2V2), all volumes at or above 1 µL', () => {
    // 100 µL × 5e13 / 4e15 = 1.25 µL: every dopant volume at or above 1 µL
    const { comps, samples } = setup(4e15, [0, 5e13, 1e14, 2e14]);
    const plan = planPipetting(comps, samples, o, ['base'], 'dop', ['fuel']);
    const c = traced(plan, comps);
    for (const s of samples) for (const [k, v] of s.conc) expect(Math.abs((c[s.name]![k] ?? 0) - v) / v || 0).toBeLessThan(2e-3);
    expect(Math.min(...plan.allVolumes)).toBeGreaterThanOrEqual(o.minVolume * (1 - 1e-9));
    expect(plan.dilutions).toEqual([]);
    // fuel last in every tube
    for (const s of plan.samples) expect(s.steps.at(-1)!.what).toBe('peroxide');
    expect(plan.masterMix!.tubes).toBe(12);
  });

  it('an intermediate dilution appears exactly when a volume would fall below the minimum', () => {
    // 100 µL × 5e15 / 1e18 = 0.5 µL of dopant stock for the smallest dose: below 1 µL
    const small = setup(1e18, [0, 5e15, 1e16, 4e17]);
    const plan = planPipetting(small.comps, small.samples, o, ['base'], 'dop', ['fuel']);
    expect(plan.dilutions.map((d) => d.name)).toEqual(['dopant 1:10']);
    const c = traced(plan, small.comps);
    for (const s of small.samples) for (const [k, v] of s.conc) expect(Math.abs((c[s.name]![k] ?? 0) - v) / v || 0).toBeLessThan(2e-3);
    expect(Math.min(...plan.allVolumes)).toBeGreaterThanOrEqual(o.minVolume * (1 - 1e-9));
    // the largest dose still comes from the stock (40 µL), the small ones from the dilution
    const fromOf = (name: string) => plan.samples.find((s) => s.name === name)!.steps.find((x) => x.what === 'dopant')!.from;
    expect(fromOf('s1')).toBe('dopant 1:10');
    expect(fromOf('s3')).toBe('dopant stock');
    const tiny = setup(1e18, [0, 5e13, 4e17]); // 0.005 µL: three steps of 1:10
    const p2 = planPipetting(tiny.comps, tiny.samples, o, ['base'], 'dop', ['fuel']);
    expect(p2.dilutions.map((d) => d.name)).toEqual(['dopant 1:10', 'dopant 1:100', 'dopant 1:1000']);
    expect(Math.min(...p2.allVolumes)).toBeGreaterThanOrEqual(o.minVolume * (1 - 1e-9));
    // and none with the minimum lowered to 0.2 µL
    expect(planPipetting(small.comps, small.samples, { ...o, minVolume: 0.2 * UL }, ['base'], 'dop', ['fuel']).dilutions).toEqual([]);
  });

  it('an impossible plan fails and says what would fix it', () => {
    const { comps, samples } = setup(2e14, [0, 1e14, 2e14]);
    try {
      planPipetting(comps, samples, o, ['base'], 'dop', ['fuel']);
      throw new Error('expected a failure');
    } catch (e) {
      expect(e).toBeInstanceOf(DomainError);
      expect((e as DomainError).code).toBe('impossible-volumes');
      expect((e as Error).message).toMatch(/need .* µL in a 100 µL tube/);
      expect((e as Error).message).toMatch(/larger sample volume \(at least .* µL\)/);
      // the stock that would do: the dopant at 2e14 m⁻³ = 2e8/mL is too dilute for a 2e14 m⁻³ dose in 100 µL
      const m = /a dopant stock of at least ([\d.e+]+) particles\/mL \(now 2\.00e\+8 particles\/mL/.exec((e as Error).message);
      expect(m).not.toBeNull();
      expect(Number(m![1])).toBeGreaterThan(2e8);
      // and that stock does fit
      const fixed = setup(Number(m![1]) * 1e6, [0, 1e14, 2e14]);
      expect(() => planPipetting(fixed.comps, fixed.samples, o, ['base'], 'dop', ['fuel'])).not.toThrow();
    }
  });
});

describe('stocks', () => {
  it('30 % w/w hydrogen peroxide at 1.11 g/mL is about 9.79 mol/L', () => {
    const rec = chemicalRecordSchema.parse({ id: 'h2o2', name: 'hydrogen peroxide', diffusivity: '1.4e-9 m^2/s', molarMass: '34.0147 g/mol', stock: { description: '30 %', massFraction: '30 percent', density: '1.11 g/mL' } });
    const st = chemicalStock(rec, undefined)!;
    expect(st.molar / 1000).toBeCloseTo(9.79, 2);
    expect(st.massFraction).toBeCloseTo(0.3, 12);
    // the same from options: % w/w with density, and mol/L
    expect(chemicalStock(rec, { percentWw: 30, solutionDensity: { value: 1110, sd: 0, unit: 'kg/m^3' } })!.molar / 1000).toBeCloseTo(9.79, 2);
    expect(chemicalStock(rec, { molarConcentration: { value: 1000, sd: 0, unit: 'M' } })!.molar).toBe(1000);
  });
});
