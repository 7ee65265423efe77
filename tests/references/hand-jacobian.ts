/**
 * J(k) written out by hand from the field equations, for the reference tests.
 *
 * Straight from docs/model.md §2–3, in SI, with none of the engine's code
 * (no scaling, no chemical dropping, no assembly shared with server/engine/):
 *
 *   particles  ∂ρ_m/∂t = ∇·(D_m ∇ρ_m + ρ_m Σ_s μ_ms ∇c_s)
 *   chemicals  ∂c_s/∂t = D_s ∇²c_s − κ_s c_s + Σ_m α_ms(c) ρ_m
 *
 * Linearised about (ρ⁰, c⁰) with modes exp(ikx + λt) and quasi-static chemicals:
 *
 *   δc = G αᵀ δρ,   G = (k² diag(D_s) + R)⁻¹,   R_st = ∂/∂c_t [κ_s c_s − Σ_m α_ms(c) ρ_m⁰]
 *   J(k) = −k² [𝔇 + diag(ρ⁰) μ G αᵀ]
 *
 * A saturating coupling of m on fuel f (product p, yield y) turns over
 * A(c_f) = V c_f/(K + c_f): α_mf = −A, α_mp = +y A, and its slope
 * ∂A/∂c_f = V K/(K + c_f)² (the derivative of V c/(K + c), by hand) times ρ_m⁰
 * adds to R_ff and, times y, subtracts from R_pf. Crowding replaces diag(D_m) by
 * 𝔇_mn = D_m(δ_mn + 2ρ_m⁰ B_mn), B_mn = (2π/3)(a_m + a_n)³.
 *
 * The eigenvalues are taken with ml-matrix directly (an independent library
 * call, not the engine's wrapper).
 */
import { EigenvalueDecomposition, Matrix, inverse } from 'ml-matrix';
import type { Mixture } from '../../server/engine/types.js';

export interface HandLinearisation {
  /** α_ms at c⁰ (M×S), mol s⁻¹ */
  alpha: number[][];
  /** μ_ms (M×S) */
  mu: number[][];
  /** R (S×S), s⁻¹ */
  R: number[][];
}

export function handLinearise(mix: Mixture): HandLinearisation {
  const S = mix.chemicals.length;
  const index = new Map(mix.chemicals.map((c, i) => [c.id, i] as const));
  const alpha = mix.species.map(() => new Array<number>(S).fill(0));
  const mu = mix.species.map(() => new Array<number>(S).fill(0));
  const R = mix.chemicals.map((c, s) => mix.chemicals.map((_, t) => (s === t ? c.lossRate : 0)));
  mix.species.forEach((sp, m) => {
    for (const cp of sp.couplings) {
      const f = index.get(cp.chemical)!;
      mu[m]![f]! += cp.mobility;
      const a = cp.activity;
      if (a === null) continue;
      if (a.kind === 'constant') {
        alpha[m]![f]! += a.rate;
        continue;
      }
      const c = mix.chemicals[f]!.concentration;
      const turnover = (a.maxRate * c) / (a.michaelis + c);
      const slope = (a.maxRate * a.michaelis) / (a.michaelis + c) ** 2;
      const y = a.productYield ?? 1;
      alpha[m]![f]! -= turnover;
      R[f]![f]! += sp.density * slope;
      if (a.product !== null) {
        const p = index.get(a.product)!;
        alpha[m]![p]! += y * turnover;
        R[p]![f]! -= y * sp.density * slope;
      }
    }
  });
  return { alpha, mu, R };
}

/** J(k) in SI (1/s) as rows, by hand. k in 1/m, > 0. */
export function handJacobian(mix: Mixture, k: number): number[][] {
  const { alpha, mu, R } = handLinearise(mix);
  const M = mix.species.length;
  const S = mix.chemicals.length;
  const k2 = k * k;
  const J = mix.species.map((sm, m) =>
    mix.species.map((sn, n) => {
      let d = m === n ? 1 : 0;
      if (mix.crowding) d += 2 * sm.density * ((2 * Math.PI) / 3) * (sm.radius + sn.radius) ** 3;
      return -k2 * sm.diffusivity * d;
    }),
  );
  if (S === 0) return J;
  const A = new Matrix(R.map((row, s) => row.map((x, t) => x + (s === t ? k2 * mix.chemicals[s]!.diffusivity : 0))));
  const G = inverse(A).to2DArray();
  for (let m = 0; m < M; m++) {
    const rho = mix.species[m]!.density;
    for (let n = 0; n < M; n++) {
      let acc = 0;
      for (let s = 0; s < S; s++) for (let t = 0; t < S; t++) acc += mu[m]![s]! * G[s]![t]! * alpha[n]![t]!;
      J[m]![n]! -= k2 * rho * acc;
    }
  }
  return J;
}

/** Eigenvalues of a matrix given as rows, by ml-matrix directly, sorted by decreasing real part. */
export function libraryEigenvalues(J: number[][]): { re: number; im: number }[] {
  const e = new EigenvalueDecomposition(new Matrix(J));
  return e.realEigenvalues.map((re, i) => ({ re, im: e.imaginaryEigenvalues[i]! })).sort((a, b) => b.re - a.re || b.im - a.im);
}

/** max Re λ of the hand-built J(k). */
export function handGrowth(mix: Mixture, k: number): number {
  return libraryEigenvalues(handJacobian(mix, k))[0]!.re;
}

/** ‖J‖_∞ (largest absolute row sum): the rounding scale of its eigenvalues. */
export function rowNorm(J: number[][]): number {
  return Math.max(...J.map((row) => row.reduce((s, x) => s + Math.abs(x), 0)));
}
