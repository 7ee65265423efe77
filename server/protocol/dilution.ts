/**
 * The arithmetic of the bench's liquids (docs/model.md §11): what a pipette
 * delivers, round concentrations, and when a stock is first made into a
 * working solution. Volumes in m³, concentrations per m³ (particles or mol).
 *
 * Every transfer obeys the dilution relation C₁V₁ = C₂V₂ (the conservation of
 * the amount of solute on mixing; common practice, no source needed beyond it).
 */
import type { Classification } from './hazards.js';

const UL = 1e-9;

/**
 * The volume step a hand pipette is set in for a volume v (common practice: a
 * 2–10 µL pipette in 0.1 µL, a 20–100 µL one in 1 µL, a 200–1000 µL one in
 * 5 µL; above 1 mL, 10 µL).
 */
export function pipetteStep(v: number): number {
  const u = v / UL;
  return (u < 10 ? 0.1 : u < 100 ? 1 : u < 1000 ? 5 : 10) * UL;
}

/** The rounding rule as printed on the sheet. */
export const ROUNDING_RULE =
  'Volumes as a hand pipette is set (common practice): to 0.1 µL below 10 µL, 1 µL below 100 µL, 5 µL below 1000 µL, 10 µL above; the buffer takes the remainder, so every tube holds exactly the sample volume, and the doses delivered are computed from these volumes (C₁V₁ = C₂V₂).';

/** n steps of `step`, computed in whole tenths of a µL and divided once, so that 66 tenths is 6.6e-9 m³ exactly as written. */
const snap = (n: number, step: number) => (n * Math.round(step / (0.1 * UL))) / 1e10;

/** A volume rounded to the nearest pipette step (the step of the volume itself; 9.96 µL → 10.0 µL). */
export function roundToPipette(v: number): number {
  if (!(v > 0)) return 0;
  const step = pipetteStep(v);
  return snap(Math.round(v / step), step);
}

/** The smallest pipette-settable volume at or above v (for volumes to make: never less than needed). */
export function roundUpToPipette(v: number): number {
  if (!(v > 0)) return 0;
  const step = pipetteStep(v);
  const up = snap(Math.ceil(v / step - 1e-9), step);
  // crossing into the next decade may change the step; the result is still on the coarser grid or below it
  return pipetteStep(up) === step ? up : snap(Math.ceil(up / pipetteStep(up) - 1e-9), pipetteStep(up));
}

/** The largest pipette-settable volume at or below v. */
export function roundDownToPipette(v: number): number {
  if (!(v > 0)) return 0;
  const step = pipetteStep(v);
  return snap(Math.floor(v / step + 1e-9), step);
}

/** Whether v is on its own pipette grid (e.g. 39.6 µL is not: a 20–100 µL pipette is set in 1 µL). */
export function onPipetteGrid(v: number): boolean {
  return Math.abs(roundToPipette(v) - v) <= 1e-6 * v;
}

/** The largest 1, 2 or 5 × 10^k at or below x (a round concentration). */
export function roundDown125(x: number): number {
  if (!(x > 0)) return 0;
  const e = Math.floor(Math.log10(x) + 1e-12);
  const m = x / Math.pow(10, e);
  const base = m >= 5 - 1e-9 ? 5 : m >= 2 - 1e-9 ? 2 : 1;
  return base * Math.pow(10, e);
}

/** The next 1, 2 or 5 × 10^k above a round value r (1 → 2 → 5 → 10). */
export function nextUp125(r: number): number {
  const e = Math.floor(Math.log10(r) + 1e-12);
  const m = Math.round(r / Math.pow(10, e));
  return (m === 1 ? 2 : m === 2 ? 5 : 10) * Math.pow(10, e);
}

/**
 * A 1:10 step made from `take` of the parent and 9 × take of diluent, with the
 * take raised (in its own pipette step) until both volumes are settable, so the
 * factor is exactly 10 with the volumes as pipetted.
 */
export function tenfoldTake(needed: number, minVolume: number): { take: number; diluent: number } {
  let take = roundUpToPipette(Math.max(needed / 10, minVolume));
  for (let i = 0; i < 200 && !onPipetteGrid(9 * take); i++) take = roundUpToPipette(take + pipetteStep(take) / 2);
  return { take, diluent: roundToPipette(9 * take) };
}

/** Default: a stock whose volume per tube would be below this is first made into a working solution (common practice). */
export const WORKING_BELOW = 5 * UL;

/** Hazard rank of a classification: 2 Danger, 1 Warning, 0 none. */
const rank = (c: Classification) => (c.signal === 'Danger' ? 2 : c.signal === 'Warning' ? 1 : 0);

/**
 * Whether the stock's classification is above the working solution's: a higher
 * signal word, or a hazard statement (code and class) the working solution does
 * not carry. Null when either is unknown (no hazard data on the shelf, or none for
 * the form handled: nothing can be compared, which is not "no hazard").
 */
export function bandAbove(stock: Classification | null, working: Classification | null): boolean | null {
  const unknown = (c: Classification) => c.status === 'no-data' || c.status === 'no-data-for-form';
  if (!stock || !working || unknown(stock) || unknown(working)) return null;
  if (rank(stock) > rank(working)) return true;
  const w = new Set(working.statements.map((s) => `${s.code}\u0000${s.hazardClass}`));
  return stock.statements.some((s) => !w.has(`${s.code}\u0000${s.hazardClass}`));
}

/**
 * The working concentration to dilute a stock to, so that a tube needing the
 * concentration c in the volume V takes about `aim` of it: the largest round
 * (1-2-5) concentration at or below c V / aim. Null when that is not at least
 * twice as dilute as the stock (a working solution would gain nothing).
 */
export function workingConcentration(c: number, V: number, aim: number, stock: number): number | null {
  const w = roundDown125((c * V) / aim);
  return w > 0 && w <= stock / 2 ? w : null;
}

/** Why a chemical is (or is not) first made into a working solution; the sheet prints it. */
export interface WorkingDecision {
  make: boolean;
  /** the per-tube volume of the stock if it were pipetted straight, m³ */
  stockPerTube: number;
  volumeRule: boolean;
  /** null: the bands could not be compared (no hazard data, or no mass fraction) */
  bandRule: boolean | null;
  reason: string;
}

/**
 * The working-dilution rule (docs/model.md §11, common practice): make a working
 * solution when the stock's volume per tube would be below `below` (default
 * 5 µL), or when the stock's hazard classification is above the working
 * solution's.
 */
export function decideWorking(stockPerTube: number, below: number, stockBand: Classification | null, workingBand: Classification | null, possible: boolean): WorkingDecision {
  const volumeRule = stockPerTube > 0 && stockPerTube < below;
  const bandRule = bandAbove(stockBand, workingBand);
  const make = possible && (volumeRule || bandRule === true);
  const ul = (v: number) => `${Number((v / UL).toPrecision(3))} µL`;
  const parts: string[] = [];
  if (volumeRule) parts.push(`${ul(stockPerTube)} of stock per tube is below ${ul(below)}`);
  const bands = (c: Classification | null) => (c && c.statements.length ? c.statements.map((x) => `${x.code} ${x.hazardClass}`).join(', ') + (c.signal ? `, ${c.signal}` : '') : `below the classification limits of the shelf\u2019s hazard data${c && c.version !== null ? `, version ${c.version}` : ''}`);
  const pc = (c: Classification) => `${Number((c.massFraction * 100).toPrecision(3))} % w/w`;
  if (bandRule === true) parts.push(`the stock (${pc(stockBand!)}: ${bands(stockBand)}) is classified above it (${pc(workingBand!)}: ${bands(workingBand)})`);
  const reason = !possible
    ? 'pipetted from the stock: it is already within a factor of two of a round working concentration'
    : make
      ? `a working solution, since ${parts.join(', and ')}`
      : `pipetted from the stock: ${ul(stockPerTube)} per tube is at least ${ul(below)}${bandRule === null ? ', and the hazard bands could not be compared (no hazard data on the shelf, or no mass fraction)' : ', and the stock is not classified above the working solution'}`;
  return { make, stockPerTube, volumeRule, bandRule, reason };
}
