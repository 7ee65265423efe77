/**
 * The bench sheet of a stored plan and one candidate: stocks, dilutions,
 * master mix, the dose series and the controls with their volumes, an imaging
 * plan from the plan's numbers, the practical warnings, and the hazards of each
 * chemical as handled (stock bottle and working solution).
 *
 * The model built here is the JSON format; render.ts renders it as HTML and Markdown.
 * Every number carries its unit. Nothing depends on the clock but `printedAt`.
 */
import { benchText, fmt, fmtDuration, fmtMolar, type AmountContext } from '../units/display.js';
import { z } from 'zod';
import { analyze, type AnalysisResult, type State } from '../engine/analyze.js';
import { FUEL_GROWTH_TIMES } from '../engine/checks.js';
import { WATER_DENSITY_25C } from '../engine/constants.js';
import { DEFAULT_DOSE_FACTORS, doseSeries, withDose, type CandidateResult, type Dosing } from '../engine/planner.js';
import type { Mixture, Species } from '../engine/types.js';
import { idRecord, ownEntry, quantity } from '../schema/mixture.js';
import { numberDensity, type ChemicalRecord, type SpeciesRecord } from '../schema/shelf.js';
import { DomainError, InputError } from '../shelf/errors.js';
import { DIMENSIONS } from '../units/index.js';
import { LIMITS } from '../schema/limits.js';
import { VERSION } from '../version.js';
import { DEFAULT_VENT_FRACTION, gasRoute, molarVolume, tubeGas } from './gas.js';
import { hazardsFor, PICTOGRAMS, type HazardForm, type HazardLookup, type HazardReport } from './hazards.js';
import { pipettingJson, pipettingSections, planPipetting, tubeList, type Component, type PipettingJson, type SampleKind, type SampleSpec } from './pipetting.js';
import { fmtAmount, formatNumber, table, type Block, type Section } from './sections.js';

/** "0, 1e6 1/mL,1e7 1/mL" → ["0", "1e6 1/mL", "1e7 1/mL"], for the CLI flag and the query parameter (read and bounded by the schema). */
export const splitDoses = (text: string): string[] => text.split(',').map((x) => x.trim()).filter((x) => x !== '');

/** The most doses one sheet takes (explicit doses or dose factors). */
export const MAX_DOSES = 24;

const stockSchema = z.strictObject({
  density: quantity(DIMENSIONS.numberDensity, 'positive', 'particles per volume').optional(),
  volumeFraction: quantity(DIMENSIONS.dimensionless, 'positive', 'volume fraction').optional(),
  massConcentration: quantity(DIMENSIONS.massDensity, 'positive', 'mass concentration (mg/mL)').optional(),
  percentWv: z.number().positive().max(100).optional(),
  percentWw: z.number().positive().max(100).optional(),
  solutionDensity: quantity(DIMENSIONS.massDensity, 'positive', 'density of the stock solution (for % w/w)').optional(),
  molarConcentration: quantity(DIMENSIONS.concentration, 'positive', 'molar concentration (mol/L)').optional(),
  description: z.string().max(500).optional(),
});

/** Options of a sheet (all optional). */
export const sheetRequestSchema = z.strictObject({
  candidate: z.string().min(1).max(64).optional(),
  sampleVolume: quantity({ length: 3 }, 'positive', 'volume of one sample (chamber)').optional(),
  replicates: z.number().int().min(1).max(24).default(3),
  /** doses as multiples of the reference (median, or threshold) dose; default 0, 0.5, 0.8, 1, 1.25, 1.6, 2 and the 5 % and 95 % doses */
  doseFactors: z.array(z.number().min(0).max(1000)).min(1).max(24).optional(),
  /** the dopant doses themselves (number densities, e.g. "1e6 1/mL"; include 0 for the no-dopant control); instead of doseFactors; needed when any dose crosses */
  doses: z.array(quantity(DIMENSIONS.numberDensity, 'nonnegative', 'a dopant dose (number density)')).min(1).max(MAX_DOSES).optional(),
  minVolume: quantity({ length: 3 }, 'positive', 'smallest volume to pipette (default 1 µL)').optional(),
  overage: z.number().min(0).max(1).default(0.1),
  buffer: z.string().min(1).max(100).default('buffer'),
  stocks: idRecord(z.string().max(LIMITS.id), stockSchema, 64).optional().describe('stocks by chemical or species id (at most 64)'),
  operator: z.string().max(200).optional(),
  /** the vessel each sample is made in, for the gas check (default 1.5 mL, a common microcentrifuge tube) */
  tubeVolume: quantity({ length: 3 }, 'positive', 'volume of the tube each sample is made in (default 1.5 mL)').optional(),
  /** the imaging chamber's volume, for the gas check (default: length² × depth of the plan's chamber) */
  chamberVolume: quantity({ length: 3 }, 'positive', 'volume of the imaging chamber (default: length² × depth)').optional(),
  /** the imaging chamber will be physically closed (glued, clamped, greased): the sheet then cautions against catalyst and fuel in it */
  closedChamber: z.boolean().default(false),
});
export type SheetRequest = z.output<typeof sheetRequestSchema>;

export interface Amount {
  value: number;
  unit: string;
}

/**
 * The hazards of one chemical or species as handled (hazards.ts hazardsFor): each concentration or form handled
 * with its classification, whose `status` says whether there were data (no-data, no-data-for-form), whether a
 * band applied (below-limits, classified); `classified` on an entry is false when there were no data for it
 * (an empty classification then means "not known", never "no hazard"; docs/model.md §11).
 */
export type HazardEntry = Omit<HazardReport, 'asHandled'> & {
  /** the chemical's or species' id (as `id`; kept under this name for API users) */
  chemical: string;
  name: string;
  asHandled: (HazardReport['asHandled'][number] & { classified: boolean })[];
};

/**
 * A bench sheet: the structured data (kept for API users and re-entry) and `sections`, the ordered section model
 * that the HTML and Markdown renderings read (sections.ts, render.ts). `fits: true` tells it from a NotFitSheet.
 */
export interface Sheet {
  fits: true;
  title: string;
  software: { name: 'brink'; version: string };
  printedAt: string;
  plan: { id: number; name: string; boundary: string; dosing: string; createdAt: string };
  candidate: { id: string; name: string };
  shelfRevisions: { role: string; id: string; revision: number; revisionId: number }[];
  /** The model's conditions in bench words: the walls as a boundary condition of the model, never an instruction */
  model: { walls: string; chamberLength: Amount | null; chamberDepth: Amount | null; temperature: Amount };
  prediction: {
    /** anyDose: every dose above 0 crosses (threshold 0⁺) */
    threshold: Amount & { volumeFraction: number; anyDose: boolean };
    /** Quantiles over every draw (a draw already past counts as dose 0); null = that quantile lies above the dose cap */
    band: { p05: Amount | null; median: Amount | null; p95: Amount | null; samples: number; seed: number; alreadyPast: number | null; feasibleFraction: number | null } | null;
    referenceDose: Amount;
    /** What the 1 × dose is: the band's median, the threshold, or (explicit doses, any dose crosses) the largest dose given */
    referenceFrom: 'median' | 'threshold' | 'largest-dose';
    /** How the series was made: dose factors × the reference (default or given), or the doses given */
    series: { from: 'default-factors' | 'dose-factors' | 'doses' | 'plan-series'; note: string; designedFrom?: NonNullable<PlanSeriesSI['from']> };
    atMargin: { state: string; growthTime: Amount | null; wavelength: Amount | null; oscillationPeriod: Amount | null; gathers: string[]; pushedOut: string[] } | null;
    /** The candidate's dose path (states over (from, to]) and first onset, in particles/mL */
    dosePath: { from: Amount; to: Amount; state: State }[];
    firstOnset: { dose: Amount; state: State } | null;
  };
  options: { sampleVolume: Amount; replicates: number; minVolume: Amount; overage: number; buffer: string; operator: string | null };
  stocks: { id: string; name: string; kind: 'species' | 'chemical'; concentration: Amount; described: string; source: 'shelf' | 'option' }[];
  dilutions: { name: string; concentration: Amount; volume: Amount; steps: { what: string; from: string; volume: Amount }[] }[];
  masterMix: { tubes: number; perTube: Amount; total: Amount; steps: { what: string; from: string; volume: Amount }[] } | null;
  samples: { name: string; role: 'series' | 'control'; dose: Amount | null; doseFactor: number | null; tubes: number; steps: { what: string; from: string; volume: Amount }[] }[];
  /** The compact pipetting (pipetting.ts): the rounding rule, working solutions and dilutions, one row per sample in order of addition, the concentrations handled */
  pipetting: PipettingJson;
  /** One entry per sample, with its code and the replicate tubes' codes */
  tubes: SheetTube[];
  /** Expected outcome per sample code */
  outcomes: TubeOutcome[];
  /** Blank observations per tube code, to be filled in and entered back */
  observations: Observation[];
  imaging: {
    frameInterval: Amount;
    duration: Amount;
    fuelLife: Amount | null;
    /** earliest time a produced gas passes its solubility at the margin dose (each turnover's productYield counted; a constant producer whose fuel is absent makes none), or null */
    gasSaturation: { chemical: string; productionRate: Amount; solubility: Amount; time: Amount } | null;
    wavelength: Amount | null;
    chamberLength: Amount | null;
    fieldOfView: Amount | null;
    notes: string[];
  };
  gas: SheetGas;
  warnings: { code: string; message: string }[];
  hazards: HazardEntry[];
  safety: string[];
  sections: Section[];
  /** the options this sheet was built with, as sent (sheetService.build): send them back with the filled-in observations */
  request?: Record<string, unknown>;
}

/** A plan's own dose series (shelf/plans.ts planSeriesSchema), its doses in SI: the sheet's default for that candidate. */
export interface PlanSeriesSI {
  candidate: string;
  /** m⁻³, each above 0 */
  doses: number[];
  from?: { plan: number; outcomeSet: number; outcomeRevision: number; criterion: string; expectedBandFactor: { designed: number | null; fixed: number | null }; fixedDoses: number | null; posteriorBand?: { p05: number | null; median: number | null; p95: number | null } };
}

export interface SheetContext {
  plan: { id: number; name: string; createdAt: string; request: { boundary: string; dosing: string; series?: PlanSeriesSI }; result: { candidates: CandidateResult[]; warnings?: { code: string; message: string }[] }; inputs: { base: Mixture; candidates: Species[] } };
  revisions: { role: string; id: string; revision: number; revisionId: number }[];
  speciesRecord: (id: string) => SpeciesRecord | null;
  chemicalRecord: (id: string) => ChemicalRecord | null;
  /** The current hazard data of a chemical or species as stored on the shelf, with its version (hazards.ts) */
  hazards: HazardLookup;
  printedAt: string;
}

const UL = 1e-9;
const ul = (v: number): Amount => ({ value: Number((v / UL).toPrecision(4)), unit: 'µL' });
const perMl = (x: number): Amount => ({ value: Number((x * 1e-6).toPrecision(4)), unit: 'particles/mL' });
const mM = (x: number): Amount => ({ value: Number(x.toPrecision(4)), unit: 'mM' });
const s = (t: number): Amount => ({ value: Number(t.toPrecision(3)), unit: 's' });
const mm = (x: number): Amount => ({ value: Number((x * 1e3).toPrecision(3)), unit: 'mm' });

/** 1, 2, 5 × 10^k at or below x. */
function niceFloor(x: number): number {
  const e = Math.floor(Math.log10(x));
  const m = x / Math.pow(10, e);
  const base = m >= 5 ? 5 : m >= 2 ? 2 : 1;
  return base * Math.pow(10, e);
}

/** Molar concentration (mol/m³) and mass fraction of a chemical stock. */
export function chemicalStock(c: ChemicalRecord, o: z.output<typeof stockSchema> | undefined): { molar: number; massFraction: number | null; text: string; source: 'shelf' | 'option' } | null {
  const M = c.molarMass?.si;
  if (o) {
    if (o.molarConcentration) {
      const w = M ? (o.molarConcentration.value * M) / (o.solutionDensity?.value ?? WATER_DENSITY_25C) : null;
      return { molar: o.molarConcentration.value, massFraction: w, text: fmt(o.molarConcentration.value, 'concentration', 4), source: 'option' };
    }
    if (o.percentWw !== undefined) {
      if (!M || !o.solutionDensity) throw new InputError([{ path: `stocks.${c.id}`, message: '% w/w needs the chemical’s molar mass and the solution density (solutionDensity)' }]);
      return { molar: ((o.percentWw / 100) * o.solutionDensity.value) / M, massFraction: o.percentWw / 100, text: `${o.percentWw} % w/w (density ${o.solutionDensity.value / 1000} g/mL)`, source: 'option' };
    }
    const massConc = o.massConcentration?.value ?? (o.percentWv !== undefined ? o.percentWv * 10 : undefined);
    if (massConc !== undefined) {
      if (!M) throw new InputError([{ path: `stocks.${c.id}`, message: 'a mass concentration needs the chemical’s molar mass' }]);
      return { molar: massConc / M, massFraction: massConc / (o.solutionDensity?.value ?? WATER_DENSITY_25C), text: o.percentWv !== undefined ? `${o.percentWv} % w/v` : `${massConc} mg/mL`, source: 'option' };
    }
  }
  const st = c.stock;
  if (!st) return null;
  if (st.concentration) {
    const w = M ? (st.concentration.si * M) / (st.density?.si ?? WATER_DENSITY_25C) : null;
    return { molar: st.concentration.si, massFraction: w, text: `${st.description} (${String(st.concentration.input)})`, source: 'shelf' };
  }
  if (st.massFraction && st.density && M) {
    return { molar: (st.massFraction.si * st.density.si) / M, massFraction: st.massFraction.si, text: st.description, source: 'shelf' };
  }
  return null;
}

/** Number density (m⁻³) of a species stock. */
export function speciesStock(sp: SpeciesRecord, o: z.output<typeof stockSchema> | undefined): { density: number; text: string; source: 'shelf' | 'option' } | null {
  if (o) {
    const massConcentration = o.massConcentration ?? (o.percentWv !== undefined ? { value: o.percentWv * 10, sd: 0, unit: null } : undefined);
    const amount = o.density
      ? { density: { si: o.density.value, sd: 0, unit: null, input: o.density.value } }
      : o.volumeFraction
        ? { volumeFraction: { si: o.volumeFraction.value, sd: 0, unit: null, input: o.volumeFraction.value } }
        : massConcentration
          ? { massConcentration: { si: massConcentration.value, sd: 0, unit: null, input: massConcentration.value } }
          : o.molarConcentration
            ? { molarConcentration: { si: o.molarConcentration.value, sd: 0, unit: null, input: o.molarConcentration.value } }
            : null;
    if (!amount) throw new InputError([{ path: `stocks.${sp.id}`, message: 'give the stock as density, volumeFraction, massConcentration, percentWv or molarConcentration' }]);
    try {
      return { density: numberDensity(sp, amount).value, text: o.description ?? 'as given', source: 'option' };
    } catch (e) {
      throw new InputError([{ path: `stocks.${sp.id}`, message: (e as Error).message }]);
    }
  }
  const st = sp.stock;
  if (!st) return null;
  const { description, ...amount } = st;
  try {
    return { density: numberDensity(sp, amount).value, text: description, source: 'shelf' };
  } catch {
    return null;
  }
}

/** A dose in the sheet's words: particles/mL, an enzyme's in nM with its particles/mL beside it. */
const per = (x: number, c: AmountContext = {}) => {
  const p = `${x === 0 ? 0 : formatNumber(Number((x * 1e-6).toPrecision(3)))} particles/mL`;
  return c.kind === 'enzyme' ? `${fmtMolar(x)} (${p})` : p;
};
/** What a species' amount is shown with: its kind and molar mass from the shelf, its size and material density as the plan used them. */
function amountContext(ctx: Pick<SheetContext, 'speciesRecord'>, sp: Pick<Species, 'id' | 'radius' | 'materialDensity'>): AmountContext {
  const rec = ctx.speciesRecord(sp.id);
  return { kind: rec?.kind ?? null, molarMass: rec?.molarMass?.si ?? null, radius: sp.radius, materialDensity: sp.materialDensity };
}

/** One `dose-above-cap` warning for each dose of the series above the plan's dose cap (a relative 1e-9 for rounding). */
export function aboveCap(cand: CandidateResult, series: number[], c: AmountContext = {}): Sheet['warnings'] {
  const cap = cand.cap?.density;
  if (cap === undefined) return [];
  return series
    .filter((d) => d > cap * (1 + 1e-9))
    .map((x) => ({ code: 'dose-above-cap', message: `the dose ${per(x, c)} is above the plan's dose cap (${per(cap, c)}, limited by ${cand.cap.limitedBy}): the plan did not search there, so the prediction does not cover it.` }));
}

/**
 * The dose series of a sheet and its 1 × reference. Dose factors scale the
 * planner's reference (doseSeries: the band's median, else the threshold); the
 * `doses` option gives the doses themselves. A candidate that crosses at any
 * dose (threshold 0⁺) has no reference to scale by, so it needs `doses`; its
 * 1 × (the controls' dose) is then the largest dose given.
 */
export interface ChosenSeries {
  ref: number;
  series: number[];
  referenceFrom: Sheet['prediction']['referenceFrom'];
  seriesInfo: Sheet['prediction']['series'];
  seriesWarnings: Sheet['warnings'];
}

export function chooseSeries(cand: CandidateResult, req: SheetRequest, planSeries?: PlanSeriesSI, c: AmountContext = {}): ChosenSeries {
  const seriesWarnings: Sheet['warnings'] = [];
  if (req.doses && req.doseFactors) throw new InputError([{ path: 'doses', message: 'give doses or doseFactors, not both' }]);
  // the plan's own series (a next plan's designed doses) when none is asked for: with dose 0, the no-dopant control
  if (!req.doses && !req.doseFactors && planSeries && planSeries.candidate === cand.species) {
    const doses = [0, ...planSeries.doses].map((x) => ({ value: x, unit: null, sd: 0 })) as unknown as NonNullable<SheetRequest['doses']>;
    const r: ChosenSeries = chooseSeries(cand, { ...req, doses }, undefined, c);
    const f = planSeries.from;
    const factor = (x: number | null) => (x === null ? 'not finite (the band reaches past the cap)' : `×${formatNumber(Number(x.toPrecision(3)))}`);
    const note = f
      ? `designed from the outcomes of plan ${f.plan} (outcome set ${f.outcomeSet} revision ${f.outcomeRevision}) to minimise the ${f.criterion}: expected 95 %/5 % width of the threshold band after this round ${factor(f.expectedBandFactor.designed)}, against ${factor(f.expectedBandFactor.fixed)} with the default fixed series${f.fixedDoses !== null ? ` of ${f.fixedDoses} doses` : ''}; plus dose 0 (the no-dopant control).${f.posteriorBand ? ` The update's own band (5 % · median · 95 %, the coefficients' joint posterior) was ${[f.posteriorBand.p05, f.posteriorBand.median, f.posteriorBand.p95].map((x) => (x === null ? 'above the cap' : per(x, c))).join(' · ')}; the band of this plan comes from the shelf's coefficients and their sds, which keep no correlations between coefficients, so it can be wider.` : ''} ${r.seriesInfo.note.replace(/^the doses given; /, '')}. Give doses or doseFactors to print another series.`
      : `the dose series stored with the plan, plus dose 0 (the no-dopant control); ${r.seriesInfo.note.replace(/^the doses given; /, '')}. Give doses or doseFactors to print another series.`;
    return { ...r, seriesInfo: { from: 'plan-series', note, ...(f ? { designedFrom: f } : {}) } as Sheet['prediction']['series'] };
  }
  const median = cand.band?.median ?? null;
  // what dose factors scale (doseSeries): the band's median when above zero, else the threshold
  const scaledFrom: 'median' | 'threshold' = median !== null && median > 0 ? 'median' : 'threshold';
  const scalable = scaledFrom === 'median' || cand.threshold!.density > 0;
  const scaledName = scaledFrom === 'median' ? 'median threshold of the Monte Carlo band' : 'threshold';
  if (!req.doses && !scalable) {
    const path = cand.dosePath?.length ? `; dose path: ${cand.dosePath.map((iv) => `${iv.state} over (${per(iv.from, c)}, ${per(iv.to, c)}]`).join(', ')}` : '';
    throw new InputError([
      {
        path: 'doses',
        message: `required for "${cand.species}": any dose above 0 crosses the boundary (threshold 0⁺), so there is no reference dose to scale dose factors by${path}. Give the doses to make, e.g. { "doses": ["0", "1e6 1/mL", "1e7 1/mL"] } (brink sheet --doses "0,1e6 1/mL,1e7 1/mL").`,
      },
    ]);
  }
  if (!req.doses) {
    const { reference, doses } = doseSeries(cand, req.doseFactors);
    const from = req.doseFactors ? 'dose-factors' : 'default-factors';
    const note = `${req.doseFactors ? 'the dose factors given' : `the default factors ${DEFAULT_DOSE_FACTORS.join(', ')}`} × the ${scaledName} (${per(reference, c)})${!req.doseFactors && cand.band ? ", plus the band's 5 % and 95 % doses" : ''}`;
    // factors × the reference (2 × the median, or the 95 % dose) can pass the cap as much as doses given can
    seriesWarnings.push(...aboveCap(cand, doses, c));
    return { ref: reference, series: doses, referenceFrom: scaledFrom, seriesInfo: { from, note } as Sheet['prediction']['series'], seriesWarnings };
  }
  const series = [...new Set(req.doses.map((d) => Number(d.value.toPrecision(6))))].sort((a, b) => a - b);
  const top = series[series.length - 1]!;
  let ref: number;
  let referenceFrom: 'median' | 'threshold' | 'largest-dose';
  if (scalable) {
    ref = doseSeries(cand, [1]).reference;
    referenceFrom = scaledFrom;
  } else {
    if (!(top > 0)) throw new InputError([{ path: 'doses', message: 'give at least one dose above 0: any dose crosses, and the controls are made at the largest dose given' }]);
    ref = top;
    referenceFrom = 'largest-dose';
  }
  seriesWarnings.push(...aboveCap(cand, series, c));
  const note = `the doses given; 1 × (the dose of the no-fuel and dopant-alone controls) is ${referenceFrom === 'largest-dose' ? 'the largest of them, since any dose crosses and there is no threshold to scale by' : `the ${scaledName}`} (${per(ref, c)})`;
  return { ref, series, referenceFrom, seriesInfo: { from: 'doses', note } as Sheet['prediction']['series'], seriesWarnings };
}

/** A warning as the engine, the planner and the plan give it: a code, a message and perhaps what it is about. */
type SubjectWarning = { code: string; message: string; chemical?: unknown; species?: unknown };

const subjectIds = (x: unknown): string[] | null => (typeof x === 'string' ? [x] : Array.isArray(x) && x.every((v) => typeof v === 'string') ? (x as string[]) : null);

/** Merge two wordings of one warning: the longer, plus what the shorter says after their common opening sentence(s). */
export function mergeMessages(a: string, b: string): string {
  if (a === b || a.includes(b)) return a;
  if (b.includes(a)) return b;
  const [long, short] = a.length >= b.length ? [a, b] : [b, a];
  let n = 0;
  while (n < short.length && short[n] === long[n]) n++;
  const cut = short.lastIndexOf('. ', n - 1);
  const tail = short.slice(cut >= 0 ? cut + 2 : 0).trim();
  return tail === '' || long.includes(tail) ? long : `${long} ${tail}`;
}

/**
 * The sheet's warnings: those about a chemical or species this sheet's mixture does not use are left out, and
 * one line remains per (code, chemical or species the warning is about), the wordings merged; a warning about
 * no particular chemical or species is one line per distinct message.
 */
export function sheetWarnings(ws: SubjectWarning[], species: Set<string>, chemicals: Set<string>): Sheet['warnings'] {
  const out = new Map<string, { code: string; message: string }>();
  for (const w of ws) {
    const chem = subjectIds(w.chemical);
    const sps = subjectIds(w.species);
    if (chem && !chem.some((c) => chemicals.has(c))) continue;
    if (sps && !sps.some((x) => species.has(x))) continue;
    const key = chem || sps ? `${w.code}\u0000c:${(chem ?? []).join(',')}\u0000s:${[...(sps ?? [])].sort().join(',')}` : `${w.code}\u0000m:${w.message}`;
    const prev = out.get(key);
    out.set(key, prev ? { code: w.code, message: mergeMessages(prev.message, w.message) } : { code: w.code, message: w.message });
  }
  return [...out.values()];
}

// ------------------------------------------------------------------ preparing the liquids

/** The kinds of tube on a sheet (pipetting.ts): how each one's expected outcome is computed. */
export type TubeKind = SampleKind;

const NO_FUEL = 'control: no fuel (dopant at 1 ×)';
const DOPANT_ALONE = 'control: dopant alone (1 ×, with fuel)';
/** The form a species' stock is handled in (hazards by form): enzymes as solutions, particles as suspensions. */
const stockForm = (kind: string): HazardForm => (kind === 'enzyme' ? 'solution' : 'suspension');

/** Changes tried when a plan does not fit (optionsThatFit): a sample volume, one stock × a factor, the largest doses left out. */
interface Tweak {
  sampleVolume?: number;
  stockScale?: { id: string; factor: number };
  dropLargest?: number;
}

/** Everything up to the pipetting plan: the candidate, the series, the stocks, the samples and their liquids. */
function liquids(ctx: SheetContext, req: SheetRequest, tweak: Tweak = {}) {
  const { plan } = ctx;
  const results = plan.result.candidates;
  const chosen = req.candidate ?? results.find((c) => c.feasible)?.species;
  if (!chosen) throw new DomainError('no-feasible-candidate', `no candidate of plan ${plan.id} crosses the boundary: there is no dose series to print`);
  const cand = results.find((c) => c.species === chosen);
  if (!cand) throw new InputError([{ path: 'candidate', message: `"${chosen}" is not a candidate of plan ${plan.id}` }]);
  if (!cand.feasible || !cand.threshold) throw new DomainError('candidate-infeasible', `"${chosen}" cannot cross the boundary (${cand.reason}): ${cand.message}`);
  const base = plan.inputs.base;
  const dopant = plan.inputs.candidates.find((c) => c.id === chosen)!;
  const o = {
    sampleVolume: tweak.sampleVolume ?? req.sampleVolume?.value ?? 100 * UL,
    replicates: req.replicates,
    minVolume: req.minVolume?.value ?? 1 * UL,
    overage: req.overage,
    buffer: req.buffer,
  };

  // Reference dose and the series (engine/planner.ts: factors × median, plus the band's ends), or the doses given.
  const chosenSeries = chooseSeries(cand, req, plan.request.series, amountContext(ctx, dopant));
  const { ref, referenceFrom, seriesInfo, seriesWarnings } = chosenSeries;
  const series = tweak.dropLargest ? chosenSeries.series.slice(0, Math.max(1, chosenSeries.series.length - tweak.dropLargest)) : chosenSeries.series;
  const scale = (id: string) => (tweak.stockScale?.id === id ? tweak.stockScale.factor : 1);

  // Stocks.
  const stocks: Sheet['stocks'] = [];
  const components: Component[] = [];
  const spIds = [...base.species.map((x) => x.id), dopant.id];
  for (const id of spIds) {
    const rec = ctx.speciesRecord(id);
    if (!rec) throw new DomainError('missing-revision', `species "${id}" of the plan is not on the shelf`);
    const st = speciesStock(rec, ownEntry(req.stocks, id));
    if (!st) throw new InputError([{ path: `stocks.${id}`, message: `no usable stock for "${id}" on the shelf: give one (e.g. { "massConcentration": "10 mg/mL" })` }]);
    components.push({ id, label: rec.name, stock: st.density * scale(id), stockText: st.text, per: 'particles' });
    stocks.push({ id, name: rec.name, kind: 'species', concentration: perMl(st.density), described: st.text, source: st.source });
  }
  const fuelIds: string[] = [];
  const warnings: Sheet['warnings'] = [...seriesWarnings];
  const stockFractions = new Map<string, number | null>();
  for (const ch of base.chemicals) {
    if (!(ch.concentration > 0)) continue;
    const rec = ctx.chemicalRecord(ch.id);
    if (!rec) continue;
    const st = chemicalStock(rec, ownEntry(req.stocks, ch.id));
    if (!st) {
      warnings.push({ code: 'no-stock', message: `${rec.name}: no stock on the shelf, so it is not pipetted (taken as already present at ${mM(ch.concentration).value} mM, e.g. dissolved from air).` });
      continue;
    }
    fuelIds.push(ch.id);
    components.push({ id: ch.id, label: rec.name, stock: st.molar * scale(ch.id), stockText: st.text, per: 'mol', molarMass: rec.molarMass?.si ?? null, stockMassFraction: st.massFraction, hazards: ctx.hazards('chemical', ch.id)?.set ?? null });
    stocks.push({ id: ch.id, name: rec.name, kind: 'chemical', concentration: mM(st.molar), described: st.text, source: st.source });
    stockFractions.set(ch.id, st.massFraction);
  }

  // A stock given for an id the plan does not pipette is not used: say so.
  const pipetted = new Set(components.map((c) => c.id));
  for (const k of Object.keys(req.stocks ?? {})) {
    if (!pipetted.has(k)) warnings.push({ code: 'unused-stock', message: `the stock given for "${k}" is not used: it is not a species of the plan nor a chemical pipetted on this sheet.` });
  }

  // Samples: the series and the controls.
  // Target concentrations keyed by id: Maps, so that an id such as "constructor" is an ordinary key.
  const fuelConc = new Map(base.chemicals.filter((c) => fuelIds.includes(c.id)).map((c) => [c.id, c.concentration] as const));
  // base and dopant densities at dose x, exactly as the planner doses (add, or replace at fixed φ)
  const dosing: Dosing = plan.request.dosing === 'replace' ? 'replace' : 'add';
  const dosed = (x: number) => new Map(withDose(base, dopant, x, dosing).species.map((sp) => [sp.id, sp.density] as const));
  const withFuel = (m: Map<string, number>) => new Map([...m, ...fuelConc]);
  const replace = dosing === 'replace';
  const specs: SampleSpec[] = series.map((x) => ({
    name: x === 0 ? 'dose 0 (control: no dopant)' : `dose ${formatNumber(Number((x / ref).toPrecision(3)))} ×`,
    role: x === 0 ? 'control' : 'series',
    kind: x === 0 ? 'no-dopant' : 'series',
    dose: x,
    conc: withFuel(dosed(x)),
    usesMasterMix: !replace,
  }));
  specs.push({ name: NO_FUEL, role: 'control', kind: 'no-fuel', dose: ref, conc: dosed(ref), usesMasterMix: !replace });
  specs.push({ name: DOPANT_ALONE, role: 'control', kind: 'dopant-alone', dose: ref, conc: withFuel(new Map([[dopant.id, ref]])), usesMasterMix: false });

  return { cand: cand as CandidateResult & { threshold: NonNullable<CandidateResult['threshold']> }, chosen, base, dopant, dosing, o, ref, series, referenceFrom, seriesInfo, warnings, stocks, components, fuelIds, fuelConc, stockFractions, specs, spIds };
}

/** The liquids and their pipetting plan. @throws DomainError('impossible-volumes') */
function prepare(ctx: SheetContext, req: SheetRequest, tweak: Tweak = {}) {
  const L = liquids(ctx, req, tweak);
  const pip = planPipetting(L.components, L.specs, L.o, L.base.species.map((x) => x.id), L.dopant.id, L.fuelIds);
  return { ...L, pip };
}
type Prepared = ReturnType<typeof prepare>;

// ------------------------------------------------------------------ plans that do not fit

/** One change that would make a plan fit, each tried: the option to set, its value as the option takes it, and in words. */
export interface FitOption {
  /** the sheet option (sampleVolume, stocks.<id> as density or molarConcentration, doses, candidate) */
  option: string;
  /** e.g. "200 uL", "5.968e8 1/mL", "0.5 mol/L", "0 1/mL,1e6 1/mL" (doses, comma-separated), a candidate id */
  value: string;
  text: string;
}

/**
 * What a plan that cannot be printed as asked gets instead of a sheet: why (the reasons, with the code of the
 * refusal) and the options that would fix it, each one tried (docs/model.md §11). `fits: false` tells it apart
 * from a sheet; the service answers it with 422 in every format (the body is this explanation).
 */
export interface NotFitSheet {
  fits: false;
  title: string;
  software: { name: 'brink'; version: string };
  printedAt: string;
  plan: { id: number; name: string; boundary: string; dosing: string; createdAt: string };
  candidate: { id: string; name: string } | null;
  code: string;
  reasons: string[];
  options: FitOption[];
  sections: Section[];
}

/** A sheet that cannot be made as asked: a DomainError (422) that carries the explanation to render. */
export class SheetNotFitError extends DomainError {
  constructor(readonly sheet: NotFitSheet) {
    super(sheet.code, sheet.reasons.join(' '));
  }
}

/** The densest packing of equal spheres, π/(3√2) ≈ 0.7405 (Kepler's conjecture, proved by Hales): no stock of them is denser. */
const DENSEST_PACKING = Math.PI / (3 * Math.SQRT2);
const NICE_VOLUMES_UL = [10, 20, 25, 50, 100, 150, 200, 250, 300, 400, 500, 750, 1000, 1500, 2000, 5000, 10000];
const STOCK_FACTORS = [2, 5, 10, 20, 50, 100, 1000];

/** Each single change that makes the pipetting fit, tried by planning again with it. */
function optionsThatFit(ctx: SheetContext, req: SheetRequest): FitOption[] {
  const fits = (t: Tweak) => {
    try {
      prepare(ctx, req, t);
      return true;
    } catch (e) {
      if (e instanceof DomainError && e.code === 'impossible-volumes') return false;
      throw e;
    }
  };
  const out: FitOption[] = [];
  const now = req.sampleVolume?.value ?? 100 * UL;
  const v = NICE_VOLUMES_UL.map((x) => x * UL).find((x) => x > now * (1 + 1e-9) && fits({ sampleVolume: x }));
  if (v !== undefined) out.push({ option: 'sampleVolume', value: `${formatNumber(v / UL)} uL`, text: `a sample volume of ${formatNumber(v / UL)} µL (now ${formatNumber(now / UL)} µL): every tube then fits` });
  // one stock more concentrated (the stock as the sheet would read it, × the smallest factor that fits), among the
  // stocks that can exist: no mass fraction above 1, no suspension denser than equal spheres can pack
  const probe = liquids(ctx, req);
  const canExist = (c: Component, f: number) => {
    if (c.per === 'mol') return c.stockMassFraction === null || c.stockMassFraction === undefined || c.stockMassFraction * f <= 1;
    const rec = ctx.speciesRecord(c.id);
    if (!rec) return true;
    try {
      return (c.stock * f) / numberDensity(rec, { volumeFraction: { si: 1, sd: 0, unit: null, input: 1 } }).value <= DENSEST_PACKING;
    } catch {
      return true;
    }
  };
  for (const c of probe.components) {
    const f = STOCK_FACTORS.find((k) => canExist(c, k) && fits({ stockScale: { id: c.id, factor: k } }));
    if (f === undefined) continue;
    const conc = c.per === 'mol' ? fmt(c.stock * f, 'concentration', 4) : `${formatNumber(c.stock * f * 1e-6)} particles/mL`;
    const was = c.per === 'mol' ? fmt(c.stock, 'concentration', 4) : `${formatNumber(c.stock * 1e-6)} particles/mL`;
    // the value as the stocks option takes it (molarConcentration or density)
    const value = c.per === 'mol' ? `${Number(((c.stock * f) / 1000).toPrecision(4))} mol/L` : `${Number((c.stock * f * 1e-6).toPrecision(4))} 1/mL`;
    out.push({ option: `stocks.${c.id}`, value, text: `a ${c.label} stock of ${conc} (${f} × the one used now, ${was}: ${c.stockText}), given as stocks.${c.id}` });
  }
  const n = probe.series.length;
  for (let k = 1; k < n - 1; k++) {
    if (!fits({ dropLargest: k })) continue;
    const kept = probe.series.slice(0, n - k);
    out.push({ option: 'doses', value: kept.map((x) => `${Number((x * 1e-6).toPrecision(6))} 1/mL`).join(','), text: `leave out the ${k === 1 ? 'largest dose' : `${k} largest doses`} (give doses up to ${pm(kept[kept.length - 1]!)} as the doses option)` });
    break;
  }
  return out;
}

/** The explanation of a plan that cannot be printed as asked (an impossible tube, a candidate that does not cross). */
export function notFitSheet(ctx: SheetContext, req: SheetRequest, err: DomainError): NotFitSheet {
  const { plan } = ctx;
  const chosen = req.candidate ?? plan.result.candidates.find((c) => c.feasible)?.species ?? null;
  const reasons = [err.message];
  let options: FitOption[] = [];
  if (err.code === 'impossible-volumes') options = optionsThatFit(ctx, req);
  else {
    const others = plan.result.candidates.filter((c) => c.feasible && c.species !== chosen).map((c) => c.species);
    if (others.length) options = [{ option: 'candidate', value: others.join(', '), text: `a sheet for a candidate that crosses the boundary: ${others.join(', ')} (the candidate option)` }];
    if (!others.length) options = [{ option: 'plan', value: '', text: 'a new plan: another boundary, other candidates, or a higher dose cap (the plan’s maxDensity or maxVolumeFraction)' }];
  }
  const title = `Bench sheet — plan ${plan.id}: ${plan.name} — cannot be made as asked`;
  const head: Section = {
    id: 'title',
    title,
    blocks: [{ kind: 'paragraph', muted: true, text: `brink ${VERSION} · plan ${plan.id} (${plan.request.boundary}, ${plan.request.dosing}; computed ${plan.createdAt})${chosen ? ` · candidate ${chosen}` : ''} · printed ${ctx.printedAt}` }],
  };
  const body: Section = {
    id: 'not-fit',
    title: 'Why there is no sheet',
    blocks: [
      { kind: 'caution', title: `Not printed (${err.code})`, text: 'this plan cannot be carried out as asked; nothing below is a protocol.' },
      { kind: 'list', items: reasons },
      { kind: 'heading', text: 'What would fix it' },
      options.length
        ? { kind: 'list', items: options.map((x) => x.text) }
        : { kind: 'paragraph', text: 'no single change tried (a larger sample volume up to 10 mL, one stock up to 1000 × more concentrated where such a stock can exist, fewer doses) makes it fit: change several options, or the plan.' },
      ...(err.code === 'impossible-volumes' && options.length
        ? [{ kind: 'paragraph' as const, muted: true, text: 'Each change listed was tried alone and makes every tube fit; a suggestion in the reason above that is not listed here was not confirmed.' }]
        : []),
    ],
  };
  return {
    fits: false,
    title,
    software: { name: 'brink', version: VERSION },
    printedAt: ctx.printedAt,
    plan: { id: plan.id, name: plan.name, boundary: plan.request.boundary, dosing: plan.request.dosing, createdAt: plan.createdAt },
    candidate: chosen ? { id: chosen, name: ctx.speciesRecord(chosen)?.name ?? chosen } : null,
    code: err.code,
    reasons,
    options,
    sections: [head, body],
  };
}

// ------------------------------------------------------------------ the sheet

/** The model's walls in words that cannot be read as advice to close a vessel (docs/model.md §11). */
export function wallsWording(walls: string): string {
  if (walls === 'sealed') return 'no-flux boundary (model): a boundary condition of the calculation, not an instruction to close the chamber';
  if (walls === 'periodic') return 'periodic boundary (model)';
  return 'no walls: unbounded (model)';
}

/** Engine and plan wordings that name the model's "sealed" walls, reworded for the bench (nothing reads as "close it"). */
export function benchWording(text: string): string {
  return text
    .replace(/In a sealed chamber the gas also builds pressure\./g, 'In a closed vessel the gas also builds pressure.')
    .replace(/\bsealed walls\b/g, 'no-flux walls (the model’s boundary condition)')
    .replace(/\bsealed chamber\b/g, 'chamber with no-flux walls (model)')
    .replace(/\bsealed\b/g, 'no-flux (model)');
}

/** One kind of tube of the sheet (a sample, made in `replicates` tubes): its code, the planned and delivered dopant dose. */
export interface SheetTube {
  /** short code for the sample, printed on the sheet and on the tube lids (replicates add a letter: D1a, D1b …) */
  code: string;
  sample: string;
  kind: TubeKind;
  replicates: number;
  /** the replicate tubes' own codes */
  tubes: string[];
  plannedDose: Amount | null;
  /** the dopant dose the pipetted volumes deliver */
  dose: Amount | null;
  /** the same delivered dose in SI (m⁻³), unrounded: what outcomes entered for these tubes record */
  doseSi: number | null;
}

/** What the sheet expects a tube to do, from the dose path and the analysis at the tube's delivered dose (docs/model.md §5, §6, §11). */
export interface TubeOutcome {
  tube: string;
  /** null: not predicted (why in `note`) */
  state: State | null;
  growthTime: Amount | null;
  wavelength: Amount | null;
  oscillationPeriod: Amount | null;
  /** the dose lies within the 5–95 % band of the plan's boundary: either side is plausible */
  withinBand: boolean;
  /** the state at this dose comes before the chosen boundary (the candidate's first onset lies below its threshold) */
  earlierInstability: boolean;
  /** flags and notes, in words */
  flags: string[];
}

/**
 * One tube's observations, blank on a printed sheet; a filled-in sheet is entered back in this shape, keyed by
 * the tube code (docs/model.md §11): stateSeen one of stable | stationary | oscillatory | unclear, onsetTime and
 * patternLength as a number with a unit ("12 min", "0.4 mm"), notes free text.
 */
export interface Observation {
  tube: string;
  stateSeen: string | null;
  onsetTime: string | null;
  patternLength: string | null;
  notes: string | null;
}

export interface SheetGas {
  /** the vessel the sample is made in (option tubeVolume; default 1.5 mL, a common microcentrifuge tube) */
  tubeVolume: Amount;
  /** the imaging chamber's volume: the option, or length² × depth of the plan's chamber (a square cell), or null */
  chamberVolume: Amount | null;
  chamberVolumeFrom: 'option' | 'chamber' | null;
  temperature: Amount;
  molarVolume: Amount;
  ventFraction: number;
  perTube: { tube: string; gas: string; fuel: string; moles: Amount; volume: Amount; fractionOfHeadspace: number | null; fractionOfChamber: number | null; ventTube: boolean; ventChamber: boolean; closedWithCatalyst: boolean; message: string }[];
  cautions: string[];
}

/** A dose as the sheet prints it: particles per mL, four figures (1.433 × 10⁸ particles/mL). */
const pm = (x: number) => fmtAmount(perMl(x));
const stateWords: Record<State, string> = { stable: 'stable: nothing grows', stationary: 'stationary: clusters or bands that grow in place', oscillatory: 'oscillatory: travelling or pulsating patterns' };

/** Build the sheet model. @throws InputError, SheetNotFitError (422: what is impossible and what would fix it) */
export function buildSheet(ctx: SheetContext, req: SheetRequest): Sheet {
  let P: Prepared;
  try {
    P = prepare(ctx, req);
  } catch (e) {
    if (e instanceof DomainError && ['impossible-volumes', 'candidate-infeasible', 'no-feasible-candidate'].includes(e.code)) throw new SheetNotFitError(notFitSheet(ctx, req, e));
    throw e;
  }
  const { plan } = ctx;
  const { cand, chosen, base, dopant, dosing, o, ref, referenceFrom, seriesInfo, stocks, components, fuelIds, pip, spIds } = P;
  const warnings = P.warnings;
  // the dopant's doses in its own units (nM for an enzyme) wherever the sheet words them
  const candAmount = amountContext(ctx, dopant);
  const tr = (t: { what: string; from: string; volume: number }) => ({ what: t.what, from: t.from, volume: ul(t.volume) });

  // Imaging plan from the numbers at the margin dose.
  const m: AnalysisResult | null = cand.atMargin;
  const tau = m ? (m.growthTime ?? (m.growthRate !== 0 ? 1 / Math.abs(m.growthRate) : null)) : null;
  const notes: string[] = [];
  let frame = 10;
  let duration = 3600;
  let fuelLife: number | null = null;
  // the dose the imaging numbers are read at (the margin dose is the threshold itself when the planner made it so)
  const atWhich = cand.atMargin === cand.atThreshold ? 'threshold' : 'margin';
  if (!m) notes.push(`no analysis at a margin dose (${cand.anyDose ? 'any dose crosses, so there is none' : 'none in this plan'}): the frame interval (${fmtDuration(frame)}) and duration (${fmtDuration(duration)}) are defaults, not predictions; set them from a trial run`);
  if (m && tau) {
    frame = niceFloor(tau / 10);
    duration = 5 * tau;
    // an absent fuel (lifetime 0) is not a time to image for: the analysis' own warnings say it is missing
    const present = m.checks.fuel.filter((f) => !f.absent);
    fuelLife = present.length > 0 ? Math.min(...present.map((f) => f.lifetime)) : null;
    notes.push(`frame interval at most a tenth of the ${m.growthTime ? 'growth' : 'decay'} time (${fmtDuration(tau)} at the ${atWhich} dose)`);
    if (fuelLife !== null && fuelLife < duration) {
      warnings.push({ code: 'imaging-capped-by-fuel', message: `five growth times (${fmtDuration(duration)}) outlast the fuel (about ${fmtDuration(fuelLife)}): the imaging stops when the fuel runs out; refuel or use more fuel if the pattern needs longer.` });
      duration = fuelLife;
    }
  }
  // Gas: the margin analysis' own gas check (engine/checks.ts), whose production counts each turnover's yield.
  // Only the gas that is expected counts: a constant producer whose fuel is absent makes none (fuelAbsent, checks.ts);
  // analyses stored before that split carry no expected figures, and then the model's are used.
  const gasChecks = (m?.checks.gas ?? []).map((g) => ({
    ...g,
    rate: g.expectedProductionRate ?? g.productionRate,
    time: g.expectedTimeToSaturation === undefined ? g.timeToSaturation : g.expectedTimeToSaturation,
  }));
  const expectedGas = gasChecks.filter((g): g is typeof g & { time: number } => g.time !== null);
  const firstGas = expectedGas.length > 0 ? expectedGas.reduce((a, b) => (b.time < a.time ? b : a)) : null;
  for (const g of gasChecks.filter((x) => x.fuelAbsent)) {
    const name = ctx.chemicalRecord(g.chemical)?.name ?? g.chemical;
    notes.push(`${name} would be made at ${mM(g.productionRate).value} mM/s by constant activities at the ${atWhich} dose, but only while their fuel lasts: ${(g.absentFuels ?? []).join(', ')} ${(g.absentFuels ?? []).length === 1 ? 'is' : 'are'} absent, so ${g.time === null ? `no ${name} is expected` : `only ${mM(g.rate).value} mM/s is expected`}`);
  }
  if (firstGas) {
    const name = ctx.chemicalRecord(firstGas.chemical)?.name ?? firstGas.chemical;
    notes.push(`${name} is made at ${mM(firstGas.rate).value} mM/s (stoichiometric yields counted) at the ${atWhich} dose and passes its solubility (${mM(firstGas.solubility).value} mM) after about ${fmtDuration(firstGas.time)}`);
    if (firstGas.time < duration && !m!.warnings.some((w) => w.code === 'gas-exceeds-solubility' && w.chemical === firstGas.chemical)) {
      warnings.push({ code: 'gas-during-imaging', message: `${name} passes its solubility after about ${fmtDuration(firstGas.time)}, within the ${fmtDuration(duration)} of imaging: bubbles may form; vent the chamber or image for less time.` });
    }
  }
  const lambda = m?.fastestMode.wavelength ?? null;
  const L = base.chamber.length;
  let fov: number | null = null;
  if (lambda !== null) {
    fov = L !== null ? Math.min(2 * lambda, L) : 2 * lambda;
    notes.push(L !== null && 2 * lambda >= L ? 'the pattern fills the chamber: image the whole chamber (tile if needed)' : 'a field of view of two wavelengths shows the pattern');
  } else notes.push('the least stable mode is the longest wave: image the whole chamber');
  // The planner's own warnings on this candidate come first (an earlier instability than the chosen
  // boundary, draws already past, a band above the cap); plans stored before they existed carry none.
  const gathered: SubjectWarning[] = [...(cand.warnings ?? []), ...warnings];
  // Then the plan's own (a chemical taken as 0, a retired species); the state map's are not the bench's.
  for (const w of plan.result.warnings ?? []) if (w.code !== 'no-state-map') gathered.push(w);
  if (m) gathered.push(...m.warnings);
  // Only what this sheet's mixture uses (another candidate's substrate is not this bench's concern), one line per
  // code and subject: the plan and the analysis word the same warning differently, so their messages are merged.
  const sheetSpecies = new Set(spIds);
  const sheetChemicals = new Set([...base.species, dopant].flatMap((sp) => sp.couplings.flatMap((c) => [c.chemical, ...(c.activity?.kind === 'saturating' && c.activity.product !== null ? [c.activity.product] : [])])));
  warnings.splice(0, warnings.length, ...sheetWarnings(gathered, sheetSpecies, sheetChemicals).map((w) => ({ code: w.code, message: benchWording(w.message) })));

  // Tubes (pipetting.ts): one code per sample, a letter per replicate; the dose the rounded volumes deliver.
  const bench = pip.bench;
  const tubesSi = tubeList(bench).map((t, i) => ({ code: t.code, sample: t.name, kind: t.kind, planned: t.plannedDose?.si ?? null, delivered: t.deliveredDose?.si ?? null, tubes: t.lids, conc: bench.tubes[i]!.delivered }));
  const tubes: SheetTube[] = tubesSi.map((t) => ({ code: t.code, sample: t.sample, kind: t.kind, replicates: t.tubes.length, tubes: t.tubes, plannedDose: t.planned === null ? null : perMl(t.planned), dose: t.delivered === null ? null : perMl(t.delivered), doseSi: t.delivered }));
  // Two doses of the series that the rounded volumes deliver alike are one dose at the bench: say so.
  const series = tubesSi.filter((t) => t.kind === 'series' && t.delivered !== null);
  for (let i = 1; i < series.length; i++) {
    const [p, c] = [series[i - 1]!, series[i]!];
    if (Math.abs(c.delivered! - p.delivered!) <= 1e-9 * Math.max(c.delivered!, p.delivered!))
      warnings.push({ code: 'same-delivered-dose', message: `tubes ${p.code} and ${c.code} deliver the same dose after rounding (${per(c.delivered!, candAmount)}, planned ${per(p.planned!, candAmount)} and ${per(c.planned!, candAmount)}): they are one dose at the bench; use a larger sample volume or a more dilute dopant stock to tell them apart.` });
  }

  // Expected outcome of each tube (docs/model.md §11).
  const mixtureOf = (t: (typeof tubesSi)[number]): Mixture => {
    const x = t.delivered ?? 0;
    if (t.kind === 'no-fuel') {
      // No fuel: the fuel at 0, and the activities that run on it off. A constant rate is the model's idealisation
      // of an activity while its fuel lasts (docs/model.md §8), so a species that consumes a withheld fuel makes
      // and consumes nothing without it; a saturating turnover of a fuel at 0 is 0 by itself.
      const mx = withDose(base, dopant, x, dosing);
      const withheld = new Set(fuelIds);
      const runsOnFuel = (sp: Species) => sp.couplings.some((c) => withheld.has(c.chemical) && ((c.activity?.kind === 'constant' && c.activity.rate < 0) || c.activity?.kind === 'saturating'));
      return {
        ...mx,
        chemicals: mx.chemicals.map((c) => (withheld.has(c.id) ? { ...c, concentration: 0 } : c)),
        species: mx.species.map((sp) => (runsOnFuel(sp) ? { ...sp, couplings: sp.couplings.map((c) => (c.activity?.kind === 'constant' || withheld.has(c.chemical) ? { ...c, activity: null } : c)) } : sp)),
      };
    }
    if (t.kind === 'dopant-alone') return withDose({ ...base, species: [] }, dopant, x, 'add');
    return withDose(base, dopant, x, dosing);
  };
  const band = cand.band;
  const threshold = cand.threshold.density;
  const onset = cand.firstOnset ?? null;
  const cache = new Map<string, AnalysisResult | Error>();
  const analysed = (t: (typeof tubesSi)[number]) => {
    const key = `${t.kind === 'series' || t.kind === 'no-dopant' ? 's' : t.kind}:${t.delivered}`;
    if (!cache.has(key)) {
      try {
        cache.set(key, analyze(mixtureOf(t)));
      } catch (e) {
        cache.set(key, e as Error);
      }
    }
    return cache.get(key)!;
  };
  const outcomes: TubeOutcome[] = tubesSi.map((t) => {
    const a = analysed(t);
    const flags: string[] = [];
    if (a instanceof Error) return { tube: t.code, state: null, growthTime: null, wavelength: null, oscillationPeriod: null, withinBand: false, earlierInstability: false, flags: [`not predicted: ${a.message}`] };
    const x = t.delivered ?? 0;
    let state: State = a.state;
    const onPath = t.kind === 'series' || t.kind === 'no-dopant';
    if (onPath && x > 0 && cand.dosePath?.length) {
      const iv = cand.dosePath.find((v) => x > v.from && x <= v.to);
      if (!iv) flags.push('above the dose cap: not on the dose path (the analysis at this dose)');
      else if (iv.state !== a.state) {
        state = iv.state;
        flags.push(`at a change of state: dose path ${iv.state}, analysis at this dose ${a.state}`);
      }
    }
    if (!onPath) flags.push(t.kind === 'no-fuel' ? 'control: its own mixture, without the fuel (fuel-driven activities off)' : 'control: its own mixture, the dopant alone with the fuel');
    let withinBand = false;
    if (onPath && band && x > 0) {
      const lo = band.p05;
      const hi = band.p95 ?? Infinity;
      if (lo !== null && x >= lo && x <= hi) {
        withinBand = true;
        flags.push('in the 5–95 % band of the threshold: either side is plausible');
      }
    }
    let earlierInstability = false;
    if (onPath && onset && onset.density < threshold * (1 - 1e-5) && x >= onset.density && x < threshold) {
      earlierInstability = true;
      flags.push(`turns ${onset.state} first (first onset ${per(onset.density, candAmount)}), below the ${plan.request.boundary} threshold: not the boundary asked for`);
    }
    const grows = state !== 'stable' && a.growthTime !== null;
    // a pattern that needs longer to grow than the fuel lasts in this tube is not what the bench will see (§8)
    if (grows) {
      const present = a.checks.fuel.filter((f) => !f.absent && Number.isFinite(f.lifetime) && f.lifetime > 0);
      const life = present.length > 0 ? Math.min(...present.map((f) => f.lifetime)) : null;
      if (life !== null && life < a.growthTime!)
        flags.push(`the fuel runs out in about ${fmtDuration(life)}, before one growth time (${fmtDuration(a.growthTime!)}): the pattern may not form at all`);
      else if (life !== null && life < FUEL_GROWTH_TIMES * a.growthTime!)
        flags.push(`the fuel lasts only about ${(life / a.growthTime!).toFixed(1)} growth times (${fmtDuration(life)}): the pattern may stop growing early`);
    }
    return {
      tube: t.code,
      state,
      growthTime: grows ? s(a.growthTime!) : null,
      wavelength: grows && a.fastestMode.wavelength !== null ? mm(a.fastestMode.wavelength) : null,
      oscillationPeriod: grows && a.fastestMode.oscillationPeriod !== null ? s(a.fastestMode.oscillationPeriod) : null,
      withinBand,
      earlierInstability,
      flags,
    };
  });
  const observations: Observation[] = tubesSi.flatMap((t) => t.tubes.map((tube) => ({ tube, stateSeen: null, onsetTime: null, patternLength: null, notes: null })));

  // Gas each tube's fuel can release (gas.ts), against the tube and the chamber.
  const tubeVolume = req.tubeVolume?.value ?? 1.5e-6;
  const chamberVolume = req.chamberVolume?.value ?? (base.chamber.length !== null && base.chamber.depth !== null ? base.chamber.length * base.chamber.length * base.chamber.depth : null);
  const chamberVolumeFrom = req.chamberVolume ? 'option' : chamberVolume !== null ? 'chamber' : null;
  const T = base.conditions.temperature;
  const gases = base.chemicals.filter((c) => c.solubility !== null).map((c) => c.id);
  const perTube: SheetGas['perTube'] = [];
  let catalystAndFuel = false;
  tubesSi.forEach((t) => {
    const conc = t.conc;
    const present = [...base.species, dopant].filter((sp) => (conc.get(sp.id) ?? 0) > 0);
    for (const g of gases) {
      let molesFuel = 0;
      const fuels: string[] = [];
      for (const f of fuelIds) {
        const c = conc.get(f) ?? 0;
        const route = c > 0 ? gasRoute(present, f, g) : null;
        if (!route) continue;
        molesFuel += c * o.sampleVolume * route.yieldPerFuel;
        fuels.push(f);
      }
      if (fuels.length === 0) continue;
      catalystAndFuel = true;
      const r = tubeGas({ gas: ctx.chemicalRecord(g)?.name ?? g, fuelMoles: molesFuel, yieldPerFuel: 1, temperature: T, tubeVolume, sampleVolume: o.sampleVolume, chamberVolume, closed: req.closedChamber, catalyst: true });
      perTube.push({ tube: t.code, gas: g, fuel: fuels.join(', '), moles: { value: Number((r.moles * 1e6).toPrecision(3)), unit: 'µmol' }, volume: ul(r.volume), fractionOfHeadspace: r.fractionOfHeadspace, fractionOfChamber: r.fractionOfChamber, ventTube: r.ventTube, ventChamber: r.ventChamber, closedWithCatalyst: r.closedWithCatalyst, message: r.message });
    }
  });
  const cautions: string[] = [];
  if (catalystAndFuel) {
    cautions.push('Catalyst and fuel together evolve gas: never close a tube, vial or imaging chamber that holds both unless it is built to take the pressure; leave tubes open or vented while they react.');
    if (req.closedChamber) cautions.push('You said the imaging chamber will be closed (closedChamber): a closed chamber holding catalyst and fuel builds pressure and can burst. Use an open or vented cell, or much less fuel, unless the cell is built for the pressure.');
  }
  const gas: SheetGas = {
    tubeVolume: ul(tubeVolume),
    chamberVolume: chamberVolume === null ? null : ul(chamberVolume),
    chamberVolumeFrom,
    temperature: { value: Number((T - 273.15).toPrecision(4)), unit: '°C' },
    molarVolume: { value: Number((molarVolume(T) * 1e3).toPrecision(4)), unit: 'L/mol' },
    ventFraction: DEFAULT_VENT_FRACTION,
    perTube,
    cautions,
  };

  // Hazards as handled (hazards.ts hazardsFor): each chemical's stock, working solution and sample (pipetting.ts
  // handled); each species' stock in its form, the sample, and an enzyme's powder should the stock be made from it.
  const pct3 = (w: number) => `${Number((w * 100).toPrecision(3))} % w/w`;
  const entry = (r: HazardReport, name: string): HazardEntry => ({ ...r, chemical: r.id, name, asHandled: r.asHandled.map((x) => ({ ...x, classified: x.classification.status === 'classified' || x.classification.status === 'below-limits' })) });
  const hazards: HazardEntry[] = [];
  for (const id of fuelIds) {
    const rec = ctx.chemicalRecord(id)!;
    const handled = bench.handled
      .filter((h) => h.chemical === id)
      .map((h) => {
        const w = h.massFraction === null ? '' : `, ${pct3(h.massFraction)}`;
        const where = h.where === 'stock' ? `stock bottle (${h.massFraction === null ? `${mM(h.concentration).value} mM` : pct3(h.massFraction)})` : h.where === 'working' ? `working solution ${h.code ?? ''} (${mM(h.concentration).value} mM${w})` : `in the sample (at most ${mM(h.concentration).value} mM${w})`;
        return { where: where.replace('  ', ' '), massFraction: h.massFraction, form: 'solution' as const };
      });
    hazards.push(entry(hazardsFor(ctx.hazards, 'chemical', id, handled, rec.name), rec.name));
  }
  for (const id of spIds) {
    const rec = ctx.speciesRecord(id)!;
    const comp = components.find((c) => c.id === id)!;
    // mass per particle from the record (a molar mass or a material density); null: no mass fraction known
    let mass: number | null = null;
    try {
      mass = 1 / numberDensity(rec, { massConcentration: { si: 1, sd: 0, unit: null, input: 1 } }).value;
    } catch {
      mass = null;
    }
    const wStock = mass !== null ? (comp.stock * mass) / WATER_DENSITY_25C : null;
    const inSample = Math.max(0, ...bench.tubes.map((t) => t.delivered.get(id) ?? 0));
    const wSample = mass !== null ? (inSample * mass) / WATER_DENSITY_25C : null;
    const form = stockForm(rec.kind);
    const handled: { where: string; massFraction: number | null; form: HazardForm }[] = [
      { where: `stock (${form}${wStock !== null ? `, ${pct3(wStock)}` : ', mass fraction not known'})`, massFraction: wStock, form },
      { where: `in the sample (${form}${wSample !== null ? `, at most ${pct3(wSample)}` : ''})`, massFraction: wSample, form },
    ];
    if (rec.kind === 'enzyme') handled.push({ where: 'powder, if you make the stock from it', massFraction: 1, form: 'powder' });
    hazards.push(entry(hazardsFor(ctx.hazards, 'species', id, handled, rec.name), rec.name));
  }
  const catalytic = [...base.species, dopant].some((x) => x.couplings.some((c) => (c.activity?.kind === 'constant' && c.activity.rate < 0) || c.activity?.kind === 'saturating'));
  const anyGas = base.chemicals.some((c) => c.solubility !== null);
  const safety = [
    'Wear eye protection and gloves (nitrile) and a lab coat for every step; handle concentrated stocks in a fume hood if the safety data sheet asks for it.',
    ...(catalytic || anyGas ? ['Catalytic particles and enzymes decompose the fuel and can evolve gas: never close a vial, tube or chamber that holds catalyst and fuel unless it is built to take the pressure; keep stock vials vented.'] : []),
    'Add the fuel last, to the diluted mixture, never the other way round; do not return unused fuel to its stock bottle.',
    'Biological materials (enzymes, coated beads): follow your institution’s biosafety rules; particles and nanoparticles: avoid aerosols.',
    'Local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence over this sheet.',
  ];

  const prediction: Sheet['prediction'] = {
    threshold: { ...perMl(cand.threshold.density), volumeFraction: cand.threshold.volumeFraction, anyDose: cand.anyDose === true },
    band: cand.band
      ? {
          p05: cand.band.p05 !== null ? perMl(cand.band.p05) : null,
          median: cand.band.median !== null ? perMl(cand.band.median) : null,
          p95: cand.band.p95 !== null ? perMl(cand.band.p95) : null,
          samples: cand.band.samples,
          seed: cand.band.seed,
          // plans stored before the band counted already-past draws carry no such field
          alreadyPast: cand.band.alreadyPast ?? null,
          feasibleFraction: cand.band.feasibleFraction ?? null,
        }
      : null,
    referenceDose: perMl(ref),
    referenceFrom,
    series: seriesInfo,
    atMargin: m
      ? {
          state: m.state,
          growthTime: m.growthTime !== null ? s(m.growthTime) : null,
          wavelength: m.fastestMode.wavelength !== null ? mm(m.fastestMode.wavelength) : null,
          oscillationPeriod: m.fastestMode.oscillationPeriod !== null ? s(m.fastestMode.oscillationPeriod) : null,
          gathers: m.composition.filter((c) => c.weight > 0.05).map((c) => c.species),
          pushedOut: m.composition.filter((c) => c.weight < -0.05).map((c) => c.species),
        }
      : null,
    dosePath: (cand.dosePath ?? []).map((iv) => ({ from: perMl(iv.from), to: perMl(iv.to), state: iv.state })),
    firstOnset: onset ? { dose: perMl(onset.density), state: onset.state } : null,
  };

  const data: Omit<Sheet, 'sections'> = {
    fits: true,
    title: `Bench sheet — plan ${plan.id}: ${plan.name}`,
    software: { name: 'brink', version: VERSION },
    printedAt: ctx.printedAt,
    plan: { id: plan.id, name: plan.name, boundary: plan.request.boundary, dosing: plan.request.dosing, createdAt: plan.createdAt },
    candidate: { id: chosen, name: ctx.speciesRecord(chosen)?.name ?? chosen },
    shelfRevisions: ctx.revisions,
    model: { walls: wallsWording(base.chamber.walls), chamberLength: L !== null ? mm(L) : null, chamberDepth: base.chamber.depth !== null ? mm(base.chamber.depth) : null, temperature: gas.temperature },
    prediction,
    options: { sampleVolume: ul(o.sampleVolume), replicates: o.replicates, minVolume: ul(o.minVolume), overage: o.overage, buffer: o.buffer, operator: req.operator ?? null },
    stocks,
    dilutions: pip.dilutions.map((d) => ({
      name: d.name,
      concentration: components.find((c) => c.id === d.component)!.per === 'mol' ? mM(d.concentration) : perMl(d.concentration),
      volume: ul(d.volume),
      steps: d.steps.map(tr),
    })),
    masterMix: pip.masterMix ? { tubes: pip.masterMix.tubes, perTube: ul(pip.masterMix.perTube), total: ul(pip.masterMix.total), steps: pip.masterMix.steps.map(tr) } : null,
    samples: pip.samples.map((x) => ({ name: x.name, role: x.role, dose: x.dose === null ? null : perMl(x.dose), doseFactor: x.dose === null ? null : Number((x.dose / ref).toPrecision(4)), tubes: x.tubes, steps: x.steps.map(tr) })),
    pipetting: pipettingJson(bench),
    tubes,
    outcomes,
    observations,
    imaging: {
      frameInterval: s(frame),
      duration: s(duration),
      fuelLife: fuelLife !== null ? s(fuelLife) : null,
      gasSaturation: firstGas
        ? { chemical: firstGas.chemical, productionRate: { ...mM(firstGas.rate), unit: 'mM/s' }, solubility: mM(firstGas.solubility), time: s(firstGas.time) }
        : null,
      wavelength: lambda !== null ? mm(lambda) : null,
      chamberLength: L !== null ? mm(L) : null,
      fieldOfView: fov !== null ? mm(fov) : null,
      notes: notes.map(benchWording),
    },
    gas,
    warnings,
    hazards,
    safety,
  };
  // a dose row is labelled by its factor of the 1 × dose (planned dose per mL / the reference per mL)
  const doseLabel = (t: { plannedDose: Amount | null }) => (t.plannedDose === null ? 'no dopant' : `${formatNumber(Number((t.plannedDose.value / (ref * 1e-6)).toPrecision(3)))} ×`);
  // what each species' amount is shown with: its kind and molar mass from the shelf, its size and material density as the plan used them
  const amountOf = new Map([...base.species, dopant].map((sp) => [sp.id, amountContext(ctx, sp)] as const));
  const amountFor = (id: string) => amountOf.get(id) ?? {};
  return { ...data, sections: sheetSections(data, pipettingSections(data.pipetting, { doseLabel, amountOf: amountFor }), amountFor) };
}

// ------------------------------------------------------------------ the sections every rendering reads

/**
 * An Amount of the JSON as the bench writes it (display.ts): times in the unit that reads best (2.3 h, not 8280 s),
 * lengths likewise (100 µm, not 0.1 mm), and the rest as the JSON holds it (µL, mM, °C, particles/mL).
 */
const a = (x: Amount | null | undefined): string => {
  if (!x) return '—';
  if (x.unit === 's') return fmtDuration(x.value);
  if (x.unit === 'mm') return fmt(x.value * 1e-3, 'length');
  return fmtAmount(x);
};
/**
 * A dose or a species' stock (an Amount in particles/mL) for that species: an enzyme in nM with its particles/mL
 * beside it (the pipetting's own unit, so the arithmetic can be checked), anything else in particles/mL (four figures).
 */
const doseOf = (x: Amount | null | undefined, c: AmountContext): string => (x && x.unit === 'particles/mL' && c.kind === 'enzyme' ? `${fmtMolar(x.value * 1e6, 4)} (${fmtAmount(x)})` : a(x));
/** Where the band puts the threshold, in words that read right when a quantile lies above the dose cap. */
function bandSentence(boundary: string, b: { p05: Amount | null; p95: Amount | null }, a: (x: Amount) => string): string {
  const head = `The band: in the Monte Carlo draws the ${boundary} threshold`;
  if (b.p05 && b.p95) return `${head} lies between ${a(b.p05)} (5 %) and ${a(b.p95)} (95 %).`;
  if (b.p05) return `${head} is above ${a(b.p05)} in 95 % of the draws (the 5 % point); its 95 % point lies above the dose cap.`;
  return `${head} lies above the dose cap at both its 5 % and 95 % points.`;
}
const pct = (f: number | null) => (f === null ? '—' : f >= 1 ? `${formatNumber(Number(f.toPrecision(2)))} ×` : `${formatNumber(Number((100 * f).toPrecision(2)))} %`);

function hazardBlocks(h: HazardEntry): Block[] {
  const blocks: Block[] = [{ kind: 'heading', text: h.name }];
  blocks.push(
    table(
      [
        { id: 'where', label: 'as handled' },
        { id: 'signal', label: 'signal word' },
        { id: 'statements', label: 'hazard statements' },
        { id: 'pictograms', label: 'pictograms' },
        { id: 'precautionary', label: 'precautionary statements' },
      ],
      h.asHandled.map((x) => {
        // hazards.ts words each status: no data (not classified: the supplier's SDS), no data for this form,
        // below the limits of the shelf's data (version N), or the classes that apply; never "no hazard"
        const c = x.classification;
        if (c.status !== 'classified') return { cells: [x.where, '—', c.note, '—', c.status === 'below-limits' ? '—' : 'read the supplier’s safety data sheet before handling it'] };
        return {
          cells: [
            x.where,
            c.signal ?? '—',
            `${c.statements.map((st) => `${st.code} ${st.text} (${st.hazardClass})`).join('; ')}${c.assumedNeat ? ' — concentration not known: classified as the neat material' : ''}`,
            c.pictograms.length ? c.pictograms.map((p) => `${p} (${PICTOGRAMS[p] ?? ''})`).join(', ') : '—',
            c.precautionary.length ? c.precautionary.join(' ') : '—',
          ],
        };
      }),
    ),
  );
  const kv: [string, string | null][] = [['Incompatible with', h.incompatibilities], ['Handling', h.handling], ['Storage', h.storage], ['Disposal', h.disposal]];
  const given = kv.filter(([, v]) => !!v).map(([key, value]) => ({ key, value: value! }));
  if (given.length) blocks.push({ kind: 'keyValue', rows: given });
  blocks.push({ kind: 'paragraph', muted: true, text: `${h.verify}${h.source ? ` Source of these data, as stored on the shelf: ${h.source}` : ''}` });
  return blocks;
}

/** The gas table: tubes whose figures print the same share one row (codes listed), so ten identical rows are one. */
function gasRows(perTube: SheetGas['perTube']): { cells: string[]; code?: string }[] {
  const rows = new Map<string, { tubes: string[]; cells: string[] }>();
  for (const x of perTube) {
    const rest = [x.gas, a(x.moles), a(x.volume), pct(x.fractionOfHeadspace), pct(x.fractionOfChamber), [x.ventTube ? 'leave the tube open or vented' : null, x.ventChamber ? 'use an open or vented chamber, or less fuel' : null].filter(Boolean).join('; ') || 'nothing beyond the general cautions'];
    const key = rest.join('\u0000');
    const row = rows.get(key) ?? { tubes: [], cells: rest };
    row.tubes.push(x.tube);
    rows.set(key, row);
  }
  return [...rows.values()].map((r) => (r.tubes.length === 1 ? { code: r.tubes[0]!, cells: [r.tubes[0]!, ...r.cells] } : { cells: [r.tubes.join(', '), ...r.cells] }));
}

const expectedText = (o: TubeOutcome) =>
  o.state === null
    ? 'not predicted'
    : [o.state, o.growthTime ? `grows in about ${a(o.growthTime)}` : null, o.wavelength ? `wavelength ${a(o.wavelength)}` : null, o.oscillationPeriod ? `period ${a(o.oscillationPeriod)}` : null].filter(Boolean).join('; ');

/** The ordered sections of a sheet: the one source of the HTML and Markdown renderings (render.ts). */
export function sheetSections(sh: Omit<Sheet, 'sections'>, pipetting: Section[], amountOf: (species: string) => AmountContext = () => ({})): Section[] {
  const p = sh.prediction;
  // the candidate's doses in its own units (nM for an enzyme)
  const cand = amountOf(sh.candidate.id);
  const d = (x: Amount | null | undefined) => doseOf(x, cand);
  /** A band quantile: null means it lies above the dose cap (engine/planner.ts), not that it is unknown. */
  const q = (x: Amount | null | undefined) => (x ? d(x) : 'above the dose cap');
  const sections: Section[] = [];
  sections.push({
    id: 'title',
    title: sh.title,
    blocks: [
      { kind: 'paragraph', muted: true, text: `brink ${sh.software.version} · plan ${sh.plan.id} (${sh.plan.boundary}, ${sh.plan.dosing}; computed ${sh.plan.createdAt}) · candidate ${sh.candidate.name} (${sh.candidate.id}) · printed ${sh.printedAt}` },
      { kind: 'keyValue', rows: [{ key: 'Operator', value: sh.options.operator }, { key: 'Date', value: null }, { key: 'Batch / lot numbers', value: null }] },
      { kind: 'caution', title: 'Safety first', text: 'Local regulations, your institution’s safety rules and the supplier’s safety data sheet take precedence over this sheet. Read the hazards and gas sections before you start.' },
    ],
  });
  const rows: { key: string; value: string }[] = [
    { key: `threshold dose of ${sh.candidate.id} (${sh.plan.boundary})`, value: p.threshold.anyDose ? 'any dose above 0 (threshold 0⁺)' : `${d(p.threshold)} (volume fraction ${formatNumber(Number(p.threshold.volumeFraction.toPrecision(3)))})` },
  ];
  if (p.band) {
    const extra = p.band.alreadyPast !== null && p.band.feasibleFraction !== null ? `; already past without dopant in ${(100 * p.band.alreadyPast).toFixed(1)} % of draws; crosses at or below the cap in ${(100 * p.band.feasibleFraction).toFixed(1)} %` : '';
    rows.push({ key: `uncertainty band (${p.band.samples} Monte Carlo draws, seed ${p.band.seed}${extra}): 5 % · median · 95 %`, value: `${q(p.band.p05)} · ${q(p.band.median)} · ${q(p.band.p95)}` });
  } else rows.push({ key: 'uncertainty band', value: 'none: the plan ran without Monte Carlo draws, so no tube is flagged as within a band' });
  rows.push({ key: 'reference dose (1 ×)', value: d(p.referenceDose) }, { key: 'dose series', value: p.series.note });
  if (p.dosePath.length) rows.push({ key: 'dose path (state over the doses, whatever the boundary)', value: p.dosePath.map((iv) => `${iv.state} over (${d(iv.from)}, ${d(iv.to)}]`).join('; ') });
  if (p.firstOnset) rows.push({ key: 'first onset (smallest dose at which anything grows)', value: `${p.firstOnset.state} from ${d(p.firstOnset.dose)}` });
  if (p.atMargin) {
    rows.push({ key: `above the threshold: state, growth time, wavelength${p.atMargin.oscillationPeriod ? ', period' : ''}`, value: `${p.atMargin.state}, ${a(p.atMargin.growthTime)}, ${a(p.atMargin.wavelength)}${p.atMargin.oscillationPeriod ? `, ${a(p.atMargin.oscillationPeriod)}` : ''}` });
    rows.push({ key: 'gather together · pushed out', value: `${p.atMargin.gathers.join(', ') || '—'} · ${p.atMargin.pushedOut.join(', ') || '—'}` });
  }
  rows.push({ key: 'chamber walls', value: sh.model.walls }, { key: 'chamber length · depth', value: `${a(sh.model.chamberLength)} · ${a(sh.model.chamberDepth)}` }, { key: 'sample temperature', value: a(sh.model.temperature) });
  sections.push({ id: 'prediction', title: 'Prediction', blocks: [{ kind: 'keyValue', rows }] });

  sections.push({
    id: 'stocks',
    title: 'Stocks',
    blocks: [
      table(
        [
          { id: 'name', label: 'substance' },
          { id: 'stock', label: 'stock' },
          { id: 'concentration', label: 'concentration', numeric: true },
          { id: 'from', label: 'from' },
        ],
        sh.stocks.map((x) => ({ cells: [x.name, x.described, x.kind === 'species' ? doseOf(x.concentration, amountOf(x.id)) : a(x.concentration), x.source] })),
      ),
      { kind: 'paragraph', muted: true, text: `Sample volume ${a(sh.options.sampleVolume)}, ${sh.options.replicates} replicate tube(s) per sample, smallest volume pipetted ${a(sh.options.minVolume)}, master-mix overage ${Math.round(sh.options.overage * 100)} %, diluent: ${sh.options.buffer}.` },
    ],
  });
  sections.push(...pipetting);

  // Expected outcome per sample, and the observations per tube (blank: to fill in, and to enter back later).
  const byCode = new Map(sh.outcomes.map((o) => [o.tube, o] as const));
  sections.push({
    id: 'outcomes',
    title: 'Expected outcome',
    blocks: [
      table(
        [
          { id: 'tube', label: 'tube' },
          { id: 'sample', label: 'sample' },
          { id: 'dose', label: 'dopant delivered', numeric: true },
          { id: 'expected', label: 'expected' },
          { id: 'flags', label: 'flags' },
        ],
        sh.tubes.map((t) => {
          const o = byCode.get(t.code)!;
          return { code: t.code, cells: [t.code, t.sample, t.dose ? d(t.dose) : '—', expectedText(o), o.flags.length ? o.flags.join('; ') : '—'] };
        }),
      ),
      {
        kind: 'paragraph',
        muted: true,
        text: `Expected from the dose path (the state) and the analysis at each tube’s delivered dose (growth time, wavelength, period): ${Object.values(stateWords).join('; ')}. ${p.band ? bandSentence(sh.plan.boundary, p.band, d) : 'No band: the plan ran without Monte Carlo draws.'}${p.firstOnset && !p.threshold.anyDose ? ` First onset: ${p.firstOnset.state} from ${d(p.firstOnset.dose)}; the ${sh.plan.boundary} threshold is ${d(p.threshold)}.` : ''}`,
      },
    ],
  });
  sections.push({
    id: 'observations',
    title: 'Observations',
    blocks: [
      table(
        [
          { id: 'tube', label: 'tube' },
          { id: 'expected', label: 'expected' },
          { id: 'stateSeen', label: 'state seen', blank: true },
          { id: 'onsetTime', label: 'onset time', blank: true },
          { id: 'patternLength', label: 'pattern length', blank: true },
          { id: 'notes', label: 'notes', blank: true },
        ],
        sh.tubes.flatMap((t) => t.tubes.map((tube) => ({ code: tube, cells: [tube, byCode.get(t.code)!.state ?? 'not predicted', null, null, null, null] }))),
      ),
      { kind: 'paragraph', muted: true, text: 'State seen: stable, stationary, oscillatory or unclear; onset time and pattern length with their units. The JSON sheet carries the same blank fields per tube (observations), to be entered back.' },
    ],
  });

  sections.push({
    id: 'imaging',
    title: 'Imaging plan',
    blocks: [
      {
        kind: 'keyValue',
        rows: [
          { key: 'frame interval', value: a(sh.imaging.frameInterval) },
          { key: 'duration', value: a(sh.imaging.duration) },
          { key: 'fuel lasts about', value: a(sh.imaging.fuelLife) },
          { key: 'gas passes its solubility after', value: sh.imaging.gasSaturation ? `${sh.imaging.gasSaturation.chemical}: ${a(sh.imaging.gasSaturation.time)}` : '—' },
          { key: 'expected wavelength · chamber length', value: `${a(sh.imaging.wavelength)} · ${a(sh.imaging.chamberLength)}` },
          { key: 'suggested field of view', value: a(sh.imaging.fieldOfView) },
        ],
      },
      ...(sh.imaging.notes.length ? [{ kind: 'list' as const, items: sh.imaging.notes }] : []),
    ],
  });

  const g = sh.gas;
  const gasBlocks: Block[] = g.cautions.map((text, i) => ({ kind: 'caution' as const, title: i === 0 ? 'Gas' : 'Closed chamber', text }));
  if (g.perTube.length) {
    gasBlocks.push(
      table(
        [
          { id: 'tube', label: 'tubes' },
          { id: 'gas', label: 'gas' },
          { id: 'moles', label: 'up to', numeric: true },
          { id: 'volume', label: `volume at ${a(g.temperature)}`, numeric: true },
          { id: 'headspace', label: 'of the tube’s headspace', numeric: true },
          { id: 'chamber', label: 'of the chamber', numeric: true },
          { id: 'do', label: 'what to do' },
        ],
        gasRows(g.perTube),
      ),
    );
    gasBlocks.push({
      kind: 'paragraph',
      muted: true,
      text: `Upper bound: all the fuel in the tube turned over, no gas left dissolved; ideal gas at ${a(g.temperature)} and 1 atm (${a(g.molarVolume)}). Tube ${a(g.tubeVolume)} (its headspace is that less the sample); chamber ${g.chamberVolume ? `${a(g.chamberVolume)}${g.chamberVolumeFrom === 'chamber' ? ' (length² × depth of the plan’s chamber; give chamberVolume for your cell)' : ''}` : 'volume not known (give chamberVolume)'}, filled from the tube. Vent above ${Math.round(g.ventFraction * 100)} % of the headspace (common practice).`,
    });
  } else gasBlocks.push({ kind: 'paragraph', text: 'No tube holds a fuel together with something that turns it into a gas.' });
  sections.push({ id: 'gas', title: 'Gas', blocks: gasBlocks });

  if (sh.warnings.length) sections.push({ id: 'warnings', title: 'Practical warnings', blocks: [{ kind: 'list', items: sh.warnings.map((w) => `${w.code}: ${benchText(w.message, cand)}`) }] });
  sections.push({ id: 'hazards', title: 'Hazards and safe handling', blocks: [...sh.hazards.flatMap(hazardBlocks), { kind: 'heading', text: 'General cautions' }, { kind: 'list', items: sh.safety }] });
  sections.push({
    id: 'traceability',
    title: 'Traceability',
    blocks: [
      table(
        [
          { id: 'role', label: 'role' },
          { id: 'id', label: 'shelf item' },
          { id: 'revision', label: 'revision', numeric: true },
          { id: 'revisionId', label: 'revision id', numeric: true },
        ],
        sh.shelfRevisions.map((r) => ({ cells: [r.role, r.id, String(r.revision), String(r.revisionId)] })),
      ),
    ],
  });
  return sections;
}
