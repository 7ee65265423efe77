/**
 * The benchmark's invented inputs, drawn with the engine's seeded Random: a
 * shelf document (two chemicals, a 6-species base, 200 candidates) in the
 * shelf's own format, the sample request that uses it, and random 6-species
 * 2-chemical mixtures for the analysis workload. Magnitudes are the plausible
 * ones of bench/run.ts and the demo shelf (D 1e-13–1e-11 m²/s, 1e13–1e15 m⁻³,
 * |α| ~ 1e-16 mol/s, |μ| ~ 2e-11 m⁵ mol⁻¹ s⁻¹); they are benchmark input, never
 * a check. Every number is written in SI with its SI unit, so the shelf reads
 * back exactly the numbers drawn here.
 */
import { analyze } from '../server/engine/analyze.js';
import { Random } from '../server/engine/random.js';
import type { Mixture, Walls } from '../server/engine/types.js';
import { openDatabase } from '../server/store/db.js';
import { shelfRepository } from '../server/store/shelf.js';
import { shelfService, shelfSampleSchema } from '../server/shelf/service.js';

export const FUEL = 'bench-fuel';
export const PRODUCT = 'bench-product';
const CHAMBER = { walls: 'sealed', length: '2e-3 m', depth: '1e-4 m' } as const;
const CHEMICAL_LEVELS = { [FUEL]: '50 mol/m^3', [PRODUCT]: '1 mol/m^3' };
const PROVENANCE = { source: 'demo', reference: 'invented benchmark input (bench/inputs.ts); not a measurement', date: '2026-12-02', by: 'brink benchmark (invented)' };

const sign = (rng: Random) => (rng.uniform() < 0.5 ? -1 : 1);
/** A value and a relative sd, as a stored quantity with an SI unit. */
const q = (value: number, unit: string, relSd: number) => ({ value: `${value} ${unit}`, sd: `${Math.abs(value) * relSd} ${unit}` });

interface Drawn {
  id: string;
  diffusivity: number;
  radius: number;
  couplings: { chemical: string; activity: number; mobility: number }[];
}

/** One species; `stableAlone` ties each mobility's sign to its activity's (α μ > 0: not self-attracting). */
function drawSpecies(rng: Random, id: string, stableAlone: boolean): Drawn {
  return {
    id,
    diffusivity: 10 ** rng.between(-13, -11),
    radius: 10 ** rng.between(-6.3, -5.7),
    couplings: [FUEL, PRODUCT].map((chemical) => {
      const activity = (chemical === FUEL ? -1 : 1) * 10 ** rng.between(-16.5, -15.5);
      const mobility = (stableAlone ? Math.sign(activity) : sign(rng)) * 10 ** rng.between(-11.2, -10.5);
      return { chemical, activity, mobility };
    }),
  };
}

function record(s: Drawn, kind: string) {
  return {
    id: s.id,
    name: `${kind} ${s.id} (invented benchmark species)`,
    kind: 'colloid',
    diffusivity: q(s.diffusivity, 'm^2/s', 0.1),
    radius: `${s.radius} m`,
    materialDensity: '1050 kg/m^3',
    couplings: s.couplings.map((c) => ({ chemical: c.chemical, activity: q(c.activity, 'mol/s', 0.2), mobility: q(c.mobility, 'm^5/(mol*s)', 0.2) })),
    provenance: PROVENANCE,
  };
}

export interface BenchShelf {
  /** The shelf document (format brink-shelf 1) */
  document: Record<string, unknown>;
  /** The base sample as a plan or sample request gives it (units as typed) */
  sample: { species: { id: string; density: string }[]; chemicals: Record<string, string>; chamber: typeof CHAMBER };
  candidates: string[];
}

/**
 * The shelf of the screening workloads: a base of 6 species drawn until its
 * analysis is stable (seeded, so always the same one) and `count` candidates
 * with mixed signs (about half self-attracting, so most have a threshold).
 */
export function benchShelf(seed = 11, count = 200): BenchShelf {
  const rng = new Random(seed);
  const chemicals = [
    { id: FUEL, name: 'benchmark fuel (invented)', diffusivity: q(1.4e-9, 'm^2/s', 0.05), lossRate: '1e-3 1/s', provenance: PROVENANCE },
    { id: PRODUCT, name: 'benchmark product (invented)', diffusivity: q(2e-9, 'm^2/s', 0.05), lossRate: '0 1/s', provenance: PROVENANCE },
  ];
  for (let attempt = 0; attempt < 1000; attempt++) {
    const base = Array.from({ length: 6 }, (_, m) => drawSpecies(rng, `bench-base-${m + 1}`, true));
    const densities = base.map(() => 10 ** rng.between(13, 14.5));
    const sample = { species: base.map((s, m) => ({ id: s.id, density: `${densities[m]} m^-3` })), chemicals: CHEMICAL_LEVELS, chamber: CHAMBER };
    const document = { format: 'brink-shelf', version: 1, chemicals, species: base.map((s) => record(s, 'base')) };
    if (analyze(mixtureOf(document, sample).mixture).state !== 'stable') continue;
    const cands = Array.from({ length: count }, (_, i) => drawSpecies(rng, `bench-cand-${String(i + 1).padStart(3, '0')}`, false));
    return {
      document: { ...document, species: [...document.species, ...cands.map((s) => record(s, 'candidate'))] },
      sample,
      candidates: cands.map((s) => s.id),
    };
  }
  throw new Error('no stable base in 1000 draws: change the magnitudes in bench/inputs.ts');
}

/** The engine's base mixture and candidates, read through the shelf as a plan reads them. */
export function mixtureOf(document: Record<string, unknown>, sample: BenchShelf['sample'], candidates: string[] = []) {
  // a throwaway in-memory shelf, so the numbers go through the same conversion as the service's
  return withMemoryShelf(document, (service) => service.buildMixture(shelfSampleSchema.parse(sample), candidates));
}

function withMemoryShelf<T>(document: Record<string, unknown>, f: (s: ReturnType<typeof shelfService>) => T): T {
  const db = openDatabase(':memory:');
  try {
    const service = shelfService(shelfRepository(db));
    service.importShelf(document, { author: 'benchmark', note: 'invented benchmark shelf' });
    return f(service);
  } finally {
    db.close();
  }
}

/** A random 6-species (M), 2-chemical (S) mixture with constant couplings of mixed signs, as bench/run.ts draws them. */
export function randomMixture(rng: Random, M = 6, S = 2, walls: Walls = 'sealed'): Mixture {
  const chemicals = Array.from({ length: S }, (_, s) => ({ id: `c${s}`, diffusivity: 1e-9, lossRate: rng.uniform() < 0.5 ? 0 : 1e-3, concentration: 50, solubility: null }));
  const species = Array.from({ length: M }, (_, m) => ({
    id: `s${m}`,
    diffusivity: 10 ** rng.between(-13, -11),
    radius: 1e-6,
    density: 10 ** rng.between(13, 15),
    materialDensity: null,
    couplings: chemicals.map((c) => ({ chemical: c.id, activity: { kind: 'constant' as const, rate: sign(rng) * 1e-16 }, mobility: sign(rng) * 2e-11 })),
  }));
  return { chemicals, species, chamber: { walls, length: 2e-3, depth: null }, crowding: false, conditions: { temperature: 298.15, solventDensity: 997.05, duration: null, fieldOfView: null } };
}
