/**
 * SI numbers → text in the units people write at the bench: µm²/s for diffusivities, mM (and µM,
 * nM for enzymes) for concentrations, particles/mL for doses, µm²/(s·mM) for mobilities, fmol/s
 * for activities, °C for temperatures, and "× 10⁻¹⁶" rather than "e-16".
 *
 * One module for the pages (web/src bundles it), the CLI's text output and the bench sheet, so a
 * value reads the same everywhere. Pure: no mathjs, no Node, no DOM. Reading units back is
 * server/units/index.ts (mathjs); the display units here are all spelled so that it reads them
 * (`formatQuantity(x, kind).input` round-trips through `parseQuantity`).
 */

const SUP: Record<string, string> = { '-': '⁻', '0': '⁰', '1': '¹', '2': '²', '3': '³', '4': '⁴', '5': '⁵', '6': '⁶', '7': '⁷', '8': '⁸', '9': '⁹' };

/**
 * A number to `digits` significant figures: plain from 0.001 to 99 999, else `1.43 × 10⁸`.
 * Trailing zeros are dropped (2.50 → 2.5). Non-finite numbers read `∞`, `−∞`, `not a number`.
 * `compact` writes `1.43×10⁸` (no spaces), for lists where a space separates entries.
 */
export function formatNumber(v: number, digits = 4, compact = false): string {
  if (Number.isNaN(v)) return 'not a number';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  if (v === 0) return '0';
  const r = Number(v.toPrecision(digits));
  if (Math.abs(r) >= 1e-3 && Math.abs(r) < 1e5) return String(r).replace('-', '−');
  const [m, e] = v.toExponential(digits - 1).split('e') as [string, string];
  const exp = String(Number(e))
    .split('')
    .map((c) => SUP[c] ?? c)
    .join('');
  return `${String(Number(m)).replace('-', '−')}${compact ? '×' : ' × '}10${exp}`;
}

/** The same number as a plain machine-readable string (`1.43e8`), for inputs that must round-trip. */
export function plainNumber(v: number, digits = 6): string {
  if (v === 0) return '0';
  const r = Number(v.toPrecision(digits));
  return Math.abs(r) >= 1e-3 && Math.abs(r) < 1e5 ? String(r) : r.toExponential().replace('e+', 'e');
}

/** A display unit: its label as shown, how it is typed (read back by the unit parser) and its SI size. */
export interface DisplayUnit {
  label: string;
  input: string;
  /** 1 label = factor SI */
  factor: number;
  /** added after scaling (temperature: K → °C); SI = value × factor + offset */
  offset?: number;
}

const u = (label: string, input: string, factor: number, offset?: number): DisplayUnit => (offset === undefined ? { label, input, factor } : { label, input, factor, offset });

/**
 * The quantities brink shows, each with its display units from small to large. A list of more
 * than one is a ladder: the unit is chosen by magnitude (the largest whose value is ≥ 1).
 */
export const DISPLAY_UNITS = {
  diffusivity: [u('µm²/s', 'um^2/s', 1e-12)],
  mobility: [u('µm²/(s·mM)', 'um^2/(s*mM)', 1e-12)],
  concentration: [u('nM', 'nM', 1e-6), u('µM', 'uM', 1e-3), u('mM', 'mM', 1), u('M', 'M', 1e3)],
  /** particles (or molecules) per volume: a dose */
  numberDensity: [u('particles/mL', '1/mL', 1e6)],
  /** mass per volume of a dose: always µg/mL, as doses are written at the bench */
  massConcentration: [u('µg/mL', 'ug/mL', 1e-3)],
  /** per-particle turnover (activity, maximal rate) */
  amountRate: [u('zmol/s', 'zmol/s', 1e-21), u('amol/s', 'amol/s', 1e-18), u('fmol/s', 'fmol/s', 1e-15), u('pmol/s', 'pmol/s', 1e-12), u('nmol/s', 'nmol/s', 1e-9)],
  length: [u('nm', 'nm', 1e-9), u('µm', 'um', 1e-6), u('mm', 'mm', 1e-3), u('cm', 'cm', 1e-2), u('m', 'm', 1)],
  volume: [u('nL', 'nL', 1e-12), u('µL', 'uL', 1e-9), u('mL', 'mL', 1e-6), u('L', 'L', 1e-3)],
  time: [u('ms', 'ms', 1e-3), u('s', 's', 1), u('min', 'min', 60), u('h', 'h', 3600), u('days', 'day', 86400)],
  rate: [u('1/s', '1/s', 1)],
  wavenumber: [u('1/mm', '1/mm', 1e3), u('1/µm', '1/um', 1e6)],
  speed: [u('nm/s', 'nm/s', 1e-9), u('µm/s', 'um/s', 1e-6), u('mm/s', 'mm/s', 1e-3)],
  /** material densities (g/mL) and mass concentrations typed as such (µg/mL, mg/mL) */
  massDensity: [u('µg/mL', 'ug/mL', 1e-3), u('mg/mL', 'mg/mL', 1), u('g/mL', 'g/mL', 1e3)],
  molarMass: [u('g/mol', 'g/mol', 1e-3), u('kg/mol', 'kg/mol', 1)],
  viscosity: [u('mPa·s', 'mPa*s', 1e-3)],
  temperature: [u('°C', 'degC', 1, 273.15)],
  /** volume fraction, a plain fraction in SI */
  fraction: [u('%', 'percent', 1e-2)],
  dimensionless: [u('', '', 1)],
} as const satisfies Record<string, readonly DisplayUnit[]>;

export type DisplayKind = keyof typeof DISPLAY_UNITS;

/** The unit of a ladder for one SI value: the largest whose value is at least 1 (or the smallest). */
export function unitFor(si: number, kind: DisplayKind): DisplayUnit {
  const ladder: readonly DisplayUnit[] = DISPLAY_UNITS[kind];
  if (ladder.length === 1 || !Number.isFinite(si) || si === 0) return ladder.length === 1 ? ladder[0]! : (ladder.find((x) => x.factor === 1) ?? ladder[0]!);
  let best = ladder[0]!;
  for (const x of ladder) if (Math.abs(si) / x.factor >= 0.9999) best = x;
  return best;
}

/** SI → the value in a display unit. */
export const toUnit = (si: number, unit: DisplayUnit): number => (si - (unit.offset ?? 0)) / unit.factor;

export interface Formatted {
  /** `0.22 µm²/s` */
  text: string;
  /** the number alone, as shown (`0.22`) */
  number: string;
  unit: DisplayUnit;
  /** what to type to enter the same value (`0.22 um^2/s`) */
  input: string;
}

/** An SI value as people write it: `formatQuantity(2.2e-13, 'diffusivity').text === '0.22 µm²/s'`. */
export function formatQuantity(si: number, kind: DisplayKind, o: { digits?: number; unit?: DisplayUnit } = {}): Formatted {
  const unit = o.unit ?? unitFor(si, kind);
  const v = toUnit(si, unit);
  const number = formatNumber(v, o.digits ?? 3);
  const sep = unit.label === '' ? '' : unit.label === '%' ? ' ' : ' ';
  return { text: `${number}${sep}${unit.label}`, number, unit, input: unit.input === '' ? plainNumber(v) : `${plainNumber(v)} ${unit.input}` };
}

/** Text only; `—` for null or undefined. */
export function fmt(si: number | null | undefined, kind: DisplayKind, digits = 3): string {
  return si === null || si === undefined ? '—' : formatQuantity(si, kind, { digits }).text;
}

/** A value with its standard uncertainty, both in the value's unit: `0.22 ± 0.02 µm²/s`. */
export function fmtWithSd(si: number, sd: number | null | undefined, kind: DisplayKind, digits = 3): string {
  const f = formatQuantity(si, kind, { digits });
  if (sd === null || sd === undefined || !(sd > 0)) return f.text;
  const s = formatNumber(sd / f.unit.factor, 2);
  return f.unit.label === '' ? `${f.number} ± ${s}` : `${f.number} ± ${s} ${f.unit.label}`;
}

/** A dose (particles per m³) in particles/mL, with its volume fraction when the particle volume (m³) is known. */
export function fmtDose(density: number | null | undefined, particleVolume?: number | null, digits = 3): string {
  if (density === null || density === undefined) return '—';
  const per = fmt(density, 'numberDensity', digits);
  if (!particleVolume || !(particleVolume > 0)) return per;
  return `${per} (${fmt(density * particleVolume, 'fraction', 2)} by volume)`;
}

/** A duration in the unit that reads best: `45 s`, `12 min`, `3.2 h`. */
export const fmtDuration = (seconds: number | null | undefined, digits = 3): string => fmt(seconds, 'time', digits);

/**
 * The display kind of an SI unit string as the API reports it (`m^2/s`, `mol/m^3`, `1/m^3`,
 * `m^5/(mol*s)`, `mol/s`, …); `null` for one it does not know, shown then as SI.
 */
export function kindOfSiUnit(si: string): DisplayKind | null {
  const s = si.replace(/\s+/g, '');
  const table: Record<string, DisplayKind> = {
    'm^2/s': 'diffusivity',
    'm^5/(mol*s)': 'mobility',
    'm^5/(s*mol)': 'mobility',
    'mol/m^3': 'concentration',
    '1/m^3': 'numberDensity',
    'm^-3': 'numberDensity',
    'kg/m^3': 'massDensity',
    'mol/s': 'amountRate',
    m: 'length',
    'm^3': 'volume',
    s: 'time',
    '1/s': 'rate',
    '1/m': 'wavenumber',
    'm/s': 'speed',
    'kg/mol': 'molarMass',
    'Pa*s': 'viscosity',
    K: 'temperature',
    '': 'dimensionless',
    '1': 'dimensionless',
  };
  return table[s] ?? null;
}

/** An SI value whose unit the API names (`{ value, unit: 'm^2/s' }`) as people write it; SI text when the unit is unknown. */
export function fmtSi(si: number | null | undefined, siUnit: string, digits = 3): string {
  if (si === null || si === undefined) return '—';
  const kind = kindOfSiUnit(siUnit);
  return kind === null ? `${formatNumber(si, digits)} ${siUnit}` : fmt(si, kind, digits);
}

/** Avogadro's constant (exact, SI 2019), 1/mol. */
const AVOGADRO = 6.02214076e23;

/** What the amount of a species is shown with: its kind and, when known, its size and mass. */
export interface AmountContext {
  kind?: string | null;
  /** m */
  radius?: number | null;
  /** kg/m³ */
  materialDensity?: number | null;
  /** kg/mol */
  molarMass?: number | null;
}

/** Mass of one particle (kg): molar mass / N_A for a molecule, else (4/3)πr³ × material density; null when unknown. */
export function particleMass(c: AmountContext): number | null {
  if (c.molarMass && c.molarMass > 0) return c.molarMass / AVOGADRO;
  if (c.radius && c.radius > 0 && c.materialDensity && c.materialDensity > 0) return ((4 / 3) * Math.PI * c.radius ** 3) * c.materialDensity;
  return null;
}

/** A number density of molecules (1/m³) as a molar concentration, n / N_A: `3.39 nM` (µM, mM by magnitude); zero reads `0 nM`. */
export function fmtMolar(density: number | null | undefined, digits = 3): string {
  if (density === null || density === undefined) return '—';
  return density === 0 ? '0 nM' : fmt(density / AVOGADRO, 'concentration', digits);
}

/**
 * An amount of a species (number density, 1/m³) as the bench writes it: an enzyme in nM (molar
 * concentration of the molecule) and µg/mL; a colloid in particles/mL and µg/mL. The mass is left
 * out when neither a molar mass nor a radius with a material density is known.
 */
export function fmtAmountOf(density: number | null | undefined, c: AmountContext = {}, digits = 3): string {
  if (density === null || density === undefined) return '—';
  const m = particleMass(c);
  const mass = m === null ? '' : fmt(density * m, 'massConcentration', digits);
  const head = c.kind === 'enzyme' ? fmtMolar(density, digits) : fmt(density, 'numberDensity', digits);
  return mass ? `${head} (${mass})` : head;
}

/**
 * An engine message (server/engine: checks.ts, planner.ts) in the units the bench writes: a dose the
 * engine wrote as "2.50e+7 per mL" becomes the species' amount (`fmtAmountOf`: nM for an enzyme,
 * particles/mL for a colloid, with µg/mL when the mass is known; particles/mL when no species is
 * given), and a concentration written "0.8 mol/m^3" becomes "0.8 mM" (or µM, nM, M by magnitude).
 * The pages, the CLI's text output and the bench sheet all print engine messages through this, so a
 * warning reads the same everywhere; the API's JSON keeps the engine's own wording.
 */
export function benchText(message: string, amountOf?: AmountContext | null, digits = 3): string {
  const num = '(-?\\d+(?:\\.\\d+)?(?:e[+-]?\\d+)?)';
  return message
    .replace(new RegExp(`${num} mol/m\\^3`, 'g'), (_, x: string) => fmt(Number(x), 'concentration', digits))
    .replace(new RegExp(`${num} per mL`, 'g'), (_, x: string) => (amountOf ? fmtAmountOf(Number(x) * 1e6, amountOf, digits) : fmt(Number(x) * 1e6, 'numberDensity', digits)));
}
