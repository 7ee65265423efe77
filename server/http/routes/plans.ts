/**
 * Stored plans:
 *
 *   POST  /api/plans              run and store a screening request (at most PLAN_SEARCH_LIMIT dose searches)
 *   GET   /api/plans              list (newest first)
 *   GET   /api/plans/:id          the stored request, inputs, revisions and results
 *   PATCH /api/plans/:id          rename / annotate { name?, notes? }
 *   POST  /api/plans/:id/rerun    the same request on the current shelf: a new plan
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { PLAN_SEARCH_LIMIT, planRequestSchema } from '../../shelf/plans.js';

const params = z.object({ id: z.coerce.number().int().min(1) });

export const planRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const tags = ['planner'];
  app.post('/api/plans', {
    schema: {
      tags,
      summary: 'Screen candidate dopants against a base mixture from the shelf, and store the plan',
      description: `Every candidate gets its threshold (with the Monte Carlo band's alreadyPast, feasibleFraction and quantiles over all draws), dosePath, firstOnset and warnings (messages give doses per mL; the numbers stay SI); result.warnings carries a no-concentration warning for every chemical given no level (taken as 0). candidates "all" takes every active species not in the base; a plan may run at most ${PLAN_SEARCH_LIMIT} dose searches (candidates × (1 + draws)) and is refused with a 400 above that.`,
      body: planRequestSchema,
    },
    // keep the request as sent (units as typed) for reruns; validation then reads the units
    preValidation: (req, _reply, done) => {
      (req as unknown as { sent: unknown }).sent = JSON.parse(JSON.stringify(req.body ?? null));
      done();
    },
    handler: async (req, reply) => {
      const plan = app.plans.create((req as unknown as { sent: unknown }).sent);
      reply.code(201).header('location', `/api/plans/${plan.id}`);
      return plan;
    },
  });
  app.get('/api/plans', {
    schema: {
      tags,
      summary: 'Stored plans, newest first',
      querystring: z.strictObject({ limit: z.coerce.number().int().min(1).max(200).default(50), offset: z.coerce.number().int().min(0).default(0) }),
    },
    handler: async (req) => ({ ...app.plans.list(req.query.limit, req.query.offset), limit: req.query.limit, offset: req.query.offset }),
  });
  app.get('/api/plans/:id', { schema: { tags, summary: 'A stored plan with the numbers it was computed with', params }, handler: async (req) => app.plans.get(req.params.id) });
  app.patch('/api/plans/:id', {
    schema: { tags, summary: 'Rename a plan or change its notes (results never change)', params, body: z.strictObject({ name: z.string().min(1).max(200).optional(), notes: z.string().max(5000).optional() }) },
    handler: async (req) => {
      const cur = app.plans.get(req.params.id);
      return app.plans.rename(req.params.id, req.body.name ?? cur.name, req.body.notes ?? cur.notes);
    },
  });
  app.post('/api/plans/:id/rerun', {
    schema: { tags, summary: 'Run the same request on the current shelf: a new plan that points back to this one', params },
    handler: async (req, reply) => {
      const plan = app.plans.rerun(req.params.id);
      reply.code(201).header('location', `/api/plans/${plan.id}`);
      return plan;
    },
  });
};
