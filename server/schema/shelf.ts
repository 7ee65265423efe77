/**
 * Shelf records: the chemicals and species a lab keeps, as typed by a user and
 * as stored. A stored physical value keeps its SI number, its standard
 * uncertainty (SI), the unit and the text the user typed (to show it back as
 * typed) and its provenance.
 *
 *   typed:  "0.22 um^2/s"  or  { "value": "0.22 um^2/s", "sd": "0.02 um^2/s",
 *                                "provenance": { "source": "measured", … } }
 *   stored: { "si": 2.2e-13, "sd": 2e-14, "unit": "um^2/s", "input": "0.22 um^2/s",
 *             "sdInput": "0.02 um^2/s", "provenance": { … } }
 */
import { z } from 'zod';
import { AVOGADRO } from '../engine/constants.js';
import { sphereVolume } from '../engine/checks.js';
import type { Chemical, Coupling, Species } from '../engine/types.js';
import { sdOf, toEngineCoupling } from './mixture.js';
import { DIMENSIONS, formatDimension, parseQuantity, UnitError, type Dimension, type Quantity, type Sign } from '../units/index.js';
import { LIMITS } from './limits.js';

export const provenanceSchema = z.strictObject({
  source: z.enum(['measured', 'literature', 'estimated', 'demo']),
  reference: z.string().max(LIMITS.text).optional(),
  date: z.string().regex(/^\d{4}-\d{2}-\d{2}$/, 'a date is YYYY-MM-DD').optional(),
  by: z.string().max(200).optional(),
  /** id of the stored measurement this value was fitted from */
  measurement: z.number().int().min(1).optional(),
});
export type Provenance = z.infer<typeof provenanceSchema>;

export interface StoredQuantity {
  /** SI value */
  si: number;
  /** standard uncertainty, SI */
  sd: number;
  /** unit as typed, or null for a bare SI number */
  unit: string | null;
  /** the value exactly as typed */
  input: string | number;
  /** the uncertainty exactly as typed */
  sdInput?: string | number;
  provenance?: Provenance;
}

const scalar = z.union([z.number(), z.string().max(LIMITS.quantity)]);
const typedQuantity = z.union([scalar, z.strictObject({ value: scalar, sd: scalar.optional(), provenance: provenanceSchema.optional() })]);

/** A physical shelf field of the given dimension and sign, stored with its input and provenance. */
export function storedQuantity(dimension: Dimension, sign: Sign, description: string) {
  return typedQuantity
    .describe(`${description} — SI number, string with a unit (${formatDimension(dimension)}; at most ${LIMITS.quantity} characters), or { value, sd, provenance }`)
    .transform((raw, ctx): StoredQuantity => {
      const obj = typeof raw === "object" && raw !== null ? raw : null;
      try {
        const q = parseQuantity(obj ? { value: obj.value, ...(obj.sd !== undefined ? { sd: obj.sd } : {}) } : raw, { dimension, sign }, '');
        const out: StoredQuantity = { si: q.value, sd: q.sd, unit: q.unit, input: obj ? obj.value : (raw as string | number) };
        if (obj?.sd !== undefined) out.sdInput = obj.sd;
        if (obj?.provenance) out.provenance = obj.provenance;
        return out;
      } catch (e) {
        if (e instanceof UnitError) {
          ctx.issues.push({ code: 'custom', message: e.reason, input: raw, path: e.path.split('.').filter((p) => p !== '') });
          return z.NEVER;
        }
        throw e;
      }
    });
}

/** A stored quantity back in the form it was typed (for export and editing). */
export function typedForm(q: StoredQuantity): z.input<typeof typedQuantity> {
  if (q.sdInput === undefined && q.provenance === undefined) return q.input;
  return { value: q.input, ...(q.sdInput !== undefined ? { sd: q.sdInput } : {}), ...(q.provenance ? { provenance: q.provenance } : {}) };
}

function isStored(x: unknown): x is StoredQuantity {
  return x !== null && typeof x === 'object' && typeof (x as StoredQuantity).si === 'number' && 'input' in (x as object);
}

/** Walk a stored record and put every stored quantity back in its typed form. */
export function toTypedRecord(x: unknown): unknown {
  if (isStored(x)) return typedForm(x);
  if (Array.isArray(x)) return x.map(toTypedRecord);
  if (x !== null && typeof x === 'object') return Object.fromEntries(Object.entries(x).map(([k, v]) => [k, toTypedRecord(v)]));
  return x;
}

export const keySchema = z
  .string()
  .min(1)
  .max(LIMITS.id)
  .regex(/^[A-Za-z0-9][A-Za-z0-9_.:-]*$/, 'an id is letters, digits and _ . : - (starting with a letter or digit)');

export const chemicalRecordSchema = z.strictObject({
  id: keySchema,
  name: z.string().min(1).max(200),
  diffusivity: storedQuantity(DIMENSIONS.diffusivity, 'positive', 'diffusivity in water'),
  lossRate: storedQuantity(DIMENSIONS.rate, 'nonnegative', 'first-order bulk loss rate').optional(),
  molarMass: storedQuantity(DIMENSIONS.molarMass, 'positive', 'molar mass').optional(),
  solubility: storedQuantity(DIMENSIONS.concentration, 'positive', 'saturation concentration, for a gas').optional(),
  stock: z
    .strictObject({
      description: z.string().max(500),
      massFraction: storedQuantity(DIMENSIONS.dimensionless, 'nonnegative', 'mass fraction of the stock (w/w)').optional(),
      density: storedQuantity(DIMENSIONS.massDensity, 'positive', 'mass density of the stock solution').optional(),
      concentration: storedQuantity(DIMENSIONS.concentration, 'positive', 'molar concentration of the stock').optional(),
    })
    .optional(),
  provenance: provenanceSchema.optional(),
  notes: z.string().max(5000).optional(),
});
export type ChemicalRecord = z.output<typeof chemicalRecordSchema>;

const couplingRecordSchema = z
  .strictObject({
    chemical: keySchema,
    activity: z
      .union([
        z
          .strictObject({
            maxRate: storedQuantity(DIMENSIONS.amountRate, 'nonnegative', 'per-particle maximal turnover'),
            michaelis: storedQuantity(DIMENSIONS.concentration, 'positive', 'Michaelis constant'),
            product: keySchema.nullable().optional(),
            productYield: z.number().gt(0).max(1000).optional().describe('product made per fuel turned over (default 1; 0.5 for catalase)'),
          })
          .refine((a) => a.productYield === undefined || a.product != null, { message: 'a yield needs a product (give product)', path: ['productYield'] }),
        storedQuantity(DIMENSIONS.amountRate, 'any', 'activity (> 0 produces, < 0 consumes)'),
      ])
      .optional(),
    mobility: storedQuantity(DIMENSIONS.mobility, 'any', 'mobility (> 0 repelled, < 0 attracted)').optional(),
  })
  .refine((c) => c.activity !== undefined || c.mobility !== undefined, { message: 'a coupling needs an activity, a mobility or both' });

const amountFields = {
  density: storedQuantity(DIMENSIONS.numberDensity, 'nonnegative', 'number density').optional(),
  volumeFraction: storedQuantity(DIMENSIONS.dimensionless, 'nonnegative', 'volume fraction').optional(),
  massConcentration: storedQuantity(DIMENSIONS.massDensity, 'nonnegative', 'mass concentration').optional(),
  molarConcentration: storedQuantity(DIMENSIONS.concentration, 'nonnegative', 'molar concentration').optional(),
};

export const speciesRecordSchema = z.strictObject({
  id: keySchema,
  name: z.string().min(1).max(200),
  kind: z.enum(['colloid', 'enzyme', 'other']),
  diffusivity: storedQuantity(DIMENSIONS.diffusivity, 'positive', 'translational diffusivity'),
  radius: storedQuantity(DIMENSIONS.length, 'positive', 'hydrodynamic radius'),
  materialDensity: storedQuantity(DIMENSIONS.massDensity, 'positive', 'mass density of the particle material').optional(),
  molarMass: storedQuantity(DIMENSIONS.molarMass, 'positive', 'molar mass (enzymes)').optional(),
  stock: z.strictObject({ description: z.string().max(500), ...amountFields }).optional(),
  couplings: z.array(couplingRecordSchema).max(LIMITS.couplings).default([]).describe(`how the species acts on and moves in each chemical (at most ${LIMITS.couplings})`),
  provenance: provenanceSchema.optional(),
  notes: z.string().max(5000).optional(),
});
export type SpeciesRecord = z.output<typeof speciesRecordSchema>;

export type ShelfType = 'chemical' | 'species';

/** Input-side amount of a species in a sample: exactly one of the four forms. */
export const amountSchema = z.strictObject({ ...amountFields });
export type Amount = z.output<typeof amountSchema>;

/** Problems converting a species amount, as `field: message`. */
export class AmountError extends Error {
  override readonly name = 'AmountError';
  constructor(
    readonly field: string,
    readonly reason: string,
  ) {
    super(`${field}: ${reason}`);
  }
}

/**
 * Number density (m⁻³, with its sd) of a species from one amount form:
 * volume fraction φ/((4/3)πa³), mass concentration c/(M/N_A) for a species with
 * a molar mass or c/(ρ_material (4/3)πa³) for one with a material density, molar
 * concentration c N_A.
 */
export function numberDensity(sp: SpeciesRecord, amount: Amount): { value: number; sd: number } {
  const given = (['density', 'volumeFraction', 'massConcentration', 'molarConcentration'] as const).filter((k) => amount[k] !== undefined);
  if (given.length !== 1) throw new AmountError('density', 'give exactly one of density, volumeFraction, massConcentration, molarConcentration');
  const k = given[0]!;
  const q = amount[k]!;
  if (k === 'density') return { value: q.si, sd: q.sd };
  if (k === 'volumeFraction') {
    const v = sphereVolume(sp.radius.si);
    return { value: q.si / v, sd: q.sd / v };
  }
  if (k === 'molarConcentration') return { value: q.si * AVOGADRO, sd: q.sd * AVOGADRO };
  let mass: number;
  if (sp.molarMass) mass = sp.molarMass.si / AVOGADRO;
  else if (sp.materialDensity) mass = sp.materialDensity.si * sphereVolume(sp.radius.si);
  else throw new AmountError('massConcentration', `species "${sp.id}" has neither a molar mass nor a material density to convert a mass concentration`);
  return { value: q.si / mass, sd: q.sd / mass };
}

/** A shelf chemical at a concentration, for the engine (SI). */
export function engineChemical(c: ChemicalRecord, concentration: number, concentrationSd = 0): Chemical {
  const out: Chemical = {
    id: c.id,
    diffusivity: c.diffusivity.si,
    lossRate: c.lossRate?.si ?? 0,
    concentration,
    solubility: c.solubility?.si ?? null,
  };
  const s = sdOf([
    ['diffusivity', c.diffusivity],
    ['lossRate', c.lossRate],
    ['solubility', c.solubility],
  ]);
  if (s || concentrationSd > 0) out.sd = { ...(s ?? {}), ...(concentrationSd > 0 ? { concentration: concentrationSd } : {}) };
  return out;
}

/** A shelf species at a number density, for the engine (SI). */
export function engineSpecies(sp: SpeciesRecord, density: { value: number; sd: number }): Species {
  const q = (x: StoredQuantity | undefined): Quantity | undefined => (x === undefined ? undefined : { value: x.si, sd: x.sd, unit: x.unit });
  const couplings: Coupling[] = sp.couplings.map((c) => {
    const a = c.activity;
    const activity =
      a === undefined
        ? undefined
        : 'maxRate' in a
          ? { maxRate: q(a.maxRate)!, michaelis: q(a.michaelis)!, product: a.product ?? null, ...(a.productYield !== undefined ? { productYield: a.productYield } : {}) }
          : q(a);
    return toEngineCoupling({ chemical: c.chemical, activity, mobility: q(c.mobility) });
  });
  const out: Species = {
    id: sp.id,
    diffusivity: sp.diffusivity.si,
    radius: sp.radius.si,
    density: density.value,
    materialDensity: sp.materialDensity?.si ?? null,
    couplings,
  };
  const s = sdOf([
    ['diffusivity', sp.diffusivity],
    ['radius', sp.radius],
    ['materialDensity', sp.materialDensity],
  ]);
  if (s || density.sd > 0) out.sd = { ...(s ?? {}), ...(density.sd > 0 ? { density: density.sd } : {}) };
  return out;
}

/** Chemical keys a species refers to (couplings and saturating products). */
export function referencedChemicals(sp: SpeciesRecord): string[] {
  const out = new Set<string>();
  for (const c of sp.couplings) {
    out.add(c.chemical);
    const a = c.activity;
    if (a !== undefined && 'maxRate' in a && a.product) out.add(a.product);
  }
  return [...out];
}
