/**
 * Settling against hand computations from published formulas (docs/model.md §8,
 * docs/references.md).
 *
 * Sources:
 * - Stokes drag on a sphere (G. G. Stokes, 1851; any fluid mechanics text):
 *   terminal speed v = (2/9) (ρ_p − ρ_w) g a²/η.
 * - Sedimentation length of a Brownian particle ℓ = D/v; with Stokes–Einstein
 *   D = k_B T/(6π η a) (A. Einstein, Ann. Phys. 17, 549 (1905)) this is the
 *   barometric height k_B T/(Δρ V g), independent of η.
 * - Active colloids: the sedimentation profile stays exponential with the length
 *   D_eff/v, i.e. an effective temperature k_B T_eff = k_B T D_eff/D₀
 *   (J. Palacci, C. Cottin-Bizonne, C. Ybert, L. Bocquet, PRL 105, 088304 (2010)).
 * - k_B = 1.380649e-23 J/K exact (SI 2019, CODATA); g = 9.80665 m/s² exact
 *   (standard gravity, 3rd CGPM 1901).
 * - Water viscosity 0.8900 mPa·s at 25 °C, 1.0016 mPa·s at 20 °C (IAPWS 2008 as
 *   tabulated in the CRC Handbook, from memory).
 * - Water density 997.047 kg/m³ at 25 °C (IAPWS-95 as tabulated in the CRC
 *   Handbook, from memory); 998.21 kg/m³ at 20 °C (CRC table, from memory);
 *   the whole table against Kell's polynomial (G. S. Kell, J. Chem. Eng. Data
 *   20, 97 (1975), coefficients from memory) — two independent recollections.
 */
import { describe, expect, it } from 'vitest';
import { practicalChecks } from '../../server/engine/checks.js';
import { WATER_DENSITY_25C } from '../../server/engine/constants.js';
import { stokesEinstein, stokesEinsteinDebye, stokesSettlingSpeed, WATER_DENSITY_TABLE, waterDensity } from '../../server/engine/transport.js';
import type { Mixture } from '../../server/engine/types.js';
import { parseMixture } from '../../server/schema/mixture.js';
import { mixture, rel, species } from '../helpers/mixtures.js';

const KB = 1.380649e-23; // exact, SI 2019
const G = 9.80665; // exact, CGPM 1901

function oneSpecies(D: number, radius: number, rhoP: number, depth: number, temperature = 298.15, solventDensity = 997.047): Mixture {
  const m = mixture([], [{ ...species('p', D, 1e14, [], radius), materialDensity: rhoP }], 'sealed');
  m.chamber.depth = depth;
  m.conditions.temperature = temperature;
  m.conditions.solventDensity = solventDensity;
  return m;
}

describe('Stokes settling of an active swimmer', () => {
  // Effective D 20 µm²/s, a = 0.5 µm, 2 g/mL in water at 25 °C, 100 µm deep chamber.
  // By hand: Δρ = 2000 − 997.047 = 1002.953 kg/m³;
  //   v = (2/9)·1002.953·9.80665·(0.5e-6)²/0.8900e-3 = 6.1396e-7 m/s (0.614 µm/s);
  //   H/v = 1e-4/6.1396e-7 = 162.9 s; ℓ = 20e-12/6.1396e-7 = 3.2576e-5 m.
  // (Today's D/h would give 4 s across the chamber: wrong by a factor of 40.)
  const m = oneSpecies(20e-12, 0.5e-6, 2000, 100e-6);
  const { checks, warnings } = practicalChecks(m, null, null);
  const s = checks.sedimentation[0]!;

  it('speed ≈ 0.614 µm/s, ≈ 163 s across 100 µm, ℓ ≈ 32.6 µm, and it warns (ℓ < depth)', () => {
    expect(s.speed / 1e-6).toBeCloseTo(0.61396, 4);
    expect(s.timeToCrossDepth!).toBeCloseTo(162.88, 1);
    expect(s.sedimentationLength / 1e-6).toBeCloseTo(32.576, 2);
    expect(s.direction).toBe('settles');
    expect(warnings.find((w) => w.code === 'sedimentation')).toMatchObject({ species: 'p', timeToCrossDepth: s.timeToCrossDepth, sedimentationLength: s.sedimentationLength });
  });

  it('at 20 °C water is more viscous: v = (2/9)·(2000 − 998.21)·9.80665·0.25e-12/1.0016e-3 = 5.4492e-7 m/s', () => {
    const cold = practicalChecks(oneSpecies(20e-12, 0.5e-6, 2000, 100e-6, 293.15, 998.21), null, null).checks.sedimentation[0]!;
    expect(cold.viscosity).toBeCloseTo(1.0016e-3, 10);
    expect(cold.speed / 1e-6).toBeCloseTo(0.54492, 4);
  });

  it('the mixture file defaults to water at the sample temperature (density and viscosity)', () => {
    const doc = (t?: string) => ({
      species: [{ id: 'p', diffusivity: '20 um^2/s', radius: '0.5 um', density: '1e-4 um^-3', materialDensity: '2 g/mL' }],
      chamber: { walls: 'sealed', length: '1 mm', depth: '100 um' },
      ...(t ? { conditions: { temperature: t } } : {}),
    });
    const at25 = parseMixture(doc());
    expect(at25.conditions.solventDensity).toBe(997.047);
    expect(practicalChecks(at25, null, null).checks.sedimentation[0]!.speed / 1e-6).toBeCloseTo(0.61396, 4);
    const at20 = parseMixture(doc('293.15 K'));
    expect(at20.conditions.solventDensity).toBeCloseTo(998.21, 6);
    expect(practicalChecks(at20, null, null).checks.sedimentation[0]!.speed / 1e-6).toBeCloseTo(0.54492, 4);
  });
});

describe('the passive limit: ℓ = k_B T/(Δρ V g)', () => {
  it('with the Stokes–Einstein diffusivity, D/v equals the barometric height to rounding, at any viscosity', () => {
    for (const [a, rhoP, T] of [[1e-6, 1997.047, 298.15], [0.25e-6, 1050, 310.15], [2e-6, 4200, 283.15]] as const) {
      const D = stokesEinstein(a, T);
      const m = oneSpecies(D, a, rhoP, 1e-4, T);
      const s = practicalChecks(m, null, null).checks.sedimentation[0]!;
      const h = (KB * T) / ((rhoP - 997.047) * ((4 / 3) * Math.PI * a ** 3) * G);
      expect(rel(s.sedimentationLength, h)).toBeLessThan(1e-12);
      expect(rel(s.gravitationalHeight, h)).toBeLessThan(1e-12);
    }
  });

  it('1 µm radius, Δρ = 1000 kg/m³, 25 °C: h = 1.380649e-23·298.15/(1000·4.18879e-18·9.80665) = 1.00209e-7 m', () => {
    const m = oneSpecies(stokesEinstein(1e-6, 298.15), 1e-6, 1997.047, 1e-4);
    expect(practicalChecks(m, null, null).checks.sedimentation[0]!.sedimentationLength / 1e-7).toBeCloseTo(1.00209, 4);
  });
});

describe('an active colloid: ℓ grows as D_eff/D₀ (effective temperature)', () => {
  it('a 1 µm Janus sphere swimming at 3 µm/s', () => {
    // D_eff = D₀ + v_s² τ_r/6 from the long-time limit of the 3D active Brownian MSD
    // 6 D t + (v² τ_r²/2)[2t/τ_r + e^(−2t/τ_r) − 1] (ten Hagen et al. 2011, from memory),
    // τ_r = 1/D_r from Stokes–Einstein–Debye. Palacci et al.: ℓ_active = ℓ_passive · D_eff/D₀.
    const a = 1e-6;
    const D0 = stokesEinstein(a, 298.15);
    const tauR = 1 / stokesEinsteinDebye(a, 298.15); // 5.434 s
    const Deff = D0 + ((3e-6) ** 2 * tauR) / 6;
    const m = oneSpecies(Deff, a, 2000, 1e-4);
    const s = practicalChecks(m, null, null).checks.sedimentation[0]!;
    const hPassive = (KB * 298.15) / ((2000 - 997.047) * ((4 / 3) * Math.PI * a ** 3) * G);
    expect(rel(s.sedimentationLength, hPassive * (Deff / D0))).toBeLessThan(1e-12);
    expect(s.sedimentationLength / s.gravitationalHeight).toBeCloseTo(Deff / D0, 10);
    expect(Deff / D0).toBeGreaterThan(30); // the active length is tens of times the passive one
  });
});

describe('the warning threshold ℓ < depth, both sides', () => {
  it('warns at depth 1.001 ℓ, not at 0.999 ℓ', () => {
    const ell = 20e-12 / stokesSettlingSpeed(0.5e-6, 2000 - 997.047, 0.89e-3);
    const codes = (depth: number) => practicalChecks(oneSpecies(20e-12, 0.5e-6, 2000, depth), null, null).warnings.map((w) => w.code);
    expect(codes(1.001 * ell)).toContain('sedimentation');
    expect(codes(0.999 * ell)).not.toContain('sedimentation');
  });
});

describe('water density', () => {
  it('the constant is the IAPWS-95 value at 25 °C (997.047 kg/m³, from memory)', () => {
    expect(WATER_DENSITY_25C).toBe(997.047);
  });

  it('one value at 25 °C: the table node, waterDensity(298.15) and the mixture default are the constant', () => {
    // IAPWS-95 via the CRC Handbook (from memory): 997.047 kg/m³ at 25 °C, 0.101325 MPa
    expect(WATER_DENSITY_TABLE.find(([c]) => c === 25)![1]).toBe(997.047);
    expect(waterDensity(298.15)).toBe(997.047);
    const sample = (conditions?: object) => ({
      species: [{ id: 'p', diffusivity: '1 um^2/s', radius: '1 um', density: '1e-4 um^-3' }],
      chamber: { walls: 'sealed', length: '1 mm' },
      ...(conditions ? { conditions } : {}),
    });
    expect(parseMixture(sample()).conditions.solventDensity).toBe(997.047);
    expect(parseMixture(sample({ temperature: '25 degC' })).conditions.solventDensity).toBe(997.047);
    // both sides of the node stay on the table's line: within 2.4e-4 kg/m³ per mK of slope (998.21 − 997.047)/5 K
    expect(Math.abs(waterDensity(298.15 - 1e-3) - 997.047)).toBeLessThan(3e-4);
    expect(Math.abs(waterDensity(298.15 + 1e-3) - 997.047)).toBeLessThan(3e-4);
    expect(waterDensity(298.15 - 1e-3)).toBeGreaterThan(997.047);
    expect(waterDensity(298.15 + 1e-3)).toBeLessThan(997.047);
  });

  it('the CRC table agrees with Kell (1975) within 0.02 kg/m³ at its nodes and 0.05 between them', () => {
    const kell = (t: number) =>
      (999.83952 + 16.945176 * t - 7.9870401e-3 * t ** 2 - 46.170461e-6 * t ** 3 + 105.56302e-9 * t ** 4 - 280.54253e-12 * t ** 5) / (1 + 16.87985e-3 * t);
    for (let t = 0; t <= 100; t += 5) expect(Math.abs(waterDensity(273.15 + t) - kell(t))).toBeLessThan(0.02);
    for (let t = 2.5; t < 100; t += 5) expect(Math.abs(waterDensity(273.15 + t) - kell(t))).toBeLessThan(0.05);
  });
});
