/**
 * A fit from raw data: read the table, check its columns, convert to SI, run
 * the engine's fit. Shared by the HTTP endpoints and `brink fit`.
 *
 * An MSD fit takes either an MSD curve (`lag [s], msd [um^2]`, optional sd) or
 * tracked positions (`track, t [s], x [um], y [um]`, optional `z [um]`): a
 * first column named `track` (or `track id`, `particle`) selects the tracks,
 * as does `options.tracks: true`. From tracks the MSD and its covariance
 * between lags come from engine/fit/tracks.ts and the fit is generalised least
 * squares (`weighting: 'gls-covariance'`). A curve without sd is weighted by the
 * model of its variance, ∝ MSD(t)² t (`weighting: 'relative-variance-model'`,
 * engine/fit/models.ts), unless `options.weighting: 'unweighted'` asks for
 * equal weights. `standardErrorsHonest` says whether the standard errors
 * account for the correlation between lags (only GLS from tracks does).
 */
import { z } from 'zod';
import { AVOGADRO } from '../engine/constants.js';
import { fitDrift, fitKinetics, fitMsd, MSD_MODELS, msdDimension, msdParameterCount, type FitResult, type MsdModel } from '../engine/fit/models.js';
import { msdFromTracks, TRACKS_DEFAULT_LAGS, TRACKS_MAX_LAGS, TRACKS_MAX_ROWS, type Track } from '../engine/fit/tracks.js';
import { EngineInputError } from '../engine/types.js';
import { quantity, issueList } from '../schema/mixture.js';
import { InputError, type Problem } from '../shelf/errors.js';
import { DIMENSIONS } from '../units/index.js';
import { readTable, siColumns, type Table } from './input.js';

export type FitMethod = 'msd' | 'kinetics' | 'drift';
export const FIT_METHODS: FitMethod[] = ['msd', 'kinetics', 'drift'];

export const fitOptionsSchemas = {
  msd: z.strictObject({
    model: z.enum(MSD_MODELS as [MsdModel, ...MsdModel[]]).default('passive-2d'),
    offset: z.boolean().default(false),
    radius: quantity(DIMENSIONS.length, 'positive', 'radius for a rotation time fixed by Stokes–Einstein–Debye').optional(),
    /** for a stored measurement: fix the rotation time by Stokes–Einstein–Debye for the species' own radius */
    rotationFromSpeciesRadius: z.boolean().default(false),
    temperature: quantity(DIMENSIONS.temperature, 'positive', 'temperature (default 25 °C)').optional(),
    /** the data are tracked positions (default: when the first column is named track) */
    tracks: z.boolean().optional(),
    /** tracks: the largest lag (default a quarter of the median track duration) */
    maxLag: quantity(DIMENSIONS.time, 'positive', 'largest lag time for an MSD from tracks').optional(),
    /** tracks: number of log-spaced lags */
    lags: z.number().int().min(2).max(TRACKS_MAX_LAGS).optional().describe(`number of log-spaced lags (default ${TRACKS_DEFAULT_LAGS})`),
    /**
     * tracks: generalised least squares with the MSD's covariance (default); a curve without sd: the
     * variance model MSD² t (default); either: equal weights ('unweighted', for comparison)
     */
    weighting: z.enum(['gls-covariance', 'relative-variance-model', 'unweighted']).optional(),
  }),
  kinetics: z.strictObject({
    particleDensity: quantity(DIMENSIONS.numberDensity, 'positive', 'number density of particles in the assay').optional(),
    enzymeConcentration: quantity(DIMENSIONS.concentration, 'positive', 'molar concentration of enzyme in the assay').optional(),
  }),
  drift: z.strictObject({}),
} as const;

export type FitOptions = { [K in FitMethod]: z.output<(typeof fitOptionsSchemas)[K]> };

/** Validate fit options; InputError with paths `options.…`. */
export function parseFitOptions<M extends FitMethod>(method: M, raw: unknown): FitOptions[M] {
  const r = fitOptionsSchemas[method].safeParse(raw ?? {});
  if (!r.success) throw new InputError(issueList(r.error, ['options']));
  return r.data as FitOptions[M];
}

function where(t: Table, row: number, col: number): string {
  return `line ${t.lines[row] ?? row + 2}, column ${col + 1} (${t.columns[col]?.header ?? ''})`;
}

function engineErrors<T>(fn: () => T): T {
  try {
    return fn();
  } catch (e) {
    if (e instanceof EngineInputError) throw new InputError([{ path: e.path, message: e.reason }]);
    throw e;
  }
}

const TRACK_HEADER = /^(track|track[ _-]?id|particle)$/i;

/** True when a table's first column names a track (a table of positions, not an MSD curve). */
export function looksLikeTracks(t: Table): boolean {
  return t.columns.length >= 4 && TRACK_HEADER.test(t.columns[0]!.name);
}

export interface TracksSummary {
  tracks: number;
  positions: number;
  /** s */
  frameInterval: number;
  lagFrames: number[];
  /** standard deviation of each pooled MSD point (m²), from the covariance */
  sd: number[];
  units: 'tracks' | 'blocks';
  unitCount: number;
  blockFrames?: number;
  hartlapFactor: number;
  covarianceSource: string;
}

type RunResult = FitResult & {
  input: { columns: { header: string; unit: string | null }[]; rows: number };
  covarianceSource?: string;
  tracks?: TracksSummary;
  /**
   * msd: false when the standard errors ignore the correlation between lags (a curve, or tracks fitted
   * unweighted) and so understate the uncertainty; true for GLS with the covariance from tracks
   */
  standardErrorsHonest?: boolean;
  /**
   * the standard deviation of each point as the data gave it (an sd column; for tracks, from the
   * covariance), in the units of the residuals: for error bars, whether or not the fit weighted by it
   */
  sd?: number[];
};

/** Group position rows by track, on a regular frame grid; problems name the line. */
function readTracks(t: Table, dims: 2 | 3): { tracks: Track[]; dt: number } {
  const c = siColumns(t, [
    { role: 'track', dimension: {}, unitless: true },
    { role: 'time', dimension: DIMENSIONS.time },
    { role: 'x', dimension: DIMENSIONS.length },
    { role: 'y', dimension: DIMENSIONS.length },
  ], dims === 3 ? [{ role: 'z', dimension: DIMENSIONS.length }] : []);
  if (dims === 3 && !c.z) throw new InputError([{ path: 'line 1', message: 'a 3D model needs a fifth column z, e.g. "z [um]"' }]);
  const roles = dims === 3 ? ['x', 'y', 'z'] : ['x', 'y'];
  const byTrack = new Map<number, number[]>();
  c.track!.values.forEach((id, i) => {
    if (!byTrack.has(id)) byTrack.set(id, []);
    byTrack.get(id)!.push(i);
  });
  const time = c.time!.values;
  const problems: Problem[] = [];
  // the frame interval: the median positive step between consecutive times within tracks
  const steps: number[] = [];
  for (const rows of byTrack.values()) {
    rows.sort((a, b) => time[a]! - time[b]!);
    for (let j = 1; j < rows.length; j++) {
      const d = time[rows[j]!]! - time[rows[j - 1]!]!;
      if (d > 0) steps.push(d);
      else problems.push({ path: where(t, rows[j]!, 1), message: `track ${c.track!.values[rows[j]!]} has two positions at the same time` });
    }
  }
  if (problems.length > 0) throw new InputError(problems.slice(0, 20));
  if (steps.length === 0) throw new InputError([{ path: 'data', message: 'no track has two positions: nothing to compute an MSD from' }]);
  steps.sort((a, b) => a - b);
  const dt = Number(steps[Math.floor(steps.length / 2)]!.toPrecision(12)); // a grid read back from text: drop the rounding noise
  const tracks: Track[] = [];
  for (const [id, rows] of byTrack) {
    const t0 = time[rows[0]!]!;
    const frame = rows.map((i) => {
      const f = (time[i]! - t0) / dt;
      const k = Math.round(f);
      if (Math.abs(f - k) > 0.01) problems.push({ path: where(t, i, 1), message: `times must lie on a regular grid: ${t.columns[1]!.values[i]} is not a whole number of frames (${dt} s) after the track's first time` });
      return k;
    });
    tracks.push({ id: String(id), frame, coords: roles.map((r) => rows.map((i) => c[r]!.values[i]!)) });
  }
  if (problems.length > 0) throw new InputError(problems.slice(0, 20));
  return { tracks, dt };
}

/** Run a fit on raw data (CSV text or a JSON table) with validated options. */
export function runFit<M extends FitMethod>(method: M, data: unknown, options: FitOptions[M]): RunResult {
  const t = readTable(data);
  const problems: Problem[] = [];
  const input = { columns: t.columns.map((c) => ({ header: c.header, unit: c.unit })), rows: t.lines.length };
  if (t.lines.length > TRACKS_MAX_ROWS) throw new InputError([{ path: 'data', message: `at most ${TRACKS_MAX_ROWS} data rows in one fit, got ${t.lines.length}` }]);
  if (method === 'msd') {
    const o = options as FitOptions['msd'];
    if (o.rotationFromSpeciesRadius && !o.radius) {
      throw new InputError([{ path: 'options.rotationFromSpeciesRadius', message: "needs a species: store the data as a measurement of one (POST /api/species/:id/measurements), or give options.radius" }]);
    }
    const engineOptions = {
      model: o.model,
      offset: o.offset,
      ...(o.radius ? { radius: o.radius.value } : {}),
      ...(o.temperature ? { temperature: o.temperature.value } : {}),
    };
    if (o.tracks ?? looksLikeTracks(t)) {
      if (o.weighting === 'relative-variance-model') {
        throw new InputError([{ path: 'options.weighting', message: "relative-variance-model is for an MSD curve without sd; tracked positions are fitted with their covariance ('gls-covariance') or 'unweighted'" }]);
      }
      const dims = msdDimension(o.model);
      const { tracks, dt } = readTracks(t, dims);
      const m = engineErrors(() => msdFromTracks(tracks, { dt, ...(o.lags !== undefined ? { lags: o.lags } : {}), minLags: msdParameterCount(o.model, Boolean(o.radius), Boolean(o.offset)) + 2, ...(o.maxLag ? { maxLagFrames: Math.max(1, Math.round(o.maxLag.value / dt)) } : {}) }));
      const gls = (o.weighting ?? 'gls-covariance') === 'gls-covariance';
      const fit = engineErrors(() => fitMsd(m.lag, m.msd, { ...engineOptions, ...(gls ? { covariance: m.covariance, covarianceSamples: m.unitCount } : {}) }));
      const notes = [`MSD computed from ${m.tracks} tracks (${m.positions} positions, frame interval ${dt} s) at ${m.lag.length} lags, all overlapping windows.`, ...m.notes];
      if (dims === 2 && t.columns.length >= 5) notes.push('a z column is present but the model is two-dimensional: x and y only were used');
      if (!gls) notes.push('unweighted on purpose (options.weighting): the lags are correlated, so these standard errors understate the uncertainty.');
      else if (fit.residualStandardError > 1.5 && fit.dof > 0) notes.push(`reduced chi-square ${(fit.residualStandardError ** 2).toPrecision(3)} > 2: the model does not describe these data within their own scatter.`);
      return {
        ...fit,
        notes: [...notes, ...fit.notes],
        input,
        ...(gls ? { covarianceSource: m.covarianceSource } : {}),
        standardErrorsHonest: gls,
        sd: m.sd,
        tracks: {
          tracks: m.tracks,
          positions: m.positions,
          frameInterval: dt,
          lagFrames: m.lagFrames,
          sd: m.sd,
          units: m.units,
          unitCount: m.unitCount,
          ...(m.blockFrames !== undefined ? { blockFrames: m.blockFrames } : {}),
          hartlapFactor: m.hartlapFactor,
          covarianceSource: m.covarianceSource,
        },
      };
    }
    const c = siColumns(t, [
      { role: 'lag time', dimension: DIMENSIONS.time },
      { role: 'mean-squared displacement', dimension: { length: 2 } },
    ], [{ role: 'sd', dimension: { length: 2 } }]);
    const lag = c['lag time']!.values;
    const msd = c['mean-squared displacement']!.values;
    lag.forEach((x, i) => {
      if (!(x > 0)) problems.push({ path: where(t, i, 0), message: `lag times must be positive, got ${t.columns[0]!.values[i]}` });
      else if (i > 0 && !(x > lag[i - 1]!)) problems.push({ path: where(t, i, 0), message: 'lag times must increase from row to row' });
    });
    msd.forEach((y, i) => {
      if (y < 0) problems.push({ path: where(t, i, 1), message: 'a mean-squared displacement cannot be negative' });
    });
    const sd = c.sd?.values;
    sd?.forEach((s, i) => {
      if (!(s > 0)) problems.push({ path: where(t, i, 2), message: 'standard deviations must be positive' });
    });
    if (problems.length > 0) throw new InputError(problems);
    if (o.weighting === 'gls-covariance') {
      throw new InputError([{ path: 'options.weighting', message: "gls-covariance needs tracked positions (track, t, x, y); an MSD curve is weighted by its sd column, by the variance model (default) or 'unweighted'" }]);
    }
    const unweighted = o.weighting === 'unweighted';
    const useSd = sd !== undefined && !unweighted;
    const fit = engineErrors(() => fitMsd(lag, msd, { ...engineOptions, ...(useSd ? { sd } : {}), ...(!useSd && !unweighted ? { varianceModel: true } : {}) }));
    const tracksOnly = (['maxLag', 'lags'] as const).filter((k) => o[k] !== undefined);
    if (tracksOnly.length > 0) fit.notes.push(`options ${tracksOnly.join(', ')} apply to tracked positions only; this is an MSD curve, so they were not used.`);
    if (sd && unweighted) fit.notes.push('the sd column was not used: equal weights were asked for (options.weighting unweighted).');
    fit.notes.push(
      `${useSd ? 'weighted by 1/sd² lag by lag' : unweighted ? 'unweighted on purpose (options.weighting)' : 'weighted by the variance model'}: an MSD curve carries no covariance between its lags, and those of overlapping windows are strongly correlated, so the standard errors understate the uncertainty (standardErrorsHonest: false; on a simulated single track with 400 consecutive lags, by a factor of 7 to 30); fit the tracked positions (track, t, x, y) for honest ones.`,
    );
    return { ...fit, input, standardErrorsHonest: false, ...(sd ? { sd } : {}) };
  }
  if (method === 'kinetics') {
    const o = options as FitOptions['kinetics'];
    const c = siColumns(t, [
      { role: 'substrate concentration', dimension: DIMENSIONS.concentration, unitless: true },
      { role: 'initial rate', dimension: { amount: 1, length: -3, time: -1 }, unitless: true },
    ], [{ role: 'sd', dimension: { amount: 1, length: -3, time: -1 }, unitless: true }]);
    const conc = c['substrate concentration']!;
    const rate = c['initial rate']!;
    conc.values.forEach((x, i) => {
      if (x < 0) problems.push({ path: where(t, i, 0), message: 'a concentration cannot be negative' });
    });
    if (problems.length > 0) throw new InputError(problems);
    let particleDensity: number | undefined = o.particleDensity?.value;
    if (o.enzymeConcentration) particleDensity = o.enzymeConcentration.value * AVOGADRO;
    if (particleDensity !== undefined && rate.unit === null) {
      throw new InputError([{ path: `line 1, column 2 (${t.columns[1]!.header})`, message: 'a per-particle turnover needs the rate in units of concentration/time, e.g. "rate [uM/s]"' }]);
    }
    return {
      ...engineErrors(() =>
        fitKinetics(conc.values, rate.values, {
          ...(particleDensity !== undefined ? { particleDensity } : {}),
          ...(c.sd ? { sd: c.sd.values } : {}),
          concentrationUnit: conc.unit === null ? `${t.columns[0]!.name} (as in the file)` : 'mol/m^3',
          rateUnit: rate.unit === null ? `${t.columns[1]!.name} (as in the file)` : 'mol/(m^3*s)',
        }),
      ),
      input,
      ...(c.sd ? { sd: c.sd.values } : {}),
    };
  }
  const c = siColumns(t, [
    { role: 'concentration gradient', dimension: { amount: 1, length: -4 } },
    { role: 'drift velocity', dimension: { length: 1, time: -1 } },
  ], [{ role: 'sd', dimension: { length: 1, time: -1 } }]);
  return { ...engineErrors(() => fitDrift(c['concentration gradient']!.values, c['drift velocity']!.values, c.sd?.values)), input, ...(c.sd ? { sd: c.sd.values } : {}) };
}
