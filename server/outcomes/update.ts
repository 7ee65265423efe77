/**
 * The model update and the next experiment as a service (docs/model.md §13): a stored plan and the
 * outcomes recorded for its sheet become the inputs of the 'update' and 'design' jobs (worker threads,
 * server/outcomes/run-update.ts); an update, once computed, is applied as new species and chemical
 * revisions whose provenance names the plan and the outcome set (id and revision).
 *
 * The outcomes are read through an injected function (`ReadOutcomes`) whose shape is the outcome
 * storage's: per tube, its code, kind, delivered dose (m⁻³, null when unknown), state seen, onset
 * time (s) and pattern length (m). What a plan's request gave as the sample's amounts (a base species'
 * density, a chemical's concentration) is the sample's, not the shelf's: it is reported, never written.
 */
import { z } from 'zod';
import type { DesignResult } from '../engine/design.js';
import type { DoseOptions } from '../engine/planner.js';
import type { Mixture, Species } from '../engine/types.js';
import type { CoefficientUpdate, Tube, UpdateResult } from '../engine/update.js';
import { formatMeasured } from '../calibrate/service.js';
import type { WorkerPool } from '../jobs/pool.js';
import type { Job, JobRegistry } from '../jobs/registry.js';
import { quantity, issueList } from '../schema/mixture.js';
import { keySchema, toTypedRecord, type ChemicalRecord, type SpeciesRecord, type StoredQuantity } from '../schema/shelf.js';
import { DomainError, InputError } from '../shelf/errors.js';
import { planRequestSchema, type PlanRequestInput } from '../shelf/plans.js';
import { parseRecord, type ShelfService } from '../shelf/service.js';
import type { PlanRow } from '../store/plans.js';
import { StaleRevisionError } from '../store/shelf.js';
import { DIMENSIONS, dimensionOfUnit, formatDimension } from '../units/index.js';
import type { DesignInput, UpdateInput } from './run-update.js';

/** One tube's outcome, as the outcome storage gives it. */
export interface OutcomeTube {
  tube: string;
  kind: string;
  /** delivered dopant dose, m⁻³; null when unknown */
  dose: number | null;
  state: 'stable' | 'stationary' | 'oscillatory' | 'unclear';
  /** s */
  onsetTime: number | null;
  /** m */
  patternLength: number | null;
}

/** The current outcome set of a plan's sheet (for one candidate). */
export interface OutcomeSet {
  id: number;
  revision: number;
  candidate: string;
  tubes: OutcomeTube[];
}

/** Reads a plan's current outcomes (the coordinator wires it to the outcome storage); null when none recorded. */
export type ReadOutcomes = (planId: number, candidate?: string) => OutcomeSet | null;

export const updateRequestSchema = z.strictObject({
  candidate: keySchema.optional().describe('the candidate whose tubes were observed (default: the outcome set’s)'),
  misclassification: z.number().gt(0).lt(0.5).default(0.05).describe('ε, the chance the bench records another state than the one the tube is in'),
  onsetSd: z.number().positive().max(5).default(0.5).describe('σ of ln(onset time)'),
  lengthSd: z.number().positive().max(5).default(0.25).describe('σ of ln(pattern length)'),
  onsetEFolds: z.number().positive().max(50).default(1).describe('the onset is read as this many growth times'),
  unexplainedFraction: z.number().gt(0).lt(1).default(0.1).describe('η, the share of onset and length readings the model need not explain (a flat part of their density over four decades)'),
  minEss: z.number().positive().max(4000).optional().describe('importance sampling while its effective sample size is at least this (default max(50, draws/5)); else sequential Monte Carlo'),
  samples: z.number().int().min(10).max(4000).optional().describe('prior draws when the plan has no Monte Carlo uncertainty (default 500)'),
  seed: z.number().int().min(0).max(4294967295).optional(),
  alpha: z.number().gt(0).lt(0.5).default(0.01).describe('level of the consistency checks'),
});
export type UpdateRequest = z.output<typeof updateRequestSchema>;

const dose = (d: string) => quantity(DIMENSIONS.numberDensity, 'nonnegative', d);
export const designRequestSchema = updateRequestSchema.extend({
  tubes: z.number().int().min(1).max(24).optional().describe('doses of the next round (default: as many as the default fixed series has above 0; its sheet adds dose 0, the no-dopant control)'),
  minDoseRatio: z.number().gt(1).max(10).optional().describe('smallest ratio between two doses the bench can make apart (default 1.1)'),
  grid: z.array(dose('a dose the bench can make')).min(1).max(400).optional(),
  minDose: dose('lowest dose (e.g. the smallest pipetting volume × the stock)').optional(),
  maxDose: dose('dose cap').optional(),
  simulations: z.number().int().min(20).max(2000).optional(),
}).superRefine((b, ctx) => {
  if (b.minDose && b.maxDose && b.minDose.value >= b.maxDose.value) ctx.addIssue({ code: 'custom', path: ['minDose'], message: 'must be below maxDose' });
});
export type DesignRequest = z.output<typeof designRequestSchema>;

/**
 * The tube kinds that are the plan's mixture at a dose (the sheet's sample kinds, protocol/pipetting.ts
 * SampleKind): the series and the no-dopant control (dose 0). A no-fuel or dopant-alone control is another
 * mixture; its outcome is reported as ignored.
 */
export const MODELLED_KINDS = new Set(['series', 'no-dopant']);

interface PlanInputs {
  base: Mixture;
  candidates: Species[];
}

/** The engine inputs of an update from a stored plan and its outcome set (no database here). */
export function updateInput(plan: PlanRow, outcomes: OutcomeSet, req: UpdateRequest): { input: UpdateInput; ignored: { tube: string; reason: string }[]; priorFrom: 'plan' | 'request' } {
  const parsed = planRequestSchema.safeParse(plan.request);
  if (!parsed.success) throw new Error(`stored request of plan ${plan.id} no longer validates`);
  const pr = parsed.data;
  const inputs = plan.inputs as PlanInputs;
  const observed = req.candidate ?? outcomes.candidate;
  if (!inputs.candidates.some((c) => c.id === observed)) throw new InputError([{ path: 'candidate', message: `"${observed}" is not a candidate of plan ${plan.id}` }]);
  const ignored: { tube: string; reason: string }[] = [];
  const tubes: Tube[] = [];
  for (const t of outcomes.tubes) {
    if (!MODELLED_KINDS.has(t.kind)) {
      ignored.push({ tube: t.tube, reason: `a ${t.kind} tube is another mixture than the plan's base with the dopant at a dose: not modelled` });
      continue;
    }
    if (t.dose === null) {
      ignored.push({ tube: t.tube, reason: 'no delivered dose' });
      continue;
    }
    tubes.push({ tube: t.tube, dose: t.dose, state: t.state, onsetTime: t.onsetTime, patternLength: t.patternLength });
  }
  if (tubes.length === 0) throw new DomainError('no-outcomes', `the outcomes of plan ${plan.id} have no tube with a delivered dose: nothing to learn from`);
  const dose: DoseOptions = {
    boundary: pr.boundary,
    dosing: pr.dosing,
    ...(pr.maxVolumeFraction !== undefined ? { maxVolumeFraction: pr.maxVolumeFraction } : {}),
    ...(pr.maxDensity !== undefined ? { maxDensity: pr.maxDensity.value } : {}),
  };
  const fromPlan = pr.uncertainty && pr.uncertainty.samples >= 10;
  const samples = fromPlan ? pr.uncertainty!.samples : (req.samples ?? 500);
  const seed = fromPlan ? pr.uncertainty!.seed : (req.seed ?? 1);
  return {
    input: {
      base: inputs.base,
      candidates: inputs.candidates,
      observed,
      dose,
      tubes,
      options: {
        samples,
        seed,
        misclassification: req.misclassification,
        onsetSd: req.onsetSd,
        lengthSd: req.lengthSd,
        onsetEFolds: req.onsetEFolds,
        unexplainedFraction: req.unexplainedFraction,
        alpha: req.alpha,
        ...(req.minEss !== undefined ? { minEss: req.minEss } : {}),
      },
    },
    ignored,
    priorFrom: fromPlan ? 'plan' : 'request',
  };
}

/** The design's engine inputs: the update's, with the sheet's constraints in SI. */
export function designInput(plan: PlanRow, outcomes: OutcomeSet, req: DesignRequest): ReturnType<typeof updateInput> & { input: DesignInput } {
  const u = updateInput(plan, outcomes, req);
  return {
    ...u,
    input: {
      ...u.input,
      design: {
        ...(req.tubes !== undefined ? { tubes: req.tubes } : {}),
        ...(req.minDoseRatio !== undefined ? { minDoseRatio: req.minDoseRatio } : {}),
        ...(req.grid ? { grid: req.grid.map((q) => q.value) } : {}),
        ...(req.minDose ? { minDose: req.minDose.value } : {}),
        ...(req.maxDose ? { maxDose: req.maxDose.value } : {}),
        ...(req.simulations ? { simulations: req.simulations } : {}),
      },
    },
  };
}

// ---------------------------------------------------------------- applying an update

/** Shelf fields an update may write (the sample's amounts, a species' density and a chemical's concentration, are not the shelf's). */
/** The SI unit of each shelf field an update writes (the engine's numbers are in these). */
export const SI_UNIT: Record<string, string> = { diffusivity: 'm^2/s', lossRate: '1/s', solubility: 'mol/m^3', radius: 'm', materialDensity: 'kg/m^3', mobility: 'm^5/(mol s)', rate: 'mol/s', maxRate: 'mol/s', michaelis: 'mol/m^3' };

const SHELF_FIELDS = new Set(['diffusivity', 'lossRate', 'solubility', 'radius', 'materialDensity', 'mobility', 'rate', 'maxRate', 'michaelis']);

function storedUnit(x: unknown): string | null {
  return x !== null && typeof x === 'object' && 'si' in x && 'unit' in x ? ((x as StoredQuantity).unit ?? null) : null;
}

/** The unit the item already uses for a field (when it has the field's dimension), else SI. */
function unitFor(si: string, existing: unknown): string {
  const u = storedUnit(existing);
  if (u) {
    try {
      if (formatDimension(dimensionOfUnit(u)) === formatDimension(dimensionOfUnit(si))) return u;
    } catch {
      // not a unit the reader knows
    }
  }
  return si;
}

export interface PlannedRevision {
  type: 'species' | 'chemical';
  key: string;
  baseRevision: number;
  /** what changes, in words, with the new value and sd as written */
  changes: { field: string; chemical: string | null; from: number; to: { value: string; sd?: string } }[];
  record: unknown;
}

/**
 * The revisions an update writes: every updated shelf quantity of every base species, the observed
 * candidate and the chemicals, as `{ value, sd, provenance }` in the unit the item already uses,
 * rounded as calibration fits are (calibrate/service.ts formatMeasured). Provenance: `estimated`, naming
 * the plan, the outcome set and its revision, and the update's method and ESS.
 */
/**
 * A coefficient the outcomes barely informed: its posterior sd is at least 0.9 of the prior's and its mean moved by
 * at most a quarter of the prior sd — about the Monte Carlo noise of a few hundred draws (a rule of this project, no
 * source). Writing it would replace the shelf's value and provenance (a literature diffusivity, say) by noise marked
 * "estimated", so an apply leaves it as it is and says so (`kept`).
 */
export function barelyInformed(c: CoefficientUpdate): boolean {
  if (!(c.sd > 0)) return true;
  return c.posteriorSd >= 0.9 * c.sd && Math.abs(c.posteriorMean - c.value) <= 0.25 * c.sd;
}

/**
 * A coefficient an apply leaves as the shelf has it, as the answer lists it: one the tubes' model does not depend
 * on (the update's `unaffected`, never drawn), or one the outcomes barely informed (barelyInformed).
 */
export interface KeptCoefficient {
  type: 'species' | 'chemical';
  key: string;
  field: string;
  chemical: string | null;
  reason: string;
}

export function plannedRevisions(shelf: ShelfService, plan: PlanRow, outcomes: OutcomeSet, result: UpdateResult, author: string): { planned: PlannedRevision[]; kept: KeptCoefficient[] } {
  const provenance = {
    source: 'estimated' as const,
    reference: `model update from plan ${plan.id} ("${plan.name}"), outcome set ${outcomes.id} revision ${outcomes.revision}: ${result.method === 'importance' ? `importance sampling, ESS ${result.ess.toFixed(0)} of ${result.samples} draws` : `sequential Monte Carlo (importance sampling over the ${result.samples} draws had ESS ${result.importanceEss.toFixed(0)}, too few)`}, ε = ${result.options.misclassification}`,
    date: new Date().toISOString().slice(0, 10),
    by: author,
  };
  const byItem = new Map<string, CoefficientUpdate[]>();
  const kept: KeptCoefficient[] = [];
  // what the tubes' model does not depend on was never part of the update (docs/model.md §13): the shelf's value stands
  for (const c of result.unaffected ?? []) {
    if (!SHELF_FIELDS.has(c.field)) continue;
    kept.push({ type: c.owner, key: c.id, field: c.field, chemical: c.chemical, reason: `not updated: ${c.reason}; the shelf value stands` });
  }
  for (const c of result.coefficients) {
    if (!SHELF_FIELDS.has(c.field)) continue;
    if (barelyInformed(c)) {
      // the shelf's value and provenance stand (see barelyInformed)
      kept.push({ type: c.owner, key: c.id, field: c.field, chemical: c.chemical, reason: 'barely informed by the outcomes (posterior sd ≥ 0.9 × prior sd, mean moved ≤ 0.25 prior sd): the shelf value stands' });
      continue;
    }
    const k = `${c.owner}:${c.id}`;
    byItem.set(k, [...(byItem.get(k) ?? []), c]);
  }
  // the update is a posterior over the revisions the plan was computed from: it may replace only those. An item
  // edited since (a new measurement, another update, this update applied already) would be overwritten with
  // values that never saw the edit, so the whole apply is refused, naming them.
  const used = new Map<string, number>();
  for (const r of plan.revisions) {
    const rev = shelf.repo.byRevisionId(r.revisionId);
    if (rev) used.set(`${rev.type}:${rev.id}`, rev.revisionId);
  }
  const moved: { type: 'species' | 'chemical'; id: string; planRevisionId: number | null; currentRevision: number }[] = [];
  for (const k of byItem.keys()) {
    const [owner, key] = k.split(':') as ['species' | 'chemical', string];
    const cur = shelf.repo.mustGet(owner, key);
    const planRev = used.get(k) ?? null;
    if (cur.revisionId !== planRev) moved.push({ type: owner, id: key, planRevisionId: planRev, currentRevision: cur.revision });
  }
  if (moved.length > 0)
    throw new StaleRevisionError(
      `the update was computed from the shelf as plan ${plan.id} used it, and ${moved.map((m) => `${m.type} "${m.id}"`).join(', ')} ${moved.length === 1 ? 'has' : 'have'} changed since (now at revision ${moved.map((m) => m.currentRevision).join(', ')}; an edit, another update, or this one applied already): nothing was written. Rerun the plan on today's shelf and record its outcomes, or edit the shelf by hand.`,
      moved,
    );
  const out: PlannedRevision[] = [];
  for (const [k, cs] of byItem) {
    const [owner, key] = k.split(':') as ['species' | 'chemical', string];
    const cur = shelf.repo.mustGet<SpeciesRecord | ChemicalRecord>(owner, key);
    const typed = toTypedRecord(cur.record) as Record<string, unknown> & { couplings?: Record<string, unknown>[] };
    const raw = cur.record as unknown as Record<string, unknown> & { couplings?: Record<string, unknown>[] };
    const changes: PlannedRevision['changes'] = [];
    for (const c of cs) {
      const si = SI_UNIT[c.field as string]!;
      const write = (existing: unknown) => {
        const text = formatMeasured(c.posteriorMean, c.posteriorSd > 0 ? c.posteriorSd : null, unitFor(si, existing));
        changes.push({ field: c.field, chemical: c.chemical, from: c.value, to: text });
        return { value: text.value, ...(text.sd ? { sd: text.sd } : {}), provenance };
      };
      if (c.chemical === null) {
        typed[c.field] = write(raw[c.field]);
        continue;
      }
      const i = (raw.couplings ?? []).findIndex((x) => x.chemical === c.chemical);
      if (i < 0) throw new DomainError('coupling-missing', `${key} has no coupling on ${c.chemical} any more: the update cannot be applied to it`);
      const tc = typed.couplings![i]!;
      const rc = raw.couplings![i]!;
      if (c.field === 'mobility') tc.mobility = write(rc.mobility);
      else if (c.field === 'rate') tc.activity = write(rc.activity);
      else {
        const act = { ...(tc.activity as Record<string, unknown>) };
        act[c.field] = write((rc.activity as Record<string, unknown> | undefined)?.[c.field]);
        tc.activity = act;
      }
    }
    out.push({ type: owner, key, baseRevision: cur.revision, changes, record: parseRecord(owner, typed, ['record']) });
  }
  return { planned: out, kept };
}

// ---------------------------------------------------------------- the service

/** What the next-round job answers (POST /api/plans/:id/next, brink next). */
export interface NextJobResult {
  planId: number;
  update: UpdateResult;
  design: DesignResult;
  /** whether the shelf the new plan was computed on moved on since the old plan (an applied update does) */
  shelf: { changedSincePlan: boolean; note: string };
  /** the designed doses as the new plan's request stores them (its `series`), and as the sheet's doses option takes them */
  sheet: { candidate: string; doses: string[] };
  nextPlanJob: string;
  nextPlanId: number;
}

const finiteOrNull = (x: number | null) => (x !== null && Number.isFinite(x) && x > 0 ? x : null);

/** Whether any shelf item the plan used has a newer revision now, in words for the next plan. */
function shelfSince(shelf: ShelfService, plan: PlanRow): NextJobResult['shelf'] {
  const moved: string[] = [];
  for (const r of plan.revisions) {
    const rev = shelf.repo.byRevisionId(r.revisionId);
    if (!rev) continue;
    try {
      const cur = shelf.repo.mustGet(rev.type, rev.id);
      if (cur.revision !== rev.revision) moved.push(`${rev.id} (revision ${rev.revision} → ${cur.revision})`);
    } catch {
      moved.push(`${rev.id} (no longer on the shelf)`);
    }
  }
  return moved.length > 0
    ? { changedSincePlan: true, note: `the next plan is computed on the current shelf, which moved on since plan ${plan.id}: ${moved.join(', ')}` }
    : { changedSincePlan: false, note: `the next plan is computed on the current shelf, the same revisions as plan ${plan.id}: its threshold band is the one before the outcomes (apply the update first, then ask for the next round, for a plan on the updated coefficients); the doses are designed from the updated coefficients either way` };
}

/** Wait for a job of the registry to end (hearing its progress). */
function jobEnd<R>(jobs: JobRegistry, id: string, progress: (fraction: number) => void): Promise<Job<R>> {
  return new Promise((resolve) => {
    const job = jobs.get(id) as Job<R> | undefined;
    if (!job) throw new Error(`job ${id} is gone`);
    const ended = () => ['done', 'failed', 'cancelled', 'timed-out'].includes(job.state);
    if (ended()) return resolve(job);
    const off = jobs.subscribe(id, (e) => {
      if (e.type === 'progress') progress(e.job.progress.fraction);
      else {
        off();
        resolve(e.job as Job<R>);
      }
    });
  });
}

export interface UpdateJobResult {
  planId: number;
  outcomes: { id: number; revision: number; candidate: string };
  ignored: { tube: string; reason: string }[];
  priorFrom: 'plan' | 'request';
  update: UpdateResult;
}

/**
 * Update and design jobs for stored plans. `readOutcomes` reads a plan's current outcome set; `rerun`
 * starts a new plan from a stored plan's request on the current shelf (plans.ts `rerun`).
 */
export function outcomeUpdateService(deps: {
  shelf: ShelfService;
  plans: { get(id: number): PlanRow };
  readOutcomes: ReadOutcomes;
  rerun: (planId: number, holder: string | null, series?: PlanRequestInput['series']) => Job<{ planId: number }>;
  pool: WorkerPool;
  jobs: JobRegistry;
}) {
  const outcomesOf = (planId: number, candidate?: string): OutcomeSet => {
    const o = deps.readOutcomes(planId, candidate);
    if (!o || o.tubes.length === 0) throw new DomainError('no-outcomes', `plan ${planId} has no outcomes recorded${candidate ? ` for ${candidate}` : ''}: record the tubes first`);
    return o;
  };
  const parse = <T>(schema: z.ZodType<T>, body: unknown): T => {
    const p = schema.safeParse(body ?? {});
    if (!p.success) throw new InputError(issueList(p.error));
    return p.data;
  };
  return {
    /** Start the update of a plan from its current outcomes: a job whose result is an UpdateJobResult. */
    startUpdate(planId: number, body: unknown): Job<UpdateJobResult> {
      const req = parse(updateRequestSchema, body);
      const plan = deps.plans.get(planId);
      const outcomes = outcomesOf(planId, req.candidate);
      const u = updateInput(plan, outcomes, req);
      return deps.jobs.start<UpdateJobResult>(
        'update',
        async (ctx) => {
          const update = await deps.pool.run('update', u.input, ctx.runOptions);
          return { planId, outcomes: { id: outcomes.id, revision: outcomes.revision, candidate: outcomes.candidate }, ignored: u.ignored, priorFrom: u.priorFrom, update };
        },
        { label: `update of plan ${planId} from outcome set ${outcomes.id}` },
      );
    },

    /**
     * Apply a finished update job: write its revisions, provided the job belongs to this plan and its outcome
     * set is still the current one (else a 409-style DomainError: rerun the update).
     */
    apply(planId: number, body: { job: string; author?: string; note?: string | null }) {
      const job = deps.jobs.get(body.job) as Job<UpdateJobResult> | undefined;
      if (!job || job.kind !== 'update') throw new InputError([{ path: 'job', message: `no update job ${body.job}` }]);
      if (job.state !== 'done' || !job.result) throw new DomainError('job-not-done', `update job ${body.job} is ${job.state}: apply a finished update`);
      const r = job.result;
      if (r.planId !== planId) throw new InputError([{ path: 'job', message: `update job ${body.job} is of plan ${r.planId}, not ${planId}` }]);
      const cur = outcomesOf(planId, r.outcomes.candidate);
      if (cur.id !== r.outcomes.id || cur.revision !== r.outcomes.revision)
        throw new DomainError('outcomes-changed', `the outcomes of plan ${planId} changed since the update was computed (set ${r.outcomes.id} revision ${r.outcomes.revision}, now ${cur.id} revision ${cur.revision}): rerun the update`);
      if (!r.update.consistency.consistent)
        throw new DomainError('inconsistent-outcomes', `the update was not applied: ${r.update.consistency.message}`);
      const plan = deps.plans.get(planId);
      const author = body.author ?? 'anonymous';
      const { planned, kept } = plannedRevisions(deps.shelf, plan, cur, r.update, author);
      const note = [`model update from plan ${planId}, outcome set ${cur.id} revision ${cur.revision}`, body.note ?? null].filter((x) => x !== null && x !== '').join('; ');
      // every revision of the update, or none (a stale base revision of one refuses them all)
      const revisions = deps.shelf.repo.transaction(() => planned.map((p) => deps.shelf.edit(p.type, p.key, p.baseRevision, p.record as never, { author, note })));
      return { planId, outcomes: r.outcomes, revisions: revisions.map((rev, i) => ({ type: planned[i]!.type, key: planned[i]!.key, revisionId: rev.revisionId, changes: planned[i]!.changes })), kept };
    },

    /**
     * The next experiment: a job that designs the next round's doses from the plan's current outcomes (update, then
     * design, in a worker), then computes a new plan from the same request on the current shelf (a rerun that points
     * back to this plan) whose request carries the designed doses as its `series`: the new plan's bench sheet prints
     * them by default. The job ends when the new plan is stored; its result names it (`nextPlanId`).
     *
     * Outcomes the consistency check rejects end the job failed (422 inconsistent-outcomes): no plan is made.
     * The new plan is computed on the shelf as it is now: after an applied update its threshold and band are the
     * updated ones; before, they are the shelf's as it was (the result's `shelf` says which, and the doses are
     * designed from the posterior either way).
     */
    startNext(planId: number, body: unknown, holder: string | null = null): Job<NextJobResult> {
      const req = parse(designRequestSchema, body);
      const plan = deps.plans.get(planId);
      const outcomes = outcomesOf(planId, req.candidate);
      const d = designInput(plan, outcomes, req);
      return deps.jobs.start<NextJobResult>(
        'design',
        async (ctx) => {
          // the update and the design are the first 90 % of the job, the new plan the rest
          const out = await deps.pool.run('design', d.input, { ...ctx.runOptions, onProgress: (f, stage) => ctx.runOptions.onProgress?.(0.9 * f, stage) });
          ctx.signal.throwIfAborted();
          // a posterior the outcomes contradict is no ground for a design: say so instead of planning on it
          if (!out.update.consistency.consistent)
            throw new DomainError('inconsistent-outcomes', `no next plan was made: ${out.update.consistency.message} Check the outcomes (a misread tube, the sheet options they were entered with) or the shelf first.`);
          const designed = out.design.designed.doses;
          const post = out.update.bands.find((b) => b.species === d.input.observed)?.posterior;
          const series = {
            candidate: d.input.observed,
            doses: designed.map((x) => `${Number((x * 1e-6).toPrecision(4))} 1/mL`),
            from: {
              plan: planId,
              outcomeSet: outcomes.id,
              outcomeRevision: outcomes.revision,
              criterion: out.design.criterion,
              expectedBandFactor: { designed: finiteOrNull(out.design.designed.expectedBandFactor), fixed: finiteOrNull(out.design.fixed?.expectedBandFactor ?? null) },
              fixedDoses: out.design.fixed ? out.design.fixed.doses.length : null,
              ...(post ? { posteriorBand: { p05: post.p05, median: post.median, p95: post.p95 } } : {}),
            },
          };
          const shelf = shelfSince(deps.shelf, plan);
          const next = deps.rerun(planId, holder, series);
          // the new plan's progress is this job's last stage; cancelling this job cancels it
          const onAbort = () => deps.jobs.cancel(next.id);
          ctx.signal.addEventListener('abort', onAbort, { once: true });
          try {
            const ended = await jobEnd<{ planId: number }>(deps.jobs, next.id, (f) => ctx.runOptions.onProgress?.(0.9 + 0.1 * f, `computing the next plan (${Math.round(100 * f)} %)`));
            if (ended.state !== 'done' || !ended.result) throw new DomainError('next-plan-failed', `the next plan (job ${next.id}) ended ${ended.state}${ended.error ? `: ${ended.error.message}` : ''}`);
            return { planId, ...out, shelf, sheet: { candidate: d.input.observed, doses: series.doses }, nextPlanJob: next.id, nextPlanId: ended.result.planId };
          } finally {
            ctx.signal.removeEventListener('abort', onAbort);
          }
        },
        { label: `next round after plan ${planId}: design of ${d.input.observed}'s doses from outcome set ${outcomes.id}, then the new plan` },
      );
    },
  };
}
export type OutcomeUpdateService = ReturnType<typeof outcomeUpdateService>;
