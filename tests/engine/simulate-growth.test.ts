/**
 * The simulation's early growth against the linear stability analysis of the same
 * mixture (`analyze`, docs/model.md §3–§5): the nonlinear model of §14 linearises to
 * exactly the J(k) of §3, so the growth rate and the wavelength measured from a
 * small random perturbation (the propagator of each Fourier mode fitted to its
 * recorded amplitudes, §16) must agree with the eigenvalue analysis to 2 %, and the
 * oscillation period near onset to 5 % (issue 15).
 *
 * The mixtures are drawn by a seeded generator in the style of the holdout tests
 * (tests/engine/fast.test.ts): random diffusivities, activities, mobilities and
 * losses over the ranges of bench/run.ts, kept only when analyze puts them in the
 * wanted state with a fastest mode the grid resolves (index 2–20) and separated
 * from the next-fastest allowed mode by more than 1 % in growth rate (a finite
 * window cannot tell apart two modes closer than that, and the wavelength check
 * would then compare a coin toss). Each case takes the first DRAWS such mixtures of
 * its seeded stream, as the holdout tests do; the draws are not tuned after the fact.
 * The simulation's own noise is its default (rms 1e-5, seed 1), so a fastest mode that
 * happens to start weak must still be found.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { eigenvaluesAt } from '../../server/engine/probe.js';
import { simulate } from '../../server/engine/simulate/index.js';
import type { Mixture } from '../../server/engine/types.js';
import { parseMixture } from '../../server/schema/mixture.js';
import { find } from '../helpers/draws.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

/** draws per case */
const DRAWS = 8;

describe('early growth measured in the simulation vs analyze()', () => {
  const cases = [
    { name: 'stationary, one species, sealed', want: 'stationary' as const, M: 1, walls: 'sealed' as const, seed: 1501 },
    { name: 'stationary, two species, periodic', want: 'stationary' as const, M: 2, walls: 'periodic' as const, seed: 1502 },
    { name: 'oscillatory near onset, two species, sealed', want: 'oscillatory' as const, M: 2, walls: 'sealed' as const, seed: 1503 },
    { name: 'oscillatory near onset, two species, periodic', want: 'oscillatory' as const, M: 2, walls: 'periodic' as const, seed: 1504 },
    // sealed walls give each mode one real trajectory, which soon lines up with its fastest eigenvector: the fit must
    // not read the directions the history hardly explores (docs/model.md §16)
    { name: 'stationary, two species, sealed', want: 'stationary' as const, M: 2, walls: 'sealed' as const, seed: 1505 },
    { name: 'stationary, three species, sealed', want: 'stationary' as const, M: 3, walls: 'sealed' as const, seed: 1506 },
    { name: 'stationary, three species, sealed, crowding', want: 'stationary' as const, M: 3, walls: 'sealed' as const, seed: 1507, crowding: true },
  ];
  for (const c of cases) {
    it(`${c.name}: ${DRAWS} draws`, () => {
      const worst = { growth: 0, wavelength: 0, period: 0 };
      for (const [j, mix] of find(c.seed, c.want, c.M, c.walls, true, DRAWS, c.crowding ?? false).entries()) {
        const a = analyze(mix);
        // six growth times hold the linear window (it closes at a departure of 1e-3 from the mean, about 3.5 growth times
        // from the 1e-5 noise); what comes after is not read here
        const r = simulate(mix, { dims: 1, points: 256, duration: 6 / a.growthRate, frames: 11 });
        const m = r.summary.measured;
        const where = `${c.name}, draw ${j}`;
        expect(m.growthRate, where).not.toBeNull();
        expect(rel(m.growthRate!, a.growthRate), where).toBeLessThan(0.02);
        expect(rel(m.wavelength!, a.fastestMode.wavelength!), where).toBeLessThan(0.02);
        expect(r.summary.warnings.map((w) => w.code), where).not.toContain('measured-mode-differs');
        worst.growth = Math.max(worst.growth, rel(m.growthRate!, a.growthRate));
        worst.wavelength = Math.max(worst.wavelength, rel(m.wavelength!, a.fastestMode.wavelength!));
        if (c.want === 'oscillatory') {
          expect(m.oscillationPeriod, where).not.toBeNull();
          expect(rel(m.oscillationPeriod!, a.fastestMode.oscillationPeriod!), where).toBeLessThan(0.05);
          worst.period = Math.max(worst.period, rel(m.oscillationPeriod!, a.fastestMode.oscillationPeriod!));
        } else {
          expect(m.oscillationPeriod, where).toBeNull();
        }
      }
      console.log(c.name, 'worst relative differences over', DRAWS, 'draws', worst);
    }, 120_000);
  }

  it('three species with crowding, sealed (attracted producers and a repelled bystander): twelve noise seeds', () => {
    // found by an independent review: a sealed two- or three-species mixture whose early fit read a spurious growth
    // up to twice the linear rate in one seed of six (a mode fed by two growing ones seemed to outgrow the fastest)
    const phi = (f: number, a: number) => f / ((4 / 3) * Math.PI * a ** 3);
    const c0 = chemical('c', 1e-9, 0.05);
    const mix = mixture(
      [c0],
      [
        species('a', 2e-13, phi(0.05, 1e-6), [constant('c', 1e-16, -1e-12)], 1e-6),
        species('b', 3e-13, phi(0.03, 0.7e-6), [constant('c', 5e-17, -5e-13)], 0.7e-6),
        species('p', 4e-13, phi(0.02, 0.5e-6), [constant('c', 0, 8e-13)], 0.5e-6),
      ],
      'sealed',
      1e-3,
      true,
    );
    const a = analyze(mix);
    for (let seed = 1; seed <= 12; seed++) {
      const m = simulate(mix, { dims: 1, points: 256, duration: 6 / a.growthRate, frames: 11, seed }).summary.measured;
      expect(rel(m.growthRate!, a.growthRate), `seed ${seed}`).toBeLessThan(0.02);
      expect(rel(m.wavelength!, a.fastestMode.wavelength!), `seed ${seed}`).toBeLessThan(0.02);
    }
  }, 60_000);

  it('the mixtures a second independent review drew to break the fit (sealed, oscillatory, 2–3 species), two noise seeds each', () => {
    // tests/engine/simulate-review-cases.json: drawn by the reviewer's own generator, kept when analyze() calls them
    // oscillatory with the fastest mode separated from its neighbours; before the fix one dropped the fastest mode
    // (its window too short to halve), one rejected it (a harmonic fed its second half), one closed the window after
    // 0.3 growth times (a species that follows the chemicals departed at once)
    const cases = JSON.parse(readFileSync('tests/engine/simulate-review-cases.json', 'utf8')) as Record<string, Mixture>;
    for (const name of ['osc-sealed-2sp-weak-fastest-dropped', 'osc-sealed-2sp-halves-reject-fastest', 'osc-sealed-3sp-crowd-window-too-short']) {
      const mix = cases[name]!;
      const a = analyze(mix);
      for (const seed of [1, 2]) {
        const m = simulate(mix, { dims: 1, points: 256, duration: 6 / a.growthRate, frames: 11, seed }).summary.measured;
        expect(rel(m.growthRate!, a.growthRate), `${name} seed ${seed}`).toBeLessThan(0.02);
        expect(rel(m.wavelength!, a.fastestMode.wavelength!), `${name} seed ${seed}`).toBeLessThan(0.02);
      }
    }
  }, 60_000);

  it('finds the fastest mode when it starts a thousand times weaker than a slower neighbour', () => {
    // from the stationary one-species sealed stream: the first draw whose fastest mode is n = 3 with n = 2 growing
    // too; seeded with mode 2 at 1e-5 and mode 3 at 1e-8 of the mean (3 is not a harmonic of 2, so mode 2 does not
    // feed it at second order), mode 3 ends the linear window weaker than mode 2 but is still the fastest
    const kOf = (mix: Mixture, n: number) => (n * Math.PI) / mix.chamber.length!;
    const mix = find(1501, 'stationary', 1, 'sealed', true, 30).find((m) => analyze(m).fastestMode.index === 3 && eigenvaluesAt(m, kOf(m, 2))[0]!.re > 0)!;
    expect(mix).toBeDefined();
    const a = analyze(mix);
    const L = mix.chamber.length!;
    const r = simulate(mix, {
      dims: 1,
      points: 256,
      duration: 12 / a.growthRate,
      frames: 11,
      initial: (m, x) => mix.species[m]!.density * (1 + 1e-5 * Math.cos((2 * Math.PI * x) / L) + 1e-8 * Math.cos((3 * Math.PI * x) / L)),
    });
    const m = r.summary.measured;
    expect(r.summary.run.measuredMode).toEqual([3]);
    expect(rel(m.growthRate!, a.growthRate)).toBeLessThan(0.02);
    expect(rel(m.wavelength!, a.fastestMode.wavelength!)).toBeLessThan(0.02);
  });

  it('seeds the fastest mode when it lies beyond the first 32 chamber modes (mode 35 of a 1 cm periodic chamber)', () => {
    const rho = 0.05 / ((4 / 3) * Math.PI * 1e-18);
    const mix = mixture([chemical('c', 1e-9, 0.05)], [species('b', 2e-13, rho, [constant('c', 1e-16, -1e-12)], 1e-6)], 'periodic', 1e-2);
    const a = analyze(mix);
    expect(a.fastestMode.index).toBeGreaterThan(32);
    const r = simulate(mix, { dims: 1, points: 1024, duration: 8 / a.growthRate, frames: 11 });
    expect(rel(r.summary.measured.wavelength!, a.fastestMode.wavelength!)).toBeLessThan(0.02);
    expect(rel(r.summary.measured.growthRate!, a.growthRate)).toBeLessThan(0.02);
    expect(r.summary.run.seededModes).toBeGreaterThanOrEqual(4 * a.fastestMode.index!);
  });

  it('2D (periodic and sealed): the measured growth equals the linear growth of the lattice mode it found', () => {
    // the 2D lattice has modes k = (2π/L)(n_x, n_y) (periodic) or (π/L)(n_x, n_y) (sealed) off the axes too; J(k)
    // depends on |k| only, so eigenvaluesAt(|k|) is the linear growth of whichever mode the run measures
    const rho = 0.05 / ((4 / 3) * Math.PI * 1e-18);
    for (const walls of ['periodic', 'sealed'] as const) {
      const mix = mixture([chemical('c', 1e-9, 0.05)], [species('b', 2e-13, rho, [constant('c', 1e-16, -1e-12)], 1e-6)], walls, 1e-3);
      const a = analyze(mix);
      const r = simulate(mix, { dims: 2, points: 32, duration: 8 / a.growthRate, frames: 3 });
      const m = r.summary.measured;
      const k = (2 * Math.PI) / m.wavelength!;
      const linear = eigenvaluesAt(mix, k)[0]!.re;
      console.log(walls, { mode: r.summary.run.measuredMode, measured: m.growthRate, linear, analyze: a.growthRate });
      expect(rel(m.growthRate!, linear)).toBeLessThan(0.02);
      // and no allowed 1D mode of analyze() beats the 2D lattice by more than the lattice's finer spacing allows
      expect(m.growthRate!).toBeGreaterThan(0.95 * a.growthRate);
    }
  });

  it('saturating kinetics (the glucose-oxidase example): the fuel slope enters R as in §3', () => {
    const mix = parseMixture(JSON.parse(readFileSync('seeds/examples/saturating-enzyme-beads.json', 'utf8')));
    const a = analyze(mix);
    const r = simulate(mix, { dims: 1, points: 256, duration: 8 / a.growthRate, frames: 11 });
    const m = r.summary.measured;
    expect(r.summary.run.chemistryIterations).toBeGreaterThan(1); // the real-space fixed point ran
    expect(rel(m.growthRate!, a.growthRate)).toBeLessThan(0.02);
    expect(rel(m.wavelength!, a.fastestMode.wavelength!)).toBeLessThan(0.02);
  });
});
