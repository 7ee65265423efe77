/**
 * The simulation's linear part and its bookkeeping:
 *
 * - Pure diffusion: a Fourier (cosine) mode of the density decays as exp(−D k² t)
 *   (Crank, The Mathematics of Diffusion, 2nd ed., 1975, ch. 2 and 4: the separable
 *   solution of ∂ρ/∂t = D ∇²ρ with no-flux or periodic boundaries), to 1e-6 relative,
 *   in 1D and 2D, sealed and periodic.
 * - Conservation of every species' particle number to 1e-10 relative over a long run
 *   past onset, and positivity (no negative density at any frame), on the example
 *   mixture of Janus colloids that cluster (seeds/examples).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { simulate } from '../../server/engine/simulate/index.js';
import { parseMixture } from '../../server/schema/mixture.js';
import { chemical, mixture, species } from '../helpers/mixtures.js';

describe('pure diffusion (Crank)', () => {
  const D = 2e-13;
  const L = 2e-4;
  const rho0 = 1e15;
  const amp = 0.5;
  const cases = [
    { walls: 'sealed' as const, dims: 1 as const, n: [3, 0], k: (n: number) => (n * Math.PI) / L, shape: (x: number, y: number, kx: number, ky: number) => Math.cos(kx * x) * Math.cos(ky * y) },
    { walls: 'periodic' as const, dims: 1 as const, n: [2, 0], k: (n: number) => (2 * n * Math.PI) / L, shape: (x: number, y: number, kx: number, ky: number) => Math.sin(kx * x + 0.4) * Math.cos(ky * y) },
    { walls: 'sealed' as const, dims: 2 as const, n: [2, 1], k: (n: number) => (n * Math.PI) / L, shape: (x: number, y: number, kx: number, ky: number) => Math.cos(kx * x) * Math.cos(ky * y) },
    { walls: 'periodic' as const, dims: 2 as const, n: [1, 3], k: (n: number) => (2 * n * Math.PI) / L, shape: (x: number, y: number, kx: number, ky: number) => Math.cos(kx * x) * Math.sin(ky * y + 1) },
  ];
  for (const c of cases) {
    it(`${c.dims}D ${c.walls}: mode (${c.n.join(', ')}) decays as exp(−D k² t)`, () => {
      const mix = mixture([chemical('inert', 1e-9)], [species('bead', D, rho0, [])], c.walls, L);
      const kx = c.k(c.n[0]!);
      const ky = c.k(c.n[1]!);
      const k2 = kx * kx + ky * ky;
      const duration = 1.5 / (D * k2); // down to e^-1.5 of the start
      const points = c.dims === 1 ? 64 : 32;
      const r = simulate(mix, { dims: c.dims, points, duration, frames: 4, initial: (_m, x, y) => rho0 * (1 + amp * c.shape(x, y, kx, ky)) });
      const h = L / points;
      for (let f = 1; f < r.frames.times.length; f++) {
        const t = r.frames.times[f]!;
        const decay = Math.exp(-D * k2 * t);
        let worst = 0;
        const data = r.frames.data[f]!;
        for (let i = 0; i < data.length; i++) {
          const x = ((i % points) + 0.5) * h;
          const y = (Math.floor(i / points) + 0.5) * h;
          const exact = amp * decay * c.shape(x, y, kx, ky);
          // the fluctuation ρ/ρ⁰ − 1 against the exact one
          worst = Math.max(worst, Math.abs(data[i]! / rho0 - 1 - exact));
        }
        // Float32 frames carry ~6e-8 relative on ρ; the decay itself must be right to 1e-6 of the amplitude
        expect(worst / (amp * decay)).toBeLessThan(1e-6);
      }
      expect(r.summary.conservation.maxRelativeError).toBeLessThan(1e-12);
    });
  }
});

describe('conservation and positivity past onset', () => {
  it('keeps each species’ number to 1e-10 and every density ≥ 0 over 12 growth times of clustering', () => {
    const mix = parseMixture(JSON.parse(readFileSync('seeds/examples/stationary-janus-clusters.json', 'utf8')));
    const r = simulate(mix, { dims: 1, points: 128, duration: 12 / 0.0017046887 });
    expect(r.summary.run.completed).toBe(true);
    expect(r.summary.conservation.maxRelativeError).toBeLessThan(1e-10);
    expect(r.summary.run.minRelativeDensity).toBeGreaterThanOrEqual(0);
    for (const d of r.frames.data) for (const v of d) expect(v >= 0).toBe(true);
    // it did go past onset: somewhere the density is more than twice the mean at the end
    const last = r.frames.data[r.frames.data.length - 1]!;
    expect(Math.max(...last) / mix.species[0]!.density).toBeGreaterThan(2);
    console.log('conservation', r.summary.conservation.maxRelativeError, 'steps', r.summary.run.steps, 'repairs', r.summary.run.positivityRepairs, r.summary.run.largestRepair);
  });
});
