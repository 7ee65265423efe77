/**
 * What a run reports (docs/model.md §16), each a pure function of the fields:
 * the dominant length from the structure factor's first moment, the measured
 * early growth of the fastest mode, clusters by thresholding and connected
 * components, and the speed and period of travelling bands from the kymograph.
 */
import { solveInPlace } from '../linalg/dense.js';
import { eigenDecomposition, symmetricEigen } from '../linalg/eigen.js';
import { FFT } from './fft.js';
import type { SpectralField } from './field.js';

/**
 * Dominant length 2π/k̄ with k̄ = Σ|k| S(k)/Σ S(k) over the chamber's modes k ≠ 0,
 * S(k) = Σ_m |ρ̂_m(k)/ρ̄_m|² (the structure factor of the relative fluctuations).
 * null when the fields are uniform.
 */
export function dominantLength(field: SpectralField, re: Float64Array[], im: Float64Array[], mean: Float64Array): number | null {
  let num = 0;
  let den = 0;
  for (let i = 0; i < field.size; i++) {
    if (i === 0) continue;
    let s = 0;
    for (let a = 0; a < field.M; a++) {
      if (!(mean[a]! > 0)) continue;
      const r = re[a]![i]! / mean[a]!;
      const q = im[a]![i]! / mean[a]!;
      s += r * r + q * q;
    }
    num += Math.sqrt(field.k2[i]!) * s;
    den += s;
  }
  if (!(den > 0) || !(num > 0)) return null;
  return (2 * Math.PI * den) / num;
}

/** The modes whose early amplitudes are recorded: k ≠ 0, one of each ±k pair, |j| ≤ limit per axis. */
export function trackedModes(field: SpectralField, limit: number): number[] {
  const out: number[] = [];
  for (let i = 0; i < field.size; i++) {
    const jx = field.jx[i]!;
    const jy = field.jy[i]!;
    if (Math.abs(jx) > limit || Math.abs(jy) > limit) continue;
    if (jy < 0 || (jy === 0 && jx <= 0)) continue;
    out.push(i);
  }
  return out;
}

/**
 * A mode's recorded history counts as linear when one fitted propagator explains it to this relative
 * residual. Modes that follow their own linear law leave residuals of 1e-4 to a few 1e-3 (the time
 * stepping's local error and the first nonlinear terms at the end of the window); a mode fed by the
 * harmonics of stronger ones leaves 2e-2 to 2e-1 (measured on the draws of tests/engine/simulate-growth.test.ts).
 */
export const RESIDUAL_LIMIT = 1e-2;

/**
 * A direction of a mode's state enters its fitted propagator only when the recorded history explores it with at
 * least this share of the leading singular value (the Gram matrix's eigenvalue ratio is its square).
 */
export const SUPPORT_FLOOR = 1e-3;

/** A fitted eigenvalue counts only when the recorded history explores its eigenvector with at least this support (see measureGrowth). */
export const SUPPORT_MIN = 0.1;

/** The fastest rate of a mode fitted on each half of the window must agree to this share of its rate (a fed mode changes pace). */
export const HALVES_LIMIT = 0.05;

/** Only modes ending the window weaker than this share of the strongest take the halves test (HALVES_LIMIT). */
export const HALVES_BELOW = 0.1;

/** Modes that end the linear window weaker than this share of the strongest are not fitted (their samples near rounding). */
export const AMPLITUDE_FLOOR = 1e-3;

export interface Measured {
  growthRate: number | null;
  wavelength: number | null;
  oscillationPeriod: number | null;
  /** mode numbers along x (and y) of the fastest mode */
  mode: number[] | null;
  /** time span of the linear window used, s */
  window: number;
}

/**
 * The early growth, measured: for each recorded mode the propagator A over one
 * sampling interval Δ is fitted by least squares to the recorded amplitudes
 * (u_{j+1} ≈ A u_j, real and imaginary parts as two trajectories of the same real
 * A, each pair weighted equally); its eigenvalues z give λ = ln z / Δ. The fit is
 * made only in the directions the history explores (the Gram matrix's eigenvectors
 * down to SUPPORT_FLOOR of the leading singular value, as in a truncated dynamic
 * mode decomposition), and an eigenvalue counts only when its eigenvector is
 * supported by the history (SUPPORT_MIN): with sealed walls a mode has one real
 * trajectory, which soon lines up with its fastest eigenvector, and the other
 * directions are read from too little data. Every mode that ends the window above
 * AMPLITUDE_FLOOR (0.1 %) of the strongest is fitted, so a weakly seeded fastest
 * mode is still found; a mode whose history one propagator does not explain to
 * RESIDUAL_LIMIT is passed over, and a weak one (below HALVES_BELOW of the
 * strongest, where the harmonics of the strong modes can take it over) is read
 * only over the longest leading part of the window whose two halves give the same
 * rate to HALVES_LIMIT. The fastest mode is the one with the largest rate left.
 * An oscillation is reported only when the window holds at least a quarter of its
 * period.
 */
export function measureGrowth(field: SpectralField, modes: number[], samples: Float64Array[], interval: number, mean: Float64Array): Measured {
  const none: Measured = { growthRate: null, wavelength: null, oscillationPeriod: null, mode: null, window: interval * Math.max(0, samples.length - 1) };
  // every evolved field enters the propagator (dynamic chemicals too: the state is not closed without them), each
  // relative to its mean (a chemical with a zero mean: as it is); the amplitude that ranks modes is the particles' only
  const live: number[] = [];
  const scale = new Float64Array(field.N);
  for (let a = 0; a < field.N; a++) {
    if (a < field.M ? mean[a]! > 0 : true) live.push(a);
    scale[a] = a < field.M ? mean[a]! : Math.abs(mean[a]!) > 0 ? Math.abs(mean[a]!) : 1;
  }
  const n = live.length;
  const J = samples.length - 1;
  if (n === 0 || J < n + 2) return none;
  const M = field.N;
  const amp = (j: number, q: number) => {
    let s = 0;
    for (const a of live) {
      if (a >= field.M) continue;
      const r = samples[j]![(q * M + a) * 2]! / scale[a]!;
      const i = samples[j]![(q * M + a) * 2 + 1]! / scale[a]!;
      s += r * r + i * i;
    }
    return Math.sqrt(s);
  };
  let top = 0;
  for (let q = 0; q < modes.length; q++) top = Math.max(top, amp(J, q));
  if (!(top > 0)) return none;
  /**
   * The propagator of mode q fitted over the sample pairs j0 … j1−1 (see above): its eigenvalues as rates with
   * their support, and the relative residual. null when nothing can be fitted.
   */
  /**
   * The recorded pairs (u_j, u_{j+1}) of mode q for j0 ≤ j < j1, real and imaginary parts as two trajectories,
   * each divided by |u_j| so every pair weighs alike: the late, largest samples, where harmonics of the strongest
   * modes begin to feed the weaker ones, do not dominate the fit.
   */
  const pairsOf = (q: number, j0: number, j1: number): { x: number[]; y: number[] }[] => {
    const out: { x: number[]; y: number[] }[] = [];
    for (let j = j0; j < j1; j++) {
      for (let part = 0; part < 2; part++) {
        const x = live.map((a) => samples[j]![(q * M + a) * 2 + part]! / scale[a]!);
        const norm = Math.hypot(...x);
        if (!(norm > 0)) continue;
        out.push({ x: x.map((v) => v / norm), y: live.map((a) => samples[j + 1]![(q * M + a) * 2 + part]! / scale[a]! / norm) });
      }
    }
    return out;
  };
  const fit = (q: number, j0: number, j1: number, basis?: Float64Array[]): { eigs: { re: number; im: number; support: number }[]; residual: number; basis: Float64Array[] } | null => {
    const pairs = pairsOf(q, j0, j1);
    const G = new Float64Array(n * n);
    const H = new Float64Array(n * n);
    for (const { x, y } of pairs) {
      for (let r = 0; r < n; r++) {
        for (let c = 0; c < n; c++) {
          G[r * n + c]! += x[r]! * x[c]!;
          H[r * n + c]! += y[r]! * x[c]!; // H = Σ y xᵀ
        }
      }
    }
    // only the directions the recorded history explores: G's eigenvectors u_i with σ_i ≥ SUPPORT_FLOOR σ_1. With
    // sealed walls a mode's amplitude is real, one trajectory, which soon lines up with the fastest eigenvector; the
    // full M×M fit then reads an arbitrary eigenvalue in a direction the data hardly touch (truncated as in dynamic
    // mode decomposition)
    let U: Float64Array[] = [];
    if (basis) U = basis;
    else {
      const eig = symmetricEigen(G, n);
      for (let i = 0; i < n; i++) if (eig.values[i]! > 0 && eig.values[i]! >= SUPPORT_FLOOR * SUPPORT_FLOOR * eig.values[0]!) U.push(eig.vectors[i]!);
    }
    const r = U.length;
    if (r === 0) return null;
    const dot = (u: Float64Array, v: ArrayLike<number>) => {
      let acc = 0;
      for (let k = 0; k < n; k++) acc += u[k]! * v[k]!;
      return acc;
    };
    // the reduced propagator Ã = (Uᵀ H U)(Uᵀ G U)⁻¹ (least squares of the projected pairs; Uᵀ G U is diagonal, σ_i²,
    // in the basis of G's own eigenvectors)
    const Gu = U.map((u) => Float64Array.from({ length: n }, (_, row) => dot(u, G.subarray(row * n, row * n + n))));
    const Hu = U.map((u) => Float64Array.from({ length: n }, (_, row) => dot(u, H.subarray(row * n, row * n + n))));
    const Gr = new Float64Array(r * r);
    const At = new Float64Array(r * r); // (Uᵀ H U)ᵀ, then Ãᵀ
    for (let i = 0; i < r; i++) {
      for (let j = 0; j < r; j++) {
        Gr[i * r + j] = dot(U[i]!, Gu[j]!);
        At[j * r + i] = dot(U[i]!, Hu[j]!);
      }
    }
    const s2 = Array.from({ length: r }, (_, i) => Gr[i * r + i]!);
    if (!solveInPlace(Gr, r, At, r)) return null;
    const A = new Float64Array(r * r);
    for (let i = 0; i < r; i++) for (let j = 0; j < r; j++) A[i * r + j] = At[j * r + i]!;
    // how well one linear propagator explains this mode's history in those directions (relative residual)
    let res = 0;
    let tot = 0;
    for (const { x, y } of pairs) {
      const ax = U.map((u) => dot(u, x));
      for (let i = 0; i < r; i++) {
        let pred = 0;
        for (let c = 0; c < r; c++) pred += A[i * r + c]! * ax[c]!;
        const yi = dot(U[i]!, y);
        res += (yi - pred) ** 2;
        tot += yi * yi;
      }
    }
    const residual = tot > 0 ? Math.sqrt(res / tot) : Infinity;
    // each eigenvalue with its support: how strongly the recorded history explores its eigenvector,
    // √(Σ_i |w_i|² σ_i²/σ_1² / Σ_i |w_i|²) for the eigenvector w in the explored directions u_i. The fastest
    // eigenvalue of a mode dominates its own history (support near 1); one whose eigenvector lies in directions the
    // history hardly touches is read from too little data (an arbitrary value, often a spurious growth)
    const sp = eigenDecomposition(A, r);
    if (!sp.converged) return null;
    const eigs: { re: number; im: number; support: number }[] = [];
    for (let e = 0; e < r; e++) {
      const w = sp.vectors[e]!;
      let num = 0;
      let den = 0;
      for (let i = 0; i < r; i++) {
        const m2 = w.re[i]! * w.re[i]! + w.im[i]! * w.im[i]!;
        num += (m2 * s2[i]!) / s2[0]!;
        den += m2;
      }
      const mod = Math.hypot(sp.re[e]!, sp.im[e]!);
      if (!(mod > 0)) continue;
      eigs.push({ re: Math.log(mod) / interval, im: Math.atan2(sp.im[e]!, sp.re[e]!) / interval, support: den > 0 ? Math.sqrt(num / den) : 0 });
    }
    return { eigs, residual, basis: U };
  };
  /** the fastest rate of mode q over a part of the window, in the directions of its whole-window fit (null when that part cannot be fitted) */
  const fastestOver = (q: number, j0: number, j1: number, basis: Float64Array[]): { re: number; im: number } | null => {
    if (j1 - j0 < basis.length + 2) return null;
    const f = fit(q, j0, j1, basis);
    if (f === null) return null;
    let top: { re: number; im: number } | null = null;
    for (const e of f.eigs) if (e.support >= SUPPORT_MIN && (top === null || e.re > top.re)) top = { re: e.re, im: e.im };
    return top;
  };

  const fits: { re: number; im: number; q: number; residual: number; support: number }[] = [];
  const bases = new Map<number, Float64Array[]>();
  for (let q = 0; q < modes.length; q++) {
    if (amp(J, q) < AMPLITUDE_FLOOR * top) continue;
    const f = fit(q, 0, J);
    if (f === null) continue;
    bases.set(q, f.basis);
    for (const e of f.eigs) fits.push({ re: e.re, im: e.im, support: e.support, q, residual: f.residual });
  }
  // a mode fed by the harmonics of stronger ones is not linear: keep the fits a single propagator explains to
  // RESIDUAL_LIMIT and whose eigenvector the history supports (all of them when none is). A weak mode is read only
  // where the two halves of its window agree (HALVES_LIMIT): a linear mode grows alike in both, a fed one changes
  // pace as the feeding takes over (it can even seem to outgrow the fastest mode, at the sum of its feeders' rates)
  const clean = fits.filter((f) => f.residual <= RESIDUAL_LIMIT && f.support >= SUPPORT_MIN);
  // per mode, its fastest clean rate; a weak mode's only over the longest leading part of the window whose two halves
  // agree (its earliest samples, before its feeders took over), or not at all
  const byMode = new Map<number, { re: number; im: number; q: number }>();
  const supported = fits.filter((f) => f.support >= SUPPORT_MIN);
  for (const f of clean.length > 0 ? clean : supported.length > 0 ? supported : fits) {
    const had = byMode.get(f.q);
    if (!had || f.re > had.re) byMode.set(f.q, { re: f.re, im: f.im, q: f.q });
  }
  let best: { re: number; im: number; q: number } | null = null;
  for (const [q, f] of byMode) {
    let rate: { re: number; im: number } | null = f;
    if (amp(J, q) < HALVES_BELOW * top) {
      // the whole window, its first half, first quarter, …: the longest whose halves agree; when none does, the
      // first half of the whole window (before the feeders took over, if they did); when the window is too short
      // to be halved, the whole-window fit
      const basis = bases.get(q)!;
      let earliest: { re: number; im: number } | null = null;
      rate = null;
      for (let end = J; end >= 2 * (basis.length + 2); end = Math.floor(end / 2)) {
        const whole = fastestOver(q, 0, end, basis);
        const h1 = fastestOver(q, 0, Math.floor(end / 2), basis);
        const h2 = fastestOver(q, Math.floor(end / 2), end, basis);
        if (whole === null) break;
        if (end === J) earliest = h1;
        if (h1 === null || h2 === null || Math.abs(h1.re - h2.re) <= HALVES_LIMIT * Math.abs(whole.re)) {
          rate = whole;
          break;
        }
      }
      if (rate === null) rate = earliest ?? (J < 2 * (basis.length + 2) ? f : null);
    }
    if (rate !== null && (best === null || rate.re > best.re)) best = { re: rate.re, im: rate.im, q };
  }
  if (best === null) return none;
  const i = modes[best.q]!;
  const k = Math.sqrt(field.k2[i]!);
  const window = interval * J;
  const period = Math.abs(best.im) > 0 ? (2 * Math.PI) / Math.abs(best.im) : null;
  return {
    growthRate: best.re,
    wavelength: (2 * Math.PI) / k,
    oscillationPeriod: period !== null && window >= period / 4 ? period : null,
    mode: field.grid.dims === 2 ? [Math.abs(field.jx[i]!), Math.abs(field.jy[i]!)] : [Math.abs(field.jx[i]!)],
    window,
  };
}

export interface Clusters {
  count: number;
  /** 1D: lengths (m); 2D: diameters of the circle of equal area (m); largest first */
  sizes: number[];
  /** grid cells in each cluster, in the order of `sizes` */
  cells: number[];
  /** whether each cluster (order of `sizes`) spans at least 3 cells across: some cell of it has all its neighbours in it */
  resolved: boolean[];
  /** how many clusters span fewer than 3 cells across (see `resolved`) */
  underResolved: number;
  /** per species, the fraction of its particles inside the clusters */
  composition: { species: string; fraction: number }[];
  /** total volume fraction that marks a cell as clustered (null when the field has too little contrast) */
  threshold: number | null;
  /** share of the chamber's area (length in 1D) inside the clusters */
  coveredFraction: number;
}

/** A field counts as patterned when its largest volume fraction exceeds the mean by this share of the mean. */
export const CLUSTER_CONTRAST = 0.2;

/**
 * Clusters of a chamber field: cells whose total volume fraction φ exceeds the
 * half-height threshold φ̄ + (max φ − φ̄)/2, joined into connected components
 * (nearest neighbours; across the edges when the chamber is periodic). No
 * clusters when max φ < (1 + CLUSTER_CONTRAST) φ̄ (no pattern to speak of).
 * A cluster counts as resolved when it spans at least 3 cells across: some cell
 * of it has its whole neighbourhood in it — both neighbours in 1D, the 3 × 3
 * block around it in 2D (across the edges when periodic; at a sealed wall the
 * mirror image of a cell is the cell itself, so a cluster against the wall
 * counts with its reflection, as the no-flux field does).
 */
export function findClusters(phi: Float64Array, rho: Float64Array[], speciesIds: string[], points: number, dims: 1 | 2, periodic: boolean, cellSize: number): Clusters {
  const cells = phi.length;
  let mean = 0;
  let max = -Infinity;
  for (let i = 0; i < cells; i++) {
    mean += phi[i]!;
    max = Math.max(max, phi[i]!);
  }
  mean /= cells;
  const empty = (): Clusters => ({ count: 0, sizes: [], cells: [], resolved: [], underResolved: 0, composition: speciesIds.map((species) => ({ species, fraction: 0 })), threshold: null, coveredFraction: 0 });
  if (!(mean > 0) || max < (1 + CLUSTER_CONTRAST) * mean) return empty();
  const threshold = mean + (max - mean) / 2;
  const label = new Int32Array(cells).fill(-1);
  const sizes: number[] = [];
  const ny = dims === 2 ? points : 1;
  const stack: number[] = [];
  let inside = 0;
  for (let start = 0; start < cells; start++) {
    if (label[start] !== -1 || phi[start]! <= threshold) continue;
    const id = sizes.length;
    let count = 0;
    label[start] = id;
    stack.push(start);
    while (stack.length > 0) {
      const c = stack.pop()!;
      count++;
      const x = c % points;
      const y = (c - x) / points;
      const nb: [number, number][] = [
        [x - 1, y],
        [x + 1, y],
      ];
      if (dims === 2) nb.push([x, y - 1], [x, y + 1]);
      for (let [u, v] of nb) {
        if (periodic) {
          u = (u + points) % points;
          v = (v + ny) % ny;
        } else if (u < 0 || u >= points || v < 0 || v >= ny) continue;
        const d = v * points + u;
        if (label[d] === -1 && phi[d]! > threshold) {
          label[d] = id;
          stack.push(d);
        }
      }
    }
    inside += count;
    sizes.push(count);
  }
  // resolved: some cell's whole neighbourhood (± 1 cell along each axis, diagonals included) lies in its cluster
  const resolved = sizes.map(() => false);
  const wrap = (u: number, m: number) => (periodic ? (u + m) % m : Math.min(m - 1, Math.max(0, u)));
  const reach = dims === 2 ? 1 : 0;
  for (let c = 0; c < cells; c++) {
    const id = label[c]!;
    if (id < 0 || resolved[id]) continue;
    const x = c % points;
    const y = (c - x) / points;
    let all = true;
    for (let dy = -reach; dy <= reach && all; dy++) {
      for (let dx = -1; dx <= 1; dx++) {
        if (label[wrap(y + dy, ny) * points + wrap(x + dx, points)] !== id) {
          all = false;
          break;
        }
      }
    }
    if (all) resolved[id] = true;
  }
  const composition = speciesIds.map((species, a) => {
    let total = 0;
    let inC = 0;
    const r = rho[a]!;
    for (let i = 0; i < cells; i++) {
      total += r[i]!;
      if (label[i]! >= 0) inC += r[i]!;
    }
    return { species, fraction: total > 0 ? inC / total : 0 };
  });
  const size = (count: number) => (dims === 1 ? count * cellSize : 2 * Math.sqrt((count * cellSize * cellSize) / Math.PI));
  // largest first (a stable sort of the cluster ids by cell count)
  const order = sizes.map((_, id) => id).sort((a, b) => sizes[b]! - sizes[a]!);
  return {
    count: sizes.length,
    sizes: order.map((id) => size(sizes[id]!)),
    cells: order.map((id) => sizes[id]!),
    resolved: order.map((id) => resolved[id]!),
    underResolved: resolved.filter((r) => !r).length,
    composition,
    threshold,
    coveredFraction: inside / cells,
  };
}

/** Travelling patterns are read only when the second half of the run departs from the mean by this share of it. */
export const BAND_CONTRAST = 1e-2;

export interface Bands {
  /** m/s, signed (+ towards larger x); 0 for a standing oscillation */
  speed: number;
  /** s, the dominant period at a fixed point; null when none is seen */
  period: number | null;
}

/**
 * Travelling or pulsating patterns in a 1D kymograph (rows = frames of the total
 * volume fraction, equally spaced in time). Only the second half of the run is
 * read (the pattern has formed), and only when its largest departure from the
 * mean reaches BAND_CONTRAST (1 %) of the mean. The pattern is static when its variance in time
 * at fixed points is below 1 % of its variance in space: null. Otherwise the
 * speed is the median over consecutive frame pairs of the shift that maximises
 * their cross-correlation (circular when periodic, zero-padded when sealed;
 * parabolic sub-cell refinement) within half of the dominant wavelength (a
 * pattern that moves further between frames is aliased: store more frames), and the period is that of the strongest
 * frequency of the point-wise time series (summed power, scanned finer than the
 * window's DFT bins), when at least two periods fit in the window and that
 * frequency holds at least a fifth of the power at the DFT bins.
 */
export function findBands(rows: Float64Array[], times: number[], periodic: boolean, cellSize: number): Bands | null {
  const F = rows.length;
  if (F < 8) return null;
  const first = Math.floor(F / 2);
  const use = rows.slice(first);
  const t = times.slice(first);
  const n = use[0]!.length;
  const T = use.length;
  // fluctuations about each frame's mean
  let largest = 0;
  let level = 0;
  const u = use.map((r) => {
    let m = 0;
    for (let i = 0; i < n; i++) m += r[i]!;
    m /= n;
    level = Math.max(level, m);
    const d = Float64Array.from(r, (v) => v - m);
    for (let i = 0; i < n; i++) largest = Math.max(largest, Math.abs(d[i]!));
    return d;
  });
  // no pattern to speak of (a stable sample, or one still in its linear stage): nothing to read
  if (!(largest > BAND_CONTRAST * level)) return null;
  let spaceVar = 0;
  let timeVar = 0;
  for (let i = 0; i < n; i++) {
    let m = 0;
    for (let j = 0; j < T; j++) m += u[j]![i]!;
    m /= T;
    for (let j = 0; j < T; j++) {
      spaceVar += u[j]![i]! * u[j]![i]!;
      timeVar += (u[j]![i]! - m) ** 2;
    }
  }
  if (!(spaceVar > 0) || timeVar < 1e-2 * spaceVar) return null;
  // shift between consecutive frames by FFT cross-correlation
  let size = 1;
  while (size < (periodic ? n : 2 * n)) size <<= 1;
  const circular = periodic && size === n;
  const fft = new FFT(size);
  const shifts: number[] = [];
  const spec = (row: Float64Array) => {
    const re = new Float64Array(size);
    const im = new Float64Array(size);
    re.set(row);
    fft.transform(re, im);
    return { re, im };
  };
  let prev = spec(u[0]!);
  for (let j = 1; j < T; j++) {
    const cur = spec(u[j]!);
    // corr(s) = Σ_x prev(x) cur(x + s)  ⇒  ĉ = conj(P̂) Ĉ
    const re = new Float64Array(size);
    const im = new Float64Array(size);
    for (let i = 0; i < size; i++) {
      re[i] = prev.re[i]! * cur.re[i]! + prev.im[i]! * cur.im[i]!;
      im[i] = prev.re[i]! * cur.im[i]! - prev.im[i]! * cur.re[i]!;
    }
    fft.transform(re, im, true);
    // the pattern repeats every wavelength: look for the shift within half of the dominant wavelength of the earlier frame
    let jBest = 1;
    let pBest = -1;
    for (let q = 1; q <= size / 2; q++) {
      const p = prev.re[q]! * prev.re[q]! + prev.im[q]! * prev.im[q]!;
      if (p > pBest) {
        pBest = p;
        jBest = q;
      }
    }
    const limit = Math.max(2, Math.min(circular ? size / 2 : n - 1, Math.floor(size / jBest / 2)));
    let bestS = 0;
    let bestV = -Infinity;
    for (let s = -limit + 1; s < limit; s++) {
      const v = re[(s + size) % size]!;
      if (v > bestV) {
        bestV = v;
        bestS = s;
      }
    }
    const at = (s: number) => re[(s + size) % size]!;
    const a = at(bestS - 1);
    const b = at(bestS);
    const c = at(bestS + 1);
    const den = a - 2 * b + c;
    const frac = den < 0 ? (0.5 * (a - c)) / den : 0;
    shifts.push((bestS + Math.max(-0.5, Math.min(0.5, frac))) / (t[j]! - t[j - 1]!));
    prev = cur;
  }
  shifts.sort((p, q) => p - q);
  const median = shifts[Math.floor(shifts.length / 2)]!;
  const speed = Math.abs(median * (t[T - 1]! - t[0]!)) < 2 ? 0 : median * cellSize;
  // dominant temporal frequency: the power of the point-wise series (time mean removed), summed over points,
  // scanned in fiftieths of a DFT bin (a zero-padded DFT), so the period is not rounded to the window's bins
  const span = t[T - 1]! - t[0]!;
  const dt = span / (T - 1);
  const series = Array.from({ length: n }, (_, i) => {
    const v = new Float64Array(T);
    let m = 0;
    for (let j = 0; j < T; j++) m += u[j]![i]!;
    m /= T;
    for (let j = 0; j < T; j++) v[j] = u[j]![i]! - m;
    return v;
  });
  const cs = new Float64Array(T);
  const sn = new Float64Array(T);
  const power = (q: number) => {
    for (let j = 0; j < T; j++) {
      cs[j] = Math.cos((2 * Math.PI * q * j) / T);
      sn[j] = Math.sin((2 * Math.PI * q * j) / T);
    }
    let p = 0;
    for (let i = 0; i < n; i++) {
      const v = series[i]!;
      let cr = 0;
      let ci = 0;
      for (let j = 0; j < T; j++) {
        cr += v[j]! * cs[j]!;
        ci += v[j]! * sn[j]!;
      }
      p += cr * cr + ci * ci;
    }
    return p;
  };
  // the DFT bins first, then fiftieths of a bin around the strongest one
  let totalP = 0;
  let binQ = 1;
  let binP = -1;
  for (let q = 1; q <= Math.floor(T / 2); q++) {
    const p = power(q);
    totalP += p;
    if (p > binP) {
      binP = p;
      binQ = q;
    }
  }
  let bestF = 0;
  let bestP = 0;
  for (let q = Math.max(0.5, binQ - 1); q <= Math.min(T / 2, binQ + 1) + 1e-9; q += 0.02) {
    const p = power(q);
    if (p > bestP) {
      bestP = p;
      bestF = q / (T * dt);
    }
  }
  const period = bestF > 0 && span * bestF >= 2 && bestP > 0.2 * totalP ? 1 / bestF : null;
  if (speed === 0 && period === null) return null;
  return { speed, period };
}
