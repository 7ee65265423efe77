/**
 * What a simulation says about itself (docs/model.md §16): the summary must not let a
 * reader take "no clusters" for "nothing forms", a missing band reading for "no bands",
 * or a run of the wrong grid for an answer. Each warning is checked on a case that
 * must raise it and on one that must not. The expected figures come from the linear
 * analysis (analyze, the eigenvalues of J(k), docs/model.md §3) and the fuel check
 * (§8) of the same mixture, not from the simulation itself.
 */
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { analyze } from '../../server/engine/analyze.js';
import { noiseModes, NOISE_MODES, simulate } from '../../server/engine/simulate/index.js';
import { findBands } from '../../server/engine/simulate/reports.js';
import { parseMixture } from '../../server/schema/mixture.js';
import { chemical, constant, mixture, rel, species } from '../helpers/mixtures.js';

const example = (name: string) => parseMixture(JSON.parse(readFileSync(`seeds/examples/${name}.json`, 'utf8')));
const codes = (r: ReturnType<typeof simulate>) => r.summary.warnings.map((w) => w.code);
// attracted producers with a screened chemical: fastest mode n = 4 of a 1 mm periodic chamber (tests/engine/simulate-convergence.test.ts)
const rho = 0.05 / ((4 / 3) * Math.PI * 1e-18);
const clustering = (length: number) => mixture([chemical('c', 1e-9, 0.05)], [species('b', 2e-13, rho, [constant('c', 1e-16, -1e-12)], 1e-6)], 'periodic', length);

describe('the seeded modes', () => {
  it('seed at least NOISE_MODES and four times the fastest index, within what the grid holds', () => {
    expect(noiseModes(512, 4)).toBe(NOISE_MODES);
    expect(noiseModes(1024, 35.2)).toBe(144);
    expect(noiseModes(64, 35)).toBe(31);
    expect(noiseModes(512, null)).toBe(NOISE_MODES);
  });

  it('a fastest mode finer than the grid holds is said to be unresolved, with the points that would hold it', () => {
    const mix = clustering(1e-2);
    const a = analyze(mix);
    const coarse = simulate(mix, { dims: 1, points: 64, duration: 1 / a.growthRate, frames: 3 });
    const w = coarse.summary.warnings.find((x) => x.code === 'fastest-mode-unresolved');
    expect(w?.message).toMatch(/use at least 256 points/); // 4 × 35 = 140 → the next power of two
    const fine = simulate(mix, { dims: 1, points: 1024, duration: 1 / a.growthRate, frames: 3 });
    expect(codes(fine)).not.toContain('fastest-mode-unresolved');
    expect(codes(fine)).not.toContain('fastest-mode-coarse');
  });
});

describe('nothing formed yet, and nothing forms', () => {
  it('a run that ends in the linear stage says nothing has formed yet, and how long order one would take', () => {
    const mix = clustering(1e-3);
    const a = analyze(mix);
    const r = simulate(mix, { dims: 1, points: 128, duration: 2 / a.growthRate, frames: 5 });
    expect(r.summary.clusters.count).toBe(0);
    const w = r.summary.warnings.find((x) => x.code === 'nothing-formed-yet');
    expect(w).toBeDefined();
    // the remaining time is ln(1/departure)/λ at the linear rate: read both back from the message
    const dep = Number(/is ([\d.e+-]+) % of the mean/.exec(w!.message)![1]) / 100;
    const more = Number(/about ([\d.e+-]+) s more/.exec(w!.message)![1]);
    expect(rel(more, Math.log(1 / dep) / a.growthRate)).toBeLessThan(0.02);
    expect(r.summary.bands).toBeNull();
    const long = simulate(mix, { dims: 1, points: 256, duration: 20 / a.growthRate, frames: 11 });
    expect(long.summary.clusters.count).toBeGreaterThan(0);
    expect(codes(long)).not.toContain('nothing-formed-yet');
  });

  it('a stable sample says nothing forms, measures the decay analyze() predicts, and reads no bands', () => {
    const mix = example('stable-janus-dispersed');
    const a = analyze(mix);
    expect(a.state).toBe('stable');
    const r = simulate(mix, { dims: 1, points: 128, duration: 20 / -a.growthRate });
    expect(codes(r)).toContain('stable-nothing-forms');
    expect(codes(r)).not.toContain('nothing-formed-yet');
    expect(r.summary.measured.growthRate!).toBeLessThan(0);
    expect(rel(r.summary.measured.growthRate!, a.growthRate)).toBeLessThan(0.02);
    expect(r.summary.bands).toBeNull();
    expect(r.summary.clusters.count).toBe(0);
  });
});

describe('a species with no particles (a dose-0 control)', () => {
  it('is left out of the linear prediction, which the run then bears out, and the summary says so', () => {
    const base = example('stable-janus-dispersed');
    // a slow tracer species at zero density: analyze() of the whole mixture reports its slow diffusive decay
    const tracer = { ...base.species[0]!, id: 'absent-dopant', density: 0, diffusivity: base.species[0]!.diffusivity / 50 };
    const mix = { ...base, species: [...base.species, tracer] };
    const whole = analyze(mix);
    const present = analyze(base);
    expect(rel(whole.growthRate, present.growthRate)).toBeGreaterThan(0.5); // the trace's decay is far slower
    const r = simulate(mix, { dims: 1, points: 128, duration: 20 / -present.growthRate });
    expect(r.summary.linear.growthRate).toBe(present.growthRate);
    expect(rel(r.summary.measured.growthRate!, present.growthRate)).toBeLessThan(0.02);
    expect(r.summary.warnings.find((w) => w.code === 'absent-species')?.message).toMatch(/absent-dopant/);
    expect(codes(simulate(base, { dims: 1, points: 64, duration: 1 / -present.growthRate, frames: 3 }))).not.toContain('absent-species');
  });
});

describe('bands', () => {
  it('are not read from a pattern with no contrast (findBands)', () => {
    // a travelling cosine of relative amplitude 1e-3 of the mean: below BAND_CONTRAST, so no reading at all
    const n = 64;
    const times = Array.from({ length: 32 }, (_, j) => j);
    const rows = times.map((t) => Float64Array.from({ length: n }, (_, i) => 0.05 * (1 + 1e-3 * Math.cos((2 * Math.PI * (i - 0.5 * t)) / n))));
    expect(findBands(rows, times, true, 1e-6)).toBeNull();
    // the same wave at 10 % contrast moves 0.5 cell per unit time: the reading must say so (the shift by cross-correlation)
    const strong = times.map((t) => Float64Array.from({ length: n }, (_, i) => 0.05 * (1 + 0.1 * Math.cos((2 * Math.PI * (i - 0.5 * t)) / n))));
    const b = findBands(strong, times, true, 1e-6);
    expect(b).not.toBeNull();
    expect(rel(b!.speed, 0.5e-6)).toBeLessThan(0.02);
  });

  it('in 2D an oscillatory run says that bands are read only in 1D', () => {
    const mix = example('oscillatory-travelling-bands');
    const r = simulate(mix, { dims: 2, points: 16, duration: 1 / analyze(mix).growthRate, frames: 3 });
    expect(r.summary.bands).toBeNull();
    expect(codes(r)).toContain('bands-not-read-in-2d');
  });
});

describe('the fuel runs out', () => {
  it('is warned only when the run reached that time', () => {
    const mix = example('saturating-enzyme-beads');
    const a = analyze(mix);
    const lifetime = Math.min(...a.checks.fuel.map((c) => c.lifetime));
    expect(lifetime).toBeLessThan(mix.conditions.duration!);
    const full = simulate(mix, { dims: 1, points: 128 });
    expect(full.summary.fuelRunOut!.time).toBe(lifetime);
    expect(full.summary.time).toBeGreaterThan(lifetime);
    expect(codes(full)).toContain('fuel-runs-out-first');
    const cut = simulate(mix, { dims: 1, points: 128, maxSteps: 5 });
    expect(cut.summary.time).toBeLessThan(lifetime);
    expect(codes(cut)).toContain('step-limit');
    expect(codes(cut)).not.toContain('fuel-runs-out-first');
  });
});

describe('what happens in the sample before the end of the run (the practical checks, docs/model.md §8)', () => {
  it('settling and gas bubbles are warned when the run reaches their times, and not before', () => {
    const base = example('stationary-janus-clusters');
    // the example's colloids also make oxygen (1.2 mM solubility, roughly that of O2 in water at 25 °C, from memory),
    // at a rate that passes it within minutes
    const o2 = { ...chemical('o2', 2e-9, 0, 0), solubility: 1.2 };
    const mix = { ...base, chemicals: [...base.chemicals, o2], species: base.species.map((sp) => ({ ...sp, couplings: [...sp.couplings, constant('o2', 1e-17, 0)] })) };
    const a = analyze(mix);
    const settle = a.checks.sedimentation.find((x) => x.sedimentationLength < mix.chamber.depth!)!;
    const gas = a.checks.gas.find((g) => g.timeToSaturation < 3600)!;
    expect(settle.timeToCrossDepth).toBeLessThan(600);
    const long = simulate(mix, { dims: 1, points: 64, duration: 1200, frames: 3 });
    expect(long.summary.warnings.find((w) => w.code === 'settles-first')?.message).toContain(settle.species);
    expect(long.summary.warnings.find((w) => w.code === 'gas-first')?.message).toContain(gas.chemical);
    const first = Math.min(settle.timeToCrossDepth!, gas.timeToSaturation);
    const short = simulate(mix, { dims: 1, points: 64, duration: 0.5 * first, frames: 3 });
    expect(codes(short)).not.toContain('settles-first');
    expect(codes(short)).not.toContain('gas-first');
  });
});

describe('clusters as narrow as the particles', () => {
  it('are flagged as beyond the continuum model (the Janus example: a peak about one particle across)', () => {
    const mix = example('stationary-janus-clusters');
    const r = simulate(mix, { dims: 1, points: 1024, duration: 12 / analyze(mix).growthRate });
    const d = 2 * Math.max(...mix.species.map((s) => s.radius));
    const narrow = r.summary.clusters.sizes.filter((x) => x < 5 * d).length;
    expect(narrow).toBeGreaterThan(0);
    expect(r.summary.warnings.find((w) => w.code === 'clusters-at-particle-size')?.message).toContain(`${narrow} of the ${r.summary.clusters.count}`);
    // the convergence case's bands are hundreds of particle diameters wide: no such warning
    const wide = simulate(clustering(1e-3), { dims: 1, points: 1024, tolerance: 2.5e-5, duration: 20 / analyze(clustering(1e-3)).growthRate });
    expect(wide.summary.clusters.count).toBeGreaterThan(0);
    expect(codes(wide)).not.toContain('clusters-at-particle-size');
  }, 60_000);
});
