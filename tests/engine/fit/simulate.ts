/**
 * Seeded Brownian and active Brownian trajectories for the MSD fit tests, and
 * the MSD computed from them (positions, not the formula). Euler–Maruyama:
 *   x ← x + v u dt + √(2 D dt) ξ,   orientation by rotational diffusion D_r = 1/τ
 * (2D: θ ← θ + √(2 D_r dt) ξ; 3D: u ← normalise(u + √(2 D_r dt) (ξ − (ξ·u)u)) ).
 */
import { Random } from '../../../server/engine/random.js';

export interface Sim {
  dims: 2 | 3;
  D: number;
  v: number;
  tau: number;
  dt: number;
  particles: number;
  seed: number;
  /** project 3D motion on x–y (a swimmer seen in a focal plane) */
  project?: boolean;
  /** localisation error, sd per coordinate (m) */
  noise?: number;
}

/**
 * Ensemble MSD at lags k·dt (k in lags). Every lag gets its own, fresh
 * particles, so the points are statistically independent and the standard
 * error of each MSD (sd of r²/√N) is a valid weight: the fit's standard errors
 * then measure the simulation's own scatter.
 */
export function simulateMsd(s: Sim, lags: number[]): { lag: number[]; msd: number[]; sd: number[] } {
  const rng = new Random(s.seed);
  const sums = lags.map(() => 0);
  const sq = lags.map(() => 0);
  const obsDims = s.project ? 2 : s.dims;
  for (const [i, maxK] of lags.entries()) for (let p = 0; p < s.particles; p++) {
    const x = [0, 0, 0];
    let theta = 2 * Math.PI * rng.uniform();
    let u = s.dims === 3 ? randomUnit(rng) : [Math.cos(theta), Math.sin(theta), 0];
    const noisy = (a: number) => a + (s.noise ? s.noise * rng.normal() : 0);
    const x0 = [noisy(0), noisy(0), noisy(0)];
    const kt = Math.sqrt(2 * s.D * s.dt);
    const kr = Math.sqrt((2 * s.dt) / s.tau);
    for (let k = 1; k <= maxK; k++) {
      for (let d = 0; d < s.dims; d++) x[d] = x[d]! + s.v * u[d]! * s.dt + kt * rng.normal();
      if (s.dims === 2) {
        theta += kr * rng.normal();
        u = [Math.cos(theta), Math.sin(theta), 0];
      } else {
        const xi = [rng.normal(), rng.normal(), rng.normal()];
        const dot = xi[0]! * u[0]! + xi[1]! * u[1]! + xi[2]! * u[2]!;
        const nu = u.map((c, i) => c + kr * (xi[i]! - dot * c));
        const norm = Math.hypot(nu[0]!, nu[1]!, nu[2]!);
        u = nu.map((c) => c / norm);
      }
      if (k === maxK) {
        let r2 = 0;
        for (let d = 0; d < obsDims; d++) r2 += (noisy(x[d]!) - x0[d]!) ** 2;
        sums[i]! += r2;
        sq[i]! += r2 * r2;
      }
    }
  }
  const n = s.particles;
  const msd = sums.map((v) => v / n);
  const sd = sums.map((v, i) => Math.sqrt(Math.max(sq[i]! / n - (v / n) ** 2, 0) / n));
  return { lag: lags.map((k) => k * s.dt), msd, sd };
}

function randomUnit(rng: Random): number[] {
  const v = [rng.normal(), rng.normal(), rng.normal()];
  const n = Math.hypot(v[0]!, v[1]!, v[2]!);
  return v.map((c) => c / n);
}
