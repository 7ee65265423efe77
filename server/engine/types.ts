/**
 * Engine input and output types. **Every number is SI** (m, s, mol, kg, K;
 * number densities in m⁻³, concentrations in mol m⁻³ = mM, activities in
 * mol s⁻¹, mobilities in m⁵ mol⁻¹ s⁻¹). Unit strings are the business of
 * `server/units/`; the engine never sees them.
 *
 * Sign conventions (docs/model.md §1): activity α > 0 produces the chemical, α < 0
 * consumes it; mobility μ > 0 drifts down the gradient (repelled), μ < 0 up it
 * (attracted), v = −μ ∇c.
 */

export type Walls = 'sealed' | 'periodic' | 'unbounded';

/** Optional standard uncertainties (1σ, same unit as the value). */
export type Uncertainties<K extends string> = Partial<Record<K, number>>;

export interface Chemical {
  id: string;
  /** D_s, m² s⁻¹, > 0 */
  diffusivity: number;
  /** κ_s, first-order bulk loss, s⁻¹, ≥ 0 */
  lossRate: number;
  /** c_s⁰, uniform starting concentration, mol m⁻³, ≥ 0 */
  concentration: number;
  /** true when the input gave no concentration and 0 was used (the checks warn `no-concentration`, docs/model.md §8) */
  concentrationMissing?: boolean;
  /** Saturation concentration when the chemical is a gas (O₂ …), mol m⁻³; null when not a gas. */
  solubility: number | null;
  sd?: Uncertainties<'diffusivity' | 'lossRate' | 'concentration' | 'solubility'>;
}

/** Constant per-particle activity, or Michaelis–Menten turnover of a fuel into a product. */
export type Activity =
  | { kind: 'constant'; /** α, mol s⁻¹, signed */ rate: number }
  | {
      kind: 'saturating';
      /** V, per-particle maximal turnover, mol s⁻¹, ≥ 0 */
      maxRate: number;
      /** K_m, Michaelis constant, mol m⁻³, > 0 */
      michaelis: number;
      /** id of the chemical made from the fuel, or null when it is not tracked */
      product: string | null;
      /**
       * Stoichiometric yield: product made per fuel turned over (> 0; default 1),
       * e.g. 0.5 for catalase (2 H₂O₂ → 2 H₂O + O₂). The product's source is
       * productYield × the fuel turnover (docs/model.md §3).
       */
      productYield?: number;
    };

export interface Coupling {
  /** id of the chemical (the fuel, for a saturating activity) */
  chemical: string;
  activity: Activity | null;
  /** μ, m⁵ mol⁻¹ s⁻¹, signed (> 0: repelled by the chemical) */
  mobility: number;
  sd?: Uncertainties<'rate' | 'maxRate' | 'michaelis' | 'mobility'>;
}

export interface Species {
  id: string;
  /** D_m, m² s⁻¹, > 0 */
  diffusivity: number;
  /** a_m, hydrodynamic radius, m, > 0 */
  radius: number;
  /** ρ_m⁰, number density, m⁻³, ≥ 0 */
  density: number;
  /** Mass density of the particle material, kg m⁻³, for sedimentation; null if unknown. */
  materialDensity: number | null;
  couplings: Coupling[];
  sd?: Uncertainties<'diffusivity' | 'radius' | 'density' | 'materialDensity'>;
}

export interface Chamber {
  walls: Walls;
  /** Lateral size L, m; required for sealed and periodic walls. */
  length: number | null;
  /** Depth H, m; used by the sedimentation check. */
  depth: number | null;
}

export interface Conditions {
  /** K */
  temperature: number;
  /** Solvent mass density, kg m⁻³ */
  solventDensity: number;
  /** Solvent viscosity, Pa·s, for the settling check; null or absent: water at the temperature (transport.ts). */
  solventViscosity?: number | null;
  /** Planned observation time, s; null when not given. */
  duration: number | null;
  /** Width of the imaging field, m; null when not given. */
  fieldOfView: number | null;
}

export interface Mixture {
  chemicals: Chemical[];
  species: Species[];
  chamber: Chamber;
  /** Hard-sphere second-virial crowding correction of the diffusion matrix (docs/model.md §3). */
  crowding: boolean;
  conditions: Conditions;
}

/** A malformed engine input (unknown id, duplicate id, missing chamber length …). */
export class EngineInputError extends Error {
  override readonly name = 'EngineInputError';
  constructor(
    readonly path: string,
    readonly reason: string,
  ) {
    super(path ? `${path}: ${reason}` : reason);
  }
}

/** A well-formed input outside the model's domain (e.g. crowding expansion invalid). */
export class EngineDomainError extends Error {
  override readonly name = 'EngineDomainError';
  constructor(
    readonly code: string,
    message: string,
  ) {
    super(message);
  }
}
