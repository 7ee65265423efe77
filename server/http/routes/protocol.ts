/**
 * Bench sheets (the hazard data routes are in routes/hazards.ts):
 *
 *   GET  /api/plans/:id/sheet?candidate=&format=html|md|json&paper=A4|Letter&sampleVolume=&replicates=&minVolume=&overage=&buffer=&doses=
 *        &operator=&tubeVolume=&chamberVolume=&closedChamber=   (doses: comma-separated dopant doses, e.g. doses=0,1e6 1/mL,1e7 1/mL)
 *   POST /api/plans/:id/sheet?format=…&paper=…      the same with all options (stocks, dose factors, doses) in the body
 *
 * A plan that does not fit (impossible volumes, a candidate that does not cross) answers 422 in every format (200 with
 * notFitStatus=200, which the Sheet page asks for: the explanation is what it shows, not a failed request), and the
 * body is the explanation in that format (HTML page, Markdown, or JSON with `fits: false`, `reasons`, `options`
 * and the error fields `error: "domain"`, `code`, `message`), so the Planner page's link shows it as a page.
 */
import type { FastifyPluginAsync, FastifyReply } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { SheetFormat } from '../../protocol/service.js';
import { SheetNotFitError, splitDoses } from '../../protocol/sheet.js';
import { LIMITS } from '../../schema/limits.js';

const params = z.object({ id: z.coerce.number().int().min(1) });
const format = z.strictObject({
  format: z.enum(['html', 'md', 'json']).default('html'),
  paper: z.enum(['A4', 'Letter']).default('A4'),
  notFitStatus: z
    .enum(['422', '200'])
    .default('422')
    .describe('the status of the explanation of a plan that does not fit (default 422); 200 for a page that shows it and its fixes as an ordinary answer (its body says fits: false either way)'),
});
const TYPES = { html: 'text/html; charset=utf-8', md: 'text/markdown; charset=utf-8', json: 'application/json; charset=utf-8' } as const;

export const protocolRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  /** The sheet in its format, or (422) the explanation of a plan that does not fit, in the same format. */
  const send = (reply: FastifyReply, id: number, options: unknown, f: SheetFormat, paper: 'A4' | 'Letter', notFitStatus: '422' | '200' = '422') => {
    try {
      return reply.type(TYPES[f]).send(app.sheets.render(app.sheets.build(id, options), f, paper));
    } catch (e) {
      if (!(e instanceof SheetNotFitError)) throw e;
      const body = f === 'json' ? JSON.stringify({ error: 'domain', ...e.sheet, message: e.message }, null, 2) + '\n' : app.sheets.render(e.sheet, f, paper);
      return reply.code(Number(notFitStatus)).type(TYPES[f]).send(body);
    }
  };
  app.get('/api/plans/:id/sheet', {
    schema: {
      tags: ['bench sheet'],
      summary: 'The bench sheet of a plan for one candidate (default: the top-ranked feasible one)',
      params,
      querystring: format.extend({
        candidate: z.string().max(LIMITS.id).optional(),
        sampleVolume: z.string().max(LIMITS.quantity).optional(),
        replicates: z.coerce.number().int().optional(),
        minVolume: z.string().max(LIMITS.quantity).optional(),
        overage: z.coerce.number().optional(),
        buffer: z.string().max(LIMITS.query).optional(),
        doses: z.string().max(2000).optional().describe('comma-separated dopant doses, e.g. "0,1e6 1/mL,1e7 1/mL" (at most 24); needed when any dose crosses'),
        operator: z.string().max(LIMITS.query).optional(),
        tubeVolume: z.string().max(LIMITS.quantity).optional(),
        chamberVolume: z.string().max(LIMITS.quantity).optional(),
        closedChamber: z.enum(['true', 'false']).optional(),
      }),
    },
    handler: async (req, reply) => {
      const { format: f, paper, notFitStatus, doses, closedChamber, ...opts } = req.query;
      const clean: Record<string, unknown> = Object.fromEntries(Object.entries(opts).filter(([, v]) => v !== undefined));
      if (doses !== undefined) clean.doses = splitDoses(doses);
      if (closedChamber !== undefined) clean.closedChamber = closedChamber === 'true';
      return send(reply, req.params.id, clean, f, paper, notFitStatus);
    },
  });
  app.post('/api/plans/:id/sheet', {
    schema: { tags: ['bench sheet'], summary: 'The bench sheet with every option (stocks, dose factors, doses …) in the body', params, querystring: format, body: z.unknown() },
    handler: async (req, reply) => send(reply, req.params.id, req.body ?? {}, req.query.format, req.query.paper, req.query.notFitStatus),
  });
};
