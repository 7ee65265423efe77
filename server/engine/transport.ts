/**
 * Transport estimates from size and temperature.
 *
 *   Stokes–Einstein (Einstein 1905):        D   = k_B T / (6π η a)
 *   Stokes–Einstein–Debye (Debye 1929):     D_r = k_B T / (8π η a³),  τ_r = 1/D_r
 *
 * Water viscosity η(T) is interpolated (linearly in ln η) in the IAPWS 2008
 * values as tabulated in the CRC Handbook of Chemistry and Physics, 0–100 °C in
 * 5 K steps — **values recalled from memory**, e.g. 1.0016 mPa·s at 20 °C and
 * 0.8900 mPa·s at 25 °C (docs/references.md). Between nodes the interpolation
 * error is below about 0.1 %.
 *
 * Water density ρ_w(T) is interpolated linearly in the CRC Handbook table of the
 * density of air-free water at 0.101325 MPa (ITS-90), 0–100 °C in 5 K steps —
 * **values recalled from memory**, e.g. 998.21 kg m⁻³ at 20 °C; the 25 °C node is
 * WATER_DENSITY_25C = 997.047 (IAPWS-95 via the CRC Handbook, constants.ts), one
 * value for the table and the constant. A temperature within 1e-9 K of a node
 * gets the node's value exactly. tests/references/sedimentation.test.ts checks
 * the table against Kell's 1975 polynomial (an independent recollection).
 *
 *   Stokes settling (Stokes 1851):  v = (2/9) (ρ_p − ρ_w) g a² / η
 *     (the terminal speed of a sphere at low Reynolds number: drag 6π η a v
 *      balances the buoyant weight (ρ_p − ρ_w) (4/3)π a³ g)
 */
import { BOLTZMANN, STANDARD_GRAVITY, WATER_DENSITY_25C } from './constants.js';
import { EngineInputError } from './types.js';

/** [°C, mPa·s] — IAPWS 2008 via the CRC Handbook, recalled from memory. */
export const WATER_VISCOSITY_TABLE: readonly (readonly [number, number])[] = [
  [0, 1.7914], [5, 1.5182], [10, 1.3059], [15, 1.1375], [20, 1.0016], [25, 0.89], [30, 0.7972],
  [35, 0.7191], [40, 0.6527], [45, 0.5958], [50, 0.5465], [55, 0.5036], [60, 0.466], [65, 0.4329],
  [70, 0.4035], [75, 0.3775], [80, 0.3544], [85, 0.3337], [90, 0.3149], [95, 0.2979], [100, 0.2816],
];

/**
 * Viscosity of liquid water, Pa·s, at temperature T (K), 273.15–373.15 K.
 * @example waterViscosity(298.15) // 8.900e-4
 */
export function waterViscosity(T: number): number {
  const c = T - 273.15;
  const tab = WATER_VISCOSITY_TABLE;
  const i = bracket(tab, c, 'water viscosity');
  const [c0, e0] = tab[i]!;
  const [c1, e1] = tab[i + 1]!;
  const f = (c - c0) / (c1 - c0);
  return Math.exp(Math.log(e0) + f * (Math.log(e1) - Math.log(e0))) * 1e-3;
}

/** [°C, kg m⁻³] — CRC Handbook density of water (ITS-90), recalled from memory; 25 °C is WATER_DENSITY_25C (IAPWS-95). */
export const WATER_DENSITY_TABLE: readonly (readonly [number, number])[] = [
  [0, 999.84], [5, 999.97], [10, 999.7], [15, 999.1], [20, 998.21], [25, WATER_DENSITY_25C], [30, 995.65],
  [35, 994.03], [40, 992.22], [45, 990.21], [50, 988.04], [55, 985.69], [60, 983.2], [65, 980.55],
  [70, 977.76], [75, 974.84], [80, 971.79], [85, 968.61], [90, 965.31], [95, 961.89], [100, 958.35],
];

/** Index of the table interval holding c (°C), or throws outside 0–100 °C. */
function bracket(tab: readonly (readonly [number, number])[], c: number, what: string): number {
  if (!(c >= tab[0]![0] - 1e-9 && c <= tab[tab.length - 1]![0] + 1e-9)) {
    throw new EngineInputError('temperature', `${what} is tabulated from 0 to 100 °C, got ${c.toFixed(2)} °C`);
  }
  let i = Math.min(tab.length - 2, Math.max(0, Math.floor(c / 5)));
  while (i > 0 && c < tab[i]![0]) i--;
  return i;
}

/**
 * Density of liquid water, kg m⁻³, at temperature T (K), 273.15–373.15 K
 * (linear between the 5 K nodes of the table; the curvature of ρ_w(T) adds at most about 0.03 kg m⁻³ mid-interval).
 * @example waterDensity(298.15) // 997.047 (the table's 25 °C node)
 */
export function waterDensity(T: number): number {
  const c = T - 273.15;
  const tab = WATER_DENSITY_TABLE;
  const i = bracket(tab, c, 'water density');
  // at a node (298.15 − 273.15 is not exactly 25 in binary), the node's own value
  for (const [cn, rn] of [tab[i]!, tab[i + 1]!]) if (Math.abs(c - cn) < 1e-9) return rn;
  const [c0, r0] = tab[i]!;
  const [c1, r1] = tab[i + 1]!;
  return r0 + ((c - c0) / (c1 - c0)) * (r1 - r0);
}

/**
 * Stokes terminal speed of a sphere, m s⁻¹, signed: > 0 sinks (ρ_p > ρ_w), < 0 rises.
 * v = (2/9) Δρ g a² / η = Δρ V g / (6π η a).
 * @param radius a, m; densityDifference ρ_p − ρ_w, kg m⁻³; viscosity η, Pa·s; gravity g, m s⁻²
 * @example stokesSettlingSpeed(0.5e-6, 1002.95, 0.89e-3) // 6.14e-7 (0.61 µm/s)
 */
export function stokesSettlingSpeed(radius: number, densityDifference: number, viscosity: number, gravity = STANDARD_GRAVITY): number {
  if (!(radius > 0)) throw new EngineInputError('radius', 'must be positive');
  if (!(viscosity > 0)) throw new EngineInputError('viscosity', 'must be positive');
  return ((2 / 9) * densityDifference * gravity * radius * radius) / viscosity;
}

/** Stokes–Einstein translational diffusivity, m² s⁻¹ (a in m, T in K, η in Pa·s). */
export function stokesEinstein(radius: number, T: number, viscosity = waterViscosity(T)): number {
  if (!(radius > 0)) throw new EngineInputError('radius', 'must be positive');
  return (BOLTZMANN * T) / (6 * Math.PI * viscosity * radius);
}

/** Stokes–Einstein–Debye rotational diffusivity, s⁻¹. */
export function stokesEinsteinDebye(radius: number, T: number, viscosity = waterViscosity(T)): number {
  if (!(radius > 0)) throw new EngineInputError('radius', 'must be positive');
  return (BOLTZMANN * T) / (8 * Math.PI * viscosity * radius ** 3);
}
