/**
 * `brink simulate` (server/cli.ts): the JSON summary in the shape issue 15 gives
 * (SI units), the frames written as a header and a Float32 binary whose size and
 * values follow the header, and usage errors with status 2. The numbers themselves
 * are checked in tests/engine/simulate-*.test.ts.
 */
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { main } from '../../server/cli.js';

const root = new URL('../../', import.meta.url).pathname;
const dir = mkdtempSync(join(tmpdir(), 'brink-simulate-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

async function run(args: string[]) {
  let out = '';
  let err = '';
  const code = await main(args, { out: (t) => (out += t), err: (t) => (err += t) });
  return { code, out, err };
}

describe('brink simulate', () => {
  it('prints the summary and writes the frames', async () => {
    const out = join(dir, 'bands');
    const r = await run(['simulate', join(root, 'seeds/examples/oscillatory-travelling-bands.json'), '--points', '64', '--duration', '30 min', '--frames', '7', '--out', out]);
    expect(r.err).toBe('');
    expect(r.code).toBe(0);
    const s = JSON.parse(r.out);
    expect(Object.keys(s.linear).sort()).toEqual(['growthRate', 'oscillationPeriod', 'state', 'wavelength']);
    expect(Object.keys(s.measured).sort()).toEqual(['growthRate', 'oscillationPeriod', 'wavelength']);
    expect(s.linear.state).toBe('oscillatory');
    expect(s.dominantLength).toHaveLength(7);
    expect(s.dominantLength[6][0]).toBeCloseTo(1800, 9); // seconds
    expect(Object.keys(s.clusters).sort()).toEqual(['cells', 'composition', 'count', 'sizes', 'underResolved']);
    expect(s.clusters.cells).toHaveLength(s.clusters.count);
    expect(Object.keys(s.run)).toEqual(expect.arrayContaining(['positivityRepairs', 'largestRepair', 'repairedMass', 'repairReach']));
    expect(s.clusters.composition.map((c: { species: string }) => c.species)).toEqual(['ptj-swim', 'cat-bead']);
    expect(s.bands === null || (typeof s.bands.speed === 'number' && 'period' in s.bands)).toBe(true);
    expect(s.conservation.maxRelativeError).toBeLessThan(1e-10);
    expect(s.grid).toMatchObject({ dims: 1, points: 64, walls: 'sealed' });
    expect(s.grid.length).toBeCloseTo(400e-6, 15); // the chamber's 400 um, in m
    const header = JSON.parse(readFileSync(join(out, 'frames.json'), 'utf8'));
    expect(header).toMatchObject({ format: 'brink-frames/1', encoding: 'float32-le', dims: 1, points: 64, species: ['ptj-swim', 'cat-bead'] });
    expect(header.times).toHaveLength(7);
    const bin = readFileSync(join(out, 'frames.f32'));
    expect(bin.length).toBe(4 * 7 * 2 * 64);
    // every stored density is a finite number ≥ 0 (m⁻³), and summary.json is the printed summary
    for (let i = 0; i < bin.length; i += 4) {
      const v = bin.readFloatLE(i);
      expect(Number.isFinite(v) && v >= 0).toBe(true);
    }
    expect(JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'))).toEqual(s);
  });

  it('2D with --dims 2', async () => {
    const r = await run(['simulate', join(root, 'seeds/examples/stationary-janus-clusters.json'), '--dims', '2', '--points', '16', '--duration', '600', '--frames', '3']);
    expect(r.code).toBe(0);
    const s = JSON.parse(r.out);
    expect(s.grid).toMatchObject({ dims: 2, points: 16 });
    expect(s.bands).toBeNull();
    expect(s.warnings.map((w: { code: string }) => w.code)).toContain('linear-modes-1d');
  });

  it('--chemicals dynamic evolves the chemical fields and says so', async () => {
    const r = await run(['simulate', join(root, 'seeds/examples/stationary-janus-clusters.json'), '--points', '64', '--duration', '600', '--frames', '3', '--chemicals', 'dynamic']);
    expect(r.code).toBe(0);
    const s = JSON.parse(r.out);
    expect(s.run.chemicals).toBe('dynamic');
    expect(s.warnings.map((w: { code: string }) => w.code)).toContain('dynamic-chemicals');
  });

  it('refuses bad options with status 2', async () => {
    const file = join(root, 'seeds/examples/stationary-janus-clusters.json');
    for (const [args, msg] of [
      [['--dims', '3'], /--dims/],
      [['--points', '100'], /power of two/],
      [['--duration', '3 mM'], /--duration/],
      [['--duration', '-5'], /--duration/],
      [['--chemicals', 'slow'], /--chemicals/],
      [['--repair', 'nearby'], /--repair/],
    ] as const) {
      const r = await run(['simulate', file, ...args]);
      expect(r.code).toBe(2);
      expect(r.err).toMatch(msg);
    }
    expect((await run(['simulate'])).code).toBe(2);
  });
});
