/**
 * What brink shows can be typed back: every display label of server/units/display.ts (`µm²/s`,
 * `µm²/(s·mM)`, `particles/mL`, `°C`, `1.43 × 10⁸`, the minus sign −) is read by the service's unit
 * parser (server/units/index.ts) to the SI value shown, to the digits shown. Unit sizes are the SI
 * prefixes and the degree Celsius offset of the SI Brochure (BIPM, 9th edition, 2019).
 */
import { describe, expect, it } from 'vitest';
import { DISPLAY_UNITS, formatQuantity, type DisplayKind } from '../../server/units/display.js';
import { DIMENSIONS, parseQuantity } from '../../server/units/index.js';

const DIMENSION_OF: Partial<Record<DisplayKind, keyof typeof DIMENSIONS>> = {
  diffusivity: 'diffusivity', mobility: 'mobility', concentration: 'concentration', numberDensity: 'numberDensity', amountRate: 'amountRate',
  length: 'length', time: 'time', rate: 'rate', massDensity: 'massDensity', molarMass: 'molarMass', viscosity: 'viscosity', temperature: 'temperature',
  fraction: 'dimensionless', massConcentration: 'massDensity',
};

const read = (text: string, dim: keyof typeof DIMENSIONS) => parseQuantity(text, { dimension: DIMENSIONS[dim], sign: 'any' }, 'v').value;

describe('a value as shown reads back to the value', () => {
  it('every display unit, at small, plain and large magnitudes, positive and negative', () => {
    for (const [kind, dim] of Object.entries(DIMENSION_OF) as [DisplayKind, keyof typeof DIMENSIONS][]) {
      for (const unit of DISPLAY_UNITS[kind]) {
        for (const v of [1.234e-7, 0.5, 37, 4.321e9, -2.5]) {
          if (kind === 'temperature' && v < 0) continue;
          const si = v * unit.factor + ((unit as { offset?: number }).offset ?? 0);
          const shown = formatQuantity(si, kind, { unit, digits: 4 }).text;
          const back = read(shown, dim);
          // four significant figures shown: agreement to 5e-4 relative (of the value in its unit)
          expect(Math.abs((back - si) / unit.factor) / Math.abs(v), `${kind}: "${shown}"`).toBeLessThan(5e-4);
        }
      }
    }
  });

  it('the forms people type', () => {
    expect(read('0.22 µm²/s', 'diffusivity')).toBeCloseTo(2.2e-13, 25);
    expect(read('0.3 um²/s', 'diffusivity')).toBeCloseTo(3e-13, 25);
    expect(read('−30 µm²/(s·mM)', 'mobility')).toBeCloseTo(-3e-11, 23);
    expect(read('1.43e8 particles/mL', 'numberDensity')).toBeCloseTo(1.43e14, 0);
    expect(read('1.43 × 10⁸ particles/mL', 'numberDensity')).toBeCloseTo(1.43e14, 0);
    expect(read('2 × 10^8 per mL', 'numberDensity')).toBeCloseTo(2e14, 0);
    expect(read('5e7 molecules/mL', 'numberDensity')).toBeCloseTo(5e13, 0);
    expect(read('25 °C', 'temperature')).toBeCloseTo(298.15, 10);
    expect(read('0.5 s⁻¹', 'rate')).toBeCloseTo(0.5, 12);
    expect(read('1.5 mPa·s', 'viscosity')).toBeCloseTo(1.5e-3, 15);
    // what was read before still reads the same
    expect(read('0.22 um^2/s', 'diffusivity')).toBeCloseTo(2.2e-13, 25);
    expect(read('1e8 /mL', 'numberDensity')).toBeCloseTo(1e14, 0);
    expect(read('50 um^2/(s*mM)', 'mobility')).toBeCloseTo(5e-11, 23);
    expect(read('0.1 %', 'dimensionless')).toBeCloseTo(0.001, 15);
  });

  it('still refuses what it cannot read, and a wrong dimension', () => {
    expect(() => read('3 bananas/mL', 'numberDensity')).toThrow();
    expect(() => read('0.22 µm²', 'diffusivity')).toThrow(/expected length\^2\/time/);
  });
});
