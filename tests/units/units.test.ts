/**
 * Unit parsing. Conversion factors are SI definitions (1 um = 1e-6 m, 1 M =
 * 1 mol/L = 1000 mol/m³, 1 h = 3600 s, 0 °C = 273.15 K); the rest checks the
 * messages a user sees.
 */
import { describe, expect, it } from 'vitest';
import { DIMENSIONS, fromSI, parseQuantity, UnitError, type FieldSpec } from '../../server/units/index.js';

const D: FieldSpec = { dimension: DIMENSIONS.diffusivity, sign: 'positive' };
const rel = (a: number, b: number) => Math.abs(a - b) / Math.abs(b);

describe('parseQuantity', () => {
  it.each([
    ['0.25 um^2/s', DIMENSIONS.diffusivity, 0.25e-12],
    ['2 µm', DIMENSIONS.length, 2e-6],
    ['2 μm', DIMENSIONS.length, 2e-6],
    ['50 mM', DIMENSIONS.concentration, 50],
    ['50 uM', DIMENSIONS.concentration, 0.05],
    ['3 nM', DIMENSIONS.concentration, 3e-6],
    ['1.5 M', DIMENSIONS.concentration, 1500],
    ['1e-3 um^-3', DIMENSIONS.numberDensity, 1e15],
    ['1e-3 1/um^3', DIMENSIONS.numberDensity, 1e15],
    ['5 percent', DIMENSIONS.dimensionless, 0.05],
    ['5 %', DIMENSIONS.dimensionless, 0.05],
    ['3 um^2/(s*mM)', DIMENSIONS.mobility, 3e-12],
    ['-3e-18 mol/s', DIMENSIONS.amountRate, -3e-18],
    ['0 1/s', DIMENSIONS.rate, 0],
    ['2 1/s', DIMENSIONS.rate, 2],
    ['1 h', DIMENSIONS.time, 3600],
    ['25 degC', DIMENSIONS.temperature, 298.15],
    ['1.11 g/mL', DIMENSIONS.massDensity, 1110],
    ['34.0147 g/mol', DIMENSIONS.molarMass, 0.0340147],
  ])('%s', (text, dimension, si) => {
    const q = parseQuantity(text, { dimension, sign: 'any' }, 'x');
    if (si === 0) expect(q.value).toBe(0);
    else expect(rel(q.value, si)).toBeLessThan(1e-12);
    expect(q.sd).toBe(0);
  });

  it('keeps the unit as typed for display', () => {
    expect(parseQuantity('0.25 um^2/s', D, 'x').unit).toBe('um^2/s');
    expect(parseQuantity(2.5e-13, D, 'x').unit).toBeNull();
  });

  it('reads plain numbers as SI and { value, sd } as a value with its uncertainty', () => {
    expect(parseQuantity(2.5e-13, D, 'x')).toEqual({ value: 2.5e-13, sd: 0, unit: null });
    const q = parseQuantity({ value: '3 um^2/(s*mM)', sd: '0.5 um^2/(s*mM)' }, { dimension: DIMENSIONS.mobility, sign: 'any' }, 'x');
    expect(rel(q.value, 3e-12)).toBeLessThan(1e-12);
    expect(rel(q.sd, 5e-13)).toBeLessThan(1e-12);
  });
});

describe('rejections name the field and the expected dimension', () => {
  const message = (raw: unknown, spec: FieldSpec = D, path = 'species[2].diffusivity') => {
    try {
      parseQuantity(raw, spec, path);
    } catch (e) {
      expect(e).toBeInstanceOf(UnitError);
      return (e as Error).message;
    }
    throw new Error('expected a rejection');
  };

  it('wrong dimension', () => {
    expect(message('3 mM')).toBe('species[2].diffusivity: expected length^2/time, got "3 mM" (amount/length^3)');
    expect(message('2 um', { dimension: DIMENSIONS.mobility, sign: 'any' }, 'm')).toBe('m: expected length^5/(time*amount), got "2 um" (length)');
  });
  it('NaN and infinities', () => {
    expect(message(Number.NaN)).toBe('species[2].diffusivity: must be a finite number, got NaN');
    expect(message(Number.POSITIVE_INFINITY)).toBe('species[2].diffusivity: must be a finite number, got Infinity');
    expect(message('NaN um^2/s')).toMatch(/must be a finite number/);
    expect(message('Infinity')).toMatch(/must be a finite number/);
  });
  it('negative where impossible', () => {
    expect(message('-2 um', { dimension: DIMENSIONS.length, sign: 'positive' }, 'species[0].radius')).toBe('species[0].radius: must be positive, got "-2 um"');
    expect(message(-1e15, { dimension: DIMENSIONS.numberDensity, sign: 'nonnegative' }, 'species[0].density')).toBe('species[0].density: must not be negative, got -1000000000000000');
    expect(message('0 um^2/s')).toBe('species[2].diffusivity: must be positive, got "0 um^2/s"');
  });
  it('unreadable units and wrong types', () => {
    expect(message('2 furlongs/fortnight')).toMatch(/^species\[2\]\.diffusivity: cannot read "2 furlongs\/fortnight"/);
    expect(message(true)).toMatch(/expected a number in SI or a string with a unit \(length\^2\/time\), got true/);
    expect(message({ value: '1 um^2/s', sd: '-1 um^2/s' })).toBe('species[2].diffusivity.sd: must not be negative, got "-1 um^2/s"');
    expect(message({ value: '1 um^2/s', unit: 'x' })).toMatch(/^species\[2\]\.diffusivity\.unit: unknown key/);
    expect(message({ sd: 1 })).toMatch(/^species\[2\]\.diffusivity\.value: missing/);
    expect(message({ value: '1 um^2/s', sd: '1 mM' })).toMatch(/^species\[2\]\.diffusivity\.sd: expected length\^2\/time/);
  });
});

describe('fromSI', () => {
  it('shows SI values back in a unit', () => {
    expect(fromSI(2.5e-13, 'um^2/s')).toBeCloseTo(0.25, 12);
    expect(fromSI(50, 'mM')).toBeCloseTo(50, 12);
    expect(fromSI(0.05, 'percent')).toBeCloseTo(5, 12);
    expect(fromSI(298.15, 'degC')).toBeCloseTo(25, 10);
    expect(fromSI(2, '1/s')).toBeCloseTo(2, 12);
    expect(fromSI(1e15, 'µm^-3')).toBeCloseTo(1e-3, 15);
  });
});
