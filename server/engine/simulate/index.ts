/**
 * Past onset: the nonlinear model of docs/model.md §14–§16 on a 1D or 2D
 * chamber, from a small seeded random perturbation of the uniform state.
 * Pure: SI in, SI out, no I/O; the caller (server/jobs/tasks.ts, server/cli.ts)
 * stores the frames.
 */
import { analyze, type AnalysisResult, type State } from '../analyze.js';
import { eigenvaluesAt } from '../probe.js';
import { Random } from '../random.js';
import { EngineDomainError, EngineInputError, type Mixture } from '../types.js';
import { SpectralField } from './field.js';
import { Integrator } from './integrate.js';
import { dominantLength, findBands, findClusters, measureGrowth, trackedModes, type Bands, type Clusters, type Measured } from './reports.js';

/** Random close packing of equal spheres (Scott & Kilgour, J. Phys. D 2 (1969) 863: φ ≈ 0.637; from memory). */
export const CLOSE_PACKING = 0.64;

export interface SimulateOptions {
  dims?: 1 | 2;
  /** cells per axis, a power of two (default 512 in 1D, 128 in 2D) */
  points?: number;
  /** simulated time, s (default: conditions.duration, else 20 growth times; 5 decay times when stable) */
  duration?: number;
  /** local error tolerance relative to the fluctuations (default 1e-4) */
  tolerance?: number;
  /** rms relative amplitude of the starting perturbation (smooth random field of the chamber modes up to noiseModes(); default 1e-5) */
  noise?: number;
  seed?: number;
  /** frames stored, evenly spaced, first and last included (default 201 in 1D, 41 in 2D) */
  frames?: number;
  /**
   * 'quasi-static' (default): the chemical fields are solved exactly at every evaluation; 'dynamic': they evolve,
   * ∂c/∂t = D∇²c − κc + sources, starting from the quasi-static fields of the starting densities (docs/model.md §14)
   */
  chemicals?: 'quasi-static' | 'dynamic';
  /**
   * how a negative density left by the grid's ringing is made up (docs/model.md §15): 'global' (default, from every
   * positive cell in proportion) or 'local' (from the nearest cells; 2–5× more steps in under-resolved runs)
   */
  repair?: 'global' | 'local';
  /** φ_max of the volume-filling factor (default CLOSE_PACKING) */
  maxVolumeFraction?: number;
  /** a starting state instead of the noise: density of species m at a cell centre (x, y in m) */
  initial?: (m: number, x: number, y: number) => number;
  /** give up after this many accepted steps (default 100,000); the summary says so (run.completed false, warning step-limit) */
  maxSteps?: number;
  progress?: (fraction: number, stage: string) => void;
  /** checked once per step; when true the run throws SimulationCancelled */
  cancelled?: () => boolean;
  /** called after every attempted step (diagnostics) */
  onStep?: (info: { t: number; h: number; err: number; taken: boolean; negative: boolean }) => void;
  /** the analysis of the mixture's present species (presentSpecies), when the caller has it already */
  analysis?: AnalysisResult;
}

export class SimulationCancelled extends Error {
  override readonly name = 'SimulationCancelled';
  constructor() {
    super('the simulation was cancelled');
  }
}

export interface SimulationWarning {
  code: string;
  message: string;
}

export interface SimulationSummary {
  linear: { growthRate: number; wavelength: number | null; state: State; oscillationPeriod: number | null };
  measured: { growthRate: number | null; wavelength: number | null; oscillationPeriod: number | null };
  /** [t (s), dominant length (m) or null when uniform] at each frame */
  dominantLength: [number, number | null][];
  /** sizes largest first; cells: grid cells in each (same order); underResolved: how many span fewer than 3 cells across (docs/model.md §16) */
  clusters: { count: number; sizes: number[]; cells: number[]; underResolved: number; composition: { species: string; fraction: number }[] };
  bands: Bands | null;
  conservation: { maxRelativeError: number };
  /** the earliest time a consumed chemical runs out (the fuel check, docs/model.md §8), s; null when none is consumed */
  fuelRunOut: { chemical: string; time: number } | null;
  grid: { dims: 1 | 2; points: number; length: number; cellSize: number; walls: 'sealed' | 'periodic' };
  /** simulated time reached, s, and the time asked for */
  time: number;
  duration: number;
  run: {
    steps: number;
    rejected: number;
    /** accepted steps in which a density below −10⁻⁹ of its species' mean was repaired (docs/model.md §15) */
    positivityRepairs: number;
    /** largest share of a species' particles moved by the repair in one step */
    largestRepair: number;
    /** largest over species of the share of its particles moved by all repairs together (a sum over steps) */
    repairedMass: number;
    /** widest neighbourhood a repair reached, in cells from the negative cell (0: none) */
    repairReach: number;
    /** smallest density seen at a frame, relative to the species' mean (≥ 0: positivity kept) */
    minRelativeDensity: number;
    /** largest local volume fraction at a frame (≤ φ_max when the clusters are resolved) */
    maxVolumeFraction: number;
    chemistryIterations: number;
    measuredMode: number[] | null;
    measuredWindow: number;
    /** the starting perturbation holds the chamber modes up to this index per axis (noiseModes) */
    seededModes: number;
    /** how the chemical fields were computed */
    chemicals: 'quasi-static' | 'dynamic';
    clusterThreshold: number | null;
    clusterCoveredFraction: number;
    completed: boolean;
  };
  warnings: SimulationWarning[];
}

export interface Frames {
  dims: 1 | 2;
  points: number;
  species: string[];
  times: number[];
  /** one array per frame: species after species, each points^dims Float32 values (m⁻³), x fastest */
  data: Float32Array[];
}

export interface SimulationResult {
  summary: SimulationSummary;
  frames: Frames;
}

/** The starting perturbation holds the chamber modes up to at least this index along each axis. */
export const NOISE_MODES = 32;

/**
 * The highest chamber mode index (per axis) seeded: at least NOISE_MODES and four times the
 * fastest mode's index, so the fastest mode and its neighbours start from the noise and not from
 * rounding; at most what the grid holds (points/2 − 1).
 */
export function noiseModes(points: number, fastestIndex: number | null): number {
  return Math.min(Math.floor(points / 2) - 1, Math.max(NOISE_MODES, 4 * Math.ceil(fastestIndex ?? 0)));
}

/**
 * The early growth is recorded until any species departs from its mean by this share somewhere
 * (the quadratic terms are then ~0.1 % of the linear ones, well inside the 2 % the measurement is
 * held to), or until the departure has decayed to this share of where it started (a stable sample).
 */
export const LINEAR_WINDOW = 1e-3;

/** A cluster narrower than this many particle diameters is beyond what the continuum model can size. */
export const PARTICLE_CLUSTER = 5;

/** The linear window stays open at least this many growth times while every departure stays below 10 × LINEAR_WINDOW. */
export const MIN_WINDOW = 2;

/** At the end of an unstable run whose largest departure from the mean is below this share, nothing has formed yet. */
export const STILL_LINEAR = 0.1;

/**
 * A smooth random field on the chamber's cell centres: Σ a_pq B_p(x) B_q(y) over the
 * modes up to `modes` along each axis (cosines nπx/L for sealed walls; cosines and
 * sines 2πnx/L for periodic ones), a_pq standard normal drawn in a fixed order, the
 * mean removed and the rms scaled to 1. The same seed gives the same function on
 * every grid fine enough to hold it, so runs at different resolutions start alike.
 */
export function smoothNoise(rng: Random, points: number, dims: 1 | 2, periodic: boolean, modes: number): Float64Array {
  const K = Math.min(modes, Math.floor(points / 2) - 1);
  const basis: Float64Array[] = [];
  const at = (i: number) => (i + 0.5) / points; // x/L
  basis.push(new Float64Array(points).fill(1));
  for (let k = 1; k <= K; k++) {
    if (periodic) {
      basis.push(Float64Array.from({ length: points }, (_, i) => Math.cos(2 * Math.PI * k * at(i))));
      basis.push(Float64Array.from({ length: points }, (_, i) => Math.sin(2 * Math.PI * k * at(i))));
    } else basis.push(Float64Array.from({ length: points }, (_, i) => Math.cos(Math.PI * k * at(i))));
  }
  const P = basis.length;
  const cells = dims === 2 ? points * points : points;
  const out = new Float64Array(cells);
  if (dims === 1) {
    for (let p = 1; p < P; p++) {
      const a = rng.normal();
      const b = basis[p]!;
      for (let i = 0; i < points; i++) out[i]! += a * b[i]!;
    }
  } else {
    const col = new Float64Array(points);
    for (let p = 0; p < P; p++) {
      col.fill(0);
      for (let q = 0; q < P; q++) {
        const a = rng.normal();
        if (p === 0 && q === 0) continue;
        const b = basis[q]!;
        for (let y = 0; y < points; y++) col[y]! += a * b[y]!;
      }
      const bx = basis[p]!;
      for (let y = 0; y < points; y++) for (let x = 0; x < points; x++) out[y * points + x]! += col[y]! * bx[x]!;
    }
  }
  let mean = 0;
  for (let i = 0; i < cells; i++) mean += out[i]!;
  mean /= cells;
  let ss = 0;
  for (let i = 0; i < cells; i++) {
    out[i] = out[i]! - mean;
    ss += out[i]! * out[i]!;
  }
  const rms = Math.sqrt(ss / cells);
  if (rms > 0) for (let i = 0; i < cells; i++) out[i] = out[i]! / rms;
  return out;
}

/**
 * The mixture without its species of zero density (a dose-0 control of an added dopant), or the mixture itself
 * when every species is present. Its linear analysis is the one a run can show: analyze() of the whole mixture
 * also lists the modes of the absent species (a trace of them spreading), which no particle in the sample follows.
 */
export function presentSpecies(mix: Mixture): Mixture {
  const present = mix.species.filter((s) => s.density > 0);
  return present.length === mix.species.length || present.length === 0 ? mix : { ...mix, species: present };
}

function isPow2(n: number): boolean {
  return Number.isInteger(n) && n >= 8 && (n & (n - 1)) === 0;
}

/**
 * Simulate a mixture past onset.
 * @throws EngineInputError for malformed options, EngineDomainError when the model cannot be set up
 */
export function simulate(mix: Mixture, options: SimulateOptions = {}): SimulationResult {
  const dims = options.dims ?? 1;
  if (dims !== 1 && dims !== 2) throw new EngineInputError('dims', 'must be 1 or 2');
  const points = options.points ?? (dims === 1 ? 512 : 128);
  if (!isPow2(points) || points > (dims === 1 ? 65536 : 1024)) throw new EngineInputError('points', `must be a power of two from 8 to ${dims === 1 ? 65536 : 1024}`);
  const tolerance = options.tolerance ?? 1e-4;
  if (!(tolerance > 0 && tolerance < 1)) throw new EngineInputError('tolerance', 'must be between 0 and 1');
  const noise = options.noise ?? 1e-5;
  if (!(noise >= 0 && noise < 0.5)) throw new EngineInputError('noise', 'must be in [0, 0.5)');
  const phiMax = options.maxVolumeFraction ?? CLOSE_PACKING;
  const warnings: SimulationWarning[] = [];

  const analysis = options.analysis ?? analyze(presentSpecies(mix));
  const absent = mix.species.filter((s) => !(s.density > 0)).map((s) => s.id);
  if (absent.length > 0 && absent.length < mix.species.length) {
    warnings.push({
      code: 'absent-species',
      message: `${absent.join(', ')} ha${absent.length === 1 ? 's' : 've'} no particles in this sample: \`linear\` is the analysis of the species present (the analysis of the whole mixture also lists how a trace of ${absent.length === 1 ? 'it' : 'them'} would spread, which nothing in the sample shows)`,
    });
  }
  const lambda = analysis.growthRate;
  const period = analysis.fastestMode.oscillationPeriod;
  let walls: 'sealed' | 'periodic';
  let length: number;
  if (mix.chamber.walls === 'unbounded') {
    walls = 'periodic';
    const wl = analysis.fastestMode.wavelength;
    const fov = mix.conditions.fieldOfView;
    if (fov !== null && fov > 0) length = fov;
    else if (wl !== null) length = 8 * wl;
    else throw new EngineInputError('chamber.length', 'an unbounded chamber without a fastest wavelength or a field of view: give a chamber length to simulate');
    warnings.push({ code: 'unbounded-as-periodic', message: `the unbounded chamber is simulated as a periodic box ${length.toExponential(3)} m wide (${fov !== null && fov > 0 ? 'the field of view' : 'eight fastest wavelengths'})` });
  } else {
    walls = mix.chamber.walls;
    length = mix.chamber.length!;
  }

  let phi0 = 0;
  for (const s of mix.species) phi0 += s.density * ((4 / 3) * Math.PI * s.radius ** 3);
  if (!(phi0 < phiMax)) throw new EngineDomainError('packed', `the sample's volume fraction ${phi0.toPrecision(3)} is not below the close-packing limit ${phiMax}`);

  const scaleTime = lambda !== 0 ? 1 / Math.abs(lambda) : 1;
  const duration = options.duration ?? mix.conditions.duration ?? (lambda > 0 ? 20 / lambda : 5 * scaleTime);
  if (!(duration > 0 && Number.isFinite(duration))) throw new EngineInputError('duration', 'must be a positive number of seconds');

  const chemicals = options.chemicals ?? 'quasi-static';
  if (chemicals !== 'quasi-static' && chemicals !== 'dynamic') throw new EngineInputError('chemicals', "must be 'quasi-static' or 'dynamic'");
  const field = new SpectralField(mix, { dims, points, length, mirror: walls === 'sealed', dynamic: chemicals === 'dynamic' }, phiMax);
  // the chamber mode index of the fastest wavelength along an axis (cos(nπx/L) sealed, e^{2πinx/L} periodic)
  const linearWl = analysis.fastestMode.wavelength;
  const fastestIndex = linearWl !== null && lambda > 0 ? (walls === 'sealed' ? 2 : 1) * (length / linearWl) : null;
  const seeded = noiseModes(points, fastestIndex);
  if (fastestIndex !== null && fastestIndex > seeded + 0.5) {
    warnings.push({
      code: 'fastest-mode-unresolved',
      message: `the fastest mode (wavelength ${linearWl!.toPrecision(3)} m, mode ${fastestIndex.toFixed(1)} of the chamber) is finer than ${points} points hold (modes up to ${seeded} are seeded): the run cannot show it; use at least ${2 ** Math.ceil(Math.log2(4 * fastestIndex))} points`,
    });
  } else if (fastestIndex !== null && linearWl! < 8 * (length / points)) {
    warnings.push({
      code: 'fastest-mode-coarse',
      message: `the fastest wavelength (${linearWl!.toPrecision(3)} m) spans only ${(linearWl! / (length / points)).toFixed(1)} grid cells: what forms from it is narrower still; use more points`,
    });
  }
  const M = field.M;
  const n = points;
  const cells = dims === 2 ? n * n : n;
  const h = field.cellSize;

  // starting state on the chamber, then onto the computational grid
  const rng = new Random(options.seed ?? 1);
  const initial: Float64Array[] = [];
  for (let a = 0; a < M; a++) {
    const v = new Float64Array(cells);
    const rho0 = mix.species[a]!.density;
    if (options.initial) {
      for (let i = 0; i < cells; i++) {
        const x = ((i % n) + 0.5) * h;
        const y = (Math.floor(i / n) + 0.5) * h;
        v[i] = options.initial(a, x, y);
      }
    } else {
      const xi = smoothNoise(rng, n, dims, walls === 'periodic', seeded);
      for (let i = 0; i < cells; i++) v[i] = rho0 * (1 + noise * xi[i]!);
    }
    const out = new Float64Array(field.size);
    field.fromChamber(v, out);
    initial.push(out);
  }
  if (field.dynamic) initial.push(...field.quasiStatic(initial));
  const repair = options.repair ?? 'global';
  if (repair !== 'global' && repair !== 'local') throw new EngineInputError('repair', "must be 'global' or 'local'");
  const integ = new Integrator(field, initial, tolerance, repair);
  const total0 = integ.rho.map((r) => field.chamberSum(r));

  // output and sampling times
  const F = Math.max(2, options.frames ?? (dims === 1 ? 201 : 41));
  const frameTimes = Array.from({ length: F }, (_, f) => (duration * f) / (F - 1));
  // 32 samples a growth time (and a period): a window closed early by a species that follows the chemicals at once
  // (it departs from its mean well before the others) still holds enough samples to fit and to halve
  const sampleStep = Math.min(scaleTime / 32, period !== null ? period / 32 : Infinity, duration / 16);
  const windowMax = Math.min(12 * scaleTime, duration);
  // the modes whose early amplitudes are recorded: up to 256 (1D) or 16 (2D) per axis, and at least 1.5 times the
  // fastest mode's index, so the fastest mode and its faster-looking neighbours are always among them
  const trackTo = Math.ceil(1.5 * (fastestIndex ?? 0));
  const modes = trackedModes(field, Math.min(field.nx / 2, Math.max(dims === 1 ? 256 : 16, trackTo)));
  const samples: Float64Array[] = [];
  let sampling = true;

  const frames: Float32Array[] = [];
  const times: number[] = [];
  const dominant: [number, number | null][] = [];
  let maxConsErr = 0;
  let minRel = Infinity;
  let maxPhi = 0;
  const phiSum = new Float64Array(cells);

  const record = (t: number) => {
    const { re, im } = integ.spectra();
    if (sampling) {
      const Nf = field.N;
      const row = new Float64Array(modes.length * Nf * 2);
      modes.forEach((i, q) => {
        for (let a = 0; a < Nf; a++) {
          row[(q * Nf + a) * 2] = re[a]![i]!;
          row[(q * Nf + a) * 2 + 1] = im[a]![i]!;
        }
      });
      samples.push(row);
    }
    return { re, im, t };
  };

  const recordFrame = (t: number) => {
    const { re, im } = integ.spectra();
    const data = new Float32Array(M * cells);
    const tmp = new Float64Array(cells);
    for (let a = 0; a < M; a++) {
      field.toChamber(integ.rho[a]!, tmp);
      data.set(tmp, a * cells);
      const mean = mix.species[a]!.density;
      if (mean > 0) for (let i = 0; i < cells; i++) minRel = Math.min(minRel, tmp[i]! / mean);
      const v = field.volume[a]!;
      for (let i = 0; i < cells; i++) phiSum[i] = (a === 0 ? 0 : phiSum[i]!) + v * tmp[i]!;
    }
    for (let i = 0; i < cells; i++) if (phiSum[i]! > maxPhi) maxPhi = phiSum[i]!;
    frames.push(data);
    times.push(t);
    dominant.push([t, dominantLength(field, re, im, integ.mean)]);
  };

  const checkConservation = () => {
    for (let a = 0; a < M; a++) {
      if (!(total0[a]! > 0)) continue;
      const e = Math.abs(field.chamberSum(integ.rho[a]!) - total0[a]!) / total0[a]!;
      if (e > maxConsErr) maxConsErr = e;
    }
  };

  /** the largest departure of any species from its mean, relative to the mean */
  const largestDeparture = () => {
    let worst = 0;
    for (let a = 0; a < M; a++) {
      const mean = integ.mean[a]!;
      if (!(mean > 0)) continue;
      const r = integ.rho[a]!;
      for (let i = 0; i < field.size; i++) worst = Math.max(worst, Math.abs(r[i]! - mean) / mean);
    }
    return worst;
  };
  const startDeparture = largestDeparture();
  // the linear window closes once any species departs from its mean by LINEAR_WINDOW, or the departure has
  // decayed to LINEAR_WINDOW of its start (the fits would otherwise read rounding)
  const linearEnd = () => {
    const d = largestDeparture();
    // a species that follows the chemicals at once can depart by LINEAR_WINDOW long before the pattern has grown:
    // the window then stays open for at least MIN_WINDOW growth times while no species departs by ten times as much
    if (d > 10 * LINEAR_WINDOW) return true;
    if (d > LINEAR_WINDOW) return !(lambda > 0 && t < MIN_WINDOW / lambda);
    return d < LINEAR_WINDOW * startDeparture;
  };

  let t = 0;
  let dt = Math.min(sampleStep, duration / 100) / 10;
  const floor = duration * 1e-12;
  let nextFrame = 1;
  let nextSample = 1;
  const maxSteps = options.maxSteps ?? 100_000;
  record(0);
  recordFrame(0);
  let completed = true;
  while (t < duration) {
    if (options.cancelled?.()) throw new SimulationCancelled();
    if (integ.stats.accepted >= maxSteps) {
      completed = false;
      warnings.push({ code: 'step-limit', message: `stopped after ${maxSteps} steps at t = ${t.toPrecision(4)} s of ${duration.toPrecision(4)} s` });
      break;
    }
    const target = Math.min(frameTimes[nextFrame] ?? duration, sampling ? nextSample * sampleStep : Infinity, duration);
    const step = Math.min(dt, target - t);
    const clamped = step < dt;
    const r = integ.tryStep(step, floor);
    options.onStep?.({ t, h: step, err: r.err, taken: r.taken, negative: r.negative });
    if (!r.taken) {
      dt = r.negative ? step / 4 : step * Math.max(0.1, 0.9 / Math.sqrt(r.err));
      if (dt < floor) dt = floor;
      continue;
    }
    const proposal = step * Math.min(4, 0.9 / Math.sqrt(Math.max(r.err, 1e-8)));
    dt = clamped ? Math.max(dt, proposal) : proposal;
    t = target - t - step <= 1e-12 * duration ? target : t + step;
    checkConservation();
    if (sampling && t >= nextSample * sampleStep * (1 - 1e-12)) {
      record(t);
      nextSample++;
      if (linearEnd() || t >= windowMax) sampling = false;
    }
    while (nextFrame < F && t >= frameTimes[nextFrame]! * (1 - 1e-12)) {
      recordFrame(t);
      nextFrame++;
    }
    options.progress?.(Math.min(1, t / duration), 'simulating');
  }
  if (times[times.length - 1] !== t) recordFrame(t);

  const measured: Measured = measureGrowth(field, modes, samples, sampleStep, integ.mean);
  if (measured.growthRate === null) {
    warnings.push({
      code: 'no-linear-window',
      message: `the early growth could not be measured: the window it is read from (until some species departs from its mean by ${LINEAR_WINDOW} of it, ${measured.window.toPrecision(3)} s here) held too few samples or no mode its fit could trust`,
    });
  }
  // the linear growth at the mode the run found fastest, for comparison (the same J(k), docs/model.md §3, of the
  // species present)
  let atMeasured: number | null = null;
  if (measured.wavelength !== null) {
    try {
      atMeasured = eigenvaluesAt(presentSpecies(mix), (2 * Math.PI) / measured.wavelength)[0]?.re ?? null;
    } catch {
      atMeasured = null;
    }
  }
  const fmtRate = (r: number) => `${r.toPrecision(3)} 1/s`;
  if (measured.growthRate !== null && atMeasured !== null && !field.dynamic) {
    // the run's early growth must be the linear growth of the mode it was read at: a different sign, or a rate more
    // than 10 % of the predicted rate away, is not the sample's early growth
    const off = Math.abs(measured.growthRate - atMeasured);
    if (Math.sign(measured.growthRate) !== Math.sign(atMeasured) || off > 0.1 * Math.max(Math.abs(atMeasured), Math.abs(lambda))) {
      warnings.push({
        code: 'measured-contradicts-linear',
        message: `the early growth read from the run (${fmtRate(measured.growthRate)} at wavelength ${measured.wavelength!.toPrecision(3)} m) is not the linear growth of that mode (${fmtRate(atMeasured)}): it does not show the sample's early growth but an effect of the grid or of the nonlinear terms (a mode fed by stronger ones); use more points, or a longer run for a slowly growing sample`,
      });
    }
  }
  if (measured.wavelength !== null && linearWl !== null && Math.abs(measured.wavelength - linearWl) > 1e-6 * linearWl) {
    const gap = atMeasured !== null && lambda !== 0 ? Math.abs(atMeasured - lambda) / Math.abs(lambda) : null;
    const why =
      gap !== null && gap <= 0.01
        ? 'the two modes grow within 1 % of each other, closer than the early measurement resolves (docs/model.md §16)'
        : field.dynamic
          ? 'the chemicals evolve in time here, which moves the fastest mode away from the quasi-static prediction (see dynamic-chemicals)'
          : dims === 2 && measured.mode !== null && measured.mode.length === 2 && measured.mode[0]! > 0 && measured.mode[1]! > 0
            ? 'in 2D the lattice also has modes off the axes, which the prediction along one axis does not list'
            : `the predicted fastest mode was not measured (its early history did not give a rate the fit could trust), so the measured growth ${atMeasured !== null && atMeasured < lambda ? "understates the sample's" : 'is not the predicted mode\'s'}; use more points or a longer run`;
    warnings.push({
      code: 'measured-mode-differs',
      message: `the fastest mode in the run has wavelength ${measured.wavelength.toPrecision(4)} m, not the predicted ${linearWl.toPrecision(4)} m${atMeasured !== null ? `; the linear growth rate of that mode is ${fmtRate(atMeasured)} against ${fmtRate(lambda)} at the predicted one${gap !== null ? ` (${(gap * 100).toPrecision(2)} % apart)` : ''}` : ''}: ${why}`,
    });
  }

  // clusters and bands from the last frame / the kymograph of the total volume fraction
  const vol = mix.species.map((s) => (4 / 3) * Math.PI * s.radius ** 3);
  const phiOf = (data: Float32Array) => {
    const phi = new Float64Array(cells);
    for (let a = 0; a < M; a++) for (let i = 0; i < cells; i++) phi[i]! += vol[a]! * data[a * cells + i]!;
    return phi;
  };
  const last = frames[frames.length - 1]!;
  const rhoLast = Array.from({ length: M }, (_, a) => Float64Array.from(last.subarray(a * cells, (a + 1) * cells)));
  const clusters: Clusters = findClusters(phiOf(last), rhoLast, mix.species.map((s) => s.id), n, dims, walls === 'periodic', h);
  const bands = dims === 1 ? findBands(frames.map(phiOf), times, walls === 'periodic', h) : null;
  if (dims === 2 && analysis.state === 'oscillatory') {
    warnings.push({ code: 'bands-not-read-in-2d', message: 'travelling bands are read only in 1D (a kymograph along the chamber): `bands` is null here whatever the frames show; run the same mixture in 1D for the band speed and period' });
  }

  // fuel run-out from the checks
  let fuelRunOut: SimulationSummary['fuelRunOut'] = null;
  for (const fc of analysis.checks.fuel) {
    if (fuelRunOut === null || fc.lifetime < fuelRunOut.time) fuelRunOut = { chemical: fc.chemical, time: fc.lifetime };
  }
  if (fuelRunOut !== null && fuelRunOut.time < t) {
    warnings.push({
      code: 'fuel-runs-out-first',
      message: `${fuelRunOut.chemical} would run out after about ${fuelRunOut.time.toPrecision(3)} s, before the end of the run (${t.toPrecision(3)} s reached); the model holds the fuel at its starting level, so what is shown after that time would not happen in the sample`,
    });
  }
  // other things the practical checks (docs/model.md §8) say happen in the sample before the end of the run
  const depth = mix.chamber.depth;
  for (const sc of analysis.checks.sedimentation) {
    if (depth === null || depth === undefined || !(sc.sedimentationLength < depth) || sc.timeToCrossDepth === null || !(sc.timeToCrossDepth < t)) continue;
    warnings.push({
      code: 'settles-first',
      message: `${sc.species} ${sc.direction} across the chamber depth in about ${sc.timeToCrossDepth.toPrecision(3)} s, before the end of the run (${t.toPrecision(3)} s reached), into a layer about ${sc.sedimentationLength.toExponential(2)} m thick: the model's sample stays uniform in depth, so what is shown after that time is a suspension the chamber no longer holds`,
    });
  }
  for (const gc of analysis.checks.gas) {
    const tg = gc.fuelAbsent ? gc.expectedTimeToSaturation : gc.timeToSaturation;
    if (tg === null || !(tg < t)) continue;
    warnings.push({
      code: 'gas-first',
      message: `${gc.chemical} passes its solubility after about ${tg.toPrecision(3)} s, before the end of the run (${t.toPrecision(3)} s reached): bubbles may form and stir the sample, which the model does not include${mix.chamber.walls === 'sealed' ? '; in a sealed chamber the gas also builds pressure' : ''}`,
    });
  }
  const repairedMass = Math.max(0, ...integ.stats.repairedMass);
  if (integ.stats.positivityRepairs > 0) {
    const st = integ.stats;
    const share = (x: number) => (x >= 0.01 ? x.toPrecision(3) : x.toExponential(2));
    warnings.push({
      code: 'positivity-repaired',
      message: `${st.positivityRepairs} of ${st.accepted} steps left a negative density (below −1e-9 of the mean) that a shorter step would not remove (its two half steps left no clearly less negative mass than the full step, or the step was at its floor of ${floor.toPrecision(3)} s): each negative value was set to 0 and its deficit taken ${repair === 'local' ? `from the nearest positive cells (at most ${st.repairReach} cell(s) away)` : 'from all positive cells in proportion to their density'}, so particle numbers are kept. Summed over the steps the repair moved ${repairedMass >= 1 ? `${repairedMass.toPrecision(3)} times a species' particle number (the ringing recurs at the same edges step after step)` : `${share(repairedMass)} of a species' particles`}, at most ${share(st.largestRepair)} of them in one step. Negative densities here are ringing at cluster edges sharper than the grid resolves: use more points and compare two grid sizes before trusting the clusters`,
    });
  }
  if (clusters.underResolved > 0) {
    const k = clusters.underResolved;
    warnings.push({
      code: 'clusters-under-resolved',
      message: `${k} of the ${clusters.count} cluster(s) found at the end span${k === 1 ? 's' : ''} fewer than 3 grid cells across (a cluster spans 3 cells when ${dims === 1 ? 'one of its cells has both neighbours in it' : 'a 3 × 3 block of cells lies inside it'}; the cells are ${h.toExponential(3)} m): the number and sizes of such clusters depend on the grid (a cluster narrower than a cell still shows as one or two cells). Use more points and compare two grid sizes`,
    });
  }
  // clusters about as narrow as the particles: the continuum model cannot size them (a density field needs many
  // particles per cell); only the share of particles gathered is meaningful
  const diameter = 2 * Math.max(...mix.species.filter((sp) => sp.density > 0).map((sp) => sp.radius));
  const narrow = clusters.sizes.filter((x) => x < PARTICLE_CLUSTER * diameter).length;
  if (narrow > 0) {
    warnings.push({
      code: 'clusters-at-particle-size',
      message: `${narrow} of the ${clusters.count} cluster(s) are narrower than ${PARTICLE_CLUSTER} particle diameters (${(PARTICLE_CLUSTER * diameter).toExponential(2)} m): there a continuum of density no longer describes the particles, and the cluster's size comes from the model's limits (and the grid), not from the sample; more points will not settle it. The share of each species gathered into the clusters is the meaningful figure`,
    });
  }
  if (maxPhi > phiMax * 1.001) {
    warnings.push({ code: 'above-close-packing', message: `the local volume fraction reached ${maxPhi.toPrecision(3)}, above the close-packing limit ${phiMax}: the clusters are narrower than the grid resolves (the volume-filling factor acts at cell centres); use more points` });
  }
  if (field.chemUnconverged > 0) warnings.push({ code: 'chemistry-not-converged', message: `the saturating chemistry did not converge in ${field.chemUnconverged} solve(s) (2,000 iterations)` });
  const endDeparture = largestDeparture();
  if (analysis.state === 'stable') {
    warnings.push({
      code: 'stable-nothing-forms',
      message:
        endDeparture <= startDeparture
          ? `the linear analysis calls this sample stable: the starting unevenness decays (from ${startDeparture.toExponential(1)} to ${endDeparture.toExponential(1)} of the mean by the end) and nothing forms`
          : `the linear analysis calls this sample stable, yet the largest departure from the mean grew from ${startDeparture.toExponential(1)} to ${endDeparture.toExponential(1)} in the run: that growth is the grid's or the nonlinear terms', not the sample's; use more points`,
    });
  } else if (endDeparture < STILL_LINEAR) {
    const more = lambda > 0 && endDeparture > 0 ? Math.log(1 / endDeparture) / lambda : null;
    warnings.push({
      code: 'nothing-formed-yet',
      message: `at the end of the run the largest departure from the uniform sample is ${(endDeparture * 100).toPrecision(2)} % of the mean: the sample is still in its early, linear stage and nothing has formed yet. How soon something forms depends on the starting perturbation (rms ${noise} of the mean here, standing in for the sample's own unevenness; a stronger one forms patterns sooner)${more !== null ? `; at the linear growth rate, order-one patterns need about ${more.toPrecision(2)} s more` : ''}`,
    });
  }
  if (field.dynamic) {
    // how much faster than the pattern grows (or turns) the chemicals relax, at the predicted wavelength (slowest
    // chemical), and the linear growth with evolving chemicals there (analyze()'s slow-chemistry check, §8)
    const k2 = linearWl !== null ? ((2 * Math.PI) / linearWl) ** 2 : 0;
    let slowest = Infinity;
    for (let s = 0; s < field.S; s++) slowest = Math.min(slowest, field.dChem[s]! * k2 + field.kappa[s]!);
    const pace = Math.max(Math.abs(lambda), period !== null ? (2 * Math.PI) / period : 0);
    const ratio = pace > 0 ? slowest / pace : null;
    const dyn = analysis.checks.relaxation?.dynamicRateAtMode ?? null;
    warnings.push({
      code: 'dynamic-chemicals',
      message: `the chemical fields evolve in time in this run, while \`linear\` is analyze()'s quasi-static prediction${ratio !== null && Number.isFinite(ratio) ? `; the slowest chemical relaxes at ${slowest.toPrecision(3)} 1/s at the predicted wavelength, ${ratio.toPrecision(3)} times the pattern's pace` : ''}${dyn !== null ? `; with evolving chemicals the linear growth there is ${dyn.toPrecision(4)} 1/s (quasi-static ${lambda.toPrecision(4)} 1/s), which is what the run's early growth should show` : ''}`,
    });
  }
  if (dims === 2) warnings.push({ code: 'linear-modes-1d', message: 'the linear prediction is for modes along one axis; in 2D the fastest mode may lie off the axes' });

  const summary: SimulationSummary = {
    linear: { growthRate: lambda, wavelength: analysis.fastestMode.wavelength, state: analysis.state, oscillationPeriod: period },
    measured: { growthRate: measured.growthRate, wavelength: measured.wavelength, oscillationPeriod: measured.oscillationPeriod },
    dominantLength: dominant,
    clusters: { count: clusters.count, sizes: clusters.sizes, cells: clusters.cells, underResolved: clusters.underResolved, composition: clusters.composition },
    bands,
    conservation: { maxRelativeError: maxConsErr },
    fuelRunOut,
    grid: { dims, points, length, cellSize: h, walls },
    time: t,
    duration,
    run: {
      steps: integ.stats.accepted,
      rejected: integ.stats.rejected,
      positivityRepairs: integ.stats.positivityRepairs,
      largestRepair: integ.stats.largestRepair,
      repairedMass,
      repairReach: integ.stats.repairReach,
      minRelativeDensity: minRel,
      maxVolumeFraction: maxPhi,
      chemistryIterations: field.chemIterationsMax,
      measuredMode: measured.mode,
      measuredWindow: measured.window,
      seededModes: seeded,
      chemicals,
      clusterThreshold: clusters.threshold,
      clusterCoveredFraction: clusters.coveredFraction,
      completed,
    },
    warnings,
  };
  return { summary, frames: { dims, points, species: mix.species.map((s) => s.id), times, data: frames } };
}
