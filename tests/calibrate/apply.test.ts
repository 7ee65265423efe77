/**
 * Applying a fit writes the value as a person would type it: in the species'
 * own unit, to the precision its standard error supports (the standard error
 * to two significant digits and the value to the same decimal place — common
 * practice for reporting a measurement, e.g. the GUM's guidance, from memory).
 * Expected texts are worked by hand beside each case.
 */
import { describe, expect, it } from 'vitest';
import { formatMeasured } from '../../server/calibrate/service.js';
import { parseQuantity, type Dimension } from '../../server/units/index.js';

describe('formatMeasured', () => {
  it('a diffusivity in um^2/s, rounded by its standard error', () => {
    // 2.1734e-13 m²/s = 0.21734 µm²/s; sd 1.234e-14 m²/s = 0.01234 → 0.012 (two digits, place 10⁻³) → value 0.217
    expect(formatMeasured(2.1734e-13, 1.234e-14, 'um^2/s')).toEqual({ value: '0.217 um^2/s', sd: '0.012 um^2/s' });
    // sd 9.96e-15 m²/s = 0.00996 → two digits 0.010 (its trailing zero is significant), whose second digit is the 10⁻³ place → value 0.217
    expect(formatMeasured(2.1734e-13, 9.96e-15, 'um^2/s')).toEqual({ value: '0.217 um^2/s', sd: '0.010 um^2/s' });
    // the other side of that rounding edge: 0.00994 → 0.0099, place 10⁻⁴ → 0.2173
    expect(formatMeasured(2.1734e-13, 9.94e-15, 'um^2/s')).toEqual({ value: '0.2173 um^2/s', sd: '0.0099 um^2/s' });
  });
  it('large and small magnitudes, negative values, and no 17-digit noise', () => {
    // 41.2837 µm²/s ± 3.71 → sd 3.7 (place 10⁻¹) → 41.3
    expect(formatMeasured(41.2837e-12, 3.71e-12, 'um^2/s')).toEqual({ value: '41.3 um^2/s', sd: '3.7 um^2/s' });
    // a mobility of −3.0213e-11 m⁵/(mol s) = −30.213 µm²/(s mM) (1 µm²/(s mM) = 1e-12 m² s⁻¹ / (1 mol m⁻³)); sd 8.19 → 8.2 → −30.2
    expect(formatMeasured(-3.0213e-11, 8.19e-12, 'um^2/(s*mM)')).toEqual({ value: '-30.2 um^2/(s*mM)', sd: '8.2 um^2/(s*mM)' });
    // sd larger than the value: the value keeps two significant digits (0.0123 ± 0.5 → 0.012)
    expect(formatMeasured(0.0123e-12, 0.5e-12, 'um^2/s')).toEqual({ value: '0.012 um^2/s', sd: '0.50 um^2/s' });
    // no standard error: four significant digits
    expect(formatMeasured(2.17345e-13, null, 'um^2/s')).toEqual({ value: '0.2173 um^2/s' });
    expect(formatMeasured(2.17345e-13, 0, 'm^2/s')).toEqual({ value: '2.173e-13 m^2/s' });
  });
  it('significant trailing zeros are kept, in text the unit parser reads back', () => {
    // −2.0e-16 mol/s ± 4e-18: sd 4.0e-18 (two digits, last at 10⁻¹⁹) → value to 10⁻¹⁹: −2.000e-16 (was printed −2e-16)
    const a = formatMeasured(-2.0e-16, 4e-18, 'mol/s');
    expect(a).toEqual({ value: '-2.000e-16 mol/s', sd: '4.0e-18 mol/s' });
    // a round value in fixed notation keeps its zeros: 41.3 ± 0.10 → sd 0.10 (place 10⁻²) → 41.30
    expect(formatMeasured(41.3e-12, 0.1e-12, 'um^2/s')).toEqual({ value: '41.30 um^2/s', sd: '0.10 um^2/s' });
    // rounding carries into a new digit: 9.996 ± 0.012 → sd 0.012 (place 10⁻³) → 9.996; ± 0.12 (place 10⁻²) → 10.00
    expect(formatMeasured(9.996e-12, 0.012e-12, 'um^2/s').value).toBe('9.996 um^2/s');
    expect(formatMeasured(9.996e-12, 0.12e-12, 'um^2/s').value).toBe('10.00 um^2/s');
    // a large value rounded to tens: 12345 ± 234 → sd 2.3e2 (place 10¹) → 1.235e4, not "12350" with a zero that is not a digit
    expect(formatMeasured(12345e-12, 234e-12, 'um^2/s')).toEqual({ value: '1.235e4 um^2/s', sd: '2.3e2 um^2/s' });
    // zero with an sd: the zeros to the sd's place (0 ± 0.0010 → 0.0000)
    expect(formatMeasured(0, 1e-3, 'm')).toEqual({ value: '0.0000 m', sd: '0.0010 m' });
    // no sd: four significant digits, zeros kept (2.5 µm²/s → 2.500)
    expect(formatMeasured(2.5e-12, null, 'um^2/s')).toEqual({ value: '2.500 um^2/s' });
    // every text reads back through the unit parser to the rounded value
    for (const [text, dim, si] of [
      [a.value, { amount: 1, time: -1 }, -2.0e-16],
      [a.sd!, { amount: 1, time: -1 }, 4.0e-18],
      ['1.235e4 um^2/s', { length: 2, time: -1 }, 1.235e-8],
      ['0.010 um^2/s', { length: 2, time: -1 }, 1.0e-14],
    ] as const) {
      const q = parseQuantity(text, { dimension: dim as Dimension, sign: 'any' }, 'x');
      expect(q.value / si).toBeCloseTo(1, 12);
    }
  });
});
