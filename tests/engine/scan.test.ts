/**
 * The mode scan: the bound on how far it goes, and that nothing inside it is missed.
 * Checked against brute force (every allowed mode, or a dense grid) on seeded
 * random mixtures — an identity check, no stored numbers.
 */
import { describe, expect, it } from 'vitest';
import { buildModel } from '../../server/engine/model.js';
import { Random } from '../../server/engine/random.js';
import { scanModes } from '../../server/engine/scan.js';
import { modeSpectrum } from '../../server/engine/spectrum.js';
import type { Mixture, Walls } from '../../server/engine/types.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';

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

describe('two-species spectra', () => {
  it('the 2×2 closed form used for M = 2 agrees with the general QR routine', async () => {
    const { eigenvalues } = await import('../../server/engine/linalg/eigen.js');
    const { jacobian } = await import('../../server/engine/model.js');
    const rng = new Random(2222);
    let complex = 0;
    for (let t = 0; t < 500; t++) {
      const model = buildModel(randomMixture(rng, 'sealed'));
      if (model.M !== 2) continue;
      const k = 10 ** rng.between(-1, 2);
      const s = modeSpectrum(model, k);
      const e = eigenvalues(jacobian(model, k), 2);
      const scale = Math.max(...Array.from(jacobian(model, k), Math.abs));
      expect(Math.abs(s.maxRe - Math.max(e.re[0]!, e.re[1]!))).toBeLessThan(1e-12 * scale);
      if (e.im[0] !== 0) complex++;
    }
    expect(complex).toBeGreaterThan(3);
  });
});
