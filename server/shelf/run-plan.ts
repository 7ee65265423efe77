/**
 * A plan's computation on SI inputs, without the database: the screen, the state
 * map and the fuel sweep of a stored plan (server/shelf/plans.ts stores it). It runs in a
 * worker thread (server/jobs/tasks.ts), so this module imports only the engine and
 * plain modules (no zod, no units: a worker starts in a moment).
 */
import type { Warning } from '../engine/checks.js';
import { doseSeries, screen, screenWarnings, stateMap, fuelSweep, type CandidateResult, type ScreenOptions } from '../engine/planner.js';
import type { Mixture, Species } from '../engine/types.js';
import { VERSION } from '../version.js';
import { InputError } from './errors.js';
import type { PlanRequest } from './plans.js';

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

/** Called as a plan advances: the fraction of its work done (0–1, never falling) and what it is doing. */
export type PlanProgress = (fraction: number, stage: string) => void;

/**
 * Run the planner on SI inputs (no database): what a stored plan does, in a worker thread
 * (server/jobs/tasks.ts). `progress` hears the screen's own progress, scaled to the screen's
 * share of the plan's work (dose searches: candidates × (1 + draws); a state map cell counts
 * as 1/48 of a search, a fuel-sweep level as one search a candidate), then the state map and
 * the fuel sweep as they start, and (1, 'plan computed') at the end.
 */
export function runPlan(base: Mixture, candidates: Species[], req: PlanRequest, progress?: PlanProgress): PlanResult {
  const searches = candidates.length * (1 + (req.uncertainty?.samples ?? 0));
  const mapWork = req.stateMap ? ((req.stateMap.baseSteps ?? 24) * (req.stateMap.doseSteps ?? 24)) / 48 : 0;
  const sweepWork = req.fuelSweep ? candidates.length * (req.fuelSweep.steps ?? 12) : 0;
  const total = searches + mapWork + sweepWork;
  const share = (w: number) => (total > 0 ? w / total : 0);
  const o: ScreenOptions = {
    boundary: req.boundary,
    dosing: req.dosing,
    margin: req.margin,
    ...(req.maxVolumeFraction !== undefined ? { maxVolumeFraction: req.maxVolumeFraction } : {}),
    ...(req.maxDensity !== undefined ? { maxDensity: req.maxDensity.value } : {}),
    ...(req.uncertainty ? { uncertainty: { ...req.uncertainty, doses: (req.probabilityAt ?? []).map((q) => q.value) } } : {}),
  };
  const ranked = screen(base, candidates, progress ? { ...o, progress: (f, stage) => progress(f * share(searches), stage) } : o);
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
    progress?.(share(searches), `state map of ${cr.species}`);
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
    progress?.(share(searches + mapWork), `fuel sweep of ${f.chemical}`);
    sweep = fuelSweep(base, candidates, { ...o, chemical: f.chemical, range: [f.range[0].value, f.range[1].value], ...(f.steps ? { steps: f.steps } : {}), ...(f.scale ? { scale: f.scale } : {}) });
  }
  progress?.(1, 'plan computed');
  return { candidates: ranked, warnings, stateMap: map, fuelSweep: sweep, engineVersion: VERSION, computedAt: new Date().toISOString() };
}
