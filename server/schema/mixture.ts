/**
 * The mixture file (docs/model.md §9): a zod schema that validates the JSON, reads
 * every physical value through `server/units/` into SI, and converts the
 * result to the engine's `Mixture`. Errors carry field paths such as
 * `species[2].diffusivity`.
 *
 * The JSON Schema of the input format is generated from this file by
 * `npm run schema` into `server/schema/mixture.schema.json` (a test keeps the
 * committed copy in step).
 */
import { z } from 'zod';
import { DEFAULT_TEMPERATURE } from '../engine/constants.js';
import { sphereVolume } from '../engine/checks.js';
import { waterDensity } from '../engine/transport.js';
import { EngineInputError, type Activity, type Chemical, type Coupling, type Mixture, type Species } from '../engine/types.js';
import { DIMENSIONS, formatDimension, parseQuantity, UnitError, type Dimension, type Quantity, type Sign } from '../units/index.js';
import { LIMITS } from './limits.js';

const scalarInput = z.union([z.number(), z.string().max(LIMITS.quantity)]);
const valueInput = z.union([scalarInput, z.strictObject({ value: scalarInput, sd: scalarInput.optional() })]);

/** A physical value field of the given dimension and sign, read into SI. */
export function quantity(dimension: Dimension, sign: Sign, description: string) {
  return valueInput
    .describe(`${description} — SI number, string with a unit (${formatDimension(dimension)}; at most ${LIMITS.quantity} characters), or { value, sd }`)
    .transform((raw, ctx): Quantity => {
      try {
        return parseQuantity(raw, { dimension, sign }, '');
      } catch (e) {
        if (e instanceof UnitError) {
          const suffix = e.path.split('.').filter((p) => p !== '');
          ctx.issues.push({ code: 'custom', message: e.reason, input: raw, path: suffix });
          return z.NEVER;
        }
        throw e;
      }
    });
}

const id = z.string().min(1).max(LIMITS.id).regex(/^[A-Za-z0-9][A-Za-z0-9_.:-]*$/, 'an id is letters, digits and _ . : - (starting with a letter or digit)');

const chemicalSchema = z.strictObject({
  id,
  name: z.string().max(LIMITS.name).optional(),
  diffusivity: quantity(DIMENSIONS.diffusivity, 'positive', 'diffusivity D_s'),
  lossRate: quantity(DIMENSIONS.rate, 'nonnegative', 'first-order bulk loss rate κ_s').optional(),
  concentration: quantity(
    DIMENSIONS.concentration,
    'nonnegative',
    'uniform starting concentration c_s; optional: absent means 0 (none at the start, right for a product), with a no-concentration warning; a consumed chemical at 0 is an absent fuel (fuel check lifetime 0, fuel-runs-out)',
  ).optional(),
  solubility: quantity(DIMENSIONS.concentration, 'positive', 'saturation concentration when the chemical is a gas').optional(),
});

const saturatingSchema = z.strictObject({
  maxRate: quantity(DIMENSIONS.amountRate, 'nonnegative', 'per-particle maximal turnover V'),
  michaelis: quantity(DIMENSIONS.concentration, 'positive', 'Michaelis constant K_m'),
  product: id.nullable().optional(),
  productYield: z
    .number()
    .gt(0)
    .max(1000)
    .optional()
    .describe('stoichiometric yield: product made per fuel turned over (default 1; e.g. 0.5 for catalase, 2 H2O2 → 2 H2O + O2); needs a product'),
});

const couplingSchema = z
  .strictObject({
    chemical: id,
    activity: z.union([saturatingSchema, quantity(DIMENSIONS.amountRate, 'any', 'activity α (> 0 produces, < 0 consumes)')]).optional(),
    mobility: quantity(DIMENSIONS.mobility, 'any', 'mobility μ (> 0 repelled, < 0 attracted)').optional(),
  })
  .refine((c) => c.activity !== undefined || c.mobility !== undefined, { message: 'a coupling needs an activity, a mobility or both' });

const speciesSchema = z.strictObject({
  id,
  name: z.string().max(LIMITS.name).optional(),
  diffusivity: quantity(DIMENSIONS.diffusivity, 'positive', 'translational diffusivity D_m'),
  radius: quantity(DIMENSIONS.length, 'positive', 'hydrodynamic radius a_m'),
  density: quantity(DIMENSIONS.numberDensity, 'nonnegative', 'number density ρ_m').optional(),
  volumeFraction: quantity(DIMENSIONS.dimensionless, 'nonnegative', 'volume fraction, instead of density').optional(),
  materialDensity: quantity(DIMENSIONS.massDensity, 'positive', 'mass density of the particle material (sedimentation)').optional(),
  couplings: z.array(couplingSchema).max(LIMITS.couplings).default([]).describe(`how the species acts on and moves in each chemical (at most ${LIMITS.couplings})`),
});

export const chamberSchema = z.strictObject({
  walls: z.enum(['sealed', 'periodic', 'unbounded']),
  length: quantity(DIMENSIONS.length, 'positive', 'lateral chamber size L').optional(),
  depth: quantity(DIMENSIONS.length, 'positive', 'chamber depth H').optional(),
});

export const conditionsSchema = z.strictObject({
  temperature: quantity(DIMENSIONS.temperature, 'positive', 'temperature (default 25 °C)').optional(),
  solventDensity: quantity(DIMENSIONS.massDensity, 'positive', 'solvent mass density (default water at the temperature, 997.047 kg/m^3 at 25 °C)').optional(),
  solventViscosity: quantity(DIMENSIONS.viscosity, 'positive', 'solvent viscosity for the settling check (default water at the temperature, 0.89 mPa*s at 25 °C)').optional(),
  duration: quantity(DIMENSIONS.time, 'positive', 'planned observation time').optional(),
  fieldOfView: quantity(DIMENSIONS.length, 'positive', 'width of the imaging field').optional(),
});

type ParsedSpecies = z.output<typeof speciesSchema>;

/** Cross-field rules: ids unique and referenced ids present, chamber length where walls need it. */
function crossCheck(
  m: { chemicals: { id: string }[]; species: ParsedSpecies[]; chamber: z.output<typeof chamberSchema> },
  ctx: z.RefinementCtx,
  needAmount: boolean,
): void {
  const chem = new Set<string>();
  m.chemicals.forEach((c, i) => {
    if (chem.has(c.id)) ctx.addIssue({ code: 'custom', message: `duplicate chemical id "${c.id}"`, path: ['chemicals', i, 'id'] });
    chem.add(c.id);
  });
  const sp = new Set<string>();
  m.species.forEach((s, i) => {
    if (sp.has(s.id)) ctx.addIssue({ code: 'custom', message: `duplicate species id "${s.id}"`, path: ['species', i, 'id'] });
    sp.add(s.id);
    if (needAmount && s.density === undefined && s.volumeFraction === undefined) {
      ctx.addIssue({ code: 'custom', message: 'give density (number density) or volumeFraction', path: ['species', i, 'density'] });
    }
    if (s.density !== undefined && s.volumeFraction !== undefined) {
      ctx.addIssue({ code: 'custom', message: 'give density or volumeFraction, not both', path: ['species', i, 'volumeFraction'] });
    }
    s.couplings.forEach((c, j) => {
      if (!chem.has(c.chemical)) ctx.addIssue({ code: 'custom', message: `unknown chemical "${c.chemical}"`, path: ['species', i, 'couplings', j, 'chemical'] });
      const a = c.activity;
      if (a !== undefined && 'maxRate' in a && a.product != null) {
        if (!chem.has(a.product)) ctx.addIssue({ code: 'custom', message: `unknown chemical "${a.product}"`, path: ['species', i, 'couplings', j, 'activity', 'product'] });
        if (a.product === c.chemical) ctx.addIssue({ code: 'custom', message: 'the product must differ from the fuel', path: ['species', i, 'couplings', j, 'activity', 'product'] });
      }
      if (a !== undefined && 'maxRate' in a && a.productYield !== undefined && a.product == null) {
        ctx.addIssue({ code: 'custom', message: 'a yield needs a product (give activity.product)', path: ['species', i, 'couplings', j, 'activity', 'productYield'] });
      }
    });
  });
  if (m.chamber.walls !== 'unbounded' && m.chamber.length === undefined) {
    ctx.addIssue({ code: 'custom', message: `required for ${m.chamber.walls} walls (expected length)`, path: ['chamber', 'length'] });
  }
}

const mixtureObject = z.strictObject({
  $schema: z.string().max(LIMITS.text).optional(),
  name: z.string().max(LIMITS.name).optional(),
  description: z.string().max(LIMITS.text).optional(),
  chemicals: z.array(chemicalSchema).max(LIMITS.chemicals).default([]).describe(`the chemicals of the sample (at most ${LIMITS.chemicals})`),
  species: z
    .array(speciesSchema)
    .min(1, 'a mixture needs at least one species')
    .max(LIMITS.species)
    .describe(`the species of the sample (at least 1, at most ${LIMITS.species}: one analysis then stays within a moment)`),
  chamber: chamberSchema,
  crowding: z.boolean().default(false),
  conditions: conditionsSchema.optional(),
});

/** The mixture file, validated and read into SI quantities. */
export const mixtureSchema = mixtureObject.superRefine((m, ctx) => crossCheck(m, ctx, true));
export type MixtureInput = z.input<typeof mixtureSchema>;
export type ParsedMixture = z.output<typeof mixtureSchema>;

/**
 * An object keyed by user ids, as z.record, but one that refuses a `__proto__`
 * key instead of dropping it (zod strips it silently; JSON.parse keeps it as an
 * own property). Read the result with `Object.hasOwn` or turn it into a Map:
 * ids such as `constructor` or `toString` are ordinary keys there.
 */
export function idRecord<K extends z.ZodType<string, string>, V extends z.ZodType>(key: K, value: V, maxKeys: number = LIMITS.species + LIMITS.chemicals) {
  return z.preprocess((raw, ctx) => {
    if (raw !== null && typeof raw === 'object' && Object.hasOwn(raw, '__proto__')) {
      ctx.issues.push({ code: 'custom', message: 'the key "__proto__" is not allowed', input: raw, path: ['__proto__'] });
    }
    // counted before any entry is read: a 200,000-key object is one problem, not 200,000
    if (raw !== null && typeof raw === 'object' && !Array.isArray(raw)) {
      let n = 0;
      for (const k in raw) if (Object.hasOwn(raw, k)) n++;
      if (n > maxKeys) ctx.issues.push({ code: 'custom', message: `at most ${maxKeys} entries, got ${n}`, input: raw, path: [] });
    }
    return raw;
  }, z.record(key, value));
}

/** The value stored under an own key of a plain object, or undefined (never an inherited property). */
export function ownEntry<T>(obj: Readonly<Record<string, T>> | undefined, key: string): T | undefined {
  return obj !== undefined && Object.hasOwn(obj, key) ? obj[key] : undefined;
}

/** A candidate species (as in the mixture file; its density is ignored). */
export const candidateSchema = speciesSchema;

/** The non-zero standard uncertainties of named values, or undefined when there are none. */
export function sdOf<K extends string>(entries: [K, { sd: number } | undefined][]): Partial<Record<K, number>> | undefined {
  // keys are field names chosen by the code, never user ids; null prototype all the same
  const out = Object.create(null) as Partial<Record<K, number>>;
  let any = false;
  for (const [k, q] of entries) {
    if (q !== undefined && q.sd > 0) {
      out[k] = q.sd;
      any = true;
    }
  }
  return any ? out : undefined;
}

/** A coupling in SI quantities (from a mixture file or a shelf record). */
export interface CouplingQuantities {
  chemical: string;
  activity?: Quantity | { maxRate: Quantity; michaelis: Quantity; product?: string | null; productYield?: number };
  mobility?: Quantity;
}

/** A coupling to the engine's form, uncertainties alongside. */
export function toEngineCoupling(c: CouplingQuantities): Coupling {
  let activity: Activity | null = null;
  let sd: Coupling['sd'];
  const a = c.activity;
  if (a !== undefined && 'maxRate' in a) {
    activity = { kind: 'saturating', maxRate: a.maxRate.value, michaelis: a.michaelis.value, product: a.product ?? null };
    if (a.productYield !== undefined) activity.productYield = a.productYield;
    sd = sdOf([
      ['maxRate', a.maxRate],
      ['michaelis', a.michaelis],
      ['mobility', c.mobility],
    ]);
  } else {
    if (a !== undefined) activity = { kind: 'constant', rate: a.value };
    sd = sdOf([
      ['rate', a],
      ['mobility', c.mobility],
    ]);
  }
  const out: Coupling = { chemical: c.chemical, activity, mobility: c.mobility?.value ?? 0 };
  if (sd) out.sd = sd;
  return out;
}

/** One parsed species to the engine's form; `volumeFraction` becomes a number density via the radius. */
export function toEngineSpecies(s: ParsedSpecies): Species {
  const radius = s.radius.value;
  let density = s.density?.value ?? 0;
  let densitySd = s.density?.sd ?? 0;
  if (s.volumeFraction !== undefined) {
    const v = sphereVolume(radius);
    density = s.volumeFraction.value / v;
    densitySd = s.volumeFraction.sd / v;
  }
  const out: Species = {
    id: s.id,
    diffusivity: s.diffusivity.value,
    radius,
    density,
    materialDensity: s.materialDensity?.value ?? null,
    couplings: s.couplings.map(toEngineCoupling),
  };
  const sd = sdOf([
    ['diffusivity', s.diffusivity],
    ['radius', s.radius],
    ['materialDensity', s.materialDensity],
  ]);
  if (sd || densitySd > 0) out.sd = { ...(sd ?? {}), ...(densitySd > 0 ? { density: densitySd } : {}) };
  return out;
}

/** Convert a parsed mixture file to the engine's SI `Mixture`. */
export function toEngineMixture(m: ParsedMixture): Mixture {
  const chemicals: Chemical[] = m.chemicals.map((c) => {
    const out: Chemical = {
      id: c.id,
      diffusivity: c.diffusivity.value,
      lossRate: c.lossRate?.value ?? 0,
      concentration: c.concentration?.value ?? 0,
      solubility: c.solubility?.value ?? null,
    };
    // absent: 0 is used and the checks say so (engine/checks.ts, docs/model.md §8)
    if (c.concentration === undefined) out.concentrationMissing = true;
    const sd = sdOf([
      ['diffusivity', c.diffusivity],
      ['lossRate', c.lossRate],
      ['concentration', c.concentration],
      ['solubility', c.solubility],
    ]);
    if (sd) out.sd = sd;
    return out;
  });
  return {
    chemicals,
    species: m.species.map(toEngineSpecies),
    chamber: toEngineChamber(m.chamber),
    crowding: m.crowding,
    conditions: toEngineConditions(m.conditions),
  };
}

/** A parsed chamber to the engine's form. */
export function toEngineChamber(c: z.output<typeof chamberSchema>): Mixture['chamber'] {
  return { walls: c.walls, length: c.length?.value ?? null, depth: c.depth?.value ?? null };
}

/**
 * Parsed conditions to the engine's form, with the defaults: 25 °C; water's
 * density at the temperature (transport.ts table, whose 25 °C node is
 * WATER_DENSITY_25C = 997.047 kg/m³, constants.ts) and, for the settling check,
 * water's viscosity there.
 */
export function toEngineConditions(c: z.output<typeof conditionsSchema> | undefined): Mixture['conditions'] {
  const temperature = c?.temperature?.value ?? DEFAULT_TEMPERATURE;
  let solventDensity = c?.solventDensity?.value;
  if (solventDensity === undefined) {
    try {
      solventDensity = waterDensity(temperature);
    } catch (e) {
      if (!(e instanceof EngineInputError)) throw e;
      throw new EngineInputError('conditions.solventDensity', `missing: water's density is tabulated from 0 to 100 °C only; give the solvent density at ${(temperature - 273.15).toFixed(1)} °C`);
    }
  }
  const out: Mixture['conditions'] = {
    temperature,
    solventDensity,
    duration: c?.duration?.value ?? null,
    fieldOfView: c?.fieldOfView?.value ?? null,
  };
  if (c?.solventViscosity !== undefined) out.solventViscosity = c.solventViscosity.value;
  return out;
}

/** `["species", 2, "diffusivity"]` → `species[2].diffusivity`. */
export function formatPath(path: readonly PropertyKey[]): string {
  let out = '';
  for (const p of path) {
    if (typeof p === 'number') out += `[${p}]`;
    else out += out === '' ? String(p) : `.${String(p)}`;
  }
  return out;
}

type Issue = z.core.$ZodIssue;

/** Whether an issue only says "this branch has the wrong shape" (type or key mismatch at its root). */
function shapeMismatch(i: Issue): boolean {
  if (i.code === 'invalid_type' && i.path.length === 0) return true;
  if (i.code === 'unrecognized_keys' && i.path.length === 0) return true;
  if (i.code === 'invalid_union') return (i as Issue & { errors: Issue[][] }).errors.every((b) => b.some(shapeMismatch));
  return false;
}

function leaves(i: Issue): Issue[] {
  if (i.code !== 'invalid_union') return [i];
  return (i as Issue & { errors: Issue[][] }).errors.flatMap((b) => b.flatMap(leaves));
}

/**
 * Replace union failures by the issues of the branch the input was evidently meant for.
 * Appends to `out` (no spread of a long list into a call: 200,000 issues are fine);
 * recursion only follows nested unions, which the schemas bound.
 */
function flatten(issues: readonly Issue[], prefix: PropertyKey[], out: { path: PropertyKey[]; message: string; code: string }[]): void {
  for (const i of issues) {
    const path = prefix.length === 0 ? i.path : [...prefix, ...i.path];
    if (i.code === 'invalid_union') {
      const branches = (i as Issue & { errors: Issue[][] }).errors;
      // the branch that was meant: one whose shape fits, preferring one whose value is not simply another literal
      // (for "all" or a list of ids, a list of 100,000 ids meant the list: say it is too long, not that it is not "all")
      const fits = branches.filter((b) => !b.some(shapeMismatch));
      const meant = fits.filter((b) => !b.some((x) => x.code === 'invalid_value' && x.path.length === 0));
      const pick = meant[0] ?? fits[0];
      if (pick) {
        flatten(pick, path, out);
        continue;
      }
      const missing = leaves(i).every((l) => l.code === 'invalid_type' && /received undefined/.test(l.message));
      out.push({ path, code: 'invalid_union', message: missing ? 'missing' : 'expected a number in SI, a string with a unit, or an object of the documented form' });
      continue;
    }
    out.push({ path, code: i.code, message: i.code === 'unrecognized_keys' ? unknownKeys((i as Issue & { keys: string[] }).keys) : i.message });
  }
}

/** "Unrecognized keys" naming at most five of them (an answer never echoes 20,000 keys), each cut short. */
function unknownKeys(keys: readonly string[]): string {
  const named = keys.slice(0, 5).map((k) => JSON.stringify(k.length > LIMITS.id ? `${k.slice(0, LIMITS.id)}…` : k));
  return `Unrecognized key${keys.length === 1 ? '' : 's'}: ${named.join(', ')}${keys.length > 5 ? ` and ${keys.length - 5} more` : ''}`;
}

/** Every problem as `{ path, message }`, unions resolved to the branch that was meant. */
export function issueList(error: z.ZodError, prefix: PropertyKey[] = []): { path: string; message: string }[] {
  const flat: { path: PropertyKey[]; message: string; code: string }[] = [];
  flatten(error.issues, prefix, flat);
  return flat.map((i) => {
    let msg = i.message;
    if (i.code === 'invalid_type' && /received undefined/.test(msg)) msg = `missing (${msg.replace(/^Invalid input: /, '')})`;
    return { path: formatPath(i.path), message: msg };
  });
}

/** One line per problem: `path: message`. */
export function formatIssues(error: z.ZodError): string[] {
  return issueList(error).map((i) => (i.path ? `${i.path}: ${i.message}` : i.message));
}

export class MixtureFileError extends Error {
  override readonly name = 'MixtureFileError';
  constructor(readonly problems: string[]) {
    super(problems.join('\n'));
  }
}

/**
 * Parse a mixture document (already JSON-decoded) into the engine's SI form.
 * @throws MixtureFileError listing every problem with its field path
 */
export function parseMixture(doc: unknown): Mixture {
  const r = mixtureSchema.safeParse(doc);
  if (!r.success) throw new MixtureFileError(formatIssues(r.error));
  return toEngineMixture(r.data);
}
