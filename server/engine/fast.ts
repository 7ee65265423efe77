/**
 * Fast exact paths of the dose planner (docs/model.md §6 "Fast exact paths", §7).
 *
 * In `add` mode without crowding, for a dopant d that is not already in the
 * base and has no saturating coupling (its density would enter R and G), the
 * dose x enters the scaled Jacobian of every allowed mode only through the
 * dopant's own row: with Ĵ = J'/k'² (so the mode's eigenvalues are O(1) at
 * every k'),
 *
 *     Ĵ(x) = Ĵ₀ + x e_d wᵀ,      w_n = −p_dᵀ G'(k') Q'_nᵀ            (per unit dose)
 *
 * Two facts follow.
 *
 * 1. **Stationary crossings in closed form** (Weinstein–Aronszajn at λ = 0,
 *    docs/model.md §3). det(−J) = Π_m k'²D'_m · det(M(x)) with the S×S matrix
 *    M(x) = I_S + G' Q'ᵀ 𝔇'⁻¹ P'(x). The dopant adds x (G' q_d / D'_d) p_dᵀ, a
 *    rank-one update, so det M(x) = det M₀ (1 + x vᵀ M₀⁻¹ u) with u = G'q_d/D'_d,
 *    v = p_d: affine in x. A real eigenvalue of the mode crosses zero exactly at
 *    x_k = −1/(vᵀM₀⁻¹u) when that is positive, and past it det M stays negative
 *    (an odd number of growing real eigenvalues: the crossing cannot return).
 * 2. **Hurwitz counts at any dose** in O(n²). The characteristic polynomial is
 *    affine in x too: det(λ − Ĵ(x)) = p₀(λ) − x q(λ) (matrix determinant lemma on
 *    the one row), with p₀ = charPoly(Ĵ₀) and q = (p₀ − charPoly(Ĵ(x_s)))/x_s. The
 *    Routh–Hurwitz count (linalg/charpoly.ts) of p₀ − x q says how many roots of
 *    the mode grow at dose x.
 *
 * The stationary threshold is x* = min_k x_k over the allowed modes, certified
 * only when every mode is stable (count 0) at each scan dose below x* (the same
 * log grid the general search samples) and at x*(1 − 10⁻⁶) (`verdict`). When a
 * mode grows below x* (a Hopf crossing first) the second tier (`search`) runs
 * the general search's scan doses and bisection on the exact predicate
 * `pastExact`: past x* always; below it per mode p(0; x) < 0, the Hurwitz
 * count, Descartes' rule of signs, and only then the mode's own eigenvalues.
 * Anything unproven (a degenerate table at dose 0, the eigen solver not
 * converging, too many modes) makes the caller fall back to the general path.
 *
 * **Which modes.** Modes k' = 1, 2, … up to the scan's proven bound (scan.ts,
 * docs/model.md §4) with f_ref = 0, on the Gershgorin rows of S⁻¹J'S with
 * S = diag(1, …, 1, t) (t balances the dopant's row against the base's), at the
 * largest dose that matters: the cap at first, then the lowest x_k found so far
 * (a mode beyond the bound at X cannot cross below X). With R' diagonal the
 * enumeration also stops where a bound that falls with k' proves every higher
 * mode stable. A mode whose Gershgorin bound on Ĵ (rows, columns, or scaled
 * rows; each a maximum of functions affine in x, hence convex) is negative on
 * [0, X] needs no work at all; every other mode keeps the dose below which such
 * a bound proves it stable (no Hurwitz count there) and makes its polynomials
 * on first use.
 *
 * Everything is in the engine's scaled units (length ℓ = 1/k₁, time ℓ²/max D,
 * one concentration unit per chemical as in buildModel, with the dopant taken at
 * the cap), so the small matrices are O(1).
 *
 * A `RankOneDose` owns its work arrays and reuses them from one call to the
 * next (one per candidate, across all its Monte Carlo draws): the loops over
 * modes and doses allocate no arrays (only small typed-array views, and the
 * eigenvalues of a growing mode inside ml-matrix).
 *
 * @example
 *   const f = new RankOneDose();
 *   if (f.prepare(base, dopant, cap, 'stationary').kind === 'stable') {
 *     const v = f.verdict(48); // { kind: 'threshold', dose, mode } | { kind: 'none-below-cap' } | fallback
 *   }
 */
import { charPoly, charPolyScratch, hurwitzUnstable, type CharPolyScratch } from './linalg/charpoly.js';
import { solveInPlace } from './linalg/dense.js';
import { eigenvalues } from './linalg/eigen.js';
import { linearise } from './model.js';
import { GROWTH_RESOLUTION } from './scan.js';
import { REAL_TOLERANCE } from './spectrum.js';
import type { Mixture, Species } from './types.js';

/** More modes below the proven bound than this and the general path (exhaustive to 200 modes, a log grid beyond) is used instead. */
export const MAX_FAST_MODES = 20000;
/** Certification just below the threshold: every mode must be stable at x*(1 − this). */
export const BELOW_THRESHOLD = 1e-6;
/** The general search's floor (a fraction of the cap): a fast threshold below it is left to the general path. */
const FLOOR = 1e-30;

/**
 * Why the fast path cannot serve this (base, dopant, dosing, boundary), or null when it can.
 * Depends only on the structure, not on the values, so it holds for every Monte Carlo draw.
 */
export function fastInapplicable(base: Mixture, d: Species, dosing: 'add' | 'replace', boundary: string): string | null {
  if (dosing !== 'add') return 'replace mode scales the whole base, not one row';
  if (boundary !== 'stationary' && boundary !== 'any') return `the ${boundary} boundary needs the spectrum`;
  if (base.crowding) return 'crowding couples every species through excluded volume';
  if (base.chamber.walls === 'unbounded') return 'an unbounded chamber has a continuum of modes';
  if (base.species.some((s) => s.id === d.id)) return 'the dopant is already in the base';
  if (d.couplings.some((c) => c.activity?.kind === 'saturating')) return 'a saturating coupling of the dopant puts its density into R';
  return null;
}

/** What `prepare` found about the base at dose 0. */
export type FastBase =
  | { kind: 'stable' }
  /** the base alone is past the boundary: a growing root (any), or det M₀ < 0 at some mode (stationary: an odd number of growing real eigenvalues) */
  | { kind: 'base-past' }
  /** stationary boundary: some mode grows at dose 0 but no determinant is negative (a growing complex pair, or an even number of growing real roots): `pastExact(0)` decides */
  | { kind: 'unsettled' }
  | { kind: 'fallback'; why: string };

/** The search on exact predicates (second tier): the general search's scan doses and bisection, each dose decided by Hurwitz counts and the eigenvalues of the modes that grow. */
export type FastSearch =
  | { kind: 'threshold'; dose: number; windowUpTo: number | null }
  | { kind: 'any-dose'; floor: number }
  | { kind: 'none-below-cap' }
  | { kind: 'fallback'; why: string };

/**
 * First x in (lo, hi] with pred true, given pred(lo) false and pred(hi) true, to a relative bracket
 * of relTol: in the geometric mean while the bracket spans more than a factor of 4, then arithmetically.
 */
export function bisect(pred: (x: number) => boolean, lo: number, hi: number, relTol: number): number {
  for (let it = 0; it < 200 && hi - lo > relTol * hi; it++) {
    const mid = lo > 0 && hi / lo > 4 ? Math.sqrt(lo * hi) : 0.5 * (lo + hi);
    if (pred(mid)) hi = mid;
    else lo = mid;
  }
  return hi;
}

class Undecided extends Error {}

/**
 * The number of distinct real roots in (0, ∞) of the polynomial with descending coefficients c[0 … n]
 * (c[0] ≠ 0, c[n] ≠ 0), by Sturm's theorem: p₀ = p, p₁ = p′, p_{i+1} = −rem(p_{i−1}, p_i); the count is
 * the sign changes of the sequence at 0 (the constant terms) less those at +∞ (the leading
 * coefficients). Null when it cannot be trusted: a remainder whose every coefficient is within
 * 10⁻¹⁰ of its dividend's scale before the sequence ends (a repeated root, or nearly), or a
 * non-finite value, or p(0) = 0. `work` holds (n + 1)² numbers, `deg` n + 1.
 * @example sturmPositiveRoots(Float64Array.of(1, -3, 2), new Float64Array(9), new Int32Array(3)) // 2: (λ − 1)(λ − 2)
 */
export function sturmPositiveRoots(c: ArrayLike<number>, work: Float64Array, deg: Int32Array): number | null {
  const n = c.length - 1;
  if (n < 1) return 0;
  if (c[n] === 0 || c[0] === 0) return null;
  const w = n + 1;
  // row i holds p_i with degree deg[i], coefficients descending from index 0
  for (let t = 0; t <= n; t++) work[t] = c[t]!;
  deg[0] = n;
  for (let t = 0; t < n; t++) work[w + t] = (n - t) * c[t]!;
  deg[1] = n - 1;
  let rows = 2;
  while (deg[rows - 1]! > 0) {
    const a = (rows - 2) * w;
    const b = (rows - 1) * w;
    const da = deg[rows - 2]!;
    const db = deg[rows - 1]!;
    const r = rows * w;
    // remainder of p_a by p_b (long division, in place on a copy of p_a)
    for (let t = 0; t <= da; t++) work[r + t] = work[a + t]!;
    let scale = 0;
    for (let t = 0; t <= da; t++) scale = Math.max(scale, Math.abs(work[a + t]!));
    const lead = work[b]!;
    for (let t = 0; t + db <= da; t++) {
      const f = work[r + t]! / lead;
      for (let u = 0; u <= db; u++) work[r + t + u]! -= f * work[b + u]!;
      work[r + t] = 0;
    }
    // the remainder has degree < db: its coefficients sit at r + da − db + 1 … r + da; negate and shift to the front
    const rd = db - 1;
    let first = -1;
    const tiny = 1e-10 * scale;
    for (let t = 0; t <= rd; t++) {
      const v = -work[r + da - rd + t]!;
      if (!Number.isFinite(v)) return null;
      work[r + t] = v;
      if (first < 0 && Math.abs(v) > tiny) first = t;
    }
    if (first < 0) return null; // p_a and p_b share a root (to rounding): not trusted
    if (first > 0) {
      for (let t = 0; t <= rd - first; t++) work[r + t] = work[r + t + first]!;
    }
    deg[rows] = rd - first;
    rows++;
  }
  let at0 = 0;
  let atInf = 0;
  let s0 = 0;
  let sInf = 0;
  for (let i = 0; i < rows; i++) {
    const v0 = work[i * w + deg[i]!]!;
    const vInf = work[i * w]!;
    if (v0 !== 0) {
      const sg = v0 > 0 ? 1 : -1;
      if (s0 !== 0 && sg !== s0) at0++;
      s0 = sg;
    }
    const sg = vInf > 0 ? 1 : -1;
    if (sInf !== 0 && sg !== sInf) atInf++;
    sInf = sg;
  }
  return at0 - atInf;
}

export type FastVerdict =
  /** the first crossing: a real eigenvalue of mode `mode` crosses zero at `dose` (m⁻³); stable at every certified dose below */
  | { kind: 'threshold'; dose: number; mode: number }
  /** no mode's determinant changes sign at or below the cap, and every mode is stable at every scan dose */
  | { kind: 'none-below-cap' }
  | { kind: 'fallback'; why: string };

/** The stationary threshold from monotonicity (`stationaryThreshold`). */
export type StationaryVerdict =
  /** first dose with a real eigenvalue ≥ 0 at mode `mode`: the determinant crossing x_k, or (`interior`) a root that reached the positive real axis earlier, bisected; every dose below `certifiedBelow` is proven not past */
  | { kind: 'threshold'; dose: number; mode: number; interior: boolean; certifiedBelow: number }
  /** no mode has a real eigenvalue ≥ 0 at the cap, hence at no dose below it */
  | { kind: 'none-below-cap' }
  | { kind: 'fallback'; why: string };

/** The fast path for one candidate; `prepare` for each (base, dopant) draw, then `verdict`, `stableAt`, `pastAt`. */
export class RankOneDose {
  /** species (base + the dopant, last) */
  n = 0;
  /** chemicals kept (those that move a particle, and the base's fuels) */
  S = 0;
  /** modes below the proven bound, and how many of them the Gershgorin test did not settle */
  modes = 0;
  active = 0;
  /** doses at which the Hurwitz counts were taken (since `prepare`) */
  checked = 0;
  cap = 0;
  private xStar = Infinity;
  private kStar = 0;
  private verdictCache: FastVerdict | null = null;
  // scaled coefficients
  private D = new Float64Array(0);
  private P = new Float64Array(0);
  private Q = new Float64Array(0);
  private Dc = new Float64Array(0);
  private R = new Float64Array(0);
  private cstar = new Float64Array(0);
  private kept = new Int32Array(0);
  private alphaD = new Float64Array(0);
  private muD = new Float64Array(0);
  // per active mode
  private modeN = new Int32Array(0);
  private p0 = new Float64Array(0);
  private q = new Float64Array(0);
  private xk = new Float64Array(0);
  private J0s = new Float64Array(0);
  /** per active mode: every dose below this is proven stable by a Gershgorin bound (no Hurwitz count needed) */
  private settled = new Float64Array(0);
  /** per active mode: 0 polynomials not made yet, 1 made, 2 not finite */
  private ready = new Uint8Array(0);
  private Ws = new Float64Array(0);
  // work
  private A = new Float64Array(0);
  private X = new Float64Array(0);
  private J = new Float64Array(0);
  private w = new Float64Array(0);
  private M0 = new Float64Array(0);
  private y = new Float64Array(0);
  private coef = new Float64Array(0);
  private coefView = new Float64Array(0);
  // the structured polynomials of `stationary`: per set U of chemicals, B⁰_U and B¹_U (descending), and work
  private B0 = new Float64Array(0);
  private B1 = new Float64Array(0);
  private CU = new Float64Array(0);
  private eW = new Float64Array(0);
  private gU = new Float64Array(0);
  private rowB = new Float64Array(0);
  private rowD = new Float64Array(0);
  private routh = new Float64Array(0);
  private cp: CharPolyScratch = charPolyScratch(1);
  private sturm = new Float64Array(0);
  private hA = new Float64Array(0);
  private hB = new Float64Array(0);
  private hC = new Float64Array(0);
  private hE = new Float64Array(0);
  private hG = new Float64Array(0);
  private hD = new Float64Array(0);
  /** per active mode: 0 not yet asked, 1 proven free of Hopf crossings, 2 not proven */
  private hopf = new Uint8Array(0);
  private sturmDeg = new Int32Array(0);

  private size(n: number, S: number, Sf: number): void {
    if (this.D.length < n) {
      this.D = new Float64Array(n);
      this.J = new Float64Array(n * n);
      this.w = new Float64Array(n);
      this.coef = new Float64Array(n + 1);
      this.routh = new Float64Array(3 * (Math.floor(n / 2) + 2));
      this.sturm = new Float64Array((n + 1) * (n + 1));
      const half = Math.floor(n / 2) + 1;
      this.hA = new Float64Array(half);
      this.hB = new Float64Array(half);
      this.hC = new Float64Array(half);
      this.hE = new Float64Array(half);
      this.hG = new Float64Array(2 * half);
      this.hD = new Float64Array(2 * half);
      this.sturmDeg = new Int32Array(n + 1);
    }
    if (this.cp.n !== n) this.cp = charPolyScratch(n);
    if (this.P.length < n * S) {
      this.P = new Float64Array(n * S);
      this.Q = new Float64Array(n * S);
    }
    if (this.X.length < S * n) this.X = new Float64Array(S * n);
    if (this.Dc.length < S) {
      this.Dc = new Float64Array(S);
      this.cstar = new Float64Array(S);
      this.y = new Float64Array(S);
      this.R = new Float64Array(S * S);
      this.A = new Float64Array(S * S);
      this.M0 = new Float64Array(S * S);
    }
    if (this.R.length < S * S) {
      this.R = new Float64Array(S * S);
      this.A = new Float64Array(S * S);
      this.M0 = new Float64Array(S * S);
    }
    if (this.kept.length < Sf) this.kept = new Int32Array(Sf);
    if (this.alphaD.length < Sf) {
      this.alphaD = new Float64Array(Sf);
      this.muD = new Float64Array(Sf);
    }
  }

  /** Room for `count` modes of n + 1 coefficients each, keeping the modes already stored. */
  private sizeModes(count: number, n: number): void {
    const stride = n + 1;
    if (this.modeN.length >= count && this.p0.length >= this.modeN.length * stride && this.J0s.length >= this.modeN.length * n * n) return;
    const c = Math.max(count, 2 * this.modeN.length, 16);
    const grow = <T extends Int32Array | Float64Array>(old: T, len: number, make: (l: number) => T): T => {
      const a = make(len);
      a.set(old.subarray(0, Math.min(old.length, len)) as never);
      return a;
    };
    this.modeN = grow(this.modeN, c, (l) => new Int32Array(l));
    this.xk = grow(this.xk, c, (l) => new Float64Array(l));
    this.settled = grow(this.settled, c, (l) => new Float64Array(l));
    const ready = new Uint8Array(c);
    ready.set(this.ready.subarray(0, Math.min(this.ready.length, c)));
    this.ready = ready;
    const hopf = new Uint8Array(c);
    hopf.set(this.hopf.subarray(0, Math.min(this.hopf.length, c)));
    this.hopf = hopf;
    this.p0 = grow(this.p0, c * stride, (l) => new Float64Array(l));
    this.q = grow(this.q, c * stride, (l) => new Float64Array(l));
    this.J0s = grow(this.J0s, c * n * n, (l) => new Float64Array(l));
    this.Ws = grow(this.Ws, c * n, (l) => new Float64Array(l));
  }

  /**
   * Build the per-mode facts for `d` added to `base` with doses up to `cap` (m⁻³, > 0), and decide the
   * base's own side (dose 0). The caller has checked `fastInapplicable` is null. Mixtures must be valid
   * (the planner validates the nominal one; Monte Carlo draws keep validity).
   */
  /**
   * The scaled coefficients of `d` added to `base` with doses up to `cap` (the first half of `prepare`): n, S, D, P, Q
   * (the dopant's row per unit dose), R, Dc, c*. Null when done, else why the fast path cannot serve.
   */
  private setup(base: Mixture, d: Species, cap: number): string | null {
    this.verdictCache = null;
    this.checked = 0;
    this.active = 0;
    this.modes = 0;
    this.xStar = Infinity;
    this.kStar = 0;
    this.cap = cap;
    const Mb = base.species.length;
    const n = Mb + 1;
    const Sf = base.chemicals.length;
    const lin = linearise(base);
    this.size(n, 0, Sf);
    // the dopant's activities (constant only) and mobilities, per chemical of the mixture
    const alphaD = this.alphaD;
    const muD = this.muD;
    alphaD.fill(0, 0, Sf);
    muD.fill(0, 0, Sf);
    for (const c of d.couplings) {
      let s = 0;
      while (s < Sf && base.chemicals[s]!.id !== c.chemical) s++;
      if (s === Sf) return `unknown chemical "${c.chemical}"`;
      muD[s]! += c.mobility;
      if (c.activity !== null && c.activity.kind === 'constant') alphaD[s]! += c.activity.rate;
    }
    // kept chemicals: the same rule as buildModel (someone responds to it, or it is a base fuel)
    let S = 0;
    const kept = this.kept;
    for (let s = 0; s < Sf; s++) {
      let keep = muD[s] !== 0;
      for (let m = 0; m < Mb && !keep; m++) if (lin.mu[m * Sf + s] !== 0) keep = true;
      if (!keep) {
        const id = base.chemicals[s]!.id;
        for (const sp of base.species) for (const c of sp.couplings) if (c.chemical === id && c.activity?.kind === 'saturating') keep = true;
      }
      if (keep) kept[S++] = s;
    }
    if (S === 0) return 'no chemical moves a particle';
    this.S = S;
    this.n = n;
    this.size(n, S, Sf);
    const { walls, length } = base.chamber;
    const ell = walls === 'sealed' ? length! / Math.PI : length! / (2 * Math.PI);
    let Dmax = d.diffusivity;
    for (const sp of base.species) Dmax = Math.max(Dmax, sp.diffusivity);
    const tau = (ell * ell) / Dmax;
    const D = this.D;
    const P = this.P;
    const Q = this.Q;
    for (let si = 0; si < S; si++) {
      const s = kept[si]!;
      let amax = Math.abs(alphaD[s]!);
      let pmax = Math.abs(cap * muD[s]!);
      for (let m = 0; m < Mb; m++) {
        amax = Math.max(amax, Math.abs(lin.alpha[m * Sf + s]!));
        pmax = Math.max(pmax, Math.abs(base.species[m]!.density * lin.mu[m * Sf + s]!));
      }
      const c0 = base.chemicals[s]!.concentration;
      this.cstar[si] = amax > 0 && pmax > 0 ? Math.sqrt(amax / pmax) / (ell * ell) : c0 > 0 ? c0 : 1;
      this.Dc[si] = base.chemicals[s]!.diffusivity / Dmax;
    }
    const cs = this.cstar;
    for (let si = 0; si < S; si++)
      for (let ti = 0; ti < S; ti++) this.R[si * S + ti] = (tau * lin.reaction[kept[si]! * Sf + kept[ti]!]! * cs[ti]!) / cs[si]!;
    for (let m = 0; m < n; m++) {
      const sp = m < Mb ? base.species[m]! : d;
      D[m] = sp.diffusivity / Dmax;
      for (let si = 0; si < S; si++) {
        const s = kept[si]!;
        // the dopant's row of P' per unit dose; its α does not depend on its density
        const rhoMu = m < Mb ? sp.density * lin.mu[m * Sf + s]! : muD[s]!;
        const alpha = m < Mb ? lin.alpha[m * Sf + s]! : alphaD[s]!;
        P[m * S + si] = rhoMu * cs[si]! * tau * ell;
        Q[m * S + si] = (alpha * tau) / (cs[si]! * ell * ell * ell);
      }
    }
    for (let i = 0; i < n * S; i++) if (!Number.isFinite(P[i]!) || !Number.isFinite(Q[i]!)) return 'overflow';
    for (let i = 0; i < S * S; i++) if (!Number.isFinite(this.R[i]!)) return 'overflow';
    return null;
  }

  prepare(base: Mixture, d: Species, cap: number, boundary: 'stationary' | 'any'): FastBase {
    const why = this.setup(base, d, cap);
    if (why !== null) return { kind: 'fallback', why };
    const Mb = base.species.length;
    const n = Mb + 1;
    const dIdx = Mb;
    const S = this.S;
    const D = this.D;
    const P = this.P;
    const Q = this.Q;

    // The scan's proven bound (docs/model.md §4) at the cap, f_ref = 0: beyond it every mode decays at every dose.
    let dmin = Infinity;
    for (let m = 0; m < n; m++) dmin = Math.min(dmin, D[m]!);
    let minDc = Infinity;
    let kA2 = 0;
    for (let s = 0; s < S; s++) {
      minDc = Math.min(minDc, this.Dc[s]!);
      let row = 0;
      for (let t = 0; t < S; t++) row += Math.abs(this.R[s * S + t]!) / this.Dc[t]!;
      kA2 = Math.max(kA2, 2 * row);
    }
    let pBase = 0;
    let pDop = 0;
    for (let m = 0; m < n; m++) {
      let row = 0;
      for (let s = 0; s < S; s++) row += Math.abs(P[m * S + s]!);
      if (m === dIdx) pDop = row;
      else pBase = Math.max(pBase, row);
    }
    // Gershgorin on S⁻¹J'S with S = diag(1, …, 1, t) (the same eigenvalues): for k'² ≥ k_a², with
    // ‖k'²G'‖∞ ≤ g = 2/min D'_c, every row's sum of |C_mn| s_n/s_m is at most g h(t) max(p_B, X p_d/t),
    // h(t) = max_s (Σ_base |Q'_ns| + t |Q'_ds|); the best t = X p_d/p_B gives g max_s (p_B q_B,s + X p_d q_d,s).
    // So Re λ ≤ −k'² min D' + that, and beyond k'² = cut(X) every mode decays at every dose in [0, X].
    const g = 2 / minDc;
    const cutAt = (X: number) => {
      let r = 0;
      for (let s = 0; s < S; s++) {
        let qB = 0;
        for (let m = 0; m < Mb; m++) qB += Math.abs(Q[m * S + s]!);
        r = Math.max(r, pBase * qB + X * pDop * Math.abs(Q[dIdx * S + s]!));
      }
      return Math.max(kA2, (g * r) / dmin);
    };
    if (!Number.isFinite(cutAt(cap))) return { kind: 'fallback', why: 'no finite mode bound' };
    this.sizeModes(16, n);

    const X = this.X;
    const J = this.J;
    const w = this.w;
    const A = this.A;
    const M0 = this.M0;
    const y = this.y;
    const stride = n + 1;
    let baseUnstable = false;
    let baseStationary = false;
    // With R' diagonal and non-negative (no saturating turnover couples two chemicals), |(P'G'Q'ᵀ)_ij| ≤
    // Σ_s |P'_is||Q'_js| / (k'²D'_c,s + R'_ss), which falls with k'; a Gershgorin bound built from it that
    // is negative on [0, X] at mode k is negative at every higher mode too: the enumeration stops there.
    let diagonalR = true;
    for (let s = 0; s < S; s++) for (let t = 0; t < S; t++) if ((s !== t && this.R[s * S + t] !== 0) || (s === t && !(this.R[s * S + t]! >= 0))) diagonalR = false;
    const decaysBeyond = (k2: number, X: number): boolean => {
      let colD = 0;
      let dOff = 0;
      let dSelf = 0;
      let rows = -Infinity;
      for (let i = 0; i <= Mb; i++) {
        let r = 0;
        for (let j = 0; j < n; j++) {
          let e = 0;
          for (let s = 0; s < S; s++) e += (Math.abs(P[i * S + s]!) * Math.abs(Q[j * S + s]!)) / (k2 * this.Dc[s]! + this.R[s * S + s]!);
          if (i === dIdx) {
            if (j === dIdx) dSelf = e;
            else dOff += e;
          } else if (j === dIdx) colD = Math.max(colD, e);
          else r += e;
        }
        if (i < Mb) rows = Math.max(rows, -D[i]! + r);
      }
      if (!(rows < 0)) return false;
      // rows of S⁻¹ĴS with S = diag(1, …, 1, t); the base rows gain t·colD, the dopant's row X(dOff/t + dSelf)
      const t = colD > 0 && dOff > 0 && X > 0 ? Math.sqrt((X * dOff) / colD) : 1;
      let baseRows = -Infinity;
      for (let i = 0; i < Mb; i++) {
        let r = -D[i]!;
        let ed = 0;
        for (let j = 0; j < n; j++) {
          let e = 0;
          for (let s = 0; s < S; s++) e += (Math.abs(P[i * S + s]!) * Math.abs(Q[j * S + s]!)) / (k2 * this.Dc[s]! + this.R[s * S + s]!);
          if (j === dIdx) ed = e;
          else r += e;
        }
        baseRows = Math.max(baseRows, r + t * ed);
      }
      return baseRows < 0 && -D[dIdx]! + X * (dOff / t + dSelf) < 0;
    };
    for (let k = 1; ; k++) {
      // the doses that matter: [0, X], X = min(lowest crossing so far, cap); modes beyond the bound at X cannot cross below it
      const xMax = Math.min(this.xStar, cap);
      const k2 = k * k;
      if (k2 > cutAt(xMax)) break;
      if (diagonalR && k % 4 === 0 && decaysBeyond(k2, xMax)) break;
      if (k > MAX_FAST_MODES) return { kind: 'fallback', why: `more than ${MAX_FAST_MODES} modes below the proven bound` };
      this.modes = k;
      // X = k'² G' Q'ᵀ (S×n): (D'_c + R'/k'²) X = Q'ᵀ
      for (let s = 0; s < S; s++) {
        for (let t = 0; t < S; t++) A[s * S + t] = this.R[s * S + t]! / k2;
        A[s * S + s]! += this.Dc[s]!;
        for (let m = 0; m < n; m++) X[s * n + m] = Q[m * S + s]!;
      }
      if (!solveInPlace(A, S, X, n)) return { kind: 'fallback', why: 'singular chemistry at a mode' };
      // Ĵ₀ = J'/k'² at dose 0 (the dopant's row is its own −D'_d), and w (the dopant's row per unit dose)
      for (let i = 0; i < n; i++) {
        for (let j = 0; j < n; j++) {
          let acc = 0;
          for (let s = 0; s < S; s++) acc += P[i * S + s]! * X[s * n + j]!;
          if (i === dIdx) {
            w[j] = -acc / k2;
            J[i * n + j] = i === j ? -D[i]! : 0;
          } else J[i * n + j] = (i === j ? -D[i]! : 0) - acc / k2;
        }
      }
      // Gershgorin on Ĵ(x), rows and columns: each bound is a maximum of pieces a + s·x, convex in x, so it
      // stays negative on [0, x) up to x = min over rising pieces of −a/s when every a < 0 ("settled" below it)
      let rowBase = -Infinity;
      for (let i = 0; i < Mb; i++) {
        let r = J[i * n + i]!;
        for (let j = 0; j < n; j++) if (j !== i) r += Math.abs(J[i * n + j]!);
        rowBase = Math.max(rowBase, r);
      }
      let slope = w[dIdx]!;
      for (let j = 0; j < Mb; j++) slope += Math.abs(w[j]!);
      const Dd = D[dIdx]!;
      const upTo = (a0: number, s0: number) => (a0 >= 0 ? 0 : s0 > 0 ? -a0 / s0 : Infinity);
      const rowSettled = rowBase < 0 ? upTo(-Dd, slope) : 0;
      let colSettled = Infinity;
      for (let j = 0; j < n && colSettled > 0; j++) {
        let c = J[j * n + j]!;
        for (let i = 0; i < Mb; i++) if (i !== j) c += Math.abs(J[i * n + j]!);
        colSettled = Math.min(colSettled, upTo(c, j === dIdx ? w[dIdx]! : Math.abs(w[j]!)));
      }
      // rows of S⁻¹ĴS, S = diag(1, …, 1, t): the dopant's row sum shrinks by t, its column grows by t;
      // t balances the two at xMax (any fixed t > 0 gives a valid bound of the same convex form)
      let scaledSettled = 0;
      let colD = 0;
      let wOff = 0;
      for (let i = 0; i < Mb; i++) {
        colD = Math.max(colD, Math.abs(J[i * n + dIdx]!));
        wOff += Math.abs(w[i]!);
      }
      if (colD > 0 && wOff > 0 && xMax > 0) {
        const t = Math.sqrt((xMax * wOff) / colD);
        let rows = -Infinity;
        for (let i = 0; i < Mb; i++) {
          let r = J[i * n + i]!;
          for (let j = 0; j < Mb; j++) if (j !== i) r += Math.abs(J[i * n + j]!);
          rows = Math.max(rows, r + t * Math.abs(J[i * n + dIdx]!));
        }
        scaledSettled = rows < 0 ? upTo(-Dd, w[dIdx]! + wOff / t) : 0;
      }
      const settled = Math.max(rowSettled, colSettled, scaledSettled);
      if (settled > xMax) continue; // stable at every dose in [0, xMax]

      const a = this.active;
      this.sizeModes(a + 1, n);
      this.modeN[a] = k;
      this.settled[a] = settled;
      // the S×S rank-one determinant: M₀ = I + G'Q_Bᵀ𝔇_B⁻¹P_B, u = G'q_d/D'_d, v = p_d
      for (let s = 0; s < S; s++) {
        for (let t = 0; t < S; t++) {
          let acc = s === t ? 1 : 0;
          for (let m = 0; m < Mb; m++) acc += (X[s * n + m]! * P[m * S + t]!) / (k2 * D[m]!);
          M0[s * S + t] = acc;
        }
        y[s] = X[s * n + dIdx]! / (k2 * D[dIdx]!);
      }
      if (!solveInPlace(M0, S, y, 1)) return { kind: 'fallback', why: 'singular S×S matrix at a mode' };
      let beta = 0;
      for (let t = 0; t < S; t++) beta += P[dIdx * S + t]! * y[t]!;
      const xk = beta < 0 ? -1 / beta : Infinity;
      this.xk[a] = xk;
      // keep Ĵ₀ and w for the eigenvalues of a growing mode (second tier)
      this.J0s.set(J.subarray(0, n * n), a * n * n);
      this.Ws.set(w.subarray(0, n), a * n);
      this.ready[a] = 0;
      this.hopf[a] = 0;
      this.active = a + 1;
      // dose 0: a mode a bound proves stable there needs no polynomial yet (they are made when a dose needs them)
      if (settled <= 0) {
        if (!this.poly(a)) return { kind: 'fallback', why: 'non-finite characteristic polynomial' };
        const off = a * stride;
        const h = hurwitzUnstable(this.p0.subarray(off, off + stride), this.routh);
        if (h === null) return { kind: 'fallback', why: 'degenerate Routh table at dose 0' };
        if (h > 0) {
          baseUnstable = true;
          // det(−Ĵ₀) = p₀(0) < 0: an odd number of growing real eigenvalues
          if (this.p0[off + n]! < 0) baseStationary = true;
        }
      }
      if (xk < this.xStar) {
        this.xStar = xk;
        this.kStar = k;
      }
    }
    this.checked = 1;
    if (baseUnstable) {
      if (boundary === 'any' || baseStationary) return { kind: 'base-past' };
      return { kind: 'unsettled' };
    }
    return { kind: 'stable' };
  }

  /**
   * p₀ and q of active mode a (det(λ − Ĵ(x)) = p₀(λ) − x q(λ)), made on first use from Ĵ₀ and w:
   * p₀ = charPoly(Ĵ₀), q = (p₀ − charPoly(Ĵ(x_s)))/x_s with x_s = min(cap, x_k). False when not finite.
   */
  private poly(a: number): boolean {
    if (this.ready[a] === 1) return true;
    if (this.ready[a] === 2) return false;
    const n = this.n;
    const stride = n + 1;
    const J = this.J;
    J.set(this.J0s.subarray(a * n * n, (a + 1) * n * n));
    const c0 = charPoly(J, n, this.cp);
    const off = a * stride;
    for (let t = 0; t < stride; t++) this.p0[off + t] = c0[t]!;
    const xs = Math.min(this.cap, this.xk[a]!);
    const dIdx = n - 1;
    for (let j = 0; j < n; j++) J[dIdx * n + j]! += xs * this.Ws[a * n + j]!;
    const c1 = charPoly(J, n, this.cp);
    let finite = true;
    for (let t = 0; t < stride; t++) {
      this.q[off + t] = (this.p0[off + t]! - c1[t]!) / xs;
      if (!Number.isFinite(this.p0[off + t]!) || !Number.isFinite(this.q[off + t]!)) finite = false;
    }
    this.ready[a] = finite ? 1 : 2;
    return finite;
  }

  /**
   * Whether mode a provably never has a root on the imaginary axis away from 0 at any dose x ≥ 0
   * (no Hopf crossing), so that its count of growing roots changes only where its determinant does,
   * at x_k: stable on [0, x_k) when stable at 0. With p(iω; x) = p₀(iω) − x q(iω), p₀(iω) = A + iB and
   * q(iω) = C + iE, a root iω at some dose needs A − xC = B − xE = 0, hence A E − B C = 0. A, C are even
   * in ω and B, E odd, so A E − B C = ω g(ω²); by Sturm's theorem, g with no positive root (and
   * g(0) ≠ 0) proves the mode free of Hopf crossings. Not proven (false) when Sturm cannot be trusted.
   */
  private hopfFree(a: number): boolean {
    if (this.hopf[a] !== 0) return this.hopf[a] === 1;
    this.hopf[a] = 2;
    if (!this.poly(a)) return false;
    const n = this.n;
    const stride = n + 1;
    const off = a * stride;
    // ascending in s = ω²: Ā_m = (−1)^m P_2m, B̄_m = (−1)^m P_2m+1 with P_j the coefficient of λ^j
    const half = Math.floor(n / 2) + 1;
    const A = this.hA;
    const B = this.hB;
    const C = this.hC;
    const E = this.hE;
    for (let m = 0; m < half; m++) {
      const sg = m % 2 === 0 ? 1 : -1;
      const j0 = 2 * m;
      const j1 = 2 * m + 1;
      A[m] = j0 <= n ? sg * this.p0[off + n - j0]! : 0;
      C[m] = j0 <= n ? sg * this.q[off + n - j0]! : 0;
      B[m] = j1 <= n ? sg * this.p0[off + n - j1]! : 0;
      E[m] = j1 <= n ? sg * this.q[off + n - j1]! : 0;
    }
    const g = this.hG;
    const len = 2 * half - 1;
    g.fill(0, 0, len);
    for (let i = 0; i < half; i++) for (let j = 0; j < half; j++) g[i + j]! += A[i]! * E[j]! - B[i]! * C[j]!;
    let big = 0;
    for (let i = 0; i < len; i++) big = Math.max(big, Math.abs(g[i]!));
    if (!(big > 0) || !Number.isFinite(big)) return false;
    let top = len - 1;
    while (top > 0 && Math.abs(g[top]!) <= 1e-13 * big) top--;
    if (Math.abs(g[0]!) <= 1e-13 * big) return false; // a root at s = 0: not proven
    if (top === 0) {
      this.hopf[a] = 1;
      return true;
    }
    // descending for Sturm
    const d = this.hD.subarray(0, top + 1);
    for (let i = 0; i <= top; i++) d[i] = g[top - i]!;
    const roots = sturmPositiveRoots(d, this.sturm, this.sturmDeg);
    if (roots === 0) {
      this.hopf[a] = 1;
      return true;
    }
    return false;
  }

  /**
   * Whether every mode is stable at dose x (Hurwitz count 0 for each mode the bounds did not settle);
   * false when some mode grows, null when a Routh table is degenerate. Valid for 0 ≤ x ≤ cap.
   */
  stableAt(x: number): boolean | null {
    const n = this.n;
    const stride = n + 1;
    const coef = this.coef.subarray(0, stride);
    this.checked++;
    for (let a = 0; a < this.active; a++) {
      if (x < this.settled[a]!) continue;
      if (x < this.xk[a]! && this.hopfFree(a)) continue;
      if (!this.poly(a)) return null;
      const off = a * stride;
      for (let t = 0; t < stride; t++) coef[t] = this.p0[off + t]! - x * this.q[off + t]!;
      const h = hurwitzUnstable(coef, this.routh);
      if (h === null) return null;
      if (h > 0) return false;
    }
    return true;
  }

  /**
   * The first crossing, certified against the `points` log-spaced scan doses of the general search
   * (cap · 10^(−9 + 9i/(points − 1))) and just below the threshold.
   */
  verdict(points: number): FastVerdict {
    if (this.verdictCache) return this.verdictCache;
    const cap = this.cap;
    const x = this.xStar;
    const limit = Math.min(x, cap);
    const v = ((): FastVerdict => {
      if (x <= cap && !(x >= cap * FLOOR)) return { kind: 'fallback', why: 'threshold below the search floor' };
      for (let i = 0; i < points; i++) {
        const xi = cap * Math.pow(10, -9 + (9 * i) / (points - 1));
        if (!(xi < limit) && !(x > cap && xi <= cap)) continue;
        const s = this.stableAt(xi);
        if (s !== true) return { kind: 'fallback', why: s === null ? 'degenerate Routh table below the threshold' : 'a mode grows below the stationary threshold' };
      }
      if (x > cap) return { kind: 'none-below-cap' };
      const s = this.stableAt(x * (1 - BELOW_THRESHOLD));
      if (s !== true) return { kind: 'fallback', why: s === null ? 'degenerate Routh table just below the threshold' : 'a mode grows just below the stationary threshold' };
      return { kind: 'threshold', dose: x, mode: this.kStar };
    })();
    this.verdictCache = v;
    return v;
  }

  /**
   * Whether dose x is past the stationary (or any) boundary, from a certified verdict: above a
   * threshold always (det M of its mode stays negative); below it when every mode is stable, not past;
   * null when that is not proven (the caller asks the general path).
   */
  pastAt(x: number, v: FastVerdict): boolean | null {
    if (v.kind === 'fallback' || !(x >= 0) || x > this.cap) return null;
    if (v.kind === 'threshold' && x > v.dose) return true;
    if (x === 0) return false;
    return this.stableAt(x) === true ? false : null;
  }

  /**
   * Whether dose x (0 ≤ x ≤ cap) is past the boundary, exactly: above the lowest determinant crossing
   * x* always; below it, for each mode the bounds did not settle, a negative p(0; x) (stationary: an odd
   * number of growing real roots), else its Hurwitz count, and where that is not zero (or the table is
   * degenerate) the mode's own eigenvalues, judged as the scan judges them (a root is real within
   * REAL_TOLERANCE of the matrix scale, growth within GROWTH_RESOLUTION of it is none). Null when the
   * eigen solver does not converge. Valid after `prepare` returned 'stable' or 'unsettled'.
   */
  pastExact(x: number, boundary: 'stationary' | 'any'): boolean | null {
    this.checked++;
    if (x > this.xStar) return true;
    const n = this.n;
    const stride = n + 1;
    const coef = this.coef.subarray(0, stride);
    const dIdx = n - 1;
    for (let a = 0; a < this.active; a++) {
      if (x < this.settled[a]!) continue;
      if (!this.poly(a)) return null;
      const off = a * stride;
      for (let t = 0; t < stride; t++) coef[t] = this.p0[off + t]! - x * this.q[off + t]!;
      if (boundary === 'stationary' && coef[n]! < 0) return true;
      const h = hurwitzUnstable(coef, this.routh);
      if (h === 0) continue;
      if (boundary === 'any' && h !== null) return true;
      if (boundary === 'stationary') {
        // Descartes' rule of signs: no sign change among the coefficients, no positive real root
        let changes = 0;
        let last = 0;
        for (let t = 0; t < stride; t++) {
          const c = coef[t]!;
          if (c === 0) continue;
          if (last !== 0 && (c > 0) !== (last > 0)) changes++;
          last = c;
        }
        if (changes === 0) continue;
        // Sturm: how many distinct positive real roots; none means the growth is a complex pair
        const roots = sturmPositiveRoots(coef, this.sturm, this.sturmDeg);
        if (roots === 0) continue;
        if (roots !== null && roots > 0) return true;
      }
      const J = this.J;
      J.set(this.J0s.subarray(a * n * n, (a + 1) * n * n));
      for (let j = 0; j < n; j++) J[dIdx * n + j]! += x * this.Ws[a * n + j]!;
      let scale = 0;
      for (let i = 0; i < n * n; i++) scale = Math.max(scale, Math.abs(J[i]!));
      const spec = eigenvalues(J.subarray(0, n * n), n);
      if (!spec.converged) return null;
      for (let i = 0; i < n; i++) {
        if (!(spec.re[i]! > GROWTH_RESOLUTION * scale)) continue;
        if (boundary === 'any' || Math.abs(spec.im[i]!) <= REAL_TOLERANCE * scale) return true;
      }
    }
    return false;
  }

  /**
   * The second tier: the general search's `points` scan doses and its bisection to `relTol`, on the
   * exact predicate `pastExact` (the refinement between scan doses is not run: it needs the branch
   * growth at every mode). The first crossing, the first return after it (a window; only below x*,
   * past which the crossing mode stays past), or a threshold of 0⁺ when still past at cap × 10⁻³⁰.
   */
  search(points: number, relTol: number, boundary: 'stationary' | 'any'): FastSearch {
    const cap = this.cap;
    const pred = (x: number) => {
      const r = this.pastExact(x, boundary);
      if (r === null) throw new Undecided();
      return r;
    };
    try {
      let prevX = 0;
      let k = -1;
      let lo = 0;
      for (let i = 0; i < points; i++) {
        const xi = cap * Math.pow(10, -9 + (9 * i) / (points - 1));
        if (pred(xi)) {
          k = i;
          lo = prevX;
          prevX = xi;
          break;
        }
        prevX = xi;
      }
      if (k < 0) return { kind: 'none-below-cap' };
      let crossed: number;
      if (k === 0) {
        const floor = cap * FLOOR;
        if (pred(floor)) return { kind: 'any-dose', floor };
        crossed = bisect(pred, floor, prevX, relTol);
      } else crossed = bisect(pred, lo, prevX, relTol);
      // the first scan dose after the crossing that is back on the old side (none above x*)
      for (let i = k + 1; i < points; i++) {
        const xi = cap * Math.pow(10, -9 + (9 * i) / (points - 1));
        if (xi > this.xStar) break;
        if (!pred(xi)) return { kind: 'threshold', dose: crossed, windowUpTo: bisect((x) => !pred(x), prevX, xi, relTol) };
        prevX = xi;
      }
      return { kind: 'threshold', dose: crossed, windowUpTo: null };
    } catch (e) {
      if (e instanceof Undecided) return { kind: 'fallback', why: 'the eigen solver did not converge at a growing mode' };
      throw e;
    }
  }

  /**
   * Whether the monic polynomial `coef` (descending, degree n) has no root in [0, ∞): true proven
   * (p(0) > 0 and Descartes' rule of signs, else Sturm's count of positive roots, finds none), false
   * when it has one (p(0) ≤ 0, or Sturm counts one), null when Sturm cannot be trusted.
   */
  private noRootOnHalfLine(coef: Float64Array): boolean | null {
    const n = this.n;
    const c0 = coef[n]!;
    if (!(c0 > 0)) return c0 <= 0 ? false : null;
    let changes = 0;
    let last = 0;
    for (let t = 0; t <= n; t++) {
      const c = coef[t]!;
      if (c === 0) continue;
      if (last !== 0 && (c > 0) !== (last > 0)) changes++;
      last = c;
    }
    if (changes === 0) return true;
    const roots = sturmPositiveRoots(coef, this.sturm, this.sturmDeg);
    return roots === null ? null : roots === 0;
  }

  /** The coefficients of p(λ; x) = p₀(λ) − x q(λ) of active mode a in `coefView` (its polynomials made). */
  private atDose(a: number, x: number): Float64Array {
    const stride = this.n + 1;
    if (this.coefView.length !== stride) this.coefView = this.coef.subarray(0, stride);
    const c = this.coefView;
    const off = a * stride;
    for (let t = 0; t < stride; t++) c[t] = this.p0[off + t]! - x * this.q[off + t]!;
    return c;
  }

  /**
   * The stationary threshold from the monotonicity of the stationary boundary (docs/model.md §6 "Fast exact
   * paths"): valid after `prepare` returned 'stable', or 'unsettled' and `pastExact(0, 'stationary')` false.
   *
   * A mode whose p₀ = p(·; 0) has no root in [0, ∞) keeps that property at every dose below the first x at which
   * p(·; x) = p₀ − x q has one: if p(λ₁; x₁) = 0 with λ₁ ≥ 0, then q(λ₁) = p₀(λ₁)/x₁ > 0, so p(λ₁; x) < 0 for every
   * x > x₁ and the monic p(·; x) has a root in (λ₁, ∞). So "some mode has a real eigenvalue ≥ 0" is monotone in
   * the dose, and one test per mode decides it on a whole interval: no root of p(·; y) in [0, ∞) (p(0; y) > 0 and
   * Descartes' rule of signs, else Sturm's count) proves none at any dose ≤ y. The candidate threshold is x* = min x_k
   * (the determinant crossing, past which that mode stays past); each mode is tested at x*(1 − 10⁻⁶) (the cap when
   * x* is above it), and a mode with a root there (a complex pair that reached the positive real axis, two real
   * roots, earlier) has its own first dose bisected on the same exact predicate to `relTol` (at most 10⁻⁶), which
   * becomes the candidate. No growing complex pair matters: the stationary boundary counts real eigenvalues only.
   * `certifiedBelow`: every dose below it is proven not past. Fallback when a test cannot be trusted.
   */
  stationaryThreshold(relTol: number): StationaryVerdict {
    const cap = this.cap;
    let best = this.xStar <= cap ? this.xStar : Infinity;
    let mode = this.kStar;
    let interior = false;
    let below = best <= cap ? best * (1 - BELOW_THRESHOLD) : cap;
    if (best <= cap && !(best >= cap * FLOOR)) return { kind: 'fallback', why: 'threshold below the search floor' };
    const tol = Math.min(relTol, BELOW_THRESHOLD);
    for (let a = 0; a < this.active; a++) {
      if (!this.poly(a)) return { kind: 'fallback', why: 'non-finite characteristic polynomial' };
      this.checked++;
      const base = this.noRootOnHalfLine(this.atDose(a, 0));
      if (base !== true) return { kind: 'fallback', why: 'a mode of the base is not proven free of real roots ≥ 0' };
      const y = best <= cap ? best * (1 - BELOW_THRESHOLD) : cap;
      if (y < this.settled[a]!) continue;
      this.checked++;
      const r = this.noRootOnHalfLine(this.atDose(a, y));
      if (r === true) continue;
      if (r === null) return { kind: 'fallback', why: "Sturm's sequence not trusted" };
      // a real root ≥ 0 already at y: this mode's own first dose, bisected on the exact (monotone) predicate
      let undecided = false;
      const hasRoot = (x: number) => {
        this.checked++;
        const h = this.noRootOnHalfLine(this.atDose(a, x));
        if (h === null) undecided = true;
        return h !== true;
      };
      const lo = Math.max(this.settled[a]!, cap * FLOOR);
      if (hasRoot(lo) || undecided) return { kind: 'fallback', why: 'a real root ≥ 0 at the search floor' };
      let l = lo;
      let h = y;
      for (let it = 0; it < 200 && h - l > tol * h; it++) {
        const mid = l > 0 && h / l > 4 ? Math.sqrt(l * h) : 0.5 * (l + h);
        if (hasRoot(mid)) h = mid;
        else l = mid;
      }
      if (undecided) return { kind: 'fallback', why: "Sturm's sequence not trusted" };
      best = h;
      below = l;
      mode = this.modeN[a]!;
      interior = true;
    }
    if (!(best <= cap)) return { kind: 'none-below-cap' };
    return { kind: 'threshold', dose: best, mode, interior, certifiedBelow: below };
  }

  /**
   * One draw's stationary threshold straight from the structured characteristic polynomials (docs/model.md §6
   * "Fast exact paths"), without forming any mode's matrix: `prepare`, `stationaryThreshold` and the polynomials
   * in one pass for a chamber whose R' is diagonal (no saturating turnover couples two chemicals) with at most
   * three chemicals kept; anything else, or anything unproven, answers fallback (the caller takes `prepare`).
   *
   * With G' = diag(g_s), g_s(k') = 1/(k'² D'_c,s + R'_ss), the mode's Ĵ = −𝔇' − P' G' Q'ᵀ and (Weinstein–Aronszajn,
   * then Cauchy–Binet twice)
   *
   *     det(λ − Ĵ) = Σ_U (Π_{s∈U} g_s) Σ_{|W| = |U|} det Q'[W, U] det P'[W, U] Π_{m∉W} (λ + D'_m)
   *
   * over the sets U of chemicals and W of species. The products Π_{m∉W}(λ + D'_m) have positive coefficients and
   * do not depend on the mode, and det P'[W, U] is x times a constant when W holds the dopant: so each mode's
   * p(λ; x) = Σ_U g_U(k') (B⁰_U(λ) + x B¹_U(λ)) costs O(2^S n) from polynomials made once per draw.
   * The modes: k' = 1, 2, … while some chemical s has k'² D'_c,s + R'_ss ≤ Σ_t F̄_st(X), F̄_st = Σ_m |Q'_ms P'_mt|/D'_m
   * (the dopant's row at the largest dose X that matters); beyond, ‖G' Q'ᵀ(λ + 𝔇')⁻¹ P'‖∞ < 1 for every real λ ≥ 0,
   * so no real eigenvalue ≥ 0 at any dose in [0, X] (small gain). Then the base's side (each p(·; 0) with no root in
   * [0, ∞), else a root: base-past), x* = min x_k = min p(0; 0)/q(0), and the monotone test of `stationaryThreshold`.
   */
  stationary(base: Mixture, d: Species, cap: number, relTol: number): StationaryVerdict | { kind: 'base-past' } {
    const why = this.setup(base, d, cap);
    if (why !== null) return { kind: 'fallback', why };
    const n = this.n;
    const S = this.S;
    if (S > 3) return { kind: 'fallback', why: 'more than three chemicals' };
    const R = this.R;
    const Dc = this.Dc;
    for (let s = 0; s < S; s++) {
      if (!(Dc[s]! > 0) || !(R[s * S + s]! >= 0)) return { kind: 'fallback', why: 'a chemical without a positive diffusivity or loss' };
      for (let t = 0; t < S; t++) if (s !== t && R[s * S + t] !== 0) return { kind: 'fallback', why: 'R is not diagonal' };
    }
    const D = this.D;
    const P = this.P;
    const Q = this.Q;
    const dIdx = n - 1;
    const stride = n + 1;
    const nU = 1 << S;
    if (this.B0.length < nU * stride) {
      this.B0 = new Float64Array(nU * stride);
      this.B1 = new Float64Array(nU * stride);
      this.CU = new Float64Array(nU * stride);
    }
    if (this.eW.length < stride) this.eW = new Float64Array(stride);
    const B0 = this.B0;
    const B1 = this.B1;
    B0.fill(0, 0, nU * stride);
    B1.fill(0, 0, nU * stride);
    const e = this.eW;
    // Π_{m∉W}(λ + D'_m), ascending in e, added (times wgt) into the descending basis row of U
    const addProduct = (skip0: number, skip1: number, skip2: number, row: Float64Array, u: number, wgt: number) => {
      let deg = 0;
      e[0] = 1;
      for (let m = 0; m < n; m++) {
        if (m === skip0 || m === skip1 || m === skip2) continue;
        const dm = D[m]!;
        e[deg + 1] = e[deg]!;
        for (let j = deg; j > 0; j--) e[j] = e[j - 1]! + dm * e[j]!;
        e[0] = dm * e[0]!;
        deg++;
      }
      const off = u * stride;
      for (let j = 0; j <= deg; j++) row[off + n - j]! += wgt * e[j]!;
    };
    addProduct(-1, -1, -1, B0, 0, 1);
    const pq = (m: number, s: number, which: Float64Array) => which[m * S + s]!;
    for (let u = 1; u < nU; u++) {
      const cs: number[] = [];
      for (let s = 0; s < S; s++) if (u & (1 << s)) cs.push(s);
      const r = cs.length;
      if (r === 1) {
        const s = cs[0]!;
        for (let m = 0; m < n; m++) {
          const wgt = pq(m, s, Q) * pq(m, s, P);
          if (wgt !== 0) addProduct(m, -1, -1, m === dIdx ? B1 : B0, u, wgt);
        }
      } else if (r === 2) {
        const [s, t] = cs as [number, number];
        for (let m = 0; m < n; m++)
          for (let l = m + 1; l < n; l++) {
            const dq = pq(m, s, Q) * pq(l, t, Q) - pq(m, t, Q) * pq(l, s, Q);
            const dp = pq(m, s, P) * pq(l, t, P) - pq(m, t, P) * pq(l, s, P);
            if (dq * dp !== 0) addProduct(m, l, -1, m === dIdx || l === dIdx ? B1 : B0, u, dq * dp);
          }
      } else {
        const det3 = (a: Float64Array, m: number, l: number, o: number) =>
          pq(m, 0, a) * (pq(l, 1, a) * pq(o, 2, a) - pq(l, 2, a) * pq(o, 1, a)) -
          pq(m, 1, a) * (pq(l, 0, a) * pq(o, 2, a) - pq(l, 2, a) * pq(o, 0, a)) +
          pq(m, 2, a) * (pq(l, 0, a) * pq(o, 1, a) - pq(l, 1, a) * pq(o, 0, a));
        for (let m = 0; m < n; m++)
          for (let l = m + 1; l < n; l++)
            for (let o = l + 1; o < n; o++) {
              const w3 = det3(Q, m, l, o) * det3(P, m, l, o);
              if (w3 !== 0) addProduct(m, l, o, m === dIdx || l === dIdx || o === dIdx ? B1 : B0, u, w3);
            }
      }
    }
    for (let i = 0; i < nU * stride; i++) if (!Number.isFinite(B0[i]!) || !Number.isFinite(B1[i]!)) return { kind: 'fallback', why: 'overflow' };
    // the small-gain mode bound: row sums of F̄ for the base and per unit dose of the dopant
    const rowB = this.rowB.length >= S ? this.rowB : (this.rowB = new Float64Array(S));
    const rowD = this.rowD.length >= S ? this.rowD : (this.rowD = new Float64Array(S));
    for (let s = 0; s < S; s++) {
      let b = 0;
      let dd = 0;
      for (let t = 0; t < S; t++) {
        for (let m = 0; m < dIdx; m++) b += Math.abs(Q[m * S + s]! * P[m * S + t]!) / D[m]!;
        dd += Math.abs(Q[dIdx * S + s]! * P[dIdx * S + t]!) / D[dIdx]!;
      }
      rowB[s] = b;
      rowD[s] = dd;
    }
    if (this.gU.length < nU) this.gU = new Float64Array(nU);
    this.stS = S;
    this.stU = nU;
    if (this.coefView.length !== stride) this.coefView = this.coef.subarray(0, stride);
    // pass 0: the base's side, modes up to the bound at dose 0 (blocks of modes at once, `clearModes`)
    this.combine(0);
    const base0 = this.clearModes(1, this.modeBound(0), 0);
    if (base0 === false) return { kind: 'base-past' };
    if (base0 === null) return { kind: 'fallback', why: "Sturm's sequence not trusted at dose 0" };
    // pass 1: the determinant crossings x_k = −p(0; 0)/∂ₓp(0), modes up to the bound at min(x*, cap), by blocks (`lowestCrossing`)
    const top = this.modeBound(cap);
    if (top > MAX_FAST_MODES) return { kind: 'fallback', why: `more than ${MAX_FAST_MODES} modes below the proven bound` };
    this.xStar = Infinity;
    this.kStar = 0;
    this.lowestCrossing(1, top);
    const xStar = this.xStar;
    const kStar = this.kStar;
    this.modes = this.modeBound(Math.min(xStar, cap));
    // pass 2: the monotone test of `stationaryThreshold` at x*(1 − 10⁻⁶) (the cap when x* is above it), by blocks
    this.stBest = xStar <= cap ? xStar : Infinity;
    if (this.stBest <= cap && !(this.stBest >= cap * FLOOR)) return { kind: 'fallback', why: 'threshold below the search floor' };
    this.stMode = kStar;
    this.stInterior = false;
    this.stBelow = this.stBest <= cap ? this.stBest * (1 - BELOW_THRESHOLD) : cap;
    this.stTol = relTol / 10;
    this.stY = this.stBest <= cap ? this.stBest * (1 - BELOW_THRESHOLD) : cap;
    this.combine(this.stY);
    const r = this.clearModes(1, this.modeBound(Math.min(this.stBest, cap)), 2);
    if (r !== true) return { kind: 'fallback', why: this.stWhy };
    if (!(this.stBest <= cap)) return { kind: 'none-below-cap' };
    return { kind: 'threshold', dose: this.stBest, mode: this.stMode, interior: this.stInterior, certifiedBelow: this.stBelow };
  }

  // state of `stationary` between its helpers
  private stS = 0;
  private stU = 0;
  private stY = 0;
  private stBest = Infinity;
  private stMode = 0;
  private stInterior = false;
  private stBelow = 0;
  private stTol = 0;
  private stWhy = '';

  /**
   * The lowest determinant crossing x_k = c₀/(−c₁) over modes [ka, kb] (c₀ = p(0; 0) > 0, c₁ = ∂ₓp(0)) into xStar, kStar:
   * c₀ and c₁ are multilinear in the g_s, so over a block min c₀ / max(−c₁) at the vertices of the box of (g_s) bounds
   * every x_k in it from below; a block whose bound is not below the lowest so far, or where −c₁ ≤ 0 throughout
   * (no crossing), is skipped; else halves, down to one mode. Modes beyond the bound at min(x*, cap) are not visited.
   */
  private lowestCrossing(ka: number, kb: number): void {
    kb = Math.min(kb, this.modeBound(Math.min(this.xStar, this.cap)));
    if (kb < ka) return;
    const n = this.n;
    const stride = n + 1;
    const nU = this.stU;
    let minC0 = Infinity;
    let maxN1 = -Infinity;
    const vertices = ka === kb ? 1 : 1 << this.stS;
    for (let v = 0; v < vertices; v++) {
      this.modeWeights(ka, kb, v);
      let c0 = 0;
      let c1 = 0;
      for (let u = 0; u < nU; u++) {
        c0 += this.gU[u]! * this.B0[u * stride + n]!;
        c1 += this.gU[u]! * this.B1[u * stride + n]!;
      }
      minC0 = Math.min(minC0, c0);
      maxN1 = Math.max(maxN1, -c1);
    }
    if (!(maxN1 > 0)) return;
    if (ka === kb) {
      const xk = minC0 / maxN1;
      if (xk < this.xStar) {
        this.xStar = xk;
        this.kStar = ka;
      }
      return;
    }
    if (minC0 > 0 && minC0 / maxN1 >= this.xStar) return;
    const mid = (ka + kb) >> 1;
    this.lowestCrossing(ka, mid);
    this.lowestCrossing(mid + 1, kb);
  }

  /** The last mode that the small-gain bound does not clear at doses [0, X] (`stationary`). */
  private modeBound(X: number): number {
    const S = this.stS;
    let m = 0;
    for (let s = 0; s < S; s++) m = Math.max(m, (this.rowB[s]! + X * this.rowD[s]! - this.R[s * S + s]!) / this.Dc[s]!);
    return m > 0 ? Math.floor(Math.sqrt(m)) + 1 : 0;
  }

  /** gU[U] = Π_{s∈U} g_s with g_s = 1/(k² D'_c,s + R'_ss), k = ka or kb per chemical by the bits of `vertex` (ka = kb: one mode). */
  private modeWeights(ka: number, kb: number, vertex = 0): void {
    const S = this.stS;
    const gU = this.gU;
    gU[0] = 1;
    for (let s = 0; s < S; s++) {
      const k = (vertex >> s) & 1 ? ka : kb;
      const g = 1 / (k * k * this.Dc[s]! + this.R[s * S + s]!);
      const bit = 1 << s;
      for (let u = 0; u < bit; u++) gU[u | bit] = gU[u]! * g;
    }
  }

  /** CU = B⁰ + y B¹ (per set U): p(·; y) of a mode is Σ_U g_U CU_U. */
  private combine(y: number): void {
    const len = this.stU * (this.n + 1);
    for (let i = 0; i < len; i++) this.CU[i] = this.B0[i]! + y * this.B1[i]!;
  }

  /** p(·; y) of the mode whose weights are in gU, from CU, into coefView. */
  private modePoly(): Float64Array {
    const stride = this.n + 1;
    const nU = this.stU;
    const c = this.coefView;
    for (let t = 0; t < stride; t++) {
      let acc = 0;
      for (let u = 0; u < nU; u++) acc += this.gU[u]! * this.CU[u * stride + t]!;
      c[t] = acc;
    }
    return c;
  }

  /**
   * Whether every mode in [ka, kb] has no real root ≥ 0 at the dose of CU. A block is cleared at once when at
   * each vertex of the box of (g_s) over the block every coefficient is positive: each coefficient is
   * multilinear in the g_s (so its minimum over the box is at a vertex) and g_s falls with k', and a polynomial
   * with positive coefficients has no root in [0, ∞). Else halves, down to one mode and its exact test.
   * `pass` 0: a root means false (the base is past); 2: a root means a crossing below the candidate, bisected
   * (`bisectMode`), and the block goes on at the new dose. Null when unproven (`stWhy`).
   */
  private clearModes(ka: number, kb: number, pass: 0 | 2): boolean | null {
    if (kb < ka) return true;
    const stride = this.n + 1;
    const nU = this.stU;
    let clear = true;
    for (let v = 0; v < 1 << this.stS && clear; v++) {
      this.modeWeights(ka, kb, v);
      for (let t = 1; t < stride; t++) {
        let acc = 0;
        for (let u = 0; u < nU; u++) acc += this.gU[u]! * this.CU[u * stride + t]!;
        if (!(acc > 0)) {
          clear = false;
          break;
        }
      }
    }
    this.checked++;
    if (clear) return true;
    if (kb > ka) {
      const mid = (ka + kb) >> 1;
      const left = this.clearModes(ka, mid, pass);
      if (left !== true) return left;
      // a crossing found on the left lowers the dose: the right half is tested there, up to the bound at it
      return this.clearModes(mid + 1, pass === 2 ? Math.min(kb, this.modeBound(Math.min(this.stBest, this.cap))) : kb, pass);
    }
    this.modeWeights(ka, ka);
    const r = this.noRootOnHalfLine(this.modePoly());
    if (r === true) return true;
    if (r === null) {
      this.stWhy = "Sturm's sequence not trusted";
      return null;
    }
    if (pass === 0) return false;
    return this.bisectMode(ka);
  }

  /** Mode k has a real root ≥ 0 at stY: its own first dose, bisected on the exact (monotone) predicate; then CU at the new dose. */
  private bisectMode(k: number): boolean | null {
    this.modeWeights(k, k);
    const hasRoot = (x: number): boolean | null => {
      this.checked++;
      this.combine(x);
      const h = this.noRootOnHalfLine(this.modePoly());
      return h === null ? null : !h;
    };
    const cap = this.cap;
    // a lower end from Descartes' rule: each coefficient of p(·; x) is affine in x, so every one is positive (no root
    // in [0, ∞)) below x_D = min over the falling ones of −p₀_t/∂ₓp_t (when all are positive at dose 0)
    const stride = this.n + 1;
    const nU = this.stU;
    let xD = Infinity;
    for (let t = 1; t < stride; t++) {
      let c0 = 0;
      let c1 = 0;
      for (let u = 0; u < nU; u++) {
        c0 += this.gU[u]! * this.B0[u * stride + t]!;
        c1 += this.gU[u]! * this.B1[u * stride + t]!;
      }
      if (!(c0 > 0)) xD = 0;
      else if (c1 < 0) xD = Math.min(xD, -c0 / c1);
    }
    let l = Math.max(cap * FLOOR, Math.min(xD * (1 - 1e-9), this.stY * 0.5));
    const floorRoot = hasRoot(l);
    if (floorRoot !== false) {
      this.stWhy = floorRoot === null ? "Sturm's sequence not trusted" : 'a real root ≥ 0 at the search floor';
      return null;
    }
    let h = this.stY;
    for (let it = 0; it < 200 && h - l > this.stTol * h; it++) {
      const mid = l > 0 && h / l > 4 ? Math.sqrt(l * h) : 0.5 * (l + h);
      const at = hasRoot(mid);
      if (at === null) {
        this.stWhy = "Sturm's sequence not trusted";
        return null;
      }
      if (at) h = mid;
      else l = mid;
    }
    this.stBest = h;
    this.stBelow = l;
    this.stMode = k;
    this.stInterior = true;
    this.stY = h * (1 - BELOW_THRESHOLD);
    this.combine(this.stY);
    return true;
  }

  /** The crossing dose of each mode the bounds did not settle (m⁻³; +∞ when its determinant never changes sign), for checks. */
  modeCrossings(): { mode: number; dose: number }[] {
    return Array.from({ length: this.active }, (_, a) => ({ mode: this.modeN[a]!, dose: this.xk[a]! }));
  }
}
