/**
 * Practical checks on a sample (docs/model.md §8), reported beside the
 * stability result. All numbers SI. Each check returns its numbers whether or
 * not it warns; warnings carry the same numbers.
 *
 * - fuel: lifetime c⁰/|Σ_m α_ms ρ_m| of each consumed chemical; a consumed chemical at
 *   c⁰ = 0 is an absent fuel (lifetime 0, `absent`, always warned);
 * - no-concentration: a chemical whose input gave no concentration (taken as 0);
 * - gas: time until a produced chemical with a solubility passes it,
 *   (c_sat − c⁰)/Σ_m α_ms ρ_m; a saturating turnover makes its product at
 *   `productYield` × the fuel turnover (model.ts), e.g. 0.5 O₂ per H₂O₂ for catalase;
 *   a saturating turnover of an absent fuel makes nothing (rate 0 at c = 0), and a constant
 *   activity of a species whose fuel is absent runs only while that fuel lasts, so its share
 *   is left out of the expected production (`fuelAbsent`, `gas-needs-absent-fuel`);
 * - sedimentation: Stokes settling speed v = (2/9) Δρ g a²/η (η: the given solvent
 *   viscosity, else water at the sample temperature), the time H/v to cross the
 *   depth, and the sedimentation length ℓ = D/v with the species' (effective)
 *   diffusivity (Palacci et al., PRL 105, 088304 (2010) for active colloids;
 *   for a passive particle ℓ = k_B T/(Δρ V g)); warns when ℓ < H; says so when
 *   a species has no material density or the chamber no depth (missing data is
 *   never "no problem");
 * - pattern fit and crowding: wavelength against chamber, field and particle size;
 *   volume fraction against the dilute model.
 *
 * Sources: docs/references.md.
 */
import { BOLTZMANN, STANDARD_GRAVITY } from './constants.js';
import { eigenvalues } from './linalg/eigen.js';
import { linearise, type ScaledModel } from './model.js';
import { stokesSettlingSpeed, waterViscosity } from './transport.js';
import { EngineInputError, type Mixture } from './types.js';

export interface Warning {
  code: string;
  message: string;
  [key: string]: unknown;
}

export interface FuelCheck {
  chemical: string;
  /** Net consumption |Σ_m α_ms ρ_m|, mol m⁻³ s⁻¹ */
  consumptionRate: number;
  /** c⁰ / |Σ_m α_ms ρ_m|, s (0 when the fuel is absent) */
  lifetime: number;
  /** c⁰ = 0 although particles consume it: the fuel is absent, used up at once */
  absent: boolean;
}

export interface GasCheck {
  chemical: string;
  /** Net production Σ_m α_ms ρ_m, mol m⁻³ s⁻¹ (a saturating turnover counts productYield × its fuel rate) */
  productionRate: number;
  /** Saturation concentration, mol m⁻³ */
  solubility: number;
  /** Time until the concentration passes the solubility at productionRate, s (0 when already past it) */
  timeToSaturation: number;
  /**
   * Some of the production comes from a constant activity of a species whose fuel is absent
   * (a chemical it consumes at concentration 0, see FuelCheck.absent). A constant activity has no
   * fuel dependence in the model, but it runs only while its fuel lasts: that part is not expected.
   */
  fuelAbsent: boolean;
  /** The absent fuels of those producers (empty unless fuelAbsent) */
  absentFuels: string[];
  /** Production from the producers whose fuel is present, mol m⁻³ s⁻¹ (= productionRate unless fuelAbsent) */
  expectedProductionRate: number;
  /** Time to pass the solubility at expectedProductionRate, s; null when none of the gas is expected */
  expectedTimeToSaturation: number | null;
}

export interface SedimentationCheck {
  species: string;
  direction: 'settles' | 'rises';
  /** ρ_p − ρ_w, kg m⁻³ (signed: > 0 settles) */
  densityDifference: number;
  /** Solvent viscosity η used for the drag, Pa·s */
  viscosity: number;
  /** Where η came from: the conditions, or water at the sample temperature (transport.ts table) */
  viscositySource: 'given' | 'water-at-temperature';
  /** Stokes settling (or creaming) speed |v| = (2/9)|Δρ| g a²/η, m s⁻¹ */
  speed: number;
  /** Time to cross the chamber depth at that speed, H/|v|, s (null without a depth) */
  timeToCrossDepth: number | null;
  /**
   * Sedimentation length ℓ = D/|v| with the species' own (effective) diffusivity, m:
   * the decay length of the steady density profile. For a passive particle
   * (D = k_B T/(6π η a)) it equals `gravitationalHeight`; for an active one it is
   * longer by D/D_passive (effective temperature; Palacci et al., PRL 105, 088304 (2010)).
   */
  sedimentationLength: number;
  /** Passive gravitational height k_B T/(|Δρ| V g), m (independent of η and of activity) */
  gravitationalHeight: number;
  /** What could not be judged and why (no chamber depth), or null */
  note: string | null;
}

export interface PracticalChecks {
  fuel: FuelCheck[];
  gas: GasCheck[];
  sedimentation: SedimentationCheck[];
  /** Total particle volume fraction Σ ρ_m (4/3)π a_m³ */
  volumeFraction: number;
}

/** Warn when the fuel lasts fewer than this many growth times ("a few": common practice, no source). */
export const FUEL_GROWTH_TIMES = 3;
/** Observation horizon used for the gas check when none is given: 1 h (common practice, no source). */
export const DEFAULT_HORIZON = 3600;

const fmt = (x: number) => (Math.abs(x) >= 1e4 || Math.abs(x) < 1e-2 ? x.toExponential(2) : x.toPrecision(3));
const seconds = (t: number) => (t >= 86400 ? `${fmt(t / 86400)} d` : t >= 3600 ? `${fmt(t / 3600)} h` : t >= 60 ? `${fmt(t / 60)} min` : `${fmt(t)} s`);
const metres = (x: number) => (x >= 1e-3 ? `${fmt(x * 1e3)} mm` : `${fmt(x * 1e6)} µm`);

/** Volume of a sphere of radius a, m³. */
export const sphereVolume = (a: number) => (4 / 3) * Math.PI * a * a * a;

/**
 * Compute the practical checks and the warnings they raise.
 *
 * @param mix        the sample (SI)
 * @param growthTime 1/λ_max in s, or null when stable
 * @param wavelength fastest pattern wavelength in m, or null when no pattern is predicted
 *                   (stable) or the least stable mode is the longest wave
 * @example practicalChecks(mix, 120, 4e-4).checks.sedimentation[0].speed // m/s
 */
export function practicalChecks(
  mix: Mixture,
  growthTime: number | null,
  wavelength: number | null,
): { checks: PracticalChecks; warnings: Warning[] } {
  const warnings: Warning[] = [];
  const { alpha } = linearise(mix);
  const S = mix.chemicals.length;
  const fuel: FuelCheck[] = [];
  const gas: GasCheck[] = [];
  const duration = mix.conditions.duration;
  // Absent fuels (docs/model.md §8): a chemical at c⁰ = 0 that particles consume (by structure) and nothing makes.
  const netOf = (s: number) => mix.species.reduce((acc, sp, m) => acc + alpha[m * S + s]! * sp.density, 0);
  // A coupling that turns its chemical over (consumes it by structure): a constant uptake or a saturating turnover.
  const consuming = (cp: Mixture['species'][number]['couplings'][number]) =>
    (cp.activity?.kind === 'constant' && cp.activity.rate < 0) || (cp.activity?.kind === 'saturating' && cp.activity.maxRate > 0);
  const consumes = (sp: Mixture['species'][number], id: string) => sp.couplings.some((cp) => cp.chemical === id && consuming(cp));
  const absentFuels = new Set(mix.chemicals.filter((c, s) => c.concentration === 0 && netOf(s) <= 0 && mix.species.some((sp) => sp.density > 0 && consumes(sp, c.id))).map((c) => c.id));
  // The absent fuels a species consumes, by a constant or a saturating activity: its constant production of
  // another chemical (a gas) cannot run without them (a saturating turnover of an absent fuel is 0 already).
  const starvedBy = (sp: Mixture['species'][number]) =>
    [...new Set(sp.couplings.filter((cp) => absentFuels.has(cp.chemical) && consuming(cp)).map((cp) => cp.chemical))];
  mix.chemicals.forEach((c, s) => {
    const net = netOf(s);
    // Consumed by structure, not by the linearised rate: a saturating turnover of an absent fuel is 0.
    const consumers = mix.species.filter((sp) => sp.density > 0 && consumes(sp, c.id));
    if (c.concentrationMissing) {
      const consumed = consumers.length > 0 && net <= 0;
      warnings.push({
        code: 'no-concentration',
        message: `no concentration given for "${c.id}": taken as 0.${consumed ? ` ${consumers.map((sp) => sp.id).join(', ')} consume${consumers.length === 1 ? 's' : ''} it, so the fuel is absent; give its concentration.` : ''}`,
        chemical: c.id,
      });
    }
    if (c.concentration === 0 && net <= 0 && consumers.length > 0) {
      fuel.push({ chemical: c.id, consumptionRate: net === 0 ? 0 : -net, lifetime: 0, absent: true });
      warnings.push({
        code: 'fuel-runs-out',
        message: `${c.id} is absent (concentration 0) although ${consumers.map((sp) => sp.id).join(', ')} consume${consumers.length === 1 ? 's' : ''} it: it is used up at once, so the activity this analysis assumes cannot run; give its concentration.`,
        chemical: c.id,
        lifetime: 0,
        growthTime,
        duration,
      });
    } else if (net < 0 && c.concentration > 0) {
      const lifetime = c.concentration / -net;
      fuel.push({ chemical: c.id, consumptionRate: -net, lifetime, absent: false });
      const short = growthTime !== null && lifetime < FUEL_GROWTH_TIMES * growthTime;
      const beforeEnd = duration !== null && lifetime < duration;
      if (short || beforeEnd) {
        const why = short
          ? `within ${FUEL_GROWTH_TIMES} growth times (growth time ${seconds(growthTime!)}): the pattern may not have time to form`
          : `before the end of the planned observation (${seconds(duration!)})`;
        warnings.push({
          code: 'fuel-runs-out',
          message: `${c.id} is used up in about ${seconds(lifetime)}, ${why}; raise its concentration or lower the particle density.`,
          chemical: c.id,
          lifetime,
          growthTime,
          duration,
        });
      }
    }
    if (c.solubility !== null && net > 0) {
      const timeToSaturation = Math.max(0, (c.solubility - c.concentration) / net);
      // Split the production: producers starved of a fuel they consume (constant or saturating) make none of it.
      let expected = 0;
      const starvedProducers: string[] = [];
      const fuels = new Set<string>();
      mix.species.forEach((sp, m) => {
        const part = alpha[m * S + s]! * sp.density;
        const by = starvedBy(sp);
        if (by.length > 0 && part > 0) {
          starvedProducers.push(sp.id);
          by.forEach((f) => fuels.add(f));
        } else expected += part;
      });
      const fuelAbsent = starvedProducers.length > 0;
      const expectedTime = expected > 0 ? Math.max(0, (c.solubility - c.concentration) / expected) : null;
      gas.push({ chemical: c.id, productionRate: net, solubility: c.solubility, timeToSaturation, fuelAbsent, absentFuels: [...fuels], expectedProductionRate: fuelAbsent ? Math.max(0, expected) : net, expectedTimeToSaturation: fuelAbsent ? expectedTime : timeToSaturation });
      const horizon = Math.max(duration ?? DEFAULT_HORIZON, growthTime !== null ? FUEL_GROWTH_TIMES * growthTime : 0);
      if (fuelAbsent) {
        const f = [...fuels].join(', ');
        warnings.push({
          code: 'gas-needs-absent-fuel',
          message: `${c.id} is made by ${starvedProducers.join(', ')} only while ${fuels.size === 1 ? 'its fuel lasts' : 'their fuels last'}: ${f} ${fuels.size === 1 ? 'is' : 'are'} absent, so ${expectedTime === null ? `no ${c.id} is expected` : `only the rest of the production is expected (${c.id} passes its solubility after about ${seconds(expectedTime)} from the other producers)`}; with ${f} given, the constant activity would pass the solubility after about ${seconds(timeToSaturation)}.`,
          chemical: c.id,
          absentFuels: [...fuels],
          producers: starvedProducers,
          timeToSaturation,
          expectedTimeToSaturation: expectedTime,
        });
      }
      const tExpected = fuelAbsent ? expectedTime : timeToSaturation;
      if (tExpected !== null && tExpected < horizon) {
        const sealed = mix.chamber.walls === 'sealed' ? ' In a sealed chamber the gas also builds pressure.' : '';
        warnings.push({
          code: 'gas-exceeds-solubility',
          message: `${c.id} passes its solubility (${fmt(c.solubility)} mol/m^3) after about ${seconds(tExpected)}, within the ${seconds(horizon)} horizon: bubbles will spoil imaging.${sealed}`,
          chemical: c.id,
          timeToSaturation: tExpected,
          horizon,
        });
      }
    }
  });

  const sedimentation: SedimentationCheck[] = [];
  const T = mix.conditions.temperature;
  const depth = mix.chamber.depth;
  let volumeFraction = 0;
  const given = mix.conditions.solventViscosity ?? null;
  let eta: number | null = given;
  let etaProblem: string | null = null;
  if (eta === null) {
    try {
      eta = waterViscosity(T);
    } catch (e) {
      if (!(e instanceof EngineInputError)) throw e;
      etaProblem = e.reason;
    }
  }
  const viscositySource = given !== null ? 'given' : 'water-at-temperature';
  const unchecked: string[] = [];
  const noMaterialDensity: string[] = [];
  const noDepth: string[] = [];
  for (const sp of mix.species) {
    volumeFraction += sp.density * sphereVolume(sp.radius);
    if (sp.materialDensity === null) {
      noMaterialDensity.push(sp.id);
      continue;
    }
    const dRho = sp.materialDensity - mix.conditions.solventDensity;
    if (dRho === 0) continue;
    if (eta === null) {
      unchecked.push(sp.id);
      continue;
    }
    const speed = Math.abs(stokesSettlingSpeed(sp.radius, dRho, eta, STANDARD_GRAVITY));
    const h = (BOLTZMANN * T) / (Math.abs(dRho) * sphereVolume(sp.radius) * STANDARD_GRAVITY);
    const ell = sp.diffusivity / speed;
    const direction = dRho > 0 ? 'settles' : 'rises';
    const timeToCrossDepth = depth !== null ? depth / speed : null;
    if (depth === null) noDepth.push(sp.id);
    sedimentation.push({
      species: sp.id,
      direction,
      densityDifference: dRho,
      viscosity: eta,
      viscositySource,
      speed,
      timeToCrossDepth,
      sedimentationLength: ell,
      gravitationalHeight: h,
      note: depth === null ? 'no chamber depth given: the time to cross it and whether the particles settle out of the bulk (ℓ < H) were not judged' : null,
    });
    if (depth !== null && ell < depth) {
      warnings.push({
        code: 'sedimentation',
        message: `${sp.id} ${direction} at about ${fmt(speed * 1e6)} µm/s (Stokes drag), crossing the chamber depth ${metres(depth)} in about ${seconds(timeToCrossDepth!)}, into a layer about ${metres(ell)} thick: the bulk model assumes a suspension that stays uniform in depth.`,
        species: sp.id,
        speed,
        sedimentationLength: ell,
        gravitationalHeight: h,
        depth,
        timeToCrossDepth,
      });
    }
  }
  if (unchecked.length > 0) {
    warnings.push({
      code: 'sedimentation-not-checked',
      message: `settling of ${unchecked.join(', ')} was not checked: ${etaProblem}; give conditions.solventViscosity.`,
      species: unchecked,
      missing: 'solventViscosity',
    });
  }
  if (noMaterialDensity.length > 0) {
    warnings.push({
      code: 'sedimentation-not-checked',
      message: `settling of ${noMaterialDensity.join(', ')} was not checked: no materialDensity (the mass density of the particle material) is given; give it (a dissolved molecule that cannot settle needs none).`,
      species: noMaterialDensity,
      missing: 'materialDensity',
    });
  }
  if (noDepth.length > 0) {
    warnings.push({
      code: 'no-chamber-depth',
      message: `no chamber depth is given: whether ${noDepth.join(', ')} settle${noDepth.length === 1 ? 's' : ''} out of the bulk was not judged (time to cross the depth and layer thickness against it); give chamber.depth.`,
      species: noDepth,
    });
  }

  if (wavelength !== null) {
    const L = mix.chamber.length;
    if (mix.chamber.walls === 'unbounded' && L !== null && wavelength > L) {
      warnings.push({
        code: 'pattern-larger-than-chamber',
        message: `the predicted wavelength ${metres(wavelength)} exceeds the chamber size ${metres(L)}: the walls will set the pattern; analyse with sealed walls.`,
        wavelength,
        length: L,
      });
    }
    const field = mix.conditions.fieldOfView;
    if (field !== null && wavelength > field) {
      warnings.push({
        code: 'pattern-larger-than-field',
        message: `the predicted wavelength ${metres(wavelength)} exceeds the imaging field ${metres(field)}: less than one period will be visible; use a lower magnification or tile the field.`,
        wavelength,
        fieldOfView: field,
      });
    }
    const aMax = Math.max(0, ...mix.species.map((s) => s.radius));
    if (wavelength < 10 * aMax) {
      warnings.push({
        code: 'pattern-near-particle-size',
        message: `the predicted wavelength ${metres(wavelength)} is under ten particle radii (${metres(aMax)}): a continuum model is doubtful at that scale (common practice, no source).`,
        wavelength,
        radius: aMax,
      });
    }
  }

  if (volumeFraction > 0.1 && !mix.crowding) {
    warnings.push({
      code: 'dense-suspension',
      message: `the particles fill ${fmt(volumeFraction * 100)} % of the volume with crowding off: the dilute model may misjudge the threshold; turn crowding on (common practice, no source).`,
      volumeFraction,
    });
  } else if (volumeFraction > 0.2 && mix.crowding) {
    warnings.push({
      code: 'beyond-second-virial',
      message: `the particles fill ${fmt(volumeFraction * 100)} % of the volume: the second-virial crowding term is a dilute-limit correction and is unreliable here (common practice, no source).`,
      volumeFraction,
    });
  }
  return { checks: { fuel, gas, sedimentation, volumeFraction }, warnings };
}

/**
 * The input's missing levels, once per chemical: every chemical flagged `concentrationMissing` (taken as 0,
 * docs/model.md §8) is a `no-concentration` warning naming the species, of the base and of the candidates,
 * whose saturating turnover it feeds (they then turn nothing over). A stored plan's `result.warnings` and
 * `brink screen`'s top-level `warnings` both say it with this.
 */
export function missingConcentrationWarnings(base: Mixture, candidates: readonly Mixture['species'][number][] = []): Warning[] {
  return base.chemicals
    .filter((c) => c.concentrationMissing)
    .map((c) => {
      const users = [...base.species, ...candidates].filter((sp) => sp.couplings.some((cp) => cp.chemical === c.id && cp.activity?.kind === 'saturating')).map((sp) => sp.id);
      return {
        code: 'no-concentration',
        message: `no concentration given for "${c.id}": taken as 0.${users.length > 0 ? ` It is the substrate of ${users.join(', ')}, which then turn${users.length === 1 ? 's' : ''} nothing over.` : ''}`,
        chemical: c.id,
      };
    });
}

// ------------------------------------------------------------------ how fast the chemicals relax

/**
 * Warn when the kept chemicals relax fewer than this many times faster than the judged mode
 * grows (or turns): the quasi-static answer's growth rate is then off by about 1/ratio or more
 * (to first order λ_dyn ≈ λ_qs (1 − C/Γ) with C ≥ λ_qs the chemical drive; docs/model.md §8).
 */
export const RELAXATION_RATIO = 20;
/** Warn also when the growth rate with evolving chemicals differs at the judged mode by more than this fraction of max(|λ|, |ω|). */
export const RELAXATION_CHANGE = 0.05;
/** At most this many allowed modes of a finite chamber (or points of an unbounded chamber's log grid) in the dynamic scan. */
const DYNAMIC_MODES = 4000;

export interface RelaxationEntry {
  chemical: string;
  /** Γ_s = D_s k² + R_ss at the judged mode (R includes the loss and the saturating slope), 1/s */
  relaxationRate: number;
  /** Γ_s / max(|λ|, |ω|) */
  ratio: number;
}

export interface DynamicMode {
  /** Largest Re λ of the (M+S)×(M+S) dynamic Jacobian, 1/s */
  growthRate: number;
  /** 1/m */
  wavenumber: number;
  /** n of a finite chamber's mode, null when unbounded */
  index: number | null;
  /** 2π/k, m */
  wavelength: number;
  /** 2π/|Im λ|, s; null when that eigenvalue is real */
  oscillationPeriod: number | null;
}

export interface RelaxationCheck {
  /** The mode judged: analyze's fastest (or, when stable, least stable) mode */
  wavenumber: number;
  /** λ there (Re), 1/s: negative when stable */
  rate: number;
  /** |Im λ| there, rad/s (0 for a stationary mode) */
  angularFrequency: number;
  /** One entry per chemical the linear model keeps */
  chemicals: RelaxationEntry[];
  /** The smallest ratio (null when no chemical is kept) */
  smallestRatio: number | null;
  /** Largest Re λ at the judged mode with the chemicals evolving (∂c/∂t kept), 1/s; null when not computed */
  dynamicRateAtMode: number | null;
  /**
   * The fastest mode with the chemicals evolving, over the modes up to the analysis' scan bound; computed
   * only when the check warns or a stable result has slow chemicals (null otherwise)
   */
  dynamic: DynamicMode | null;
  /** (dynamic.growthRate − rate)/|rate|, null when dynamic is null */
  relativeChange: number | null;
}

/**
 * The (M+S)×(M+S) Jacobian of the linearised particles and chemicals at scaled wavenumber k, in the
 * model's units (docs/model.md §3): d/dt [δρ; δc] = [[−k²𝔇', −k² P'], [Q'ᵀ, −(k² D'_c + R')]] — setting
 * d(δc)/dt = 0 gives J'(k') = −k'²[𝔇' + P' G' Q'ᵀ]. Its largest eigenvalue (Re, |Im|), in 1/τ.
 */
export function dynamicLeading(model: ScaledModel, k: number): { re: number; im: number } | null {
  const { M, S } = model;
  const n = M + S;
  const k2 = k * k;
  const A = new Float64Array(n * n);
  for (let m = 0; m < M; m++) {
    for (let j = 0; j < M; j++) A[m * n + j] = -k2 * model.diffusion[m * M + j]!;
    for (let s = 0; s < S; s++) A[m * n + M + s] = -k2 * model.P[m * S + s]!;
  }
  for (let s = 0; s < S; s++) {
    for (let m = 0; m < M; m++) A[(M + s) * n + m] = model.Q[m * S + s]!;
    for (let t = 0; t < S; t++) A[(M + s) * n + M + t] = -model.reaction[s * S + t]!;
    A[(M + s) * n + M + s]! -= k2 * model.chemDiffusivity[s]!;
  }
  const e = eigenvalues(A, n);
  if (!e.converged) return null;
  let re = -Infinity;
  let im = 0;
  for (let i = 0; i < n; i++) if (e.re[i]! > re) [re, im] = [e.re[i]!, Math.abs(e.im[i]!)];
  return { re, im };
}

/**
 * Are the chemicals fast enough for the quasi-static answer (docs/model.md §8, `slow-chemistry`)?
 * For each kept chemical, Γ_s = D_s k² + R_ss at the judged mode against max(|λ|, |ω|); the growth
 * rate at that mode with the chemicals evolving (the (M+S) dynamic Jacobian); and, when the smallest
 * ratio is under RELAXATION_RATIO or that growth differs by more than RELAXATION_CHANGE, the fastest
 * dynamic mode over the allowed modes up to the scan bound, and a warning that says the numbers.
 * A stable result warns only when some mode grows with evolving chemicals (the state itself differs).
 *
 * @param model     the scaled model (model.ts)
 * @param mix       the sample (for the chemicals' diffusivities and the chamber)
 * @param mode      the judged mode: scaled wavenumber k' (0: the long-wave limit), λ and |ω| in 1/s
 * @param upper     the analysis' scan bound, scaled
 * @example chemicalRelaxation(model, mix, { k: 1, rate: 1.7e-3, omega: 0 }, 40).check.smallestRatio // 2.03
 */
export function chemicalRelaxation(
  model: ScaledModel,
  mix: Mixture,
  mode: { k: number; rate: number; omega: number },
  upper: number,
): { check: RelaxationCheck | null; warnings: Warning[] } {
  if (model.M === 0 || model.S === 0) return { check: null, warnings: [] };
  const { timeUnit: tau, lengthUnit: ell } = model;
  const walls = mix.chamber.walls;
  // the long-wave limit (k → 0) is judged at a tiny wavenumber, as analyze does for its eigenvector
  const k = mode.k > 0 ? mode.k : Math.max(upper, 1) * 1e-8;
  const kSI = k / ell;
  const scale = Math.max(Math.abs(mode.rate), mode.omega);
  const chemicals = model.chemicalIds.map((id, s) => {
    const c = mix.chemicals[model.chemicalIndex[s]!]!;
    const relaxationRate = c.diffusivity * kSI * kSI + model.si.reaction[s * model.S + s]!;
    return { chemical: id, relaxationRate, ratio: scale > 0 ? relaxationRate / scale : Infinity };
  });
  const slowest = chemicals.reduce((a, b) => (b.ratio < a.ratio ? b : a));
  const at = dynamicLeading(model, k);
  const dynamicRateAtMode = at === null ? null : at.re / tau;
  const check: RelaxationCheck = {
    wavenumber: mode.k / ell,
    rate: mode.rate,
    angularFrequency: mode.omega,
    chemicals,
    smallestRatio: slowest.ratio,
    dynamicRateAtMode,
    dynamic: null,
    relativeChange: null,
  };
  const changeAtMode = dynamicRateAtMode === null || mode.rate === 0 ? null : (dynamicRateAtMode - mode.rate) / Math.abs(mode.rate);
  // The change at the mode is a second trigger (several species can lag more than one ratio says), measured
  // against the same max(|λ|, |ω|) as the ratio (near an oscillatory threshold λ ≈ 0 while ω is not) and judged
  // only where that is not negligible beside the chemistry (ratio ≤ 1e6): at a stationary threshold λ ≈ 0 and
  // its change is rounding.
  const shiftAtMode = dynamicRateAtMode === null || scale === 0 ? null : Math.abs(dynamicRateAtMode - mode.rate) / scale;
  const slow = slowest.ratio < RELAXATION_RATIO || (shiftAtMode !== null && slowest.ratio <= 1e6 && shiftAtMode > RELAXATION_CHANGE);
  if (!slow) return { check, warnings: [] };

  // the fastest mode with evolving chemicals: the allowed modes (finite chamber) or a log grid (unbounded)
  const ks: { k: number; index: number | null }[] = [];
  if (walls === 'unbounded') {
    const lo = Math.min(k, Math.max(upper, 1)) * 1e-4;
    const hi = Math.max(upper, k);
    const N = 400;
    for (let i = 0; i <= N; i++) ks.push({ k: lo * Math.pow(hi / lo, i / N), index: null });
    ks.push({ k, index: null });
  } else {
    // scaled wavenumbers of a finite chamber are the integers n (model.ts: ℓ = L/π sealed, L/2π periodic)
    const nMax = Math.min(Math.max(1, Math.ceil(upper)), DYNAMIC_MODES);
    for (let n = 1; n <= nMax; n++) ks.push({ k: n, index: n });
  }
  let best: { k: number; index: number | null; re: number; im: number } | null = null;
  for (const q of ks) {
    const d = dynamicLeading(model, q.k);
    if (d !== null && (best === null || d.re > best.re)) best = { ...q, ...d };
  }
  if (best === null) return { check, warnings: [] };
  const dynamic: DynamicMode = {
    growthRate: best.re / tau,
    wavenumber: best.k / ell,
    index: best.index,
    wavelength: (2 * Math.PI * ell) / best.k,
    oscillationPeriod: best.im > 1e-9 * Math.abs(best.re) && best.im > 0 ? (2 * Math.PI * tau) / best.im : null,
  };
  check.dynamic = dynamic;
  check.relativeChange = mode.rate === 0 ? null : (dynamic.growthRate - mode.rate) / Math.abs(mode.rate);

  const pct = (x: number) => `${fmt(Math.abs(100 * x))} %`;
  const slowerFaster = (x: number) => `${pct(x)} ${x < 0 ? 'slower' : 'faster'}`;
  const where = mode.k > 0 ? `the ${metres((2 * Math.PI) / kSI)} wave` : 'the longest waves';
  // rates said as times, as a bench reads them: 1/Γ against the growth time 1/λ, or 1/|ω| (period/2π), or the decay time
  const subject = mode.rate > 0 ? 'the pattern' : 'the least stable mode';
  const against =
    mode.omega > Math.abs(mode.rate)
      ? `${subject} turns (1/ω = ${seconds(1 / mode.omega)}, a period of ${seconds((2 * Math.PI) / mode.omega)})`
      : mode.rate > 0
        ? `${subject} grows (growth time ${seconds(1 / mode.rate)})`
        : `${subject} decays (decay time ${seconds(1 / Math.abs(mode.rate))})`;
  const pace = slowest.ratio >= 1 ? `only ${fmt(slowest.ratio)} times faster` : `${fmt(1 / slowest.ratio)} times slower`;
  const head = `${slowest.chemical} relaxes ${pace} than ${against}: in about ${seconds(1 / slowest.relaxationRate)} across ${where}. The answer assumes the chemicals follow the particles at once`;
  const tail = 'Check with a simulation: brink simulate --chemicals dynamic.';
  const sameMode = Math.abs(best.k - k) <= 1e-9 * k;
  const fields = {
    chemical: slowest.chemical,
    ratio: slowest.ratio,
    relaxationRate: slowest.relaxationRate,
    dynamicGrowthRate: dynamic.growthRate,
    dynamicWavelength: dynamic.wavelength,
    relativeChange: check.relativeChange,
  };
  const turning = dynamic.oscillationPeriod !== null ? ` and oscillates with a period of ${seconds(dynamic.oscillationPeriod)}` : '';
  if (mode.rate <= 0) {
    // a mode that grows by more than rounding (1e-6 of the judged rate) with the chemicals evolving
    if (!(dynamic.growthRate > 1e-6 * scale)) return { check, warnings: [] };
    const message = `${head}; with them evolving the mixture is not stable: the ${metres(dynamic.wavelength)} wave grows (growth time ${seconds(1 / dynamic.growthRate)})${turning}. ${tail}`;
    return { check, warnings: [{ code: 'slow-chemistry', message, ...fields }] };
  }
  if (!(dynamic.growthRate > 0)) {
    const message = `${head}; with them evolving no mode grows (the least stable, at ${metres(dynamic.wavelength)}, decays in about ${seconds(1 / Math.abs(dynamic.growthRate))}): the predicted pattern may not form. ${tail}`;
    return { check, warnings: [{ code: 'slow-chemistry', message, ...fields }] };
  }
  const atMode = changeAtMode !== null && !sameMode ? `; ${slowerFaster(changeAtMode)} at ${where} itself` : '';
  const moved = sameMode ? ' at the same wavelength' : ` at ${metres(dynamic.wavelength)} instead of ${mode.k > 0 ? metres((2 * Math.PI) / kSI) : 'the longest wave'}${atMode}`;
  const period = dynamic.oscillationPeriod !== null ? `, oscillating with a period of ${seconds(dynamic.oscillationPeriod)}` : mode.omega > 0 ? ', without oscillating' : '';
  const message = `${head}, so the growth rate may be off by about ${pct(check.relativeChange!)}: with them evolving the fastest mode grows ${slowerFaster(check.relativeChange!)} (growth time ${seconds(1 / dynamic.growthRate)})${moved}${period}. ${tail}`;
  return { check, warnings: [{ code: 'slow-chemistry', message, ...fields }] };
}
