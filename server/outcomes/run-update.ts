/**
 * The model update and the next-experiment design on SI inputs, without the database: what the
 * 'update' and 'design' jobs run in a worker thread (server/jobs/tasks.ts). Imports only the engine
 * (a worker starts in a moment); server/outcomes/update.ts builds the inputs from a stored plan and its
 * outcomes and writes the species revisions when an update is applied.
 */
import { designNext, type DesignOptions, type DesignResult } from '../engine/design.js';
import type { DoseOptions } from '../engine/planner.js';
import type { Mixture, Species } from '../engine/types.js';
import { updateModel, type Tube, type UpdateOptions, type UpdateResult } from '../engine/update.js';

export interface UpdateInput {
  base: Mixture;
  candidates: Species[];
  /** the candidate whose tubes were observed */
  observed: string;
  dose: DoseOptions;
  tubes: Tube[];
  /** the plan's draws and seed, the likelihood's stated errors, the sampler's bounds (no progress: the job passes its own) */
  options: Omit<UpdateOptions, 'progress'>;
}

export interface DesignInput extends UpdateInput {
  design: Omit<DesignOptions, 'progress'>;
}

/** Called as the work advances: fraction (0–1) and stage; may throw to stop (a cancelled job). */
export type Progress = (fraction: number, stage: string) => void;

/** The update (docs/model.md §13) without its sampler's particles (a job's answer is plain data). */
export function runUpdate(input: UpdateInput, progress?: Progress): UpdateResult {
  const { posterior: _posterior, ...result } = updateModel(input.base, input.candidates, input.observed, input.dose, input.tubes, { ...input.options, ...(progress ? { progress } : {}) });
  return result;
}

/** The update, then the design of the next round from its posterior (docs/model.md §13). */
export function runDesign(input: DesignInput, progress?: Progress): { update: UpdateResult; design: DesignResult } {
  const p = progress ?? (() => {});
  const r = updateModel(input.base, input.candidates, input.observed, input.dose, input.tubes, { ...input.options, progress: (f, s) => p(0.5 * f, `update: ${s}`) });
  const d = input.candidates.find((c) => c.id === input.observed)!;
  const design = designNext(r.posterior, input.base, d, input.dose, { ...input.design, seed: input.design.seed ?? input.options.seed, progress: (f, s) => p(0.5 + 0.5 * f, `design: ${s}`) });
  const { posterior: _posterior, ...update } = r;
  return { update, design };
}
