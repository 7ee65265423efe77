/**
 * Two species against the trace/determinant conditions.
 *
 * Source: the Routh–Hurwitz criterion for a real 2×2 matrix (any dynamical
 * systems text, e.g. S. H. Strogatz, *Nonlinear Dynamics and Chaos*, §5.2):
 * J is stable iff tr J < 0 and det J > 0, and its eigenvalues are complex iff
 * (tr J)² < 4 det J. For one chemical the 2×2 J(k) is written out here by hand
 * from docs/model.md §3 — J = −k² diag(D) − k² g(k) p qᵀ, p_m = ρ_m μ_m, q_m = α_m,
 * g = 1/(D_c k² + κ) — independently of the engine's assembly.
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { buildModel } from '../../server/engine/model.js';
import { eigenvaluesAt, jacobianAt } from '../../server/engine/probe.js';
import { Random } from '../../server/engine/random.js';
import { modeSpectrum } from '../../server/engine/spectrum.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

interface Two {
  D1: number;
  D2: number;
  a1: number;
  a2: number;
  m1: number;
  m2: number;
  r1: number;
  r2: number;
  Dc: number;
  kappa: number;
}

function handJ(p: Two, k: number): [number, number, number, number] {
  const g = 1 / (p.Dc * k * k + p.kappa);
  const k2 = k * k;
  return [
    -k2 * p.D1 - k2 * g * p.r1 * p.m1 * p.a1,
    -k2 * g * p.r1 * p.m1 * p.a2,
    -k2 * g * p.r2 * p.m2 * p.a1,
    -k2 * p.D2 - k2 * g * p.r2 * p.m2 * p.a2,
  ];
}

function toMixture(p: Two, L: number) {
  return mixture(
    [chemical('c', p.Dc, p.kappa)],
    [species('one', p.D1, p.r1, [constant('c', p.a1, p.m1)]), species('two', p.D2, p.r2, [constant('c', p.a2, p.m2)])],
    'sealed',
    L,
  );
}

describe('Routh–Hurwitz on two species', () => {
  it('J(k) assembled by the engine equals the hand-written 2×2 matrix', () => {
    const p: Two = { D1: 0.2e-12, D2: 2e-12, a1: -1e-16, a2: 3e-17, m1: 1e-11, m2: -4e-11, r1: 1e14, r2: 3e15, Dc: 1.4e-9, kappa: 0.01 };
    for (const k of [1e3, 1e4, 1e5]) {
      const J = jacobianAt(toMixture(p, 1e-3), k);
      const H = handJ(p, k);
      for (let i = 0; i < 4; i++) expect(rel(J[i]!, H[i]!)).toBeLessThan(1e-12);
    }
  });

  it('on 1000 seeded random samples, stability and complexity at k follow tr and det', () => {
    const rng = new Random(20261201);
    let complexSeen = 0;
    let unstableSeen = 0;
    for (let t = 0; t < 1000; t++) {
      const p: Two = {
        D1: 10 ** rng.between(-13.5, -11),
        D2: 10 ** rng.between(-13.5, -11),
        a1: (rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-18, -15),
        a2: (rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-18, -15),
        m1: (rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-12, -10),
        m2: (rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-12, -10),
        r1: 10 ** rng.between(12, 16),
        r2: 10 ** rng.between(12, 16),
        Dc: 10 ** rng.between(-9.5, -8.7),
        kappa: rng.uniform() < 0.3 ? 0 : 10 ** rng.between(-4, 0),
      };
      const k = 10 ** rng.between(2.5, 5);
      const [a, b, c, d] = handJ(p, k);
      const tr = a + d;
      const det = a * d - b * c;
      const mix = toMixture(p, 1e-3);
      const ev = eigenvaluesAt(mix, k);
      const stable = ev.every((e) => e.re < 0);
      const complex = ev.some((e) => e.im !== 0);
      // Skip samples within rounding of a boundary, where either answer is right.
      const scale = Math.abs(a) + Math.abs(d) + Math.sqrt(Math.abs(b * c));
      if (Math.abs(tr) < 1e-9 * scale || Math.abs(det) < 1e-9 * scale * scale || Math.abs(tr * tr - 4 * det) < 1e-7 * scale * scale) continue;
      expect(stable).toBe(tr < 0 && det > 0);
      expect(complex).toBe(tr * tr < 4 * det);
      if (complex) complexSeen++;
      if (!stable) unstableSeen++;
      // Vieta: the eigenvalues sum to tr J and multiply to det J.
      const sum = ev[0]!.re + ev[1]!.re;
      const prod = ev[0]!.re * ev[1]!.re - ev[0]!.im * ev[1]!.im;
      expect(Math.abs(sum - tr)).toBeLessThan(1e-10 * scale);
      expect(Math.abs(prod - det)).toBeLessThan(1e-9 * scale * scale);
      // The scan's own path at this k (closed-form 2×2, or the secular root when the couplings
      // share a sign; spectrum.ts, scaled units) against the quadratic formula on the hand J.
      const model = buildModel(mix);
      const s = modeSpectrum(model, k * model.lengthUnit);
      const top = complex ? tr / 2 : (tr + Math.sqrt(tr * tr - 4 * det)) / 2;
      expect(Math.abs(s.maxRe / model.timeUnit - top)).toBeLessThan(1e-9 * scale);
      expect(s.imAtMax > 0).toBe(complex);
    }
    expect(complexSeen).toBeGreaterThan(10);
    expect(unstableSeen).toBeGreaterThan(10);
  });

  // A fast self-attracting species with a slow self-repelling one (mixed signs,
  // unequal D): in units of γ = D_c k₁² + κ and D₂, s₁ = −100 γD₂ and s₂ = 60 γD₂, so
  // that Σ s/D > −γ (no stationary onset) while Σ s crosses −(D₁ + D₂)γ.
  function oscillatoryCase(scale: number): Two {
    const L = 4e-4;
    const k1 = Math.PI / L;
    const Dc = 1.4e-9;
    const gamma = Dc * k1 * k1;
    const D1 = 20e-12;
    const D2 = 1e-12;
    const s1 = -100 * gamma * D2; // fast: α < 0, μ > 0
    const s2 = 60 * gamma * D2; // slow: α < 0, μ < 0
    const a1 = -3e-16;
    const m1 = 2e-10;
    const a2 = -5e-15;
    const m2 = -1e-10;
    return { D1, D2, a1, m1, a2, m2, r1: (scale * s1) / (a1 * m1), r2: (scale * s2) / (a2 * m2), Dc, kappa: 0 };
  }

  it('a complex pair crosses the imaginary axis where tr J(k₁) = 0 with det J(k₁) > 0: oscillatory onset', () => {
    const L = 4e-4;
    const k1 = Math.PI / L;
    // tr J is linear in a common density scale x: tr = −k²(D₁+D₂) − k² g x Σs; solve tr = 0.
    const base = oscillatoryCase(1);
    const [a, , , d] = handJ(base, k1);
    const diff = -k1 * k1 * (base.D1 + base.D2);
    const coup = a + d - diff; // part proportional to the density scale
    const xStar = -diff / coup;
    const below = oscillatoryCase(0.999 * xStar);
    const above = oscillatoryCase(1.001 * xStar);
    const [pa, pb, pc, pd] = handJ(above, k1);
    expect(pa * pd - pb * pc).toBeGreaterThan(0); // det > 0 at the crossing
    expect(analyze(toMixture(below, L)).state).toBe('stable');
    const r = analyze(toMixture(above, L));
    expect(r.state).toBe('oscillatory');
    expect(r.fastestMode.index).toBe(1);
    // At onset the frequency is √det J (tr = 0 ⇒ λ = ±i√det).
    const det = pa * pd - pb * pc;
    expect(rel(r.fastestMode.oscillationPeriod!, (2 * Math.PI) / Math.sqrt(det))).toBeLessThan(2e-3);
    expect(r.criteria.oscillatory!.met).toBe(true);
    expect(r.criteria.stationary!.met).toBe(false);
    // The composition is the eigenvector of the hand J(k₁) for λ = growth + iω (the member with Im λ > 0):
    // (J − λ)v = 0 checked row by row in complex arithmetic.
    const lr = r.growthRate;
    const li = (2 * Math.PI) / r.fastestMode.oscillationPeriod!;
    const v = r.composition.map((c) => [c.magnitude * Math.cos(c.phase), c.magnitude * Math.sin(c.phase)] as const);
    expect(r.composition.some((c) => Math.abs(Math.sin(c.phase)) > 1e-3)).toBe(true); // a travelling mode: the species are out of phase
    const rows = [
      [pa, pb],
      [pc, pd],
    ];
    for (let m = 0; m < 2; m++) {
      const re = rows[m]![0]! * v[0]![0] + rows[m]![1]! * v[1]![0] - (lr * v[m]![0] - li * v[m]![1]);
      const im = rows[m]![0]! * v[0]![1] + rows[m]![1]! * v[1]![1] - (lr * v[m]![1] + li * v[m]![0]);
      expect(Math.hypot(re, im)).toBeLessThan(1e-9 * (Math.abs(pa) + Math.abs(pb) + Math.abs(pc) + Math.abs(pd)));
    }
  });

  it('a real eigenvalue crosses zero where det J(k₁) = 0 with tr J(k₁) < 0: stationary onset', () => {
    // Two self-attracting species (same sign): det changes sign first.
    const L = 1e-3;
    const k1 = Math.PI / L;
    const mk = (x: number): Two => ({ D1: 0.2e-12, D2: 0.5e-12, a1: -1e-16, a2: -2e-16, m1: 2e-11, m2: 1e-11, r1: x * 1e14, r2: x * 2e14, Dc: 1.4e-9, kappa: 1e-3 });
    // det J = k⁴ D₁D₂ (1 + g Σ s/D) (determinant lemma); its root in x is closed-form.
    const g = 1 / (1.4e-9 * k1 * k1 + 1e-3);
    const p1 = mk(1);
    const sOverD = (p1.a1 * p1.m1 * p1.r1) / p1.D1 + (p1.a2 * p1.m2 * p1.r2) / p1.D2;
    const xStar = -1 / (g * sOverD);
    const [a, b, c, d] = handJ(mk(xStar), k1);
    expect(Math.abs(a * d - b * c)).toBeLessThan(1e-9 * (a * d));
    expect(a + d).toBeLessThan(0);
    expect(analyze(toMixture(mk(0.999 * xStar), L)).state).toBe('stable');
    const r = analyze(toMixture(mk(1.001 * xStar), L));
    expect(r.state).toBe('stationary');
    expect(r.fastestMode.oscillationPeriod).toBeNull();
    // Both species are self-attracting and cross-attracting: they gather together (same sign).
    expect(r.composition.every((c) => c.weight > 0)).toBe(true);
  });
});
