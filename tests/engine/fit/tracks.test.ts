/**
 * The MSD of tracked positions, its covariance between lags, and generalised
 * least squares on it (server/engine/fit/tracks.ts).
 *
 * Outside checks:
 *  - Brownian motion in 2D: MSD(t) = 4 D t exactly (Einstein), and the variance
 *    of one track's time-averaged MSD at lag n over N steps (all overlapping
 *    windows) is ρ_n² (2n² + 1)/(3n(N − n + 1)), ρ_n = 4 D n Δt, for n ≤ N/2
 *    (Qian, Sheetz & Elson, Biophys. J. 60, 910 (1991); from memory, see
 *    docs/references.md). The naive variance that treats the windows as
 *    independent, ρ_n²/(N − n + 1), is (2n² + 1)/(3n) times too small — 3× at
 *    n = 4 — and would fail the same check.
 *  - Honest standard errors: over many seeded repetitions, the spread of the
 *    fitted D must match the standard error the fit reports. The tolerance is a
 *    factor 1.15: the sample sd of 200 repetitions is itself uncertain by
 *    1/√(2·199) ≈ 5 %, so 1.15 is three of those (measured here: 1.00; without
 *    the Dodelson–Schneider factor for the noisy covariance it was 1.18, and
 *    a wrong covariance — say a quarter of the right one — gives 2). Ordinary
 *    least squares on the same correlated MSD reports a standard error several
 *    times too small (measured: ≈ 9×), which the test requires to exceed 1.3×:
 *    the method, not luck, makes the difference.
 *  - Active Brownian tracks (ten Hagen, van Teeffelen & Löwen 2011): the known
 *    D, v, τ within 4 reported standard errors and 3 % (Euler–Maruyama with
 *    5 substeps per frame, h/τ = 0.005, and the small bias of a fit with an
 *    estimated covariance), each standard error a small fraction of the value.
 */
import { describe, expect, it } from 'vitest';
import { fitMsd } from '../../../server/engine/fit/models.js';
import { msdFromTracks, type Track } from '../../../server/engine/fit/tracks.js';
import { simulateTracks } from './simulate.js';

function asTracks(sim: ReturnType<typeof simulateTracks>): Track[] {
  return sim.map((rows, i) => ({ id: String(i + 1), frame: rows.map((_, f) => f), coords: [0, 1].map((d) => rows.map((r) => r.x[d]!)) }));
}

const D = 0.2e-12;

describe('MSD of tracks and its covariance', () => {
  it('Brownian 2D: the mean is 4 D t and the per-track variance is Qian et al.’s', () => {
    const steps = 200;
    const n = 1500;
    const sim = simulateTracks({ dims: 2, D, v: 0, tau: 1, dt: 0.1, frames: steps + 1, tracks: n, seed: 4 });
    const m = msdFromTracks(asTracks(sim), { dt: 0.1, lags: 8, maxLagFrames: 25 });
    expect(m.units).toBe('tracks');
    expect(m.unitCount).toBe(n);
    expect(m.lagFrames[0]).toBe(1);
    expect(m.lagFrames.at(-1)).toBe(25);
    m.lagFrames.forEach((k, j) => {
      const rho = 4 * D * k * 0.1;
      expect(Math.abs(m.msd[j]! - rho), `lag ${k}`).toBeLessThan(4 * m.sd[j]!);
      const perTrack = m.empiricalCovariance[j]![j]! * n;
      const qian = (rho * rho * (2 * k * k + 1)) / (3 * k * (steps - k + 1));
      expect(perTrack / qian, `lag ${k}`).toBeGreaterThan(0.8);
      expect(perTrack / qian, `lag ${k}`).toBeLessThan(1.2);
    });
    // neighbouring lags are strongly correlated (the reason for GLS)
    const c = m.empiricalCovariance;
    expect(c[4]![5]! / Math.sqrt(c[4]![4]! * c[5]![5]!)).toBeGreaterThan(0.8);
    // the fit uses the covariance divided by the Hartlap factor (U − M − 2)/(U − 1)
    expect(m.hartlapFactor).toBeCloseTo((n - 8 - 2) / (n - 1), 12);
    expect(m.covariance[3]![3]! * m.hartlapFactor).toBeCloseTo(c[3]![3]!, 30);
  }, 30_000);

  it('GLS standard errors are honest; ordinary least squares on the same MSD under-reports them', () => {
    const reps = 200;
    const gls: { v: number; sd: number }[] = [];
    const ols: { v: number; sd: number }[] = [];
    for (let r = 0; r < reps; r++) {
      const m = msdFromTracks(asTracks(simulateTracks({ dims: 2, D, v: 0, tau: 1, dt: 0.1, frames: 200, tracks: 40, seed: 1000 + r })), { dt: 0.1, lags: 12 });
      const g = fitMsd(m.lag, m.msd, { model: 'passive-2d', covariance: m.covariance, covarianceSamples: m.unitCount });
      const o = fitMsd(m.lag, m.msd, { model: 'passive-2d' });
      expect(g.weighting).toBe('gls-covariance');
      expect(g.stop).toBe('converged');
      expect(o.weighting).toBe('unweighted');
      gls.push({ v: g.parameters.diffusivity!.value, sd: g.parameters.diffusivity!.sd! });
      ols.push({ v: o.parameters.diffusivity!.value, sd: o.parameters.diffusivity!.sd! });
    }
    const spread = (a: { v: number }[]) => {
      const mean = a.reduce((s, x) => s + x.v, 0) / a.length;
      return { mean, sd: Math.sqrt(a.reduce((s, x) => s + (x.v - mean) ** 2, 0) / (a.length - 1)) };
    };
    const reported = (a: { sd: number }[]) => Math.sqrt(a.reduce((s, x) => s + x.sd * x.sd, 0) / a.length);
    const g = spread(gls);
    const o = spread(ols);
    // unbiased: the mean of 200 fits within 4 of its own standard errors of the truth
    expect(Math.abs(g.mean - D)).toBeLessThan((4 * g.sd) / Math.sqrt(reps));
    const glsRatio = g.sd / reported(gls);
    const olsRatio = o.sd / reported(ols);
    expect(glsRatio, `GLS: spread ${g.sd}, reported ${reported(gls)}`).toBeGreaterThan(1 / 1.15);
    expect(glsRatio, `GLS: spread ${g.sd}, reported ${reported(gls)}`).toBeLessThan(1.15);
    expect(olsRatio, `OLS: spread ${o.sd}, reported ${reported(ols)}`).toBeGreaterThan(1.3);
  }, 60_000);

  it('active Brownian tracks: D, v and τ within their standard errors', () => {
    const tau = 2;
    const v = 2e-6;
    const m = msdFromTracks(asTracks(simulateTracks({ dims: 2, D, v, tau, dt: 0.05, substeps: 5, frames: 400, tracks: 60, seed: 500 })), { dt: 0.05, lags: 16 });
    const f = fitMsd(m.lag, m.msd, { model: 'active-2d', covariance: m.covariance, covarianceSamples: m.unitCount });
    expect(f.notes.join(' ')).toMatch(/Dodelson & Schneider/);
    expect(f.stop).toBe('converged');
    for (const [name, truth, maxRel] of [['diffusivity', D, 0.03], ['speed', v, 0.03], ['rotationTime', tau, 0.1]] as const) {
      const p = f.parameters[name]!;
      expect(p.sd, name).not.toBeNull();
      expect(Math.abs(p.value - truth), `${name} ${p.value} ± ${p.sd}`).toBeLessThan(4 * p.sd! + 0.03 * truth);
      expect(p.sd!).toBeLessThan(maxRel * truth);
    }
    // a reduced chi-square near 1: the covariance describes the scatter about the model
    expect(f.residualStandardError).toBeGreaterThan(0.5);
    expect(f.residualStandardError).toBeLessThan(1.8);
  }, 30_000);

  it('few long tracks are cut into blocks, and the output says so; too little data is refused', () => {
    const sim = asTracks(simulateTracks({ dims: 2, D, v: 0, tau: 1, dt: 0.1, frames: 4000, tracks: 2, seed: 8 }));
    const m = msdFromTracks(sim, { dt: 0.1, lags: 8 });
    expect(m.units).toBe('blocks');
    expect(m.unitCount).toBeGreaterThanOrEqual(2 * 8 + 4);
    expect(m.blockFrames).toBe(4 * m.lagFrames.at(-1)!);
    expect(m.notes.join(' ')).toMatch(/cut into blocks/);
    expect(() => msdFromTracks(asTracks(simulateTracks({ dims: 2, D, v: 0, tau: 1, dt: 0.1, frames: 30, tracks: 3, seed: 9 })), { dt: 0.1, lags: 8 })).toThrow(/too few to estimate the covariance/);
  });

  it('tracks are the units from 2M + 4 of them: 20 tracks for 8 lags, and 19 are cut into blocks', () => {
    const sim = asTracks(simulateTracks({ dims: 2, D, v: 0, tau: 1, dt: 0.1, frames: 200, tracks: 20, seed: 12 }));
    const at = msdFromTracks(sim, { dt: 0.1, lags: 8 });
    expect(at.lagFrames).toEqual([1, 2, 3, 5, 9, 16, 29, 50]); // round(50^(i/7)), i = 0…7 (50^(6/7) = 28.6)
    expect(at.units).toBe('tracks');
    expect(msdFromTracks(sim.slice(0, 19), { dt: 0.1, lags: 8 }).units).toBe('blocks');
  });

  it('gaps: a window needs both of its frames', () => {
    // one track, frames 0,1,2,4 (3 missing): at lag 1 the pairs (0,1), (1,2); lag 2: (0,2), (2,4); by hand
    const t: Track = { id: 'a', frame: [0, 1, 2, 4], coords: [[0, 1, 3, 4], [0, 0, 0, 0]] };
    const copies = Array.from({ length: 30 }, (_, i) => ({ ...t, id: String(i), coords: [t.coords[0]!.map((x) => x * (1 + i / 30)), t.coords[1]!] }));
    const m = msdFromTracks(copies, { dt: 1, lags: 2, maxLagFrames: 2, minLags: 2 });
    const s = (i: number) => (1 + i / 30) ** 2;
    const total = copies.reduce((a, _, i) => a + s(i), 0);
    expect(m.msd[0]).toBeCloseTo((total * (1 + 4)) / (2 * 30), 12);
    expect(m.msd[1]).toBeCloseTo((total * (9 + 1)) / (2 * 30), 12);
  });
});
