/**
 * Plans: a screening request against the shelf, run by the engine's planner
 * and stored with the exact revisions and SI inputs it used, so that its
 * numbers can be read back unchanged after the shelf moves on.
 */
import { z } from 'zod';
import type { Warning } from '../engine/checks.js';
import { doseSeries, screen, screenWarnings, stateMap, fuelSweep, type CandidateResult, type ScreenOptions } from '../engine/planner.js';
import type { Mixture, Species } from '../engine/types.js';
import { issueList, quantity } from '../schema/mixture.js';
import { keySchema } from '../schema/shelf.js';
import type { PlansRepository } from '../store/plans.js';
import { DIMENSIONS } from '../units/index.js';
import { VERSION } from '../version.js';
import { InputError } from './errors.js';
import { shelfSampleSchema, type ShelfService } from './service.js';

const dose = (desc: string) => quantity(DIMENSIONS.numberDensity, 'positive', desc);

/**
 * The most dose searches one plan may run: candidates × (1 + Monte Carlo draws).
 * At about 25–60 ms a search (a dose scan, its refinement and the dose path) this keeps
 * one request to minutes; a larger one is refused with the count, never truncated.
 */
export const PLAN_SEARCH_LIMIT = 20_000;

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
    .union([z.literal('all'), z.array(keySchema).min(1).max(50)])
    .default('all')
    .describe(`"all": every active shelf species not in the base, however many (never cut); or up to 50 ids. A plan runs at most ${PLAN_SEARCH_LIMIT} dose searches, candidates × (1 + Monte Carlo draws); above that it is refused with a 400 naming the count.`),
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
  fuelSweep: z
    .strictObject({
      chemical: keySchema,
      range: z.tuple([quantity(DIMENSIONS.concentration, 'nonnegative', 'lowest level'), quantity(DIMENSIONS.concentration, 'positive', 'highest level')]),
      steps: z.number().int().min(2).max(60).optional(),
      scale: z.enum(['log', 'linear']).optional(),
    })
    .optional(),
});
export type PlanRequest = z.output<typeof planRequestSchema>;
/** The request as sent (before units were read), stored for reruns. */
export type PlanRequestInput = z.input<typeof planRequestSchema>;


/** Refuse a plan whose work would exceed PLAN_SEARCH_LIMIT, naming the count and the limit. */
export function checkPlanWork(candidates: number, samples: number, allOfShelf: boolean): void {
  const searches = candidates * (1 + samples);
  if (searches <= PLAN_SEARCH_LIMIT) return;
  const what = allOfShelf ? `"all" is ${candidates} species on the shelf` : `${candidates} candidates`;
  throw new InputError([
    {
      path: samples > 0 ? 'uncertainty.samples' : 'candidates',
      message: `this plan would run ${searches} dose searches (${what} × (1 + ${samples} Monte Carlo draws)); the limit is ${PLAN_SEARCH_LIMIT}: name fewer candidates or use fewer draws`,
    },
  ]);
}

export interface PlanResult {
  candidates: CandidateResult[];
  /** What happened other than what was asked: the shelf's input warnings, `no-concentration` for every chemical taken as 0, the base mixture's own analysis warnings (as a screen's), then the plan's own (e.g. a state map that could not be drawn) */
  warnings: Warning[];
  /** the state map of one candidate, with the bench sheet's default dose series at base factor 1 */
  stateMap: (ReturnType<typeof stateMap> & { candidate: string; doseSeries: number[] }) | null;
  fuelSweep: ReturnType<typeof fuelSweep> | null;
  engineVersion: string;
  computedAt: string;
}

/** Run the planner on SI inputs (no database): what a stored plan and `brink screen` both do. */
export function runPlan(base: Mixture, candidates: Species[], req: PlanRequest): PlanResult {
  const o: ScreenOptions = {
    boundary: req.boundary,
    dosing: req.dosing,
    margin: req.margin,
    ...(req.maxVolumeFraction !== undefined ? { maxVolumeFraction: req.maxVolumeFraction } : {}),
    ...(req.maxDensity !== undefined ? { maxDensity: req.maxDensity.value } : {}),
    ...(req.uncertainty ? { uncertainty: { ...req.uncertainty, doses: (req.probabilityAt ?? []).map((q) => q.value) } } : {}),
  };
  const ranked = screen(base, candidates, o);
  // A chemical the request gave no level for is taken as 0 (the shelf marks it, docs/model.md §8): that is the plan's
  // answer too, so say it here, where pages and sheets read the plan's warnings, and name who needs it.
  // Then what the base mixture's own analysis says (an absent fuel, settling, a missing datum), as a screen does.
  const warnings: Warning[] = screenWarnings(base, candidates);
  let map: PlanResult['stateMap'] = null;
  const m = req.stateMap;
  const chosen = m ? (m.candidate ?? ranked.find((c) => c.feasible)?.species) : undefined;
  if (m && m.candidate !== undefined && !candidates.some((c) => c.id === m.candidate))
    throw new InputError([{ path: 'stateMap.candidate', message: `"${m.candidate}" is not one of the candidates` }]);
  const cr = chosen !== undefined ? ranked.find((c) => c.species === chosen)! : undefined;
  if (m && !cr) {
    warnings.push({ code: 'no-state-map', message: 'a state map was asked for, but no candidate crosses the boundary below its cap: the plan is stored without a map (name one with stateMap.candidate to draw it anyway).' });
  } else if (m && cr && !(cr.cap.density > 0)) {
    warnings.push({ code: 'no-state-map', message: `a state map was asked for, but "${cr.species}" has no dose range to draw (its dose cap is 0): the plan is stored without a map.`, candidate: cr.species });
  } else if (m && cr) {
    const d = candidates.find((c) => c.id === cr.species)!;
    const x = cr.feasible ? cr.threshold!.density : 0;
    map = {
      candidate: cr.species,
      doseSeries: cr.feasible && x > 0 ? doseSeries(cr).doses : [],
      ...stateMap(base, d, {
        ...o,
        ...(m.baseSpecies !== undefined ? { baseSpecies: m.baseSpecies } : {}),
        ...(m.baseRange ? { baseRange: m.baseRange } : {}),
        // default dose range: a factor of 20 either side of the threshold (under the cap), so the boundary shows
        ...(m.doseRange
          ? { doseRange: [m.doseRange[0].value, m.doseRange[1].value] as [number, number] }
          : x > 0
            ? { doseRange: [x / 20, Math.min(x * 20, cr.cap.density)] as [number, number] }
            : {}),
        ...(m.baseSteps ? { baseSteps: m.baseSteps } : {}),
        ...(m.doseSteps ? { doseSteps: m.doseSteps } : {}),
      }),
    };
  }
  let sweep: PlanResult['fuelSweep'] = null;
  if (req.fuelSweep) {
    const f = req.fuelSweep;
    sweep = fuelSweep(base, candidates, { ...o, chemical: f.chemical, range: [f.range[0].value, f.range[1].value], ...(f.steps ? { steps: f.steps } : {}), ...(f.scale ? { scale: f.scale } : {}) });
  }
  return { candidates: ranked, warnings, stateMap: map, fuelSweep: sweep, engineVersion: VERSION, computedAt: new Date().toISOString() };
}

export function planService(shelf: ShelfService, plans: PlansRepository) {
  function compute(raw: PlanRequestInput, rerunOf: number | null) {
    const parsed = planRequestSchema.safeParse(raw);
    if (!parsed.success) throw new Error('stored plan request no longer validates'); // validated before it was stored
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
    checkPlanWork(ids.length, req.uncertainty?.samples ?? 0, req.candidates === 'all');
    const built = shelf.buildMixture({ species: req.base, chemicals: req.chemicals, chamber: req.chamber, crowding: req.crowding, conditions: req.conditions }, ids);
    const run = runPlan(built.mixture, built.candidates, req);
    // what the shelf had to note (a retired species) belongs to the answer: the plan's warnings carry it, first
    const result: PlanResult = { ...run, warnings: [...built.warnings, ...run.warnings] };
    const revisions = [
      ...built.revisions.species.map((r) => ({ revisionId: r.revisionId, role: 'base' as const })),
      ...built.revisions.candidates.map((r) => ({ revisionId: r.revisionId, role: 'candidate' as const })),
      ...built.revisions.chemicals.map((r) => ({ revisionId: r.revisionId, role: 'chemical' as const })),
    ];
    const name = req.name ?? `${req.boundary} screen of ${req.base.map((b) => b.id).join(' + ')}`;
    return plans.create({
      name,
      notes: req.notes ?? '',
      author: req.author ?? 'anonymous',
      request: raw,
      inputs: { base: built.mixture, candidates: built.candidates, warnings: built.warnings, shelfRevisions: built.revisions },
      result,
      rerunOf,
      revisions,
    });
  }
  return {
    /** Validate, run and store a plan; `raw` is the request as sent. */
    create(raw: unknown) {
      const parsed = planRequestSchema.safeParse(raw);
      if (!parsed.success) throw new InputError(issueList(parsed.error));
      return compute(raw as PlanRequestInput, null);
    },
    /** A new plan from the same request on the current shelf. */
    rerun(id: number) {
      const old = plans.get(id);
      return compute(old.request as PlanRequestInput, id);
    },
    get: (id: number) => plans.get(id),
    list: (limit: number, offset: number) => plans.list(limit, offset),
    rename: (id: number, name: string, notes: string) => plans.rename(id, name, notes),
  };
}
export type PlanService = ReturnType<typeof planService>;
