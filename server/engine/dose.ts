/**
 * Closed-form dose thresholds (docs/model.md §6).
 *
 * For one chemical without saturation or crowding (rank one), adding a dopant d
 * at density x changes Σ_m s_m/D_m by x α_d μ_d / D_d, so the stationary
 * boundary Σ_m s_m/D_m = −(D_c k₁² + κ) is crossed at
 *
 *     x* = −(D_c k₁² + κ + Σ_base s_m/D_m) · D_d / (α_d μ_d),
 *
 * linear in x. k₁ is the chamber's first mode (π/L sealed, 2π/L periodic) and
 * 0 for an unbounded chamber.
 *
 * x* is where det J(k₁) changes sign. It is the *first* stationary crossing
 * when every coupled species (base and dopant) has α μ of one sign: then all
 * eigenvalues are real and interlace the poles −k²D_m, so only one can cross
 * zero (docs/model.md §3). With mixed signs a pair of real eigenvalues (or a complex
 * pair) can turn positive through the trace before det J changes sign, and only
 * the spectrum can tell (`firstCrossing: false`).
 */
import { buildModel, linearise } from './model.js';
import type { Mixture, Species } from './types.js';

export type ClosedFormResult =
  | {
      applicable: true;
      /** x*, m⁻³ (may be ≤ 0 when the base is already past the boundary) */
      dose: number;
      crossesBelowBase: boolean;
      /** True when x* is provably the first stationary crossing (one sign of α μ throughout) */
      firstCrossing: boolean;
      /**
       * α_d μ_d of the dopant on the chemical (mol s⁻¹ × m⁵ mol⁻¹ s⁻¹ = m⁵ s⁻²): negative for a
       * self-attracting dopant. With x* ≤ 0 and the base not past the boundary, a negative value
       * means the base sits exactly on the boundary and every dose x > 0 crosses (threshold 0⁺);
       * a positive one, that the dopant pushes the other way.
       */
      dopantActivityMobility: number;
    }
  | { applicable: false; reason: string };

/** First allowed wavenumber of a chamber (1/m); 0 when unbounded. */
export function firstWavenumber(mix: Mixture): number {
  const { walls, length } = mix.chamber;
  if (walls === 'sealed') return Math.PI / length!;
  if (walls === 'periodic') return (2 * Math.PI) / length!;
  return 0;
}

/**
 * The stationary-boundary dose x* (m⁻³) of dopant `d` added to `base`.
 *
 * @returns `applicable: false` with a reason when the mixture is not rank one or
 *          the dopant has no effect (α_d μ_d = 0); `dose` may be negative when
 *          the base is already past the boundary (then `crossesBelowBase`).
 * @example stationaryDoseClosedForm(base, dopant) // { applicable: true, dose: 3.1e14, … }
 */
export function stationaryDoseClosedForm(base: Mixture, d: Species): ClosedFormResult {
  if (base.crowding) return { applicable: false, reason: 'crowding couples the species beyond rank one' };
  const all = [...base.species, d];
  if (all.some((s) => s.couplings.some((c) => c.activity?.kind === 'saturating'))) {
    return { applicable: false, reason: 'a saturating activity depends on the fuel level' };
  }
  // The chemicals that can move a particle, with the dopant present (density is irrelevant here).
  const model = buildModel({ ...base, species: [...base.species, { ...d, density: 0 }] });
  if (model.S !== 1) return { applicable: false, reason: 'needs exactly one chemical that moves the particles' };
  const sIdx = model.chemicalIndex[0]!;
  const chem = base.chemicals[sIdx]!;
  const S = base.chemicals.length;
  const { alpha, mu } = linearise({ ...base, species: all });
  let sum = 0;
  let pos = false;
  let neg = false;
  base.species.forEach((s, m) => {
    const w = alpha[m * S + sIdx]! * mu[m * S + sIdx]! * s.density;
    sum += w / s.diffusivity;
    if (w > 0) pos = true;
    if (w < 0) neg = true;
  });
  const dIdx = base.species.length;
  const ad = alpha[dIdx * S + sIdx]!;
  const md = mu[dIdx * S + sIdx]!;
  if (ad * md === 0) return { applicable: false, reason: 'the dopant has no activity × mobility on this chemical' };
  const k1 = firstWavenumber(base);
  const gamma = chem.diffusivity * k1 * k1 + chem.lossRate;
  const dose = (-(gamma + sum) * d.diffusivity) / (ad * md);
  if (ad * md > 0) pos = true;
  else neg = true;
  return { applicable: true, dose, crossesBelowBase: dose <= 0, firstCrossing: !(pos && neg), dopantActivityMobility: ad * md };
}
