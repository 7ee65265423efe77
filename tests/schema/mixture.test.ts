/**
 * The mixture file: validation messages with field paths, conversion to SI,
 * the committed JSON Schema, and unit invariance of the analysis (the same
 * sample written in other units gives the same numbers to 1e-9).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { MixtureFileError, mixtureSchema, parseMixture } from '../../server/schema/mixture.js';
import { mixtureJsonSchema } from '../../server/schema/json-schema.js';

const example = (name: string) => JSON.parse(readFileSync(new URL(`../../seeds/examples/${name}`, import.meta.url), 'utf8')) as Record<string, unknown>;

function problems(doc: unknown): string[] {
  try {
    parseMixture(doc);
  } catch (e) {
    if (e instanceof MixtureFileError) return e.problems;
    throw e;
  }
  return [];
}

/** Compare two JSON-like values number by number. */
function expectClose(a: unknown, b: unknown, tol: number, path = ''): void {
  if (typeof a === 'number' && typeof b === 'number') {
    const scale = Math.max(Math.abs(a), Math.abs(b));
    if (scale > 0) expect(Math.abs(a - b) / scale, `${path}: ${a} vs ${b}`).toBeLessThan(tol);
    return;
  }
  if (Array.isArray(a) && Array.isArray(b)) {
    expect(a.length, path).toBe(b.length);
    a.forEach((x, i) => expectClose(x, b[i], tol, `${path}[${i}]`));
    return;
  }
  if (a !== null && b !== null && typeof a === 'object' && typeof b === 'object') {
    expect(Object.keys(a).sort(), path).toEqual(Object.keys(b).sort());
    for (const k of Object.keys(a)) expectClose((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], tol, `${path}.${k}`);
    return;
  }
  if (typeof a === 'string' && typeof b === 'string' && path.endsWith('.message')) return; // prose rounds numbers
  expect(a, path).toEqual(b);
}

describe('mixture file validation', () => {
  it('names every bad field with its path', () => {
    const doc = {
      chemicals: [{ id: 'fuel', diffusivity: '1.4e-9 m^2/s', concentration: '50 mM' }],
      species: [
        { id: 'A', diffusivity: '0.2 um^2/s', radius: '1 um', density: '1e-4 um^-3', couplings: [] },
        { id: 'B', diffusivity: '0.2 um^2/s', radius: '1 um', density: '1e-4 um^-3' },
        { id: 'C', diffusivity: '3 mM', radius: '-1 um', density: '1e-4 um^-3', couplings: [{ chemical: 'fuel', activity: { maxRate: '3 um', michaelis: '1 mM' } }] },
      ],
      chamber: { walls: 'sealed', length: '2 mm' },
    };
    expect(problems(doc)).toEqual([
      'species[2].diffusivity: expected length^2/time, got "3 mM" (amount/length^3)',
      'species[2].radius: must be positive, got "-1 um"',
      'species[2].couplings[0].activity.maxRate: expected amount/time, got "3 um" (length)',
    ]);
  });

  it('reports missing fields, unknown keys, unknown ids and duplicate ids', () => {
    expect(problems({ species: [{ id: 'A', diffusivity: '1 um^2/s', density: 1 }], chamber: { walls: 'unbounded' } })).toEqual(['species[0].radius: missing']);
    expect(problems({ species: [{ id: 'A', diffusivity: '1 um^2/s', radius: '1 um', density: 1, difusivity: 1 }], chamber: { walls: 'unbounded' } })[0]).toMatch(/^species\[0\]: Unrecognized key: "difusivity"/);
    expect(problems({ species: [{ id: 'A', diffusivity: '1 um^2/s', radius: '1 um', density: 1, couplings: [{ chemical: 'nope', mobility: 1 }] }], chamber: { walls: 'unbounded' } })).toEqual([
      'species[0].couplings[0].chemical: unknown chemical "nope"',
    ]);
    const dup = { id: 'A', diffusivity: '1 um^2/s', radius: '1 um', density: 1 };
    expect(problems({ species: [dup, dup], chamber: { walls: 'unbounded' } })).toEqual(['species[1].id: duplicate species id "A"']);
    expect(problems({ species: [dup], chamber: { walls: 'sealed' } })).toEqual(['chamber.length: required for sealed walls (expected length)']);
    expect(problems({ species: [{ ...dup, density: undefined }], chamber: { walls: 'unbounded' } })).toEqual(['species[0].density: give density (number density) or volumeFraction']);
    expect(problems({ species: [], chamber: { walls: 'unbounded' } })).toEqual(['species: a mixture needs at least one species']);
    expect(problems({ species: [dup], chamber: { walls: 'round' } })[0]).toMatch(/^chamber\.walls: /);
  });

  it('converts to SI, volume fractions through the radius, uncertainties alongside', () => {
    const m = parseMixture(example('stationary-janus-clusters.json'));
    const sp = m.species[0]!;
    expect(Math.abs(sp.density / (0.001 / ((4 / 3) * Math.PI * 1e-18)) - 1)).toBeLessThan(1e-12);
    expect(sp.sd?.diffusivity).toBeCloseTo(0.02e-12, 20);
    expect(sp.couplings[0]!.sd?.mobility).toBeCloseTo(10e-12, 20);
    expect(m.conditions.temperature).toBeCloseTo(298.15, 10);
    expect(m.chamber.walls).toBe('sealed');
    expect(m.chamber.length).toBeCloseTo(0.002, 15);
    expect(m.chamber.depth).toBeCloseTo(1e-4, 15);
  });
});

describe('conditions: the solvent', () => {
  const doc = (conditions?: Record<string, unknown>) => ({
    species: [{ id: 'p', diffusivity: '0.2 um^2/s', radius: '1 um', density: '1e-4 um^-3', materialDensity: '2 g/mL' }],
    chamber: { walls: 'sealed', length: '1 mm', depth: '100 um' },
    ...(conditions ? { conditions } : {}),
  });

  it('reads solventViscosity in any viscosity unit; without it the settling check uses water at the temperature', () => {
    const m = parseMixture(doc({ solventViscosity: '1.5 mPa*s', solventDensity: '1.1 g/mL' }));
    expect(m.conditions.solventViscosity).toBeCloseTo(1.5e-3, 15);
    expect(m.conditions.solventDensity).toBeCloseTo(1100, 9);
    expect(parseMixture(doc()).conditions.solventViscosity).toBeUndefined();
    expect(problems(doc({ solventViscosity: '1 mM' }))[0]).toMatch(/^conditions\.solventViscosity: /);
  });

  it('water density defaults at the temperature (998.21 kg/m³ at 20 °C, CRC table, from memory) and refuses a temperature outside the table', () => {
    expect(parseMixture(doc({ temperature: '293.15 K' })).conditions.solventDensity).toBeCloseTo(998.21, 6);
    expect(() => parseMixture(doc({ temperature: '400 K' }))).toThrow(/conditions\.solventDensity: missing: water's density is tabulated from 0 to 100 °C/);
    // with the density given, 400 K is accepted (the settling check then says it could not run: no viscosity)
    expect(parseMixture(doc({ temperature: '400 K', solventDensity: '0.94 g/mL' })).conditions.temperature).toBe(400);
  });
});

describe('JSON Schema', () => {
  it('the committed server/schema/mixture.schema.json is the generated one', () => {
    const committed = JSON.parse(readFileSync(new URL('../../server/schema/mixture.schema.json', import.meta.url), 'utf8'));
    expect(committed).toEqual(mixtureJsonSchema());
  });
  it('describes the fields, including the three accepted forms of a value', () => {
    const schema = mixtureJsonSchema() as { properties: Record<string, unknown> };
    expect(Object.keys(schema.properties)).toEqual(expect.arrayContaining(['chemicals', 'species', 'chamber', 'crowding', 'conditions']));
    expect(JSON.stringify(schema)).toContain('length^2/time');
  });
  it('every example validates', () => {
    for (const f of ['stable-janus-dispersed.json', 'stationary-janus-clusters.json', 'oscillatory-travelling-bands.json', 'saturating-enzyme-beads.json']) {
      expect(mixtureSchema.safeParse(example(f)).success, f).toBe(true);
    }
  });
});

describe('unit invariance', () => {
  it('the same mixture in SI numbers and in other units gives the same analysis to 1e-9', () => {
    const inUnits = example('oscillatory-travelling-bands.json');
    const si = {
      chemicals: [{ id: 'h2o2', diffusivity: { value: 1.4e-9, sd: 0.1e-9 }, lossRate: 0, concentration: 1000 }],
      species: [
        { id: 'ptj-swim', diffusivity: { value: 20e-12, sd: 3e-12 }, radius: 0.5e-6, density: 1.5e14, materialDensity: 2000, couplings: [{ chemical: 'h2o2', activity: { value: -3e-16, sd: 0.6e-16 }, mobility: { value: 2e-10, sd: 4e-11 } }] },
        { id: 'cat-bead', diffusivity: { value: 1e-12, sd: 1e-13 }, radius: 0.22e-6, density: 1e13, materialDensity: 1050, couplings: [{ chemical: 'h2o2', activity: { value: -5e-15, sd: 1e-15 }, mobility: { value: -1e-10, sd: 2.5e-11 } }] },
      ],
      chamber: { walls: 'sealed', length: 4e-4, depth: 5e-5 },
      conditions: { temperature: 298.15, duration: 7200, fieldOfView: 1e-3 },
    };
    const other = {
      chemicals: [{ id: 'h2o2', diffusivity: { value: '14 cm^2/s * 1e-6', sd: '1e-6 cm^2/s' }, lossRate: '0 1/h', concentration: '1 M' }],
      species: [
        { id: 'ptj-swim', diffusivity: { value: '2e7 nm^2/s', sd: '3e-12 m^2/s' }, radius: '500 nm', density: '150000 mm^-3', materialDensity: '2 kg/L', couplings: [{ chemical: 'h2o2', activity: { value: '-0.3 fmol/s', sd: '-6e-17 mol/s * -1' }, mobility: { value: '0.2 mm^2/(s*M)', sd: '4e-11 m^5/(mol*s)' } }] },
        { id: 'cat-bead', diffusivity: { value: '0.001 um^2/ms', sd: '0.1 µm^2/s' }, radius: '0.22 μm', density: '1e-5 um^-3', materialDensity: '1.05 g/cm^3', couplings: [{ chemical: 'h2o2', activity: { value: '-5 fmol/s', sd: '1 fmol/s' }, mobility: { value: '-100 um^2/(s*mM)', sd: '25 um^2/(s*mM)' } }] },
      ],
      chamber: { walls: 'sealed', length: '0.4 mm', depth: '50 um' },
      conditions: { temperature: '298.15 K', duration: '120 min', fieldOfView: '1000 um' },
    };
    const a = analyze(parseMixture(inUnits));
    expect(a.state).toBe('oscillatory');
    expectClose(JSON.parse(JSON.stringify(analyze(parseMixture(si)))), JSON.parse(JSON.stringify(a)), 1e-9);
    // "14 cm^2/s * 1e-6" is not a unit: expressions are refused, not evaluated.
    expect(problems(other)[0]).toMatch(/^chemicals\[0\]\.diffusivity\.value: cannot read/);
    other.chemicals[0]!.diffusivity = { value: '0.0014 mm^2/s', sd: '1e-6 cm^2/s' } as never;
    (other.species[0]!.couplings[0]!.activity as { sd: string }).sd = '0.06 fmol/s';
    expectClose(JSON.parse(JSON.stringify(analyze(parseMixture(other)))), JSON.parse(JSON.stringify(a)), 1e-9);
  });
});
