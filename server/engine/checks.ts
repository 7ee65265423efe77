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
import { linearise } from './model.js';
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
