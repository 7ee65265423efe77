/**
 * shrink (server/http/routes/forms.ts): how the What forms job makes the simulated frames compact for JSON.
 * Block averaging keeps each species' amount (the mean of the shown cells is the mean of the simulated ones,
 * exactly, before the rounding) and shows a one-cell cluster that picking every k-th cell would miss; the
 * bounds (≤ 128 positions × 101 times in 1D, ≤ 64 × 64 cells × 12 frames in 2D) hold; the integer encoding
 * is within half its scale of the departure. The frames here are built by hand (a property of the
 * downsampling, not of the model); the route test checks the same against simulate() on a plan.
 */
import { describe, expect, it } from 'vitest';
import type { SimulationResult, SimulationSummary } from '../../server/engine/simulate/index.js';
import { decode, pickFrames, quantise, shrink, SIMULATE_BOUNDS } from '../../server/http/routes/forms.js';

const MEANS = [2e14, 5e13];
const L = 2e-3;

/** Frames of two species: 0 uniform but for one cell holding `extra` means more (every cell lowered by extra/cells of the mean to keep the amount); 1 a wave. */
function frames(dims: 1 | 2, n: number, T: number, hot: number, extra: number): SimulationResult {
  const cells = n ** dims;
  const data: Float32Array[] = [];
  for (let t = 0; t < T; t++) {
    const f = new Float32Array(2 * cells);
    for (let i = 0; i < cells; i++) {
      f[i] = MEANS[0]! * (1 - extra / cells + (i === hot ? extra : 0));
      const x = (i % n) + 0.5;
      f[cells + i] = MEANS[1]! * (1 + 0.3 * Math.cos((2 * Math.PI * 3 * x) / n) * (t / Math.max(1, T - 1)));
    }
    data.push(f);
  }
  const summary = { grid: { dims, points: n, length: L, cellSize: L / n, walls: 'sealed' } } as unknown as SimulationSummary;
  return { summary, frames: { dims, points: n, species: ['a', 'b'], times: Array.from({ length: T }, (_, t) => 10 * t), data } };
}

const mean = (xs: number[]) => xs.reduce((a, b) => a + b, 0) / xs.length;

describe('shrink', () => {
  it('1D: 512 cells to 128 positions of 4, 201 frames to 101; a one-cell cluster shows, the mean stays', () => {
    const hot = 4 * 77 + 1; // not the first cell of its block: picking every 4th cell would miss it
    const { kymograph: k, frames: f2 } = shrink(frames(1, 512, 201, hot, 40), MEANS);
    expect(f2).toBeNull();
    expect(k!.times).toHaveLength(SIMULATE_BOUNDS.kymograph.times);
    expect(k!.times[1]).toBe(20);
    expect(k!.positions).toHaveLength(128);
    // the centre of each block of 4 cells (to 4 significant digits)
    k!.positions.forEach((x, p) => expect(Math.abs(x - (4 * p + 2) * (L / 512))).toBeLessThanOrEqual(5e-4 * x));
    expect(k!.block).toBe(4);
    expect(k!.simulated).toEqual({ points: 512, times: 201 });
    expect(k!.downsampled).toBe('101 of the 201 stored times, evenly spaced; 128 positions, each the mean of 4 of the 512 simulated cells');
    const dev = decode(k!.deviation);
    for (let j = 0; j < 101; j++) {
      const a = dev[0]![j]!;
      // the cluster's block: 40 means more in one of its 4 cells, all lowered by 40/512 of the mean
      const want = 40 / 4 - 40 / 512;
      expect(Math.abs(a[77]! - want)).toBeLessThanOrEqual(0.5 * k!.deviation.scale[0]![j]!);
      expect(a.filter((_, p) => p !== 77).every((v) => v < 0)).toBe(true);
      // each species keeps its amount: the mean departure stays 0 (to the rounding of the shown values)
      for (const m of [0, 1]) expect(Math.abs(mean(dev[m]![j]!))).toBeLessThanOrEqual(0.5 * k!.deviation.scale[m]![j]! + 1e-7);
    }
  });

  it('2D: 128 × 128 cells to 64 × 64 blocks of 2 × 2, 256 × 256 to 64 × 64 of 4 × 4; a one-cell cluster shows, the mean stays', () => {
    for (const n of [128, 256]) {
      const b = n / 64;
      const hx = 37 * b + b - 1;
      const hy = 45 * b + 1;
      const { frames: f, kymograph } = shrink(frames(2, n, 12, hy * n + hx, 100), MEANS);
      expect(kymograph).toBeNull();
      expect(f!.points).toBe(SIMULATE_BOUNDS.frames2d.points);
      expect(f!.block).toBe(b);
      expect(f!.cellSize).toBeCloseTo(b * (L / n), 15);
      expect(f!.simulated).toEqual({ points: n, times: 12 });
      expect(f!.downsampled).toBe(`all 12 stored times; 64 × 64 cells, each the mean of ${b} × ${b} of the ${n} × ${n} simulated cells`);
      expect(f!.times).toHaveLength(12);
      const dev = decode(f!.deviation);
      for (let j = 0; j < 12; j++) {
        const a = dev[0]![j]!;
        expect(a).toHaveLength(64 * 64);
        const want = 100 / (b * b) - 100 / (n * n);
        expect(Math.abs(a[45 * 64 + 37]! - want)).toBeLessThanOrEqual(0.5 * f!.deviation.scale[0]![j]!);
        for (const m of [0, 1]) expect(Math.abs(mean(dev[m]![j]!))).toBeLessThanOrEqual(0.5 * f!.deviation.scale[m]![j]! + 1e-7);
      }
      // species b: a wave along x, the same in every row, uniform at the start (but for the Float32 rounding of its mean)
      expect(f!.deviation.scale[1]![0]).toBeLessThan(1e-7 / 999);
      expect(dev[1]![11]!.slice(0, 64)).toEqual(dev[1]![11]!.slice(64 * 63));
    }
  });

  it('a grid within the bounds is kept as simulated', () => {
    const { kymograph: k } = shrink(frames(1, 128, 201, 5, 1), MEANS);
    expect(k!.block).toBe(1);
    expect(k!.positions).toHaveLength(128);
    expect(k!.downsampled).toBe('101 of the 201 stored times, evenly spaced; all 128 simulated cells');
    const { frames: f } = shrink(frames(2, 32, 12, 5, 1), MEANS);
    expect(f!.block).toBe(1);
    expect(f!.points).toBe(32);
    expect(f!.downsampled).toBe('all 12 stored times; all 32 × 32 simulated cells');
  });

  it('an absent species (mean 0) is stored as zeros with scale 0', () => {
    const { kymograph: k } = shrink(frames(1, 64, 5, 3, 1), [MEANS[0]!, 0]);
    expect(k!.deviation.scale[1]).toEqual([0, 0, 0, 0, 0]);
    expect(k!.deviation.values[1]!.flat().every((v) => v === 0)).toBe(true);
  });
});

describe('pickFrames', () => {
  it('the frames nearest to evenly spaced times, first and last always', () => {
    const even = (T: number) => Array.from({ length: T }, (_, f) => 10 * f);
    expect(pickFrames(even(201), 101)).toEqual(Array.from({ length: 101 }, (_, j) => 2 * j));
    expect(pickFrames(even(12), 12)).toEqual(Array.from({ length: 12 }, (_, j) => j));
    expect(pickFrames(even(3), 12)).toEqual([0, 1, 2]);
    // the engine's extra frame at the end of a run a rounding short of its last frame time: still every 2nd, then the end
    const extra = [...even(201), 2000 + 1e-9];
    expect(pickFrames(extra, 101)).toEqual([...Array.from({ length: 100 }, (_, j) => 2 * j), 201]);
    // a run stopped at its step limit at 1234 s: frames every 10 s to 1230, then 1234; 101 picks about 12.3 s apart
    const stopped = [...even(124), 1234];
    const got = pickFrames(stopped, 101);
    expect(got).toHaveLength(101);
    expect(got[0]).toBe(0);
    expect(got[100]).toBe(124);
    got.forEach((f, j) => expect(Math.abs(stopped[f]! - (1234 * j) / 100)).toBeLessThanOrEqual(5));
  });
});

describe('quantise', () => {
  it('integers in ±999 and a 3-digit scale, within half the scale of each value, tiny rows too', () => {
    for (const size of [1, 1e-5, 37.2]) {
      const row = Array.from({ length: 300 }, (_, i) => size * Math.sin(i * 0.37) * (i % 7 === 0 ? -1 : 0.9));
      const { scale, values } = quantise(row);
      expect(Number(scale.toPrecision(3))).toBe(scale);
      expect(Math.max(...values.map(Math.abs))).toBeLessThanOrEqual(999);
      expect(Math.max(...values.map(Math.abs))).toBeGreaterThanOrEqual(989);
      row.forEach((v, i) => expect(Math.abs(values[i]! * scale - v)).toBeLessThanOrEqual(0.5 * scale * (1 + 1e-12)));
    }
    expect(quantise([0, 0, 0])).toEqual({ scale: 0, values: [0, 0, 0] });
  });
});
