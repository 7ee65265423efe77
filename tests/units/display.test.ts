/**
 * Values as people write them (server/units/display.ts), checked against the SI prefixes and the
 * exact Avogadro constant of the SI Brochure (BIPM, 9th edition, 2019), and read back by brink's own
 * unit parser (server/units/index.ts, mathjs) so that what a page shows can be typed again.
 */
import { describe, expect, it } from 'vitest';
import { benchText, DISPLAY_UNITS, fmt, fmtAmountOf, fmtMolar, fmtDose, fmtSi, fmtWithSd, formatNumber, formatQuantity, particleMass, type DisplayKind } from '../../server/units/display.js';
import { DIMENSIONS, parseQuantity } from '../../server/units/index.js';
import { perMl } from '../../server/engine/planner.js';

describe('display units', () => {
  it('shows the demo values in bench units', () => {
    expect(fmt(0.22e-12, 'diffusivity')).toBe('0.22 µm²/s');
    expect(fmt(-30e-12, 'mobility')).toBe('−30 µm²/(s·mM)');
    expect(fmt(200, 'concentration')).toBe('200 mM');
    expect(fmt(0.5e-6, 'concentration')).toBe('0.5 nM');
    expect(fmt(1.3e-3, 'concentration')).toBe('1.3 µM');
    expect(fmt(-2e-16, 'amountRate')).toBe('−200 amol/s');
    expect(fmt(1e-15, 'amountRate')).toBe('1 fmol/s');
    expect(fmt(1.433e14, 'numberDensity')).toBe('1.43 × 10⁸ particles/mL');
    expect(fmt(298.15, 'temperature')).toBe('25 °C');
    expect(fmt(0.001, 'fraction')).toBe('0.1 %');
    expect(fmt(90, 'time')).toBe('1.5 min');
    expect(fmt(2e-3, 'length')).toBe('2 mm');
    expect(fmt(null, 'length')).toBe('—');
    expect(fmtWithSd(0.22e-12, 0.02e-12, 'diffusivity')).toBe('0.22 ± 0.02 µm²/s');
  });

  it('numbers: four significant figures, powers of ten outside 0.001–99 999, no e-notation', () => {
    expect(formatNumber(1.2346e-16)).toBe('1.235 × 10⁻¹⁶');
    expect(formatNumber(12345.6)).toBe('12350');
    expect(formatNumber(0.00099)).toBe('9.9 × 10⁻⁴');
    expect(formatNumber(Infinity)).toBe('∞');
    expect(formatNumber(NaN)).toBe('not a number');
  });

  it('every display unit reads back through the service parser to the same SI value', () => {
    const dims: Partial<Record<DisplayKind, keyof typeof DIMENSIONS>> = {
      diffusivity: 'diffusivity', mobility: 'mobility', concentration: 'concentration', numberDensity: 'numberDensity', amountRate: 'amountRate',
      length: 'length', time: 'time', rate: 'rate', massDensity: 'massDensity', molarMass: 'molarMass', viscosity: 'viscosity', temperature: 'temperature', fraction: 'dimensionless',
    };
    for (const [kind, dim] of Object.entries(dims) as [DisplayKind, keyof typeof DIMENSIONS][]) {
      for (const unit of DISPLAY_UNITS[kind]) {
        const si = 3.7 * unit.factor + ((unit as { offset?: number }).offset ?? 0);
        const f = formatQuantity(si, kind, { unit });
        const back = parseQuantity(f.input, { dimension: DIMENSIONS[dim], sign: 'any' }, kind).value;
        expect(back / si, `${kind} ${unit.label} (${f.input})`).toBeCloseTo(1, 10);
      }
    }
  });

  it('a dose: particles/mL with the volume fraction; an enzyme in nM and µg/mL', () => {
    // 1 µm radius sphere: (4/3)π(1e-6)^3 m^3
    const v = (4 / 3) * Math.PI * 1e-18;
    expect(fmtDose(1e15, v)).toBe('10⁹ particles/mL (0.42 % by volume)'.replace('10⁹', '1 × 10⁹'));
    // catalase, 250 kg/mol (demo), at 1e-6 mol/m^3 = 1 nM: 6.022e17 molecules/m^3 → 0.25 µg/mL (1 nM × 250 000 g/mol = 250 µg/L)
    expect(fmtAmountOf(6.02214076e17, { kind: 'enzyme', molarMass: 250 })).toBe('1 nM (0.25 µg/mL)');
    expect(particleMass({ radius: 1e-6, materialDensity: 2000 })).toBeCloseTo(2000 * v, 25);
    expect(fmtSi(2.2e-13, 'm^2/s')).toBe('0.22 µm²/s');
    expect(fmtSi(3, 'furlong')).toBe('3 furlong');
  });

  it('an engine message in bench units: doses for the species, concentrations in mM or µM', () => {
    // 1 nM of a molecule is N_A × 10⁻⁶ mol/m³ = 6.022 × 10¹⁷ /m³ = 6.02 × 10¹¹ per mL (SI 2019 Avogadro constant);
    // at 250 kg/mol that is 0.25 µg/mL (as above). The message is written by the engine's own perMl.
    const msg = `the mixture already turns stationary from ${perMl(6.02214076e17)}, below this threshold.`;
    expect(msg).toContain('6.02e+11 per mL');
    expect(benchText(msg, { kind: 'enzyme', molarMass: 250 })).toBe('the mixture already turns stationary from 1 nM (0.25 µg/mL), below this threshold.');
    // no species: the dose in particles/mL (2.50e+7 per mL = 2.5 × 10⁷ particles/mL)
    expect(benchText('cap (2.50e+7 per mL)')).toBe('cap (2.5 × 10⁷ particles/mL)');
    // a colloid: particles/mL, with µg/mL from its radius and material density (1 µm, 2 g/mL: 8.378 pg each; 10⁹/mL → 8.38 mg/mL = 8380 µg/mL)
    expect(benchText('from 1.00e+9 per mL', { kind: 'colloid', radius: 1e-6, materialDensity: 2000 })).toBe('from 1 × 10⁹ particles/mL (8380 µg/mL)');
    // mol/m³ is mM; a small one reads in µM
    expect(benchText('passes its solubility (1.20 mol/m^3) and (8.00e-3 mol/m^3)')).toBe('passes its solubility (1.2 mM) and (8 µM)');
    expect(benchText('nothing to rewrite: 3 min')).toBe('nothing to rewrite: 3 min');
    // a zero dose of an enzyme stays in nM (not "0 mM"); 6.022 × 10²⁰ /m³ is 1 µM
    expect(fmtMolar(0)).toBe('0 nM');
    expect(fmtMolar(6.02214076e20)).toBe('1 µM');
  });
});
