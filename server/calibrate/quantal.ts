/**
 * A quantal dose–response fit from a table (docs/model.md §12): columns by position `dose [unit]`, `tubes`,
 * `responded` (CSV with a header row, or a JSON table). A dose with a unit is converted to SI (its dimension is
 * whatever the unit says: "1/mL", "mg/L", "mM" …) and the ED50 is given in SI and, beside it, in the file's unit;
 * a dose column without a unit is taken as it stands. Shared by `POST /api/fits/quantal` (through the worker pool)
 * and `brink fit quantal`.
 */
import { z } from 'zod';
import { fitQuantal, QUANTAL_LINKS, QUANTAL_MAX_ROWS, type QuantalFit, type QuantalLink } from '../engine/fit/quantal.js';
import { EngineInputError } from '../engine/types.js';
import { issueList } from '../schema/mixture.js';
import { InputError, type Problem } from '../shelf/errors.js';
import { dimensionOfUnit, parseQuantity, type BaseDimension, type Dimension } from '../units/index.js';
import { readTable } from './input.js';

export const quantalOptionsSchema = z.strictObject({
  link: z.enum(QUANTAL_LINKS as [QuantalLink, ...QuantalLink[]]).default('logit'),
  scale: z.enum(['log10', 'linear']).default('log10'),
});
export type QuantalFitOptions = z.output<typeof quantalOptionsSchema>;

/** Validate the options of a quantal fit; InputError with paths `options.…`. */
export function parseQuantalOptions(raw: unknown): QuantalFitOptions {
  const r = quantalOptionsSchema.safeParse(raw ?? {});
  if (!r.success) throw new InputError(issueList(r.error, ['options']));
  return r.data;
}

const SYMBOL: Record<BaseDimension, string> = { length: 'm', mass: 'kg', time: 's', amount: 'mol', temperature: 'K', current: 'A', luminosity: 'cd', angle: 'rad', bit: 'bit' };
const ORDER: BaseDimension[] = ['mass', 'amount', 'length', 'time', 'temperature', 'current', 'luminosity', 'angle', 'bit'];

/** The SI unit of a dimension, e.g. { length: -3 } → "1/m^3", { mass: 1, length: -3 } → "kg/m^3". */
export function siUnitOf(d: Dimension): string {
  const term = (b: BaseDimension, e: number) => (e === 1 ? SYMBOL[b] : `${SYMBOL[b]}^${e}`);
  const num = ORDER.filter((b) => (d[b] ?? 0) > 0).map((b) => term(b, d[b]!));
  const den = ORDER.filter((b) => (d[b] ?? 0) < 0).map((b) => term(b, -d[b]!));
  if (num.length === 0 && den.length === 0) return '1';
  const top = num.length === 0 ? '1' : num.join('*');
  return den.length === 0 ? top : `${top}/${den.length === 1 ? den[0]! : `(${den.join('*')})`}`;
}

export type QuantalRunResult = QuantalFit & {
  input: { columns: { header: string; unit: string | null }[]; rows: number };
  /** the ED50 in the dose column's own unit (absent when the column had none: the fit is in it already) */
  ed50InFileUnit?: { value: number | null; sd: number | null; unit: string; interval: { lower: number; upper: number } | null };
};

/** Fit a quantal table (CSV text or JSON columns) with validated options. */
export function runQuantalFit(data: unknown, options: QuantalFitOptions): QuantalRunResult {
  const t = readTable(data);
  const input = { columns: t.columns.map((c) => ({ header: c.header, unit: c.unit })), rows: t.lines.length };
  if (t.lines.length > QUANTAL_MAX_ROWS) throw new InputError([{ path: 'data', message: `at most ${QUANTAL_MAX_ROWS} data rows in one fit, got ${t.lines.length}` }]);
  if (t.columns.length < 3) throw new InputError([{ path: 'line 1', message: `expected three columns (dose [unit], tubes, responded), got ${t.columns.length}` }]);
  const [doseCol, tubesCol, respCol] = t.columns as [(typeof t.columns)[0], (typeof t.columns)[0], (typeof t.columns)[0]];
  let factor = 1;
  let unit = `${doseCol.name} (as in the file)`;
  if (doseCol.unit !== null) {
    try {
      const dim = dimensionOfUnit(doseCol.unit);
      factor = parseQuantity(`1 ${doseCol.unit}`, { dimension: dim, sign: 'positive' }, '').value;
      unit = siUnitOf(dim);
    } catch {
      throw new InputError([{ path: `line 1, column 1 (${doseCol.header})`, message: `cannot read the dose's unit "${doseCol.unit}" (e.g. "dose [1/mL]", "dose [mg/L]", or no unit)` }]);
    }
  }
  for (const [j, col] of [[1, tubesCol], [2, respCol]] as const) {
    if (col.unit !== null) throw new InputError([{ path: `line 1, column ${j + 1} (${col.header})`, message: 'a count has no unit' }]);
  }
  const problems: Problem[] = [];
  const where = (i: number, j: number) => `line ${t.lines[i] ?? i + 2}, column ${j + 1} (${t.columns[j]!.header})`;
  doseCol.values.forEach((d, i) => {
    if (d < 0) problems.push({ path: where(i, 0), message: `a dose cannot be negative, got ${d}` });
  });
  tubesCol.values.forEach((n, i) => {
    if (!Number.isInteger(n) || n < 1) problems.push({ path: where(i, 1), message: `the number of tubes must be a whole number ≥ 1, got ${n}` });
  });
  respCol.values.forEach((y, i) => {
    const n = tubesCol.values[i]!;
    if (!Number.isInteger(y) || y < 0) problems.push({ path: where(i, 2), message: `the number that responded must be a whole number ≥ 0, got ${y}` });
    else if (y > n) problems.push({ path: where(i, 2), message: `more responded (${y}) than there were tubes (${n})` });
  });
  if (problems.length > 0) throw new InputError(problems);
  let fit: QuantalFit;
  try {
    fit = fitQuantal(doseCol.values.map((d) => d * factor), tubesCol.values, respCol.values, { link: options.link, scale: options.scale, doseUnit: unit });
  } catch (e) {
    if (e instanceof EngineInputError) throw new InputError([{ path: e.path, message: e.reason }]);
    throw e;
  }
  if (doseCol.unit === null) fit.notes.push(`the dose column has no unit: doses are taken as they stand (${unit})`);
  const e = fit.parameters.ed50;
  const inFile =
    doseCol.unit !== null
      ? { value: e.value === null ? null : e.value / factor, sd: e.sd === null ? null : e.sd / factor, unit: doseCol.unit, interval: e.interval ? { lower: e.interval.lower / factor, upper: e.interval.upper / factor } : null }
      : undefined;
  return { ...fit, input, ...(inFile ? { ed50InFileUnit: inFile } : {}) };
}
