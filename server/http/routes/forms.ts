/**
 * What forms past onset, from a stored plan:
 *
 *   POST /api/plans/:id/candidates/:species/simulate   { doses?, dims?, chemicals?, points?, duration? | growthTimes?, seed? }
 *
 * A job (202, header location /api/jobs/:id) that simulates the plan's base with the candidate at each dose
 * (docs/model.md §14–§16; the mixture at a dose as the spectrum route builds it, on the plan's stored SI
 * inputs), dose after dose in the worker pool, progress over all doses, cancellable. Without doses it takes
 * the candidate's default bench-sheet series (sheetService.series: the sheet's own chooseSeries). The result
 * holds per dose the summary, the linear prediction with the mode's composition, and the pictures made compact
 * for JSON (shrink; 1D: a kymograph of 101 of the engine's 201 frames, evenly spaced in time, at ≤ 128
 * positions; 2D: 12 frames of ≤ 64 × 64 cells; cells averaged in blocks, which keeps each species' amount): each species' departure from its
 * mean (density ÷ mean − 1) as integers in ±999 times a scale per species and frame, so the tiny starting
 * perturbation keeps its digits. Each picture says what it holds of the simulated grid (block, simulated,
 * downsampled); the summary is measured on the full grid.
 */
import type { FastifyPluginAsync } from 'fastify';
import type { ZodTypeProvider } from 'fastify-type-provider-zod';
import { z } from 'zod';
import type { AnalysisResult } from '../../engine/analyze.js';
import { withDose, type Dosing } from '../../engine/planner.js';
import { presentSpecies, type SimulationResult, type SimulationSummary } from '../../engine/simulate/index.js';
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
  points: { 1: { min: 32, max: 512, default: 128 }, 2: { min: 32, max: 64, default: 32 } },
  /** accepted steps per dose before the run stops (the summary then says step-limit) */
  maxSteps: { 1: 50_000, 2: 3_000 },
  growthTimes: { min: 1, max: 40, default: 12 },
  /** the longest simulated time one may ask for, s (30 days) */
  maxDuration: 30 * 86_400,
  /**
   * What the job keeps for the pictures (see shrink): 1D, the engine stores 201 frames (its summary — dominant
   * length, bands — reads all of them) and the kymograph keeps 101 evenly spaced in time at ≤ 128 positions, each
   * the mean of a block of cells; 2D, 12 frames of ≤ 64 × 64 cells, each the mean of a block of cells.
   */
  kymograph: { engineFrames: 201, times: 101, positions: 128 },
  frames2d: { frames: 12, points: 64 },
  /** the deviations are stored as integers in ±QUANTA times a scale per species and frame */
  quanta: 999,
} as const;

const pow2 = (n: number) => Number.isInteger(n) && n > 0 && (n & (n - 1)) === 0;
const sig4 = (x: number) => (x === 0 || !Number.isFinite(x) ? 0 : Number(x.toPrecision(4)));

/** The smallest number of 3 significant digits ≥ x > 0. */
function up3(x: number): number {
  const p = 10 ** (Math.floor(Math.log10(x)) - 2);
  let s = Number((Math.ceil(x / p - 1e-9) * p).toPrecision(3));
  if (s < x) s = Number(((Math.round(s / p) + 1) * p).toPrecision(3));
  return s;
}

/**
 * One row of departures as integers and a scale: value × scale = the departure to within scale ÷ 2, where
 * scale (3 significant digits) makes the row's largest |departure| about ±QUANTA. A row that is all zero
 * (a species absent at this dose) has scale 0.
 */
export function quantise(row: ArrayLike<number>): { scale: number; values: number[] } {
  let big = 0;
  for (let i = 0; i < row.length; i++) big = Math.max(big, Math.abs(row[i]!));
  if (!(big > 0) || !Number.isFinite(big)) return { scale: 0, values: Array.from({ length: row.length }, () => 0) };
  const Q = SIMULATE_BOUNDS.quanta;
  const scale = up3(big / Q);
  return { scale, values: Array.from(row, (v) => Math.max(-Q, Math.min(Q, Math.round(v / scale))) || 0) };
}

/** The departures decoded: deviation[species][frame][cell] = values × scale. */
export function decode(d: { scale: number[][]; values: number[][][] }): number[][][] {
  return d.values.map((frames, m) => frames.map((row, j) => row.map((q) => q * d.scale[m]![j]!)));
}

/**
 * Which of the stored frames to keep: at most `keep`, the ones nearest to evenly spaced times from the first to
 * the last (both kept). The engine's frames are evenly spaced but for one it adds at the end of the run when
 * that falls between two (a run stopped at its step limit, or a last step a rounding short), so picking by
 * index would not be even in time.
 */
export function pickFrames(times: number[], keep: number): number[] {
  const T = times.length;
  if (T <= keep) return Array.from({ length: T }, (_, j) => j);
  const t0 = times[0]!;
  const t1 = times[T - 1]!;
  const out: number[] = [];
  let i = 0;
  for (let j = 0; j < keep; j++) {
    const target = t0 + ((t1 - t0) * j) / (keep - 1);
    while (i + 1 < T && Math.abs(times[i + 1]! - target) <= Math.abs(times[i]! - target)) i++;
    if (out[out.length - 1] !== i) out.push(i);
  }
  return out;
}

const bodySchema = z
  .strictObject({
    doses: z
      .array(quantity(DIMENSIONS.numberDensity, 'nonnegative', 'a dopant dose (number density)'))
      .min(1)
      .max(SIMULATE_BOUNDS.doses)
      .optional()
      .describe(`the doses to simulate (at most ${SIMULATE_BOUNDS.doses}; default: the candidate's default bench-sheet series, dose 0 included)`),
    dims: z.union([z.literal(1), z.literal(2)]).optional().describe('1: a line across the chamber (default); 2: a square of the chamber length'),
    chemicals: z
      .enum(['quasi-static', 'dynamic'])
      .optional()
      .describe("'quasi-static' (default): the chemical fields follow the particles at once, as in the linear prediction; 'dynamic': they evolve in time (slower runs; docs/model.md §14)"),
    points: z
      .number()
      .int()
      .optional()
      .describe(`cells per side, a power of two: 32 to 512 in 1D (default 128), 32 to 64 in 2D (default 32; a 16 × 16 grid made single bright cells read as clusters)`),
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

/**
 * The departures of a stored picture: for species m at stored frame j, density ÷ the species' mean − 1 at
 * each shown cell = values[m][j][i] × scale[m][j] (values integers in ±999, scale of 3 significant digits:
 * 1/999 of that frame's largest departure, so the tiny starting perturbation keeps its digits too).
 */
export interface Departures {
  scale: number[][];
  values: number[][][];
}
/** How much of what was simulated a picture holds. */
export interface Shown {
  /** simulated cells per shown cell along each axis (1: as simulated) */
  block: number;
  /** the simulated grid (cells per side) and the frames the engine stored */
  simulated: { points: number; times: number };
  /** the same in words */
  downsampled: string;
}

export interface SimulatedDose {
  dose: number;
  /** dose ÷ the sheet's 1 × reference, when the doses are the sheet's series */
  factor: number | null;
  linear: { state: AnalysisResult['state']; growthRate: number; growthTime: number | null; wavelength: number | null; oscillationPeriod: number | null; composition: AnalysisResult['composition'] };
  summary: SimulationSummary;
  species: { id: string; mean: number; particleVolume: number }[];
  /** 1D: times (s), positions (m, centres of the shown cells), per species at [time][position] */
  kymograph: ({ times: number[]; positions: number[]; deviation: Departures } & Shown) | null;
  /** 2D: times (s), shown cells per side, their size (m), per species per frame, rows of y with x fastest */
  frames: ({ times: number[]; points: number; cellSize: number; deviation: Departures } & Shown) | null;
}

/**
 * The frames made compact for JSON (see SimulatedDose): a subset of the stored times (pickFrames), the cells
 * averaged in blocks (every species keeps its amount: the mean of the shown cells is the mean of the simulated
 * ones, and a narrow cluster is widened and lowered, never missed), each species' departure from its mean
 * quantised per frame (quantise).
 */
export function shrink(result: SimulationResult, means: number[]): Pick<SimulatedDose, 'kymograph' | 'frames'> {
  const { frames, summary } = result;
  const n = frames.points;
  const dims = frames.dims;
  const M = frames.species.length;
  const T = frames.times.length;
  const tIdx = pickFrames(frames.times, dims === 1 ? SIMULATE_BOUNDS.kymograph.times : SIMULATE_BOUNDS.frames2d.frames);
  const bound = dims === 1 ? SIMULATE_BOUNDS.kymograph.positions : SIMULATE_BOUNDS.frames2d.points;
  const bin = Math.max(1, Math.ceil(n / bound));
  if (n % bin !== 0) throw new Error(`shrink: ${n} cells do not split into blocks of ${bin}`);
  const P = n / bin;
  const cells = n ** dims;
  const deviation: Departures = { scale: [], values: [] };
  const row = new Float64Array(P ** dims);
  for (let a = 0; a < M; a++) {
    const scales: number[] = [];
    const values: number[][] = [];
    for (const f of tIdx) {
      const d = frames.data[f]!.subarray(a * cells, (a + 1) * cells);
      row.fill(0);
      if (dims === 1) for (let i = 0; i < n; i++) row[Math.floor(i / bin)]! += d[i]!;
      else for (let y = 0; y < n; y++) for (let x = 0; x < n; x++) row[Math.floor(y / bin) * P + Math.floor(x / bin)]! += d[y * n + x]!;
      const per = bin ** dims * means[a]!;
      for (let i = 0; i < row.length; i++) row[i] = means[a]! > 0 ? row[i]! / per - 1 : 0;
      const q = quantise(row);
      scales.push(q.scale);
      values.push(q.values);
    }
    deviation.scale.push(scales);
    deviation.values.push(values);
  }
  const times = tIdx.map((f) => sig4(frames.times[f]!));
  const when = tIdx.length === T ? `all ${T} stored times` : `${tIdx.length} of the ${T} stored times, evenly spaced`;
  const simulated = { points: n, times: T };
  if (dims === 1) {
    const where = bin === 1 ? `all ${n} simulated cells` : `${P} positions, each the mean of ${bin} of the ${n} simulated cells`;
    const positions = Array.from({ length: P }, (_, p) => sig4((p * bin + bin / 2) * summary.grid.cellSize));
    return { kymograph: { times, positions, deviation, block: bin, simulated, downsampled: `${when}; ${where}` }, frames: null };
  }
  const where = bin === 1 ? `all ${n} × ${n} simulated cells` : `${P} × ${P} cells, each the mean of ${bin} × ${bin} of the ${n} × ${n} simulated cells`;
  return { kymograph: null, frames: { times, points: P, cellSize: summary.grid.cellSize * bin, deviation, block: bin, simulated, downsampled: `${when}; ${where}` } };
}

export const formsRoutes: FastifyPluginAsync = async (base) => {
  const app = base.withTypeProvider<ZodTypeProvider>();
  app.post('/api/plans/:id/candidates/:species/simulate', {
    schema: {
      tags: ['planner'],
      summary: "Start a job that simulates what forms past onset at each dose of a candidate's bench-sheet series (or the doses given)",
      description:
        "Answers 202 with the job (header location: /api/jobs/:id). For each dose, the plan's base with the candidate at that dose (on the plan's stored SI inputs, as the spectrum route builds it) is simulated with the nonlinear model of docs/model.md §14–§16 from a seeded random perturbation; the job's result is { plan, candidate, dims, points, seed, chemicals, durationFrom, series: { from, note } | null, doses: [{ dose, factor, linear: { state, growthRate, growthTime, wavelength, oscillationPeriod, composition }, summary (as `brink simulate` prints it), species: [{ id, mean, particleVolume }], kymograph (1D: times, positions, block, simulated, downsampled, deviation) | null, frames (2D: times, points, cellSize, block, simulated, downsampled, deviation) | null }] }. " +
        "The pictures are made compact: 1D keeps 101 of the engine's 201 stored times (those nearest to evenly spaced times; the engine adds a frame at the end of a run that stops between two) at ≤ 128 positions, 2D 12 frames of ≤ 64 × 64 cells; a shown cell is the mean of block (1D) or block × block (2D) simulated cells, so each species keeps its amount; points and cellSize are those of the shown cells, simulated: { points, times } the simulated cells per side and the engine's stored frames, downsampled the same in words; the summary (clusters, dominant length, bands, growth) is measured on the full grid and every stored frame. " +
        "deviation: { scale[species][frame], values[species][frame][cell] }: density ÷ the species' mean − 1 = values × scale to within scale ÷ 2; values are integers in ±999, scale (3 significant digits) is 1/999 of that frame's largest departure (0 for a species absent at the dose); cells are positions in 1D, rows of y with x fastest in 2D. " +
        `Bounds (the work budget of one request): at most ${SIMULATE_BOUNDS.doses} doses; points a power of two, 32–512 in 1D, 32–64 in 2D; duration at most 30 days, or growthTimes 1–40; each dose stops after ${SIMULATE_BOUNDS.maxSteps[1]} steps in 1D, ${SIMULATE_BOUNDS.maxSteps[2]} in 2D (its summary then warns step-limit). Out of bounds: 400 before any job. A candidate that does not cross has no series: give doses.`,
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
      const chemicals = body.chemicals ?? 'quasi-static';
      const growthTimes = body.duration ? null : (body.growthTimes ?? SIMULATE_BOUNDS.growthTimes.default);
      const mixtures = doses.map((x) => withDose(plan.inputs.base, dopant, x, dosing));

      const job = app.jobs.start(
        'simulate',
        async (ctx) => {
          const n = doses.length;
          // the linear prediction of every dose first (a moment each): it sets the durations in growth times
          const analyses: AnalysisResult[] = [];
          // of the species present: a dose-0 control has no dopant particles, whose trace modes it would otherwise list
          for (const mixture of mixtures) analyses.push(await app.pool.run('analyze', { mixture: presentSpecies(mixture) }, { ...ctx.runOptions, onProgress: () => undefined }));
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
            const options: SimulateTaskOptions = { dims, points, seed, chemicals, frames: dims === 1 ? SIMULATE_BOUNDS.kymograph.engineFrames : SIMULATE_BOUNDS.frames2d.frames, maxSteps: SIMULATE_BOUNDS.maxSteps[dims], ...(d !== undefined ? { duration: Math.min(d, SIMULATE_BOUNDS.maxDuration) } : {}) };
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
          return { plan: req.params.id, candidate: dopant.id, dims, points, seed, chemicals, durationFrom: body.duration ? 'given' : `${growthTimes} growth times`, series, doses: out };
        },
        { label: `what forms: plan ${req.params.id}, ${dopant.id}` },
      );
      reply.code(202).header('location', `/api/jobs/${job.id}`);
      return job;
    },
  });
};
