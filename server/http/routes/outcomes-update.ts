/**
 * The model update and the next experiment of a stored plan (docs/model.md §13):
 *
 *   POST /api/plans/:id/update          a job: the posterior over the coefficients from the plan's current outcomes (202)
 *   POST /api/plans/:id/update/apply    write a finished update's revisions to the shelf { job, author? }
 *   POST /api/plans/:id/next            a job: the next round's doses, and a new plan from the same request carrying them as its series (202)
 *
 * The outcomes are read through the service's injected reader (server/outcomes/update.ts ReadOutcomes).
 */
import type { FastifyPluginAsync } from 'fastify';
import { authorship } from '../access.js';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { Job } from '../../jobs/registry.js';
import { designRequestSchema, updateRequestSchema, type OutcomeUpdateService } from '../../outcomes/update.js';

const params = z.object({ id: z.coerce.number().int().min(1) });

function accepted(reply: { code: (n: number) => { header: (k: string, v: string) => unknown } }, job: Job) {
  reply.code(202).header('location', `/api/jobs/${job.id}`);
  return job;
}

export const outcomeUpdateRoutes: FastifyPluginAsync<{ service: OutcomeUpdateService }> = async (base, opts) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const tags = ['planner'];
  const svc = opts.service;
  app.post('/api/plans/:id/update', {
    schema: {
      tags,
      summary: "Start a job that updates the shelf's coefficients from the plan's recorded outcomes (no write until applied)",
      description:
        "Answers 202 with the job; its result holds the method (importance sampling over the plan's Monte Carlo draws, or sequential Monte Carlo when their effective sample size is below minEss) with the ESS, the posterior mean and sd of every uncertain coefficient (SI), the threshold band (5/50/95 %) of every candidate before and after, and the consistency check: when the outcomes are improbable under every draw it says that the model or the shelf is wrong.",
      params,
      body: updateRequestSchema.nullish(),
    },
    handler: async (req, reply) => accepted(reply, svc.startUpdate(req.params.id, req.body ?? {})),
  });
  app.post('/api/plans/:id/update/apply', {
    schema: {
      tags,
      summary: "Write a finished update's coefficients as new shelf revisions whose provenance names the plan and its outcome set",
      description: 'Refused when the job is not a finished update of this plan, when the outcomes changed since (rerun the update), or when the consistency check failed.',
      params,
      body: z.strictObject({ job: z.string().min(1).max(100), author: z.string().min(1).max(200).optional() }),
    },
    handler: async (req, reply) => {
      reply.code(201);
      // with a bearer token its holder is the author; an author given becomes part of the note
      const by = authorship(req, { author: req.body.author });
      return svc.apply(req.params.id, { job: req.body.job, ...(by.author !== undefined ? { author: by.author } : {}), note: by.note });
    },
  });
  app.post('/api/plans/:id/next', {
    schema: {
      tags,
      summary: 'Start a job that designs the next round of doses and computes a new plan from the same request on the current shelf',
      description:
        'The doses minimise the expected posterior variance of log10 of the threshold (preposterior simulation over the current posterior draws) on a dose grid set by minDoseRatio (or grid), minDose and maxDose; the result compares the expected band width with the default fixed series. Then a new plan is computed from the same request on the current shelf (after an applied update, on the updated coefficients; result.shelf says whether the shelf moved on), pointing back to this one (rerunOf), with the designed doses stored in its request as `series` (with where they came from): its bench sheet prints them by default. The job ends when that plan is stored (result.nextPlanId; result.nextPlanJob is the plan job). Outcomes the consistency check rejects end the job failed (422, code inconsistent-outcomes) and no plan is made.',
      params,
      body: designRequestSchema.nullish(),
    },
    handler: async (req, reply) => accepted(reply, svc.startNext(req.params.id, req.body ?? {}, req.accessHolder)),
  });
};
