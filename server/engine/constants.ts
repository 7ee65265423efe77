/** Physical constants (SI). */

/** Boltzmann constant, J K⁻¹ — exact since the 2019 SI redefinition (CODATA). */
export const BOLTZMANN = 1.380649e-23;
/** Avogadro constant, mol⁻¹ — exact since the 2019 SI redefinition (CODATA). */
export const AVOGADRO = 6.02214076e23;
/** Standard acceleration of gravity, m s⁻² — conventional value (3rd CGPM, 1901). */
export const STANDARD_GRAVITY = 9.80665;
/** Default temperature, K (25 °C). */
export const DEFAULT_TEMPERATURE = 298.15;
/**
 * Density of air-free water at 25 °C and 0.101325 MPa, kg m⁻³: 997.047, the
 * IAPWS-95 value as tabulated in the CRC Handbook of Chemistry and Physics
 * (recalled from memory; see docs/references.md). It is also the 25 °C node of
 * the water density table (`WATER_DENSITY_TABLE` in transport.ts), so the
 * default solvent density at 25 °C and this constant are one value.
 */
export const WATER_DENSITY_25C = 997.047;
