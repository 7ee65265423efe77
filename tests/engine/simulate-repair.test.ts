/**
 * The local positivity repair of the simulation (docs/model.md §15), on fields whose
 * answer follows from its definition: each negative cell is set to 0 and its deficit d
 * is taken from the positive cells of the smallest window around it (±r cells along
 * each axis) that holds at least d, each giving d·v/P (P their sum). So
 *
 * - the total is unchanged (checked to 1e-12 relative with compensated sums),
 * - no value is negative afterwards,
 * - cells farther than the reported reach from every negative cell are untouched (bit for bit),
 * - the values next to a single negative cell are v(1 − d/P), computed here by hand,
 * - on the mirror extension of a sealed chamber the field stays exactly even, and the
 *   mass booked in `repairedMass` is Σ(negative parts)/total, summed here independently.
 */
import { describe, expect, it } from 'vitest';
import { Random } from '../../server/engine/random.js';
import { SpectralField } from '../../server/engine/simulate/field.js';
import { globalRepair, Integrator, localRepair } from '../../server/engine/simulate/integrate.js';
import { chemical, mixture, species } from '../helpers/mixtures.js';

/** Neumaier-compensated sum (an independent summation, not the engine's). */
function sum(v: ArrayLike<number>): number {
  let s = 0;
  let c = 0;
  for (let i = 0; i < v.length; i++) {
    const t = v[i]!;
    const u = s + t;
    c += Math.abs(s) >= Math.abs(t) ? s - u + t : t - u + s;
    s = u;
  }
  return s + c;
}

describe('localRepair: one negative cell, values by hand', () => {
  it('1D periodic: the two neighbours give d/2 each when they hold enough; the rest is untouched', () => {
    const u = new Float64Array(16).fill(1);
    u[5] = -0.3;
    const v = Float64Array.from(u);
    const r = localRepair(v, 16, 1, true);
    expect(r.moved).toBe(0.3);
    expect(r.reach).toBe(1);
    expect(v[5]).toBe(0);
    // P = 2, each neighbour keeps 1 − 0.3/2
    expect(v[4]).toBeCloseTo(0.85, 15);
    expect(v[6]).toBeCloseTo(0.85, 15);
    for (let i = 0; i < 16; i++) if (Math.abs(i - 5) > 1) expect(v[i]).toBe(1);
    expect(Math.abs(sum(v) - sum(u)) / sum(u)).toBeLessThan(1e-12);
  });

  it('1D: widens to ±2 when the neighbours hold too little, all giving in proportion to their density', () => {
    const u = new Float64Array(16).fill(1);
    u[4] = 0.1;
    u[6] = 0.1;
    u[5] = -0.5;
    const v = Float64Array.from(u);
    const r = localRepair(v, 16, 1, true);
    expect(r.reach).toBe(2);
    const keep = 1 - 0.5 / 2.2; // P = 0.1 + 0.1 + 1 + 1
    expect(v[3]).toBeCloseTo(keep, 15);
    expect(v[7]).toBeCloseTo(keep, 15);
    expect(v[4]).toBeCloseTo(0.1 * keep, 15);
    expect(v[6]).toBeCloseTo(0.1 * keep, 15);
    for (let i = 0; i < 16; i++) if (Math.abs(i - 5) > 2) expect(v[i]).toBe(1);
    expect(Math.abs(sum(v) - sum(u)) / sum(u)).toBeLessThan(1e-12);
  });

  it('1D, a negative cell at the edge: periodic takes from both sides of the edge, sealed from the inside only', () => {
    const u = new Float64Array(8).fill(1);
    u[0] = -0.2;
    const p = Float64Array.from(u);
    localRepair(p, 8, 1, true);
    expect(p[7]).toBeCloseTo(0.9, 15);
    expect(p[1]).toBeCloseTo(0.9, 15);
    const s = Float64Array.from(u);
    localRepair(s, 8, 1, false);
    expect(s[1]).toBeCloseTo(0.8, 15);
    expect(s[7]).toBe(1);
    for (const v of [p, s]) expect(Math.abs(sum(v) - sum(u)) / sum(u)).toBeLessThan(1e-12);
  });

  it('1D: when only a far cell holds particles the window grows to it (sealed), or to the whole chamber (periodic)', () => {
    const s = Float64Array.from([-0.5, 0, 0, 0, 0, 0, 0, 3]);
    const rs = localRepair(s, 8, 1, false);
    expect(rs.reach).toBe(7);
    expect(Array.from(s)).toEqual([0, 0, 0, 0, 0, 0, 0, 2.5]);
    // periodic: a window of ±3 around cell 0 holds cells 5…3 but not cell 4; the whole chamber gives (reach = 8 cells)
    const p = Float64Array.from([-0.5, 0, 0, 0, 3, 0, 0, 0]);
    const rp = localRepair(p, 8, 1, true);
    expect(rp.reach).toBe(8);
    expect(Array.from(p)).toEqual([0, 0, 0, 0, 2.5, 0, 0, 0]);
  });

  it('2D periodic: the 3 × 3 block around the cell gives, in proportion; outside it nothing changes', () => {
    const n = 8;
    const u = new Float64Array(n * n).fill(1);
    u[4 * n + 3] = -0.8;
    u[5 * n + 4] = 3; // a denser neighbour gives more
    const v = Float64Array.from(u);
    const r = localRepair(v, n, 2, true);
    expect(r.reach).toBe(1);
    const keep = 1 - 0.8 / (7 + 3);
    for (let y = 0; y < n; y++) {
      for (let x = 0; x < n; x++) {
        const i = y * n + x;
        if (x === 3 && y === 4) expect(v[i]).toBe(0);
        else if (Math.abs(x - 3) <= 1 && Math.abs(y - 4) <= 1) expect(v[i]).toBeCloseTo(u[i]! * keep, 14);
        else expect(v[i]).toBe(1);
      }
    }
    expect(Math.abs(sum(v) - sum(u)) / sum(u)).toBeLessThan(1e-12);
  });
});

describe('localRepair: random fields with many negative cells', () => {
  const cases = [
    { dims: 1 as const, n: 256, periodic: true },
    { dims: 1 as const, n: 256, periodic: false },
    { dims: 2 as const, n: 32, periodic: true },
    { dims: 2 as const, n: 32, periodic: false },
  ];
  for (const c of cases) {
    it(`${c.dims}D ${c.periodic ? 'periodic' : 'sealed'}: total kept to 1e-12, none negative, untouched beyond the reach`, () => {
      const rng = new Random(7);
      const cells = c.dims === 2 ? c.n * c.n : c.n;
      // ringing-like: a positive field with sparse dips below zero (about one cell in eight)
      const u = Float64Array.from({ length: cells }, () => (rng.uniform() < 0.125 ? -0.3 * rng.uniform() : 0.05 + rng.uniform()));
      const v = Float64Array.from(u);
      const r = localRepair(v, c.n, c.dims, c.periodic);
      let neg = 0;
      for (const x of u) if (x < 0) neg -= x;
      expect(r.moved).toBeCloseTo(neg, 12);
      expect(Math.abs(sum(v) - sum(u)) / sum(u)).toBeLessThan(1e-12);
      for (const x of v) expect(x).toBeGreaterThanOrEqual(0);
      expect(r.reach).toBeGreaterThan(0);
      expect(r.reach).toBeLessThan(c.n / 4);
      // every changed cell lies within the reach of some negative cell
      const negatives: [number, number][] = [];
      for (let i = 0; i < cells; i++) if (u[i]! < 0) negatives.push([i % c.n, Math.floor(i / c.n)]);
      const dist = (a: number, b: number) => {
        const d = Math.abs(a - b);
        return c.periodic ? Math.min(d, c.n - d) : d;
      };
      let changed = 0;
      for (let i = 0; i < cells; i++) {
        if (v[i] === u[i]) continue;
        changed++;
        const x = i % c.n;
        const y = Math.floor(i / c.n);
        const near = negatives.some(([a, b]) => Math.max(dist(a, x), dist(b, y)) <= r.reach);
        expect(near).toBe(true);
      }
      expect(changed).toBeGreaterThan(negatives.length);
    });
  }
});

describe('globalRepair (the default): every positive cell gives in proportion', () => {
  it('negatives to 0, every positive value scaled by 1 − d/P worked by hand, the total kept', () => {
    const v = Float64Array.from([3, -1, 2, 5, -0.5, 0, 4]);
    const d = 1.5;
    const P = 14;
    const r = globalRepair(v, 7, -0.75);
    expect(r.moved).toBe(d);
    expect(r.beyond).toBe(1); // only the −1 is below −0.75
    expect(r.reach).toBe(7);
    const keep = 1 - d / P;
    expect(Array.from(v)).toEqual([3 * keep, 0, 2 * keep, 5 * keep, 0, 0, 4 * keep]);
    expect(Math.abs(v.reduce((a, b) => a + b, 0) - 12.5)).toBeLessThan(1e-12);
  });
  it('leaves a field without negatives alone', () => {
    const v = Float64Array.from([1, 2, 3]);
    expect(globalRepair(v, 3)).toEqual({ moved: 0, beyond: 0, reach: 0 });
    expect(Array.from(v)).toEqual([1, 2, 3]);
  });
});

describe('Integrator.repair on the mirror extension of a sealed chamber', () => {
  for (const [dims, mode] of [
    [1, 'local'],
    [2, 'local'],
    [1, 'global'],
    [2, 'global'],
  ] as const) {
    it(`${dims}D, ${mode}: the field stays exactly even, the chamber total is kept, the moved share is booked`, () => {
      const n = dims === 1 ? 32 : 16;
      const rho0 = 1e15;
      const mix = mixture([chemical('inert', 1e-9)], [species('bead', 2e-13, rho0, [])], 'sealed', 1e-3);
      const field = new SpectralField(mix, { dims, points: n, length: 1e-3, mirror: true }, 0.64);
      const cells = dims === 2 ? n * n : n;
      const start = new Float64Array(field.size);
      field.fromChamber(new Float64Array(cells).fill(rho0), start);
      const integ = new Integrator(field, [start], 1e-4, mode);
      // a chamber field with dips below zero, two of them against walls (cells 0 and n − 1 along x)
      const rng = new Random(3);
      const chamber = Float64Array.from({ length: cells }, () => rho0 * (0.5 + rng.uniform()));
      const dips = dims === 1 ? [0, 7, n - 1] : [0, 5 * n + 7, n * n - 1, 3 * n + (n - 1)];
      for (const i of dips) chamber[i] = -0.2 * rho0;
      const v = new Float64Array(field.size);
      field.fromChamber(chamber, v);
      const before = field.chamberSum(v);
      expect(integ.repair(0, v)).toBe(true);
      // exactly even about each wall
      const nx = field.nx;
      for (let y = 0; y < field.ny; y++) {
        for (let x = 0; x < nx; x++) {
          expect(v[y * nx + x]).toBe(v[y * nx + (nx - 1 - x)]);
          if (dims === 2) expect(v[y * nx + x]).toBe(v[(field.ny - 1 - y) * nx + x]);
        }
      }
      for (const x of v) expect(x).toBeGreaterThanOrEqual(0);
      expect(Math.abs(field.chamberSum(v) - before) / before).toBeLessThan(1e-12);
      // the share booked: Σ negative parts / the species' chamber total (mean × cells)
      const share = (dips.length * 0.2 * rho0) / (rho0 * cells);
      expect(integ.stats.repairedMass[0]! / share - 1).toBeLessThan(1e-12);
      expect(1 - integ.stats.repairedMass[0]! / share).toBeLessThan(1e-12);
      expect(integ.stats.largestRepair).toBe(integ.stats.repairedMass[0]);
      expect(integ.stats.repairReach).toBe(mode === 'local' ? 1 : n);
    });
  }
});
