/** Small builders for engine inputs (SI) used across the tests. */
import type { Chemical, Coupling, Mixture, Species, Walls } from '../../server/engine/types.js';

export function chemical(id: string, diffusivity: number, lossRate = 0, concentration = 50): Chemical {
  return { id, diffusivity, lossRate, concentration, solubility: null };
}

export function species(id: string, diffusivity: number, density: number, couplings: Coupling[], radius = 1e-6): Species {
  return { id, diffusivity, radius, density, materialDensity: null, couplings };
}

export function constant(chemicalId: string, rate: number, mobility: number): Coupling {
  return { chemical: chemicalId, activity: { kind: 'constant', rate }, mobility };
}

export function mixture(chemicals: Chemical[], sp: Species[], walls: Walls, length: number | null = 2e-3, crowding = false): Mixture {
  return {
    chemicals,
    species: sp,
    chamber: { walls, length, depth: null },
    crowding,
    conditions: { temperature: 298.15, solventDensity: 997.05, duration: null, fieldOfView: null },
  };
}

/** Relative difference |a − b| / max(|a|, |b|, tiny). */
export function rel(a: number, b: number): number {
  return Math.abs(a - b) / Math.max(Math.abs(a), Math.abs(b), 1e-300);
}
