/**
 * The `slow-chemistry` check (docs/model.md §8): analyze() takes the chemicals as quasi-static,
 * δc = G(k) αᵀ δρ, which holds only when each kept chemical relaxes, at Γ_s = D_s k² + R_ss, much
 * faster than the mode grows or turns. The reference here is the full linearised system with the
 * chemicals evolving, written out by hand in SI from the field equations (docs/model.md §2):
 *
 *   d/dt [δρ; δc] = [[−k² diag(D_m), −k² diag(ρ⁰) μ], [αᵀ, −(k² diag(D_s) + R)]] [δρ; δc]
 *
 * (α, μ, R from tests/references/hand-jacobian.ts's hand linearisation, none of the engine's code),
 * its eigenvalues taken with ml-matrix directly. Its entries span 20+ decades, so each δc_s is
 * rescaled first by the similarity δc_s → t_s δc_s, t_s = √(max_m |k² ρ_m μ_ms| / max_m |α_ms|) (for a
 * chemical no particle moves on, t_s = (D_s k² + R_ss)/max_m |α_ms|), which leaves the eigenvalues unchanged. Setting d(δc)/dt = 0 gives analyze()'s J(k).
 *
 * One species and one chemical (constant α, μ): the 2×2 system [[−Dk², −k²ρμ], [α, −Γ]] has
 * (λ + Dk²)(λ + Γ) = −k²ρμα, and the quasi-static λ_qs = −Dk² − k²ρμα/Γ (Keller & Segel 1970), so
 * with C = λ_qs + Dk² (the chemical drive) λ_dyn + Dk² = C Γ/(Γ + λ_dyn), i.e. exactly
 * λ_qs − λ_dyn = C λ_dyn/(Γ + λ_dyn), and to first order in C/Γ
 *
 *   λ_dyn ≈ λ_qs (1 − C/Γ)          (C ≈ λ_qs when Dk² ≪ λ_qs: λ_dyn ≈ λ_qs (1 − λ_qs/Γ))
 *
 * (derived by hand here). So a ratio Γ/λ under 20 means an error of about 5 % or more at that
 * mode: the check's threshold (RELAXATION_RATIO).
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { RELAXATION_CHANGE, RELAXATION_RATIO } from '../../server/engine/checks.js';
import { findDose, withDose } from '../../server/engine/planner.js';
import type { Mixture } from '../../server/engine/types.js';
import { parseMixture } from '../../server/schema/mixture.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';
import { handLinearise, libraryEigenvalues } from './hand-jacobian.js';

/** The (M+S)×(M+S) dynamic system at wavenumber k (1/m), by hand in SI, rescaled by a similarity. */
function dynamicMatrix(mix: Mixture, k: number): number[][] {
  const { alpha, mu, R } = handLinearise(mix);
  const M = mix.species.length;
  const S = mix.chemicals.length;
  const k2 = k * k;
  const t = mix.chemicals.map((_, s) => {
    const drive = Math.max(...mix.species.map((sp, m) => Math.abs(k2 * sp.density * mu[m]![s]!)));
    const act = Math.max(...mix.species.map((_sp, m) => Math.abs(alpha[m]![s]!)));
    if (drive > 0 && act > 0) return Math.sqrt(drive / act);
    // a chemical no particle moves on (a fuel only): its α entries brought to its own rate D_s k² + R_ss
    return act > 0 ? (k2 * mix.chemicals[s]!.diffusivity + R[s]![s]!) / act : 1;
  });
  const A: number[][] = [];
  mix.species.forEach((sp, m) => A.push([...mix.species.map((_, n) => (m === n ? -k2 * sp.diffusivity : 0)), ...mix.chemicals.map((_, s) => (-k2 * sp.density * mu[m]![s]!) / t[s]!)]));
  mix.chemicals.forEach((c, s) => A.push([...mix.species.map((_, m) => alpha[m]![s]! * t[s]!), ...mix.chemicals.map((_, u) => (-(R[s]![u]! + (s === u ? k2 * c.diffusivity : 0)) * t[s]!) / t[u]!)]));
  expect(A.length).toBe(M + S);
  return A;
}
const dynamicGrowth = (mix: Mixture, k: number) => libraryEigenvalues(dynamicMatrix(mix, k))[0]!;
/** wavenumber of allowed mode n of a finite chamber */
const modeK = (mix: Mixture, n: number) => ((mix.chamber.walls === 'sealed' ? Math.PI : 2 * Math.PI) * n) / mix.chamber.length!;
/** the fastest mode with evolving chemicals over n = 1..N */
function dynamicBest(mix: Mixture, N = 400) {
  let best = { n: 0, re: -Infinity, im: 0 };
  for (let n = 1; n <= N; n++) {
    const g = dynamicGrowth(mix, modeK(mix, n));
    if (g.re > best.re) best = { n, ...g };
  }
  return best;
}
const example = (name: string) => parseMixture(JSON.parse(readFileSync(new URL(`../../seeds/examples/${name}.json`, import.meta.url), 'utf8')));

// one species, one chemical (the brief's fast case and the dynamic-run test's slow one): 1 µm spheres at φ = 0.05
const D = 2e-13;
const rho = 0.05 / ((4 / 3) * Math.PI * 1e-18);
const alpha = 1e-16;
const mu = -1e-12;
const L = 1e-3;
const one = (Dc: number, kappa: number) => mixture([chemical('c', Dc, kappa)], [species('b', D, rho, [constant('c', alpha, mu)], 1e-6)], 'periodic', L);

describe('slow chemistry: the quasi-static answer against the chemicals evolving', () => {
  it('one species, one chemical: λ_dyn from ml-matrix obeys the exact relation and, to first order, λ_qs (1 − C/Γ)', () => {
    let cases = 0;
    for (const [Dc, kappa] of [[1e-9, 0.05], [3e-10, 1e-2], [1e-10, 3e-3], [3e-11, 1e-3], [1e-11, 1e-3]] as const) {
      for (const n of [1, 3, 8, 20]) {
        const k2 = modeK(one(Dc, kappa), n) ** 2;
        const G = Dc * k2 + kappa;
        const qs = -D * k2 - (k2 * rho * mu * alpha) / G;
        if (!(qs > 0)) continue;
        const dyn = dynamicGrowth(one(Dc, kappa), Math.sqrt(k2)).re;
        const C = qs + D * k2;
        expect(rel(qs - dyn, (C * dyn) / (G + dyn))).toBeLessThan(1e-6); // the exact relation
        const x = C / G;
        const firstOrder = qs * (1 - x);
        // the remainder, by hand: C λ_qs/Γ − C λ/(Γ + λ) ≈ C λ_qs (C + λ)/Γ², at most 2 x² λ_qs since λ ≤ λ_qs ≤ C
        expect(Math.abs(dyn - firstOrder) / qs).toBeLessThanOrEqual(2.02 * x * x);
        expect(dyn).toBeLessThan(qs); // evolving chemicals lag: the growth is slower
        cases++;
      }
    }
    expect(cases).toBeGreaterThan(10);
  });

  it('fast chemistry (D_c = 1e-9 m²/s, κ = 0.05 1/s, periodic 1 mm) does not warn, and the dynamic growth agrees within 1/20', () => {
    const mix = one(1e-9, 0.05);
    const a = analyze(mix);
    expect(a.state).toBe('stationary');
    const r = a.checks.relaxation!;
    const k = a.fastestMode.wavenumber;
    // Γ = D_c k*² + κ and the ratio Γ/λ, by hand
    expect(rel(r.chemicals[0]!.relaxationRate, 1e-9 * k * k + 0.05)).toBeLessThan(1e-12);
    expect(rel(r.smallestRatio!, (1e-9 * k * k + 0.05) / a.growthRate)).toBeLessThan(1e-12);
    expect(r.smallestRatio!).toBeGreaterThan(RELAXATION_RATIO);
    expect(a.warnings.map((w) => w.code)).not.toContain('slow-chemistry');
    expect(r.dynamic).toBeNull();
    const best = dynamicBest(mix, 200);
    expect(Math.abs(best.re - a.growthRate) / a.growthRate).toBeLessThan(1 / RELAXATION_RATIO);
    expect(rel(r.dynamicRateAtMode!, dynamicGrowth(mix, k).re)).toBeLessThan(1e-6);
  });

  it('slow chemistry (D_c = 3e-11 m²/s, κ = 1e-3 1/s) warns, with the dynamic growth and wavelength ml-matrix gives', () => {
    const mix = one(3e-11, 1e-3);
    const a = analyze(mix);
    const r = a.checks.relaxation!;
    expect(r.smallestRatio!).toBeLessThan(RELAXATION_RATIO);
    const w = a.warnings.find((x) => x.code === 'slow-chemistry')!;
    expect(w).toBeDefined();
    const best = dynamicBest(mix, 200);
    const change = (best.re - a.growthRate) / a.growthRate;
    expect(Math.abs(change)).toBeGreaterThan(RELAXATION_CHANGE); // the case separates the two models
    expect(Math.abs((w.relativeChange as number) - change)).toBeLessThan(1e-6);
    expect(rel(w.dynamicGrowthRate as number, best.re)).toBeLessThan(1e-6);
    expect(rel(w.dynamicWavelength as number, (2 * Math.PI) / modeK(mix, best.n))).toBeLessThan(1e-12);
    expect(w.message).toContain(`${(Math.abs(change) * 100).toPrecision(3)} % slower`);
    expect(w.message).toMatch(/Check with a simulation: brink simulate --chemicals dynamic\.$/);
    // the first-order estimate at the fastest quasi-static mode against ml-matrix there
    const k2 = a.fastestMode.wavenumber ** 2;
    const G = 3e-11 * k2 + 1e-3;
    const x = (a.growthRate + D * k2) / G;
    const atMode = dynamicGrowth(mix, a.fastestMode.wavenumber).re;
    expect(rel(r.dynamicRateAtMode!, atMode)).toBeLessThan(1e-6);
    expect(Math.abs(atMode - a.growthRate * (1 - x)) / a.growthRate).toBeLessThanOrEqual(2.02 * x * x);
  });

  it('stationary-janus-clusters.json (the demo): Γ/λ ≈ 2 warns; evolving peroxide grows 2.4 % slower at 667 µm, 27 % slower at the 4 mm wave', () => {
    const mix = example('stationary-janus-clusters');
    const a = analyze(mix);
    expect(a.fastestMode.index).toBe(1);
    const r = a.checks.relaxation!;
    // Γ = D_c (π/L)² with no loss: 1.4e-9 × (π/2e-3)² = 3.4544e-3 1/s (by hand)
    const gamma = 1.4e-9 * (Math.PI / 2e-3) ** 2;
    expect(gamma).toBeCloseTo(3.4544e-3, 7);
    expect(rel(r.chemicals[0]!.relaxationRate, gamma)).toBeLessThan(1e-12);
    expect(rel(r.smallestRatio!, gamma / a.growthRate)).toBeLessThan(1e-12);
    expect(r.smallestRatio!).toBeGreaterThan(2);
    expect(r.smallestRatio!).toBeLessThan(2.1);
    const best = dynamicBest(mix);
    const change = (best.re - a.growthRate) / a.growthRate;
    expect(best.n).toBe(6);
    expect(change).toBeGreaterThan(-0.03);
    expect(change).toBeLessThan(-0.02);
    const w = a.warnings.find((x) => x.code === 'slow-chemistry')!;
    expect(Math.abs((w.relativeChange as number) - change)).toBeLessThan(1e-6);
    expect(rel(w.dynamicWavelength as number, (2 * 2e-3) / 6)).toBeLessThan(1e-12);
    const atMode = (dynamicGrowth(mix, a.fastestMode.wavenumber).re - a.growthRate) / a.growthRate;
    expect(atMode).toBeLessThan(-0.25);
    expect(Math.abs((r.dynamicRateAtMode! - a.growthRate) / a.growthRate - atMode)).toBeLessThan(1e-6);
    // the times by hand: 1/Γ = 1/3.4544e-3 s = 4.82 min, 1/λ = 4.82 min × 2.026 = 9.78 min
    expect(w.message).toMatch(/^h2o2 relaxes only 2\.03 times faster than the pattern grows \(growth time 9\.78 min\): in about 4\.82 min across the 4\.00 mm wave\./);
    expect(w.message).toMatch(/the growth rate may be off by about 2\.43 %: with them evolving the fastest mode grows 2\.43 % slower \(growth time 10\.0 min\) at 667 µm instead of 4\.00 mm; 26\.6 % slower at the 4\.00 mm wave itself\./);
  });

  it('the other demo examples: where the check warns the change is what ml-matrix gives; where it does not, they agree within 1/20', () => {
    for (const [name, warns] of [['stable-janus-dispersed', false], ['oscillatory-travelling-bands', false], ['saturating-enzyme-beads', true]] as const) {
      const mix = example(name);
      const a = analyze(mix);
      const r = a.checks.relaxation!;
      const best = dynamicBest(mix);
      const change = (best.re - a.growthRate) / Math.abs(a.growthRate);
      const w = a.warnings.find((x) => x.code === 'slow-chemistry');
      expect(w !== undefined, name).toBe(warns);
      if (w) {
        expect(Math.abs((w.relativeChange as number) - change), name).toBeLessThan(1e-6);
        expect(r.smallestRatio!, name).toBeLessThan(RELAXATION_RATIO);
      } else {
        expect(Math.abs(change), name).toBeLessThan(1 / RELAXATION_RATIO);
        if (a.state === 'stable') expect(best.re, name).toBeLessThan(0); // still stable with evolving chemicals
        else expect(r.smallestRatio!, name).toBeGreaterThanOrEqual(RELAXATION_RATIO);
      }
      if (a.state === 'oscillatory') {
        // an oscillatory mode is judged against |ω| when it turns faster than it grows
        const omega = (2 * Math.PI) / a.fastestMode.oscillationPeriod!;
        expect(rel(r.smallestRatio!, r.chemicals[0]!.relaxationRate / Math.max(omega, a.growthRate))).toBeLessThan(1e-12);
        expect(Math.abs(best.im - omega) / omega).toBeLessThan(1 / RELAXATION_RATIO);
      }
    }
  });

  it('a stable answer warns only when some mode grows with the chemicals evolving: a slow chemical (D_c = 2.4e-11 m²/s) makes a stable pair oscillate', () => {
    // invented inputs: two consumers of a slow, barely lost chemical, one drawn up its gradient and one down
    const mix = mixture(
      [chemical('c', 2.4e-11, 2e-5)],
      [species('a', 5.6e-13, 1.5e15, [constant('c', -9e-16, 3.5e-11)]), species('b', 1.8e-13, 1.5e15, [constant('c', -3.5e-16, -9e-11)])],
      'sealed',
      1e-3,
    );
    const a = analyze(mix);
    expect(a.state).toBe('stable');
    const best = dynamicBest(mix);
    expect(best.re).toBeGreaterThan(0); // ml-matrix: with the chemical evolving, a mode grows
    expect(best.im).toBeGreaterThan(0); // and oscillates
    const w = a.warnings.find((x) => x.code === 'slow-chemistry')!;
    // the chemical relaxes (1/Γ at k₁ = π/L: 1/(2.4e-11 (π/1e-3)² + 2e-5) = 3.88e3 s = 1.08 h, by hand) slower than the
    // least stable mode turns: the message says "slower", not "only 0.1 times faster"
    expect(w.message).toMatch(/^c relaxes [\d.]+ times slower than the least stable mode turns .*: in about 1\.08 h across the 2\.00 mm wave\./);
    expect(w.message).toMatch(/the mixture is not stable: the [\d.]+ µm wave grows \(growth time [\d.]+ min\) and oscillates with a period of [\d.]+ min/);
    expect(rel(w.dynamicGrowthRate as number, best.re)).toBeLessThan(1e-6);
    expect(rel(w.dynamicWavelength as number, (2 * 1e-3) / best.n)).toBeLessThan(1e-12);
    expect(rel(a.checks.relaxation!.dynamic!.oscillationPeriod!, (2 * Math.PI) / best.im)).toBeLessThan(1e-6);
    // and the stable demo, whose chemistry is as slow (Γ/|λ| ≈ 3.4), does not warn: every mode still decays
    const calm = analyze(example('stable-janus-dispersed'));
    expect(calm.checks.relaxation!.smallestRatio!).toBeLessThan(RELAXATION_RATIO);
    expect(calm.warnings.map((x) => x.code)).not.toContain('slow-chemistry');
    expect(dynamicBest(example('stable-janus-dispersed')).re).toBeLessThan(0);
  });

  it('an unbounded chamber: the log grid finds the dynamic peak that a dense scan with ml-matrix finds, to 10⁻³', () => {
    const mix = mixture([chemical('c', 3e-11, 1e-3)], [species('b', D, rho, [constant('c', alpha, mu)], 1e-6)], 'unbounded', null);
    const a = analyze(mix);
    expect(a.state).toBe('stationary');
    // the Keller–Segel peak by hand: k*² = (√(Aκ/D) − κ)/D_c with A = −αμρ (docs/references.md)
    const A = -alpha * mu * rho;
    expect(rel(a.fastestMode.wavenumber ** 2, (Math.sqrt((A * 1e-3) / D) - 1e-3) / 3e-11)).toBeLessThan(1e-6);
    const w = a.warnings.find((x) => x.code === 'slow-chemistry')!;
    expect(w).toBeDefined();
    let best = { k: 0, re: -Infinity };
    const k0 = a.fastestMode.wavenumber;
    for (let i = 0; i <= 4000; i++) {
      const k = (k0 / 30) * 900 ** (i / 4000);
      const g = dynamicGrowth(mix, k).re;
      if (g > best.re) best = { k, re: g };
    }
    const got = w.dynamicGrowthRate as number;
    expect(got).toBeLessThanOrEqual(best.re * (1 + 1e-9));
    expect(got).toBeGreaterThan(best.re * (1 - 1e-3));
    expect(Math.abs(Math.log((2 * Math.PI) / (w.dynamicWavelength as number) / best.k))).toBeLessThan(0.05);
    expect(a.checks.relaxation!.dynamic!.index).toBeNull();
  });

  it('a stationary threshold is the same with evolving chemicals: at the planner\'s dose the dynamic system has an eigenvalue 0 at the crossing mode', () => {
    // det of the dynamic system = det(−(k² D_s + R)) · det J_qs(k) (Schur complement on the chemical block, by hand):
    // a real eigenvalue crosses 0 in one exactly when it does in the other, however slow the chemicals are
    const base = mixture([chemical('c', 3e-11, 1e-3)], [species('b', 2e-13, 1e16, [constant('c', -1e-16, -1e-12)])], 'sealed', 2e-3);
    const dopant = species('d', 2e-13, 0, [constant('c', -1e-16, 1e-12)]);
    const r = findDose(base, dopant, { boundary: 'stationary', dosing: 'add' });
    expect(r.feasible).toBe(true);
    const mix = withDose(base, dopant, r.threshold!.density, 'add');
    const n = analyze(mix).fastestMode.index!;
    const k = modeK(mix, n);
    const top = dynamicGrowth(mix, k);
    const gamma = 3e-11 * k * k + 1e-3;
    expect(Math.abs(top.re)).toBeLessThan(1e-5 * gamma);
    expect(top.im).toBe(0);
    // and just above it the dynamic system grows, as the quasi-static one does
    expect(dynamicGrowth(withDose(base, dopant, r.threshold!.density * 1.01, 'add'), k).re).toBeGreaterThan(0);
  });

  it('at an oscillatory threshold (λ ≈ 0, ω not) of the travelling-bands demo, fast chemistry does not warn: the change is judged against |ω|', () => {
    const demo = example('oscillatory-travelling-bands');
    const at = (f: number): Mixture => ({ ...demo, species: demo.species.map((sp) => ({ ...sp, density: sp.density * f })) });
    let [lo, hi] = [1e-3, 1];
    expect(analyze(at(hi)).state).toBe('oscillatory');
    expect(analyze(at(lo)).state).toBe('stable');
    for (let i = 0; i < 60; i++) {
      const mid = Math.sqrt(lo * hi);
      if (analyze(at(mid)).growthRate > 0) hi = mid;
      else lo = mid;
    }
    const a = analyze(at(hi));
    const r = a.checks.relaxation!;
    expect(Math.abs(a.growthRate)).toBeLessThan(1e-6 * r.angularFrequency); // at the crossing
    expect(r.angularFrequency).toBeGreaterThan(0);
    expect(r.smallestRatio!).toBeGreaterThan(RELAXATION_RATIO);
    expect(a.warnings.map((w) => w.code)).not.toContain('slow-chemistry');
    // ml-matrix: with the chemical evolving, the crossing mode's growth moves by far less than 5 % of ω
    const dyn = dynamicGrowth(at(hi), a.fastestMode.wavenumber);
    expect(Math.abs(dyn.re - a.growthRate)).toBeLessThan(RELAXATION_CHANGE * r.angularFrequency);
    expect(rel(r.dynamicRateAtMode!, dyn.re)).toBeLessThan(1e-3);
  });
});
