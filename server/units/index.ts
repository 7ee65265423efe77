/**
 * Physical values ↔ SI numbers, with a dimension check per field.
 *
 * A value arrives as
 *   - a plain number: already SI (`2.5e-13` for a diffusivity means m²/s);
 *   - a string with a unit: `"0.25 um^2/s"`, `"2 µm"`, `"50 mM"`, `"1e-3 um^-3"`,
 *     `"5 percent"` (or `"5 %"`), `"3 um^2/(s*mM)"`, `"25 degC"`;
 *   - an object `{ "value": <number|string>, "sd": <number|string> }` carrying a
 *     standard uncertainty (1σ) in the same dimension.
 *
 * Unit strings are read by mathjs' unit parser (not its expression evaluator),
 * on a private instance that also knows molar (`M`, `mM`, `uM`, `nM`) and
 * `percent`. `µ` (U+00B5) and `μ` (U+03BC) are read as the micro prefix `u`.
 *
 * Errors are {@link UnitError}s whose message starts with the field path, e.g.
 * `species[2].diffusivity: expected length^2/time, got "3 mM" (amount/length^3)`.
 */
import { all, create, type Unit } from 'mathjs';

const math = create(all!, {});
math.createUnit('molar', { definition: '1 mol/L', prefixes: 'short', aliases: ['M'] });
math.createUnit('percent', { definition: '0.01' });

/** Base dimensions, in mathjs' order of `Unit.dimensions`. */
const BASES = ['mass', 'length', 'time', 'current', 'temperature', 'luminosity', 'amount', 'angle', 'bit'] as const;
export type BaseDimension = (typeof BASES)[number];
/** A dimension as exponents of base dimensions; absent bases have exponent 0. */
export type Dimension = Readonly<Partial<Record<BaseDimension, number>>>;

/** The dimensions of the quantities brink reads. */
export const DIMENSIONS = {
  dimensionless: {},
  length: { length: 1 },
  time: { time: 1 },
  rate: { time: -1 },
  diffusivity: { length: 2, time: -1 },
  numberDensity: { length: -3 },
  concentration: { amount: 1, length: -3 },
  amountRate: { amount: 1, time: -1 },
  mobility: { length: 5, amount: -1, time: -1 },
  massDensity: { mass: 1, length: -3 },
  molarMass: { mass: 1, amount: -1 },
  temperature: { temperature: 1 },
  viscosity: { mass: 1, length: -1, time: -1 },
} as const satisfies Record<string, Dimension>;

export type Sign = 'positive' | 'nonnegative' | 'any';

/** What a field needs: its dimension and which signs are physically possible. */
export interface FieldSpec {
  dimension: Dimension;
  sign: Sign;
}

/** A parsed value: SI number, its standard uncertainty (SI, ≥ 0) and the unit text as typed. */
export interface Quantity {
  value: number;
  sd: number;
  /** The unit the user typed (`"um^2/s"`), or `null` when a bare SI number was given. */
  unit: string | null;
}

export class UnitError extends Error {
  override readonly name = 'UnitError';
  constructor(
    readonly path: string,
    readonly reason: string,
  ) {
    super(path ? `${path}: ${reason}` : reason);
  }
}

const ORDER: BaseDimension[] = ['length', 'mass', 'time', 'amount', 'temperature', 'current', 'luminosity', 'angle', 'bit'];

/** `{ length: 5, amount: -1, time: -1 }` → `"length^5/(amount*time)"`. */
export function formatDimension(d: Dimension): string {
  const term = (b: BaseDimension, e: number) => (e === 1 ? b : `${b}^${e}`);
  const num = ORDER.filter((b) => (d[b] ?? 0) > 0).map((b) => term(b, d[b]!));
  const den = ORDER.filter((b) => (d[b] ?? 0) < 0).map((b) => term(b, -d[b]!));
  if (num.length === 0 && den.length === 0) return 'dimensionless';
  const top = num.length === 0 ? '1' : num.join('*');
  if (den.length === 0) return top;
  const bottom = den.length === 1 ? den[0]! : `(${den.join('*')})`;
  return `${top}/${bottom}`;
}

function sameDimension(a: Dimension, b: Dimension): boolean {
  return BASES.every((k) => (a[k] ?? 0) === (b[k] ?? 0));
}

function dimensionOf(u: Unit): Dimension {
  const out: Partial<Record<BaseDimension, number>> = {};
  const dims = (u as unknown as { dimensions: number[] }).dimensions;
  BASES.forEach((b, i) => {
    const e = dims[i] ?? 0;
    if (e !== 0) out[b] = e;
  });
  return out;
}

const SUPERSCRIPT: Record<string, string> = { '⁻': '-', '⁰': '0', '¹': '1', '²': '2', '³': '3', '⁴': '4', '⁵': '5', '⁶': '6', '⁷': '7', '⁸': '8', '⁹': '9' };
const fromSuperscript = (t: string) => t.split('').map((c) => SUPERSCRIPT[c] ?? c).join('');

/**
 * Text as people write it (and as brink shows it, server/units/display.ts) → text mathjs reads:
 * the micro signs → `u`; `%` → `percent`; the minus sign − → `-`; `1.43 × 10⁸` (or `× 10^8`) → `1.43e8`;
 * superscript powers `µm²`, `s⁻¹` → `um^2`, `s^-1`; the middle dots `·` `⋅` → `*`; `°C` → `degC`;
 * a count per volume, `particles/mL` (or molecules, cells, beads; `per mL`) → `1/mL`.
 */
export function normaliseUnitText(text: string): string {
  return text
    .trim()
    .replace(/[\u00B5\u03BC]/g, 'u')
    .replace(/\u2212/g, '-')
    .replace(/(?<=[\d.])\s*[×x]\s*10\s*\^?\s*([-+]?\d+|[⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)/g, (_m, e: string) => `e${fromSuperscript(e)}`)
    .replace(/([A-Za-z)])([⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+)/g, (_m, a: string, e: string) => `${a}^${fromSuperscript(e)}`)
    .replace(/[\u00B7\u22C5]/g, '*')
    .replace(/°\s*C\b/g, 'degC')
    .replace(/\b(?:particles|molecules|cells|beads|copies)\s*(?:\/|per\s+)/gi, '1/')
    .replace(/(^|[\d.\s])per\s+(?=[A-Za-z])/g, '$11/')
    .replace(/%/g, ' percent')
    .replace(/\s+/g, ' ');
}

const NUMBER_ONLY = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;
const LEADING_NUMBER = /^\s*[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?\s*/;

function show(raw: unknown): string {
  if (typeof raw === 'string') return JSON.stringify(raw);
  if (typeof raw === 'number') return String(raw);
  try {
    return JSON.stringify(raw) ?? String(raw);
  } catch {
    return String(raw);
  }
}

/**
 * mathjs reads "0.25 um^2/s" but not a reciprocal written "1/s" or "1/(s*mM)";
 * those are read as the inverse of "1 s" / "1 s*mM".
 */
function readUnit(text: string): Unit {
  const lead = LEADING_NUMBER.exec(text);
  const unitPart = lead ? text.slice(lead[0].length).trim() : text;
  const recip = /^1\s*\/\s*(.+)$/.exec(unitPart);
  if (lead && recip) {
    let inner = recip[1]!.trim();
    if (inner.startsWith('(') && inner.endsWith(')')) inner = inner.slice(1, -1);
    const value = Number(lead[0].trim());
    const base = math.unit(`1 ${inner.replace(/\*/g, ' ')}`);
    return math.multiply(math.divide(1, base), value) as unknown as Unit;
  }
  return math.unit(text);
}

/** Parse one scalar (number or unit string) to SI; returns the unit text as typed. */
function parseScalar(raw: unknown, spec: FieldSpec, path: string): { value: number; unit: string | null } {
  if (typeof raw === 'number') {
    if (!Number.isFinite(raw)) throw new UnitError(path, `must be a finite number, got ${show(raw)}`);
    return { value: raw, unit: null };
  }
  if (typeof raw !== 'string') {
    throw new UnitError(path, `expected a number in SI or a string with a unit (${formatDimension(spec.dimension)}), got ${show(raw)}`);
  }
  const text = normaliseUnitText(raw);
  if (text === '') throw new UnitError(path, `expected ${formatDimension(spec.dimension)}, got an empty string`);
  if (NUMBER_ONLY.test(text)) {
    const v = Number(text);
    if (!Number.isFinite(v)) throw new UnitError(path, `must be a finite number, got ${show(raw)}`);
    return { value: v, unit: null };
  }
  if (/\b(nan|infinity|inf)\b/i.test(text)) throw new UnitError(path, `must be a finite number, got ${show(raw)}`);
  let u: Unit;
  try {
    u = readUnit(text);
  } catch {
    throw new UnitError(path, `cannot read ${show(raw)} as a value with a unit of ${formatDimension(spec.dimension)}`);
  }
  const got = dimensionOf(u);
  if (!sameDimension(got, spec.dimension)) {
    throw new UnitError(path, `expected ${formatDimension(spec.dimension)}, got ${show(raw)} (${formatDimension(got)})`);
  }
  const si = u.toSI().toNumber();
  if (!Number.isFinite(si)) throw new UnitError(path, `must be a finite number, got ${show(raw)}`);
  const unitText = text.replace(LEADING_NUMBER, '').trim();
  return { value: si, unit: unitText === '' ? null : unitText };
}

function checkSign(value: number, spec: FieldSpec, path: string, raw: unknown): void {
  if (spec.sign === 'positive' && !(value > 0)) throw new UnitError(path, `must be positive, got ${show(raw)}`);
  if (spec.sign === 'nonnegative' && value < 0) throw new UnitError(path, `must not be negative, got ${show(raw)}`);
}

/**
 * Parse a physical value into SI with a dimension and sign check.
 *
 * @param raw  number (SI), unit string, or `{ value, sd }`
 * @param spec the field's dimension and allowed sign
 * @param path the field path used in error messages, e.g. `species[2].diffusivity`
 * @throws UnitError naming the path and the expected dimension
 * @example parseQuantity("0.25 um^2/s", { dimension: DIMENSIONS.diffusivity, sign: 'positive' }, 'D')
 *          // → { value: 2.5e-13, sd: 0, unit: "um^2/s" }
 */
export function parseQuantity(raw: unknown, spec: FieldSpec, path: string): Quantity {
  if (raw !== null && typeof raw === 'object' && !Array.isArray(raw)) {
    const obj = raw as Record<string, unknown>;
    const extra = Object.keys(obj).filter((k) => k !== 'value' && k !== 'sd');
    if (extra.length > 0) throw new UnitError(`${path}.${extra[0]}`, 'unknown key: a value with uncertainty is { "value": …, "sd": … }');
    if (!('value' in obj)) throw new UnitError(`${path}.value`, `missing: expected ${formatDimension(spec.dimension)}`);
    const main = parseScalar(obj.value, spec, `${path}.value`);
    checkSign(main.value, spec, `${path}.value`, obj.value);
    let sd = 0;
    if (obj.sd !== undefined) {
      sd = parseScalar(obj.sd, { dimension: spec.dimension, sign: 'nonnegative' }, `${path}.sd`).value;
      if (sd < 0) throw new UnitError(`${path}.sd`, `must not be negative, got ${show(obj.sd)}`);
    }
    return { value: main.value, sd, unit: main.unit };
  }
  const main = parseScalar(raw, spec, path);
  checkSign(main.value, spec, path, raw);
  return { value: main.value, sd: 0, unit: main.unit };
}

/**
 * Express an SI number in a unit, e.g. `fromSI(2.5e-13, "um^2/s")` → `0.25`.
 * @throws UnitError when the unit cannot be read
 */
export function fromSI(valueSI: number, unitText: string): number {
  const text = normaliseUnitText(unitText);
  let probe: Unit;
  try {
    probe = readUnit(`1 ${text}`);
  } catch {
    throw new UnitError('', `cannot read unit ${JSON.stringify(unitText)}`);
  }
  if (sameDimension(dimensionOf(probe), DIMENSIONS.temperature)) return math.unit(valueSI, 'K').toNumber(text);
  return valueSI / probe.toSI().toNumber();
}

/** The dimension of a unit text (`"um^2/s"` → `{ length: 2, time: -1 }`). */
export function dimensionOfUnit(unitText: string): Dimension {
  return dimensionOf(math.unit(1, normaliseUnitText(unitText)));
}
