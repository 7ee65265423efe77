/**
 * Which modes a chamber allows (docs/model.md §4) and the search for the fastest one.
 *
 * In scaled units (model.ts) a sealed chamber allows k'_n = n (k_n = nπ/L), a
 * periodic one k'_n = n (k_n = 2πn/L), and an unbounded one every k' > 0.
 *
 * **How far the scan goes, rigorously.** Write J' = −k'²𝔇' − C(k') with
 * C = P' [k'² G'] Q'ᵀ. By Gershgorin's theorem (rows),
 *
 *     Re λ ≤ max_m [ −k'² (𝔇'_mm − Σ_{n≠m} |𝔇'_mn|) + Σ_n |C_mn| ] ≤ −k'² d + C̄,
 *
 * with d = min_m (𝔇'_mm − Σ_{n≠m}|𝔇'_mn|) (the column version is used when it
 * is larger). For k'² ≥ k_a² = 2‖R' D_c'⁻¹‖_∞ a Neumann series gives
 * ‖k'² G'‖_∞ ≤ 2 / min D'_c, hence C̄ = max_m Σ_s|P'_ms| · 2/min D'_c · max_s Σ_m|Q'_ms|.
 * Every mode with k'² > max(k_a², (C̄ − f_ref)/d) therefore grows more slowly
 * than a mode already found (f_ref), and the scan stops there. Only if d ≤ 0
 * (crowding so strong that the diffusion matrix loses diagonal dominance) is
 * the bound replaced by a heuristic one, and the result says so.
 *
 * **Inside the bound** the first `maxExhaustive` modes are evaluated one by
 * one; beyond that (and for the continuum) a logarithmic grid finds the local
 * maxima of each branch, golden-section search refines them in ln k' to a
 * relative bracket of 1e-10 (the fastest wavenumber to better than 1e-6), and
 * for discrete chambers the integer modes on both sides are evaluated.
 */
import type { ScaledModel } from './model.js';
import { modeSpectrum, type ModeSpectrum } from './spectrum.js';
import type { Walls } from './types.js';

export interface ScanOptions {
  /** Discrete modes evaluated one by one before switching to the grid (default 200). */
  maxExhaustive?: number;
  /** Grid points per decade of k' (default 24). */
  perDecade?: number;
}

/** The best mode of one branch. k is scaled; index is n for a discrete chamber, null for the continuum. */
export interface BranchBest {
  k: number;
  index: number | null;
  value: number;
  im: number;
}

export interface ScanResult {
  overall: BranchBest;
  /** Best real eigenvalue over allowed modes, null if no mode has one. */
  real: BranchBest | null;
  /** Best complex pair over allowed modes, null if no mode has one. */
  complex: BranchBest | null;
  /** Scaled wavenumber beyond which no mode can matter. */
  upperWavenumber: number;
  boundRigorous: boolean;
  /** Unbounded chamber whose supremum is approached as k → 0 (no finite fastest wavelength). */
  longWaveLimit: boolean;
  evaluations: number;
  unconverged: number;
}

interface Bound {
  kA2: number;
  d: number;
  C: number;
  rigorous: boolean;
}

function gershgorinBound(model: ScaledModel): Bound {
  const { M, S } = model;
  let dRow = Infinity;
  let dCol = Infinity;
  for (let m = 0; m < M; m++) {
    let offRow = 0;
    let offCol = 0;
    for (let n = 0; n < M; n++) {
      if (n === m) continue;
      offRow += Math.abs(model.diffusion[m * M + n]!);
      offCol += Math.abs(model.diffusion[n * M + m]!);
    }
    dRow = Math.min(dRow, model.diffusion[m * M + m]! - offRow);
    dCol = Math.min(dCol, model.diffusion[m * M + m]! - offCol);
  }
  let kA2 = 0;
  let C = 0;
  if (S > 0) {
    let minDc = Infinity;
    for (let s = 0; s < S; s++) minDc = Math.min(minDc, model.chemDiffusivity[s]!);
    let rd = 0;
    for (let s = 0; s < S; s++) {
      let row = 0;
      for (let t = 0; t < S; t++) row += Math.abs(model.reaction[s * S + t]!) / model.chemDiffusivity[t]!;
      rd = Math.max(rd, row);
    }
    kA2 = 2 * rd;
    let pMax = 0;
    let pColMax = 0;
    for (let m = 0; m < M; m++) {
      let row = 0;
      for (let s = 0; s < S; s++) row += Math.abs(model.P[m * S + s]!);
      pMax = Math.max(pMax, row);
    }
    let qMax = 0;
    let qRowMax = 0;
    for (let s = 0; s < S; s++) {
      let col = 0;
      let colP = 0;
      for (let m = 0; m < M; m++) {
        col += Math.abs(model.Q[m * S + s]!);
        colP += Math.abs(model.P[m * S + s]!);
      }
      qMax = Math.max(qMax, col);
      pColMax = Math.max(pColMax, colP);
    }
    for (let m = 0; m < M; m++) {
      let row = 0;
      for (let s = 0; s < S; s++) row += Math.abs(model.Q[m * S + s]!);
      qRowMax = Math.max(qRowMax, row);
    }
    // Row form: Σ_n|C_mn| ≤ Σ_s|P'_ms| · ‖k'²G'‖∞ · max_s Σ_n|Q'_ns|. Column form (used only
    // when the diffusion matrix is column- but not row-dominant): Σ_m|C_mn| ≤
    // max_s Σ_m|P'_ms| · ‖k'²G'‖₁ · Σ_s|Q'_ns|, with ‖k'²G'‖₁ ≤ 2/min D'_c once
    // k'² ≥ 2 max_t Σ_s |R'_st|/D'_c,s.
    const Crow = (pMax * 2 * qMax) / minDc;
    if (dRow > 0 || !(dCol > 0)) {
      C = Crow;
    } else {
      let rdCol = 0;
      for (let t = 0; t < S; t++) {
        let col = 0;
        for (let s = 0; s < S; s++) col += Math.abs(model.reaction[s * S + t]!) / model.chemDiffusivity[s]!;
        rdCol = Math.max(rdCol, col);
      }
      kA2 = 2 * rdCol;
      C = (pColMax * 2 * qRowMax) / minDc;
    }
  }
  const d = dRow > 0 ? dRow : dCol;
  return { kA2, d, C, rigorous: d > 0 };
}

/** Scaled k'² beyond which Re λ < fRef for every eigenvalue (or a heuristic cap when not rigorous). */
function cutoff(b: Bound, fRef: number, model: ScaledModel): number {
  if (b.rigorous) return Math.max(b.kA2, (b.C - fRef) / b.d, 0);
  // Heuristic: the diffusive scale of the slowest species against the coupling.
  let dMin = Infinity;
  for (let m = 0; m < model.M; m++) dMin = Math.min(dMin, model.diffusivity[m]!);
  return Math.max(b.kA2, (b.C + Math.abs(fRef)) / dMin, 1) * 100;
}

type Branch = 'maxRe' | 'maxReal' | 'maxComplex';
const BRANCHES: Branch[] = ['maxRe', 'maxReal', 'maxComplex'];

class Tracker {
  evaluations = 0;
  unconverged = 0;
  best: Record<Branch, { spec: ModeSpectrum; index: number | null } | null> = { maxRe: null, maxReal: null, maxComplex: null };
  constructor(
    private readonly model: ScaledModel,
    private readonly discrete: boolean,
  ) {}

  eval(k: number): ModeSpectrum {
    const s = modeSpectrum(this.model, k);
    this.evaluations++;
    if (!s.converged) this.unconverged++;
    return s;
  }

  /** Offer an allowed mode (for discrete chambers k must be an integer). */
  offer(s: ModeSpectrum): void {
    const index = this.discrete ? Math.round(s.k) : null;
    for (const b of BRANCHES) {
      const v = s[b];
      const cur = this.best[b];
      if (Number.isFinite(v) && (cur === null || v > cur.spec[b])) this.best[b] = { spec: s, index };
    }
    if (this.best.maxRe === null && s.maxRe === -Infinity) this.best.maxRe = { spec: s, index };
  }
}

const INV_PHI = (Math.sqrt(5) - 1) / 2;

/** Golden-section maximisation of fn over u ∈ [a, b] (u = ln k); returns the best point seen. */
function goldenMax(fn: (u: number) => number, a: number, b: number, tol: number): number {
  let c = b - INV_PHI * (b - a);
  let d = a + INV_PHI * (b - a);
  let fc = fn(c);
  let fd = fn(d);
  for (let it = 0; it < 200 && b - a > tol; it++) {
    if (fc >= fd) {
      b = d;
      d = c;
      fd = fc;
      c = b - INV_PHI * (b - a);
      fc = fn(c);
    } else {
      a = c;
      c = d;
      fc = fd;
      d = a + INV_PHI * (b - a);
      fd = fn(d);
    }
  }
  return fc >= fd ? c : d;
}

/** Indices of the (up to `limit` highest) finite local maxima of a sampled curve. */
function localMaxima(v: number[], limit: number): number[] {
  const out: number[] = [];
  for (let i = 0; i < v.length; i++) {
    const x = v[i]!;
    if (!Number.isFinite(x)) continue;
    const left = i > 0 ? v[i - 1]! : -Infinity;
    const right = i + 1 < v.length ? v[i + 1]! : -Infinity;
    if (x >= left && x >= right && (x > left || x > right || v.length === 1)) out.push(i);
  }
  out.sort((i, j) => v[j]! - v[i]!);
  return out.slice(0, limit);
}

function logGrid(lo: number, hi: number, perDecade: number): number[] {
  if (!(hi > lo)) return [lo];
  const decades = Math.log10(hi / lo);
  const n = Math.max(2, Math.ceil(decades * perDecade) + 1);
  const out: number[] = [];
  for (let i = 0; i < n; i++) out.push(lo * Math.pow(hi / lo, i / (n - 1)));
  return out;
}

/**
 * Find the fastest allowed mode of a scaled model, and the best mode of each branch.
 *
 * @param model  scaled model (model.ts)
 * @param walls  chamber walls: `sealed` and `periodic` allow k'_n = n, `unbounded` every k' > 0
 * @returns the best modes (scaled k'), the rigorous scan bound and bookkeeping
 */
export function scanModes(model: ScaledModel, walls: Walls, options: ScanOptions = {}): ScanResult {
  const maxExhaustive = options.maxExhaustive ?? 200;
  const perDecade = options.perDecade ?? 24;
  const discrete = walls !== 'unbounded';
  const t = new Tracker(model, discrete);
  const bound = gershgorinBound(model);
  let longWaveLimit = false;
  let kHi: number;

  const refine = (lo: number, hi: number, branch: Branch, offerAt: (k: number) => void) => {
    const cache = new Map<number, number>();
    const fn = (u: number) => {
      const hit = cache.get(u);
      if (hit !== undefined) return hit;
      const v = t.eval(Math.exp(u))[branch];
      cache.set(u, v);
      return v;
    };
    const u = goldenMax(fn, Math.log(lo), Math.log(hi), 1e-10);
    offerAt(Math.exp(u));
  };

  const gridSearch = (ks: number[], offerAt: (k: number) => void) => {
    const specs = ks.map((k) => t.eval(k));
    for (const s of specs) offerAt(s.k);
    for (const b of BRANCHES) {
      const vals = specs.map((s) => s[b]);
      for (const i of localMaxima(vals, b === 'maxRe' ? 4 : 2)) {
        const lo = ks[Math.max(0, i - 1)]!;
        const hi = ks[Math.min(ks.length - 1, i + 1)]!;
        if (hi > lo) refine(lo, hi, b, offerAt);
      }
    }
    return specs;
  };

  if (discrete) {
    const first = t.eval(1);
    t.offer(first);
    kHi = Math.sqrt(cutoff(bound, first.maxRe, model));
    const nHi = Math.max(1, Math.floor(kHi));
    const nEx = Math.min(nHi, maxExhaustive);
    for (let n = 2; n <= nEx; n++) t.offer(t.eval(n));
    if (nHi > nEx) {
      const offerInt = (k: number) => {
        for (const n of new Set([Math.floor(k), Math.ceil(k)])) {
          if (n >= nEx && n <= nHi) t.offer(t.eval(n));
        }
      };
      gridSearch(logGrid(nEx, nHi, perDecade), offerInt);
    }
  } else {
    // Continuum. The k → 0 limit: J' → 0 when R' is invertible (f → 0); otherwise
    // a k-independent part survives, read off at a vanishing k'.
    let kLo = 1e-4;
    for (let s = 0; s < model.S; s++) {
      const r = model.reaction[s * model.S + s]!;
      if (r > 0) kLo = Math.min(kLo, 1e-4 * Math.sqrt(r / model.chemDiffusivity[s]!));
    }
    // J'(k') = J'(0+) + O(k'²): step k' down by factors of 100 until the value settles
    // at the rounding level of J'; a limit within rounding of 0 is 0 (the null space
    // of a singular R' or of the coupling gives eigenvalues → 0).
    let tiny = t.eval(kLo * 1e-2);
    if (model.reactionSingular) {
      for (let j = 2; j <= 12; j++) {
        const next = t.eval(kLo * 10 ** (-2 * j));
        const settled = Math.abs(next.maxRe - tiny.maxRe) <= 1e-12 * next.scale;
        tiny = next;
        if (settled) break;
      }
    }
    // One rounding rule for every branch: a value within rounding of 0 at the long-wave end is 0
    // (otherwise the real branch could report a growth of 1e-16 while the overall growth is 0,
    // and the stationary predicate would fire below the true onset).
    const atLimit = (v: number) => (!model.reactionSingular || Math.abs(v) <= 1e-11 * tiny.scale ? (v > -Infinity ? 0 : v) : v);
    const limitValue = atLimit(tiny.maxRe);
    const fRef = limitValue;
    kHi = Math.sqrt(cutoff(bound, fRef, model));
    kLo = Math.min(kLo, kHi * 1e-4);
    const ks = logGrid(kLo, kHi, perDecade);
    const offerK = (k: number) => t.offer(t.eval(k));
    gridSearch(ks, offerK);
    const best = t.best.maxRe!;
    // Supremum at the long-wave end: the maximum sits on the first grid point and
    // the curve falls away from it.
    if (best.spec.k < (ks[1] ?? Infinity) || best.spec.maxRe <= limitValue) {
      longWaveLimit = true;
      const limitSpec: ModeSpectrum = { ...tiny, k: 0, maxRe: limitValue, imAtMax: 0, maxReal: Math.max(atLimit(tiny.maxReal), limitValue), maxComplex: atLimit(tiny.maxComplex) };
      t.best.maxRe = { spec: limitSpec, index: null };
      if (!(t.best.maxReal !== null && t.best.maxReal.spec.maxReal > limitValue)) t.best.maxReal = { spec: limitSpec, index: null };
    }
  }

  const toBest = (b: Branch): BranchBest | null => {
    const x = t.best[b];
    if (x === null || !(x.spec[b] > -Infinity)) return null;
    const im = b === 'maxComplex' ? x.spec.imComplex : b === 'maxReal' ? 0 : x.spec.imAtMax;
    return { k: x.spec.k, index: x.index, value: x.spec[b], im };
  };
  const overall = toBest('maxRe') ?? { k: 1, index: discrete ? 1 : null, value: -Infinity, im: 0 };
  return {
    overall,
    real: toBest('maxReal'),
    complex: toBest('maxComplex'),
    upperWavenumber: kHi,
    boundRigorous: bound.rigorous,
    longWaveLimit,
    evaluations: t.evaluations,
    unconverged: t.unconverged,
  };
}
