/**
 * The dose planner against independent computations (docs/model.md §3, §5, §6, §7;
 * sources in docs/references.md):
 *
 * - Monte Carlo near the base's own threshold: per-draw thresholds from the
 *   Keller–Segel stationary condition (Keller & Segel 1970), written out here by
 *   hand, and the normal-distribution argument for the fraction already past and
 *   the quantiles (standard normal quantiles from a printed table, e.g.
 *   Abramowitz & Stegun, Table 26.1: Φ⁻¹(0.95) = 1.6449, Φ(0.70588) ≈ 0.7599).
 * - The dose path of a two-species mixture: the onsets from the Routh–Hurwitz
 *   conditions of the 2×2 Jacobian (stable iff trace < 0 and det > 0; complex iff
 *   trace² < 4 det), hand-derived below, and the state between them from an
 *   independent eigen library (ml-matrix's EigenvalueDecomposition, a JAMA port).
 * - A narrow oscillatory window between two scan doses, against a fine
 *   brute-force scan of the same ml-matrix spectra.
 * - Any dose: unbounded chamber, no chemical loss, self-attracting dopant:
 *   λ(k → 0⁺) = −α μ x / D_c, from J(k) = −k²D − α μ x k² /(D_c k²) for one species.
 *
 * Only the inputs are invented; every expected number is computed here from the
 * formulas named beside it, never read from the code under test.
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { dosePath, findDose, perturb, scanDoses, screen, streamSeed, thresholdBand, withDose, type DoseOptions } from '../../server/engine/planner.js';
import { Random } from '../../server/engine/random.js';
import type { Mixture } from '../../server/engine/types.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

/** Sample quantile by linear interpolation between order statistics (Hyndman & Fan type 7); +∞ propagates. */
function quantile7(sorted: number[], q: number): number {
  const h = (sorted.length - 1) * q;
  const lo = Math.floor(h);
  const hi = Math.ceil(h);
  if (lo === hi) return sorted[lo]!;
  if (!Number.isFinite(sorted[hi]!)) return Infinity;
  return sorted[lo]! + (h - lo) * (sorted[hi]! - sorted[lo]!);
}

// ------------------------------------------------------------------ Monte Carlo near the base's own threshold

describe('Monte Carlo band: a base at 0.85 of its own threshold, 25 % sd on its activity', () => {
  // Sealed 2 mm chamber, no loss: γ = D_c k₁², k₁ = π/L. One base species alone crosses when
  // −α μ ρ / D > γ (Keller–Segel), so ρ = 0.85 γ D / (−α μ) sits at 0.85 of its own threshold.
  const Dc = 1.4e-9;
  const L = 2e-3;
  const gamma = Dc * (Math.PI / L) ** 2;
  const Db = 0.22e-12;
  const alpha = -2e-17;
  const mu = 2e-11;
  const rho = (0.85 * gamma * Db) / (-alpha * mu);
  const base = (): Mixture => {
    const m = mixture([chemical('h2o2', Dc, 0, 200)], [species('calm', Db, rho, [constant('h2o2', alpha, mu)])], 'sealed', L);
    m.species[0]!.couplings[0]!.sd = { rate: 0.25 * Math.abs(alpha) };
    return m;
  };
  // The dopant has no uncertainty: only the base activity is drawn.
  const Dd = 0.22e-12;
  const ad = -2e-16;
  const md = 5e-11;
  const dopant = () => species('tipper', Dd, 0, [constant('h2o2', ad, md)]);
  // Keller–Segel with the dopant added (rank one): γ + α_b μ ρ/D_b + x α_d μ_d/D_d = 0.
  const xStar = (alphaBase: number) => Math.max(0, gamma + (alphaBase * mu * rho) / Db) * (Dd / (-ad * md));
  const nominal = xStar(alpha); // = 0.15 γ D_d/|α_d μ_d|
  const N = 400;
  const seed = 21;
  const stat: DoseOptions = { boundary: 'stationary', dosing: 'add' };

  // The same draws the band uses: the base's activity in draw i (the generator is the engine's; the threshold is ours).
  const drawn = Array.from({ length: N }, (_, i) => {
    const a = perturb(base(), new Random(streamSeed(seed, i, ''))).species[0]!.couplings[0]!.activity;
    return a!.kind === 'constant' ? a!.rate : NaN;
  });
  const byHand = drawn.map(xStar).sort((a, b) => a - b);
  const pastByHand = drawn.filter((a) => gamma + (a * mu * rho) / Db < 0).length / N;

  for (const closedForm of [true, false]) {
    it(`counts draws already past as dose 0 and takes quantiles over every draw (${closedForm ? 'closed form' : 'search'} per draw)`, () => {
      const b = thresholdBand(base(), dopant(), { ...stat, closedForm }, { samples: N, seed });
      // exactly the draws whose base alone is past the Keller–Segel condition
      expect(b.alreadyPast).toBe(pastByHand);
      expect(b.feasibleFraction).toBe(1);
      expect(b.aboveCap).toEqual({ median: false, p05: false, p95: false });
      // p05 lies among the zeros (more than 5 % of the draws are already past)
      expect(b.p05).toBe(0);
      const tol = closedForm ? 1e-9 : 2e-4; // the band bisects to 1e-4 relative
      expect(rel(b.median!, quantile7(byHand, 0.5))).toBeLessThan(tol);
      expect(rel(b.p95!, quantile7(byHand, 0.95))).toBeLessThan(tol);
    });
  }

  it('agrees with the distribution argument: P(past) = 1 − Φ(0.706) ≈ 0.240, median ≈ nominal, p95 ≈ 3.33 × nominal', () => {
    const b = thresholdBand(base(), dopant(), stat, { samples: N, seed });
    // α' = α (1 + 0.25 Z): past when 0.85 (1 + 0.25 Z) > 1, i.e. Z > (1/0.85 − 1)/0.25 = 0.70588.
    const p = 1 - 0.7599; // Φ(0.70588) from a normal table
    expect(Math.abs(b.alreadyPast - p)).toBeLessThan(4 * Math.sqrt((p * (1 - p)) / N));
    // x*(Z) = nominal · (1 − (0.85 · 0.25/0.15) Z) is decreasing in Z: its median is x*(Z = 0) = nominal.
    // Sample-median standard error: 1.2533 σ/√N in Z, times |dx*/dZ| = nominal · 0.85·0.25/0.15.
    const seMedian = ((1.2533 / Math.sqrt(N)) * (0.85 * 0.25)) / 0.15;
    expect(Math.abs(b.median! / nominal - 1)).toBeLessThan(4 * seMedian);
    // p95 at Z = −1.6449: (1 − 0.85 (1 − 0.25 · 1.6449)) / 0.15 = 3.330 × nominal.
    const p95 = (1 - 0.85 * (1 - 0.25 * 1.6449)) / 0.15;
    // Standard error of a sample quantile: √(q(1 − q)/N) / φ(z_q) in Z, φ(1.6449) = 0.10314, times the slope 0.85·0.25/0.15.
    const se95 = ((Math.sqrt((0.05 * 0.95) / N) / 0.10314) * (0.85 * 0.25)) / 0.15;
    expect(Math.abs(b.p95! / nominal - p95)).toBeLessThan(4 * se95);
    // The defect this replaces counted these draws as "never crosses": the median would be the
    // 0.5/0.76 ≈ 0.66 quantile of the rest (about twice nominal) and the 95 % point +∞ (null).
    expect(b.median! / nominal).toBeLessThan(1.4);
    expect(b.p95).not.toBeNull();
  });

  it('a quantile above the cap is null and flagged, not left out', () => {
    // A cap just above the nominal threshold: more than 5 % of the draws need more.
    const cap = nominal * 1.5;
    const b = thresholdBand(base(), dopant(), { ...stat, maxDensity: cap }, { samples: N, seed });
    const expected95 = quantile7(byHand.map((x) => (x > cap ? Infinity : x)), 0.95);
    expect(expected95).toBe(Infinity);
    expect(b.p95).toBeNull();
    expect(b.aboveCap.p95).toBe(true);
    expect(b.aboveCap.median).toBe(false);
    expect(b.feasibleFraction).toBe(byHand.filter((x) => x <= cap).length / N);
  });
});

// ------------------------------------------------------------------ two species: oscillatory before stationary

// One chemical, no loss, sealed chamber: J(k)_mn = −k² D_m δ_mn − ρ_m μ_m α_n / D_c (k² g = 1/D_c).
// With s_m = α_m μ_m ρ_m and u = −s₂ = x |α₂ μ₂| (the dopant is self-attracting):
//   trace(k) = −k²(D₁ + D₂) − (s₁ − u)/D_c,   det(k) = k⁴ D₁D₂ + k²(D₂ s₁ − D₁ u)/D_c.
// Routh–Hurwitz for 2×2: stable iff trace < 0 and det > 0; a complex pair iff trace² < 4 det.
const Lw = 4e-4;
const Dcw = 1.4e-9;
const beads = { D: 1e-12, rho: 3.2e11, alpha: -5e-15, mu: -1e-10 }; // self-repelling (α μ > 0)
const swim = { D: 2.9e-12, alpha: -6e-18, mu: 1e-10 }; // self-attracting (α μ < 0)
const windowBase = () => mixture([chemical('h2o2', Dcw, 0, 1000)], [species('beads', beads.D, beads.rho, [constant('h2o2', beads.alpha, beads.mu)], 0.22e-6)], 'sealed', Lw);
const swimmer = () => species('swimmer', swim.D, 0, [constant('h2o2', swim.alpha, swim.mu)], 0.1e-6);
const s1 = beads.alpha * beads.mu * beads.rho;
const am = Math.abs(swim.alpha * swim.mu);
const kn = (n: number) => (n * Math.PI) / Lw;
const trace = (n: number, x: number) => -(kn(n) ** 2) * (beads.D + swim.D) - (s1 - x * am) / Dcw;
const det = (n: number, x: number) => kn(n) ** 4 * beads.D * swim.D + (kn(n) ** 2 * (swim.D * s1 - beads.D * x * am)) / Dcw;
const disc = (n: number, x: number) => trace(n, x) ** 2 - 4 * det(n, x);
/** Bisection on a hand formula: the sign change of f in [a, b]. */
function root(f: (x: number) => number, a: number, b: number): number {
  const fa = Math.sign(f(a));
  for (let i = 0; i < 200; i++) {
    const m = 0.5 * (a + b);
    if (Math.sign(f(m)) === fa) a = m;
    else b = m;
  }
  return 0.5 * (a + b);
}
// Onsets at the first mode, by hand: trace = 0 (oscillatory onset while det > 0), then trace² = 4 det (the pair splits
// into two growing real eigenvalues), then det = 0.
const xT = (s1 + Dcw * kn(1) ** 2 * (beads.D + swim.D)) / am;
const xS = root((x) => disc(1, x), xT, 3 * xT);
const xD = (swim.D * (s1 / beads.D + Dcw * kn(1) ** 2)) / am;

/** The state from ml-matrix eigenvalues of the hand-built J(k_n), n = 1..40. */
function stateByMlMatrix(x: number): { state: 'stable' | 'stationary' | 'oscillatory'; complexGrowth: number } {
  const rho = [beads.rho, x];
  const D = [beads.D, swim.D];
  const a = [beads.alpha, swim.alpha];
  const m = [beads.mu, swim.mu];
  let best = -Infinity;
  let bestIm = 0;
  let complexGrowth = -Infinity;
  for (let n = 1; n <= 40; n++) {
    const k2 = kn(n) ** 2;
    const J = new Matrix(2, 2);
    for (let i = 0; i < 2; i++) for (let j = 0; j < 2; j++) J.set(i, j, -k2 * (i === j ? D[i]! : 0) - (rho[i]! * m[i]! * a[j]!) / Dcw);
    const e = new EigenvalueDecomposition(J);
    e.realEigenvalues.forEach((re, q) => {
      const im = e.imaginaryEigenvalues[q]!;
      if (re > best) {
        best = re;
        bestIm = im;
      }
      if (im !== 0 && re > complexGrowth) complexGrowth = re;
    });
  }
  return { state: best > 0 ? (bestIm !== 0 ? 'oscillatory' : 'stationary') : 'stable', complexGrowth };
}

describe('dose path and first onset: an oscillatory onset below the stationary one', () => {
  const o: DoseOptions = { boundary: 'stationary', dosing: 'add', maxDensity: 1e17 };

  it('the hand-derived onsets are ordered and the higher modes stay stable through them', () => {
    expect(det(1, xT)).toBeGreaterThan(0); // at the trace crossing the pair is complex: oscillatory onset
    expect(disc(1, xT)).toBeLessThan(0);
    expect(xT).toBeLessThan(xS);
    expect(xS).toBeLessThan(xD);
    for (let n = 2; n <= 40; n++) {
      expect(trace(n, xS)).toBeLessThan(0);
      expect(det(n, xS)).toBeGreaterThan(0);
    }
  });

  it('stable (0, x_T], oscillatory (x_T, x_S], stationary above: endpoints to 1e-5 of the hand values', () => {
    const p = dosePath(windowBase(), swimmer(), o);
    expect(p.baseState).toBe('stable');
    expect(p.intervals.slice(0, 3).map((iv) => iv.state)).toEqual(['stable', 'oscillatory', 'stationary']);
    expect(p.intervals[0]!.from).toBe(0);
    expect(rel(p.intervals[1]!.from, xT)).toBeLessThan(1e-5);
    expect(rel(p.intervals[2]!.from, xS)).toBeLessThan(1e-5);
    expect(p.intervals[p.intervals.length - 1]!.to).toBe(1e17);
    for (let i = 1; i < p.intervals.length; i++) expect(p.intervals[i]!.from).toBe(p.intervals[i - 1]!.to);
    expect(p.firstOnset!.state).toBe('oscillatory');
    expect(rel(p.firstOnset!.density, xT)).toBeLessThan(1e-5);
    // every interval's state, at its geometric middle, from ml-matrix (the last one is open-ended: check a decade of it)
    for (const iv of p.intervals) {
      const mid = iv.from > 0 ? Math.sqrt(iv.from * Math.min(iv.to, iv.from * 10)) : iv.to / 10;
      expect(stateByMlMatrix(mid).state).toBe(iv.state);
    }
    // both sides of each endpoint
    expect(stateByMlMatrix(0.999 * xT).state).toBe('stable');
    expect(stateByMlMatrix(1.001 * xT).state).toBe('oscillatory');
    expect(stateByMlMatrix(0.999 * xS).state).toBe('oscillatory');
    expect(stateByMlMatrix(1.001 * xS).state).toBe('stationary');
  });

  it('a stationary screen finds x_S (not det J = 0 at x_D) and warns that the mixture oscillates from x_T', () => {
    const [c] = screen(windowBase(), [swimmer()], o);
    expect(c!.feasible).toBe(true);
    expect(rel(c!.threshold!.density, xS)).toBeLessThan(1e-5);
    expect(rel(c!.firstOnset!.density, xT)).toBeLessThan(1e-5);
    expect(c!.firstOnset!.state).toBe('oscillatory');
    const w = c!.warnings.find((x) => x.code === 'earlier-instability');
    expect(w?.message).toMatch(/oscillatory/);
    // in the bench reader's unit: x_T (by hand) × 1e-6 per mL; the warning's number stays SI
    expect(w?.message).toContain(`from ${(xT * 1e-6).toPrecision(3)} per mL`);
    expect(rel(w!.onset as number, xT)).toBeLessThan(1e-5);
    // an `any` screen has its threshold at the first onset: no such warning
    const [a] = screen(windowBase(), [swimmer()], { ...o, boundary: 'any' });
    expect(rel(a!.threshold!.density, xT)).toBeLessThan(1e-5);
    expect(a!.warnings.map((x) => x.code)).not.toContain('earlier-instability');
  });
});

// ------------------------------------------------------------------ a narrow window between two scan doses

describe('an oscillatory window wholly between two scan doses', () => {
  // Place a scan dose at 7.37e14 m⁻³ (the cap is chosen for it): the next is 7.37e14 × 10^(9/47) ≈ 1.145e15.
  const maxDensity = 7.37e14 * Math.pow(10, (9 * 17) / 47);
  const o: DoseOptions = { boundary: 'oscillatory', dosing: 'add', maxDensity };

  it('the window (x_T, x_S) holds no scan dose, and neither neighbour oscillates (ml-matrix)', () => {
    // the scan rule of docs/model.md §6: 48 doses, cap × 10^(−9 + 9i/47)
    const grid = Array.from({ length: 48 }, (_, i) => maxDensity * Math.pow(10, -9 + (9 * i) / 47));
    expect(scanDoses(maxDensity)).toEqual(grid);
    expect(grid.filter((x) => x > xT && x < xS)).toEqual([]);
    const below = grid.filter((x) => x <= xT).pop()!;
    const above = grid.find((x) => x >= xS)!;
    expect(rel(below, 7.37e14)).toBeLessThan(1e-12);
    expect(rel(above, 1.1454e15)).toBeLessThan(1e-4);
    expect(stateByMlMatrix(below).complexGrowth).toBeLessThan(0);
    expect(stateByMlMatrix(above).complexGrowth).toBeLessThan(0);
  });

  it('is found, with both edges matching a fine brute-force scan', () => {
    // brute force: 20 000 log-spaced doses over [5e14, 2e15], state from ml-matrix
    const edges: { x: number; to: string }[] = [];
    let prev = stateByMlMatrix(5e14).complexGrowth > 0;
    for (let i = 1; i <= 20000; i++) {
      const x = 5e14 * Math.pow(4, i / 20000);
      const now = stateByMlMatrix(x).complexGrowth > 0;
      if (now !== prev) edges.push({ x, to: now ? 'in' : 'out' });
      prev = now;
    }
    expect(edges.map((e) => e.to)).toEqual(['in', 'out']);
    const step = Math.pow(4, 1 / 20000) - 1; // relative spacing of the brute-force scan
    const r = findDose(windowBase(), swimmer(), o);
    expect(r.feasible).toBe(true);
    expect(r.reason).toBeNull();
    expect(rel(r.threshold!.density, edges[0]!.x)).toBeLessThan(step);
    expect(rel(r.window!.upTo, edges[1]!.x)).toBeLessThan(step);
    // and the hand values
    expect(rel(r.threshold!.density, xT)).toBeLessThan(1e-5);
    expect(rel(r.window!.upTo, xS)).toBeLessThan(1e-5);
    // what follows the window: stationary (unstable), not stable, both from ml-matrix just above x_S and by hand
    // (trace > 0 and trace² > 4 det at the first mode: two real roots, the larger positive)
    expect(r.window!.stateAbove).toBe('stationary');
    expect(stateByMlMatrix(1.001 * xS).state).toBe('stationary');
    expect(trace(1, 1.001 * xS)).toBeGreaterThan(0);
    expect(disc(1, 1.001 * xS)).toBeGreaterThan(0);
  });

  it('a search that finds nothing says so, without claiming "too weak"', () => {
    // A cap below the window: nothing to find; the reason names the search.
    const r = findDose(windowBase(), swimmer(), { ...o, maxDensity: 5e14 });
    expect(r.reason).toBe('not-found-below-cap');
    expect(r.message).toMatch(/search of 48 doses/);
    expect(r.message).not.toMatch(/too weak/);
  });
});

// ------------------------------------------------------------------ any dose

describe('any dose: unbounded chamber, no chemical loss, self-attracting dopant', () => {
  const Dc = 1.4e-9;
  const base = () => mixture([chemical('c', Dc, 0, 200)], [species('b', 0.22e-12, 1e12, [constant('c', -2e-17, 0)])], 'unbounded', null);
  const a = -2e-16;
  const m = 5e-11;
  const d = () => species('d', 0.22e-12, 0, [constant('c', a, m)]);

  it('grows at λ(k → 0⁺) = −α μ x / D_c at every dose (hand formula vs analyze)', () => {
    for (const x of [1e3, 1e9, 1e14]) {
      const r = analyze(withDose(base(), d(), x, 'add'));
      expect(r.state).toBe('stationary');
      expect(rel(r.growthRate, (-a * m * x) / Dc)).toBeLessThan(1e-6);
    }
  });

  it('the stationary screen reports threshold 0⁺ (any dose), not wrong-sign; the any boundary agrees', () => {
    for (const boundary of ['stationary', 'any'] as const) {
      const r = findDose(base(), d(), { boundary, dosing: 'add' });
      expect(r.feasible).toBe(true);
      expect(r.reason).toBeNull();
      expect(r.anyDose).toBe(true);
      expect(r.threshold!.density).toBe(0);
      expect(r.message).toMatch(/any dose/);
    }
    // the opposite sign is still a sign error
    const repel = species('r', 0.22e-12, 0, [constant('c', a, -m)]);
    expect(findDose(base(), repel, { boundary: 'stationary', dosing: 'add' }).reason).toBe('wrong-sign');
    const [c] = screen(base(), [d()], { boundary: 'stationary', dosing: 'add' });
    expect(c!.dosePath).toEqual([{ from: 0, to: c!.cap.density, state: 'stationary' }]);
    expect(c!.firstOnset).toEqual({ density: 0, state: 'stationary' });
    expect(c!.atMargin).toBeNull();
    expect(c!.warnings.map((w) => w.code)).toContain('any-dose');
  });
});
