/**
 * Gas a tube's fuel can release (server/protocol/gas.ts, docs/model.md §11), against hand computations.
 *
 * Sources (docs/references.md):
 * - Ideal gas law V = nRT/p with R = 8.314462618 J/(mol K) (exact since the 2019 SI redefinition, CODATA).
 * - Molar volume of an ideal gas at 25 °C and 101.325 kPa: 24.47 L/mol (textbook value, from memory);
 *   at 0 °C and 101.325 kPa: 22.413969 L/mol (CODATA 2018, from memory).
 * - Catalase: 2 H₂O₂ → 2 H₂O + O₂ (reaction stoichiometry, textbook): ½ O₂ per H₂O₂.
 * - Glucose oxidase: glucose + O₂ → gluconolactone + H₂O₂ (textbook): 1 H₂O₂ per glucose.
 * - Venting at 10 % of the headspace: common practice, no source (a stated choice, tested on both sides).
 * Every expected number is worked out by hand beside its check.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { DEFAULT_VENT_FRACTION, gasRoute, idealGasVolume, molarVolume, tubeGas } from '../../server/protocol/gas.js';
import { engineSpecies, speciesRecordSchema } from '../../server/schema/shelf.js';
import { constant, rel, species } from '../helpers/mixtures.js';

const demo = JSON.parse(readFileSync(new URL('../../seeds/demo-shelf.json', import.meta.url), 'utf8')) as { species: unknown[] };
const shelfSpecies = (id: string) => {
  const rec = speciesRecordSchema.parse(demo.species.find((s) => (s as { id: string }).id === id));
  return engineSpecies(rec, { value: 1e15, sd: 0 });
};

describe('ideal-gas molar volume', () => {
  it('is 24.47 L/mol at 25 °C and 1 atm (textbook, from memory; 8.314462618 × 298.15 / 101325 = 0.0244654 m³)', () => {
    expect(molarVolume(298.15) * 1e3).toBeCloseTo(24.47, 2);
    expect(rel(molarVolume(298.15), 0.0244654)).toBeLessThan(1e-5);
  });
  it('is 22.414 L/mol at 0 °C and 1 atm (CODATA 22.413969 L/mol, from memory)', () => {
    expect(rel(molarVolume(273.15) * 1e3, 22.413969)).toBeLessThan(1e-6);
  });
  it('scales as T/p (Charles and Boyle): 37 °C gives 24.47 × 310.15/298.15 = 25.45 L/mol; at 2 atm half', () => {
    expect(molarVolume(310.15) * 1e3).toBeCloseTo(25.45, 2);
    expect(idealGasVolume(1, 298.15, 2 * 101325) * 1e3).toBeCloseTo(12.23, 2);
  });
  it('refuses a temperature that is not in kelvin above 0 and negative amounts', () => {
    expect(() => idealGasVolume(1, 0)).toThrow(RangeError);
    expect(() => idealGasVolume(-1, 298.15)).toThrow(RangeError);
    expect(() => idealGasVolume(Number.NaN, 298.15)).toThrow(RangeError);
  });
});

describe('the yield of gas per fuel, as the demo shelf expresses it', () => {
  it('catalase (saturating turnover, productYield 0.5): ½ O₂ per H₂O₂', () => {
    const r = gasRoute([shelfSpecies('catalase-e3')], 'h2o2', 'o2')!;
    expect(r).toMatchObject({ yieldPerFuel: 0.5, via: ['h2o2', 'o2'], species: ['catalase-e3'] });
  });
  it('Pt colloids (constant activities, 1e-16 mol/s O₂ for 2e-16 mol/s H₂O₂): 0.5, the same stoichiometry', () => {
    expect(gasRoute([shelfSpecies('ptj-1um-b07')], 'h2o2', 'o2')!.yieldPerFuel).toBeCloseTo(0.5, 12);
  });
  it('glucose oxidase then catalase: 1 H₂O₂ per glucose × ½ O₂ per H₂O₂ = 0.5 O₂ per glucose', () => {
    const r = gasRoute([shelfSpecies('gox-e1'), shelfSpecies('catalase-e3')], 'glucose', 'o2')!;
    expect(r).toMatchObject({ via: ['glucose', 'h2o2', 'o2'], species: ['gox-e1', 'catalase-e3'] });
    expect(r.yieldPerFuel).toBeCloseTo(0.5, 12);
    // glucose oxidase alone makes no gas from glucose (peroxide is not a gas here)
    expect(gasRoute([shelfSpecies('gox-e1')], 'glucose', 'o2')).toBeNull();
  });
  it('a tracer, or a species that only consumes, makes none', () => {
    expect(gasRoute([shelfSpecies('silica-1um-t01')], 'h2o2', 'o2')).toBeNull();
    expect(gasRoute([species('eater', 1e-12, 1e15, [constant('h2o2', -1e-16, 0)])], 'h2o2', 'o2')).toBeNull();
  });
  it('two routes: the larger yield is the bound', () => {
    const one = species('one', 1e-12, 1e15, [constant('h2o2', -1e-16, 0), constant('o2', 1e-16, 0)]); // yield 1
    const r = gasRoute([shelfSpecies('catalase-e3'), one], 'h2o2', 'o2')!;
    expect(r.yieldPerFuel).toBe(1);
    expect(r.species).toEqual(['one']);
  });
});

describe('per tube: 100 µL of 200 mM H₂O₂ decomposed by catalase', () => {
  // 100e-9 m³ × 200 mol/m³ = 2e-5 mol H₂O₂ → × 0.5 = 1e-5 mol O₂ → × 0.0244654 m³/mol = 2.44654e-7 m³ = 0.245 mL
  const base = { gas: 'o2', fuelMoles: 100e-9 * 200, yieldPerFuel: 0.5, temperature: 298.15 };
  it('releases 10 µmol O₂ = 0.245 mL at 25 °C: 2.4 × a 100 µL chamber', () => {
    const g = tubeGas({ ...base, tubeVolume: null, chamberVolume: 100e-9 });
    expect(g.moles).toBeCloseTo(1e-5, 15);
    expect(g.volume * 1e6).toBeCloseTo(0.2447, 4);
    expect(g.fractionOfChamber!).toBeCloseTo(2.4465, 3);
    expect(g.ventChamber).toBe(true);
    expect(g.message).toContain('245 µL of gas at 25 °C');
    expect(g.message).toContain('2.4 × the chamber');
  });
  it('in a 1.5 mL tube with the 100 µL sample: headspace 1.4 mL, 17.5 % of it, vent (threshold 10 %); closed it would reach 1.17 atm', () => {
    const g = tubeGas({ ...base, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: 10e-9 });
    expect(g.headspace! * 1e6).toBeCloseTo(1.4, 12);
    expect(g.fractionOfHeadspace!).toBeCloseTo(0.24465 / 1.4, 4); // 0.17475
    expect(g.fractionOfTube!).toBeCloseTo(0.24465 / 1.5, 4);
    expect(g.overpressure!).toBeCloseTo(1.17475, 4);
    expect(g.ventTube).toBe(true);
    // a 10 µL chamber filled from the 100 µL sample holds a tenth of the fuel: the same 2.45 × its own volume
    expect(g.chamberGasVolume! * 1e9).toBeCloseTo(24.465, 2);
    expect(g.fractionOfChamber!).toBeCloseTo(2.4465, 3);
    expect(g.message).toMatch(/leave the tube open or vented/);
  });
  it('the 10 % threshold on both sides: 0.999 and 1.001 of a tenth of the headspace', () => {
    const headspace = 1.4e-6;
    const atThreshold = (DEFAULT_VENT_FRACTION * headspace) / molarVolume(298.15); // moles of O₂ filling 10 % of it
    const below = tubeGas({ ...base, fuelMoles: (0.999 * atThreshold) / 0.5, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: null });
    const above = tubeGas({ ...base, fuelMoles: (1.001 * atThreshold) / 0.5, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: null });
    expect(below.ventTube).toBe(false);
    expect(above.ventTube).toBe(true);
    expect(below.vent).toBe(false);
    expect(below.message).not.toMatch(/headspace: leave the tube open or vented/);
    expect(above.message).toMatch(/More than 10 % of the tube's headspace: leave the tube open or vented/);
  });
  it('a stated fraction other than 10 % is used as given', () => {
    const g = tubeGas({ ...base, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: null, ventFraction: 0.2 });
    expect(g.ventTube).toBe(false); // 17.5 % < 20 %
  });
  it('a closed vessel holding catalyst and fuel gets the caution; no fuel, no gas and no caution', () => {
    expect(tubeGas({ ...base, tubeVolume: 1.5e-6, chamberVolume: null, closed: true }).closedWithCatalyst).toBe(true);
    expect(tubeGas({ ...base, tubeVolume: 1.5e-6, chamberVolume: null, closed: true }).message).toMatch(/^.*CAUTION: a closed vessel holding catalyst and fuel/);
    const none = tubeGas({ ...base, fuelMoles: 0, tubeVolume: 1.5e-6, chamberVolume: 100e-9, closed: true });
    expect(none).toMatchObject({ moles: 0, volume: 0, vent: false, closedWithCatalyst: false });
    expect(none.message).toMatch(/No fuel in this tube/);
  });
  it('at 37 °C the same gas takes 310.15/298.15 more volume', () => {
    const g = tubeGas({ ...base, temperature: 310.15, tubeVolume: null, chamberVolume: null });
    expect(g.volume * 1e6).toBeCloseTo(0.2545, 4);
  });
  it('a full tube has no headspace: any gas means vent', () => {
    const g = tubeGas({ ...base, tubeVolume: 100e-9, sampleVolume: 100e-9, chamberVolume: null });
    expect(g.headspace).toBe(0);
    expect(g.ventTube).toBe(true);
    expect(g.overpressure).toBeNull();
    expect(g.message).toMatch(/The tube is full \(no headspace\): leave it open or vented/);
  });
  it('a volume not known is said, not skipped: no venting advice is not "no need to vent"', () => {
    expect(tubeGas({ ...base, tubeVolume: null, chamberVolume: null }).message).toMatch(/tube's and the chamber's volumes are not known: not compared/);
    expect(tubeGas({ ...base, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: null }).message).toMatch(/chamber's volume is not known: not compared/);
    expect(tubeGas({ ...base, tubeVolume: null, chamberVolume: 100e-9 }).message).toMatch(/tube's volume is not known: not compared/);
    expect(tubeGas({ ...base, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: 100e-9 }).message).not.toMatch(/not known/);
  });
  it('the closed-tube pressure is written in atm also when the ambient is not 1 atm', () => {
    // at 0.8 atm: V = 1e-5 mol × 8.314462618 × 298.15 / 81060 Pa = 3.05818e-7 m³; H = 1.4e-6 m³;
    // closed: 0.8 atm × (1 + 3.05818e-7 / 1.4e-6) = 0.8 × 1.21844 = 0.975 atm
    const g = tubeGas({ ...base, pressure: 0.8 * 101325, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: 100e-9 });
    expect(g.volume * 1e9).toBeCloseTo(305.818, 2);
    expect(g.overpressure!).toBeCloseTo(1.21844, 4);
    expect(g.message).toContain('(closed, it would reach about 0.97 atm)');
  });
  it('figures in plain decimals: 1 M peroxide, ½ O₂ per H₂O₂, is 12 × the chamber; 1000 µL is written 1 mL', () => {
    // 1000 mol/m³ × 0.5 × 0.0244654 m³/mol = 12.23 (the chamber filled from the sample holds the same concentration)
    const strong = tubeGas({ ...base, fuelMoles: 100e-9 * 1000, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: 100e-9 });
    expect(strong.fractionOfChamber!).toBeCloseTo(12.2327, 3);
    expect(strong.message).toContain('12 × the chamber');
    // 9 M over the same 100 µL: 9e-4 mol H₂O₂ → 450 µmol O₂ → × 24.4654 mL/mmol = 11.009 mL, 7.3 × the 1.5 mL tube, 110 × the 100 µL chamber (toPrecision alone: 1.1e+2)
    const stock = tubeGas({ ...base, fuelMoles: 100e-9 * 9000, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: 100e-9 });
    expect(stock.message).toContain('450 µmol');
    expect(stock.message).toContain('11 mL of gas');
    expect(stock.message).toContain('110 × the chamber');
    expect(stock.message).not.toMatch(/e[+-]\d/);
    // 40.87 µmol × 24.4654 mL/mmol = 0.99990 mL → 1000 µL at three figures → "1 mL"
    const edge = tubeGas({ ...base, fuelMoles: 2 * 40.87e-6, tubeVolume: null, chamberVolume: null });
    expect(edge.volume * 1e6).toBeCloseTo(0.9999, 4);
    expect(edge.message).toContain('1 mL of gas');
  });
  it('refuses a negative or non-finite amount of fuel by its name', () => {
    expect(() => tubeGas({ ...base, fuelMoles: -1e-6, tubeVolume: null, chamberVolume: null })).toThrow(/fuelMoles/);
    expect(() => tubeGas({ ...base, fuelMoles: Number.NaN, tubeVolume: null, chamberVolume: null })).toThrow(/fuelMoles/);
  });
});
