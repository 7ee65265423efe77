/**
 * The bench sheet of a stored plan and one candidate: stocks, dilutions,
 * master mix, the dose series and the controls with their volumes, an imaging
 * plan from the plan's numbers, the practical warnings, and the hazards of each
 * chemical as handled (stock bottle and working solution).
 *
 * The model built here is the JSON format; render.ts renders it as HTML and Markdown.
 * Every number carries its unit. Nothing depends on the clock but `printedAt`.
 */
import { z } from 'zod';
import type { AnalysisResult } from '../engine/analyze.js';
import { WATER_DENSITY_25C } from '../engine/constants.js';
import { DEFAULT_DOSE_FACTORS, doseSeries, withDose, type CandidateResult } from '../engine/planner.js';
import type { Mixture, Species } from '../engine/types.js';
import { idRecord, ownEntry, quantity } from '../schema/mixture.js';
import { numberDensity, type ChemicalRecord, type SpeciesRecord } from '../schema/shelf.js';
import { DomainError, InputError } from '../shelf/errors.js';
import { DIMENSIONS } from '../units/index.js';
import { VERSION } from '../version.js';
import { classify, type Classification, type HazardSet } from './hazards.js';
import { planPipetting, type Component, type SampleSpec } from './pipetting.js';

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
  stocks: idRecord(z.string(), stockSchema).optional(),
  operator: z.string().max(200).optional(),
});
export type SheetRequest = z.output<typeof sheetRequestSchema>;

export interface Amount {
  value: number;
  unit: string;
}

export interface HazardEntry {
  chemical: string;
  name: string;
  /**
   * classified false: the shelf holds no hazard data for this chemical, so nothing was classified (an empty
   * classification then means "not known", never "no hazard"; docs/model.md §11)
   */
  asHandled: { where: string; massFraction: number; classified: boolean; classification: Classification }[];
  /** false when the shelf holds no hazard data for the chemical (see asHandled) */
  classified: boolean;
  source: string | null;
  /** The shelf's record of these hazard data: its version, when and by whom it was entered (null: no hazard data) */
  version: number | null;
  recordedAt: string | null;
  recordedBy: string | null;
  incompatibilities: string | null;
  storage: string | null;
  disposal: string | null;
  handling: string | null;
  verify: string;
}

export interface Sheet {
  title: string;
  software: { name: 'brink'; version: string };
  printedAt: string;
  plan: { id: number; name: string; boundary: string; dosing: string; createdAt: string };
  candidate: { id: string; name: string };
  shelfRevisions: { role: string; id: string; revision: number; revisionId: number }[];
  prediction: {
    /** anyDose: every dose above 0 crosses (threshold 0⁺) */
    threshold: Amount & { volumeFraction: number; anyDose: boolean };
    /** Quantiles over every draw (a draw already past counts as dose 0); null = that quantile lies above the dose cap */
    band: { p05: Amount | null; median: Amount | null; p95: Amount | null; samples: number; seed: number; alreadyPast: number | null; feasibleFraction: number | null } | null;
    referenceDose: Amount;
    /** What the 1 × dose is: the band's median, the threshold, or (explicit doses, any dose crosses) the largest dose given */
    referenceFrom: 'median' | 'threshold' | 'largest-dose';
    /** How the series was made: dose factors × the reference (default or given), or the doses given */
    series: { from: 'default-factors' | 'dose-factors' | 'doses'; note: string };
    atMargin: { state: string; growthTime: Amount | null; wavelength: Amount | null; oscillationPeriod: Amount | null; gathers: string[]; pushedOut: string[] } | null;
  };
  options: { sampleVolume: Amount; replicates: number; minVolume: Amount; overage: number; buffer: string };
  stocks: { id: string; name: string; kind: 'species' | 'chemical'; concentration: Amount; described: string; source: 'shelf' | 'option' }[];
  dilutions: { name: string; concentration: Amount; volume: Amount; steps: { what: string; from: string; volume: Amount }[] }[];
  masterMix: { tubes: number; perTube: Amount; total: Amount; steps: { what: string; from: string; volume: Amount }[] } | null;
  samples: { name: string; role: 'series' | 'control'; dose: Amount | null; doseFactor: number | null; tubes: number; steps: { what: string; from: string; volume: Amount }[] }[];
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
  warnings: { code: string; message: string }[];
  hazards: HazardEntry[];
  safety: string[];
}

export interface SheetContext {
  plan: { id: number; name: string; createdAt: string; request: { boundary: string; dosing: string }; result: { candidates: CandidateResult[]; warnings?: { code: string; message: string }[] }; inputs: { base: Mixture; candidates: Species[] } };
  revisions: { role: string; id: string; revision: number; revisionId: number }[];
  speciesRecord: (id: string) => SpeciesRecord | null;
  chemicalRecord: (id: string) => ChemicalRecord | null;
  /** The current hazard data of a chemical as stored on the shelf, with its version */
  hazards: (id: string) => { set: HazardSet; version: number; createdAt: string; author: string } | null;
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
      return { molar: o.molarConcentration.value, massFraction: w, text: `${o.molarConcentration.value / 1000} mol/L`, source: 'option' };
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

const per = (x: number) => `${x === 0 ? 0 : (x * 1e-6).toPrecision(3)} particles/mL`;

/** One `dose-above-cap` warning for each dose of the series above the plan's dose cap (a relative 1e-9 for rounding). */
export function aboveCap(cand: CandidateResult, series: number[]): Sheet['warnings'] {
  const cap = cand.cap?.density;
  if (cap === undefined) return [];
  return series
    .filter((d) => d > cap * (1 + 1e-9))
    .map((x) => ({ code: 'dose-above-cap', message: `the dose ${per(x)} is above the plan's dose cap (${per(cap)}, limited by ${cand.cap.limitedBy}): the plan did not search there, so the prediction does not cover it.` }));
}

/**
 * The dose series of a sheet and its 1 × reference. Dose factors scale the
 * planner's reference (doseSeries: the band's median, else the threshold); the
 * `doses` option gives the doses themselves. A candidate that crosses at any
 * dose (threshold 0⁺) has no reference to scale by, so it needs `doses`; its
 * 1 × (the controls' dose) is then the largest dose given.
 */
export function chooseSeries(cand: CandidateResult, req: SheetRequest) {
  const seriesWarnings: Sheet['warnings'] = [];
  if (req.doses && req.doseFactors) throw new InputError([{ path: 'doses', message: 'give doses or doseFactors, not both' }]);
  const median = cand.band?.median ?? null;
  // what dose factors scale (doseSeries): the band's median when above zero, else the threshold
  const scaledFrom: 'median' | 'threshold' = median !== null && median > 0 ? 'median' : 'threshold';
  const scalable = scaledFrom === 'median' || cand.threshold!.density > 0;
  const scaledName = scaledFrom === 'median' ? 'median threshold of the Monte Carlo band' : 'threshold';
  if (!req.doses && !scalable) {
    const path = cand.dosePath?.length ? `; dose path: ${cand.dosePath.map((iv) => `${iv.state} over (${per(iv.from)}, ${per(iv.to)}]`).join(', ')}` : '';
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
    const note = `${req.doseFactors ? 'the dose factors given' : `the default factors ${DEFAULT_DOSE_FACTORS.join(', ')}`} × the ${scaledName} (${per(reference)})${!req.doseFactors && cand.band ? ", plus the band's 5 % and 95 % doses" : ''}`;
    // factors × the reference (2 × the median, or the 95 % dose) can pass the cap as much as doses given can
    seriesWarnings.push(...aboveCap(cand, doses));
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
  seriesWarnings.push(...aboveCap(cand, series));
  const note = `the doses given; 1 × (the dose of the no-fuel and dopant-alone controls) is ${referenceFrom === 'largest-dose' ? 'the largest of them, since any dose crosses and there is no threshold to scale by' : `the ${scaledName}`} (${per(ref)})`;
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

/** Build the sheet model. @throws InputError, DomainError (what is impossible and what would fix it) */
export function buildSheet(ctx: SheetContext, req: SheetRequest): Sheet {
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
    sampleVolume: req.sampleVolume?.value ?? 100 * UL,
    replicates: req.replicates,
    minVolume: req.minVolume?.value ?? 1 * UL,
    overage: req.overage,
    buffer: req.buffer,
  };

  // Reference dose and the series (engine/planner.ts: factors × median, plus the band's ends), or the doses given.
  const { ref, series, referenceFrom, seriesInfo, seriesWarnings } = chooseSeries(cand, req);

  // Stocks.
  const stocks: Sheet['stocks'] = [];
  const components: Component[] = [];
  const spIds = [...base.species.map((x) => x.id), dopant.id];
  for (const id of spIds) {
    const rec = ctx.speciesRecord(id);
    if (!rec) throw new DomainError('missing-revision', `species "${id}" of the plan is not on the shelf`);
    const st = speciesStock(rec, ownEntry(req.stocks, id));
    if (!st) throw new InputError([{ path: `stocks.${id}`, message: `no usable stock for "${id}" on the shelf: give one (e.g. { "massConcentration": "10 mg/mL" })` }]);
    components.push({ id, label: rec.name, stock: st.density, stockText: st.text, per: 'particles' });
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
    components.push({ id: ch.id, label: rec.name, stock: st.molar, stockText: st.text, per: 'mol' });
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
  const dosing = plan.request.dosing === 'replace' ? 'replace' : 'add';
  const dosed = (x: number) => new Map(withDose(base, dopant, x, dosing).species.map((sp) => [sp.id, sp.density] as const));
  const withFuel = (m: Map<string, number>) => new Map([...m, ...fuelConc]);
  const replace = dosing === 'replace';
  const specs: SampleSpec[] = series.map((x) => ({
    name: x === 0 ? 'dose 0 (control: no dopant)' : `dose ${(x / ref).toPrecision(3)} ×`,
    role: x === 0 ? 'control' : 'series',
    dose: x,
    conc: withFuel(dosed(x)),
    usesMasterMix: !replace,
  }));
  specs.push({ name: 'control: no fuel (dopant at 1 ×)', role: 'control', dose: ref, conc: dosed(ref), usesMasterMix: !replace });
  specs.push({ name: 'control: dopant alone (1 ×, with fuel)', role: 'control', dose: ref, conc: withFuel(new Map([[dopant.id, ref]])), usesMasterMix: false });

  const pip = planPipetting(components, specs, o, base.species.map((x) => x.id), dopant.id, fuelIds);
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
  if (!m) notes.push(`no analysis at a margin dose (${cand.anyDose ? 'any dose crosses, so there is none' : 'none in this plan'}): the frame interval (${frame} s) and duration (${duration} s) are defaults, not predictions; set them from a trial run`);
  if (m && tau) {
    frame = niceFloor(tau / 10);
    duration = 5 * tau;
    // an absent fuel (lifetime 0) is not a time to image for: the analysis' own warnings say it is missing
    const present = m.checks.fuel.filter((f) => !f.absent);
    fuelLife = present.length > 0 ? Math.min(...present.map((f) => f.lifetime)) : null;
    notes.push(`frame interval at most a tenth of the ${m.growthTime ? 'growth' : 'decay'} time (${s(tau).value} s at the ${atWhich} dose)`);
    if (fuelLife !== null && fuelLife < duration) {
      warnings.push({ code: 'imaging-capped-by-fuel', message: `five growth times (${s(duration).value} s) outlast the fuel (about ${s(fuelLife).value} s): the imaging stops when the fuel runs out; refuel or use more fuel if the pattern needs longer.` });
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
    notes.push(`${name} is made at ${mM(firstGas.rate).value} mM/s (stoichiometric yields counted) at the ${atWhich} dose and passes its solubility (${mM(firstGas.solubility).value} mM) after about ${s(firstGas.time).value} s`);
    if (firstGas.time < duration && !m!.warnings.some((w) => w.code === 'gas-exceeds-solubility' && w.chemical === firstGas.chemical)) {
      warnings.push({ code: 'gas-during-imaging', message: `${name} passes its solubility after about ${s(firstGas.time).value} s, within the ${s(duration).value} s of imaging: bubbles may form; vent the chamber or image for less time.` });
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
  warnings.splice(0, warnings.length, ...sheetWarnings(gathered, sheetSpecies, sheetChemicals));

  // Hazards as handled: the stock bottle and the working solution.
  const hazards: HazardEntry[] = [];
  for (const id of fuelIds) {
    const rec = ctx.chemicalRecord(id)!;
    const stored = ctx.hazards(id);
    const set = stored?.set ?? null;
    const M = rec.molarMass?.si ?? null;
    const wStock = stockFractions.get(id) ?? null;
    const cWork = fuelConc.get(id)!;
    const wWork = M ? (cWork * M) / WATER_DENSITY_25C : null;
    const asHandled: HazardEntry['asHandled'] = [];
    const classified = set !== null;
    if (wStock !== null) asHandled.push({ where: `stock bottle (${(wStock * 100).toPrecision(3)} % w/w)`, massFraction: wStock, classified, classification: classify(set, wStock) });
    if (wWork !== null) asHandled.push({ where: `working solution in the sample (${(wWork * 100).toPrecision(3)} % w/w, ${mM(cWork).value} mM)`, massFraction: wWork, classified, classification: classify(set, wWork) });
    hazards.push({
      chemical: id,
      name: rec.name,
      asHandled,
      classified,
      source: set?.source ?? null,
      version: stored?.version ?? null,
      recordedAt: stored?.createdAt ?? null,
      recordedBy: stored?.author ?? null,
      incompatibilities: set?.incompatibilities ?? null,
      storage: set?.storage ?? null,
      disposal: set?.disposal ?? null,
      handling: set?.handling ?? null,
      verify: stored
        ? `Hazard data: version ${stored.version} of the shelf's record for ${rec.name} (entered ${stored.createdAt.slice(0, 10)} by ${stored.author}). Check them against your supplier's safety data sheet for the product you use; where they differ, the safety data sheet takes precedence.`
        : "No hazard data on the shelf for this chemical: read your supplier's safety data sheet before handling it; it takes precedence over this sheet.",
    });
  }
  const catalytic = [...base.species, dopant].some((x) => x.couplings.some((c) => (c.activity?.kind === 'constant' && c.activity.rate < 0) || c.activity?.kind === 'saturating'));
  const gas = base.chemicals.some((c) => c.solubility !== null);
  const safety = [
    'Wear eye protection and gloves (nitrile) and a lab coat for every step; handle concentrated stocks in a fume hood if the safety data sheet asks for it.',
    ...(catalytic || gas ? ['Catalytic particles and enzymes decompose the fuel and can evolve gas: never seal a vial, tube or chamber that holds catalyst and fuel unless it is built to take the pressure; keep stock vials vented.'] : []),
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
  };

  return {
    title: `Bench sheet — plan ${plan.id}: ${plan.name}`,
    software: { name: 'brink', version: VERSION },
    printedAt: ctx.printedAt,
    plan: { id: plan.id, name: plan.name, boundary: plan.request.boundary, dosing: plan.request.dosing, createdAt: plan.createdAt },
    candidate: { id: chosen, name: ctx.speciesRecord(chosen)?.name ?? chosen },
    shelfRevisions: ctx.revisions,
    prediction,
    options: { sampleVolume: ul(o.sampleVolume), replicates: o.replicates, minVolume: ul(o.minVolume), overage: o.overage, buffer: o.buffer },
    stocks,
    dilutions: pip.dilutions.map((d) => ({
      name: d.name,
      concentration: components.find((c) => c.id === d.component)!.per === 'mol' ? mM(d.concentration) : perMl(d.concentration),
      volume: ul(d.volume),
      steps: d.steps.map(tr),
    })),
    masterMix: pip.masterMix ? { tubes: pip.masterMix.tubes, perTube: ul(pip.masterMix.perTube), total: ul(pip.masterMix.total), steps: pip.masterMix.steps.map(tr) } : null,
    samples: pip.samples.map((x) => ({ name: x.name, role: x.role, dose: x.dose === null ? null : perMl(x.dose), doseFactor: x.dose === null ? null : Number((x.dose / ref).toPrecision(4)), tubes: x.tubes, steps: x.steps.map(tr) })),
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
      notes,
    },
    warnings,
    hazards,
    safety,
  };
}

