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
  const kt = Math.sqrt(2 * s.D * s.dt);
  const kr = Math.sqrt((2 * s.dt) / s.tau);
  const vdt = s.v * s.dt;
  const noisy = (a: number) => a + (s.noise ? s.noise * rng.normal() : 0);
  // scalar state (no arrays in the inner loop); the same draws in the same order as the vector form
  for (const [i, maxK] of lags.entries()) for (let p = 0; p < s.particles; p++) {
    let x0 = 0;
    let x1 = 0;
    let x2 = 0;
    let theta = 2 * Math.PI * rng.uniform();
    let u0: number;
    let u1: number;
    let u2: number;
    if (s.dims === 3) [u0, u1, u2] = randomUnit(rng) as [number, number, number];
    else [u0, u1, u2] = [Math.cos(theta), Math.sin(theta), 0];
    const s0 = [noisy(0), noisy(0), noisy(0)];
    for (let k = 1; k <= maxK; k++) {
      x0 += vdt * u0 + kt * rng.normal();
      x1 += vdt * u1 + kt * rng.normal();
      if (s.dims === 3) x2 += vdt * u2 + kt * rng.normal();
      if (s.dims === 2) {
        theta += kr * rng.normal();
        u0 = Math.cos(theta);
        u1 = Math.sin(theta);
      } else {
        const a0 = rng.normal();
        const a1 = rng.normal();
        const a2 = rng.normal();
        const dot = a0 * u0 + a1 * u1 + a2 * u2;
        const n0 = u0 + kr * (a0 - dot * u0);
        const n1 = u1 + kr * (a1 - dot * u1);
        const n2 = u2 + kr * (a2 - dot * u2);
        const norm = Math.sqrt(n0 * n0 + n1 * n1 + n2 * n2);
        u0 = n0 / norm;
        u1 = n1 / norm;
        u2 = n2 / norm;
      }
    }
    const xs = [x0, x1, x2];
    let r2 = 0;
    for (let d = 0; d < obsDims; d++) r2 += (noisy(xs[d]!) - s0[d]!) ** 2;
    sums[i]! += r2;
    sq[i]! += r2 * r2;
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

export interface TrackSim {
  dims: 2 | 3;
  D: number;
  v: number;
  tau: number;
  /** frame interval (s) */
  dt: number;
  /** Euler substeps per frame (default 1) */
  substeps?: number;
  frames: number;
  tracks: number;
  seed: number;
}

/**
 * Seeded tracks sampled every `dt` (as a tracker exports them): per track the
 * positions at frames 0 … frames−1, same Euler–Maruyama scheme as above. The
 * MSD is then computed from these positions by the code under test.
 */
export function simulateTracks(s: TrackSim): { track: number; t: number; x: number[] }[][] {
  const rng = new Random(s.seed);
  const sub = s.substeps ?? 1;
  const h = s.dt / sub;
  const kt = Math.sqrt(2 * s.D * h);
  const kr = Math.sqrt((2 * h) / s.tau);
  const out: { track: number; t: number; x: number[] }[][] = [];
  for (let j = 0; j < s.tracks; j++) {
    const x = [0, 0, 0];
    let theta = 2 * Math.PI * rng.uniform();
    let u = s.dims === 3 ? randomUnit(rng) : [Math.cos(theta), Math.sin(theta), 0];
    const rows: { track: number; t: number; x: number[] }[] = [];
    for (let f = 0; f < s.frames; f++) {
      if (f > 0)
        for (let k = 0; k < sub; k++) {
          for (let d = 0; d < s.dims; d++) x[d] = x[d]! + s.v * u[d]! * h + kt * rng.normal();
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
        }
      rows.push({ track: j + 1, t: f * s.dt, x: x.slice(0, s.dims) });
    }
    out.push(rows);
  }
  return out;
}

/** Tracks as the CSV a tracker exports: `track, t [s], x [um], y [um]` (and `z [um]` in 3D). */
export function tracksCsv(tracks: { track: number; t: number; x: number[] }[][], dims: 2 | 3 = 2): string {
  const head = dims === 3 ? 'track,t [s],x [um],y [um],z [um]' : 'track,t [s],x [um],y [um]';
  const lines = tracks.flat().map((r) => [r.track, r.t.toPrecision(10), ...r.x.slice(0, dims).map((v) => (v * 1e6).toPrecision(10))].join(','));
  return head + '\n' + lines.join('\n') + '\n';
}

/** Time-averaged MSD of one track at lags 1 … maxLag frames (all overlapping windows), for a two-column CSV. */
export function timeAveragedMsd(rows: { x: number[] }[], maxLag: number): number[] {
  const out: number[] = [];
  for (let k = 1; k <= maxLag; k++) {
    let s = 0;
    for (let i = 0; i + k < rows.length; i++) for (let d = 0; d < rows[i]!.x.length; d++) s += (rows[i + k]!.x[d]! - rows[i]!.x[d]!) ** 2;
    out.push(s / (rows.length - k));
  }
  return out;
}
