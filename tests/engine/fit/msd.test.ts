/**
 * MSD fits recover known parameters from simulated trajectories (positions and
 * orientations simulated here with a seeded generator, the MSD computed from
 * them — not the fitted formula evaluated). Every lag has its own independent
 * particles, so the fit's standard errors measure the simulation's scatter;
 * the tolerance is 3 standard errors plus 0.5 % for the Euler time step
 * (dt/τ = 0.005, a first-order bias of that order — common practice, no
 * source), and the simulation is large enough that a standard error is at
 * most 2.5 % of the value (4.5 % for the rotation time): a recovered value is
 * then within 8 % (14 %) at worst; a fit that lands elsewhere, or reports a
 * large error to cover itself, fails. The forms themselves are checked
 * noise-free to 10⁻¹⁰ against the velocity-autocorrelation integral in
 * msd-forms.test.ts; this test checks the fit end to end.
 */
import { describe, expect, it } from 'vitest';
import { fitMsd, type MsdModel } from '../../../server/engine/fit/models.js';
import { stokesEinsteinDebye } from '../../../server/engine/transport.js';
import { simulateMsd, type Sim } from './simulate.js';

const lags = [...new Set(Array.from({ length: 24 }, (_, i) => Math.round(Math.pow(10, (3 * i) / 23))))];

function expectRecovered(got: { value: number; sd: number | null }, truth: number, what: string, maxRelativeSd = 0.025) {
  expect(got.sd, `${what} has a standard error`).not.toBeNull();
  const sd = got.sd!;
  if (process.env.BRINK_FIT_FIGURES) console.log(`${what}: ${(got.value / truth - 1) * 100}% off, sd ${(sd / Math.abs(truth)) * 100}%`);
  const tol = 3 * sd + 0.005 * Math.abs(truth);
  expect(Math.abs(got.value - truth), `${what}: ${got.value} ± ${sd} vs ${truth}`).toBeLessThan(tol);
  // and the standard error is an honest, small fraction of the value
  expect(sd).toBeGreaterThan(0);
  expect(sd, `${what}: sd ${sd} vs ${truth}`).toBeLessThan(maxRelativeSd * Math.abs(truth));
}

describe('MSD fits on simulated trajectories', () => {
  const D = 0.2e-12;
  const v = 2e-6;
  const tau = 2;
  // particles per lag: enough for the standard errors above (3D costs more per step)
  const cases: [MsdModel, Partial<Sim>][] = [
    ['active-2d', { dims: 2, particles: 1500 }],
    ['active-3d', { dims: 3, particles: 1200 }],
    ['active-focal', { dims: 3, project: true, particles: 1200 }],
  ];
  for (const [model, sim] of cases) {
    it(`${model}: diffusivity, speed and rotation time`, () => {
      const s = simulateMsd({ dims: 2, D, v, tau, dt: 0.01, seed: 101, particles: 1500, ...sim }, lags);
      const f = fitMsd(s.lag, s.msd, { model, sd: s.sd });
      expect(f.converged).toBe(true);
      expect(f.stop).toBe('converged');
      expect(f.weighting).toBe('weighted');
      expectRecovered(f.parameters.diffusivity!, D, 'D');
      expectRecovered(f.parameters.speed!, v, 'v');
      expectRecovered(f.parameters.rotationTime!, tau, 'τ', 0.045);
      // a reduced chi-square near 1 says the weights (the simulation's own scatter) fit the model
      expect(f.residualStandardError).toBeGreaterThan(0.5);
      expect(f.residualStandardError).toBeLessThan(1.6);
      // Long-time limit of the fitted forms (t ≫ τ, by hand): 2D 2v²τ²·t/τ = 2v²τ t = 4 (v²τ/2) t;
      // 3D (v²τ²/2)·2t/τ = v²τ t = 6 (v²τ/6) t; focal plane (v²τ²/3)·2t/τ = (2/3) v²τ t = 4 (v²τ/6) t.
      // So D_eff = D + v²τ/2 in 2D and D + v²τ/6 in 3D and in a focal plane (Bechinger et al. 2016
      // give D + v²/(6 D_r) in 3D — from memory).
      const c = model === 'active-2d' ? 1 / 2 : 1 / 6;
      expectRecovered(f.parameters.effectiveDiffusivity!, D + c * v * v * tau, 'D_eff');
      expect(f.notes.join(' ')).toMatch(model === 'active-2d' ? /D \+ v²τ\/2 / : /D \+ v²τ\/6 /);
    }, 30_000);
  }

  it('passive 2D and 3D, with a localisation-error offset', () => {
    for (const dims of [2, 3] as const) {
      const sigma = 0.05e-6; // per coordinate, at both ends of each displacement: offset 2·d·σ²
      const s = simulateMsd({ dims, D, v: 0, tau: 1, dt: 0.01, particles: 250, seed: 7 + dims, noise: sigma }, lags);
      const f = fitMsd(s.lag, s.msd, { model: dims === 2 ? 'passive-2d' : 'passive-3d', offset: true, sd: s.sd });
      expectRecovered(f.parameters.diffusivity!, D, `D (${dims}D)`);
      const offset = 2 * dims * sigma * sigma;
      expect(Math.abs(f.parameters.offset!.value - offset)).toBeLessThan(4 * f.parameters.offset!.sd! + 0.05 * offset);
      expect(f.parameters.offset!.sd!).toBeLessThan(0.25 * offset);
    }
  }, 30_000);

  it('the rotation time can be fixed from Stokes–Einstein–Debye for the radius', () => {
    const a = 1e-6;
    const tauSED = 1 / stokesEinsteinDebye(a, 298.15);
    const s = simulateMsd({ dims: 2, D, v, tau: tauSED, dt: 0.02, particles: 500, seed: 55 }, lags);
    const f = fitMsd(s.lag, s.msd, { model: 'active-2d', radius: a, sd: s.sd });
    expect(f.parameters.rotationTime).toMatchObject({ value: tauSED, sd: 0, fixed: true });
    expect(f.stop).toBe('converged');
    expectRecovered(f.parameters.diffusivity!, D, 'D');
    expectRecovered(f.parameters.speed!, v, 'v');
    expect(f.notes.join(' ')).toMatch(/Stokes–Einstein–Debye/);
  }, 30_000);

  it('refuses too few points for the model', () => {
    expect(() => fitMsd([1, 2, 3], [1, 2, 3], { model: 'active-2d' })).toThrow(/at least 4 points/);
  });
});
