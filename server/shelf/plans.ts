/**
 * Plans: a screening request against the shelf, run by the engine's planner
 * and stored with the exact revisions and SI inputs it used, so that its
 * numbers can be read back unchanged after the shelf moves on.
 */
import { z } from 'zod';
import { issueList, quantity } from '../schema/mixture.js';
import { keySchema } from '../schema/shelf.js';
import type { PlansRepository } from '../store/plans.js';
import { DIMENSIONS } from '../units/index.js';
import { LIMITS } from '../schema/limits.js';
import { baseModes, checkWorkBudget, WORK_BUDGET } from '../jobs/budget.js';
import type { WorkerPool } from '../jobs/pool.js';
import type { Job, JobRegistry } from '../jobs/registry.js';
import { DomainError, InputError } from './errors.js';
import type { PlanResult } from './run-plan.js';
import { shelfSampleSchema, type ShelfService } from './service.js';

// runPlan (the computation, no database) lives in run-plan.ts so that a worker thread loads it without the schema layer
export { runPlan, type PlanProgress, type PlanResult } from './run-plan.js';

const dose = (desc: string) => quantity(DIMENSIONS.numberDensity, 'positive', desc);

/**
 * The plan's own dose series for one candidate: what its bench sheet prints when no doses or doseFactors are
 * given (server/protocol/sheet.ts chooseSeries). POST /api/plans/:id/next stores the designed doses here, with
 * `from` naming the plan, the outcome set and the design that chose them (docs/model.md §13).
 */
export const planSeriesSchema = z.strictObject({
  candidate: keySchema.describe('the candidate the doses are of'),
  doses: z.array(quantity(DIMENSIONS.numberDensity, 'positive', 'a dopant dose of the series (the sheet adds dose 0, the no-dopant control)')).min(1).max(24),
  from: z
    .strictObject({
      plan: z.number().int().min(1).describe('the plan whose outcomes the doses were designed from'),
      outcomeSet: z.number().int().min(1),
      outcomeRevision: z.number().int().min(1),
      criterion: z.string().min(1).max(200),
      /** expected 95 %/5 % ratio of the threshold band after the round: the designed doses and the default fixed series (null: not finite) */
      expectedBandFactor: z.strictObject({ designed: z.number().positive().max(1e12).nullable(), fixed: z.number().positive().max(1e12).nullable() }),
      /** how many doses the default fixed series had (what the designed doses were compared with) */
      fixedDoses: z.number().int().min(0).max(24).nullable(),
      /** the threshold band (m⁻³) of the update the doses were designed from (the joint posterior); null ends lie above the cap */
      posteriorBand: z.strictObject({ p05: z.number().min(0).max(1e40).nullable(), median: z.number().min(0).max(1e40).nullable(), p95: z.number().min(0).max(1e40).nullable() }).optional(),
    })
    .optional()
    .describe('where the doses came from: set by POST /api/plans/:id/next'),
});
export type PlanSeries = z.output<typeof planSeriesSchema>;

export const planRequestSchema = z.strictObject({
  name: z.string().min(1).max(200).optional(),
  notes: z.string().max(5000).optional(),
  author: z.string().min(1).max(200).optional(),
  base: shelfSampleSchema.shape.species,
  chemicals: shelfSampleSchema.shape.chemicals,
  chamber: shelfSampleSchema.shape.chamber,
  crowding: shelfSampleSchema.shape.crowding,
  conditions: shelfSampleSchema.shape.conditions,
  boundary: z.enum(['stationary', 'oscillatory', 'any', 'restore']),
  dosing: z.enum(['add', 'replace']).default('add'),
  candidates: z
    .union([z.literal('all'), z.array(keySchema).min(1).max(LIMITS.candidates)])
    .default('all')
    .describe(`"all": every active shelf species not in the base, however many (never cut); or a list of at most ${LIMITS.candidates} ids. A plan's work, candidates × (1 + Monte Carlo draws + fuel-sweep levels) × the modes the base's own scan evaluates, is at most ${WORK_BUDGET.toExponential(2)}; above that it is refused with a 400 naming the numbers.`),
  maxVolumeFraction: z.number().gt(0).max(0.74).optional(),
  maxDensity: dose('largest dopant number density allowed').optional(),
  margin: z.number().min(1).max(100).default(1.25),
  uncertainty: z.strictObject({ samples: z.number().int().min(0).max(2000), seed: z.number().int().min(0).max(4294967295) }).optional(),
  probabilityAt: z.array(dose('a dose at which to report the probability of crossing')).max(20).optional(),
  stateMap: z
    .strictObject({
      candidate: keySchema.optional(),
      baseSpecies: keySchema.optional(),
      baseRange: z.tuple([z.number().positive(), z.number().positive()]).optional(),
      doseRange: z.tuple([dose('lowest dose'), dose('highest dose')]).optional(),
      baseSteps: z.number().int().min(3).max(80).optional(),
      doseSteps: z.number().int().min(3).max(80).optional(),
    })
    .optional(),
  timeLimit: quantity(DIMENSIONS.time, 'positive', "stop the job after it has computed this long (state 'timed-out'); at most the service's own limit").optional(),
  fuelSweep: z
    .strictObject({
      chemical: keySchema,
      range: z.tuple([quantity(DIMENSIONS.concentration, 'nonnegative', 'lowest level'), quantity(DIMENSIONS.concentration, 'positive', 'highest level')]),
      steps: z.number().int().min(2).max(60).optional(),
      scale: z.enum(['log', 'linear']).optional(),
    })
    .optional(),
  series: planSeriesSchema.optional().describe("the bench sheet's default dose series of one candidate (the designed doses of a next plan)"),
});
export type PlanRequest = z.output<typeof planRequestSchema>;
/** The request as sent (before units were read), stored for reruns. */
export type PlanRequestInput = z.input<typeof planRequestSchema>;


/**
 * Stored plans. `start` and `rerun` check the request, the shelf ids and the work budget here,
 * in the request (a 400 or 404 before any job), build the SI mixture from the shelf, then start
 * a job: the planner runs in a worker thread (`pool.run('plan', …)`) and the plan is stored here,
 * in the main thread, when it is done; the job's result is `{ planId }`.
 */
export function planService(shelf: ShelfService, plans: PlansRepository, work: { pool: WorkerPool; jobs: JobRegistry }) {
  // holder: the holder of the request's access token (the author then; a different author in a new request goes into the notes)
  function prepare(raw: PlanRequestInput, rerunOf: number | null, holder: string | null) {
    const parsed = planRequestSchema.safeParse(raw);
    // validated before it was stored; a request stored before a bound was set may no longer pass it
    if (!parsed.success) throw new DomainError('request-out-of-bounds', `the stored request no longer validates (${issueList(parsed.error).slice(0, 5).map((p) => (p.path ? `${p.path}: ${p.message}` : p.message)).join('; ')}): start a new plan within the limits`);
    const req = parsed.data;
    let ids: string[];
    if (req.candidates === 'all') {
      // every active species not in the base, page by page: never a silent cut
      const inBase = new Set(req.base.map((b) => b.id));
      ids = [];
      for (let offset = 0; ; offset += 500) {
        const page = shelf.repo.list('species', { includeRetired: false, limit: 500, offset });
        ids.push(...page.items.map((r) => r.id).filter((id) => !inBase.has(id)));
        if (page.items.length < 500 || offset + 500 >= page.total) break;
      }
    } else ids = req.candidates;
    if (req.series && !ids.includes(req.series.candidate)) throw new InputError([{ path: 'series.candidate', message: `"${req.series.candidate}" is not a candidate of this plan` }]);
    if (req.series?.from) plans.get(req.series.from.plan); // a plan the series names must exist (404 otherwise)
    const built = shelf.buildMixture({ species: req.base, chemicals: req.chemicals, chamber: req.chamber, crowding: req.crowding, conditions: req.conditions }, ids);
    checkWorkBudget({ candidates: ids.length, samples: req.uncertainty?.samples ?? 0, sweepLevels: req.fuelSweep ? (req.fuelSweep.steps ?? 12) : 0, modes: baseModes(built.mixture), allOfShelf: req.candidates === 'all' });
    const name = req.name ?? `${req.boundary} screen of ${req.base.map((b) => b.id).join(' + ')}`;
    const store = (run: PlanResult) => {
      // what the shelf had to note (a retired species) belongs to the answer: the plan's warnings carry it, first
      const result: PlanResult = { ...run, warnings: [...built.warnings, ...run.warnings] };
      const revisions = [
        ...built.revisions.species.map((r) => ({ revisionId: r.revisionId, role: 'base' as const })),
        ...built.revisions.candidates.map((r) => ({ revisionId: r.revisionId, role: 'candidate' as const })),
        ...built.revisions.chemicals.map((r) => ({ revisionId: r.revisionId, role: 'chemical' as const })),
      ];
      return plans.create({
        name,
        notes: holder !== null && rerunOf === null && req.author !== undefined && req.author !== holder ? [req.notes ?? '', `author given: ${req.author}`].filter(Boolean).join('\n') : (req.notes ?? ''),
        author: holder ?? req.author ?? 'anonymous',
        request: raw,
        inputs: { base: built.mixture, candidates: built.candidates, warnings: built.warnings, shelfRevisions: built.revisions },
        result,
        rerunOf,
        revisions,
      });
    };
    return { req, name, input: { base: built.mixture, candidates: built.candidates, req }, store };
  }
  function start(raw: PlanRequestInput, rerunOf: number | null, holder: string | null): Job<{ planId: number }> {
    const p = prepare(raw, rerunOf, holder);
    const from = p.req.series?.from;
    return work.jobs.start<{ planId: number }>(
      'plan',
      async (ctx) => {
        const run = await work.pool.run('plan', p.input, ctx.runOptions);
        ctx.signal.throwIfAborted(); // cancelled while the answer was on its way: store nothing
        return { planId: p.store(run).id };
      },
      { label: rerunOf === null ? p.name : from && from.plan === rerunOf ? `${p.name} (next round after plan ${rerunOf}: designed doses of ${p.req.series!.candidate})` : `${p.name} (rerun of plan ${rerunOf})`, ...(p.req.timeLimit ? { timeLimit: p.req.timeLimit.value } : {}) },
    );
  }
  return {
    /** Validate, check the budget and start the plan as a job; `raw` is the request as sent. */
    start(raw: unknown, holder: string | null = null) {
      const parsed = planRequestSchema.safeParse(raw);
      if (!parsed.success) throw new InputError(issueList(parsed.error));
      return start(raw as PlanRequestInput, null, holder);
    },
    /**
     * A job computing a new plan from the same request on the current shelf; `series` (the next round's designed
     * doses, outcomes/update.ts startNext) replaces the request's own series in the new plan's request.
     */
    rerun(id: number, holder: string | null = null, series?: PlanRequestInput['series']) {
      const old = plans.get(id);
      const request = old.request as PlanRequestInput;
      return start(series ? { ...request, series } : request, id, holder);
    },
    get: (id: number) => plans.get(id),
    list: (limit: number, offset: number) => plans.list(limit, offset),
    /** A new revision of the plan's name and notes on top of `baseRevision` (409 when it is not the current one). */
    rename: (id: number, baseRevision: number, change: { name?: string; notes?: string }, author?: string, note: string | null = null) => plans.rename(id, baseRevision, change, author, note),
  };
}
export type PlanService = ReturnType<typeof planService>;
