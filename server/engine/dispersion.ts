/**
 * The dispersion relation of a mixture: the growth rate of each eigenvalue branch against the
 * wavenumber (docs/model.md §3–§5), in SI, for plotting. A finite chamber's allowed modes
 * (sealed k = nπ/L, periodic k = 2πn/L; docs/model.md §4) are evaluated one by one; the
 * continuous curve between them is a guide to the eye (an unbounded chamber allows all of it).
 * The fastest mode is `analyze`'s own (its proven scan), so the plot and the plan agree.
 */
import { analyze, type AnalysisResult } from './analyze.js';
import { buildModel, type ScaledModel } from './model.js';
import { GROWTH_RESOLUTION } from './scan.js';
import { modeSpectrum } from './spectrum.js';
import { EngineInputError, type Mixture } from './types.js';

export interface DispersionPoint {
  /** k, 1/m */
  wavenumber: number;
  /** max Re λ over all eigenvalues, 1/s */
  growthRate: number;
  /** largest real eigenvalue (the stationary branch), 1/s; null when every eigenvalue there is complex */
  stationary: number | null;
  /** largest Re λ of a complex pair (the oscillatory branch), 1/s; null when there is none */
  oscillatory: number | null;
  /** |Im λ| of that complex pair, 1/s; null when there is none */
  frequency: number | null;
  /** false when the eigenvalue iteration did not converge at this wavenumber (its values are then not shown) */
  converged: boolean;
}

export interface Dispersion {
  walls: Mixture['chamber']['walls'];
  /** lateral size L, m; null when unbounded */
  length: number | null;
  /** the wavenumbers drawn, 1/m */
  range: [number, number];
  /** log-spaced points over `range` */
  curve: DispersionPoint[];
  /** the allowed modes in `range` (empty when unbounded), each with its index n */
  modes: (DispersionPoint & { index: number })[];
  /** how many allowed modes lie in `range`; more than `modes.length` when they were too many to evaluate each */
  modesInRange: number;
  /** the fastest-growing allowed mode, as analyze() finds it */
  fastest: { wavenumber: number; index: number | null; growthRate: number; wavelength: number | null; oscillationPeriod: number | null };
  state: AnalysisResult['state'];
}

export interface DispersionOptions {
  /** points of the continuous curve (default 160, 20 to 400) */
  points?: number;
  /** most allowed modes evaluated one by one (default 300); beyond that a log-spaced selection */
  maxModes?: number;
}

function point(model: ScaledModel, kSi: number): DispersionPoint {
  const s = modeSpectrum(model, kSi * model.lengthUnit);
  // growth within rounding of 0 is 0, as the scan reports it (docs/model.md §4)
  const r = (v: number) => (!Number.isFinite(v) ? null : Math.abs(v) <= GROWTH_RESOLUTION * s.scale ? 0 : v / model.timeUnit);
  return {
    wavenumber: kSi,
    growthRate: r(s.maxRe) ?? Number.NaN,
    stationary: r(s.maxReal),
    oscillatory: r(s.maxComplex),
    frequency: Number.isFinite(s.maxComplex) ? s.imComplex / model.timeUnit : null,
    converged: s.converged,
  };
}

/**
 * Growth rate against wavenumber for plotting.
 *
 * The range runs from half the first allowed mode (a finite chamber) or 10⁻³ of the reference
 * wavenumber (unbounded) to 10 × the reference (the fastest mode, or the first), extended by
 * doubling while the curve still grows there, up to the scan's proven bound.
 *
 * @param mix all values SI (see types.ts)
 * @example dispersion(mixture).modes[0] // { index: 1, wavenumber: π/L, growthRate: … }
 */
export function dispersion(mix: Mixture, o: DispersionOptions = {}): Dispersion {
  const points = Math.round(o.points ?? 160);
  const maxModes = Math.round(o.maxModes ?? 300);
  if (!(points >= 20 && points <= 400)) throw new EngineInputError('points', 'must be 20 to 400');
  if (!(maxModes >= 1 && maxModes <= 2000)) throw new EngineInputError('maxModes', 'must be 1 to 2000');
  const a = analyze(mix);
  const model = buildModel(mix);
  const walls = mix.chamber.walls;
  const discrete = walls !== 'unbounded';
  // the first allowed mode: k' = 1 in scaled units (ℓ = L/π sealed, L/2π periodic)
  const k1 = 1 / model.lengthUnit;
  const kRef = a.fastestMode.wavenumber > 0 ? Math.max(a.fastestMode.wavenumber, discrete ? k1 : 0) : k1;
  const kMin = discrete ? k1 / 2 : kRef * 1e-3;
  let kMax = kRef * 10;
  const bound = Math.max(a.scan.upperWavenumber, kMax);
  for (let i = 0; i < 30 && kMax < bound && point(model, kMax).growthRate > 0; i++) kMax *= 2;
  const curve = Array.from({ length: points }, (_, i) => point(model, kMin * Math.pow(kMax / kMin, i / (points - 1))));
  let modes: Dispersion['modes'] = [];
  let modesInRange = 0;
  if (discrete) {
    const nMax = Math.floor(kMax / k1 + 1e-9);
    modesInRange = nMax;
    let ns: number[];
    if (nMax <= maxModes) ns = Array.from({ length: nMax }, (_, i) => i + 1);
    else {
      const set = new Set<number>();
      for (let i = 0; i < maxModes; i++) set.add(Math.round(Math.pow(nMax, i / (maxModes - 1))));
      const f = a.fastestMode.index;
      if (f !== null) for (const n of [f - 1, f, f + 1]) if (n >= 1 && n <= nMax) set.add(n);
      ns = [...set].sort((x, y) => x - y);
    }
    modes = ns.map((n) => ({ index: n, ...point(model, n * k1) }));
  }
  return {
    walls,
    length: discrete ? mix.chamber.length ?? null : null,
    range: [kMin, kMax],
    curve,
    modes,
    modesInRange,
    fastest: {
      wavenumber: a.fastestMode.wavenumber,
      index: a.fastestMode.index,
      growthRate: a.growthRate,
      wavelength: a.fastestMode.wavelength,
      oscillationPeriod: a.fastestMode.oscillationPeriod,
    },
    state: a.state,
  };
}
