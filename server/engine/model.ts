/**
 * The linearised model of docs/model.md §3, non-dimensionalised.
 *
 * SI inputs span some forty decades (activities ~1e-20 mol/s, densities
 * ~1e17 m⁻³), so before any linear algebra everything is rewritten in units of
 * a length ℓ, a time τ = ℓ²/max D_m and, per chemical s, a concentration c*_s
 * chosen to balance the two factors of the coupling. In those units
 *
 *     J'(k') = τ J(k'/ℓ) = −k'² [ 𝔇' + P' G'(k') Q'ᵀ ],   G'(k') = (k'² diag(D'_c) + R')⁻¹
 *
 * with 𝔇'_mn = D_m τ/ℓ² (δ_mn + 2 ρ_m B_mn) (crowding, B_mn = (2π/3)(a_m+a_n)³),
 * P'_ms = ρ_m μ_ms c*_s τ ℓ, Q'_ms = α_ms τ /(c*_s ℓ³), D'_c = D_s τ/ℓ²,
 * R'_ss' = τ R_ss' c*_s'/c*_s, and
 *
 *     R_ss' = ∂/∂c_s' [ κ_s c_s − Σ_m α_ms(c) ρ_m ]  at c⁰:
 *     diag(κ) plus, for each saturating turnover of fuel f into product p with
 *     yield y (product per fuel, default 1), w = ρ_m V_m K_m/(K_m + c_f)² added
 *     to R_ff and y·w subtracted from R_pf; at the uniform state the product's
 *     activity is y × the fuel turnover V c_f/(K_m + c_f).
 *
 * Eigenvalues scale back as λ = λ'/τ and wavenumbers as k = k'/ℓ; eigenvectors
 * (density perturbations δρ) are unchanged.
 */
import { isSingular, solveInPlace } from './linalg/dense.js';
import { EngineDomainError, EngineInputError, type Mixture } from './types.js';

export interface ScaledModel {
  M: number;
  S: number;
  speciesIds: string[];
  /** ids of the chemicals kept in the linear model (those that can move a particle) */
  chemicalIds: string[];
  /** index in mix.chemicals of each kept chemical */
  chemicalIndex: number[];
  /** ℓ, m */
  lengthUnit: number;
  /** τ, s */
  timeUnit: number;
  /** c*_s, mol m⁻³ */
  concentrationUnits: Float64Array;
  /** 𝔇' (M×M, row-major); diagonal unless crowding */
  diffusion: Float64Array;
  /** D'_m (M) */
  diffusivity: Float64Array;
  crowding: boolean;
  /** D'_c (S) */
  chemDiffusivity: Float64Array;
  /** R' (S×S) */
  reaction: Float64Array;
  /** P' (M×S) */
  P: Float64Array;
  /** Q' (M×S) */
  Q: Float64Array;
  /** True when J has the diagonal-plus-rank-one form (S = 1, no crowding). */
  rankOne: boolean;
  /** Whether R (SI) has a zero or negative eigenvalue direction (no loss for some chemical). */
  reactionSingular: boolean;
  /** SI intermediates for the criteria and checks (kept chemicals only). */
  si: {
    /** α_ms(c⁰) (M×S), mol s⁻¹ */
    alpha: Float64Array;
    /** μ_ms (M×S) */
    mu: Float64Array;
    /** R (S×S), s⁻¹ */
    reaction: Float64Array;
  };
}

/** Validate ids and references; throws EngineInputError naming the path. */
export function validateMixture(mix: Mixture): void {
  const chemIndex = new Map<string, number>();
  mix.chemicals.forEach((c, i) => {
    if (chemIndex.has(c.id)) throw new EngineInputError(`chemicals[${i}].id`, `duplicate id "${c.id}"`);
    chemIndex.set(c.id, i);
    if (!(c.diffusivity > 0)) throw new EngineInputError(`chemicals[${i}].diffusivity`, 'must be positive');
    if (!(c.lossRate >= 0)) throw new EngineInputError(`chemicals[${i}].lossRate`, 'must not be negative');
    if (!(c.concentration >= 0)) throw new EngineInputError(`chemicals[${i}].concentration`, 'must not be negative');
  });
  const seen = new Set<string>();
  mix.species.forEach((s, i) => {
    if (seen.has(s.id)) throw new EngineInputError(`species[${i}].id`, `duplicate id "${s.id}"`);
    seen.add(s.id);
    if (!(s.diffusivity > 0)) throw new EngineInputError(`species[${i}].diffusivity`, 'must be positive');
    if (!(s.radius > 0)) throw new EngineInputError(`species[${i}].radius`, 'must be positive');
    if (!(s.density >= 0) || !Number.isFinite(s.density)) throw new EngineInputError(`species[${i}].density`, 'must be a finite non-negative number');
    s.couplings.forEach((c, j) => {
      const p = `species[${i}].couplings[${j}]`;
      if (!chemIndex.has(c.chemical)) throw new EngineInputError(`${p}.chemical`, `unknown chemical "${c.chemical}"`);
      if (!Number.isFinite(c.mobility)) throw new EngineInputError(`${p}.mobility`, 'must be finite');
      const a = c.activity;
      if (a?.kind === 'constant' && !Number.isFinite(a.rate)) throw new EngineInputError(`${p}.activity`, 'must be finite');
      if (a?.kind === 'saturating') {
        if (!(a.maxRate >= 0) || !Number.isFinite(a.maxRate)) throw new EngineInputError(`${p}.activity.maxRate`, 'must be a finite non-negative number');
        if (!(a.michaelis > 0) || !Number.isFinite(a.michaelis)) throw new EngineInputError(`${p}.activity.michaelis`, 'must be positive');
        if (a.product !== null) {
          if (!chemIndex.has(a.product)) throw new EngineInputError(`${p}.activity.product`, `unknown chemical "${a.product}"`);
          if (a.product === c.chemical) throw new EngineInputError(`${p}.activity.product`, 'the product must differ from the fuel');
        }
        if (a.productYield !== undefined) {
          if (!(a.productYield > 0) || !Number.isFinite(a.productYield)) throw new EngineInputError(`${p}.activity.productYield`, 'must be a finite positive number');
          if (a.product === null) throw new EngineInputError(`${p}.activity.productYield`, 'a yield needs a product');
        }
      }
    });
  });
  const eta = mix.conditions.solventViscosity;
  if (eta !== undefined && eta !== null && !(eta > 0 && Number.isFinite(eta))) throw new EngineInputError('conditions.solventViscosity', 'must be a finite positive number');
  const ch = mix.chamber;
  if (ch.walls !== 'unbounded' && !(ch.length !== null && ch.length > 0)) {
    throw new EngineInputError('chamber.length', `required (positive) for ${ch.walls} walls`);
  }
}

/** Saturating rate A = V c/(K + c) and its slope V K/(K + c)², per particle. */
export function michaelisMenten(maxRate: number, michaelis: number, c: number): { rate: number; slope: number } {
  const d = michaelis + c;
  return { rate: (maxRate * c) / d, slope: (maxRate * michaelis) / (d * d) };
}

/**
 * Per-particle activities α_ms at the uniform state, mobilities μ_ms and the
 * linearised source matrix R (all SI), from a validated mixture.
 */
export function linearise(mix: Mixture): { alpha: Float64Array; mu: Float64Array; reaction: Float64Array } {
  const M = mix.species.length;
  const S = mix.chemicals.length;
  const idx = new Map(mix.chemicals.map((c, i) => [c.id, i] as const));
  const alpha = new Float64Array(M * S);
  const mu = new Float64Array(M * S);
  const reaction = new Float64Array(S * S);
  mix.chemicals.forEach((c, s) => {
    reaction[s * S + s] = c.lossRate;
  });
  mix.species.forEach((sp, m) => {
    for (const cp of sp.couplings) {
      const s = idx.get(cp.chemical)!;
      mu[m * S + s]! += cp.mobility;
      const a = cp.activity;
      if (a === null) continue;
      if (a.kind === 'constant') {
        alpha[m * S + s]! += a.rate;
      } else {
        const cf = mix.chemicals[s]!.concentration;
        const { rate, slope } = michaelisMenten(a.maxRate, a.michaelis, cf);
        alpha[m * S + s]! -= rate;
        const w = sp.density * slope;
        reaction[s * S + s]! += w;
        if (a.product !== null) {
          const p = idx.get(a.product)!;
          const y = a.productYield ?? 1;
          alpha[m * S + p]! += y * rate;
          reaction[p * S + s]! -= y * w;
        }
      }
    }
  });
  return { alpha, mu, reaction };
}

/** Hard-sphere second virial coefficient B = (2π/3)(a_m + a_n)³ (Hansen & McDonald). */
export function secondVirial(aM: number, aN: number): number {
  const s = aM + aN;
  return ((2 * Math.PI) / 3) * s * s * s;
}

function geometricMean(xs: number[]): number {
  const good = xs.filter((x) => x > 0 && Number.isFinite(x));
  if (good.length === 0) return Number.NaN;
  return Math.exp(good.reduce((acc, x) => acc + Math.log(x), 0) / good.length);
}

/** The length unit: 1/k₁ for a finite chamber, else the geometric mean of the mixture's own lengths. */
function chooseLength(mix: Mixture, alpha: Float64Array, mu: Float64Array, reaction: Float64Array): number {
  const { walls, length } = mix.chamber;
  if (walls === 'sealed') return length! / Math.PI;
  if (walls === 'periodic') return length! / (2 * Math.PI);
  const S = mix.chemicals.length;
  const Dref = Math.max(...mix.species.map((s) => s.diffusivity));
  const candidates: number[] = [];
  mix.chemicals.forEach((c, s) => {
    const r = reaction[s * S + s]!;
    if (r > 0) candidates.push(Math.sqrt(c.diffusivity / r));
  });
  let rate = 0;
  mix.species.forEach((sp, m) => {
    let row = 0;
    mix.chemicals.forEach((c, s) => {
      row += Math.abs(sp.density * mu[m * S + s]! * alpha[m * S + s]!) / c.diffusivity;
    });
    rate = Math.max(rate, row);
  });
  if (rate > 0) candidates.push(Math.sqrt(Dref / rate));
  const g = geometricMean(candidates);
  if (Number.isFinite(g)) return g;
  return length !== null && length > 0 ? length / Math.PI : 1e-4;
}

/**
 * Build the non-dimensional model of a mixture (validated here).
 * @throws EngineInputError on malformed input
 */
export function buildModel(mix: Mixture): ScaledModel {
  validateMixture(mix);
  const M = mix.species.length;
  const full = linearise(mix);
  // A chemical that no species responds to (μ = 0 throughout) and that is not the
  // fuel of a saturating turnover cannot change J: drop it (exact reduction, since
  // R only couples a fuel's column to its product's row).
  const Sfull = mix.chemicals.length;
  const fuels = new Set<string>();
  for (const sp of mix.species) for (const c of sp.couplings) if (c.activity?.kind === 'saturating') fuels.add(c.chemical);
  const chemicalIndex: number[] = [];
  for (let s = 0; s < Sfull; s++) {
    let moves = false;
    for (let m = 0; m < M; m++) if (full.mu[m * Sfull + s] !== 0) moves = true;
    if (moves || fuels.has(mix.chemicals[s]!.id)) chemicalIndex.push(s);
  }
  const S = chemicalIndex.length;
  const alpha = new Float64Array(M * S);
  const mu = new Float64Array(M * S);
  const reaction = new Float64Array(S * S);
  for (let m = 0; m < M; m++) {
    chemicalIndex.forEach((sf, s) => {
      alpha[m * S + s] = full.alpha[m * Sfull + sf]!;
      mu[m * S + s] = full.mu[m * Sfull + sf]!;
    });
  }
  chemicalIndex.forEach((sf, s) => chemicalIndex.forEach((tf, t) => (reaction[s * S + t] = full.reaction[sf * Sfull + tf]!)));
  const kept = { ...mix, chemicals: chemicalIndex.map((i) => mix.chemicals[i]!) };
  const ell = M === 0 ? 1 : chooseLength(kept, alpha, mu, reaction);
  const Dref = M === 0 ? 1 : Math.max(...mix.species.map((s) => s.diffusivity));
  const tau = (ell * ell) / Dref;

  const cstar = new Float64Array(S);
  for (let s = 0; s < S; s++) {
    let amax = 0;
    let pmax = 0;
    for (let m = 0; m < M; m++) {
      amax = Math.max(amax, Math.abs(alpha[m * S + s]!));
      pmax = Math.max(pmax, Math.abs(mix.species[m]!.density * mu[m * S + s]!));
    }
    const c0 = kept.chemicals[s]!.concentration;
    cstar[s] = amax > 0 && pmax > 0 ? Math.sqrt(amax / pmax) / (ell * ell) : c0 > 0 ? c0 : 1;
  }

  const diffusivity = new Float64Array(M);
  const diffusion = new Float64Array(M * M);
  mix.species.forEach((sp, m) => {
    diffusivity[m] = (sp.diffusivity * tau) / (ell * ell);
  });
  for (let m = 0; m < M; m++) {
    for (let n = 0; n < M; n++) {
      let v = m === n ? 1 : 0;
      if (mix.crowding) {
        const sm = mix.species[m]!;
        v += 2 * sm.density * secondVirial(sm.radius, mix.species[n]!.radius);
      }
      diffusion[m * M + n] = diffusivity[m]! * v;
    }
  }
  const chemDiffusivity = new Float64Array(S);
  kept.chemicals.forEach((c, s) => {
    chemDiffusivity[s] = (c.diffusivity * tau) / (ell * ell);
  });
  const R = new Float64Array(S * S);
  for (let s = 0; s < S; s++) for (let t = 0; t < S; t++) R[s * S + t] = (tau * reaction[s * S + t]! * cstar[t]!) / cstar[s]!;
  const P = new Float64Array(M * S);
  const Q = new Float64Array(M * S);
  for (let m = 0; m < M; m++) {
    const rho = mix.species[m]!.density;
    for (let s = 0; s < S; s++) {
      P[m * S + s] = rho * mu[m * S + s]! * cstar[s]! * tau * ell;
      Q[m * S + s] = (alpha[m * S + s]! * tau) / (cstar[s]! * ell * ell * ell);
    }
  }
  for (const arr of [diffusion, R, P, Q]) {
    for (const x of arr) {
      if (!Number.isFinite(x)) throw new EngineDomainError('overflow', 'the mixture’s coefficients overflow double precision even after rescaling');
    }
  }
  const reactionSingular = S > 0 && isSingular(R, S);
  return {
    M,
    S,
    speciesIds: mix.species.map((s) => s.id),
    chemicalIds: kept.chemicals.map((c) => c.id),
    chemicalIndex,
    lengthUnit: ell,
    timeUnit: tau,
    concentrationUnits: cstar,
    diffusion,
    diffusivity,
    crowding: mix.crowding,
    chemDiffusivity,
    reaction: R,
    P,
    Q,
    rankOne: S === 1 && !mix.crowding,
    reactionSingular,
    si: { alpha, mu, reaction },
  };
}

/**
 * k'² G'(k') Q'ᵀ as an S×M matrix: the chemical response to a unit density
 * perturbation of each species, times k'² (finite as k' → ∞: → diag(1/D'_c) Q'ᵀ).
 * Returns null if k'² D'_c + R' is singular at this k'.
 */
export function chemicalResponse(model: ScaledModel, k: number): Float64Array | null {
  const { M, S } = model;
  const k2 = k * k;
  const A = new Float64Array(S * S);
  // (D'_c + R'/k²) X = Q'ᵀ  ⇒  X = k² G' Q'ᵀ; better conditioned at large k.
  for (let s = 0; s < S; s++) {
    for (let t = 0; t < S; t++) A[s * S + t] = model.reaction[s * S + t]! / k2;
    A[s * S + s]! += model.chemDiffusivity[s]!;
  }
  const X = new Float64Array(S * M);
  for (let s = 0; s < S; s++) for (let m = 0; m < M; m++) X[s * M + m] = model.Q[m * S + s]!;
  if (!solveInPlace(A, S, X, M)) return null;
  return X;
}

/**
 * The scaled Jacobian J'(k') (M×M, row-major) of docs/model.md §3:
 * J' = −k'² 𝔇' − P' [k'² G'(k') Q'ᵀ].
 * @throws EngineDomainError when k'² D'_c + R' is singular (no quasi-static chemical state)
 */
export function jacobian(model: ScaledModel, k: number): Float64Array {
  const { M, S } = model;
  const k2 = k * k;
  const J = new Float64Array(M * M);
  for (let i = 0; i < M * M; i++) J[i] = -k2 * model.diffusion[i]!;
  if (S === 0) return J;
  const X = chemicalResponse(model, k);
  if (X === null) throw new EngineDomainError('singular-chemistry', 'the chemical fields have no quasi-static response at this wavenumber');
  for (let m = 0; m < M; m++) {
    for (let n = 0; n < M; n++) {
      let acc = 0;
      for (let s = 0; s < S; s++) acc += model.P[m * S + s]! * X[s * M + n]!;
      J[m * M + n]! -= acc;
    }
  }
  return J;
}
