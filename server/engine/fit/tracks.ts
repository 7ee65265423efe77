/**
 * The mean-squared displacement of tracked particles, with its covariance
 * between lags, for a generalised least-squares fit (docs/references.md: Qian,
 * Sheetz & Elson 1991 on why the time-averaged MSD of overlapping windows has
 * strongly correlated lags).
 *
 * Per track, positions on a regular time grid (gaps allowed: a window needs
 * both of its frames). For each lag k·Δt the time average over all overlapping
 * windows of one *unit* (a track, or a block of one) is m_u(k), with n_u(k)
 * windows; the pooled MSD is the window-weighted mean
 *   M(k) = Σ_u n_u(k) m_u(k) / Σ_u n_u(k).
 * Units are independent (different particles, or blocks of one particle far
 * apart in time), so the covariance of M between lags is estimated from the
 * scatter of the units — the empirical covariance of a weighted mean:
 *   C_ab = U/(U − 1) Σ_u w_ua w_ub (m_ua − M_a)(m_ub − M_b),  w_ua = n_ua / Σ_u n_ua.
 * No model of the motion is assumed (the Qian et al. closed form holds for
 * pure diffusion only; active particles need the data's own covariance).
 * An inverse of an estimated covariance is biased high; the fit uses
 * C × (U − 1)/(U − M − 2) (Hartlap, Simon & Schneider 2007, from memory; see
 * docs/references.md), which needs U ≥ M + 3 and is asked here to keep the
 * factor ≥ 1/2: U ≥ 2M + 4. The fit then widens the parameters' standard
 * errors by the Dodelson–Schneider factor for a noisy covariance (fitMsd's
 * `covarianceSamples`).
 *
 * Units: the tracks, when there are enough of them; otherwise every track is
 * cut into blocks of B ≥ 4 × the largest lag frames (windows never cross a
 * block edge), and the output says so. Blocks of one particle are only
 * approximately independent when B is long against its correlation time.
 */
import { EngineInputError } from '../types.js';

/** Most position rows one tracks fit accepts. */
export const TRACKS_MAX_ROWS = 500_000;
/** Most lags in one tracks fit (the covariance is M × M). */
export const TRACKS_MAX_LAGS = 40;
/** Default number of lags (log-spaced from one frame to the largest lag). */
export const TRACKS_DEFAULT_LAGS = 16;

export interface Track {
  /** the track's own label, for messages */
  id: string;
  /** frame index of each position (integers, increasing) */
  frame: number[];
  /** positions, one array per coordinate (m) */
  coords: number[][];
}

export interface TrackMsdOptions {
  /** frame interval (s) */
  dt: number;
  /** largest lag in frames (default: a quarter of the median track length) */
  maxLagFrames?: number;
  /** number of lags (default TRACKS_DEFAULT_LAGS, fewer when the data cannot support them) */
  lags?: number;
  /** fewest lags acceptable (default 3): the model's parameters plus some */
  minLags?: number;
}

export interface TrackMsd {
  /** lag times (s) */
  lag: number[];
  lagFrames: number[];
  /** pooled MSD (m²) */
  msd: number[];
  /** covariance of the pooled MSD between lags (m⁴), Hartlap-corrected for use in a fit */
  covariance: number[][];
  /** the empirical covariance before the correction */
  empiricalCovariance: number[][];
  /** √ of the diagonal of `covariance` (m²), for error bars */
  sd: number[];
  units: 'tracks' | 'blocks';
  unitCount: number;
  /** block length in frames, for units 'blocks' */
  blockFrames?: number;
  tracks: number;
  positions: number;
  hartlapFactor: number;
  /** a sentence for the output: how the covariance was estimated */
  covarianceSource: string;
  notes: string[];
}

/** Log-spaced distinct integer lags from 1 to maxK, at most `count`. */
function lagGrid(maxK: number, count: number): number[] {
  const out = new Set<number>();
  for (let i = 0; i < count; i++) out.add(Math.max(1, Math.round(Math.pow(maxK, count > 1 ? i / (count - 1) : 1))));
  return [...out].sort((a, b) => a - b);
}

interface Unit {
  frame: number[];
  coords: number[][];
}

/** Σ over windows of |x(f + k) − x(f)|² and their count, for each lag k, within one unit. */
function unitSums(u: Unit, lags: number[]): { sum: number[]; count: number[] } {
  const index = new Map<number, number>();
  u.frame.forEach((f, i) => index.set(f, i));
  const sum = lags.map(() => 0);
  const count = lags.map(() => 0);
  lags.forEach((k, j) => {
    for (let i = 0; i < u.frame.length; i++) {
      const other = index.get(u.frame[i]! + k);
      if (other === undefined) continue;
      let r2 = 0;
      for (const c of u.coords) r2 += (c[other]! - c[i]!) ** 2;
      sum[j]! += r2;
      count[j]!++;
    }
  });
  return { sum, count };
}

/**
 * Pooled MSD of tracks and its covariance between lags (file header).
 * @throws EngineInputError when there are too few tracks or frames for the lags asked
 */
export function msdFromTracks(tracks: Track[], o: TrackMsdOptions): TrackMsd {
  if (!(o.dt > 0)) throw new EngineInputError('dt', 'the frame interval must be positive');
  const positions = tracks.reduce((a, t) => a + t.frame.length, 0);
  if (positions > TRACKS_MAX_ROWS) throw new EngineInputError('data', `a tracks fit takes at most ${TRACKS_MAX_ROWS} positions, got ${positions}`);
  const usable = tracks.filter((t) => t.frame.length >= 2);
  if (usable.length === 0) throw new EngineInputError('data', 'no track has two positions: nothing to compute an MSD from');
  const spans = usable.map((t) => t.frame[t.frame.length - 1]! - t.frame[0]! + 1).sort((a, b) => a - b);
  const median = spans[Math.floor(spans.length / 2)]!;
  const notes: string[] = [];
  const wanted = o.lags ?? TRACKS_DEFAULT_LAGS;
  if (!(Number.isInteger(wanted) && wanted >= 2 && wanted <= TRACKS_MAX_LAGS)) throw new EngineInputError('lags', `between 2 and ${TRACKS_MAX_LAGS} lags, got ${wanted}`);
  const need = (m: number) => 2 * m + 4;
  let maxK = o.maxLagFrames ?? Math.max(1, Math.floor(median / 4));
  if (!(Number.isInteger(maxK) && maxK >= 1)) throw new EngineInputError('maxLag', `the largest lag must be at least one frame, got ${maxK}`);
  let lags = lagGrid(maxK, wanted);
  let units: Unit[];
  let kind: 'tracks' | 'blocks' = 'tracks';
  let blockFrames: number | undefined;
  if (usable.length >= need(lags.length)) units = usable;
  else {
    // too few tracks for this many lags: blocks of B = 4 maxK frames
    if (o.maxLagFrames === undefined) {
      const total = spans.reduce((a, b) => a + b, 0);
      maxK = Math.max(1, Math.min(maxK, Math.floor(total / (4 * need(lags.length)))));
      lags = lagGrid(maxK, wanted);
    }
    blockFrames = 4 * maxK;
    const B = blockFrames;
    units = [];
    for (const t of usable) {
      const f0 = t.frame[0]!;
      const groups = new Map<number, number[]>();
      t.frame.forEach((f, i) => {
        const b = Math.floor((f - f0) / B);
        if (!groups.has(b)) groups.set(b, []);
        groups.get(b)!.push(i);
      });
      for (const idx of groups.values()) if (idx.length >= 2) units.push({ frame: idx.map((i) => t.frame[i]!), coords: t.coords.map((c) => idx.map((i) => c[i]!)) });
    }
    kind = 'blocks';
    if (units.length < need(lags.length) && units.length >= need(2)) {
      const fit = Math.floor((units.length - 4) / 2);
      lags = lagGrid(maxK, Math.min(lags.length, fit));
      notes.push(`only ${units.length} blocks: ${lags.length} lags used, so that the covariance can be estimated`);
    }
    if (units.length < need(lags.length)) {
      throw new EngineInputError(
        'data',
        `${usable.length} tracks (${units.length} blocks of ${B} frames) are too few to estimate the covariance of ${lags.length} lags: need at least ${need(lags.length)} independent tracks or blocks; give more tracks, longer tracks, or fewer lags`,
      );
    }
    notes.push(`${usable.length} tracks are too few to estimate the covariance between ${lags.length} lags from the tracks alone: each track was cut into blocks of ${B} frames (${units.length} blocks, largest lag ${maxK} frames); blocks of one particle are taken as independent, which holds when a block is long against the particle's correlation time`);
  }
  const minLags = o.minLags ?? 3;
  if (lags.length < minLags) {
    throw new EngineInputError('data', `${usable.length} tracks are too few to estimate the covariance of the ${minLags} lags this model needs (${lags.length} possible): give more tracks or longer tracks`);
  }
  const M = lags.length;
  const per = units.map((u) => unitSums(u, lags));
  const N = lags.map((_, j) => per.reduce((a, p) => a + p.count[j]!, 0));
  lags.forEach((k, j) => {
    if (N[j]! === 0) throw new EngineInputError('data', `no pair of positions ${k} frames apart: the largest lag is longer than every track`);
  });
  const msd = lags.map((_, j) => per.reduce((a, p) => a + p.sum[j]!, 0) / N[j]!);
  const U = units.length;
  const C = lags.map(() => new Array<number>(M).fill(0));
  for (const p of per) {
    const dev = lags.map((_, j) => (p.count[j]! > 0 ? (p.count[j]! / N[j]!) * (p.sum[j]! / p.count[j]! - msd[j]!) : 0));
    for (let a = 0; a < M; a++) for (let b = 0; b < M; b++) C[a]![b]! += dev[a]! * dev[b]!;
  }
  const empirical = C.map((row) => row.map((v) => (v * U) / (U - 1)));
  const hartlap = (U - M - 2) / (U - 1);
  const covariance = empirical.map((row) => row.map((v) => v / hartlap));
  return {
    lag: lags.map((k) => k * o.dt),
    lagFrames: lags,
    msd,
    covariance,
    empiricalCovariance: empirical,
    sd: covariance.map((row, i) => Math.sqrt(row[i]!)),
    units: kind,
    unitCount: U,
    ...(blockFrames !== undefined ? { blockFrames } : {}),
    tracks: usable.length,
    positions,
    hartlapFactor: hartlap,
    covarianceSource: `empirical covariance between lags of the per-${kind === 'tracks' ? 'track' : 'block'} time-averaged MSDs (${U} ${kind}, ${M} lags), divided by the Hartlap factor ${hartlap.toPrecision(3)}; parameter errors widened for the covariance's own noise (Dodelson & Schneider)`,
    notes,
  };
}
