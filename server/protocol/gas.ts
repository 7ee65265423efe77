/**
 * Gas a tube's fuel can release, at the bench (docs/model.md §11, "Gas").
 *
 * - Ideal-gas volume V = n R T / p (the ideal gas law; R = N_A k_B, exact since the 2019 SI
 *   redefinition, 8.314462618 J mol⁻¹ K⁻¹ to ten figures, CODATA): 24.465 L mol⁻¹ at 25 °C and 101.325 kPa.
 * - The gas the fuel can release is the fuel in the tube × the moles of gas made per mole of fuel turned
 *   over: a saturating turnover's `productYield` (default 1; 0.5 for catalase, 2 H₂O₂ → 2 H₂O + O₂), or
 *   for a constant activity the ratio of its production of the gas to its consumption of the fuel (the demo
 *   Pt colloids: 1e-16 mol/s O₂ per 2e-16 mol/s H₂O₂ = 0.5). Chains (glucose → H₂O₂ by glucose oxidase,
 *   H₂O₂ → O₂ by catalase) multiply their yields. It is an upper bound: the whole fuel turned over, no gas
 *   left dissolved (at most the solubility × the liquid volume stays in solution) and none consumed by
 *   other activities (glucose oxidase itself takes one O₂ per glucose, which is not subtracted: net, that
 *   pair takes up O₂).
 * - Venting (common practice, no source): vent, or leave open, a vessel whose gas would exceed
 *   `DEFAULT_VENT_FRACTION` (10 %) of its headspace (the tube's volume less the liquid; the whole volume
 *   of a filled chamber). A closed vessel of headspace H reaching gas volume V (at 1 atm) would stand at
 *   about 1 + V/H atm (isothermal, ideal), which is what `overpressure` reports.
 *
 * Pure functions, SI in and out (m³, mol, K, Pa).
 */
import type { Species } from '../engine/types.js';

/** Molar gas constant R = N_A k_B, J mol⁻¹ K⁻¹ (exact since the 2019 SI redefinition; ten figures, CODATA). */
export const GAS_CONSTANT = 8.314462618;
/** Standard atmosphere, Pa (exact by definition). */
export const STANDARD_ATMOSPHERE = 101325;
/** Fraction of a vessel's headspace beyond which the sheet asks to vent it: 10 % (common practice, no source). */
export const DEFAULT_VENT_FRACTION = 0.1;

/**
 * Volume of `moles` of an ideal gas at `temperature` (K) and `pressure` (Pa, default 1 atm), m³:
 * V = n R T / p (docs/model.md §11).
 * @example idealGasVolume(1, 298.15) // 0.024465 m³ = 24.47 L
 */
export function idealGasVolume(moles: number, temperature: number, pressure = STANDARD_ATMOSPHERE): number {
  if (!(moles >= 0) || !Number.isFinite(moles)) throw new RangeError(`moles must be a finite number ≥ 0, got ${moles}`);
  if (!(temperature > 0) || !Number.isFinite(temperature)) throw new RangeError(`temperature must be a finite number of kelvin > 0, got ${temperature}`);
  if (!(pressure > 0) || !Number.isFinite(pressure)) throw new RangeError(`pressure must be a finite number of pascal > 0, got ${pressure}`);
  return (moles * GAS_CONSTANT * temperature) / pressure;
}

/** Molar volume of an ideal gas, m³ mol⁻¹ (24.465e-3 at 298.15 K and 101325 Pa). */
export const molarVolume = (temperature: number, pressure = STANDARD_ATMOSPHERE) => idealGasVolume(1, temperature, pressure);

/** How a fuel releases a gas through the activities of the species in a tube. */
export interface GasRoute {
  fuel: string;
  gas: string;
  /** moles of gas per mole of fuel turned over, the product of the yields along `via` */
  yieldPerFuel: number;
  /** the chemicals from the fuel to the gas, both included (["h2o2", "o2"], or ["glucose", "h2o2", "o2"]) */
  via: string[];
  /** the species doing each step, in order (one per step) */
  species: string[];
}

interface Step {
  from: string;
  to: string;
  y: number;
  species: string;
}

/** The direct steps fuel → product of one species (saturating turnovers; constant consumption paired with constant production). */
function steps(sp: Pick<Species, 'id' | 'couplings'>): Step[] {
  const out: Step[] = [];
  const consumed: { chemical: string; rate: number }[] = [];
  const produced: { chemical: string; rate: number }[] = [];
  for (const c of sp.couplings) {
    const a = c.activity;
    if (!a) continue;
    if (a.kind === 'saturating') {
      if (a.maxRate > 0 && a.product !== null) out.push({ from: c.chemical, to: a.product, y: a.productYield ?? 1, species: sp.id });
    } else if (a.rate < 0) consumed.push({ chemical: c.chemical, rate: -a.rate });
    else if (a.rate > 0) produced.push({ chemical: c.chemical, rate: a.rate });
  }
  for (const f of consumed) for (const p of produced) if (p.chemical !== f.chemical) out.push({ from: f.chemical, to: p.chemical, y: p.rate / f.rate, species: sp.id });
  return out;
}

/**
 * The largest-yield route from `fuel` to `gas` through the given species' activities, or null when none
 * of them turns the fuel into the gas (directly or through intermediates). Species at density 0 should not
 * be passed. A route visits each chemical once.
 * @example gasRoute([catalase], 'h2o2', 'o2') // { yieldPerFuel: 0.5, via: ['h2o2', 'o2'], species: ['catalase-e3'] }
 */
export function gasRoute(species: readonly Pick<Species, 'id' | 'couplings'>[], fuel: string, gas: string): GasRoute | null {
  const all = species.flatMap(steps);
  let best: GasRoute | null = null;
  const walk = (at: string, y: number, via: string[], by: string[]) => {
    if (at === gas && via.length > 1) {
      if (!best || y > best.yieldPerFuel) best = { fuel, gas, yieldPerFuel: y, via: [...via], species: [...by] };
      return;
    }
    for (const s of all) if (s.from === at && !via.includes(s.to)) walk(s.to, y * s.y, [...via, s.to], [...by, s.species]);
  };
  walk(fuel, 1, [fuel], []);
  return best;
}

export interface TubeGasInput {
  /** id of the gas (e.g. "o2") */
  gas: string;
  /** moles of fuel in the tube, mol */
  fuelMoles: number;
  /** moles of gas per mole of fuel turned over (GasRoute.yieldPerFuel) */
  yieldPerFuel: number;
  /** sample temperature, K */
  temperature: number;
  /** ambient pressure, Pa (default 101325) */
  pressure?: number;
  /** the tube's (vessel's) capacity, m³; null when unknown (not compared) */
  tubeVolume: number | null;
  /** liquid in the tube, m³; the headspace is tubeVolume − sampleVolume (default: the whole tube is headspace) */
  sampleVolume?: number | null;
  /** the chamber's volume, m³, null when unknown; the chamber is filled from the tube (min(chamber, sample) of it) */
  chamberVolume: number | null;
  /** venting threshold as a fraction of the headspace (default DEFAULT_VENT_FRACTION, 10 %, common practice) */
  ventFraction?: number;
  /** the vessel (tube or chamber) will be physically closed, e.g. a glued or clamped cell */
  closed?: boolean;
  /** the tube holds a catalyst of the fuel (default: yieldPerFuel > 0 and fuelMoles > 0) */
  catalyst?: boolean;
}

export interface TubeGas {
  gas: string;
  /** moles of gas the tube's fuel can release, mol */
  moles: number;
  /** their volume at the sample temperature and the pressure, m³ */
  volume: number;
  temperature: number;
  pressure: number;
  /** molar volume used, m³ mol⁻¹ */
  molarVolume: number;
  /** headspace of the tube, m³ (null: tube volume unknown) */
  headspace: number | null;
  /** volume / tube capacity (null: unknown) */
  fractionOfTube: number | null;
  /** volume / headspace (null: unknown or no headspace) */
  fractionOfHeadspace: number | null;
  /** gas the chamber's filling can release, m³ (null: chamber volume unknown) */
  chamberGasVolume: number | null;
  /** chamberGasVolume / chamber volume (null: unknown) */
  fractionOfChamber: number | null;
  /** absolute pressure a closed tube would reach, in multiples of the ambient pressure: 1 + V/H (null: unknown or no headspace) */
  overpressure: number | null;
  ventFraction: number;
  /** the tube's gas exceeds ventFraction of its headspace (or there is no headspace and any gas) */
  ventTube: boolean;
  /** the chamber's gas exceeds ventFraction of the chamber volume */
  ventChamber: boolean;
  /** either of the two */
  vent: boolean;
  /** a closed vessel holding catalyst and fuel: the prominent caution applies */
  closedWithCatalyst: boolean;
  /** one sentence (or a few) for the sheet */
  message: string;
}

/** `digits` significant figures in plain decimals (toPrecision alone writes 1.5e+2 from 150). */
const sig = (x: number, digits: number) => String(Number(x.toPrecision(digits)));
/** A volume in m³ as µL below 1 mL, else mL (a value that rounds to 1000 µL is written 1 mL). */
const mL = (v: number) => {
  const uL = Number((v * 1e9).toPrecision(3));
  return uL < 1000 ? `${sig(v * 1e9, 3)} µL` : `${sig(v * 1e6, 3)} mL`;
};
const pct = (f: number) => `${sig(f * 100, 2)} %`;
const times = (f: number) => (Number(f.toPrecision(2)) >= 1 ? `${sig(f, 2)} ×` : pct(f));

/**
 * The gas one tube's fuel can release, against the tube's headspace and the chamber (docs/model.md §11).
 * @example tubeGas({ gas: 'o2', fuelMoles: 20e-6, yieldPerFuel: 0.5, temperature: 298.15, tubeVolume: 1.5e-6, sampleVolume: 100e-9, chamberVolume: 100e-9 })
 *   // moles 1e-5, volume 2.4465e-7 m³ (0.245 mL), fractionOfChamber 2.45, vent true
 */
export function tubeGas(input: TubeGasInput): TubeGas {
  const { gas, fuelMoles, yieldPerFuel, temperature } = input;
  const pressure = input.pressure ?? STANDARD_ATMOSPHERE;
  const ventFraction = input.ventFraction ?? DEFAULT_VENT_FRACTION;
  if (!(fuelMoles >= 0) || !Number.isFinite(fuelMoles)) throw new RangeError(`fuelMoles must be a finite number ≥ 0 (mol), got ${fuelMoles}`);
  if (!(yieldPerFuel >= 0) || !Number.isFinite(yieldPerFuel)) throw new RangeError(`yieldPerFuel must be a finite number ≥ 0, got ${yieldPerFuel}`);
  if (!(ventFraction > 0)) throw new RangeError(`ventFraction must be above 0, got ${ventFraction}`);
  for (const [k, v] of [['tubeVolume', input.tubeVolume], ['sampleVolume', input.sampleVolume ?? null], ['chamberVolume', input.chamberVolume]] as const) {
    if (v !== null && !(v > 0 && Number.isFinite(v))) throw new RangeError(`${k} must be a finite volume > 0 (m³) or null, got ${v}`);
  }
  const moles = fuelMoles * yieldPerFuel;
  const vm = molarVolume(temperature, pressure);
  const volume = idealGasVolume(moles, temperature, pressure);
  const sample = input.sampleVolume ?? null;
  const tube = input.tubeVolume;
  const headspace = tube === null ? null : Math.max(0, tube - (sample ?? 0));
  const fractionOfTube = tube === null ? null : volume / tube;
  const fractionOfHeadspace = headspace === null || headspace === 0 ? null : volume / headspace;
  const overpressure = fractionOfHeadspace === null ? null : 1 + fractionOfHeadspace;
  // The chamber is filled from the tube: it holds min(chamber, sample) of the liquid (all of it when the sample volume is not given).
  const chamber = input.chamberVolume;
  const share = chamber === null ? 0 : sample === null ? 1 : Math.min(1, chamber / sample);
  const chamberGasVolume = chamber === null ? null : volume * share;
  const fractionOfChamber = chamber === null ? null : chamberGasVolume! / chamber;
  const ventTube = headspace === null ? false : headspace === 0 ? volume > 0 : volume > ventFraction * headspace;
  const ventChamber = fractionOfChamber !== null && fractionOfChamber > ventFraction;
  const catalyst = input.catalyst ?? (yieldPerFuel > 0 && fuelMoles > 0);
  const closedWithCatalyst = input.closed === true && catalyst && fuelMoles > 0;

  const parts: string[] = [];
  const t = `${Number((temperature - 273.15).toFixed(1))} °C`;
  if (moles === 0) {
    parts.push(fuelMoles === 0 ? `No fuel in this tube: no ${gas} from it.` : `Nothing in this tube turns the fuel into ${gas}.`);
  } else {
    parts.push(`The fuel can release up to ${sig(moles * 1e6, 3)} µmol ${gas}, ${mL(volume)} of gas at ${t} (ideal gas, ${(vm * 1e3).toPrecision(4)} L/mol)`);
    const against: string[] = [];
    if (fractionOfTube !== null) against.push(`${times(fractionOfTube)} the tube's volume`);
    if (fractionOfChamber !== null) against.push(`${times(fractionOfChamber)} the chamber's volume`);
    parts[0] += against.length ? `: ${against.join(', ')}.` : '.';
    // Missing volumes are said, not skipped: no venting advice is not "no need to vent".
    if (tube === null && chamber === null) parts.push("The tube's and the chamber's volumes are not known: not compared, so no venting advice for either; keep both open or vented.");
    else if (tube === null) parts.push("The tube's volume is not known: not compared, so no venting advice for it; keep it open or vented.");
    else if (chamber === null) parts.push("The chamber's volume is not known: not compared, so no venting advice for it; keep it open or vented.");
    // 1 + V/H ambient pressures, written in atm (the ambient need not be 1 atm)
    const closedAtm = overpressure === null ? null : (overpressure * pressure) / STANDARD_ATMOSPHERE;
    if (ventTube && headspace === 0) parts.push(`The tube is full (no headspace): leave it open or vented while it reacts.`);
    else if (ventTube) parts.push(`More than ${pct(ventFraction)} of the tube's headspace: leave the tube open or vented while it reacts${closedAtm !== null ? ` (closed, it would reach about ${sig(closedAtm, 2)} atm)` : ''}.`);
    if (ventChamber) parts.push(`More than ${pct(ventFraction)} of the chamber's volume: the chamber must let the gas out (an open or vented cell), or use less fuel; bubbles will also spoil imaging.`);
  }
  if (closedWithCatalyst) parts.push(`CAUTION: a closed vessel holding catalyst and fuel builds pressure and can burst; do not close it unless it is built to take the pressure.`);
  return { gas, moles, volume, temperature, pressure, molarVolume: vm, headspace, fractionOfTube, fractionOfHeadspace, chamberGasVolume, fractionOfChamber, overpressure, ventFraction, ventTube, ventChamber, vent: ventTube || ventChamber, closedWithCatalyst, message: parts.join(' ') };
}
