/**
 * Bench sheets and hazard data:
 *
 *   GET  /api/plans/:id/sheet?candidate=&format=html|md|json&paper=A4|Letter&sampleVolume=&replicates=&minVolume=&overage=&buffer=&doses=
 *        (doses: comma-separated dopant doses, e.g. doses=0,1e6 1/mL,1e7 1/mL)
 *   POST /api/plans/:id/sheet?format=…&paper=…      the same with all options (stocks, dose factors, doses) in the body
 *   GET  /api/chemicals/:id/hazards                  current hazard data and their versions
 *   PUT  /api/chemicals/:id/hazards                  a new version { baseVersion, hazards, author?, note? }
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { hazardSetSchema } from '../../protocol/hazards.js';
import { splitDoses } from '../../protocol/sheet.js';
import { keySchema } from '../../schema/shelf.js';

const params = z.object({ id: z.coerce.number().int().min(1) });
const format = z.strictObject({ format: z.enum(['html', 'md', 'json']).default('html'), paper: z.enum(['A4', 'Letter']).default('A4') });
const TYPES = { html: 'text/html; charset=utf-8', md: 'text/markdown; charset=utf-8', json: 'application/json; charset=utf-8' } as const;

export const protocolRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  app.get('/api/plans/:id/sheet', {
    schema: {
      tags: ['bench sheet'],
      summary: 'The bench sheet of a plan for one candidate (default: the top-ranked feasible one)',
      params,
      querystring: format.extend({
        candidate: z.string().optional(),
        sampleVolume: z.string().optional(),
        replicates: z.coerce.number().int().optional(),
        minVolume: z.string().optional(),
        overage: z.coerce.number().optional(),
        buffer: z.string().optional(),
        doses: z.string().max(2000).optional().describe('comma-separated dopant doses, e.g. "0,1e6 1/mL,1e7 1/mL" (at most 24); needed when any dose crosses'),
      }),
    },
    handler: async (req, reply) => {
      const { format: f, paper, doses, ...opts } = req.query;
      const clean: Record<string, unknown> = Object.fromEntries(Object.entries(opts).filter(([, v]) => v !== undefined));
      if (doses !== undefined) clean.doses = splitDoses(doses);
      const sheet = app.sheets.build(req.params.id, clean);
      return reply.type(TYPES[f]).send(app.sheets.render(sheet, f, paper));
    },
  });
  app.post('/api/plans/:id/sheet', {
    schema: { tags: ['bench sheet'], summary: 'The bench sheet with every option (stocks, dose factors, doses …) in the body', params, querystring: format, body: z.unknown() },
    handler: async (req, reply) => {
      const sheet = app.sheets.build(req.params.id, req.body ?? {});
      return reply.type(TYPES[req.query.format]).send(app.sheets.render(sheet, req.query.format, req.query.paper));
    },
  });
  app.get('/api/chemicals/:id/hazards', {
    schema: { tags: ['shelf'], summary: "A chemical's hazard bands (current) and their version history", params: z.object({ id: keySchema }) },
    handler: async (req) => {
      app.shelf.repo.mustGet('chemical', req.params.id);
      return { chemical: req.params.id, current: app.hazards.current(req.params.id), history: app.hazards.history(req.params.id).map((h) => ({ version: h.version, author: h.author, note: h.note, createdAt: h.createdAt })) };
    },
  });
  app.put('/api/chemicals/:id/hazards', {
    schema: {
      tags: ['shelf'],
      summary: "Replace a chemical's hazard data: a new version, refused with 409 if baseVersion is not the current one (0 for the first)",
      params: z.object({ id: keySchema }),
      body: z.strictObject({ baseVersion: z.number().int().min(0), hazards: hazardSetSchema, author: z.string().min(1).max(200).optional(), note: z.string().max(2000).optional() }),
    },
    handler: async (req) => {
      app.shelf.repo.mustGet('chemical', req.params.id);
      return app.hazards.write(req.params.id, req.body.baseVersion, req.body.hazards, { author: req.body.author, note: req.body.note ?? null });
    },
  });
};
