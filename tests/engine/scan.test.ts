/**
 * The mode scan: the bound on how far it goes, and that nothing inside it is missed.
 * Checked against brute force (every allowed mode, or a dense grid) on seeded
 * random mixtures — an identity check, no stored numbers. The bound itself
 * (docs/model.md §4, Gershgorin) is checked, not trusted: beyond it, J(k) is
 * built by hand from the field equations (tests/references/hand-jacobian.ts)
 * and its eigenvalues taken with ml-matrix directly.
 */
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { buildModel } from '../../server/engine/model.js';
import { Random } from '../../server/engine/random.js';
import { scanModes } from '../../server/engine/scan.js';
import { modeSpectrum } from '../../server/engine/spectrum.js';
import type { Mixture, Walls } from '../../server/engine/types.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';
import { handJacobian, libraryEigenvalues, rowNorm } from '../references/hand-jacobian.js';

function randomMixture(rng: Random, walls: Walls): Mixture {
  const S = 1 + (rng.uniform() < 0.4 ? 1 : 0);
  const chems = Array.from({ length: S }, (_, s) => chemical(`c${s}`, 10 ** rng.between(-9.3, -8.8), rng.uniform() < 0.3 ? 0 : 10 ** rng.between(-3, 1)));
  const M = 1 + Math.floor(rng.uniform() * 4);
  const sp = Array.from({ length: M }, (_, m) =>
    species(
      `s${m}`,
      10 ** rng.between(-13, -11),
      10 ** rng.between(13, 16),
      chems.map((c) => constant(c.id, (rng.uniform() < 0.6 ? -1 : 1) * 10 ** rng.between(-17, -15), (rng.uniform() < 0.6 ? 1 : -1) * 10 ** rng.between(-11.5, -10))),
    ),
  );
  return mixture(chems, sp, walls, walls === 'unbounded' ? null : 10 ** rng.between(-3.3, -2.5));
}

describe('mode scan', () => {
  it('finds the largest growth rate over every allowed mode (sealed and periodic, brute force to the bound)', () => {
    const rng = new Random(555);
    let manyModes = 0;
    for (let t = 0; t < 80; t++) {
      const walls: Walls = t % 2 === 0 ? 'sealed' : 'periodic';
      const model = buildModel(randomMixture(rng, walls));
      const scan = scanModes(model, walls);
      const nHi = Math.floor(scan.upperWavenumber);
      if (nHi > 200) manyModes++;
      let best = -Infinity;
      for (let n = 1; n <= Math.min(nHi, 20000); n++) best = Math.max(best, modeSpectrum(model, n).maxRe);
      const tol = 1e-9 * Math.max(Math.abs(best), 1e-300);
      expect(scan.overall.value).toBeGreaterThanOrEqual(best - tol);
      // and it is attained at an allowed integer mode
      expect(Number.isInteger(scan.overall.index)).toBe(true);
      expect(modeSpectrum(model, scan.overall.index!).maxRe).toBeCloseTo(scan.overall.value, 12);
      expect(scan.boundRigorous).toBe(true);
    }
    expect(manyModes).toBeGreaterThan(5);
  });

  it('no mode beyond the bound grows faster than the fastest one found', () => {
    const rng = new Random(556);
    for (let t = 0; t < 40; t++) {
      const model = buildModel(randomMixture(rng, 'sealed'));
      const scan = scanModes(model, 'sealed');
      const kHi = scan.upperWavenumber;
      for (const f of [1.01, 1.5, 3, 10, 100, 1e4]) {
        expect(modeSpectrum(model, Math.ceil(kHi * f)).maxRe).toBeLessThan(scan.overall.value + 1e-12 * Math.abs(scan.overall.value));
      }
    }
  });

  it('in an unbounded chamber the result is at least the best of a dense grid', () => {
    const rng = new Random(557);
    for (let t = 0; t < 40; t++) {
      const model = buildModel(randomMixture(rng, 'unbounded'));
      const scan = scanModes(model, 'unbounded');
      let best = -Infinity;
      const lo = scan.upperWavenumber * 1e-7;
      for (let i = 0; i <= 4000; i++) best = Math.max(best, modeSpectrum(model, lo * Math.pow(scan.upperWavenumber / lo, i / 4000)).maxRe);
      expect(scan.overall.value).toBeGreaterThanOrEqual(best - 1e-9 * Math.abs(best));
    }
  });
});

describe('the scan bound, checked rather than trusted', () => {
  // Crowded mixtures too, so that both values of boundRigorous occur.
  function crowdedMixture(rng: Random, walls: Walls): Mixture {
    const base = randomMixture(rng, walls);
    const crowded = rng.uniform() < 0.5;
    // 2ρB with B = (2π/3)(2a)³ ≈ 3.4e-17 m³ for a = 1 µm: volume fractions of a few to tens of per cent
    const species = base.species.map((sp) => (crowded ? { ...sp, density: 10 ** rng.between(15, 16.5) } : sp));
    return { ...base, species, crowding: crowded };
  }

  /** Diagonal dominance of 𝔇 by rows or by columns, by hand from docs/model.md §3–4. */
  function dominant(mix: Mixture): boolean {
    const D = mix.species.map((sm) => mix.species.map((sn, n) => sm.diffusivity * ((sm === sn ? 1 : 0) + (mix.crowding ? 2 * sm.density * ((2 * Math.PI) / 3) * (sm.radius + mix.species[n]!.radius) ** 3 : 0))));
    const M = D.length;
    let rows = Infinity;
    let cols = Infinity;
    for (let m = 0; m < M; m++) {
      let offR = 0;
      let offC = 0;
      for (let n = 0; n < M; n++) {
        if (n === m) continue;
        offR += Math.abs(D[m]![n]!);
        offC += Math.abs(D[n]![m]!);
      }
      rows = Math.min(rows, D[m]![m]! - offR);
      cols = Math.min(cols, D[m]![m]! - offC);
    }
    return rows > 0 || cols > 0;
  }

  it('beyond the reported bound no allowed mode grows faster than the reported growth (ml-matrix on J(k) built by hand, modes up to 10⁴ × the bound)', () => {
    const rng = new Random(558);
    let rigorous = 0;
    let heuristic = 0;
    for (let t = 0; t < 90; t++) {
      const walls: Walls = (['sealed', 'periodic', 'unbounded'] as const)[t % 3]!;
      const mix = crowdedMixture(rng, walls);
      const r = analyze(mix);
      // The flag is what a hand computation of diagonal dominance says it is, and a heuristic bound is flagged.
      expect(r.scan.boundRigorous).toBe(dominant(mix));
      expect(r.warnings.some((w) => w.code === 'scan-bound-heuristic')).toBe(!r.scan.boundRigorous);
      if (!r.scan.boundRigorous) {
        heuristic++;
        continue;
      }
      rigorous++;
      const kHi = r.scan.upperWavenumber; // 1/m
      const step = walls === 'sealed' ? Math.PI / mix.chamber.length! : walls === 'periodic' ? (2 * Math.PI) / mix.chamber.length! : 0;
      const ks: number[] = [];
      if (step > 0) {
        const n0 = Math.floor(kHi / step) + 1;
        for (let n = n0; n < n0 + 50; n++) ks.push(n * step); // every mode just past the bound
        for (let f = 1.1; f < 1e4; f *= 1.3) ks.push(Math.ceil((f * kHi) / step) * step); // then sampled to 10⁴ ×
      } else {
        for (let f = 1.0001; f < 1e4; f *= 1.05) ks.push(f * kHi);
      }
      for (const k of ks) {
        const J = handJacobian(mix, k);
        const top = libraryEigenvalues(J)[0]!.re;
        expect(top).toBeLessThan(r.growthRate + 1e-12 * rowNorm(J));
        if (r.state === 'stable') expect(top).toBeLessThan(1e-12 * rowNorm(J));
      }
    }
    expect(rigorous).toBeGreaterThan(20);
    expect(heuristic).toBeGreaterThan(3);
  });
});
