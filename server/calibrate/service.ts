/**
 * Measurements on the shelf: store raw data with its fit, and apply a fit to a
 * species as a new revision whose changed values carry provenance pointing to
 * the measurement.
 */
import type { FitResult } from '../engine/fit/models.js';
import type { SpeciesRecord } from '../schema/shelf.js';
import { toTypedRecord } from '../schema/shelf.js';
import { DomainError, InputError } from '../shelf/errors.js';
import { parseRecord, type ShelfService } from '../shelf/service.js';
import type { MeasurementsRepository } from '../store/measurements.js';
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

    apply(measurementId: number, req: ApplyRequest) {
      const m = repo.get(measurementId);
      const fit = m.fit as FitResult;
      const cur = shelf.repo.mustGet<SpeciesRecord>('species', m.species);
      const typed = toTypedRecord(cur.record) as Typed;
      const author = req.author ?? 'anonymous';
      const provenance = {
        source: 'measured' as const,
        reference: `measurement ${m.id}: ${m.method} fit (${fit.model}) of ${m.fileName ?? 'pasted data'}`,
        date: m.createdAt.slice(0, 10),
        by: m.author,
        measurement: m.id,
      };
      const value = (name: string) => {
        const p = fit.parameters[name];
        if (!p) throw new DomainError('parameter-missing', `measurement ${m.id} has no fitted ${name}`);
        if (/as in the file/.test(p.unit)) {
          throw new DomainError('units-unknown', `the ${name} of measurement ${m.id} is in the file's own units (${p.unit}); refit with units in the header to put it on the shelf`);
        }
        return { value: `${p.value} ${p.unit}`, sd: `${p.sd} ${p.unit}`, provenance };
      };
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
        typed.diffusivity = value(which);
        fields.push(`diffusivity (${which})`);
      } else if (m.method === 'kinetics') {
        const c = coupling(req.chemical);
        if (!fit.parameters.maxRatePerParticle) {
          throw new DomainError('needs-particle-density', `measurement ${m.id} has no per-particle turnover: refit with the particle density or enzyme concentration of the assay`);
        }
        const old = c.activity as { product?: string | null } | undefined;
        const product = req.product !== undefined ? req.product : old && typeof old === 'object' && 'product' in old ? old.product ?? null : null;
        c.activity = { maxRate: value('maxRatePerParticle'), michaelis: value('michaelis'), product };
        fields.push(`couplings[${req.chemical}].activity`);
      } else {
        const c = coupling(req.chemical);
        c.mobility = value('mobility');
        fields.push(`couplings[${req.chemical}].mobility`);
      }
      const record = parseRecord('species', typed, ['record']);
      const rev = shelf.edit('species', m.species, req.baseRevision, record, { author, note: `applied measurement ${m.id} (${m.method})` });
      repo.recordApplication(m.id, rev.revisionId, fields);
      return rev;
    },

    forSpecies: (key: string) => {
      shelf.repo.mustGet('species', key);
      return repo.forSpecies(key);
    },
    get: (id: number) => repo.get(id),
  };
}
export type CalibrationService = ReturnType<typeof calibrationService>;
