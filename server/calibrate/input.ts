/**
 * Raw measurement tables: CSV (a header row; units in brackets, e.g.
 * `lag [s], msd [um^2]`) or JSON (`{ "lag [s]": [...], "msd [um^2]": [...] }`).
 * Columns are taken by position and checked for dimension; every error names
 * the line and column (line 1 is the header).
 */
import { parse } from 'csv-parse/sync';
import { LIMITS } from '../schema/limits.js';
import { InputError, type Problem } from '../shelf/errors.js';
import { dimensionOfUnit, formatDimension, normaliseUnitText, parseQuantity, type Dimension } from '../units/index.js';

export interface Column {
  header: string;
  name: string;
  unit: string | null;
  values: number[];
}

export interface Table {
  columns: Column[];
  /** source line of each row (1-based; the header is line 1 in a CSV) */
  lines: number[];
}

const HEADER = /^\s*([^[\]]*?)\s*(?:\[([^\]]*)\])?\s*$/;

function header(text: string): { name: string; unit: string | null } {
  const m = HEADER.exec(text);
  if (!m) return { name: text.trim(), unit: null };
  const unit = m[2] !== undefined && m[2].trim() !== '' ? m[2].trim() : null;
  return { name: m[1]!.trim(), unit };
}

/** Problems of a table, listed up to LIMITS.problems and counted past that (a file of a million bad cells is one answer, not a million). */
function collector() {
  const list: Problem[] = [];
  let more = 0;
  return {
    push(p: Problem) {
      if (list.length < LIMITS.problems) list.push(p);
      else more++;
    },
    get length() {
      return list.length + more;
    },
    throwIfAny() {
      if (list.length > 0) throw new InputError(list, more);
    },
  };
}

/** Lines that are neither blank nor a # comment, less the header: an upper bound on the data rows (a quoted cell may span lines). */
function dataLines(text: string): number {
  let n = 0;
  let start = 0;
  while (start <= text.length) {
    let end = text.indexOf('\n', start);
    if (end < 0) end = text.length;
    let i = start;
    while (i < end && (text.charCodeAt(i) === 0x20 || text.charCodeAt(i) === 0x09 || text.charCodeAt(i) === 0x0d)) i++;
    if (i < end && text.charCodeAt(i) !== 0x23 /* # */) n++;
    start = end + 1;
  }
  return Math.max(0, n - 1);
}

/** A value as JSON, cut short (an answer never echoes a long input). */
function shown(v: unknown): string {
  const t = JSON.stringify(v) ?? String(v);
  return t.length > 60 ? `${t.slice(0, 60)}…` : t;
}

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/** Read a CSV text into numeric columns. */
export function readCsv(text: string): Table {
  // counted before parsing: a file past the row bound is refused at once, not after seconds of parsing
  const rows = dataLines(text);
  if (rows > LIMITS.rows) throw new InputError([{ path: 'data', message: `at most ${LIMITS.rows} data rows in one fit, got ${rows}` }]);
  let records: { record: string[]; info: { lines: number } }[];
  try {
    records = parse(text, { info: true, skip_empty_lines: true, trim: true, relax_column_count: true, comment: '#' }) as never;
  } catch (e) {
    const err = e as { lines?: number; message: string };
    throw new InputError([{ path: err.lines ? `line ${err.lines}` : 'csv', message: err.message }]);
  }
  if (records.length === 0) throw new InputError([{ path: 'line 1', message: 'the file is empty: expected a header row such as "lag [s], msd [um^2]"' }]);
  const head = records[0]!.record;
  const problems = collector();
  const cols: Column[] = head.map((h) => ({ header: h, ...header(h), values: [] }));
  const lines: number[] = [];
  for (const { record, info } of records.slice(1)) {
    if (record.length !== head.length) {
      problems.push({ path: `line ${info.lines}`, message: `expected ${head.length} cells (as in the header), got ${record.length}` });
      continue;
    }
    record.forEach((cell, j) => {
      if (!NUMBER.test(cell)) problems.push({ path: `line ${info.lines}, column ${j + 1} (${head[j]})`, message: `not a number: ${shown(cell)}` });
      else cols[j]!.values.push(Number(cell));
    });
    lines.push(info.lines);
  }
  problems.throwIfAny();
  return { columns: cols, lines };
}

/** Read a JSON table `{ "<header>": number[] }` (header as in a CSV). */
export function readJsonTable(doc: unknown): Table {
  if (doc === null || typeof doc !== 'object' || Array.isArray(doc)) throw new InputError([{ path: 'data', message: 'expected an object of columns, e.g. { "lag [s]": [...], "msd [um^2]": [...] }' }]);
  const entries = Object.entries(doc as Record<string, unknown>);
  const problems = collector();
  const cols: Column[] = [];
  let n = -1;
  for (const [h, vals] of entries) {
    if (!Array.isArray(vals)) {
      problems.push({ path: `data.${h}`, message: 'expected an array of numbers' });
      continue;
    }
    if (n >= 0 && vals.length !== n) problems.push({ path: `data.${h}`, message: `expected ${n} values like the first column, got ${vals.length}` });
    n = Math.max(n, vals.length);
    vals.forEach((v, i) => {
      if (typeof v !== 'number' || !Number.isFinite(v)) problems.push({ path: `data.${h}[${i}]`, message: `not a finite number: ${shown(v)}` });
    });
    cols.push({ header: h, ...header(h), values: vals as number[] });
  }
  problems.throwIfAny();
  return { columns: cols, lines: Array.from({ length: Math.max(n, 0) }, (_, i) => i + 1) };
}

export function readTable(data: unknown): Table {
  return typeof data === 'string' ? readCsv(data) : readJsonTable(data);
}

export interface ColumnSpec {
  role: string;
  dimension: Dimension;
  /** a column without a unit is accepted as it stands (values kept, unit null) */
  unitless?: boolean;
}

/**
 * Convert the columns (by position) to SI, checking each unit's dimension.
 * @returns the SI values of each role, and the unit text as given
 */
export function siColumns(t: Table, specs: ColumnSpec[], optional: ColumnSpec[] = []): Record<string, { values: number[]; unit: string | null; index: number }> {
  const problems: Problem[] = [];
  const need = specs.length;
  if (t.columns.length < need) {
    throw new InputError([{ path: 'line 1', message: `expected at least ${need} columns (${specs.map((s) => s.role).join(', ')}), got ${t.columns.length}` }]);
  }
  const out: Record<string, { values: number[]; unit: string | null; index: number }> = {};
  [...specs, ...optional].forEach((spec, j) => {
    const col = t.columns[j];
    if (!col) return;
    if (col.unit === null) {
      if (spec.unitless || Object.keys(spec.dimension).length === 0) {
        out[spec.role] = { values: col.values, unit: null, index: j };
        return;
      }
      problems.push({ path: `line 1, column ${j + 1} (${col.header})`, message: `give the unit of the ${spec.role} in brackets, e.g. "${col.name} [${exampleUnit(spec.dimension)}]" (${formatDimension(spec.dimension)})` });
      return;
    }
    let factor: number;
    try {
      factor = parseQuantity(`1 ${col.unit}`, { dimension: spec.dimension, sign: 'positive' }, '').value;
    } catch {
      let got = '';
      try {
        got = ` (${formatDimension(dimensionOfUnit(col.unit))})`;
      } catch {
        got = '';
      }
      problems.push({ path: `line 1, column ${j + 1} (${col.header})`, message: `the ${spec.role} needs a unit of ${formatDimension(spec.dimension)}, got "${normaliseUnitText(col.unit)}"${got}` });
      return;
    }
    out[spec.role] = { values: col.values.map((v) => v * factor), unit: col.unit, index: j };
  });
  if (problems.length > 0) throw new InputError(problems);
  return out;
}

function exampleUnit(d: Dimension): string {
  const key = formatDimension(d);
  const examples: Record<string, string> = { time: 's', 'length^2': 'um^2', 'amount/length^3': 'mM', 'amount/(length^3*time)': 'mM/s', 'amount/length^4': 'mM/um', 'length/time': 'um/s' };
  return examples[key] ?? 'unit';
}
