/**
 * The run's reports on fields whose answer is known exactly:
 *
 * - bands: a kymograph of a travelling wave u(x, t) = 1 + ½ cos(k(x − v t)) gives the
 *   speed v and the period 2π/(k v) at a fixed point (the definition of a travelling
 *   wave); a standing, static pattern gives no bands;
 * - clusters: blocks of raised volume fraction drawn on a grid are counted with their
 *   sizes and the share of each species inside them; a block cut by a periodic edge
 *   is one cluster, by a sealed wall two.
 */
import { describe, expect, it } from 'vitest';
import { findBands, findClusters } from '../../server/engine/simulate/reports.js';

describe('bands from a kymograph', () => {
  const n = 256;
  const L = 1e-3;
  const h = L / n;
  const k = (2 * Math.PI * 3) / L;
  const frames = 101;
  const T = 8000;
  const times = Array.from({ length: frames }, (_, f) => (T * f) / (frames - 1));
  const rows = (v: number) => times.map((t) => Float64Array.from({ length: n }, (_, i) => 1 + 0.5 * Math.cos(k * ((i + 0.5) * h - v * t))));

  it('a travelling wave: speed and period', () => {
    for (const v of [2e-7, -3.5e-7]) {
      const b = findBands(rows(v), times, true, h)!;
      expect(b).not.toBeNull();
      expect(Math.abs(b.speed - v) / Math.abs(v)).toBeLessThan(0.02);
      expect(Math.abs(b.period! - (2 * Math.PI) / (k * Math.abs(v))) / ((2 * Math.PI) / (k * Math.abs(v)))).toBeLessThan(0.05);
    }
  });

  it('a static pattern: none', () => {
    expect(findBands(rows(0), times, true, h)).toBeNull();
  });
});

describe('clusters by threshold and connected components', () => {
  it('1D periodic: a block across the edge is one cluster; composition is the share of each species inside', () => {
    const n = 100;
    const phi = new Float64Array(n).fill(0.01);
    for (const i of [0, 1, 2, 97, 98, 99]) phi[i] = 0.3; // one block across the periodic edge
    for (let i = 40; i < 50; i++) phi[i] = 0.3; // a second block, 10 cells
    const a = Float64Array.from(phi, (p) => p * 100); // species a follows φ
    const b = new Float64Array(n).fill(1); // species b is uniform
    const c = findClusters(phi, [a, b], ['a', 'b'], n, 1, true, 2e-6);
    expect(c.count).toBe(2);
    expect(c.sizes[0]).toBeCloseTo(20e-6, 15);
    expect(c.sizes[1]).toBeCloseTo(12e-6, 15);
    expect(c.composition[1]!.fraction).toBeCloseTo(16 / 100, 12);
    const inside = 16 * 30;
    const total = inside + 84 * 1;
    expect(c.composition[0]!.fraction).toBeCloseTo(inside / total, 12);
    const sealed = findClusters(phi, [a, b], ['a', 'b'], n, 1, false, 2e-6);
    expect(sealed.count).toBe(3);
  });

  it('2D: two squares, sizes as equal-area diameters; a uniform field has none', () => {
    const n = 32;
    const phi = new Float64Array(n * n).fill(0.02);
    for (let y = 2; y < 6; y++) for (let x = 2; x < 6; x++) phi[y * n + x] = 0.5;
    for (let y = 20; y < 22; y++) for (let x = 10; x < 12; x++) phi[y * n + x] = 0.5;
    const c = findClusters(phi, [phi], ['a'], n, 2, true, 1e-6);
    expect(c.count).toBe(2);
    expect(c.sizes[0]).toBeCloseTo(2 * Math.sqrt(16e-12 / Math.PI), 15);
    expect(c.sizes[1]).toBeCloseTo(2 * Math.sqrt(4e-12 / Math.PI), 15);
    expect(findClusters(new Float64Array(n * n).fill(0.1), [phi], ['a'], n, 2, true, 1e-6).count).toBe(0);
  });
});
