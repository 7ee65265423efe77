/**
 * Proven upper bounds on Re λ of J'(k') without eigenvalues (docs/model.md §4,
 * "Bounds that skip a mode"). Scaled units throughout (model.ts).
 *
 * **Small gain.** J' = −k'²𝔇' − P'X with X = k'²G'Q'ᵀ and G' = (k'²D'_c + R')⁻¹.
 * For λ not an eigenvalue of −k'²𝔇', det(λI − J') = det(λI + k'²𝔇') ·
 * det(I_S + X (λI + k'²𝔇')⁻¹ P') (Weinstein–Aronszajn). On the half-plane
 * Re λ ≥ f, with k'²𝔇'_mm + f > 0:
 *
 *  - without crowding |λ + k'²D'_m| ≥ k'²D'_m + f, so entrywise
 *    |Q'ᵀ(λ + k'²𝔇')⁻¹P'|_st ≤ Σ_m |Q'_ms||P'_mt| / (k'²D'_m + f);
 *  - with crowding (𝔇' row-diagonally dominant, margin d_m = 𝔇'_mm − Σ_{n≠m}|𝔇'_mn| > 0)
 *    Varah's bound ‖(λ + k'²𝔇')⁻¹‖_∞ ≤ 1 / min_m (k'² d_m + f).
 *
 * So ‖X(λ + k'²𝔇')⁻¹P'‖_∞ ≤ ‖k'²G'‖_∞ · ‖A_f‖_∞ =: β(k', f), and β < 1 makes
 * I + X(λ + k'²𝔇')⁻¹P' invertible (a Neumann series): no eigenvalue has
 * Re λ ≥ f. The cost is O(M S + S³) per mode; J' is not formed.
 *
 * **Tails.** For every k' ≥ k₀ (k₀² > q = ‖D'_c⁻¹R'‖_∞), ‖k'²G'‖_∞ ≤
 * (1/min D'_c) / (1 − q/k₀²) (Neumann series), and each 1/(k'²D'_m + f) is
 * largest at k₀; so β(k₀) computed with those bounds proves the bound for the
 * whole tail k' ≥ k₀.
 *
 * **Rounding.** A bound is used only with a margin: a proof of Re λ < f is made
 * at f − η with η = 1e-8 · σ(k'), where σ(k') = k'² max|𝔇'_mn| + max_m Σ_s|P'_ms| ·
 * ‖k'²G'‖_∞ · max|Q'| bounds the largest entry of J' (the rounding scale the
 * scan uses) from above. The eigenvalues the general path computes are exact
 * for a matrix within a few ε‖J'‖ of J' (backward stability), far inside η.
 */
import { charPoly, charPolyScratch, hurwitzUnstable, type CharPolyScratch } from './linalg/charpoly.js';
import type { ScaledModel } from './model.js';

/** Relative margin (of σ, the bound on max |J'_ij|) by which a proof must clear its target. */
export const PROOF_MARGIN = 1e-8;

export class ModeBounds {
  readonly M: number;
  readonly S: number;
  /** Σ_s |P'_ms| */
  private readonly pRow: Float64Array;
  /** |Q'_ms| (M×S) */
  private readonly qAbs: Float64Array;
  private readonly pRowMax: number;
  private readonly qMax: number;
  /** max_s Σ_m |Q'_ms| (for the crowded form) */
  private readonly qColMax: number;
  /** diagonal D'_m (no crowding) or the row margin d_m (crowding) */
  private readonly dEff: Float64Array;
  private readonly dEffMin: number;
  private readonly diffMax: number;
  private readonly crowding: boolean;
  /** ‖D'_c⁻¹ R'‖_∞ and 1/min D'_c */
  private readonly q: number;
  private readonly invMinDc: number;
  /** S = 1: R' and D'_c */
  private readonly r1: number;
  private readonly dc1: number;
  private readonly work: Float64Array;
  private readonly inv: Float64Array;
  private readonly J: Float64Array;
  private readonly X: Float64Array;
  private readonly model: ScaledModel;

  constructor(model: ScaledModel) {
    this.model = model;
    const { M, S } = model;
    this.M = M;
    this.S = S;
    this.crowding = model.crowding;
    this.pRow = new Float64Array(M);
    this.qAbs = new Float64Array(M * S);
    let pRowMax = 0;
    let qMax = 0;
    let qColMax = 0;
    for (let m = 0; m < M; m++) {
      let row = 0;
      for (let s = 0; s < S; s++) {
        row += Math.abs(model.P[m * S + s]!);
        this.qAbs[m * S + s] = Math.abs(model.Q[m * S + s]!);
        qMax = Math.max(qMax, this.qAbs[m * S + s]!);
      }
      this.pRow[m] = row;
      pRowMax = Math.max(pRowMax, row);
    }
    for (let s = 0; s < S; s++) {
      let col = 0;
      for (let m = 0; m < M; m++) col += this.qAbs[m * S + s]!;
      qColMax = Math.max(qColMax, col);
    }
    this.pRowMax = pRowMax;
    this.qMax = qMax;
    this.qColMax = qColMax;
    this.dEff = new Float64Array(M);
    let dEffMin = Infinity;
    let diffMax = 0;
    for (let m = 0; m < M; m++) {
      let off = 0;
      for (let n = 0; n < M; n++) {
        diffMax = Math.max(diffMax, Math.abs(model.diffusion[m * M + n]!));
        if (n !== m) off += Math.abs(model.diffusion[m * M + n]!);
      }
      this.dEff[m] = model.diffusion[m * M + m]! - (this.crowding ? off : 0);
      dEffMin = Math.min(dEffMin, this.dEff[m]!);
    }
    this.dEffMin = dEffMin;
    this.diffMax = diffMax;
    let q = 0;
    let minDc = Infinity;
    for (let s = 0; s < S; s++) {
      minDc = Math.min(minDc, model.chemDiffusivity[s]!);
      let row = 0;
      for (let t = 0; t < S; t++) row += Math.abs(model.reaction[s * S + t]!);
      q = Math.max(q, row / model.chemDiffusivity[s]!);
    }
    this.q = q;
    this.invMinDc = S > 0 ? 1 / minDc : 0;
    this.r1 = S === 1 ? model.reaction[0]! : 0;
    this.dc1 = S === 1 ? model.chemDiffusivity[0]! : 0;
    this.work = new Float64Array(S * S);
    this.inv = new Float64Array(S * S);
    this.J = new Float64Array(M * M);
    this.X = new Float64Array(S * M);
  }

  /**
   * J'(k') = −k'²𝔇' − P'[(D'_c + R'/k'²)⁻¹ Q'ᵀ] (docs/model.md §3) in a buffer
   * of this object (overwritten by the next call), for the proofs only; null
   * when D'_c + R'/k'² is singular. The same matrix as model.ts `jacobian`, up
   * to rounding (the inverse is formed explicitly here).
   */
  /** X = (D'_c + R'/k'²)⁻¹ Q'ᵀ (S×M) into this.X; false when singular. */
  private responseAt(k: number): boolean {
    const { M, S, X } = this;
    const k2 = k * k;
    if (S === 0) return true;
    if (S === 1) {
      const a = this.dc1 + this.r1 / k2;
      if (!(a !== 0)) return false;
      for (let m = 0; m < M; m++) X[m] = this.model.Q[m]! / a;
      return true;
    }
    if (!Number.isFinite(this.gNorm(k))) return false; // leaves (D'_c + R'/k'²)⁻¹ in this.inv
    const inv = this.inv;
    const Q = this.model.Q;
    for (let s = 0; s < S; s++) {
      for (let m = 0; m < M; m++) {
        let acc = 0;
        for (let t = 0; t < S; t++) acc += inv[s * S + t]! * Q[m * S + t]!;
        X[s * M + m] = acc;
      }
    }
    return true;
  }

  /** Whether `structuredRouthBelow` applies: no crowding (𝔇' diagonal) and one or two chemicals. */
  get structured(): boolean {
    return !this.crowding && (this.S === 1 || this.S === 2) && this.M >= 2;
  }

  /**
   * Routh–Hurwitz proof that every eigenvalue of J'(k') has Re λ < target, as
   * `routhBelow` but with the characteristic polynomial taken from the
   * structure instead of a Hessenberg reduction (O(M²), J' not formed): with
   * 𝔇' diagonal, J' − fI = diag(a) − P'X, a_m = −k'²D'_m − f, and
   * det(λI − J' + fI) = Π_m(λ − a_m) · det(I_S + X(λI − diag a)⁻¹P')
   * (Weinstein–Aronszajn). For S = 1 that is Π(λ − a_m) + Σ_m c_m Π_{n≠m}(λ − a_n)
   * with c_m = X_m P'_m; for S = 2, det(I + W) = 1 + tr W + det W with
   * W = Σ_m y_m z_mᵀ/(λ − a_m) (y_m = X_{·m}, z_m = P'_{m·}) and, by
   * Cauchy–Binet, det W = Σ_{m<n} (y_m × y_n)(z_m × z_n)/((λ − a_m)(λ − a_n)).
   * The products over all but one or two factors are built by one pass over
   * m. The margin is 1e-6 of σ ≥ max|J'_ij| (k'² max D'_m + max_m Σ_s|P'_ms| max|X|).
   * Only for `structured` models.
   */
  structuredRouthBelow(k: number, target: number, w: RouthScratch): boolean {
    if (!(target > -Infinity) || !this.structured) return false;
    if (!this.responseAt(k)) return false;
    const { M, S, X } = this;
    const P = this.model.P;
    const k2 = k * k;
    let xMax = 0;
    for (let i = 0; i < S * M; i++) xMax = Math.max(xMax, Math.abs(X[i]!));
    const sigma = k2 * this.diffMax + this.pRowMax * xMax;
    if (!Number.isFinite(sigma)) return false;
    const f = target > 0 ? target - ROUTH_MARGIN * sigma : Math.min(target - ROUTH_MARGIN * sigma, -ROUTH_MARGIN * sigma);
    // polynomials in descending coefficients, all of length M + 1, right-aligned (index M is the
    // constant term), packed in one buffer: A = Π_{l≤j}(λ − a_l) at 0, T = Σ_{m≤j} t_m Π_{l≤j,l≠m}
    // at L; for S = 2 the four F_q = Σ_{m≤j} α_q,m Π_{l≤j,l≠m} of the Cauchy–Binet expansion at
    // 2L … 5L and E = the pair sum at 6L
    const L = M + 1;
    if (w.structured.length < 7 * L) w.structured = new Float64Array(7 * L);
    const buf = w.structured;
    buf.fill(0, 0, 7 * L);
    buf[M] = 1;
    for (let m = 0; m < M; m++) {
      const a = -k2 * this.model.diffusion[m * M + m]! - f;
      const y0 = X[m]!;
      const z0 = P[m * S]!;
      if (S === 2) {
        const y1 = X[M + m]!;
        const z1 = P[m * S + 1]!;
        // E += β_m F_{j−1} (the pairs (n, m) with n < m), before F and A move on
        timesLinear(buf, 6 * L, M, a);
        addScaled(buf, 6 * L, 2 * L, M, y1 * z1); // α = y0 z0, β = y1 z1
        addScaled(buf, 6 * L, 3 * L, M, -y1 * z0); // α = y0 z1, β = y1 z0 (minus)
        addScaled(buf, 6 * L, 4 * L, M, -y0 * z1); // α = y1 z0, β = y0 z1 (minus)
        addScaled(buf, 6 * L, 5 * L, M, y0 * z0); // α = y1 z1, β = y0 z0
        timesLinear(buf, 2 * L, M, a);
        addScaled(buf, 2 * L, 0, M, y0 * z0);
        timesLinear(buf, 3 * L, M, a);
        addScaled(buf, 3 * L, 0, M, y0 * z1);
        timesLinear(buf, 4 * L, M, a);
        addScaled(buf, 4 * L, 0, M, y1 * z0);
        timesLinear(buf, 5 * L, M, a);
        addScaled(buf, 5 * L, 0, M, y1 * z1);
        timesLinear(buf, L, M, a);
        addScaled(buf, L, 0, M, y0 * z0 + y1 * z1);
      } else {
        timesLinear(buf, L, M, a);
        addScaled(buf, L, 0, M, y0 * z0);
      }
      timesLinear(buf, 0, M, a);
    }
    const coeffs = w.poly.out;
    for (let i = 0; i <= M; i++) coeffs[i] = buf[i]! + buf[L + i]! + (S === 2 ? buf[6 * L + i]! : 0);
    return hurwitzUnstable(coeffs, w.table) === 0;
  }

  jacobianAt(k: number): Float64Array | null {
    const { M, S, J, X } = this;
    const k2 = k * k;
    const D = this.model.diffusion;
    for (let i = 0; i < M * M; i++) J[i] = -k2 * D[i]!;
    if (S === 0) return J;
    if (!this.responseAt(k)) return null;
    const P = this.model.P;
    for (let m = 0; m < M; m++) {
      for (let n = 0; n < M; n++) {
        let acc = 0;
        for (let s = 0; s < S; s++) acc += P[m * S + s]! * X[s * M + n]!;
        J[m * M + n]! -= acc;
      }
    }
    return J;
  }

  /** Whether the bounds can prove anything (a row-dominant crowded 𝔇'; M > 0). */
  get usable(): boolean {
    return this.M > 0 && this.dEffMin > 0;
  }

  /**
   * ‖k'²G'(k')‖_∞ = ‖(D'_c + R'/k'²)⁻¹‖_∞ at one k' (Gauss–Jordan with partial
   * pivoting on S×S); Infinity when singular.
   */
  gNorm(k: number): number {
    const S = this.S;
    if (S === 0) return 0;
    const k2 = k * k;
    if (S === 1) {
      const a = this.dc1 + this.r1 / k2;
      return a !== 0 ? 1 / Math.abs(a) : Infinity;
    }
    const a = this.work;
    const b = this.inv;
    const { reaction, chemDiffusivity } = this.model;
    for (let s = 0; s < S; s++) {
      for (let t = 0; t < S; t++) {
        a[s * S + t] = reaction[s * S + t]! / k2;
        b[s * S + t] = s === t ? 1 : 0;
      }
      a[s * S + s]! += chemDiffusivity[s]!;
    }
    for (let c = 0; c < S; c++) {
      let piv = c;
      for (let i = c + 1; i < S; i++) if (Math.abs(a[i * S + c]!) > Math.abs(a[piv * S + c]!)) piv = i;
      const p = a[piv * S + c]!;
      if (!(Math.abs(p) > 0)) return Infinity;
      if (piv !== c) {
        for (let j = 0; j < S; j++) {
          let t = a[c * S + j]!;
          a[c * S + j] = a[piv * S + j]!;
          a[piv * S + j] = t;
          t = b[c * S + j]!;
          b[c * S + j] = b[piv * S + j]!;
          b[piv * S + j] = t;
        }
      }
      for (let j = 0; j < S; j++) {
        a[c * S + j]! /= p;
        b[c * S + j]! /= p;
      }
      for (let i = 0; i < S; i++) {
        if (i === c) continue;
        const f = a[i * S + c]!;
        if (f === 0) continue;
        for (let j = 0; j < S; j++) {
          a[i * S + j]! -= f * a[c * S + j]!;
          b[i * S + j]! -= f * b[c * S + j]!;
        }
      }
    }
    let norm = 0;
    for (let s = 0; s < S; s++) {
      let row = 0;
      for (let t = 0; t < S; t++) row += Math.abs(b[s * S + t]!);
      norm = Math.max(norm, row);
    }
    // a little slack for the rounding of the inverse itself
    return Number.isFinite(norm) ? norm * (1 + 1e-12 * S) : Infinity;
  }

  /** An upper bound on ‖k'²G'(k')‖_∞ valid for every k' ≥ k0 (Infinity if none is known). */
  gNormTail(k0: number): number {
    if (this.S === 0) return 0;
    const k2 = k0 * k0;
    if (this.S === 1) {
      // 1/|D'_c + r/k'²|: rises towards 1/D'_c when r ≥ 0; falls from its value at k0 when r < 0 (and D'_c + r/k0² > 0)
      if (this.r1 >= 0) return (1 / this.dc1) * (1 + 1e-12);
      const a = this.dc1 + this.r1 / k2;
      return a > 0 ? (1 / a) * (1 + 1e-12) : Infinity;
    }
    if (!(k2 > this.q)) return Infinity;
    return (this.invMinDc / (1 - this.q / k2)) * (1 + 1e-12);
  }

  /** σ(k') ≥ max |J'_ij| given a bound g on ‖k'²G'‖_∞. */
  scaleBound(k: number, g: number): number {
    return k * k * this.diffMax + this.pRowMax * g * this.qMax;
  }

  /**
   * β(k', f) with a given bound g on ‖k'²G'‖_∞ (at k' or over a tail); Infinity
   * when some k'²d_m + f ≤ 0 (no proof possible there).
   */
  private beta(k: number, f: number, g: number): number {
    if (this.S === 0) return 0;
    if (!Number.isFinite(g)) return Infinity;
    const k2 = k * k;
    const { M, S } = this;
    if (this.crowding) {
      const den = k2 * this.dEffMin + f;
      if (!(den > 0)) return Infinity;
      return (g * this.qColMax * this.pRowMax) / den;
    }
    let best = 0;
    for (let s = 0; s < S; s++) {
      let acc = 0;
      for (let m = 0; m < M; m++) {
        const w = this.qAbs[m * S + s]!;
        if (w === 0) continue;
        const den = k2 * this.dEff[m]! + f;
        if (!(den > 0)) return Infinity;
        acc += (w * this.pRow[m]!) / den;
      }
      best = Math.max(best, acc);
    }
    return g * best;
  }

  /**
   * Whether every eigenvalue of J'(k') is proven to have Re λ < target with the
   * margins of the file header, so that its rounding-resolved value (the scan
   * reports |v| ≤ 1e-12 σ as 0) is below `target` too.
   */
  provesBelow(k: number, target: number): boolean {
    if (!this.usable || !(target > -Infinity)) return false;
    const g = this.gNorm(k);
    return this.beta(k, this.effectiveTarget(target, this.scaleBound(k, g)), g) < 1;
  }

  /**
   * Whether every eigenvalue of J'(k') has Re λ < target for **every** k' ≥ k0
   * (the tail bound of the header; target ≥ its own margins at every k').
   */
  provesTailBelow(k0: number, target: number): boolean {
    if (!this.usable || !(target > -Infinity)) return false;
    const g = this.gNormTail(k0);
    if (!Number.isFinite(g)) return false;
    // σ(k') ≤ k'² σ₂ + σ₀ on the tail: the margin grows like k'², which the
    // denominators absorb as a smaller diffusivity; checked at k0 with both parts.
    const s2 = this.diffMax;
    const s0 = this.pRowMax * g * this.qMax;
    const f0 = target > 0 ? target - PROOF_MARGIN * s0 : Math.min(target - PROOF_MARGIN * s0, -RESOLUTION_MARGIN * s0);
    const eps = Math.max(PROOF_MARGIN, RESOLUTION_MARGIN) * s2;
    if (!(this.dEffMin - eps > 0)) return false;
    // β with D'_m − eps in place of D'_m (each term then decreases with k'), at k0
    return this.betaShrunk(k0, f0, g, eps) < 1;
  }

  private betaShrunk(k: number, f: number, g: number, eps: number): number {
    if (this.S === 0) return 0;
    const k2 = k * k;
    const { M, S } = this;
    if (this.crowding) {
      const den = k2 * (this.dEffMin - eps) + f;
      if (!(den > 0)) return Infinity;
      return (g * this.qColMax * this.pRowMax) / den;
    }
    let best = 0;
    for (let s = 0; s < S; s++) {
      let acc = 0;
      for (let m = 0; m < M; m++) {
        const w = this.qAbs[m * S + s]!;
        if (w === 0) continue;
        const den = k2 * (this.dEff[m]! - eps) + f;
        if (!(den > 0)) return Infinity;
        acc += (w * this.pRow[m]!) / den;
      }
      best = Math.max(best, acc);
    }
    return g * best;
  }

  /**
   * Whether every k' > 0 is proven stable (Re λ < 0 with the margins) by one
   * inequality, for an unbounded chamber: R' diagonal with every loss r_s > 0,
   * so ‖G'(k')‖_∞ ≤ 1/min r_s for all k', σ(k') ≤ k'² σ₂ with
   * σ₂ = max|𝔇'| + max_m Σ_s|P'_ms| · max|Q'| / min r_s, and β(k', −ε k'²) ≤
   * ‖A_0‖_∞ / min r_s with the diffusivities reduced by ε = 1e-8 σ₂.
   */
  provesStableEverywhere(): boolean {
    if (!this.usable) return false;
    const { S, M } = this;
    if (S === 0) return true;
    const R = this.model.reaction;
    let rMin = Infinity;
    for (let s = 0; s < S; s++) {
      for (let t = 0; t < S; t++) if (s !== t && R[s * S + t] !== 0) return false;
      rMin = Math.min(rMin, R[s * S + s]!);
    }
    if (!(rMin > 0)) return false;
    const s2 = this.diffMax + (this.pRowMax * this.qMax) / rMin;
    const eps = PROOF_MARGIN * s2;
    if (!(this.dEffMin - eps > 0)) return false;
    let a0 = 0;
    if (this.crowding) {
      a0 = (this.qColMax * this.pRowMax) / (this.dEffMin - eps);
    } else {
      for (let s = 0; s < S; s++) {
        let acc = 0;
        for (let m = 0; m < M; m++) acc += (this.qAbs[m * S + s]! * this.pRow[m]!) / (this.dEff[m]! - eps);
        a0 = Math.max(a0, acc);
      }
    }
    return (a0 / rMin) * (1 + 1e-12) < 1;
  }

  /** The half-plane actually proven: target less the margin, and below −1e-11 σ when target ≤ 0. */
  private effectiveTarget(target: number, sigma: number): number {
    const f = target - PROOF_MARGIN * sigma;
    return target > 0 ? f : Math.min(f, -RESOLUTION_MARGIN * sigma);
  }
}

/** Ten times the scan's growth resolution (1e-12 of the scale): a proven-negative value is never rounded up to 0. */
const RESOLUTION_MARGIN = 1e-11;

/** p ← p·(λ − a) for the right-aligned polynomial at buf[at … at + M] (degree < M). */
function timesLinear(buf: Float64Array, at: number, M: number, a: number): void {
  for (let i = 0; i < M; i++) buf[at + i] = buf[at + i + 1]! - a * buf[at + i]!;
  buf[at + M] = -a * buf[at + M]!;
}

/** p ← p + c·q for right-aligned polynomials at buf[to …] and buf[from …]. */
function addScaled(buf: Float64Array, to: number, from: number, M: number, c: number): void {
  if (c === 0) return;
  for (let i = 0; i <= M; i++) buf[to + i]! += c * buf[from + i]!;
}

/** Relative margin (of max |J'_ij|) by which a Routh–Hurwitz proof must clear its target: covers the coefficients' rounding up to double roots. */
export const ROUTH_MARGIN = 1e-6;

/** Largest |entry| of a matrix. */
export function maxAbsEntry(J: Float64Array): number {
  let s = 0;
  for (const x of J) s = Math.max(s, Math.abs(x));
  return s;
}

/** Work space for `routhBelow` (size M). */
export interface RouthScratch {
  shifted: Float64Array;
  poly: CharPolyScratch;
  table: Float64Array;
  /** the structured polynomials of `structuredRouthBelow` (7·(M + 1)) */
  structured: Float64Array;
}

export function routhScratch(M: number): RouthScratch {
  return { shifted: new Float64Array(M * M), poly: charPolyScratch(M), table: new Float64Array(3 * (Math.floor(M / 2) + 2)), structured: new Float64Array(7 * (M + 1)) };
}

/**
 * Whether every eigenvalue of J (M×M) is proven to have Re λ < target by the
 * Routh–Hurwitz criterion on det(λI − (J − fI)) (docs/model.md §4): no sign
 * change in the first column of the Routh array of the shifted matrix, with
 * f = target − 1e-6·max|J_ij| (and f ≤ −1e-6·max|J_ij| when target ≤ 0). A
 * degenerate table proves nothing.
 */
export function routhBelow(J: Float64Array, M: number, target: number, w: RouthScratch): boolean {
  if (!(target > -Infinity)) return false;
  const sigma = maxAbsEntry(J);
  if (!Number.isFinite(sigma)) return false;
  const f = target > 0 ? target - ROUTH_MARGIN * sigma : Math.min(target - ROUTH_MARGIN * sigma, -ROUTH_MARGIN * sigma);
  const a = w.shifted;
  a.set(J);
  for (let m = 0; m < M; m++) a[m * M + m]! -= f;
  return hurwitzUnstable(charPoly(a, M, w.poly), w.table) === 0;
}

/**
 * Whether the Gershgorin discs (rows) of J, or of the similar matrix
 * W⁻¹JW with W = diag(1 / Σ_{m≠n} |J_mn|) (column off-diagonal sums; for a
 * coupling of low rank this evens out the radii), are pairwise disjoint, with a
 * margin of 1e-8·max|J_ij| times the spread of W. Each disc of a real matrix is
 * centred on the real axis, and a disc disjoint from the others holds exactly
 * one eigenvalue; its conjugate lies in the same disc, so that eigenvalue is
 * real. Disjoint discs therefore prove every eigenvalue real (Gershgorin's
 * theorem and its counting part; a similarity leaves the eigenvalues alone).
 */
export function discsDisjoint(J: Float64Array, M: number, w: number[] = []): boolean {
  const sigma = maxAbsEntry(J);
  if (!Number.isFinite(sigma)) return false;
  if (disjointWith(J, M, null, PROOF_MARGIN * sigma)) return true;
  w.length = 0;
  let wMax = 0;
  let wMin = Infinity;
  for (let n = 0; n < M; n++) {
    let col = 0;
    for (let m = 0; m < M; m++) if (m !== n) col += Math.abs(J[m * M + n]!);
    w.push(col);
    if (col > 0) {
      wMax = Math.max(wMax, col);
      wMin = Math.min(wMin, col);
    }
  }
  if (!(wMax > 0)) return false; // diagonal: the unscaled test already decided
  for (let n = 0; n < M; n++) w[n] = w[n]! > 0 ? 1 / w[n]! : 1 / wMin; // a zero column: any weight, its entries are 0
  return disjointWith(J, M, w, PROOF_MARGIN * sigma * (wMax / wMin) * M);
}

/** Disjointness of the row discs of W⁻¹JW (W = diag(w), or J itself when w is null), each widened by eta. */
function disjointWith(J: Float64Array, M: number, w: number[] | null, eta: number): boolean {
  const lo: number[] = [];
  const hi: number[] = [];
  const order: number[] = [];
  for (let m = 0; m < M; m++) {
    let r = 0;
    for (let n = 0; n < M; n++) if (n !== m) r += w === null ? Math.abs(J[m * M + n]!) : (Math.abs(J[m * M + n]!) * w[n]!) / w[m]!;
    const c = J[m * M + m]!;
    lo.push(c - r - eta);
    hi.push(c + r + eta);
    order.push(m);
  }
  order.sort((i, j) => lo[i]! - lo[j]!);
  let reach = hi[order[0]!]!;
  for (let i = 1; i < M; i++) {
    if (!(lo[order[i]!]! > reach)) return false;
    reach = Math.max(reach, hi[order[i]!]!);
  }
  return true;
}

/**
 * Whether every Gershgorin disc of J (rows, or else columns) lies in Re λ < target, with the
 * margins of `ModeBounds` (1e-8·max|J_ij|, and below −1e-11·max|J_ij| when
 * target ≤ 0): then so does every eigenvalue (Gershgorin's theorem).
 */
export function gershgorinBelow(J: Float64Array, M: number, target: number): boolean {
  if (!(target > -Infinity)) return false;
  const sigma = maxAbsEntry(J);
  if (!Number.isFinite(sigma)) return false;
  const f = target > 0 ? target - PROOF_MARGIN * sigma : Math.min(target - PROOF_MARGIN * sigma, -1e-11 * sigma);
  let ok = true;
  for (let m = 0; m < M && ok; m++) {
    let edge = J[m * M + m]!;
    for (let n = 0; n < M; n++) if (n !== m) edge += Math.abs(J[m * M + n]!);
    if (!(edge < f)) ok = false;
  }
  if (ok) return true;
  // columns (the discs of Jᵀ, same eigenvalues)
  for (let n = 0; n < M; n++) {
    let edge = J[n * M + n]!;
    for (let m = 0; m < M; m++) if (m !== n) edge += Math.abs(J[m * M + n]!);
    if (!(edge < f)) return false;
  }
  return true;
}

/**
 * Whether every eigenvalue of J is proven real: by disjoint row discs of J
 * (`discsDisjoint`), or of a diagonal similarity W⁻¹JW found by a greedy
 * search: while two discs overlap, the larger one's weight w_i is multiplied
 * by 4, which divides its radius by 4 and multiplies the entries of column i
 * in the other radii by 4 (up to 4·M steps). Gershgorin's theorem holds for
 * every similar matrix, so pairwise disjoint discs of any W⁻¹JW, each widened
 * by 1e-8·max|J_ij|·max w/min w, prove every eigenvalue real (each disc is
 * centred on the real axis and holds exactly one eigenvalue; Varga,
 * *Geršgorin and His Circles*, on isolating an eigenvalue by diagonal scaling);
 * failing that, by counting real roots (`realByRootCount`).
 */
export function spectrumReal(J: Float64Array, M: number, scratch?: RouthScratch): boolean {
  if (discsDisjoint(J, M)) return true;
  const sigma = maxAbsEntry(J);
  if (!(sigma > 0) || !Number.isFinite(sigma)) return false;
  const w = new Float64Array(M).fill(1);
  const off = new Float64Array(M); // Σ_{n≠m} |J_mn| w_n / w_m, kept up to date
  for (let m = 0; m < M; m++) {
    let r = 0;
    for (let n = 0; n < M; n++) if (n !== m) r += Math.abs(J[m * M + n]!);
    off[m] = r;
  }
  let spread = 1;
  for (let step = 0; step <= 4 * M; step++) {
    const eta = PROOF_MARGIN * sigma * spread * M;
    // an overlapping pair, if any
    let big = -1;
    for (let a = 0; a < M && big < 0; a++) {
      const ca = J[a * M + a]!;
      const ra = off[a]! + eta;
      for (let b = a + 1; b < M; b++) {
        if (Math.abs(ca - J[b * M + b]!) <= ra + off[b]! + eta) {
          big = off[a]! >= off[b]! ? a : b;
          break;
        }
      }
    }
    if (big < 0) return true;
    // w_big × 4: its own radius / 4, column big's share of every other radius × 4
    for (let m = 0; m < M; m++) if (m !== big) off[m]! += (3 * Math.abs(J[m * M + big]!) * w[big]!) / w[m]!;
    off[big]! /= 4;
    w[big]! *= 4;
    let wMax = 0;
    let wMin = Infinity;
    for (let m = 0; m < M; m++) {
      wMax = Math.max(wMax, w[m]!);
      wMin = Math.min(wMin, w[m]!);
    }
    spread = wMax / wMin;
    if (!(spread < 1e12)) break;
  }
  return realByRootCount(J, M, sigma, scratch ?? routhScratch(M));
}

/**
 * The count of real roots component by component: the row discs of J (each
 * widened by 1e-8·max|J_ij|) fall into connected components, and a component
 * of r discs holds exactly r eigenvalues (Gershgorin). Along its stretch of the
 * real axis p(x) = det(xI − J) is evaluated (J scaled to max|J_ij| = 1) at both
 * ends and at the midpoints between consecutive disc centres; r sign changes
 * there mean r real roots, so all of the component's eigenvalues are real. A
 * sign counts only when |p(x)| exceeds 1e-8 (1 + |x|)ⁿ, far above the rounding
 * of the coefficients and of Horner's rule; otherwise nothing is proven.
 */
function realByRootCount(J: Float64Array, M: number, sigma: number, scratch: RouthScratch): boolean {
  const a = scratch.shifted;
  for (let i = 0; i < M * M; i++) a[i] = J[i]! / sigma;
  const discs: { c: number; lo: number; hi: number }[] = [];
  for (let m = 0; m < M; m++) {
    let r = 0;
    for (let n = 0; n < M; n++) if (n !== m) r += Math.abs(a[m * M + n]!);
    const c = a[m * M + m]!;
    discs.push({ c, lo: c - r - PROOF_MARGIN, hi: c + r + PROOF_MARGIN });
  }
  discs.sort((x, y) => x.lo - y.lo);
  const coeffs = charPoly(a, M, scratch.poly);
  const sign = (x: number): number => {
    let p = 0;
    for (let i = 0; i <= M; i++) p = p * x + coeffs[i]!;
    return Math.abs(p) > 1e-8 * Math.pow(1 + Math.abs(x), M) ? Math.sign(p) : 0;
  };
  for (let i = 0; i < M; ) {
    let j = i;
    let reach = discs[i]!.hi;
    while (j + 1 < M && discs[j + 1]!.lo <= reach) {
      j++;
      reach = Math.max(reach, discs[j]!.hi);
    }
    const r = j - i + 1;
    if (r > 1) {
      const centres = discs.slice(i, j + 1).map((d) => d.c).sort((x, y) => x - y);
      const xs = [discs[i]!.lo];
      for (let q = 0; q + 1 < r; q++) xs.push(0.5 * (centres[q]! + centres[q + 1]!));
      xs.push(reach);
      let changes = 0;
      let prev = sign(xs[0]!);
      if (prev === 0) return false;
      for (let q = 1; q < xs.length; q++) {
        const sq = sign(xs[q]!);
        if (sq === 0) return false;
        if (sq !== prev) changes++;
        prev = sq;
      }
      if (changes < r) return false;
    }
    i = j + 1;
  }
  return true;
}
