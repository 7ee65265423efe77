/**
 * The run's reports on fields whose answer is known exactly:
 *
 * - bands: a kymograph of a travelling wave u(x, t) = 1 + ½ cos(k(x − v t)) gives the
 *   speed v and the period 2π/(k v) at a fixed point (the definition of a travelling
 *   wave); a standing, static pattern gives no bands;
 * - clusters: blocks of raised volume fraction drawn on a grid are counted with their
 *   sizes and the share of each species inside them; a block cut by a periodic edge
 *   is one cluster, by a sealed wall two; a cluster is resolved when it spans at least 3
 *   cells across (some cell has its whole neighbourhood inside it: docs/model.md §16).
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

  it('1D: a cluster spans 3 cells across when some cell has both neighbours in it; at a sealed wall it counts with its mirror image', () => {
    const n = 64;
    const phi = new Float64Array(n).fill(0.01);
    phi[10] = 0.3; // 1 cell
    phi[20] = phi[21] = 0.3; // 2 cells
    for (let i = 30; i < 33; i++) phi[i] = 0.3; // 3 cells
    for (let i = 40; i < 50; i++) phi[i] = 0.3; // 10 cells
    const c = findClusters(phi, [phi], ['a'], n, 1, true, 1e-6);
    expect(c.count).toBe(4);
    expect(c.cells).toEqual([10, 3, 2, 1]);
    expect(c.resolved).toEqual([true, true, false, false]);
    expect(c.underResolved).toBe(2);
    // two cells against a sealed wall: with its mirror image 4 cells across (the cell next to the wall has the
    // wall's mirror cell, itself, and its other neighbour inside); one cell at the wall: 2 across, under-resolved
    const w = new Float64Array(n).fill(0.01);
    w[0] = w[1] = 0.3;
    w[n - 1] = 0.3;
    const sealed = findClusters(w, [w], ['a'], n, 1, false, 1e-6);
    expect(sealed.cells).toEqual([2, 1]);
    expect(sealed.resolved).toEqual([true, false]);
    // periodic, the same cells are one cluster of 3 across the edge
    const periodic = findClusters(w, [w], ['a'], n, 1, true, 1e-6);
    expect(periodic.cells).toEqual([3]);
    expect(periodic.resolved).toEqual([true]);
  });

  it('2D: a cluster spans 3 cells across when some 3 × 3 block of cells lies inside it', () => {
    const n = 32;
    const phi = new Float64Array(n * n).fill(0.02);
    const block = (x0: number, y0: number, w: number, hgt: number) => {
      for (let y = y0; y < y0 + hgt; y++) for (let x = x0; x < x0 + w; x++) phi[y * n + x] = 0.5;
    };
    block(2, 2, 3, 3); // 3 × 3: resolved
    block(10, 2, 12, 2); // a bar 2 cells thick, 24 cells: under-resolved however long
    block(2, 10, 5, 5); // 5 × 5: resolved
    for (let k = 0; k < 6; k++) block(14 + k, 10 + k, 2, 1); // a staircase 1 cell thick
    const c = findClusters(phi, [phi], ['a'], n, 2, true, 1e-6);
    expect(c.count).toBe(4);
    expect(c.cells).toEqual([25, 24, 12, 9]);
    expect(c.resolved).toEqual([true, false, false, true]);
    expect(c.underResolved).toBe(2);
  });
});
