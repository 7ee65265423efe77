/**
 * Stored plans:
 *
 *   POST  /api/plans              start a screening request as a job (202; the job stores the plan when done)
 *   GET   /api/plans              list (newest first)
 *   GET   /api/plans/:id          the stored request, inputs, revisions and results; name, notes, their revision and history
 *   PATCH /api/plans/:id          rename / annotate { baseRevision, name?, notes?, author?, note? }: a new revision
 *                                 of the name and notes, 409 stale-revision when baseRevision is not the current
 *   POST  /api/plans/:id/rerun    the same request on the current shelf as a job: a new plan   {}
 *   POST  /api/plans/:id/candidates/:species/spectrum
 *                                 growth rate against wavenumber of the plan's base with that candidate at a dose
 *                                 (the margin dose unless `dose` is given), on the plan's stored SI inputs  { dose?, points? }
 *
 * Validation, unknown ids and the work budget (server/jobs/budget.ts) answer 400 / 404 before a
 * job starts; the job (GET /api/jobs/:id) then carries the plan's id, or the error it ended with.
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import { withDose, type Dosing } from '../../engine/planner.js';
import type { Mixture, Species } from '../../engine/types.js';
import { WORK_BUDGET } from '../../jobs/budget.js';
import type { Job } from '../../jobs/registry.js';
import { quantity } from '../../schema/mixture.js';
import { keySchema } from '../../schema/shelf.js';
import { NotFoundError } from '../../store/shelf.js';
import { DomainError } from '../../shelf/errors.js';
import { planRequestSchema, type PlanResult } from '../../shelf/plans.js';
import { DIMENSIONS } from '../../units/index.js';
import { authorship } from '../access.js';

const params = z.object({ id: z.coerce.number().int().min(1) });

/** 202 with the job, and where to follow it. */
function accepted(reply: { code: (n: number) => { header: (k: string, v: string) => unknown } }, job: Job) {
  reply.code(202).header('location', `/api/jobs/${job.id}`);
  return job;
}

export const planRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  const tags = ['planner'];
  app.post('/api/plans', {
    schema: {
      tags,
      summary: 'Start a job that screens candidate dopants against a base mixture from the shelf and stores the plan',
      description: `Answers 202 with the job (header location: /api/jobs/:id); when the job is done its result is { planId } (GET /api/plans/:planId). Every candidate gets its threshold (with the Monte Carlo band's alreadyPast, feasibleFraction and quantiles over all draws), dosePath, firstOnset and warnings (messages give doses per mL; the numbers stay SI); result.warnings carries a no-concentration warning for every chemical given no level (taken as 0). candidates "all" takes every active species not in the base. A plan's work, candidates × (1 + draws + fuel-sweep levels) × the modes the base's own scan evaluates, may be at most ${WORK_BUDGET.toExponential(2)}: above that, a 400 before any job. timeLimit (at most the service's own, 10 min by default) stops the job as timed-out.`,
      body: planRequestSchema,
    },
    // keep the request as sent (units as typed) for reruns; validation then reads the units
    preValidation: (req, _reply, done) => {
      (req as unknown as { sent: unknown }).sent = JSON.parse(JSON.stringify(req.body ?? null));
      done();
    },
    handler: async (req, reply) => accepted(reply, app.plans.start((req as unknown as { sent: unknown }).sent, req.accessHolder)),
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
    schema: {
      tags,
      summary: 'Rename a plan or change its notes: a new revision of them (results never change), refused with 409 if baseRevision is not the current one',
      description:
        "The plan's GET shows `revision` (of its name and notes) and `history` (every name and notes it has had, oldest first). Send that revision as baseRevision; an absent name or notes is kept. When someone else changed them first, the answer is 409 stale-revision with `current` (their revision, name, notes, author). Sending what is already there writes nothing.",
      params,
      body: z.strictObject({
        baseRevision: z.number().int().min(1),
        name: z.string().min(1).max(200).optional(),
        notes: z.string().max(5000).optional(),
        author: z.string().min(1).max(200).optional(),
        note: z.string().max(2000).optional().describe('what the change is about, kept with the revision (at most 2,000 characters)'),
      }),
    },
    handler: async (req) => {
      // with a token its holder is the author; an author given becomes the revision's note
      const by = authorship(req, { author: req.body.author, note: req.body.note });
      return app.plans.rename(req.params.id, req.body.baseRevision, { name: req.body.name, notes: req.body.notes }, by.author, by.note);
    },
  });
  app.post('/api/plans/:id/rerun', {
    schema: {
      tags,
      summary: 'Start a job that runs the same request on the current shelf: a new plan that points back to this one',
      description: 'Send `{}` with content-type application/json (or a bearer token): a body-less POST is refused, since a page of another site could send one.',
      params,
      body: z.strictObject({}).nullish(),
    },
    handler: async (req, reply) => accepted(reply, app.plans.rerun(req.params.id, req.accessHolder)),
  });
  app.post('/api/plans/:id/candidates/:species/spectrum', {
    schema: {
      tags,
      summary: "Growth rate against wavenumber (the dispersion relation) of a plan's base with one candidate at a dose, with the chamber's allowed modes and the fastest one",
      description:
        "Computed on the plan's stored SI inputs (its base mixture and the candidate as the plan had them, the plan's dosing), so it matches the plan whatever the shelf holds now. `dose` (number density) defaults to the candidate's margin dose — the dose its growth time and wavelength were reported at — and must not exceed its dose cap. Answers { dose, doseIs: 'margin' | 'given', dosing, curve: [{ wavenumber (1/m), growthRate, stationary, oscillatory, frequency (1/s) }], modes: the allowed modes (sealed k = nπ/L, periodic k = 2πn/L; empty when unbounded) each with its index, modesInRange, range, fastest, state }. A finite chamber's curve between its modes is a guide to the eye.",
      params: z.object({ id: z.coerce.number().int().min(1), species: keySchema }),
      body: z
        .strictObject({
          dose: quantity(DIMENSIONS.numberDensity, 'positive', 'the dopant dose (default: the margin dose of the plan)').optional(),
          points: z.number().int().min(20).max(400).optional().describe('points of the continuous curve (20 to 400, default 160)'),
        })
        .nullish(),
    },
    handler: async (req) => {
      const plan = app.plans.get(req.params.id) as { inputs: { base: Mixture; candidates: Species[] }; result: PlanResult; request: { dosing?: Dosing; margin?: number } };
      const d = plan.inputs.candidates.find((c) => c.id === req.params.species);
      const c = plan.result.candidates.find((x) => x.species === req.params.species);
      if (!d || !c) throw new NotFoundError(`plan ${req.params.id} has no candidate "${req.params.species}"`);
      const dosing: Dosing = plan.request.dosing ?? 'add';
      let dose: number;
      let doseIs: 'margin' | 'given';
      if (req.body?.dose) {
        dose = req.body.dose.value;
        doseIs = 'given';
        if (dose > c.cap.density * (1 + 1e-9)) throw new DomainError('dose-above-cap', `the dose ${(dose * 1e-6).toPrecision(3)} per mL is above the candidate's dose cap of ${(c.cap.density * 1e-6).toPrecision(3)} per mL`);
      } else {
        // the margin dose as the screen took it (engine/planner.ts screen): margin × threshold, within a window and the cap
        if (!c.feasible || !c.threshold || c.anyDose || !(c.threshold.density > 0))
          throw new DomainError('no-margin-dose', `"${c.species}" has no margin dose in this plan (${c.feasible ? 'any dose crosses' : 'it does not cross the boundary below its cap'}): give a dose`);
        const x = c.threshold.density;
        dose = Math.min(x * (plan.request.margin ?? 1.25), c.window ? Math.sqrt(x * c.window.upTo) : Infinity, c.cap.density);
        doseIs = 'margin';
      }
      const mixture = withDose(plan.inputs.base, d, dose, dosing);
      const out = await app.compute('dispersion', { mixture, options: req.body?.points ? { points: req.body.points } : {} });
      return { plan: req.params.id, candidate: d.id, dose, doseIs, dosing, ...out };
    },
  });
};
