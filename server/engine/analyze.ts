/**
 * Linear stability of a mixture (docs/model.md §5): the state, the fastest mode,
 * its composition, the long-wavelength criteria as numbers, and the practical
 * checks of §8. Input and output are SI.
 */
import { chemicalRelaxation, practicalChecks, type PracticalChecks, type RelaxationCheck, type Warning } from './checks.js';
import { determinant, solveInPlace } from './linalg/dense.js';
import { buildModel, type ScaledModel } from './model.js';
import { scanModes, scanState, type BranchBest, type ScanOptions } from './scan.js';
import { leadingEigenpair } from './spectrum.js';
import type { Mixture } from './types.js';

export type State = 'stable' | 'stationary' | 'oscillatory';

export interface FastestMode {
  /** 1/m; 0 when an unbounded chamber's supremum is the k → 0 limit */
  wavenumber: number;
  /** n for a sealed (k = nπ/L) or periodic (k = 2πn/L) chamber; null when unbounded */
  index: number | null;
  /** 2π/k, m; null when k = 0 */
  wavelength: number | null;
  /** 2π/|Im λ|, s; null when the mode does not oscillate */
  oscillationPeriod: number | null;
}

export interface CompositionEntry {
  species: string;
  /** Re of the eigenvector component, scaled so the largest-modulus component is +1. Same sign: gathers with the leading species; opposite: pushed out. */
  weight: number;
  /** Modulus, largest = 1 */
  magnitude: number;
  /** Phase relative to the leading species, radians (0 or ±π for a stationary mode) */
  phase: number;
}

export interface Criterion {
  /** What is compared, in words */
  quantity: string;
  value: number;
  threshold: number;
  /** SI unit of value and threshold */
  unit: string;
  /** value < threshold */
  met: boolean;
  /** true when meeting it is sufficient but not necessary for that onset */
  sufficientOnly: boolean;
}

export interface Criteria {
  /** `rank-one`: one chemical that moves the particles, no crowding (closed forms apply) */
  structure: 'rank-one' | 'general';
  /** The wavenumber the long-wave criteria are read at: k₁ of the chamber, or 0 when unbounded (1/m) */
  referenceWavenumber: number;
  /** D_c k₁² + κ (1/s), rank one only */
  screeningRate: number | null;
  /** Σ_m α_m μ_m ρ_m / D_m < −(D_c k₁² + κ): a real eigenvalue crosses zero (rank one) */
  stationary: Criterion | null;
  /** Σ_m α_m μ_m ρ_m < −(Σ D_m)(D_c k₁² + κ): trace condition for a complex pair (rank one; exact for two species) */
  oscillatory: Criterion | null;
  /** det(I + 𝔇⁻¹ P G(k₁) Qᵀ) < 0: an odd number of real eigenvalues have crossed zero at k₁ (any structure) */
  determinant: Criterion | null;
}

export interface AnalysisResult {
  state: State;
  /** max Re λ over allowed modes, 1/s (negative when stable) */
  growthRate: number;
  /** 1/growthRate, s; null when stable */
  growthTime: number | null;
  fastestMode: FastestMode;
  composition: CompositionEntry[];
  criteria: Criteria;
  warnings: Warning[];
  /** Best mode of each eigenvalue branch: real (stationary) and complex (oscillatory) */
  branches: {
    stationary: { growthRate: number; wavenumber: number; index: number | null } | null;
    oscillatory: { growthRate: number; wavenumber: number; index: number | null; oscillationPeriod: number } | null;
  };
  /** The practical checks of docs/model.md §8, and whether the chemicals relax fast enough for the quasi-static answer (null without kept chemicals) */
  checks: PracticalChecks & { relaxation: RelaxationCheck | null };
  scan: {
    walls: Mixture['chamber']['walls'];
    /** 1/m: no mode above it can be the fastest */
    upperWavenumber: number;
    boundRigorous: boolean;
    evaluations: number;
  };
}

function branchSI(model: ScaledModel, b: BranchBest | null) {
  if (b === null) return null;
  return { growthRate: b.value / model.timeUnit, wavenumber: b.k / model.lengthUnit, index: b.index };
}

/** det(I + 𝔇'⁻¹ P' G'(k') Q'ᵀ) via the S×S form det(I_S + G' Q'ᵀ 𝔇'⁻¹ P') (Weinstein–Aronszajn). */
export function determinantIndex(model: ScaledModel, k: number): number | null {
  const { M, S } = model;
  if (S === 0) return 1;
  // Y = 𝔇'⁻¹ P' (M×S)
  const Dm = Float64Array.from(model.diffusion);
  const Y = Float64Array.from(model.P);
  if (!solveInPlace(Dm, M, Y, S)) return null;
  // Z = Q'ᵀ Y (S×S), then W = G' Z by solving (k'² D'_c + R') W = Z
  const Z = new Float64Array(S * S);
  for (let s = 0; s < S; s++) for (let t = 0; t < S; t++) {
    let acc = 0;
    for (let m = 0; m < M; m++) acc += model.Q[m * S + s]! * Y[m * S + t]!;
    Z[s * S + t] = acc;
  }
  const A = new Float64Array(S * S);
  for (let s = 0; s < S; s++) {
    for (let t = 0; t < S; t++) A[s * S + t] = model.reaction[s * S + t]!;
    A[s * S + s]! += k * k * model.chemDiffusivity[s]!;
  }
  if (!solveInPlace(A, S, Z, S)) return null;
  for (let s = 0; s < S; s++) Z[s * S + s]! += 1;
  return determinant(Z, S);
}

function criteria(mix: Mixture, model: ScaledModel): Criteria {
  const discrete = mix.chamber.walls !== 'unbounded';
  const kRefScaled = discrete ? 1 : 0;
  const kRef = kRefScaled / model.lengthUnit;
  const rankOne = model.rankOne;
  let det: Criterion | null = null;
  if (model.S > 0 && (discrete || !model.reactionSingular)) {
    const v = determinantIndex(model, kRefScaled);
    if (v !== null) {
      det = { quantity: 'det(I + D^-1 P G(k1) Q^T)', value: v, threshold: 0, unit: '1', met: v < 0, sufficientOnly: !rankOne };
    }
  }
  if (!rankOne) {
    return { structure: 'general', referenceWavenumber: kRef, screeningRate: null, stationary: null, oscillatory: null, determinant: det };
  }
  const chem = mix.chemicals[model.chemicalIndex[0]!]!;
  const gamma = chem.diffusivity * kRef * kRef + model.si.reaction[0]!;
  let sumOverD = 0;
  let sum = 0;
  let sumD = 0;
  mix.species.forEach((sp, m) => {
    const s = model.si.alpha[m]! * model.si.mu[m]! * sp.density;
    sumOverD += s / sp.diffusivity;
    sum += s;
    sumD += sp.diffusivity;
  });
  const stationary: Criterion = {
    quantity: 'sum of activity*mobility*density/diffusivity',
    value: sumOverD,
    threshold: -gamma,
    unit: '1/s',
    met: sumOverD < -gamma,
    sufficientOnly: false,
  };
  const oscillatory: Criterion | null =
    mix.species.length >= 2
      ? {
          quantity: 'sum of activity*mobility*density',
          value: sum,
          threshold: -sumD * gamma,
          unit: 'm^2/s^2',
          met: sum < -sumD * gamma && !stationary.met,
          sufficientOnly: mix.species.length > 2,
        }
      : null;
  return { structure: 'rank-one', referenceWavenumber: kRef, screeningRate: gamma, stationary, oscillatory, determinant: det };
}

/**
 * Linear stability of the well-mixed state of a mixture.
 *
 * Builds J(k) = −k²[𝔇 + diag(ρ⁰) μ G(k) αᵀ] (docs/model.md §3), scans the modes the
 * chamber allows up to a rigorous bound (scan.ts), and reports λ_max, the state
 * (`stable` if λ_max < 0 at every allowed mode; otherwise `stationary` or
 * `oscillatory` after the type of the fastest-growing eigenvalue), the fastest
 * mode, its eigenvector and the criteria.
 *
 * @param mix all values SI (see types.ts)
 * @throws EngineInputError for malformed input; EngineDomainError outside the model
 * @example analyze(mixture).state // 'stationary'
 */
export function analyze(mix: Mixture, options: ScanOptions = {}): AnalysisResult {
  const model = buildModel(mix);
  const scan = scanModes(model, mix.chamber.walls, options);
  const o = scan.overall;
  const growthRate = o.value / model.timeUnit;
  const unstable = growthRate > 0;
  const oscillating = o.im > 0;
  const state: State = !unstable ? 'stable' : oscillating ? 'oscillatory' : 'stationary';
  const wavenumber = o.k / model.lengthUnit;
  const fastestMode: FastestMode = {
    wavenumber,
    index: o.index,
    wavelength: o.k > 0 ? (2 * Math.PI) / wavenumber : null,
    oscillationPeriod: oscillating ? (2 * Math.PI * model.timeUnit) / o.im : null,
  };

  const warnings: Warning[] = [];
  let composition: CompositionEntry[] = [];
  let compositionMissing = false;
  if (model.M > 0) {
    const kEig = o.k > 0 ? o.k : Math.max(scan.upperWavenumber, 1) * 1e-8;
    // The eigenvector of the fastest mode (linalg/eigen.ts, ml-matrix), largest component 1.
    const lead = leadingEigenpair(model, kEig);
    if (!lead.converged) {
      scan.unconverged++;
      compositionMissing = true;
    } else {
      composition = model.speciesIds.map((id, m) => {
        const re = lead.vector.re[m]!;
        const im = lead.vector.im[m]!;
        const magnitude = Math.hypot(re, im);
        return { species: id, weight: clean(re), magnitude: clean(magnitude), phase: magnitude > 1e-12 ? Math.atan2(im, re) : 0 };
      });
    }
  }
  if (scan.longWaveLimit) {
    warnings.push({
      code: 'long-wavelength-limit',
      message:
        'in an unbounded chamber the least stable mode here is the longest wave (k → 0): there is no finite pattern wavelength; give the chamber walls and size for a wavelength.',
    });
  }
  if (!scan.boundRigorous) {
    warnings.push({
      code: 'scan-bound-heuristic',
      message: 'the crowded diffusion matrix is not diagonally dominant, so the mode scan used a heuristic upper wavenumber instead of a proven one.',
    });
  }
  if (scan.unconverged > 0) {
    warnings.push({
      code: 'eigen-not-converged',
      message: `the eigenvalue iteration did not converge at ${scan.unconverged} wavenumber(s); those modes were skipped${compositionMissing ? ' and the mode composition is left out' : ''}.`,
      count: scan.unconverged,
    });
  }
  const growthTime = unstable ? 1 / growthRate : null;
  const practical = practicalChecks(mix, growthTime, unstable ? fastestMode.wavelength : null);
  warnings.push(...practical.warnings);
  // the chemicals' own pace against the judged (fastest, or least stable) mode: `slow-chemistry`
  const relaxation = chemicalRelaxation(model, mix, { k: o.k, rate: growthRate, omega: o.im / model.timeUnit }, scan.upperWavenumber);
  warnings.push(...relaxation.warnings);

  const osc = scan.complex;
  return {
    state,
    growthRate: growthRate === 0 ? 0 : growthRate,
    growthTime,
    fastestMode,
    composition,
    criteria: criteria(mix, model),
    warnings,
    branches: {
      stationary: branchSI(model, scan.real),
      oscillatory:
        osc === null
          ? null
          : { ...branchSI(model, osc)!, oscillationPeriod: (2 * Math.PI * model.timeUnit) / osc.im },
    },
    checks: { ...practical.checks, relaxation: relaxation.check },
    scan: {
      walls: mix.chamber.walls,
      upperWavenumber: scan.upperWavenumber / model.lengthUnit,
      boundRigorous: scan.boundRigorous,
      evaluations: scan.evaluations,
    },
  };
}

/**
 * The state of a mixture alone, equal to `analyze(mix).state` (docs/model.md §5),
 * with as few eigenvalues as proofs allow (`scanState` in scan.ts: Routh–Hurwitz
 * and the small-gain bound prove `stable` mode by mode; eigenvalues only where a
 * mode may grow). `fast: false` runs the general scan (the reference).
 *
 * @param mix all values SI (see types.ts)
 * @throws EngineInputError for malformed input; EngineDomainError outside the model
 * @example stateOf(mixture) // 'stable'
 */
export function stateOf(mix: Mixture, options: { fast?: boolean } = {}): State {
  const model = buildModel(mix);
  return scanState(model, mix.chamber.walls, { earlyExit: options.fast !== false });
}

/** Round-off-level components to exactly 0 (|x| < 1e-13 of the leading one). */
function clean(x: number): number {
  return Math.abs(x) < 1e-13 ? 0 : x;
}
