/**
 * The `brink screen` request file: a base mixture file, candidate species as in
 * the mixture file (their density is ignored), a boundary and a dosing mode.
 * Its work is bounded by the same budget as a stored plan's (server/jobs/budget.ts).
 */
import { z } from 'zod';
import type { Warning } from '../engine/checks.js';
import type { CandidateResult } from '../engine/planner.js';
import { DIMENSIONS } from '../units/index.js';
import { LIMITS } from './limits.js';
import { candidateSchema, mixtureSchema, quantity, toEngineMixture, toEngineSpecies, issueList } from './mixture.js';
import { baseModes, checkWorkBudget } from '../jobs/budget.js';
import { InputError } from '../shelf/errors.js';
import type { Mixture, Species } from '../engine/types.js';

export const screenRequestSchema = z
  .strictObject({
    name: z.string().max(LIMITS.name).optional(),
    description: z.string().max(LIMITS.text).optional(),
    base: mixtureSchema,
    candidates: z
      .array(candidateSchema)
      .min(1)
      .max(LIMITS.candidates)
      .describe(`at most ${LIMITS.candidates}, and as many as the work budget allows: candidates × (1 + draws) × the modes the base scans`),
    boundary: z.enum(['stationary', 'oscillatory', 'any', 'restore']),
    dosing: z.enum(['add', 'replace']).default('add'),
    maxDensity: quantity(DIMENSIONS.numberDensity, 'positive', 'largest dopant number density').optional(),
    maxVolumeFraction: z.number().gt(0).max(0.74).optional(),
    margin: z.number().min(1).max(100).default(1.25),
    uncertainty: z.strictObject({ samples: z.number().int().min(0).max(2000), seed: z.number().int().min(0).max(4294967295) }).optional(),
  })
  .superRefine((r, ctx) => {
    const chems = new Set(r.base.chemicals.map((c) => c.id));
    r.candidates.forEach((c, i) => {
      c.couplings.forEach((cp, j) => {
        if (!chems.has(cp.chemical)) ctx.addIssue({ code: 'custom', message: `unknown chemical "${cp.chemical}" (not in base.chemicals)`, path: ['candidates', i, 'couplings', j, 'chemical'] });
        const a = cp.activity;
        if (a && 'maxRate' in a && a.product && !chems.has(a.product)) ctx.addIssue({ code: 'custom', message: `unknown chemical "${a.product}"`, path: ['candidates', i, 'couplings', j, 'activity', 'product'] });
      });
    });
  });
export type ScreenRequest = z.output<typeof screenRequestSchema>;

/**
 * Parse a screen request into SI inputs; throws InputError with every problem by path,
 * and when its work is above the budget (one scan of the base counts its modes).
 */
export function parseScreenRequest(doc: unknown): { req: ScreenRequest; base: Mixture; candidates: Species[] } {
  const r = screenRequestSchema.safeParse(doc);
  if (!r.success) throw new InputError(issueList(r.error));
  const base = toEngineMixture(r.data.base);
  checkWorkBudget({ candidates: r.data.candidates.length, samples: r.data.uncertainty?.samples ?? 0, modes: baseModes(base) });
  return { req: r.data, base, candidates: r.data.candidates.map((c) => ({ ...toEngineSpecies(c), density: 0 })) };
}

/**
 * The `brink screen` output contract. Every candidate carries its dose path
 * (`dosePath`: [{ from, to, state }] over (0, cap]), `firstOnset` ({ density,
 * state } or null) and `warnings`; with `uncertainty`, `band` (the whole Monte
 * Carlo band, also for infeasible candidates) and, for feasible ones, the band's
 * numbers beside the threshold: `alreadyPast` (fraction of draws whose base is
 * already past: threshold 0), `feasibleFraction` (crossed at or below the cap,
 * zeros included), `median`/`p05`/`p95` over every draw (null above the cap,
 * with `aboveCap` saying which). `window` is null or `{ upTo, stateAbove }`: past the
 * boundary up to `upTo`, and the state just above it (an oscillatory window can turn
 * stationary: still unstable). The dose path's intervals are non-empty and alternate.
 *
 * The top-level `warnings` say what the input lacks and what the base mixture itself
 * warns of, before any dopant: a `no-concentration` for every chemical taken as 0
 * (naming whose substrate it is, as a stored plan's `result.warnings` does), then the
 * base's own analysis warnings (`analyze(base)`: e.g. `fuel-runs-out` for an absent
 * fuel, `sedimentation-not-checked`, `no-chamber-depth`, `sedimentation`). A
 * candidate's `warnings` are about that candidate; `atThreshold`/`atMargin` carry the
 * analysis warnings of the doped sample. They come from `screenWarnings` (engine/planner.ts).
 */

export function screenOutput(results: CandidateResult[], warnings: Warning[]) {
  return {
    warnings,
    candidates: results.map((c) => ({
      species: c.species,
      rank: c.rank,
      feasible: c.feasible,
      reason: c.reason,
      message: c.message,
      threshold: c.threshold,
      window: c.window,
      method: c.method,
      cap: c.cap,
      firstOnset: c.firstOnset,
      dosePath: c.dosePath,
      warnings: c.warnings,
      band: c.band,
      atThreshold: c.atThreshold,
      atMargin: c.atMargin,
    })),
  };
}
