/**
 * What forms past onset, from a stored plan:
 *
 *   POST /api/plans/:id/candidates/:species/simulate   { doses?, dims?, points?, duration? | growthTimes?, seed? }
 *
 * A job (202, header location /api/jobs/:id) that simulates the plan's base with the candidate at each dose
 * (docs/model.md §14–§16; the mixture at a dose as the spectrum route builds it, on the plan's stored SI
 * inputs), dose after dose in the worker pool, progress over all doses, cancellable. Without doses it takes
 * the candidate's default bench-sheet series (sheetService.series: the sheet's own chooseSeries). The result
 * holds per dose the summary, the linear prediction with the mode's composition, and the frames downsampled
 * for JSON (1D: a kymograph; 2D: a few frames): each species' departure from its mean (density ÷ mean − 1, so the
 * tiny starting perturbation survives the rounding), 4 significant digits.
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { AnalysisResult } from '../../engine/analyze.js';
import { withDose, type Dosing } from '../../engine/planner.js';
import type { SimulationResult, SimulationSummary } from '../../engine/simulate/index.js';
import type { Mixture, Species } from '../../engine/types.js';
import type { SimulateTaskOptions } from '../../jobs/tasks.js';
import { quantity } from '../../schema/mixture.js';
import { keySchema } from '../../schema/shelf.js';
import { InputError } from '../../shelf/errors.js';
import type { PlanResult } from '../../shelf/plans.js';
import { NotFoundError } from '../../store/shelf.js';
import { DIMENSIONS } from '../../units/index.js';

/** The bounds of one request (its work budget): doses × cells × steps stays below about 1.5·10⁸ cell-steps. */
export const SIMULATE_BOUNDS = {
  doses: 12,
  points: { 1: { min: 32, max: 512, default: 128 }, 2: { min: 16, max: 64, default: 32 } },
  /** accepted steps per dose before the run stops (the summary then says step-limit) */
  maxSteps: { 1: 50_000, 2: 3_000 },
  growthTimes: { min: 1, max: 40, default: 12 },
  /** the longest simulated time one may ask for, s (30 days) */
  maxDuration: 30 * 86_400,
  /** stored: at most this many times × positions (1D), frames of points × points (2D) */
  kymograph: { times: 200, positions: 256 },
  frames2d: 12,
} as const;

const pow2 = (n: number) => Number.isInteger(n) && n > 0 && (n & (n - 1)) === 0;
const sig4 = (x: number) => (x === 0 || !Number.isFinite(x) ? 0 : Number(x.toPrecision(4)));

const bodySchema = z
  .strictObject({
    doses: z
      .array(quantity(DIMENSIONS.numberDensity, 'nonnegative', 'a dopant dose (number density)'))
      .min(1)
      .max(SIMULATE_BOUNDS.doses)
      .optional()
      .describe(`the doses to simulate (at most ${SIMULATE_BOUNDS.doses}; default: the candidate's default bench-sheet series, dose 0 included)`),
    dims: z.union([z.literal(1), z.literal(2)]).optional().describe('1: a line across the chamber (default); 2: a square of the chamber length'),
    points: z
      .number()
      .int()
      .optional()
      .describe(`cells per side, a power of two: 32 to 512 in 1D (default 128), 16 to 64 in 2D (default 32)`),
    duration: quantity(DIMENSIONS.time, 'positive', `the simulated time of every dose (at most ${SIMULATE_BOUNDS.maxDuration / 86_400} days)`).optional(),
    growthTimes: z
      .number()
      .min(SIMULATE_BOUNDS.growthTimes.min)
      .max(SIMULATE_BOUNDS.growthTimes.max)
      .optional()
      .describe(`instead of duration: this many growth times of each dose that grows (1 to 40, default 12); a stable dose runs as long as the longest of those (5 decay times when none grows)`),
    seed: z.number().int().min(0).max(2 ** 31 - 1).optional().describe('the seed of the starting perturbation (default 1)'),
  })
  .nullish();

export interface SimulatedDose {
  dose: number;
  /** dose ÷ the sheet's 1 × reference, when the doses are the sheet's series */
  factor: number | null;
  linear: { state: AnalysisResult['state']; growthRate: number; growthTime: number | null; wavelength: number | null; oscillationPeriod: number | null; composition: AnalysisResult['composition'] };
  summary: SimulationSummary;
  species: { id: string; mean: number; particleVolume: number }[];
  /** 1D: times (s), positions (m, cell centres), per species its departure from its mean, density ÷ mean − 1, at [time][position] */
  kymograph: { times: number[]; positions: number[]; deviation: number[][][] } | null;
  /** 2D: times (s), points per side, cell size (m), per species per frame density ÷ mean − 1, rows of y with x fastest */
  frames: { times: number[]; points: number; cellSize: number; deviation: number[][][] } | null;
}

/** The frames, downsampled and rounded for JSON (see SimulatedDose). */
export function shrink(result: SimulationResult, means: number[]): Pick<SimulatedDose, 'kymograph' | 'frames'> {
  const { frames, summary } = result;
  const n = frames.points;
  const M = frames.species.length;
  if (frames.dims === 1) {
    const T = frames.times.length;
    const keepT = Math.min(T, SIMULATE_BOUNDS.kymograph.times);
    const tIdx = Array.from({ length: keepT }, (_, j) => (keepT === 1 ? 0 : Math.round((j * (T - 1)) / (keepT - 1))));
    const bin = Math.max(1, Math.ceil(n / SIMULATE_BOUNDS.kymograph.positions));
    const P = Math.floor(n / bin);
    const positions = Array.from({ length: P }, (_, p) => sig4((p * bin + bin / 2) * summary.grid.cellSize));
    const deviation = Array.from({ length: M }, (_, a) =>
      tIdx.map((f) => {
        const d = frames.data[f]!;
        const row: number[] = [];
        for (let p = 0; p < P; p++) {
          let acc = 0;
          for (let i = p * bin; i < (p + 1) * bin; i++) acc += d[a * n + i]!;
          row.push(means[a]! > 0 ? sig4(acc / bin / means[a]! - 1) : 0);
        }
        return row;
      }),
    );
    return { kymograph: { times: tIdx.map((f) => sig4(frames.times[f]!)), positions, deviation }, frames: null };
  }
  const T = frames.times.length;
  const keepT = Math.min(T, SIMULATE_BOUNDS.frames2d);
  const tIdx = Array.from({ length: keepT }, (_, j) => (keepT === 1 ? 0 : Math.round((j * (T - 1)) / (keepT - 1))));
  const cells = n * n;
  const deviation = Array.from({ length: M }, (_, a) => tIdx.map((f) => Array.from(frames.data[f]!.subarray(a * cells, (a + 1) * cells), (v) => (means[a]! > 0 ? sig4(v / means[a]! - 1) : 0))));
  return { kymograph: null, frames: { times: tIdx.map((f) => sig4(frames.times[f]!)), points: n, cellSize: summary.grid.cellSize, deviation } };
}

export const formsRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  app.post('/api/plans/:id/candidates/:species/simulate', {
    schema: {
      tags: ['planner'],
      summary: "Start a job that simulates what forms past onset at each dose of a candidate's bench-sheet series (or the doses given)",
      description:
        "Answers 202 with the job (header location: /api/jobs/:id). For each dose, the plan's base with the candidate at that dose (on the plan's stored SI inputs, as the spectrum route builds it) is simulated with the nonlinear model of docs/model.md §14–§16 from a seeded random perturbation; the job's result is { plan, candidate, dims, points, seed, durationFrom, series: { from, note } | null, doses: [{ dose, factor, linear: { state, growthRate, growthTime, wavelength, oscillationPeriod, composition }, summary (as `brink simulate` prints it), species: [{ id, mean, particleVolume }], kymograph (1D: times, positions, deviation[species][time][position]) | null, frames (2D: times, points, cellSize, deviation[species][frame][y·points + x]) | null }] }, deviation = density ÷ the species' mean − 1, rounded to 4 significant digits, at most 200 times × 256 positions (1D) or 12 frames (2D). " +
        `Bounds (the work budget of one request): at most ${SIMULATE_BOUNDS.doses} doses; points a power of two, 32–512 in 1D, 16–64 in 2D; duration at most 30 days, or growthTimes 1–40; each dose stops after ${SIMULATE_BOUNDS.maxSteps[1]} steps in 1D, ${SIMULATE_BOUNDS.maxSteps[2]} in 2D (its summary then warns step-limit). Out of bounds: 400 before any job. A candidate that does not cross has no series: give doses.`,
      params: z.object({ id: z.coerce.number().int().min(1), species: keySchema }),
      body: bodySchema,
    },
    handler: async (req, reply) => {
      const body = req.body ?? {};
      const dims = body.dims ?? 1;
      const B = SIMULATE_BOUNDS.points[dims];
      const points = body.points ?? B.default;
      const problems: { path: string; message: string }[] = [];
      if (!pow2(points) || points < B.min || points > B.max) problems.push({ path: 'points', message: `in ${dims}D give a power of two from ${B.min} to ${B.max} cells per side` });
      if (body.duration && body.growthTimes !== undefined) problems.push({ path: 'duration', message: 'give duration or growthTimes, not both' });
      if (body.duration && body.duration.value > SIMULATE_BOUNDS.maxDuration) problems.push({ path: 'duration', message: `at most ${SIMULATE_BOUNDS.maxDuration / 86_400} days` });
      if (problems.length) throw new InputError(problems);

      const plan = app.plans.get(req.params.id) as { inputs: { base: Mixture; candidates: Species[] }; result: PlanResult; request: { dosing?: Dosing } };
      const dopant = plan.inputs.candidates.find((c) => c.id === req.params.species);
      if (!dopant || !plan.result.candidates.some((x) => x.species === req.params.species)) throw new NotFoundError(`plan ${req.params.id} has no candidate "${req.params.species}"`);
      const cand = plan.result.candidates.find((x) => x.species === req.params.species)!;
      let doses: number[];
      let ref: number | null = null;
      let series: { from: string; note: string } | null = null;
      if (body.doses) doses = [...new Set(body.doses.map((d) => d.value))].sort((a, b) => a - b);
      else {
        const chosen = app.sheets.series(req.params.id, req.params.species);
        doses = chosen.series;
        ref = chosen.ref;
        series = { from: chosen.seriesInfo.from, note: chosen.seriesInfo.note };
      }
      const cap = cand.cap.density;
      for (const x of doses) if (x > cap * (1 + 1e-9)) problems.push({ path: 'doses', message: `the dose ${(x * 1e-6).toPrecision(3)} per mL is above the candidate's dose cap of ${(cap * 1e-6).toPrecision(3)} per mL` });
      if (problems.length) throw new InputError(problems);
      const dosing: Dosing = plan.request.dosing ?? 'add';
      const seed = body.seed ?? 1;
      const growthTimes = body.duration ? null : (body.growthTimes ?? SIMULATE_BOUNDS.growthTimes.default);
      const mixtures = doses.map((x) => withDose(plan.inputs.base, dopant, x, dosing));

      const job = app.jobs.start(
        'simulate',
        async (ctx) => {
          const n = doses.length;
          // the linear prediction of every dose first (a moment each): it sets the durations in growth times
          const analyses: AnalysisResult[] = [];
          for (const mixture of mixtures) analyses.push(await app.pool.run('analyze', { mixture }, { ...ctx.runOptions, onProgress: () => undefined }));
          const grows = analyses.filter((a) => a.growthRate > 0).map((a) => growthTimes! / a.growthRate);
          const durationOf = (a: AnalysisResult): number | undefined => {
            if (body.duration) return body.duration.value;
            if (a.growthRate > 0) return growthTimes! / a.growthRate;
            if (grows.length) return Math.max(...grows);
            return undefined; // the engine's own: 5 decay times
          };
          const out: SimulatedDose[] = [];
          for (let i = 0; i < n; i++) {
            const a = analyses[i]!;
            const d = durationOf(a);
            const options: SimulateTaskOptions = { dims, points, seed, frames: dims === 1 ? SIMULATE_BOUNDS.kymograph.times : SIMULATE_BOUNDS.frames2d, maxSteps: SIMULATE_BOUNDS.maxSteps[dims], ...(d !== undefined ? { duration: Math.min(d, SIMULATE_BOUNDS.maxDuration) } : {}) };
            const label = `dose ${i + 1} of ${n}`;
            const result = await app.pool.run('simulate', { mixture: mixtures[i]!, options }, { ...ctx.runOptions, onProgress: (f, stage) => ctx.runOptions.onProgress?.((i + f) / n, `${label}: ${stage}`) });
            const means = mixtures[i]!.species.map((s) => s.density);
            out.push({
              dose: doses[i]!,
              factor: ref !== null && ref > 0 ? sig4(doses[i]! / ref) : null,
              linear: { state: a.state, growthRate: a.growthRate, growthTime: a.growthTime, wavelength: a.fastestMode.wavelength, oscillationPeriod: a.fastestMode.oscillationPeriod, composition: a.composition },
              summary: result.summary,
              species: mixtures[i]!.species.map((s) => ({ id: s.id, mean: s.density, particleVolume: (4 / 3) * Math.PI * s.radius ** 3 })),
              ...shrink(result, means),
            });
          }
          return { plan: req.params.id, candidate: dopant.id, dims, points, seed, durationFrom: body.duration ? 'given' : `${growthTimes} growth times`, series, doses: out };
        },
        { label: `what forms: plan ${req.params.id}, ${dopant.id}` },
      );
      reply.code(202).header('location', `/api/jobs/${job.id}`);
      return job;
    },
  });
};
