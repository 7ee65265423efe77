/**
 * A fit from raw data: read the table, check its columns, convert to SI, run
 * the engine's fit. Shared by the HTTP endpoints and `brink fit`.
 */
import { z } from 'zod';
import { AVOGADRO } from '../engine/constants.js';
import { fitDrift, fitKinetics, fitMsd, MSD_MODELS, type FitResult, type MsdModel } from '../engine/fit/models.js';
import { EngineInputError } from '../engine/types.js';
import { quantity, issueList } from '../schema/mixture.js';
import { InputError, type Problem } from '../shelf/errors.js';
import { DIMENSIONS } from '../units/index.js';
import { readTable, siColumns, type Table } from './input.js';

export type FitMethod = 'msd' | 'kinetics' | 'drift';
export const FIT_METHODS: FitMethod[] = ['msd', 'kinetics', 'drift'];

export const fitOptionsSchemas = {
  msd: z.strictObject({
    model: z.enum(MSD_MODELS as [MsdModel, ...MsdModel[]]).default('passive-2d'),
    offset: z.boolean().default(false),
    radius: quantity(DIMENSIONS.length, 'positive', 'radius for a rotation time fixed by Stokes–Einstein–Debye').optional(),
    /** for a stored measurement: fix the rotation time by Stokes–Einstein–Debye for the species' own radius */
    rotationFromSpeciesRadius: z.boolean().default(false),
    temperature: quantity(DIMENSIONS.temperature, 'positive', 'temperature (default 25 °C)').optional(),
  }),
  kinetics: z.strictObject({
    particleDensity: quantity(DIMENSIONS.numberDensity, 'positive', 'number density of particles in the assay').optional(),
    enzymeConcentration: quantity(DIMENSIONS.concentration, 'positive', 'molar concentration of enzyme in the assay').optional(),
  }),
  drift: z.strictObject({}),
} as const;

export type FitOptions = { [K in FitMethod]: z.output<(typeof fitOptionsSchemas)[K]> };

/** Validate fit options; InputError with paths `options.…`. */
export function parseFitOptions<M extends FitMethod>(method: M, raw: unknown): FitOptions[M] {
  const r = fitOptionsSchemas[method].safeParse(raw ?? {});
  if (!r.success) throw new InputError(issueList(r.error, ['options']));
  return r.data as FitOptions[M];
}

function where(t: Table, row: number, col: number): string {
  return `line ${t.lines[row] ?? row + 2}, column ${col + 1} (${t.columns[col]?.header ?? ''})`;
}

function engineErrors<T>(fn: () => T): T {
  try {
    return fn();
  } catch (e) {
    if (e instanceof EngineInputError) throw new InputError([{ path: e.path, message: e.reason }]);
    throw e;
  }
}

/** Run a fit on raw data (CSV text or a JSON table) with validated options. */
export function runFit<M extends FitMethod>(method: M, data: unknown, options: FitOptions[M]): FitResult & { input: { columns: { header: string; unit: string | null }[]; rows: number } } {
  const t = readTable(data);
  const problems: Problem[] = [];
  const input = { columns: t.columns.map((c) => ({ header: c.header, unit: c.unit })), rows: t.lines.length };
  if (method === 'msd') {
    const o = options as FitOptions['msd'];
    if (o.rotationFromSpeciesRadius && !o.radius) {
      throw new InputError([{ path: 'options.rotationFromSpeciesRadius', message: "needs a species: store the data as a measurement of one (POST /api/species/:id/measurements), or give options.radius" }]);
    }
    const c = siColumns(t, [
      { role: 'lag time', dimension: DIMENSIONS.time },
      { role: 'mean-squared displacement', dimension: { length: 2 } },
    ], [{ role: 'sd', dimension: { length: 2 } }]);
    const lag = c['lag time']!.values;
    const msd = c['mean-squared displacement']!.values;
    lag.forEach((x, i) => {
      if (!(x > 0)) problems.push({ path: where(t, i, 0), message: `lag times must be positive, got ${t.columns[0]!.values[i]}` });
      else if (i > 0 && !(x > lag[i - 1]!)) problems.push({ path: where(t, i, 0), message: 'lag times must increase from row to row' });
    });
    msd.forEach((y, i) => {
      if (y < 0) problems.push({ path: where(t, i, 1), message: 'a mean-squared displacement cannot be negative' });
    });
    const sd = c.sd?.values;
    sd?.forEach((s, i) => {
      if (!(s > 0)) problems.push({ path: where(t, i, 2), message: 'standard deviations must be positive' });
    });
    if (problems.length > 0) throw new InputError(problems);
    return {
      ...engineErrors(() =>
        fitMsd(lag, msd, {
          model: o.model,
          offset: o.offset,
          ...(o.radius ? { radius: o.radius.value } : {}),
          ...(o.temperature ? { temperature: o.temperature.value } : {}),
          ...(sd ? { sd } : {}),
        }),
      ),
      input,
    };
  }
  if (method === 'kinetics') {
    const o = options as FitOptions['kinetics'];
    const c = siColumns(t, [
      { role: 'substrate concentration', dimension: DIMENSIONS.concentration, unitless: true },
      { role: 'initial rate', dimension: { amount: 1, length: -3, time: -1 }, unitless: true },
    ], [{ role: 'sd', dimension: { amount: 1, length: -3, time: -1 }, unitless: true }]);
    const conc = c['substrate concentration']!;
    const rate = c['initial rate']!;
    conc.values.forEach((x, i) => {
      if (x < 0) problems.push({ path: where(t, i, 0), message: 'a concentration cannot be negative' });
    });
    if (problems.length > 0) throw new InputError(problems);
    let particleDensity: number | undefined = o.particleDensity?.value;
    if (o.enzymeConcentration) particleDensity = o.enzymeConcentration.value * AVOGADRO;
    if (particleDensity !== undefined && rate.unit === null) {
      throw new InputError([{ path: `line 1, column 2 (${t.columns[1]!.header})`, message: 'a per-particle turnover needs the rate in units of concentration/time, e.g. "rate [uM/s]"' }]);
    }
    return {
      ...engineErrors(() =>
        fitKinetics(conc.values, rate.values, {
          ...(particleDensity !== undefined ? { particleDensity } : {}),
          ...(c.sd ? { sd: c.sd.values } : {}),
          concentrationUnit: conc.unit === null ? `${t.columns[0]!.name} (as in the file)` : 'mol/m^3',
          rateUnit: rate.unit === null ? `${t.columns[1]!.name} (as in the file)` : 'mol/(m^3*s)',
        }),
      ),
      input,
    };
  }
  const c = siColumns(t, [
    { role: 'concentration gradient', dimension: { amount: 1, length: -4 } },
    { role: 'drift velocity', dimension: { length: 1, time: -1 } },
  ], [{ role: 'sd', dimension: { length: 1, time: -1 } }]);
  return { ...engineErrors(() => fitDrift(c['concentration gradient']!.values, c['drift velocity']!.values, c.sd?.values)), input };
}
