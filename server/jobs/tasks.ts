/**
 * The kinds of engine work the worker pool runs (server/jobs/pool.ts), each a
 * pure function of structured-clonable SI inputs: no database here (the main
 * thread builds the mixture from the shelf and stores what comes back).
 *
 * Each kind is loaded in the worker the first time it is asked for, so a
 * worker that only plans never loads the unit parser (mathjs, seconds to load).
 * To run a new kind of work off the event loop: add its input and output to
 * `Tasks` and a loader to `LOADERS`; then `pool.run(kind, input, options)`.
 */
import type { QuantalFitOptions, runQuantalFit } from '../calibrate/quantal.js';
import type { FitMethod, FitOptions, runFit } from '../calibrate/run.js';
import type { AnalysisResult } from '../engine/analyze.js';
import type { Dispersion, DispersionOptions } from '../engine/dispersion.js';
import type { Mixture, Species } from '../engine/types.js';
import type { PlanRequest } from '../shelf/plans.js';
import type { PlanResult } from '../shelf/run-plan.js';
import type { DesignResult } from '../engine/design.js';
import type { UpdateResult } from '../engine/update.js';
import type { DesignInput, UpdateInput } from '../outcomes/run-update.js';
import type { SimulateOptions, SimulationResult } from '../engine/simulate/index.js';

/** The options of a simulation that can cross a thread (no callbacks). */
export type SimulateTaskOptions = Omit<SimulateOptions, 'progress' | 'cancelled' | 'initial' | 'onStep' | 'analysis'>;

/** Progress callback a task may call: fraction of its work done (0–1) and what it is doing. */
export type TaskProgress = (fraction: number, stage: string) => void;

export interface Tasks {
  /** A stored plan's computation: screen, state map, fuel sweep (runPlan, server/shelf/run-plan.ts). */
  plan: { input: { base: Mixture; candidates: Species[]; req: PlanRequest }; output: PlanResult };
  /** One linear-stability analysis (engine/analyze.ts). */
  analyze: { input: { mixture: Mixture }; output: AnalysisResult };
  /** Growth rate against wavenumber of one mixture, with the allowed modes (engine/dispersion.ts). */
  dispersion: { input: { mixture: Mixture; options?: DispersionOptions }; output: Dispersion };
  /** A calibration fit from raw data (calibrate/run.ts; the options already parsed). */
  fit: { input: { method: FitMethod; data: unknown; options: FitOptions[FitMethod] }; output: ReturnType<typeof runFit> };
  /** A quantal dose–response fit from a table (calibrate/quantal.ts; the options already parsed). */
  quantal: { input: { data: unknown; options: QuantalFitOptions }; output: ReturnType<typeof runQuantalFit> };
  /** The model update from a plan's outcomes (engine/update.ts via outcomes/run-update.ts). */
  update: { input: UpdateInput; output: UpdateResult };
  /** The update, then the design of the next round of doses (engine/design.ts). */
  design: { input: DesignInput; output: { update: UpdateResult; design: DesignResult } };
  /**
   * The nonlinear simulation past onset (engine/simulate/, docs/model.md §14–§16): progress is the simulated
   * fraction of the duration; cancellation is the pool's signal (the worker is ended). The frames come back as
   * Float32Arrays (structured clone copies them; at most frames × species × points^dims × 4 bytes).
   */
  simulate: { input: { mixture: Mixture; options: SimulateTaskOptions }; output: SimulationResult };
}

export type TaskKind = keyof Tasks;
export type TaskInput<K extends TaskKind> = Tasks[K]['input'];
export type TaskOutput<K extends TaskKind> = Tasks[K]['output'];
type TaskFunction<K extends TaskKind> = (input: TaskInput<K>, progress: TaskProgress) => TaskOutput<K>;

export const LOADERS: { [K in TaskKind]: () => Promise<TaskFunction<K>> } = {
  plan: async () => {
    const { runPlan } = await import('../shelf/run-plan.js');
    return (input, progress) => runPlan(input.base, input.candidates, input.req, progress);
  },
  analyze: async () => {
    const { analyze } = await import('../engine/analyze.js');
    return (input) => analyze(input.mixture);
  },
  dispersion: async () => {
    const { dispersion } = await import('../engine/dispersion.js');
    return (input) => dispersion(input.mixture, input.options);
  },
  fit: async () => {
    const { runFit } = await import('../calibrate/run.js');
    return (input) => runFit(input.method, input.data, input.options);
  },
  quantal: async () => {
    const { runQuantalFit } = await import('../calibrate/quantal.js');
    return (input) => runQuantalFit(input.data, input.options);
  },
  update: async () => {
    const { runUpdate } = await import('../outcomes/run-update.js');
    return (input, progress) => runUpdate(input, progress);
  },
  design: async () => {
    const { runDesign } = await import('../outcomes/run-update.js');
    return (input, progress) => runDesign(input, progress);
  },
  simulate: async () => {
    const { simulate } = await import('../engine/simulate/index.js');
    return (input, progress) => simulate(input.mixture, { ...input.options, progress });
  },
};
