/** Physical constants (SI). */

/** Boltzmann constant, J K⁻¹ — exact since the 2019 SI redefinition (CODATA). */
export const BOLTZMANN = 1.380649e-23;
/** Avogadro constant, mol⁻¹ — exact since the 2019 SI redefinition (CODATA). */
export const AVOGADRO = 6.02214076e23;
/** Standard acceleration of gravity, m s⁻² — conventional value (3rd CGPM, 1901). */
export const STANDARD_GRAVITY = 9.80665;
/** Default temperature, K (25 °C). */
export const DEFAULT_TEMPERATURE = 298.15;
/** Density of water at 25 °C, kg m⁻³ — handbook value recalled from memory (≈ 997.05). */
export const WATER_DENSITY_25C = 997.05;
