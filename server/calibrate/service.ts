/**
 * Measurements on the shelf: store raw data with its fit, and apply a fit to a
 * species as a new revision whose changed values carry provenance pointing to
 * the measurement.
 *
 * An applied value is written as a person would type it: in the unit the
 * species already used for that field (else the unit of the data, else SI),
 * rounded to the precision its standard error supports — the standard error
 * to two significant digits and the value to the same decimal place (common
 * practice, e.g. the GUM's guidance on reporting; from memory), or four
 * significant digits when there is no standard error.
 */
import type { FitResult } from '../engine/fit/models.js';
import type { SpeciesRecord, StoredQuantity } from '../schema/shelf.js';
import { toTypedRecord } from '../schema/shelf.js';
import { DomainError, InputError } from '../shelf/errors.js';
import { parseRecord, type ShelfService } from '../shelf/service.js';
import type { MeasurementsRepository } from '../store/measurements.js';
import { dimensionOfUnit, formatDimension, fromSI } from '../units/index.js';
import { parseFitOptions, runFit, type FitMethod, type FitOptions } from './run.js';

export interface ApplyRequest {
  baseRevision: number;
  /** msd: which diffusivity goes on the shelf (default the thermal one) */
  use?: 'diffusivity' | 'effectiveDiffusivity';
  /** kinetics and drift: the chemical of the coupling to set */
  chemical?: string;
  /** kinetics: the product of the saturating turnover (default: keep the coupling's) */
  product?: string | null;
  author?: string;
}

type Typed = Record<string, unknown> & { couplings?: Record<string, unknown>[] };

/**
 * x rounded to the decimal place 10^e as plain text that keeps its significant trailing zeros
 * (−2.00e-16, 0.010, 41.30) and that the unit parser reads back: fixed notation for
 * 10⁻⁵ ≤ |x| < 10⁶ with e ≤ 0, exponential notation otherwise (x.toExponential keeps the zeros;
 * fixed notation of a value rounded to tens or more would show insignificant zeros as digits).
 */
export function roundedText(x: number, e: number): string {
  const mag = x === 0 ? e : Math.floor(Math.log10(Math.abs(x)));
  const digits = mag - e + 1;
  if (digits < 1) return '0';
  if (e <= 0 && -e <= 20 && (x === 0 || (Math.abs(x) >= 1e-5 && Math.abs(x) < 1e6))) {
    // rounding may carry into a new leading digit (9.96 → 10.0): toFixed already gives the right place
    return x.toFixed(-e);
  }
  // exponential: the digit count from the place before rounding, so a carry keeps the place
  // (9.96e-16 to place 1e-17 → 9.96e-16; 9.996e-16 to place 1e-17 → 1.00e-15)
  return x.toExponential(Math.min(digits - 1, 100)).replace('e+', 'e');
}

/**
 * A fitted value and its standard error (SI) as text in `unit`: the sd to two
 * significant digits, the value to the same decimal place (at least two
 * significant digits); four significant digits without an sd. Trailing zeros
 * that are significant are kept (−2.00e-16 ± 4.0e-18, 0.010).
 */
export function formatMeasured(valueSI: number, sdSI: number | null, unit: string): { value: string; sd?: string } {
  const v = fromSI(valueSI, unit);
  if (sdSI === null || !(sdSI > 0)) {
    const e = v === 0 ? -3 : Math.floor(Math.log10(Math.abs(Number(v.toPrecision(4))))) - 3;
    return { value: `${roundedText(v, e)} ${unit}` };
  }
  const s = Number(fromSI(sdSI, unit).toPrecision(2));
  const e = Math.floor(Math.log10(s)) - 1;
  const ev = v === 0 ? e : Math.min(e, Math.floor(Math.log10(Math.abs(v))) - 1);
  return { value: `${roundedText(v, ev)} ${unit}`, sd: `${roundedText(s, e)} ${unit}` };
}

/** The first unit of `candidates` with the dimension of `siUnit` (a stored field's own unit may be null or odd). */
function chooseUnit(siUnit: string, candidates: (string | null | undefined)[]): string {
  const want = formatDimension(dimensionOfUnit(siUnit));
  for (const u of candidates) {
    if (!u) continue;
    try {
      if (formatDimension(dimensionOfUnit(u)) === want) return u;
    } catch {
      // not a unit the reader knows: try the next
    }
  }
  return siUnit;
}

function storedUnit(x: unknown): string | null {
  return x !== null && typeof x === 'object' && 'si' in x && 'unit' in x ? ((x as StoredQuantity).unit ?? null) : null;
}

export function calibrationService(shelf: ShelfService, repo: MeasurementsRepository) {
  return {
    record(speciesKey: string, body: { method: FitMethod; data: unknown; options?: unknown; fileName?: string; author?: string; note?: string }) {
      const sp = shelf.repo.mustGet<SpeciesRecord>('species', speciesKey);
      const options = parseFitOptions(body.method, body.options);
      if (body.method === 'msd') {
        const o = options as FitOptions['msd'];
        if (o.rotationFromSpeciesRadius) {
          if (o.radius) throw new InputError([{ path: 'options.radius', message: 'give a radius or rotationFromSpeciesRadius, not both' }]);
          o.radius = { value: sp.record.radius.si, sd: sp.record.radius.sd, unit: 'm' };
        }
      }
      const fit = runFit(body.method, body.data, options);
      return repo.create({
        species: speciesKey,
        method: body.method,
        options: body.options ?? {},
        data: body.data,
        fileName: body.fileName ?? null,
        fit,
        author: body.author ?? 'anonymous',
        note: body.note ?? null,
      });
    },

    /** `note`: words added to the revision's note (who the client said the author was, when a token names another) */
    apply(measurementId: number, req: ApplyRequest, note: string | null = null) {
      const m = repo.get(measurementId);
      const fit = m.fit as FitResult;
      const cur = shelf.repo.mustGet<SpeciesRecord>('species', m.species);
      const typed = toTypedRecord(cur.record) as Typed;
      const author = req.author ?? 'anonymous';
      // An MSD curve fit's standard errors understate the uncertainty (no covariance between lags,
      // run.ts): the value may go on the shelf, but its provenance and the revision's note say so,
      // since the shelf's sd feeds the planner's Monte Carlo.
      const sdCaveat =
        (fit as { standardErrorsHonest?: boolean }).standardErrorsHonest === false
          ? '; its sd is the standard error of a curve fit without the covariance between lags and understates the uncertainty (fit tracked positions for an honest one)'
          : '';
      const provenance = {
        source: 'measured' as const,
        reference: `measurement ${m.id}: ${m.method} fit (${fit.model}) of ${m.fileName ?? 'pasted data'}${sdCaveat}`,
        date: m.createdAt.slice(0, 10),
        by: m.author,
        measurement: m.id,
      };
      const inputUnits = ((fit as { input?: { columns?: { unit: string | null }[] } }).input?.columns ?? []).map((c) => c.unit);
      const tracks = (fit as { tracks?: unknown }).tracks !== undefined;
      /** the unit the data were given in, for a parameter of this method */
      const dataUnit = (name: string): string | null => {
        const [a, b, c] = inputUnits;
        if (m.method === 'msd' && name.toLowerCase().includes('diffusivity')) {
          if (tracks) return b && c ? `${c}^2/${b}` : null;
          return a && b ? `${b}/${a}` : null;
        }
        if (m.method === 'kinetics' && name === 'michaelis') return a ?? null;
        return null;
      };
      const value = (name: string, existing: unknown) => {
        const p = fit.parameters[name];
        if (!p) throw new DomainError('parameter-missing', `measurement ${m.id} has no fitted ${name}`);
        if (/as in the file/.test(p.unit)) {
          throw new DomainError('units-unknown', `the ${name} of measurement ${m.id} is in the file's own units (${p.unit}); refit with units in the header to put it on the shelf`);
        }
        if (p.atBound) {
          throw new DomainError('at-bound', `the ${name} of measurement ${m.id} ended on its ${p.atBound} bound (${p.value} ${p.unit}): the data do not determine it, so it cannot go on the shelf`);
        }
        const unit = chooseUnit(p.unit, [storedUnit(existing), dataUnit(name)]);
        const text = formatMeasured(p.value, p.sd, unit);
        return { value: text.value, ...(text.sd ? { sd: text.sd } : {}), provenance };
      };
      const curCouplings = (cur.record as { couplings?: { chemical: string; activity?: Record<string, unknown>; mobility?: unknown }[] }).couplings ?? [];
      const curCoupling = (chemical: string | undefined) => curCouplings.find((x) => x.chemical === chemical);
      const coupling = (chemical: string | undefined): Record<string, unknown> => {
        if (!chemical) throw new InputError([{ path: 'chemical', message: `a ${m.method} fit sets a coupling: name its chemical` }]);
        typed.couplings = typed.couplings ?? [];
        let c = typed.couplings.find((x) => x.chemical === chemical);
        if (!c) {
          c = { chemical };
          typed.couplings.push(c);
        }
        return c;
      };
      const fields: string[] = [];
      if (m.method === 'msd') {
        const which = req.use ?? 'diffusivity';
        typed.diffusivity = value(which, (cur.record as { diffusivity?: unknown }).diffusivity);
        fields.push(`diffusivity (${which})`);
      } else if (m.method === 'kinetics') {
        const c = coupling(req.chemical);
        if (!fit.parameters.maxRatePerParticle) {
          throw new DomainError('needs-particle-density', `measurement ${m.id} has no per-particle turnover: refit with the particle density or enzyme concentration of the assay`);
        }
        const old = c.activity as { product?: string | null; productYield?: number } | undefined;
        const product = req.product !== undefined ? req.product : old && typeof old === 'object' && 'product' in old ? old.product ?? null : null;
        // The fit measures turnover and Michaelis constant only: a stored stoichiometric yield is kept (when the product is).
        const productYield = old && typeof old === 'object' && typeof old.productYield === 'number' && product !== null ? old.productYield : undefined;
        const oldActivity = curCoupling(req.chemical)?.activity;
        c.activity = {
          maxRate: value('maxRatePerParticle', oldActivity?.maxRate),
          michaelis: value('michaelis', oldActivity?.michaelis),
          product,
          ...(productYield !== undefined ? { productYield } : {}),
        };
        fields.push(`couplings[${req.chemical}].activity`);
      } else {
        const c = coupling(req.chemical);
        c.mobility = value('mobility', curCoupling(req.chemical)?.mobility);
        fields.push(`couplings[${req.chemical}].mobility`);
      }
      const record = parseRecord('species', typed, ['record']);
      // the revision and the record of where it came from, together or not at all
      return shelf.repo.transaction(() => {
        const rev = shelf.edit('species', m.species, req.baseRevision, record, { author, note: `applied measurement ${m.id} (${m.method})${sdCaveat}${note ? `; ${note}` : ''}` });
        repo.recordApplication(m.id, rev.revisionId, fields);
        return rev;
      });
    },

    forSpecies: (key: string) => {
      shelf.repo.mustGet('species', key);
      return repo.forSpecies(key);
    },
    get: (id: number) => repo.get(id),
  };
}
export type CalibrationService = ReturnType<typeof calibrationService>;
