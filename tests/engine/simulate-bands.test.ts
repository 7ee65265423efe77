/**
 * Travelling bands read from a simulated run (findBands on the kymograph, docs/model.md §16) against the linear
 * theory of the same mixture. Near onset an oscillatory instability of a periodic chamber grows as
 * Re(v e^{ikx + λt}) with λ = σ + iω, the largest eigenvalue of J(k) and v its eigenvector: a wave whose crests
 * move at the phase speed −ω/k and pass a fixed point with the period 2π/|ω| (the dispersion relation of a linear
 * wave; e.g. G. B. Whitham, Linear and Nonlinear Waves, Wiley 1974, ch. 11 — from memory). The run is seeded with
 * that travelling mode alone at 1 %, so the pattern is above the band reading's 1 % contrast and still
 * linear, and the reading must give the phase speed to 2 % and the period to 5 %.
 *
 * J(k) is built by hand for one chemical with constant activities α_n and mobilities μ_m (docs/model.md §3):
 * J_mn = −D_m k² δ_mn − k² ρ⁰_m μ_m α_n / (D_c k² + κ), and decomposed with ml-matrix (an independent library).
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { simulate } from '../../server/engine/simulate/index.js';
import type { Mixture } from '../../server/engine/types.js';
import { find } from '../helpers/draws.js';
import { rel } from '../helpers/mixtures.js';

function travellingMode(mix: Mixture, k: number): { sigma: number; omega: number; v: { re: number[]; im: number[] } } {
  const c = mix.chemicals[0]!;
  const k2 = k * k;
  const G = 1 / (c.diffusivity * k2 + c.lossRate);
  const M = mix.species.length;
  const act = mix.species.map((s) => (s.couplings[0]!.activity as { kind: 'constant'; rate: number }).rate);
  const mob = mix.species.map((s) => s.couplings[0]!.mobility);
  // in units of the relative density δρ_m/ρ⁰_m, so the entries are of one size
  const J = Array.from({ length: M }, (_, m) => Array.from({ length: M }, (_, n) => (m === n ? -mix.species[m]!.diffusivity * k2 : 0) - k2 * mob[m]! * act[n]! * mix.species[n]!.density * G));
  const e = new EigenvalueDecomposition(new Matrix(J));
  const re = e.realEigenvalues;
  const im = e.imaginaryEigenvalues;
  // the eigenvalue of the largest real part with +Im (its conjugate makes the same real wave)
  let i = -1;
  for (let j = 0; j < M; j++) if (im[j]! > 0 && (i < 0 || re[j]! > re[i]!)) i = j;
  if (i < 0) throw new Error('no oscillatory eigenvalue');
  // ml-matrix stores a complex pair's eigenvector as two real columns: (column i) ± i (column i+1) for +Im at i
  const V = e.eigenvectorMatrix;
  return {
    sigma: re[i]!,
    omega: im[i]!,
    v: { re: Array.from({ length: M }, (_, m) => V.get(m, i)), im: Array.from({ length: M }, (_, m) => V.get(m, i + 1)) },
  };
}

describe('travelling bands in a run, against the linear phase speed and period', () => {
  it('a near-onset oscillatory mixture seeded with its travelling mode: speed −ω/k to 2 %, period 2π/|ω| to 5 %', () => {
    // of the first 20 draws of the oscillatory periodic stream (tests/helpers/draws.ts), the one closest to onset
    // (smallest growth per period, σP ≈ 0.5): over the 4.5 periods of the run its wave grows by about e²
    const sp = (m: Mixture) => {
      const a = analyze(m);
      return a.growthRate * a.fastestMode.oscillationPeriod!;
    };
    const mix = find(1504, 'oscillatory', 2, 'periodic', true, 20).reduce((x, y) => (sp(y) < sp(x) ? y : x));
    expect(mix).toBeDefined();
    const a = analyze(mix!);
    const L = mix!.chamber.length!;
    const n = a.fastestMode.index!;
    const k = (2 * Math.PI * n) / L;
    const w = travellingMode(mix!, k);
    expect(rel(w.sigma, a.growthRate)).toBeLessThan(1e-6); // the hand-built J(k) is analyze()'s
    const scale = 0.01 / Math.max(...w.v.re.map((x, m) => Math.hypot(x, w.v.im[m]!)));
    const period = (2 * Math.PI) / Math.abs(w.omega);
    const r = simulate(mix!, {
      dims: 1,
      points: 128,
      duration: 4.5 * period,
      frames: 201,
      // δρ_m/ρ⁰_m = Re(v_m e^{ikx}) at a 1 % amplitude
      initial: (m, x) => mix!.species[m]!.density * (1 + scale * (w.v.re[m]! * Math.cos(k * x) - w.v.im[m]! * Math.sin(k * x))),
    });
    const b = r.summary.bands;
    expect(b).not.toBeNull();
    expect(rel(b!.speed, -w.omega / k)).toBeLessThan(0.02);
    expect(b!.period).not.toBeNull();
    expect(rel(b!.period!, period)).toBeLessThan(0.05);
    console.log('bands', b, 'linear', { speed: -w.omega / k, period });
  });
});
