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
import { gershgorinBelow, ModeBounds, routhBelow, routhScratch, spectrumReal, type RouthScratch } from './bounds.js';
import { solveInPlace } from './linalg/dense.js';
import { eigenvalues } from './linalg/eigen.js';
import type { ScaledModel } from './model.js';
import { modeSpectrum, REAL_TOLERANCE, summariseValues, type ModeSpectrum } from './spectrum.js';
import type { Walls } from './types.js';

/**
 * Growth below this fraction of a spectrum's rounding scale is not resolved by
 * double-precision eigenvalues (their error is a few ε·‖J'‖, ε ≈ 2.2e-16): such
 * a value is reported as 0 (neutral), never as growth, so that rounding cannot
 * fire a boundary.
 */
export const GROWTH_RESOLUTION = 1e-12;

function resolved(v: number, scale: number): number {
  return Number.isFinite(v) && Math.abs(v) <= GROWTH_RESOLUTION * scale ? 0 : v;
}

/** The spectrum summary with every branch value within rounding of 0 set to 0. */
function resolvedSpectrum(s: ModeSpectrum): ModeSpectrum {
  return { ...s, maxRe: resolved(s.maxRe, s.scale), maxReal: resolved(s.maxReal, s.scale), maxComplex: resolved(s.maxComplex, s.scale) };
}

/**
 * The long-wave limit J'(0⁺) of an unbounded chamber whose reaction matrix R' is
 * singular (a chemical without loss), computed from an S×S matrix rather than
 * from J' at a tiny k' (docs/model.md §4).
 *
 * With X(k') = k'²G'(k')Q'ᵀ, J'(k') = −k'²𝔇' − P'X → −P' N Q'ᵀ as k' → 0, where
 * N = lim k'²(k'²D'_c + R')⁻¹ (finite; zero on the directions R' damps). The
 * non-zero eigenvalues of the M×M matrix −P' N Q'ᵀ are those of the S×S matrix
 * K = −N (Q'ᵀP') (eig(AB) and eig(BA) share their non-zero values); the other
 * M − (their number) eigenvalues are exactly 0 in the limit. The rounding scale
 * of K is that of the sums that form it, Σ_m |Q'_ms||P'_mt| · max|N| — not the
 * largest entry of J', which a cross term can make far larger than K — so a
 * near-cancellation between species (a dose at a threshold) is resolved to the
 * precision of the sums. N is evaluated at k'² = 1e-12/max|R'| (relative error
 * of the limit about 1e-12).
 */
function longWaveLimitSpectrum(model: ScaledModel): ModeSpectrum {
  const { M, S } = model;
  let rMax = 0;
  for (let i = 0; i < S * S; i++) rMax = Math.max(rMax, Math.abs(model.reaction[i]!));
  const k2 = rMax > 0 ? 1e-12 / rMax : 1;
  const A = new Float64Array(S * S);
  for (let a = 0; a < S; a++) {
    for (let b = 0; b < S; b++) A[a * S + b] = model.reaction[a * S + b]! / k2;
    A[a * S + a]! += model.chemDiffusivity[a]!;
  }
  const N = new Float64Array(S * S);
  for (let a = 0; a < S; a++) N[a * S + a] = 1;
  const failed: ModeSpectrum = { k: 0, maxRe: Number.NaN, imAtMax: 0, maxReal: Number.NaN, maxComplex: -Infinity, imComplex: 0, converged: false, scale: 0 };
  if (!solveInPlace(A, S, N, S)) return failed;
  // QP = Q'ᵀP' (S×S) and its scale Σ_m |Q'_ms||P'_mt|
  const QP = new Float64Array(S * S);
  let sumScale = 0;
  for (let a = 0; a < S; a++) {
    for (let b = 0; b < S; b++) {
      let acc = 0;
      let abs = 0;
      for (let m = 0; m < M; m++) {
        const term = model.Q[m * S + a]! * model.P[m * S + b]!;
        acc += term;
        abs += Math.abs(term);
      }
      QP[a * S + b] = acc;
      sumScale = Math.max(sumScale, abs);
    }
  }
  let nMax = 0;
  for (let i = 0; i < S * S; i++) nMax = Math.max(nMax, Math.abs(N[i]!));
  const K = new Float64Array(S * S);
  for (let a = 0; a < S; a++) {
    for (let b = 0; b < S; b++) {
      let acc = 0;
      for (let c = 0; c < S; c++) acc += N[a * S + c]! * QP[c * S + b]!;
      K[a * S + b] = -acc;
    }
  }
  const scale = S * sumScale * nMax;
  const spec = S === 1 ? { re: Float64Array.of(K[0]!), im: Float64Array.of(0), converged: Number.isFinite(K[0]!) } : eigenvalues(K, S);
  if (!spec.converged) return { ...failed, scale };
  // the limit's eigenvalues: those of K not within rounding of 0, and exact zeros for the rest of the M
  const tolIm = REAL_TOLERANCE * Math.max(scale, Number.MIN_VALUE);
  const re: number[] = [];
  const im: number[] = [];
  for (let i = 0; i < S; i++) {
    const r = resolved(spec.re[i]!, scale);
    if (r === 0 && Math.abs(spec.im[i]!) <= tolIm) continue; // a zero of K is a zero of the limit too
    re.push(r);
    im.push(spec.im[i]!);
  }
  for (let i = re.length; i < M; i++) {
    re.push(0);
    im.push(0);
  }
  return summariseValues(0, re, im, true, scale);
}

export interface ScanOptions {
  /** Discrete modes evaluated one by one before switching to the grid (default 200). */
  maxExhaustive?: number;
  /** Grid points per decade of k' (default 24). */
  perDecade?: number;
  /**
   * Skip the eigenvalues of an allowed mode (and a whole refinement or grid
   * stage) when a proven bound shows it cannot change any reported value
   * (bounds.ts, docs/model.md §4). Default true; false is the reference path.
   * The answer is the same either way; only `evaluations` and `proven` differ.
   */
  earlyExit?: boolean;
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
  /** Allowed modes whose eigenvalues were not needed: a bound proved they change nothing (0 without early exits). */
  proven: number;
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

/** What the scan must get right: every reported value (`full`), or only the state (`state`: the sign and type of the overall best). */
type Goal = 'full' | 'state';

/** Largest number of allowed modes checked one by one before a stage is skipped (beyond it the stage just runs). */
const PROOF_BUDGET = 4000;
/** … and of those, how many may need J'(k) itself (a Routh or disc check, about a tenth of an eigen solve each). */
const JACOBIAN_BUDGET = 100;

class Tracker {
  evaluations = 0;
  unconverged = 0;
  proven = 0;
  /** J'(k) built for a proof (Routh, discs) */
  jacobians = 0;
  best: Record<Branch, { spec: ModeSpectrum; index: number | null } | null> = { maxRe: null, maxReal: null, maxComplex: null };
  private readonly routh: RouthScratch;
  constructor(
    private readonly model: ScaledModel,
    private readonly discrete: boolean,
    private readonly bounds: ModeBounds | null = null,
    private readonly goal: Goal = 'full',
    /** state goal: modes below this are proven stable already */
    private readonly stableBelow = 1,
  ) {
    this.routh = routhScratch(model.M);
  }

  /**
   * The value a skipped mode must provably stay below, and whether it must
   * also be proven to have only real eigenvalues (no complex pair found yet, so
   * any pair would be the oscillatory branch's first). Null: no skip possible.
   */
  private target(): { value: number; realOnly: boolean } | null {
    const re = this.best.maxRe;
    if (this.goal === 'state') {
      // a mode below the best cannot change it; a stable one cannot make the state unstable
      return { value: re !== null && re.spec.maxRe > 0 ? re.spec.maxRe : 0, realOnly: false };
    }
    const real = this.best.maxReal;
    const cx = this.best.maxComplex;
    if (re === null || real === null) return null;
    let value = Math.min(re.spec.maxRe, real.spec.maxReal);
    if (cx !== null) value = Math.min(value, cx.spec.maxComplex);
    return Number.isFinite(value) ? { value, realOnly: cx === null } : null;
  }

  /**
   * Whether allowed mode k provably cannot change any tracked best (bounds.ts):
   * every eigenvalue has Re λ below each branch's best (with margins), by the
   * small-gain bound or, on J'(k) itself, by Routh–Hurwitz; when no complex
   * pair has been found, the Gershgorin discs must also prove all eigenvalues
   * real.
   */
  irrelevant(k: number): boolean {
    if (this.bounds === null) return false;
    if (this.goal === 'state' && k < this.stableBelow) return true; // proven stable: cannot make the state unstable or beat a growing best
    const t = this.target();
    if (t === null) return false;
    if (!t.realOnly && this.bounds.provesBelow(k, t.value)) return true;
    if (this.model.M < 2) return false;
    this.jacobians++;
    if (!t.realOnly && this.bounds.structured) return this.bounds.structuredRouthBelow(k, t.value, this.routh);
    const J = this.bounds.jacobianAt(k);
    if (J === null) return false;
    if (t.realOnly && !spectrumReal(J, this.model.M, this.routh)) return false;
    if (t.realOnly && this.bounds.provesBelow(k, t.value)) return true;
    return gershgorinBelow(J, this.model.M, t.value) || routhBelow(J, this.model.M, t.value, this.routh);
  }

  /**
   * Whether every allowed mode n in [from, to] is irrelevant now: checked one
   * by one until the small-gain tail bound covers the rest (at most
   * PROOF_BUDGET modes; otherwise false).
   */
  allIrrelevant(from: number, to: number): boolean {
    if (this.bounds === null || to < from) return this.bounds !== null;
    const t = this.target();
    if (t === null) return false;
    const start = this.jacobians;
    for (let n = from, checked = 0; n <= to; n++, checked++) {
      if (!t.realOnly && this.bounds.provesTailBelow(n, t.value)) return true;
      if (checked >= PROOF_BUDGET || this.jacobians - start >= JACOBIAN_BUDGET || !this.irrelevant(n)) return false;
    }
    return true;
  }

  /** Offer allowed mode n, unless a bound proves it changes nothing. */
  offerMode(n: number): void {
    if (this.irrelevant(n)) {
      this.proven++;
      return;
    }
    this.offer(this.eval(n));
  }

  eval(k: number): ModeSpectrum {
    const s = modeSpectrum(this.model, k);
    this.evaluations++;
    if (!s.converged) this.unconverged++;
    return resolvedSpectrum(s);
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
  return scan(model, walls, options, 'full');
}

/** The state a scan reports: `stable` unless the overall best grows, then the type of that eigenvalue (docs/model.md §5). */
export type ScanState = 'stable' | 'stationary' | 'oscillatory';

/**
 * The state alone (stable / stationary / oscillatory), equal to what
 * `scanModes` gives (`overall.value > 0`, then `overall.im > 0`) but with fewer
 * eigenvalues (docs/model.md §4–§5):
 *
 *  - first a proof of `stable` with no eigenvalues at all: in a sealed or
 *    periodic chamber every allowed mode n = 1, 2, … is shown to have
 *    Re λ < 0 by the small-gain bound or, failing that, by Routh–Hurwitz on
 *    J'(n), until the small-gain tail bound covers every higher mode; in an
 *    unbounded chamber by the one inequality of `provesStableEverywhere`;
 *  - otherwise the general scan, in which an allowed mode proven stable, or
 *    proven below the growth already found, takes no eigenvalues (the
 *    fastest growing mode decides the type).
 *
 * `earlyExit: false` is the general scan itself (the reference).
 */
export function scanState(model: ScaledModel, walls: Walls, options: ScanOptions = {}): ScanState {
  let stableBelow = 1;
  if (options.earlyExit !== false && model.M > 0) {
    const bounds = new ModeBounds(model);
    if (bounds.usable) {
      if (walls === 'unbounded') {
        if (bounds.provesStableEverywhere()) return 'stable';
      } else {
        stableBelow = firstUnprovenMode(model, bounds);
        if (stableBelow === Infinity) return 'stable';
      }
    }
  }
  const o = scan(model, walls, options, 'state', stableBelow).overall;
  return o.value > 0 ? (o.im > 0 ? 'oscillatory' : 'stationary') : 'stable';
}

/**
 * The first allowed mode n ≥ 1 not proven stable (small gain, then Gershgorin
 * and Routh–Hurwitz on J'(n)), or Infinity when the small-gain tail bound
 * covers every mode from some n on and all below it are proven.
 */
function firstUnprovenMode(model: ScaledModel, bounds: ModeBounds): number {
  const routh = routhScratch(model.M);
  for (let n = 1; n <= PROOF_BUDGET; n++) {
    if (bounds.provesTailBelow(n, 0)) return Infinity;
    if (bounds.provesBelow(n, 0)) continue;
    if (bounds.structured) {
      if (bounds.structuredRouthBelow(n, 0, routh)) continue;
      return n;
    }
    const J = model.M < 2 ? null : bounds.jacobianAt(n);
    if (J === null || !(gershgorinBelow(J, model.M, 0) || routhBelow(J, model.M, 0, routh))) return n;
  }
  return PROOF_BUDGET + 1;
}

/** `stableBelow`: allowed modes n < stableBelow are already proven stable (state goal only). */
function scan(model: ScaledModel, walls: Walls, options: ScanOptions, goal: Goal, stableBelow = 1): ScanResult {
  const maxExhaustive = options.maxExhaustive ?? 200;
  const perDecade = options.perDecade ?? 24;
  const discrete = walls !== 'unbounded';
  const bounds = discrete && options.earlyExit !== false ? new ModeBounds(model) : null;
  const t = new Tracker(model, discrete, bounds !== null && bounds.usable ? bounds : null, goal, stableBelow);
  const bound = gershgorinBound(model);
  let longWaveLimit = false;
  let kHi: number;

  const refine = (lo: number, hi: number, branch: Branch, offerAt: (k: number) => void, candidates?: [number, number]) => {
    // a refinement that can only offer irrelevant modes changes nothing: not run
    if (candidates !== undefined && t.allIrrelevant(candidates[0], candidates[1])) return;
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

  // candidates(lo, hi): the allowed modes a refinement of [lo, hi] can offer (discrete only)
  const gridSearch = (ks: number[], offerAt: (k: number) => void, candidates?: (lo: number, hi: number) => [number, number]) => {
    const specs = ks.map((k) => t.eval(k));
    for (const s of specs) offerAt(s.k);
    for (const b of BRANCHES) {
      const vals = specs.map((s) => s[b]);
      for (const i of localMaxima(vals, b === 'maxRe' ? 4 : 2)) {
        const lo = ks[Math.max(0, i - 1)]!;
        const hi = ks[Math.min(ks.length - 1, i + 1)]!;
        if (hi > lo) refine(lo, hi, b, offerAt, candidates?.(lo, hi));
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
    for (let n = 2; n <= nEx; n++) t.offerMode(n);
    // the grid stage offers only modes in [nEx, nHi]; when every one is proven irrelevant it cannot change anything
    if (nHi > nEx && !t.allIrrelevant(nEx, nHi)) {
      const offerInt = (k: number) => {
        for (const n of new Set([Math.floor(k), Math.ceil(k)])) {
          if (n >= nEx && n <= nHi) t.offerMode(n);
        }
      };
      const candidates = (lo: number, hi: number): [number, number] => [Math.max(nEx, Math.floor(lo * (1 - 1e-12))), Math.min(nHi, Math.ceil(hi * (1 + 1e-12)))];
      gridSearch(logGrid(nEx, nHi, perDecade), offerInt, candidates);
    }
  } else {
    // Continuum. The k → 0 limit: J' → 0 when R' is invertible (f → 0); otherwise
    // a k-independent part survives, read off at a vanishing k'.
    let kLo = 1e-4;
    for (let s = 0; s < model.S; s++) {
      const r = model.reaction[s * model.S + s]!;
      if (r > 0) kLo = Math.min(kLo, 1e-4 * Math.sqrt(r / model.chemDiffusivity[s]!));
    }
    // The k' → 0 limit: 0 when R' is invertible (J' = O(k'²)); otherwise the S×S
    // reduction of longWaveLimitSpectrum, resolved against the scale of its own sums.
    const limit: ModeSpectrum = model.reactionSingular
      ? longWaveLimitSpectrum(model)
      : { k: 0, maxRe: 0, imAtMax: 0, maxReal: 0, maxComplex: -Infinity, imComplex: 0, converged: true, scale: 0 };
    if (!limit.converged) t.unconverged++;
    const limitValue = Number.isFinite(limit.maxRe) ? limit.maxRe : 0;
    const fRef = limitValue;
    kHi = Math.sqrt(cutoff(bound, fRef, model));
    // a bound of 0 (nothing couples: no mode can beat the limit) still scans a little way in k' > 0
    if (!(kHi > 0)) kHi = 1;
    kLo = Math.min(kLo, kHi * 1e-4);
    const ks = logGrid(kLo, kHi, perDecade);
    const offerK = (k: number) => t.offer(t.eval(k));
    gridSearch(ks, offerK);
    const best = t.best.maxRe!;
    // Supremum at the long-wave end: the maximum sits on the first grid point and
    // the curve falls away from it, or no finite k' does better than the limit.
    if (best.spec.k < (ks[1] ?? Infinity) || best.spec.maxRe <= limitValue) {
      longWaveLimit = true;
      const limitSpec: ModeSpectrum = { ...limit, maxRe: limitValue };
      t.best.maxRe = { spec: limitSpec, index: null };
      if (!(t.best.maxReal !== null && t.best.maxReal.spec.maxReal > limit.maxReal) && limit.maxReal > -Infinity) t.best.maxReal = { spec: limitSpec, index: null };
      if (!(t.best.maxComplex !== null && t.best.maxComplex.spec.maxComplex > limit.maxComplex) && limit.maxComplex > -Infinity) t.best.maxComplex = { spec: limitSpec, index: null };
      // the overall growth is never below a branch's (one answer, not two)
      for (const b of ['maxReal', 'maxComplex'] as const) {
        const x = t.best[b];
        if (x !== null && x.spec[b] > t.best.maxRe.spec.maxRe) {
          t.best.maxRe = { spec: { ...x.spec, maxRe: x.spec[b], imAtMax: b === 'maxReal' ? 0 : x.spec.imComplex }, index: x.index };
          longWaveLimit = x.spec.k === 0;
        }
      }
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
    proven: t.proven,
  };
}
