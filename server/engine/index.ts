/**
 * brink's engine: pure numerics, SI in and SI out.
 *
 * THE RULE: every number that crosses this folder's boundary is in SI base
 * units (m, s, mol, kg, K; number densities m⁻³, concentrations mol m⁻³ — the
 * same number as mM —, activities mol s⁻¹, mobilities m⁵ mol⁻¹ s⁻¹). Inside,
 * the linear algebra runs on non-dimensional numbers (model.ts) and converts
 * back before returning. The only package imported here is ml-matrix (the
 * general eigen solver, linalg/eigen.ts); nothing imports fastify,
 * better-sqlite3, zod or mathjs (a lint rule and a test enforce it).
 */
export * from './types.js';
export { analyze, determinantIndex, stateOf } from './analyze.js';
export type { AnalysisResult, CompositionEntry, Criteria, Criterion, FastestMode, State } from './analyze.js';
export { practicalChecks } from './checks.js';
export type { PracticalChecks, Warning } from './checks.js';
export { buildModel, jacobian, linearise, michaelisMenten, secondVirial } from './model.js';
export type { ScaledModel } from './model.js';
export { eigenvaluesAt, jacobianAt } from './probe.js';
export { Random } from './random.js';
export { scanModes } from './scan.js';
export { eigenDecomposition, eigenvalues } from './linalg/eigen.js';
export type { ComplexVector, EigenDecomposition, Spectrum } from './linalg/eigen.js';
export { largestSecularRoot, secularFunction, secularResidual } from './secular.js';
export { reducedCharacteristic } from './characteristic.js';
export * as constants from './constants.js';
export { stationaryDoseClosedForm, firstWavenumber } from './dose.js';
export { dispersion, type Dispersion, type DispersionPoint, type DispersionOptions } from './dispersion.js';
export { doseCap, findDose, fuelSweep, growth, pastBoundary, perturb, scaleBase, screen, stateMap, thresholdBand, withDose } from './planner.js';
export type { Boundary, CandidateResult, DoseOptions, DoseSearch, Dosing, ReasonCode, ScreenOptions, StateMap, StateMapOptions, ThresholdBand, UncertaintyOptions } from './planner.js';
