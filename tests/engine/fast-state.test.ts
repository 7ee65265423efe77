/**
 * The early exits of the mode scan and the state-only evaluator, checked
 * against the general path (docs/model.md §4–§5):
 *
 *  - `analyze(mix)` with early exits gives the same answer, field for field,
 *    as `analyze(mix, { earlyExit: false })` (the general eigen scan, the
 *    reference), except the count of spectra taken (`scan.evaluations`);
 *  - `stateOf(mix)` equals `analyze(mix).state` and `stateOf(mix, { fast: false })`;
 *  - `stateMap` with and without `fast` gives identical maps;
 *  - each proof the early exits use (small gain, tail, Routh–Hurwitz, disjoint
 *    discs, the unbounded-chamber inequality) holds for J(k) written out by
 *    hand from the field equations with ml-matrix eigenvalues
 *    (tests/references/hand-jacobian.ts, an independent library call).
 *
 * Seeded random mixtures: mixed signs, saturating turnovers with products,
 * crowding, one to three chemicals, sealed, periodic and unbounded chambers,
 * with strengths spread over the stable/unstable boundary.
 */
import { describe, expect, it } from 'vitest';
import { analyze, stateOf, type State } from '../../server/engine/analyze.js';
import { discsDisjoint, gershgorinBelow, maxAbsEntry, ModeBounds, routhBelow, routhScratch, spectrumReal } from '../../server/engine/bounds.js';
import { buildModel, jacobian } from '../../server/engine/model.js';
import { stateMap } from '../../server/engine/planner.js';
import { Random } from '../../server/engine/random.js';
import { scanModes } from '../../server/engine/scan.js';
import type { Coupling, Mixture, Species, Walls } from '../../server/engine/types.js';
import { chemical, constant, mixture, species } from '../helpers/mixtures.js';
import { handJacobian, libraryEigenvalues } from '../references/hand-jacobian.js';

const WALLS: Walls[] = ['sealed', 'periodic', 'unbounded'];

function randomMixture(rng: Random, walls: Walls): Mixture {
  const S = 1 + Math.floor(rng.uniform() * 3);
  const chems = Array.from({ length: S }, (_, s) => chemical(`c${s}`, 10 ** rng.between(-9.3, -8.8), rng.uniform() < 0.3 ? 0 : 10 ** rng.between(-3, 0), 10 ** rng.between(0, 2)));
  const M = 2 + Math.floor(rng.uniform() * 6);
  const strength = 10 ** rng.between(-1.5, 1.5); // spreads the mixtures over the boundary
  const sp: Species[] = Array.from({ length: M }, (_, m) => {
    const couplings: Coupling[] = chems.map((c, s) => {
      const mobility = (rng.uniform() < 0.5 ? -1 : 1) * strength * 10 ** rng.between(-11.5, -10.5);
      if (S > 1 && rng.uniform() < 0.25) {
        const product = chems[(s + 1) % S]!.id;
        return { chemical: c.id, activity: { kind: 'saturating', maxRate: 10 ** rng.between(-17, -15), michaelis: 10 ** rng.between(0, 2), product, productYield: rng.between(0.3, 1.5) }, mobility };
      }
      return constant(c.id, (rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-17, -15.5), mobility);
    });
    return species(`s${m}`, 10 ** rng.between(-13, -11), 10 ** rng.between(13, 15), couplings, 10 ** rng.between(-7, -6.3));
  });
  const crowding = rng.uniform() < 0.2;
  return mixture(chems, sp, walls, walls === 'unbounded' ? null : 10 ** rng.between(-3.3, -2.5), crowding);
}

/** An unbounded chamber, every chemical lost at a rate, constant activities, weak to moderate coupling. */
function lossyUnbounded(rng: Random): Mixture {
  const S = 1 + Math.floor(rng.uniform() * 3);
  const chems = Array.from({ length: S }, (_, s) => chemical(`c${s}`, 10 ** rng.between(-9.3, -8.8), 10 ** rng.between(-3, 0)));
  const M = 2 + Math.floor(rng.uniform() * 5);
  const strength = 10 ** rng.between(-3, 0.5);
  const sp = Array.from({ length: M }, (_, m) =>
    species(`s${m}`, 10 ** rng.between(-13, -11), 10 ** rng.between(13, 15), chems.map((c) => constant(c.id, (rng.uniform() < 0.5 ? -1 : 1) * 10 ** rng.between(-17, -15.5), (rng.uniform() < 0.5 ? -1 : 1) * strength * 1e-11))),
  );
  return mixture(chems, sp, 'unbounded', null, rng.uniform() < 0.2);
}

/** The analysis without the count of spectra (the one field early exits change). */
function comparable(mix: Mixture, earlyExit: boolean): unknown {
  const r = analyze(mix, { earlyExit });
  return { ...r, scan: { ...r.scan, evaluations: 0 } };
}

describe('early exits in the mode scan', () => {
  it('leave every reported value of the analysis as the general scan gives it', () => {
    const rng = new Random(9101);
    const states: Record<State, number> = { stable: 0, stationary: 0, oscillatory: 0 };
    let proven = 0;
    let before = 0;
    let after = 0;
    for (let t = 0; t < 150; t++) {
      const mix = randomMixture(rng, WALLS[t % 3]!);
      const fast = comparable(mix, true);
      const general = comparable(mix, false);
      expect(fast).toEqual(general);
      const r = analyze(mix);
      states[r.state]++;
      const model = buildModel(mix);
      const s = scanModes(model, mix.chamber.walls);
      proven += s.proven;
      after += s.evaluations;
      before += scanModes(model, mix.chamber.walls, { earlyExit: false }).evaluations;
    }
    // the sample covers all three states, and the exits did skip work
    expect(states.stable).toBeGreaterThan(10);
    expect(states.stationary).toBeGreaterThan(10);
    expect(states.oscillatory).toBeGreaterThan(3);
    expect(proven).toBeGreaterThan(1000);
    expect(after).toBeLessThan(before);
  });
});

describe('stateOf', () => {
  it('equals analyze().state and the general scan on seeded random mixtures', () => {
    const rng = new Random(9102);
    const seen = new Set<State>();
    for (let t = 0; t < 240; t++) {
      const mix = randomMixture(rng, WALLS[t % 3]!);
      const want = analyze(mix, { earlyExit: false }).state;
      expect(stateOf(mix)).toBe(want);
      expect(stateOf(mix, { fast: false })).toBe(want);
      seen.add(want);
    }
    expect(seen.size).toBe(3);
  });

  it('agrees at points bisected onto the boundary (a density factor within 1e-9 of a change of state)', () => {
    const rng = new Random(9103);
    let boundaries = 0;
    for (let t = 0; t < 60 && boundaries < 12; t++) {
      const walls = WALLS[t % 3]!;
      const base = randomMixture(rng, walls);
      const at = (f: number) => ({ ...base, species: base.species.map((s) => ({ ...s, density: s.density * f })) });
      const general = (f: number) => analyze(at(f), { earlyExit: false }).state;
      let lo = 0.01;
      let hi = 100;
      const sLo = general(lo);
      if (general(hi) === sLo) continue;
      for (let i = 0; i < 60 && hi / lo > 1 + 1e-9; i++) {
        const mid = Math.sqrt(lo * hi);
        if (general(mid) === sLo) lo = mid;
        else hi = mid;
      }
      boundaries++;
      for (const f of [lo, hi, lo * (1 - 1e-6), hi * (1 + 1e-6)]) expect(stateOf(at(f))).toBe(general(f));
    }
    expect(boundaries).toBeGreaterThanOrEqual(8);
  });

  it('gives the same state map with and without the proofs', () => {
    const rng = new Random(9104);
    let changes = 0;
    for (let t = 0; t < 6; t++) {
      const walls = WALLS[t % 3]!;
      const base = randomMixture(rng, walls);
      const dopant = species('dopant', 10 ** rng.between(-12.5, -11), 1, base.chemicals.map((c) => constant(c.id, -(10 ** rng.between(-16.5, -15.5)), 10 ** rng.between(-11, -10))));
      const o = { boundary: 'any' as const, dosing: 'add' as const, baseSteps: 5, doseSteps: 7 };
      const fast = stateMap(base, dopant, o);
      const general = stateMap(base, dopant, { ...o, fast: false });
      expect(fast).toEqual(general);
      changes += fast.boundaries.length;
    }
    expect(changes).toBeGreaterThan(0);
  });
});

describe('the proofs behind the exits (hand Jacobian, ml-matrix eigenvalues)', () => {
  it('small gain, tail, Routh–Hurwitz, Gershgorin and the realness proofs hold for the true spectrum', () => {
    const rng = new Random(9105);
    const counts = { below: 0, tail: 0, routh: 0, structured: 0, sameVerdict: 0, gershgorin: 0, discs: 0, real: 0, everywhere: 0 };
    for (let t = 0; t < 100; t++) {
      const walls = WALLS[t % 3]!;
      // the later draws: unbounded, every chemical lost at a rate, constant activities (where the one inequality applies)
      const mix = t < 60 ? randomMixture(rng, walls) : lossyUnbounded(rng);
      const model = buildModel(mix);
      const b = new ModeBounds(model);
      const w = routhScratch(model.M);
      // scaled k' ↔ SI k = k'/ℓ, λ' = λ τ
      const maxReScaled = (k: number) => {
        const ev = libraryEigenvalues(handJacobian(mix, k / model.lengthUnit));
        // real as the scan counts it: |Im λ'| within 1e-7 of max |J'_ij| (spectrum.ts REAL_TOLERANCE)
        const tol = 1e-7 * maxAbsEntry(jacobian(model, k));
        return { re: Math.max(...ev.map((e) => e.re)) * model.timeUnit, real: ev.every((e) => Math.abs(e.im) * model.timeUnit <= tol) };
      };
      for (const k of t < 60 ? [1, 2, 5, 13, 40, 120] : []) {
        const top = maxReScaled(k);
        for (const f of [top.re * 1.01 + 1e-3, top.re + Math.abs(top.re) * 0.1, -1, 0, 5]) {
          if (b.provesBelow(k, f)) {
            counts.below++;
            expect(top.re).toBeLessThan(f);
          }
          const J = jacobian(model, k);
          if (routhBelow(J, model.M, f, w)) {
            counts.routh++;
            expect(top.re).toBeLessThan(f);
          }
          const structured = b.structuredRouthBelow(k, f, w);
          if (structured) {
            counts.structured++;
            expect(top.re).toBeLessThan(f);
          }
          if (b.structured) {
            // the structured polynomial and the Hessenberg one give the same verdict away from the margins
            if (Math.abs(top.re - f) > 1e-4 * maxAbsEntry(J)) {
              expect(structured).toBe(routhBelow(J, model.M, f, w));
              counts.sameVerdict++;
            }
          }
          if (gershgorinBelow(J, model.M, f)) {
            counts.gershgorin++;
            expect(top.re).toBeLessThan(f);
          }
          if (b.provesTailBelow(k, f)) {
            counts.tail++;
            for (const kk of [k, k * 1.5, k * 4, k * 30]) expect(maxReScaled(kk).re).toBeLessThan(f);
          }
        }
        if (discsDisjoint(jacobian(model, k), model.M)) {
          counts.discs++;
          expect(top.real).toBe(true);
        }
        if (spectrumReal(jacobian(model, k), model.M)) {
          counts.real++;
          expect(top.real).toBe(true);
        }
      }
      if (mix.chamber.walls === 'unbounded' && b.provesStableEverywhere()) {
        counts.everywhere++;
        for (const k of [1e-4, 1e-2, 0.3, 1, 10, 1e3]) expect(maxReScaled(k).re).toBeLessThan(0);
      }
    }
    // every proof was exercised
    for (const [name, n] of Object.entries(counts)) expect(n, name).toBeGreaterThan(2);
  });
});
