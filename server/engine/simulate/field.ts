/**
 * The nonlinear model of docs/model.md §14 on a spectral grid: the particle
 * densities ρ_m(x, t) in real space, the quasi-static chemical fields solved
 * exactly in Fourier space at every evaluation, and the explicit part of the
 * particle equation in conservative flux form,
 *
 *     ∂ρ_m/∂t = D̃_m ∇²ρ_m + N_m(ρ),
 *     N_m = ∇·( ρ_m [ f(φ) Σ_s μ_ms ∇c_s + D_m Σ_n 2 B_mn ∇ρ_n ] ) − (D̃_m − D_m) ∇²ρ_m,
 *
 * with D̃_m = D_m (1 + 2 ρ⁰_m B_mm) under crowding (else D_m), treated exactly
 * (integrating factor) in Fourier space, and the volume-filling factor
 * f(φ) = max(0, (φ_max − φ)/(φ_max − φ⁰)) (Painter & Hillen 2002, normalised to 1
 * at the uniform state so the linearisation is the linear engine's J(k)).
 *
 * Sealed (no-flux) walls: the field lives on the even (mirror) extension of the
 * chamber, 2n cells per axis, whose Fourier modes are the cosines cos(nπx/L) of
 * the sealed chamber; periodic walls: the chamber itself. The unbounded chamber is
 * simulated as a periodic box (index.ts chooses its length and says so).
 */
import { linearise, secondVirial } from '../model.js';
import { sphereVolume } from '../checks.js';
import type { Mixture } from '../types.js';
import { FFTGrid } from './fft.js';

export interface GridSpec {
  dims: 1 | 2;
  /** cells per axis in the chamber */
  points: number;
  /** chamber side, m */
  length: number;
  /** true: sealed (mirror extension); false: periodic */
  mirror: boolean;
  /** the chemical fields evolve in time (∂c/∂t = D∇²c − κc + sources) instead of being solved quasi-statically */
  dynamic?: boolean;
}

interface Saturating {
  m: number;
  fuel: number;
  product: number | null;
  maxRate: number;
  michaelis: number;
  yield: number;
}

export class SpectralField {
  readonly M: number;
  readonly S: number;
  /** fields evolved in time: the M particle densities, then (dynamic chemicals) the S chemical fields */
  readonly N: number;
  readonly dynamic: boolean;
  /** per evolved field: the implicit linear rate is dImplicit k² + decay (decay = κ_s for a dynamic chemical, else 0) */
  readonly decay: Float64Array;
  /** computational cells per axis (2·points when mirrored) */
  readonly nx: number;
  readonly ny: number;
  readonly size: number;
  readonly fft: FFTGrid;
  /** derivative wavenumbers (Nyquist set to 0), per computational cell */
  readonly dkx: Float64Array;
  readonly dky: Float64Array;
  /** |k|² per computational cell */
  readonly k2: Float64Array;
  /** mode index along each axis (signed), per computational cell */
  readonly jx: Int32Array;
  readonly jy: Int32Array;
  /** wavenumber of one index step, 1/m (π/L sealed, 2π/L periodic) */
  readonly dk: number;
  readonly cellSize: number;
  readonly rho0: Float64Array;
  /** implicit diffusivity per evolved field: D̃_m for particles, D_s for dynamic chemicals */
  readonly dImplicit: Float64Array;
  readonly dSpecies: Float64Array;
  readonly volume: Float64Array;
  readonly phi0: number;
  readonly phiMax: number;
  readonly crowding: boolean;
  /** 2 B_mn (M×M) */
  readonly twoB: Float64Array;
  /** kept chemicals: index into mix.chemicals */
  readonly chem: number[];
  readonly chemIds: string[];
  readonly dChem: Float64Array;
  readonly kappa: Float64Array;
  readonly c0: Float64Array;
  /** constant activities α_ms (M×S kept) */
  readonly alphaConst: Float64Array;
  /** mobilities μ_ms (M×S kept) */
  readonly mu: Float64Array;
  /** uniform supply σ_s = κ_s c⁰_s − Σ_m α_ms(c⁰) ρ⁰_m that keeps the uniform state steady */
  readonly sigma: Float64Array;
  readonly saturating: Saturating[];
  /** real-space chemical fields, kept between calls as the start of the next iteration */
  readonly c: Float64Array[];
  /** worst chemistry iteration count (at most the 2,000 allowed) and how many solves did not converge */
  chemIterationsMax = 0;
  chemUnconverged = 0;

  // scratch
  private readonly re: Float64Array;
  private readonly im: Float64Array;
  private readonly gx: Float64Array[];
  private readonly gy: Float64Array[];
  private readonly rx: Float64Array[];
  private readonly ry: Float64Array[];
  private readonly f: Float64Array;
  private readonly fluxX: Float64Array;
  private readonly fluxY: Float64Array;

  constructor(
    mix: Mixture,
    readonly grid: GridSpec,
    phiMax: number,
  ) {
    const M = mix.species.length;
    this.M = M;
    const m = grid.mirror ? 2 : 1;
    this.nx = grid.points * m;
    this.ny = grid.dims === 2 ? grid.points * m : 1;
    this.size = this.nx * this.ny;
    this.fft = new FFTGrid(this.nx, this.ny);
    this.cellSize = grid.length / grid.points;
    const Lc = grid.length * m;
    this.dk = (2 * Math.PI) / Lc;
    this.dkx = new Float64Array(this.size);
    this.dky = new Float64Array(this.size);
    this.k2 = new Float64Array(this.size);
    this.jx = new Int32Array(this.size);
    this.jy = new Int32Array(this.size);
    for (let y = 0; y < this.ny; y++) {
      const jy = y <= this.ny / 2 ? y : y - this.ny;
      for (let x = 0; x < this.nx; x++) {
        const jx = x <= this.nx / 2 ? x : x - this.nx;
        const i = y * this.nx + x;
        const kx = this.dk * jx;
        const ky = this.dk * jy;
        this.jx[i] = jx;
        this.jy[i] = jy;
        this.k2[i] = kx * kx + ky * ky;
        this.dkx[i] = this.nx > 1 && x === this.nx / 2 ? 0 : kx;
        this.dky[i] = this.ny > 1 && y === this.ny / 2 ? 0 : ky;
      }
    }

    this.rho0 = Float64Array.from(mix.species.map((s) => s.density));
    this.dSpecies = Float64Array.from(mix.species.map((s) => s.diffusivity));
    this.volume = Float64Array.from(mix.species.map((s) => sphereVolume(s.radius)));
    this.phi0 = mix.species.reduce((a, s, i) => a + s.density * this.volume[i]!, 0);
    this.phiMax = phiMax;
    this.crowding = mix.crowding;
    this.twoB = new Float64Array(M * M);
    const dImplicit: number[] = [];
    for (let a = 0; a < M; a++) {
      for (let b = 0; b < M; b++) this.twoB[a * M + b] = mix.crowding ? 2 * secondVirial(mix.species[a]!.radius, mix.species[b]!.radius) : 0;
      dImplicit.push(this.dSpecies[a]! * (1 + this.rho0[a]! * this.twoB[a * M + a]!));
    }

    // the chemicals the linear engine keeps (model.ts buildModel): those that move a particle, and fuels
    const Sf = mix.chemicals.length;
    const full = linearise(mix);
    const fuels = new Set<string>();
    for (const sp of mix.species) for (const cp of sp.couplings) if (cp.activity?.kind === 'saturating') fuels.add(cp.chemical);
    this.chem = [];
    for (let s = 0; s < Sf; s++) {
      let moves = false;
      for (let a = 0; a < M; a++) if (full.mu[a * Sf + s] !== 0) moves = true;
      if (moves || fuels.has(mix.chemicals[s]!.id)) this.chem.push(s);
    }
    const S = this.chem.length;
    this.S = S;
    const keptIndex = new Map(this.chem.map((sf, s) => [sf, s] as const));
    const idx = new Map(mix.chemicals.map((c, i) => [c.id, i] as const));
    this.chemIds = this.chem.map((s) => mix.chemicals[s]!.id);
    this.dChem = Float64Array.from(this.chem.map((s) => mix.chemicals[s]!.diffusivity));
    this.kappa = Float64Array.from(this.chem.map((s) => mix.chemicals[s]!.lossRate));
    this.c0 = Float64Array.from(this.chem.map((s) => mix.chemicals[s]!.concentration));
    this.alphaConst = new Float64Array(M * S);
    this.mu = new Float64Array(M * S);
    this.saturating = [];
    mix.species.forEach((sp, a) => {
      for (const cp of sp.couplings) {
        const sf = idx.get(cp.chemical)!;
        const s = keptIndex.get(sf);
        if (s !== undefined) this.mu[a * S + s]! += cp.mobility;
        const act = cp.activity;
        if (act === null) continue;
        if (act.kind === 'constant') {
          if (s !== undefined) this.alphaConst[a * S + s]! += act.rate;
        } else if (s !== undefined) {
          const p = act.product === null ? undefined : keptIndex.get(idx.get(act.product)!);
          this.saturating.push({ m: a, fuel: s, product: p ?? null, maxRate: act.maxRate, michaelis: act.michaelis, yield: act.productYield ?? 1 });
        }
      }
    });
    // σ_s: −(net production at the uniform state) + κ c⁰ (the uniform state is a steady state, as in §3)
    this.sigma = new Float64Array(S);
    for (let s = 0; s < S; s++) {
      let net = 0;
      for (let a = 0; a < M; a++) net += this.alphaConst[a * S + s]! * this.rho0[a]!;
      this.sigma[s] = this.kappa[s]! * this.c0[s]! - net;
    }
    for (const q of this.saturating) {
      const cf = this.c0[q.fuel]!;
      const rate = (q.maxRate * cf) / (q.michaelis + cf);
      this.sigma[q.fuel]! += rate * this.rho0[q.m]!;
      if (q.product !== null) this.sigma[q.product]! -= q.yield * rate * this.rho0[q.m]!;
    }

    this.dynamic = grid.dynamic === true && S > 0;
    this.N = M + (this.dynamic ? S : 0);
    this.dImplicit = Float64Array.from(this.dynamic ? [...dImplicit, ...this.dChem] : dImplicit);
    this.decay = Float64Array.from({ length: this.N }, (_, a) => (a < M ? 0 : this.kappa[a - M]!));
    this.c = Array.from({ length: S }, (_, s) => new Float64Array(this.size).fill(this.c0[s]!));
    this.re = new Float64Array(this.size);
    this.im = new Float64Array(this.size);
    this.gx = Array.from({ length: S }, () => new Float64Array(this.size));
    this.gy = Array.from({ length: S }, () => new Float64Array(grid.dims === 2 ? this.size : 0));
    this.rx = Array.from({ length: mix.crowding ? M : 0 }, () => new Float64Array(this.size));
    this.ry = Array.from({ length: mix.crowding && grid.dims === 2 ? M : 0 }, () => new Float64Array(this.size));
    this.f = new Float64Array(this.size);
    this.fluxX = new Float64Array(this.size);
    this.fluxY = new Float64Array(grid.dims === 2 ? this.size : 0);
  }

  /** Forward transform of a real field into (re, im). */
  forward(x: Float64Array, re: Float64Array, im: Float64Array): void {
    re.set(x);
    im.fill(0);
    this.fft.transform(re, im, false);
  }

  /** Inverse transform of (re, im), keeping the real part in out (re, im are destroyed). */
  inverseReal(re: Float64Array, im: Float64Array, out: Float64Array): void {
    this.fft.transform(re, im, true);
    out.set(re);
  }

  /** Derivative of a spectrum along an axis, into a real field. */
  private derivative(sr: Float64Array, si: Float64Array, axis: 0 | 1, out: Float64Array): void {
    const dk = axis === 0 ? this.dkx : this.dky;
    const re = this.re;
    const im = this.im;
    for (let i = 0; i < this.size; i++) {
      // i k (a + i b) = −k b + i k a
      re[i] = -dk[i]! * si[i]!;
      im[i] = dk[i]! * sr[i]!;
    }
    this.inverseReal(re, im, out);
  }

  /**
   * Solve the quasi-static chemical fields for densities rho (real space) and
   * leave ∇c_s in gx, gy. Constant activities: one exact Fourier solve per
   * chemical. Saturating kinetics: the fixed point
   *   (D_s k² + κ_s + w̄_s) ĉ_s ← FFT[ F_s(c) + w̄_s c_s ],  w̄_s = max_x w_s(x),
   * with w_s the local turnover slope Σ ρ_m V_m K_m/(K_m + c_s)², which contracts
   * because 0 ≤ w̄_s − w_s ≤ w̄_s < κ_s + w̄_s + D_s k² (docs/model.md §14).
   */
  solveChemistry(rho: Float64Array[], chemRe: Float64Array[], chemIm: Float64Array[]): void {
    const { S, M, size } = this;
    if (S === 0) return;
    const src = this.f;
    const nonlinear = this.saturating.length > 0;
    const maxIter = nonlinear ? 2000 : 1;
    let iter = 0;
    for (; iter < maxIter; iter++) {
      let change = 0;
      let scale = 0;
      for (let s = 0; s < S; s++) {
        const cs = this.c[s]!;
        for (let i = 0; i < size; i++) src[i] = this.sigma[s]!;
        for (let a = 0; a < M; a++) {
          const al = this.alphaConst[a * S + s]!;
          if (al === 0) continue;
          const r = rho[a]!;
          for (let i = 0; i < size; i++) src[i]! += al * r[i]!;
        }
        let wbar = 0;
        for (const q of this.saturating) {
          if (q.fuel === s) {
            const r = rho[q.m]!;
            for (let i = 0; i < size; i++) {
              const cf = Math.max(cs[i]!, 0);
              const d = q.michaelis + cf;
              src[i]! -= (r[i]! * q.maxRate * cf) / d;
            }
          } else if (q.product === s) {
            const r = rho[q.m]!;
            const cfArr = this.c[q.fuel]!;
            for (let i = 0; i < size; i++) {
              const cf = Math.max(cfArr[i]!, 0);
              src[i]! += (q.yield * r[i]! * q.maxRate * cf) / (q.michaelis + cf);
            }
          }
        }
        if (nonlinear) {
          // the largest local slope of the fuel turnover (all couplings on this fuel together)
          const w = this.re;
          w.fill(0);
          for (const q of this.saturating) {
            if (q.fuel !== s) continue;
            const r = rho[q.m]!;
            for (let i = 0; i < size; i++) {
              const d = q.michaelis + Math.max(cs[i]!, 0);
              w[i]! += (r[i]! * q.maxRate * q.michaelis) / (d * d);
            }
          }
          for (let i = 0; i < size; i++) if (w[i]! > wbar) wbar = w[i]!;
          if (wbar > 0) for (let i = 0; i < size; i++) src[i]! += wbar * cs[i]!;
        }
        const re = chemRe[s]!;
        const im = chemIm[s]!;
        this.forward(src, re, im);
        const Ds = this.dChem[s]!;
        const shift = this.kappa[s]! + wbar;
        for (let i = 0; i < size; i++) {
          const den = Ds * this.k2[i]! + shift;
          if (den > 0) {
            re[i]! /= den;
            im[i]! /= den;
          } else {
            // k = 0 of a chemical without loss: its mean is not set by the particles (only gradients act); keep c⁰
            re[i] = this.c0[s]! * size;
            im[i] = 0;
          }
        }
        if (nonlinear) {
          this.re.set(re);
          this.im.set(im);
          this.fft.transform(this.re, this.im, true);
          for (let i = 0; i < size; i++) {
            const v = this.re[i]!;
            change = Math.max(change, Math.abs(v - cs[i]!));
            scale = Math.max(scale, Math.abs(v));
            cs[i] = v;
          }
        }
      }
      if (!nonlinear || change <= 1e-13 * scale) break;
    }
    if (nonlinear) {
      this.chemIterationsMax = Math.max(this.chemIterationsMax, Math.min(iter + 1, maxIter));
      if (iter >= maxIter) this.chemUnconverged++;
    }
    for (let s = 0; s < S; s++) {
      this.derivative(chemRe[s]!, chemIm[s]!, 0, this.gx[s]!);
      if (this.grid.dims === 2) this.derivative(chemRe[s]!, chemIm[s]!, 1, this.gy[s]!);
    }
  }

  /**
   * Dynamic chemicals (docs/model.md §14): the chemical fields are the evolved fields M … M+S−1 of
   * `state`. Their spectra go to (rRe, rIm)[M + s] and their explicit part — the sources
   * Σ_m α_ms(c) ρ_m + σ_s, saturating turnover evaluated in real space — to (nRe, nIm)[M + s]; the
   * implicit part D_s k² + κ_s is the integrator's. ∇c_s for the drift is taken from the spectrum.
   */
  private dynamicChemistry(state: Float64Array[], rRe: Float64Array[], rIm: Float64Array[], nRe: Float64Array[], nIm: Float64Array[]): void {
    const { M, S, size } = this;
    const src = this.f;
    for (let s = 0; s < S; s++) {
      const cs = state[M + s]!;
      this.c[s]!.set(cs);
      this.forward(cs, rRe[M + s]!, rIm[M + s]!);
    }
    for (let s = 0; s < S; s++) {
      src.fill(this.sigma[s]!);
      for (let a = 0; a < M; a++) {
        const al = this.alphaConst[a * S + s]!;
        if (al === 0) continue;
        const r = state[a]!;
        for (let i = 0; i < size; i++) src[i]! += al * r[i]!;
      }
      for (const q of this.saturating) {
        if (q.fuel !== s && q.product !== s) continue;
        const r = state[q.m]!;
        const cf = state[M + q.fuel]!;
        const sign = q.fuel === s ? -1 : q.yield;
        for (let i = 0; i < size; i++) {
          const c = Math.max(cf[i]!, 0);
          src[i]! += (sign * r[i]! * q.maxRate * c) / (q.michaelis + c);
        }
      }
      this.forward(src, nRe[M + s]!, nIm[M + s]!);
      this.derivative(rRe[M + s]!, rIm[M + s]!, 0, this.gx[s]!);
      if (this.grid.dims === 2) this.derivative(rRe[M + s]!, rIm[M + s]!, 1, this.gy[s]!);
    }
  }

  /** The quasi-static chemical fields of densities rho, in real space (the start of a dynamic run). */
  quasiStatic(rho: Float64Array[]): Float64Array[] {
    const re = Array.from({ length: this.S }, () => new Float64Array(this.size));
    const im = Array.from({ length: this.S }, () => new Float64Array(this.size));
    this.solveChemistry(rho, re, im);
    return re.map((r, s) => {
      const out = new Float64Array(this.size);
      const a = Float64Array.from(r);
      const b = Float64Array.from(im[s]!);
      this.inverseReal(a, b, out);
      this.symmetrise(out);
      return out;
    });
  }

  /**
   * The explicit part N̂_m in Fourier space (nRe, nIm), and ρ̂_m (rRe, rIm), at densities rho.
   * The k = 0 entry of N̂ is exactly 0 (a divergence, and k² = 0).
   */
  explicit(rho: Float64Array[], rRe: Float64Array[], rIm: Float64Array[], nRe: Float64Array[], nIm: Float64Array[], chemRe: Float64Array[], chemIm: Float64Array[]): void {
    const { M, S, size } = this;
    const two = this.grid.dims === 2;
    for (let a = 0; a < M; a++) this.forward(rho[a]!, rRe[a]!, rIm[a]!);
    if (this.dynamic) this.dynamicChemistry(rho, rRe, rIm, nRe, nIm);
    else this.solveChemistry(rho, chemRe, chemIm);
    // volume-filling factor
    const f = this.f;
    const span = this.phiMax - this.phi0;
    for (let i = 0; i < size; i++) {
      let phi = 0;
      for (let a = 0; a < M; a++) phi += this.volume[a]! * rho[a]![i]!;
      f[i] = Math.max(0, (this.phiMax - phi) / span);
    }
    if (this.crowding) {
      for (let a = 0; a < M; a++) {
        this.derivative(rRe[a]!, rIm[a]!, 0, this.rx[a]!);
        if (two) this.derivative(rRe[a]!, rIm[a]!, 1, this.ry[a]!);
      }
    }
    const fx = this.fluxX;
    const fy = two ? this.fluxY : null;
    for (let a = 0; a < M; a++) {
      const r = rho[a]!;
      const Dm = this.dSpecies[a]!;
      for (let i = 0; i < size; i++) {
        let vx = 0;
        let vy = 0;
        for (let s = 0; s < S; s++) {
          const mu = this.mu[a * S + s]!;
          if (mu === 0) continue;
          vx += mu * this.gx[s]![i]!;
          if (two) vy += mu * this.gy[s]![i]!;
        }
        vx *= f[i]!;
        vy *= f[i]!;
        if (this.crowding) {
          for (let b = 0; b < M; b++) {
            const c = Dm * this.twoB[a * M + b]!;
            vx += c * this.rx[b]![i]!;
            if (two) vy += c * this.ry[b]![i]!;
          }
        }
        fx[i] = r[i]! * vx;
        if (fy) fy[i] = r[i]! * vy;
      }
      const outRe = nRe[a]!;
      const outIm = nIm[a]!;
      // ∇·F = i kx F̂x + i ky F̂y
      this.forward(fx, this.re, this.im);
      for (let i = 0; i < size; i++) {
        outRe[i] = -this.dkx[i]! * this.im[i]!;
        outIm[i] = this.dkx[i]! * this.re[i]!;
      }
      if (fy) {
        this.forward(fy, this.re, this.im);
        for (let i = 0; i < size; i++) {
          outRe[i]! += -this.dky[i]! * this.im[i]!;
          outIm[i]! += this.dky[i]! * this.re[i]!;
        }
      }
      const extra = this.dImplicit[a]! - Dm;
      if (extra !== 0) {
        // the linear crowding diffusion moved into the implicit part is taken back out here
        const rr = rRe[a]!;
        const ri = rIm[a]!;
        for (let i = 0; i < size; i++) {
          outRe[i]! += extra * this.k2[i]! * rr[i]!;
          outIm[i]! += extra * this.k2[i]! * ri[i]!;
        }
      }
    }
  }

  /** Copy a chamber field (points^dims, x fastest) onto the computational grid (mirrored when sealed). */
  fromChamber(v: ArrayLike<number>, out: Float64Array): void {
    const n = this.grid.points;
    const ny = this.grid.dims === 2 ? n : 1;
    for (let y = 0; y < this.ny; y++) {
      const py = y < ny ? y : 2 * n - 1 - y;
      for (let x = 0; x < this.nx; x++) {
        const px = x < n ? x : 2 * n - 1 - x;
        out[y * this.nx + x] = v[py * n + px]!;
      }
    }
  }

  /** The chamber part of a computational field. */
  toChamber(v: Float64Array, out: Float64Array | Float32Array): void {
    const n = this.grid.points;
    const ny = this.grid.dims === 2 ? n : 1;
    for (let y = 0; y < ny; y++) for (let x = 0; x < n; x++) out[y * n + x] = v[y * this.nx + x]!;
  }

  /** Average the mirror images (sealed walls) so the field stays exactly even; keeps the total. */
  symmetrise(v: Float64Array): void {
    if (!this.grid.mirror) return;
    const n = this.grid.points;
    const nx = this.nx;
    if (this.grid.dims === 1) {
      for (let x = 0; x < n; x++) {
        const m = 0.5 * (v[x]! + v[2 * n - 1 - x]!);
        v[x] = m;
        v[2 * n - 1 - x] = m;
      }
      return;
    }
    for (let y = 0; y < n; y++) {
      for (let x = 0; x < n; x++) {
        const a = y * nx + x;
        const b = y * nx + (2 * n - 1 - x);
        const c = (2 * n - 1 - y) * nx + x;
        const d = (2 * n - 1 - y) * nx + (2 * n - 1 - x);
        const m = 0.25 * (v[a]! + v[b]! + v[c]! + v[d]!);
        v[a] = m;
        v[b] = m;
        v[c] = m;
        v[d] = m;
      }
    }
  }

  /** Σ over the chamber cells (Neumaier-compensated sum). */
  chamberSum(v: Float64Array): number {
    const n = this.grid.points;
    const ny = this.grid.dims === 2 ? n : 1;
    let s = 0;
    let comp = 0;
    for (let y = 0; y < ny; y++) {
      for (let x = 0; x < n; x++) {
        const t = v[y * this.nx + x]!;
        const u = s + t;
        comp += Math.abs(s) >= Math.abs(t) ? s - u + t : t - u + s;
        s = u;
      }
    }
    return s + comp;
  }
}
