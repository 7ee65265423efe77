/**
 * Calibration:
 *
 *   POST /api/fits/msd | /kinetics | /drift     fit raw data, store nothing     { data, options? }
 *   POST /api/fits/quantal                      quantal dose–response (dose [unit], tubes, responded)   { data, options?: { link, scale } }
 *   POST /api/fits/stokes-einstein              D, D_r, τ_r from radius and temperature
 *   POST /api/species/:id/measurements          store raw data with its fit     { method, data, options?, fileName?, author?, note? }
 *   GET  /api/species/:id/measurements          a species' measurements
 *   GET  /api/measurements/:id                  one measurement, with the revisions it was applied to
 *   POST /api/measurements/:id/apply            write a new species revision from the fit
 *
 * `data` is CSV text (a header row with units in brackets) or a JSON table
 * `{ "lag [s]": [...], "msd [um^2]": [...] }`. For msd it may instead hold
 * tracked positions (`track, t [s], x [um], y [um]`, optional `z [um]`; a
 * first column named track, or `options.tracks: true`): the MSD and its
 * covariance between lags come from the tracks and the fit is generalised
 * least squares (`weighting: "gls-covariance"`, `covarianceSource`, `tracks`);
 * `options.maxLag`, `options.lags`, `options.weighting: "unweighted"` tune it.
 * Every fit says how it stopped (`stop`, `converged`) and flags a parameter on
 * a bound (`atBound`, `sd: null`); at most 500 000 data rows.
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { parseQuantalOptions } from '../../calibrate/quantal.js';
import { FIT_METHODS, parseFitOptions, type FitMethod } from '../../calibrate/run.js';
import { stokesEinstein, stokesEinsteinDebye, waterViscosity } from '../../engine/transport.js';
import { idRecord, quantity } from '../../schema/mixture.js';
import { LIMITS } from '../../schema/limits.js';
import { keySchema } from '../../schema/shelf.js';
import { DIMENSIONS } from '../../units/index.js';
import { authorship } from '../access.js';
import { present } from './shelf-items.js';

const data = z
  .union([z.string().max(LIMITS.csv), idRecord(z.string().max(LIMITS.name), z.array(z.unknown()).max(LIMITS.rows), LIMITS.columns)])
  .describe(`CSV text with a header row (units in brackets; at most ${LIMITS.csv.toLocaleString('en')} characters), or a JSON table of columns (at most ${LIMITS.columns} columns of at most ${LIMITS.rows.toLocaleString('en')} values)`);

export const calibrateRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const tags = ['calibrate'];

  for (const method of FIT_METHODS) {
    app.post(`/api/fits/${method}`, {
      schema: { tags, summary: `Fit ${method} data (nothing is stored)`, body: z.strictObject({ data, options: z.unknown().optional() }) },
      // the options are read here (a 400 at once); the fit runs in the worker pool, within the request time limit
      handler: async (req) => app.compute('fit', { method, data: req.body.data, options: parseFitOptions(method, req.body.options) }),
    });
  }

  app.post('/api/fits/quantal', {
    schema: {
      tags,
      summary: 'Quantal dose–response by maximum likelihood (columns dose [unit], tubes, responded; options.link logit|probit|cloglog, options.scale log10|linear); nothing is stored',
      body: z.strictObject({ data, options: z.unknown().optional() }),
    },
    handler: async (req) => app.compute('quantal', { data: req.body.data, options: parseQuantalOptions(req.body.options) }),
  });

  app.post('/api/fits/stokes-einstein', {
    schema: {
      tags,
      summary: 'Stokes–Einstein D = kT/(6πηa) and Stokes–Einstein–Debye D_r = kT/(8πηa³) in water (or a given viscosity)',
      body: z.strictObject({
        radius: quantity(DIMENSIONS.length, 'positive', 'hydrodynamic radius'),
        temperature: quantity(DIMENSIONS.temperature, 'positive', 'temperature (default 25 °C)').optional(),
        viscosity: quantity(DIMENSIONS.viscosity, 'positive', 'solvent viscosity (default water at the temperature)').optional(),
      }),
    },
    handler: async (req) => {
      const T = req.body.temperature?.value ?? 298.15;
      const eta = req.body.viscosity?.value ?? waterViscosity(T);
      const a = req.body.radius.value;
      const Dr = stokesEinsteinDebye(a, T, eta);
      return {
        parameters: {
          diffusivity: { value: stokesEinstein(a, T, eta), sd: 0, unit: 'm^2/s' },
          rotationalDiffusivity: { value: Dr, sd: 0, unit: '1/s' },
          rotationTime: { value: 1 / Dr, sd: 0, unit: 's' },
          viscosity: { value: eta, sd: 0, unit: 'Pa*s' },
        },
        temperature: T,
        viscositySource: req.body.viscosity ? 'given' : 'water, IAPWS 2008 values as tabulated in the CRC Handbook (interpolated)',
      };
    },
  });

  app.post('/api/species/:id/measurements', {
    schema: {
      tags,
      summary: 'Store raw data for a species with its fit',
      params: z.object({ id: keySchema }),
      body: z.strictObject({
        method: z.enum(FIT_METHODS as [FitMethod, ...FitMethod[]]),
        data,
        options: z.unknown().optional(),
        fileName: z.string().max(300).optional(),
        author: z.string().min(1).max(200).optional(),
        note: z.string().max(2000).optional(),
      }),
    },
    handler: async (req, reply) => {
      const by = authorship(req, req.body);
      const m = app.calibration.record(req.params.id, { ...req.body, author: by.author, note: by.note ?? undefined });
      reply.code(201).header('location', `/api/measurements/${m.id}`);
      return m;
    },
  });

  app.get('/api/species/:id/measurements', {
    schema: { tags, summary: "A species' stored measurements", params: z.object({ id: keySchema }) },
    handler: async (req) => ({ species: req.params.id, measurements: app.calibration.forSpecies(req.params.id) }),
  });

  app.get('/api/measurements/:id', {
    schema: { tags, summary: 'One measurement: raw data, fit, and the revisions it was applied to', params: z.object({ id: z.coerce.number().int().min(1) }) },
    handler: async (req) => app.calibration.get(req.params.id),
  });

  app.post('/api/measurements/:id/apply', {
    schema: {
      tags,
      summary: "Apply a measurement's fit: a new species revision whose provenance points to the measurement",
      params: z.object({ id: z.coerce.number().int().min(1) }),
      body: z.strictObject({
        baseRevision: z.number().int().min(1),
        use: z.enum(['diffusivity', 'effectiveDiffusivity']).optional(),
        chemical: keySchema.optional(),
        product: keySchema.nullable().optional(),
        author: z.string().min(1).max(200).optional(),
      }),
    },
    handler: async (req) => {
      const by = authorship(req, { author: req.body.author });
      return present(app.calibration.apply(req.params.id, { ...req.body, author: by.author }, by.note));
    },
  });
};
