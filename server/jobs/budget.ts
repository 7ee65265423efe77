/**
 * The work budget of a screen (a stored plan or `brink screen`): one number for
 * how much engine work a request may ask for, checked before any work starts.
 *
 *   work = candidates × (1 + Monte Carlo draws + fuel-sweep levels) × modes
 *
 * `modes` is the number of allowed modes the base mixture's own scan evaluates
 * on the general path (`scanModes(..., { earlyExit: false }).evaluations`,
 * docs/model.md §4): one scan of the base, a moment to compute, that says how
 * dear every later scan of a doped sample is. The general path, not the early
 * exits: a bound that proves the base stable mode by mode says nothing of the
 * doped samples, and the count must not change when the exits improve.
 * A dose search scans many doses, so the product is a measure of work, not a
 * count of eigenproblems. A state map (at most 80 × 80 cells) is not counted.
 */
import { buildModel } from '../engine/model.js';
import { scanModes } from '../engine/scan.js';
import type { Mixture } from '../engine/types.js';
import { InputError } from '../shelf/errors.js';

/**
 * The largest work a screen may ask for. A 200-candidate × 1000-draw screen of a
 * 6-species, 2-chemical base fits: such bases scan 100–600 modes (random sealed and
 * unbounded ones, measured when the budget was set), 200 × 1001 × 600 ≈ 1.2e8.
 */
export const WORK_BUDGET = 250_000_000;

/** The allowed modes the base mixture's own general scan evaluates (at least 1). */
export function baseModes(base: Mixture): number {
  return Math.max(1, scanModes(buildModel(base), base.chamber.walls, { earlyExit: false }).evaluations);
}

export interface WorkRequest {
  candidates: number;
  samples: number;
  /** fuel-sweep levels (each is one more dose search per candidate); 0 without a sweep */
  sweepLevels?: number;
  modes: number;
  /** the candidates are `"all"` of the shelf (the message says so) */
  allOfShelf?: boolean;
}

/** The work of a request: candidates × (1 + draws + sweep levels) × modes. */
export function workOf(w: WorkRequest): number {
  return w.candidates * (1 + w.samples + (w.sweepLevels ?? 0)) * w.modes;
}

/**
 * Refuse a request whose work is above the budget: an InputError (HTTP 400, CLI exit 2)
 * that names every factor, the budget, and the largest draws or candidates that would fit.
 */
export function checkWorkBudget(w: WorkRequest, budget = WORK_BUDGET): void {
  const work = workOf(w);
  if (work <= budget) return;
  const sweep = w.sweepLevels ?? 0;
  const what = w.allOfShelf ? `"all" is ${w.candidates} species on the shelf` : `${w.candidates} candidates`;
  const perCandidate = (1 + w.samples + sweep) * w.modes;
  const maxCandidates = Math.floor(budget / perCandidate);
  const maxDraws = Math.floor(budget / (w.candidates * w.modes)) - 1 - sweep;
  const ways = [
    maxCandidates >= 1 ? `at most ${maxCandidates} candidates with these draws` : null,
    w.samples > 0 && maxDraws >= 0 ? `at most ${maxDraws} Monte Carlo draws with these candidates` : null,
    sweep > 0 ? 'fewer fuel-sweep levels' : null,
    'or a base whose scan has fewer modes (a shorter chamber)',
  ].filter((x): x is string => x !== null);
  throw new InputError([
    {
      path: w.samples > 0 ? 'uncertainty.samples' : 'candidates',
      message:
        `this screen would need ${work.toExponential(3)} units of work (${what} × (1 + ${w.samples} Monte Carlo draws${sweep > 0 ? ` + ${sweep} fuel-sweep levels` : ''}) × ${w.modes} modes that the base's own scan evaluates); ` +
        `the budget is ${budget.toExponential(3)}: use ${ways.join(', ')}`,
    },
  ]);
}
