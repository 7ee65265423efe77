/**
 * Stokes–Einstein and Stokes–Einstein–Debye.
 *
 * Sources (docs/references.md): D = k_B T/(6π η a) (A. Einstein, Ann. Phys. 17, 549
 * (1905)); D_r = k_B T/(8π η a³) (P. Debye, *Polar Molecules*, 1929); water
 * viscosity 1.0016 mPa·s at 20 °C and 0.8900 mPa·s at 25 °C (IAPWS 2008 as
 * tabulated in the CRC Handbook — from memory). Check values derived there:
 * a = 1 µm at 25 °C → D = 0.2454 µm²/s; a = 0.5 µm → 0.4907 µm²/s;
 * D_r = 0.1840 s⁻¹, τ_r = 5.434 s.
 */
import { describe, expect, it } from 'vitest';
import { stokesEinstein, stokesEinsteinDebye, waterViscosity } from '../../server/engine/transport.js';
import { freshApp } from '../helpers/app.js';

const sig4 = (x: number) => Number(x.toPrecision(4));

describe('Stokes–Einstein(–Debye) in water', () => {
  it('water viscosity at the tabulated temperatures (from memory, docs/references.md)', () => {
    expect(waterViscosity(293.15)).toBeCloseTo(1.0016e-3, 9);
    expect(waterViscosity(298.15)).toBeCloseTo(0.89e-3, 9);
    // between nodes: monotone and between its neighbours
    const v = waterViscosity(295.65);
    expect(v).toBeLessThan(1.0016e-3);
    expect(v).toBeGreaterThan(0.89e-3);
    expect(() => waterViscosity(380)).toThrow(/0 to 100 °C/);
  });

  it('D for a = 1 µm and 0.5 µm at 25 °C', () => {
    expect(sig4(stokesEinstein(1e-6, 298.15) * 1e12)).toBe(0.2454);
    expect(sig4(stokesEinstein(0.5e-6, 298.15) * 1e12)).toBe(0.4907);
  });

  it('D_r and τ_r for a = 1 µm at 25 °C', () => {
    const Dr = stokesEinsteinDebye(1e-6, 298.15);
    expect(sig4(Dr)).toBe(0.184);
    expect(sig4(1 / Dr)).toBe(5.434);
  });

  it('over HTTP', async () => {
    const app = await freshApp();
    const r = await app.inject({ method: 'POST', url: '/api/fits/stokes-einstein', payload: { radius: '1 um', temperature: '25 degC' } });
    expect(r.statusCode).toBe(200);
    expect(sig4(r.json().parameters.diffusivity.value * 1e12)).toBe(0.2454);
    expect(sig4(r.json().parameters.rotationTime.value)).toBe(5.434);
    await app.close();
  });
});
