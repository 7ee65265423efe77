/**
 * Time stepping (docs/model.md §15): exponential time differencing of first
 * order (ETD1, Cox & Matthews, J. Comput. Phys. 176 (2002) 430–455) — the
 * diffusion D̃_m ∇² is integrated exactly in Fourier space, the drift N_m
 * explicitly —
 *
 *     ρ̂(t + h) = e^{−D̃ k² h} ρ̂(t) + h φ₁(−D̃ k² h) N̂(ρ(t)),   φ₁(z) = (e^z − 1)/z,
 *
 * with the step size chosen by step doubling (Hairer, Nørsett & Wanner, Solving
 * Ordinary Differential Equations I, 2nd ed., §II.4): one step of h and two of
 * h/2; their difference estimates the local error, the step is accepted when
 * it is below the tolerance and the locally extrapolated 2y_{h/2} − y_h (second
 * order) is kept when it is non-negative, else y_{h/2}. Negative densities:
 * those within rounding (above −10⁻⁹ of the mean) are cut off; a step whose two
 * half steps leave clearly less negative mass than the full step is retried with
 * a quarter of the step (the step was too long); otherwise the negative part is
 * the grid's resolution (Gibbs ringing at a sharp cluster edge): it is cut off
 * and the rest rescaled so the total is unchanged, counted in `positivityRepairs`. The k = 0 mode is untouched by N, so every
 * species' total is conserved to rounding.
 */
import type { SpectralField } from './field.js';

export interface StepStats {
  accepted: number;
  rejected: number;
  positivityRepairs: number;
  /** largest share of a species' total moved by one repair */
  largestRepair: number;
}

export class Integrator {
  readonly rho: Float64Array[];
  private readonly rRe: Float64Array[];
  private readonly rIm: Float64Array[];
  private readonly nRe: Float64Array[];
  private readonly nIm: Float64Array[];
  private readonly cRe: Float64Array[];
  private readonly cIm: Float64Array[];
  private readonly hRe: Float64Array[];
  private readonly hIm: Float64Array[];
  private readonly yFull: Float64Array[];
  private readonly yHalf: Float64Array[];
  private readonly sRe: Float64Array[];
  private readonly sIm: Float64Array[];
  private readonly y2: Float64Array[];
  private readonly re: Float64Array;
  private readonly im: Float64Array;
  /** whether rRe/nRe hold the spectra of the current rho */
  private fresh = false;
  readonly stats: StepStats = { accepted: 0, rejected: 0, positivityRepairs: 0, largestRepair: 0 };
  readonly mean: Float64Array;

  constructor(
    readonly field: SpectralField,
    initial: Float64Array[],
    /** relative tolerance on the local error, measured against each species' fluctuation */
    readonly tolerance: number,
  ) {
    const { N, S, size } = field;
    if (initial.length !== N) throw new Error(`the integrator needs ${N} starting fields, got ${initial.length}`);
    const mk = (n: number) => Array.from({ length: n }, () => new Float64Array(size));
    this.rho = initial.map((v) => Float64Array.from(v));
    this.rRe = mk(N);
    this.rIm = mk(N);
    this.nRe = mk(N);
    this.nIm = mk(N);
    this.hRe = mk(N);
    this.hIm = mk(N);
    this.cRe = mk(S);
    this.cIm = mk(S);
    this.yFull = mk(N);
    this.yHalf = mk(N);
    this.sRe = mk(N);
    this.sIm = mk(N);
    this.y2 = mk(N);
    this.re = new Float64Array(size);
    this.im = new Float64Array(size);
    this.mean = Float64Array.from(this.rho.map((r) => r.reduce((a, b) => a + b, 0) / size));
  }

  /** Spectra of the current state (ρ̂_m), for the reports. */
  spectra(): { re: Float64Array[]; im: Float64Array[] } {
    this.evaluate();
    return { re: this.rRe, im: this.rIm };
  }

  private evaluate(): void {
    if (this.fresh) return;
    this.field.explicit(this.rho, this.rRe, this.rIm, this.nRe, this.nIm, this.cRe, this.cIm);
    this.fresh = true;
  }

  /** One ETD1 step of size h from spectra (sRe, sIm) with explicit part (nRe, nIm), into real fields out. */
  private etd(sRe: Float64Array[], sIm: Float64Array[], nRe: Float64Array[], nIm: Float64Array[], h: number, out: Float64Array[]): void {
    const f = this.field;
    const re = this.re;
    const im = this.im;
    for (let a = 0; a < f.N; a++) {
      const D = f.dImplicit[a]!;
      const kappa = f.decay[a]!;
      const sr = sRe[a]!;
      const si = sIm[a]!;
      const nr = nRe[a]!;
      const ni = nIm[a]!;
      for (let i = 0; i < f.size; i++) {
        const z = (D * f.k2[i]! + kappa) * h;
        const e = Math.exp(-z);
        const phi = z === 0 ? h : (-Math.expm1(-z) / z) * h;
        re[i] = e * sr[i]! + phi * nr[i]!;
        im[i] = e * si[i]! + phi * ni[i]!;
      }
      f.inverseReal(re, im, out[a]!);
      f.symmetrise(out[a]!);
    }
  }

  /**
   * Try one step of size h. Returns the error ratio (≤ 1 accepted) and whether the step was taken.
   * `floor` is the step below which a negative density is repaired instead of retried.
   */
  tryStep(h: number, floor: number): { taken: boolean; err: number; negative: boolean } {
    const f = this.field;
    this.evaluate();
    this.etd(this.rRe, this.rIm, this.nRe, this.nIm, h, this.yFull);
    this.etd(this.rRe, this.rIm, this.nRe, this.nIm, h / 2, this.yHalf);
    // explicit part at the half step
    const save = this.rho;
    const hRho = this.yHalf;
    const tmpNRe = this.hRe;
    const tmpNIm = this.hIm;
    const sRe = this.sRe;
    const sIm = this.sIm;
    f.explicit(hRho, sRe, sIm, tmpNRe, tmpNIm, this.cRe, this.cIm);
    const y2 = this.y2;
    this.etd(sRe, sIm, tmpNRe, tmpNIm, h / 2, y2);
    // error: max over evolved fields of |y2 − y1| against tol × the field's fluctuation about its starting mean (floor
    // 1e-8 of that mean; a dynamic chemical with a zero mean: of its largest value)
    let err = 0;
    for (let a = 0; a < f.N; a++) {
      const mean = this.mean[a]!;
      const y1 = this.yFull[a]!;
      const yb = y2[a]!;
      let diff = 0;
      let fluct = 0;
      let largest = 0;
      for (let i = 0; i < f.size; i++) {
        diff = Math.max(diff, Math.abs(yb[i]! - y1[i]!));
        fluct = Math.max(fluct, Math.abs(yb[i]! - mean));
        largest = Math.max(largest, Math.abs(yb[i]!));
      }
      const scale = a < f.M ? mean : Math.max(Math.abs(mean), largest);
      if (scale === 0) continue;
      err = Math.max(err, diff / (this.tolerance * Math.max(fluct, 1e-8 * scale)));
    }
    if (!(err <= 1)) {
      this.stats.rejected++;
      return { taken: false, err: Number.isFinite(err) ? err : 1e6, negative: false };
    }
    // negative densities: rounding-level ones (≥ −1e-9 of the mean) are cut off; larger ones are a too-long step when
    // the two half steps make clearly less of them than the full step (retry with h/4), else the grid's resolution
    // (cut off and rescaled, counted as a repair)
    let negFull = 0;
    let negHalf = 0;
    let negExtrap = false;
    let beyondRounding = false;
    for (let a = 0; a < f.M; a++) {
      const y1 = this.yFull[a]!;
      const yb = y2[a]!;
      const tiny = -1e-9 * this.mean[a]!;
      for (let i = 0; i < f.size; i++) {
        if (y1[i]! < 0) negFull -= y1[i]!;
        if (yb[i]! < 0) {
          negHalf -= yb[i]!;
          if (yb[i]! < tiny) beyondRounding = true;
        }
        if (2 * yb[i]! - y1[i]! < 0) negExtrap = true;
      }
    }
    if (beyondRounding && h > floor && negHalf < 0.5 * negFull) {
      this.stats.rejected++;
      return { taken: false, err, negative: true };
    }
    for (let a = 0; a < f.N; a++) {
      const y1 = this.yFull[a]!;
      const yb = y2[a]!;
      if (!negExtrap) for (let i = 0; i < f.size; i++) yb[i] = 2 * yb[i]! - y1[i]!;
      if (a < f.M && negHalf > 0) this.repair(yb, beyondRounding);
    }
    for (let a = 0; a < f.N; a++) save[a]!.set(y2[a]!);
    this.fresh = false;
    this.stats.accepted++;
    return { taken: true, err, negative: negHalf > 0 };
  }

  /** Cut negative densities to 0 and rescale the rest so the total is unchanged. */
  private repair(v: Float64Array, count: boolean): void {
    let total = 0;
    let neg = 0;
    for (let i = 0; i < v.length; i++) {
      total += v[i]!;
      if (v[i]! < 0) neg -= v[i]!;
    }
    if (neg === 0) return;
    const pos = total + neg;
    const s = total / pos;
    for (let i = 0; i < v.length; i++) v[i] = v[i]! < 0 ? 0 : v[i]! * s;
    if (!count) return;
    this.stats.positivityRepairs++;
    this.stats.largestRepair = Math.max(this.stats.largestRepair, neg / Math.max(total, 1e-300));
  }
}
