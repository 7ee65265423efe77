/**
 * Applying a fit writes the value as a person would type it: in the species'
 * own unit, to the precision its standard error supports (the standard error
 * to two significant digits and the value to the same decimal place — common
 * practice for reporting a measurement, e.g. the GUM's guidance, from memory).
 * Expected texts are worked by hand beside each case.
 */
import { describe, expect, it } from 'vitest';
import { formatMeasured } from '../../server/calibrate/service.js';

describe('formatMeasured', () => {
  it('a diffusivity in um^2/s, rounded by its standard error', () => {
    // 2.1734e-13 m²/s = 0.21734 µm²/s; sd 1.234e-14 m²/s = 0.01234 → 0.012 (two digits, place 10⁻³) → value 0.217
    expect(formatMeasured(2.1734e-13, 1.234e-14, 'um^2/s')).toEqual({ value: '0.217 um^2/s', sd: '0.012 um^2/s' });
    // sd 9.96e-15 m²/s = 0.00996 → two digits 0.010 (printed 0.01), whose second digit is the 10⁻³ place → value 0.217
    expect(formatMeasured(2.1734e-13, 9.96e-15, 'um^2/s')).toEqual({ value: '0.217 um^2/s', sd: '0.01 um^2/s' });
    // the other side of that rounding edge: 0.00994 → 0.0099, place 10⁻⁴ → 0.2173
    expect(formatMeasured(2.1734e-13, 9.94e-15, 'um^2/s')).toEqual({ value: '0.2173 um^2/s', sd: '0.0099 um^2/s' });
  });
  it('large and small magnitudes, negative values, and no 17-digit noise', () => {
    // 41.2837 µm²/s ± 3.71 → sd 3.7 (place 10⁻¹) → 41.3
    expect(formatMeasured(41.2837e-12, 3.71e-12, 'um^2/s')).toEqual({ value: '41.3 um^2/s', sd: '3.7 um^2/s' });
    // a mobility of −3.0213e-11 m⁵/(mol s) = −30.213 µm²/(s mM) (1 µm²/(s mM) = 1e-12 m² s⁻¹ / (1 mol m⁻³)); sd 8.19 → 8.2 → −30.2
    expect(formatMeasured(-3.0213e-11, 8.19e-12, 'um^2/(s*mM)')).toEqual({ value: '-30.2 um^2/(s*mM)', sd: '8.2 um^2/(s*mM)' });
    // sd larger than the value: the value keeps two significant digits (0.0123 ± 0.5 → 0.012)
    expect(formatMeasured(0.0123e-12, 0.5e-12, 'um^2/s')).toEqual({ value: '0.012 um^2/s', sd: '0.5 um^2/s' });
    // no standard error: four significant digits
    expect(formatMeasured(2.17345e-13, null, 'um^2/s')).toEqual({ value: '0.2173 um^2/s' });
    expect(formatMeasured(2.17345e-13, 0, 'm^2/s')).toEqual({ value: '2.173e-13 m^2/s' });
  });
});
